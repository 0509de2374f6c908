"""Reference module: the Antoine form in the units of the table, and the comparison.
Expected values from the Poling et al. (2001) coefficients evaluated by hand."""

import math

import pytest

from vpkit.constants import R
from vpkit.errors import InputError
from vpkit.physics.curves import antoine_curve


def test_antoine_by_hand():
    c = antoine_curve("acetone")  # log10(p/Pa) = 9.2184 - 1197.01/(T/K - 45.09)
    T = 310.0
    assert c.p(T) == pytest.approx(10 ** (9.2184 - 1197.01 / (T - 45.09)), rel=1e-12)
    dH = R * math.log(10) * 1197.01 * T**2 / (T - 45.09) ** 2
    assert c.apparent_enthalpy(T) == pytest.approx(dH, rel=1e-12)


def test_ppds_equation_by_hand():
    """PPDS equation 3 of the VDI Heat Atlas (2010) D3.1 with the bundled 2-propanol row,
    evaluated by hand; its T derivative against a central difference."""
    from vpkit.physics.curves import ppds_curve, reference_curve

    c = ppds_curve("isopropanol")
    assert reference_curve("2-propanol") == c and c.label.startswith("PPDS")
    T, Tc, Pc = 313.15, 508.25, 4.762e6
    tau = 1 - T / Tc
    f = -8.44737 * tau + 1.17402 * tau**1.5 - 6.97876 * tau**2.5 + 0.69248 * tau**5
    assert c.p(T) == pytest.approx(Pc * math.exp(f * Tc / T), rel=1e-13)
    h = 1e-3
    slope = (c.ln_p(T + h) - c.ln_p(T - h)) / (2 * h)
    assert c.dlnp_dT(T) == pytest.approx(slope, rel=1e-8)
    assert c.p(Tc + 1.0) != c.p(Tc + 1.0)  # NaN above the critical point
    assert c.ln_p(c.boiling_point(101325.0)) == pytest.approx(math.log(101325.0), abs=1e-9)


def test_auto_reference_per_liquid():
    """The one-source-per-liquid rule of reference='auto' (METHOD 5)."""
    from vpkit.physics.curves import has_source, reference_curve

    assert reference_curve("water").label == "IAPWS-95"
    assert reference_curve("1-butanol").label.startswith("PPDS")
    assert reference_curve("ethanol").label.startswith("Antoine")
    assert reference_curve("2-propanol", "antoine").label.startswith("Antoine")
    assert has_source("2-propanol", "ppds") and not has_source("ethanol", "ppds")
    with pytest.raises(InputError, match="no bundled PPDS"):
        reference_curve("ethanol", "ppds")


def test_curve_set_labels_per_run():
    from vpkit.physics.curves import CurveSet, antoine_curve, reference_curve

    a, w = antoine_curve("ethanol"), reference_curve("water")
    labels = CurveSet([a, None, w, a]).labels()
    assert list(labels) == [a.label, "", w.label, a.label]
