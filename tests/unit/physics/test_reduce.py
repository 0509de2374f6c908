"""Reduction steps, checked against hand calculations of the published laws
(ideal gas, Dalton, hydrostatics; constants CODATA 2018 / CIPM-2007)."""

import numpy as np
import pytest
from uncertainties import ufloat

from vpkit.physics import reduce as rd

R = 8.314462618


def test_ideal_gas_and_dalton_by_hand():
    n = 100000.0 * 2e-6 / (R * 295.0)  # 2 mL of air at 100 kPa and 295 K
    assert rd.air_amount(100000.0, 0.0, 2e-6, 295.0) == pytest.approx(n, rel=1e-14)
    p_air = rd.air_partial_pressure(n, 3e-6, 330.0)
    assert p_air == pytest.approx(100000.0 * (2 / 3) * (330 / 295), rel=1e-14)
    assert rd.vapor_pressure(100000.0, p_air) == pytest.approx(100000.0 - p_air)


def test_weighing_and_scale_both_directions():
    # 1.6 g of liquid of 800 kg/m3 displaced -> 2 mL, ignoring the gas mass
    V = rd.room_gas_volume(0.0300, 0.0284, 800.0)
    assert V == pytest.approx(2.0e-6, rel=1e-12)
    off = rd.scale_offset(V, 1.85e-6, +1)
    assert rd.bubble_volume(1.85e-6, off, +1) == pytest.approx(V)
    off_open = rd.scale_offset(V, 8.0e-6, -1)  # graduated from the open end
    assert off_open == pytest.approx(10.0e-6)
    assert rd.bubble_volume(7.0e-6, off_open, -1) == pytest.approx(3.0e-6)


def test_gas_mass_in_weighing():
    # air at 100 kPa, 295 K: rho = P M/(R T) = 1.181 kg/m3 (M = 28.96546 g/mol)
    rho_gas = rd.gas_density(100000.0, 295.0)
    assert rho_gas == pytest.approx(100000 * 0.02896546 / (R * 295.0), rel=1e-14)
    V = rd.room_gas_volume(0.0300, 0.0284, 800.0, rho_gas)
    assert V == pytest.approx(0.0016 / (800.0 - rho_gas))


def test_hydrostatic_head():
    assert rd.total_pressure(100000.0, 0.1, 1000.0) == pytest.approx(100000 + 980.665)


def test_functions_accept_uncertain_numbers():
    n = rd.air_amount(ufloat(100000.0, 100.0), 0.0, 2e-6, 295.0)
    p = rd.vapor_pressure(100000.0, rd.air_partial_pressure(n, 3e-6, 330.0))
    assert p.std_dev > 0


def test_chain_matches_steps():
    x = {"T": np.array([[300.0, 320.0]]), "reading": np.array([[2.0e-6, 2.6e-6]]),
         "P": np.array([[100000.0, 100000.0]]), "P_bar": np.array([100000.0]),
         "T_room": np.array([295.0]), "room_reading": np.array([1.9e-6]),
         "mass_before": np.array([0.030]), "mass_after": np.array([0.0284]),
         "density": np.array([800.0])}
    setup = rd.ReductionSetup(air_from="weighed", gas_mass=False)
    out = rd.reduce_chain(x, setup, np.array([2000.0]))
    V_room = 2.0e-6
    n = (100000.0 - 2000.0) * V_room / (R * 295.0)
    V = V_room - 1.9e-6 + np.array([2.0e-6, 2.6e-6])
    np.testing.assert_allclose(out["p_vap"][0], 100000.0 - n * R * np.array([300, 320]) / V)


def test_flags_never_drop_points():
    flags = rd.point_flags([300.0, 310.0, 320.0], [2e-6, 1.9e-6, 3e-6],
                           [1e5, 1e5, 1e5], [-5.0, 100.0, 2e5], T_boil=315.0)
    assert len(flags) == 3
    assert "vapor pressure ≤ 0" in flags[0][0]
    assert any("smaller than at a lower" in f for f in flags[1])
    assert any("≥ total pressure" in f for f in flags[2])
    assert any("boiling point" in f for f in flags[2])


def _x(**extra):
    x = {"T": np.array([[300.0, 320.0]]), "reading": np.array([[2.0e-6, 2.6e-6]]),
         "P": np.full((1, 2), np.nan), "P_bar": np.array([100000.0]),
         "T_room": np.array([295.0]), "room_reading": np.array([1.9e-6]),
         "mass_before": np.array([0.030]), "mass_after": np.array([0.0284]),
         "density": np.array([800.0]), "V_injected": np.array([2.1e-6])}
    x.update({k: np.array([v]) for k, v in extra.items()})
    return x


def test_head_at_the_room_reading_raises_the_weighed_air_amount():
    """n = (P_bar + rho g h_room - p_ref) V_room/(R T_room), g_n = 9.80665 m/s^2."""
    setup = rd.ReductionSetup(air_from="weighed", gas_mass=False, room_head=True)
    out = rd.reduce_chain(_x(room_depth=0.05), setup, np.array([2000.0]))
    n = (100000.0 + 800.0 * 9.80665 * 0.05 - 2000.0) * 2.0e-6 / (R * 295.0)
    assert out["n_air"][0] == pytest.approx(n, rel=1e-13)
    off = rd.reduce_chain(_x(room_depth=0.05), rd.ReductionSetup(gas_mass=False, room_head=False),
                          np.array([2000.0]))
    assert off["n_air"][0] == pytest.approx((100000.0 - 2000.0) * 2e-6 / (R * 295.0))


