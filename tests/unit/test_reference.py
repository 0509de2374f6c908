"""Reference module: the Antoine form in the units of the table, and the comparison.
Expected values from the Poling et al. (2001) coefficients evaluated by hand."""

import math

import numpy as np
import pytest

from vpkit.constants import R
from vpkit.errors import InputError
from vpkit.reference import antoine_curve, canonical_name, compare_to_reference, liquids


def test_antoine_by_hand():
    c = antoine_curve("acetone")  # log10(p/Pa) = 9.2184 - 1197.01/(T/K - 45.09)
    T = 310.0
    assert c.p(T) == pytest.approx(10 ** (9.2184 - 1197.01 / (T - 45.09)), rel=1e-12)
    dH = R * math.log(10) * 1197.01 * T**2 / (T - 45.09) ** 2
    assert c.apparent_enthalpy(T) == pytest.approx(dH, rel=1e-12)


def test_aliases():
    assert canonical_name("Isopropanol") == "2-propanol"
    assert canonical_name("67-64-1") == "acetone"
    assert len(liquids()) >= 12
    with pytest.raises(InputError, match="no reference"):
        canonical_name("unobtainium")


def test_comparison_warns_outside_validity():
    c = antoine_curve("1-butanol")  # valid from 310.18 K
    T = np.array([300.0, 320.0, 340.0])
    cmp = compare_to_reference(c, T, c.p(T) * 1.01, [True] * 3, 320.0)
    np.testing.assert_allclose(cmp.deviation_percent, 1.0, rtol=1e-9)
    assert cmp.outside == (0,) and cmp.warnings


@pytest.mark.parametrize("typed,name", [("ethyl_acetate", "ethyl acetate"), ("IPA", "2-propanol"),
                                        ("isopropanol", "2-propanol"), ("Ethyl alcohol", "ethanol"),
                                        ("H2O", "water"), ("propan-1-ol", "1-propanol"),
                                        ("141-78-6", "ethyl acetate")])
def test_names_people_type(typed, name):
    """Synonyms and CAS numbers as in the Poling et al. (2001) table and common usage."""
    assert canonical_name(typed) == name
