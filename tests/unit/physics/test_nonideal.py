"""Virial and liquid-volume correction: the Tsonopoulos formula and the Clapeyron
factor evaluated by hand (coefficients as printed in Tsonopoulos, AIChE J. 20, 263
(1974), and Poling et al. 2001 section 4-5); the bundled inputs and B against the
chemicals package are in tests/reference/test_nonideal.py."""

import math

import numpy as np
import pytest

from vpkit.constants import R
from vpkit.physics.nonideal import (
    delta_z,
    delta_z_runs,
    has_virial,
    liquid_molar_volume,
    polar_parameters,
    second_virial,
    tsonopoulos_B,
)


def test_tsonopoulos_by_hand():
    T, Tc, Pc, w, a, b = 320.0, 507.6, 3.025e6, 0.30, 0.01, 0.02
    Tr = T / Tc
    f0 = 0.1445 - 0.330 / Tr - 0.1385 / Tr**2 - 0.0121 / Tr**3 - 0.000607 / Tr**8
    f1 = 0.0637 + 0.331 / Tr**2 - 0.423 / Tr**3 - 0.008 / Tr**8
    expect = R * Tc / Pc * (f0 + w * f1 + a / Tr**6 - b / Tr**8)
    assert tsonopoulos_B(T, Tc, Pc, w, a, b) == pytest.approx(expect, rel=1e-14)


def test_polar_parameters_by_class():
    mr = 1e5 * 2.9**2 * (4.7e6 / 101325.0) / 508.1**2
    assert polar_parameters("ketone", 2.9, 508.1, 4.7e6) == pytest.approx(
        (-2.14e-4 * mr - 4.308e-21 * mr**8, 0.0))
    assert polar_parameters("alkanol", 1.7, 514.0, 6.1e6)[0] == 0.0878
    assert polar_parameters("methanol", 1.7, 513.0, 8.1e6) == (0.0878, 0.0525)
    assert polar_parameters("water", 0.0, 647.1, 22.06e6) == (-0.0109, 0.0)
    assert polar_parameters("normal", 0.0, 507.6, 3.0e6) == (0.0, 0.0)


def test_delta_z_is_the_clapeyron_factor():
    T, p = 313.15, 7384.0
    B, V = second_virial("water", T), liquid_molar_volume("water", T)
    dz, u = delta_z("water", T, p)
    assert dz == pytest.approx(1 + p * (B - V) / (R * T), rel=1e-14)
    assert u == pytest.approx(p * 0.20 * abs(B) / (R * T), rel=1e-12)
    # water at 40 degC, IAPWS-95 via CoolProp 6.6 (PropsSI "Bvirial"; liquid density):
    # B = -967 cm3/mol, V = 18.16 cm3/mol (tests/reference/test_nonideal.py checks all liquids)
    assert B == pytest.approx(-967e-6, rel=0.05) and V == pytest.approx(18.16e-6, rel=0.01)


def test_unknown_liquids_get_nan_and_runs_share_one_call_per_liquid():
    assert not has_virial("unobtainium") and has_virial("IPA")
    dz, u = delta_z_runs(["water", "unobtainium", "H2O"], [313.15, 313.15, 313.15],
                         [7384.0, 7384.0, 7384.0])
    assert math.isnan(dz[1]) and dz[0] == dz[2] and np.isfinite(u[[0, 2]]).all()


def test_associating_vapor_takes_dz_from_the_saturation_table_by_linear_interpolation():
    """Methanol: Δz = z'' - z' interpolated by hand between the two bundled rows around T
    (the table itself is checked against CoolProp in tests/reference/test_nonideal.py);
    u = 10 % of 1 - z''; the run's own p does not enter."""
    from vpkit.physics.nonideal import Z_TABLE_RELATIVE_U, saturation_z_table

    tab = saturation_z_table()
    rows = tab[tab["liquid"] == "methanol"].set_index("T [K]")
    T = 321.2
    lo, hi = rows.loc[321.0], rows.loc[321.5]
    w = (T - 321.0) / 0.5
    z_v = (1 - w) * lo["z_vapor"] + w * hi["z_vapor"]
    z_l = (1 - w) * lo["z_liquid"] + w * hi["z_liquid"]
    for p in (3e4, 5e4):
        dz, u = delta_z("MeOH", T, p)
        assert dz == pytest.approx(z_v - z_l, rel=1e-14)
        assert u == pytest.approx(Z_TABLE_RELATIVE_U * (1 - z_v), rel=1e-12)
    assert Z_TABLE_RELATIVE_U == 0.10
    assert not (saturation_z_table()["liquid"] == "water").any()  # water keeps its B