def test_tube_bore_moves_the_interface_down_as_the_bubble_grows():
    """depth_i = h + (V_i - V_room)/(pi d^2/4); the room head is then h itself."""
    setup = rd.ReductionSetup(air_from="weighed", gas_mass=False, use_head=True, room_head=True)
    d, h = 0.005, 0.04
    out = rd.reduce_chain(_x(depth=h, bore=d), setup, np.array([2000.0]))
    V = 2.0e-6 - 1.9e-6 + np.array([2.0e-6, 2.6e-6])
    depth = h + (V - 2.0e-6) / (np.pi * d**2 / 4)
    np.testing.assert_allclose(out["P_total"][0], 100000.0 + 800.0 * 9.80665 * depth, rtol=1e-14)
    n = (100000.0 + 800.0 * 9.80665 * h - 2000.0) * 2.0e-6 / (R * 295.0)
    assert out["n_air"][0] == pytest.approx(n, rel=1e-13)


def test_moisture_of_injected_air_leaves_a_liquid_that_takes_up_water():
    """Dry air only: n = (P_bar - RH p_w(T_room)) V_inj/(R T_room), p_w from IAPWS-95 (the
    iapws package); in a liquid that does not take up water the moisture counts as air."""
    iapws = pytest.importorskip("iapws")
    p_w = iapws.IAPWS95(T=295.0, x=0).P * 1e6
    wet = rd.reduce_chain(_x(RH=0.6), rd.ReductionSetup(air_from="injected",
                                                        moisture_dissolves=True), 0.0)
    assert wet["n_air"][0] == pytest.approx((100000.0 - 0.6 * p_w) * 2.1e-6 / (R * 295.0),
                                            rel=1e-9)
    kept = rd.reduce_chain(_x(RH=0.6), rd.ReductionSetup(air_from="injected"), 0.0)
    assert kept["n_air"][0] == pytest.approx(100000.0 * 2.1e-6 / (R * 295.0), rel=1e-13)


def test_capillary_lengths_become_volumes_and_the_bore_cancels_for_a_cold_reference():
    """Bubble lengths L in a capillary of bore d are volumes L π d²/4 (offset 0: the length
    runs from the closed end). With the air amount fixed at a cold reading the cross-section
    cancels: p_air(T) = (P - p_c) (L_c / L) (T / T_c), by hand below."""
    T = np.array([277.15, 300.0, 320.0])
    L = np.array([0.022, 0.0245, 0.0290])
    P, p_c = 99_600.0, 800.0
    x = {"T": T, "reading": L, "P_bar": np.float64(P), "T_room": np.float64(295.0),
         "bore": np.float64(1.2e-3)}
    setup = rd.ReductionSetup(air_from="cold", cold_index=0, offset_from_weighing=False,
                              use_head=False, length_readings=True)
    out = rd.reduce_chain(x, setup, np.float64(p_c))
    area = np.pi * 1.2e-3**2 / 4
    assert out["V"] == pytest.approx(L * area, rel=1e-14)
    expected = P - (P - p_c) * (L[0] / L) * (T / T[0])
    assert out["p_vap"] == pytest.approx(expected, rel=1e-12)
    wider = rd.reduce_chain({**x, "bore": np.float64(2.5e-3)}, setup, np.float64(p_c))
    assert wider["p_vap"] == pytest.approx(out["p_vap"], rel=1e-12)


def test_per_run_air_methods_give_each_run_its_own_method():
    """A batch with one method per run equals each method applied alone."""
    T = np.array([[277.0, 300.0, 320.0]] * 3)
    x = {"T": T, "reading": np.array([[2.0e-6, 2.3e-6, 2.8e-6]] * 3),
         "P_bar": np.full(3, 1.0e5), "T_room": np.full(3, 295.0),
         "room_reading": np.full(3, 2.1e-6), "scale_offset": np.full(3, 0.1e-6),
         "V_injected": np.full(3, 2.0e-6), "density": np.full(3, 789.0)}
    kw = dict(cold_index=0, offset_from_weighing=False, use_head=False)
    mixed = rd.reduce_chain(x, rd.ReductionSetup(
        air_from=np.array(["weighed", "injected", "cold"], dtype=object), **kw), np.full(3, 900.0))
    for r, method in enumerate(["weighed", "injected", "cold"]):
        alone = rd.reduce_chain(x, rd.ReductionSetup(air_from=method, **kw), np.full(3, 900.0))
        assert mixed["p_vap"][r] == pytest.approx(alone["p_vap"][r], rel=1e-15)
    with pytest.raises(ValueError, match="air_from must be one of"):
        rd.reduce_chain(x, rd.ReductionSetup(air_from="guessed", **kw), np.full(3, 900.0))
