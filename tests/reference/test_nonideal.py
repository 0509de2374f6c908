"""The virial and liquid-volume correction from apparent to true ΔvapH, against published
sources:

- the chemicals package: its default critical constants, acentric factors and dipole
  moments (sources named per row in vpkit/physics/data/virial_tsonopoulos.csv), its
  implementation of the Tsonopoulos correlation (BVirial_Tsonopoulos_extended:
  Tsonopoulos 1974, Tsonopoulos & Heidman 1990) and of VDI Heat Atlas PPDS equation 12
  (phase_change.PPDS12);
- CoolProp's reference equations of state (Bell et al., Ind. Eng. Chem. Res. 53, 2498
  (2014), and the papers it cites per fluid): second virial coefficients and h'' - h';
- IAPWS-95 through the iapws package for water (Wagner & Pruss 2002).

Criterion (issue "scientific truth"): the true ΔvapH of a noise-free run within 1 % of
CoolProp's h'' - h' at the same temperature. Methanol's vapor associates beyond B: its
Δz comes from the saturated z'' and z' of its reference equation of state (de Reuck &
Craven, IUPAC Thermodynamic Tables 12 (1993), via CoolProp), bundled as a table; the
table is checked against CoolProp between its rows, and methanol's true ΔvapH against
PPDS equation 12 (VDI Heat Atlas, a correlation of calorimetric data) as well.
"""

import numpy as np
import pytest

import vpkit
from tests.conftest import make_run
from vpkit.physics.curves import reference_curve
from vpkit.physics.liquids import hvap_table, liquids, vaporization_enthalpy
from vpkit.physics.nonideal import (
    B_RELATIVE_U,
    B_RELATIVE_U_DEFAULT,
    delta_z,
    saturation_z_table,
    second_virial,
    virial_table,
)

chemicals = pytest.importorskip("chemicals")
CP = pytest.importorskip("CoolProp.CoolProp")
COOLPROP = {"water": "Water", "methanol": "Methanol", "ethanol": "Ethanol",
            "acetone": "Acetone", "cyclohexane": "CycloHexane", "hexane": "n-Hexane",
            "heptane": "n-Heptane", "toluene": "Toluene"}
SPECIES = {"methanol": "methyl alcohol"}  # chemicals' name for the class
ROWS = list(virial_table().itertuples())


@pytest.mark.parametrize("row", ROWS, ids=lambda r: r.liquid)
def test_bundled_inputs_and_B_equal_chemicals(row):
    cas = row.cas
    assert row.T_c == chemicals.Tc(cas) and row.P_c == chemicals.Pc(cas)
    assert row.omega == chemicals.omega(cas)
    assert row.dipole == chemicals.dipole_moment(cas)
    from chemicals.virial import BVirial_Tsonopoulos_extended

    for T in (280.0, 310.0, 350.0, 400.0):
        ref = BVirial_Tsonopoulos_extended(T, row.T_c, row.P_c, row.omega,
                                           species_type=SPECIES.get(row._3, row._3),
                                           dipole=row.dipole)
        assert second_virial(row.liquid, T) == pytest.approx(ref, rel=1e-12)


@pytest.mark.parametrize("liquid", sorted(COOLPROP))
def test_B_within_its_stated_uncertainty_of_the_reference_eos(liquid):
    cls = virial_table().set_index("liquid").loc[liquid, "class"]
    u_rel = B_RELATIVE_U.get(cls, B_RELATIVE_U_DEFAULT)
    for T in np.linspace(298.15, 353.15, 6):
        eos = CP.PropsSI("Bvirial", "T", T, "Dmolar", 1e-6, COOLPROP[liquid])
        assert abs(second_virial(liquid, T) / eos - 1) <= u_rel


@pytest.mark.parametrize("liquid", liquids())
def test_ppds12_equals_chemicals(liquid):
    from chemicals.phase_change import PPDS12

    r = hvap_table().set_index("liquid").loc[liquid]
    for T in (280.0, 320.0, 360.0):
        assert vaporization_enthalpy(liquid, T) == pytest.approx(
            PPDS12(T, r.T_c, r.A, r.B, r.C, r.D, r.E), rel=1e-10)


def test_ppds12_water_against_iapws95():
    iapws = pytest.importorskip("iapws")
    for T in np.linspace(275.0, 370.0, 12):
        w = (iapws.IAPWS95(T=T, x=1).h - iapws.IAPWS95(T=T, x=0).h) * 18.015268
        assert vaporization_enthalpy("water", T) == pytest.approx(w, rel=2e-3)


def _true_at_T_m(liquid):
    curve = reference_curve(liquid)
    t_hi = min(60.0, curve.boiling_point() - 273.15 - 12.0)
    run = make_run(liquid, tuple(np.linspace(25.0, t_hi, 8)), curve=curve)
    a = vpkit.analyze(run, warn=False)
    r = a.results().iloc[0]
    return a.T_m, r["true ΔvapH at T_m [kJ/mol]"] * 1e3, r["u(true ΔvapH) [kJ/mol]"] * 1e3


def _coolprop_hvap(liquid, T):
    name = COOLPROP[liquid]
    M = CP.PropsSI("molar_mass", name)
    return (CP.PropsSI("H", "T", T, "Q", 1, name) - CP.PropsSI("H", "T", T, "Q", 0, name)) * M


@pytest.mark.parametrize("liquid", sorted(COOLPROP))
def test_true_enthalpy_within_1_percent_of_the_reference_eos(liquid):
    T_m, true, _ = _true_at_T_m(liquid)
    assert true == pytest.approx(_coolprop_hvap(liquid, T_m), rel=0.01)


def test_methanol_true_enthalpy_within_1_percent_of_ppds12_and_inside_its_u():
    """PPDS equation 12 (VDI Heat Atlas, 2nd ed. (2010), D3.1, via chemicals' table) is a
    correlation of calorimetric ΔvapH, independent of the equation of state."""
    T_m, true, u = _true_at_T_m("methanol")
    ref = vaporization_enthalpy("methanol", T_m)
    assert true == pytest.approx(ref, rel=0.01)
    assert abs(true - _coolprop_hvap("methanol", T_m)) <= 2 * u


def test_methanol_saturation_table_equals_its_equation_of_state_between_rows():
    """z'' - z' at temperatures between the table's rows against CoolProp's methanol
    equation of state (de Reuck & Craven 1993), and far from the B-only value there."""
    tab = saturation_z_table()
    assert set(tab["liquid"]) == {"methanol"}
    for T in (180.25, 273.15, 298.15, 321.0, 333.15, 350.75, 420.3, 504.75):
        dz, u = delta_z("methanol", T, 1e4)
        ref = CP.PropsSI("Z", "T", T, "Q", 1, "Methanol") - CP.PropsSI("Z", "T", T, "Q", 0,
                                                                        "Methanol")
        assert float(dz) == pytest.approx(ref, abs=2e-6)
        assert float(u) > 0
    assert np.isnan(delta_z("methanol", 170.0, 1e4)[0])  # below the triple point: none


def test_water_true_enthalpy_against_iapws95():
    iapws = pytest.importorskip("iapws")
    T_m, true, u = _true_at_T_m("water")
    w = (iapws.IAPWS95(T=T_m, x=1).h - iapws.IAPWS95(T=T_m, x=0).h) * 18.015268
    assert true == pytest.approx(w, rel=1e-3) and abs(true - w) < 2 * u
