"""Property-based tests (hypothesis). Example counts are set per test below and
reported in the issue's closing note."""

import copy

import numpy as np
import pandas as pd
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import vpkit
from vpkit.errors import VpkitError
from vpkit.physics.curves import antoine_curve
from vpkit.physics.liquids import liquid_density, liquids
from vpkit.physics.simulate import simulate_run
from vpkit.record import run_in_si


def examples(n):
    return settings(max_examples=n, deadline=None,
                    suppress_health_check=[HealthCheck.too_slow, HealthCheck.filter_too_much])


@examples(1000)
@given(st.binary(max_size=600))
def test_any_bytes_raise_only_vpkit_errors(data):
    try:
        run = vpkit.parse_run(data, source="fuzz.csv")
        run_in_si(run)
    except VpkitError:
        pass


LINES = st.sampled_from([
    "[run]", "[readings]", "quantity,value,unit,uncertainty", "liquid,water,,",
    "barometric_pressure,100,kPa,", "room_temperature,21,degC,", "room_reading,2,mL,",
    "mass_before_air,30,g,", "mass_after_air,28,g,", "scale_offset,0.1,mL,",
    "bath_temperature [degC],reading [mL],include,reason", "25,2.1,yes,", "40,2.4,no,x",
    "50,2.9,,", "30,abc,yes,", "25,2.1,yes,a,b", "", "# comment", "x,y", ";;", "60;3,1",
])


@examples(1000)
@given(st.lists(LINES, max_size=16))
def test_structured_garbage_raises_only_vpkit_errors(lines):
    """Near-valid files (shuffled real lines) load or fail with vpkit's own errors."""
    try:
        run = vpkit.parse_run("\n".join(lines), source="fuzz.csv")
        vpkit.analyze(run, warn=False)
    except VpkitError:
        pass


@st.composite
def valid_runs(draw):
    liquid = draw(st.sampled_from(liquids()))
    curve = antoine_curve(liquid)
    T_room = draw(st.floats(288.0, 298.0))
    Tb = curve.boiling_point()
    lo, hi = T_room + 2.0, min(Tb - 12.0, T_room + 55.0)
    n = draw(st.integers(3, 10))
    T = np.sort(draw(st.lists(st.floats(lo, hi), min_size=n, max_size=n,
                              unique_by=lambda t: round(t, 1))))
    depth = draw(st.one_of(st.none(), st.floats(0.0, 0.12)))
    run = simulate_run(curve.p, T, liquid=liquid, T_room=T_room,
                       P_bar=draw(st.floats(80e3, 105e3)), V_room=draw(st.floats(0.5e-6, 5e-6)),
                       offset=draw(st.floats(0.0, 0.5e-6)), depth=depth,
                       direction=draw(st.sampled_from([1, -1])),
                       density=float(liquid_density(liquid, T_room)))
    if run.n_points and min(run.reading) < 0:  # an open-end scale needs a larger offset
        run = simulate_run(curve.p, T, liquid=liquid, T_room=T_room, offset=12e-6,
                           direction=-1, density=float(liquid_density(liquid, T_room)))
    return run, curve


@examples(150)
@given(valid_runs())
def test_valid_runs_reduce_to_finite_pressures(case):
    run, curve = case
    a = vpkit.analyze(run, warn=False, reference="antoine")  # p_ref from the same curve
    assert np.all(np.isfinite(a.p_vap)) and np.all(a.p_vap > 0)
    np.testing.assert_allclose(a.p_vap, curve.p(a.T), rtol=1e-8)
    assert np.isfinite(a.enthalpy.nominal_value) and a.enthalpy.std_dev > 0


@examples(100)
@given(valid_runs(), st.data())
def test_exclude_then_reinclude_is_identical(case, data):
    run, _ = case
    k = data.draw(st.integers(0, run.n_points - 1))
    first = vpkit.analyze(run, warn=False)
    flipped = run.with_include([i != k for i in range(run.n_points)])
    try:
        vpkit.analyze(flipped, warn=False)
    except VpkitError:
        pass
    back = flipped.with_include(run.include, run.reason)
    again = vpkit.analyze(back, warn=False)
    assert again.enthalpy.nominal_value == first.enthalpy.nominal_value
    assert again.enthalpy.std_dev == first.enthalpy.std_dev
    assert np.array_equal(again.p_vap, first.p_vap)


@examples(100)
@given(valid_runs(), st.sampled_from(["clausius_clapeyron", "constant_dcp"]))
def test_analysis_never_mutates_its_input(case, model):
    run, _ = case
    df = run.to_frame()
    df_copy = df.copy(deep=True)
    meta = dict(run.entries)
    from_df = vpkit.Run.from_frame(df, **meta)
    snapshot = copy.deepcopy(from_df)
    run_snapshot = copy.deepcopy(run)
    try:
        vpkit.analyze(from_df, model=model, exclude=[0], warn=False)
        vpkit.analyze(run, model=model, warn=False).points()
    except VpkitError:
        pass
    assert from_df == snapshot and run == run_snapshot
    pd.testing.assert_frame_equal(df, df_copy)
