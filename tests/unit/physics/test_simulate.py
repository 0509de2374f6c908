"""Forward model: readings from a known curve, checked by hand with the ideal-gas
law and Dalton's law (no vpkit reduction involved)."""

import numpy as np
import pytest

from vpkit.physics.simulate import NOISE, simulate_run

R = 8.314462618  # CODATA 2018


def flat(T):
    return np.full(np.shape(T), 5000.0)  # a made-up constant vapor pressure, 5 kPa


def test_readings_follow_ideal_gas_and_dalton():
    run = simulate_run(flat, [300.0, 320.0], liquid="water", P_bar=100e3, T_room=295.0,
                       V_room=2e-6, offset=0.1e-6, density=1000.0, gas_mass=False, units={
                           "T": "K", "V": "m**3", "P": "Pa", "m": "kg", "rho": "kg/m**3",
                           "L": "m"})
    n = (100e3 - 5000.0) * 2e-6 / (R * 295.0)
    for T, reading in zip(run.bath_temperature, run.reading):
        assert reading + 0.1e-6 == pytest.approx(n * R * T / (100e3 - 5000.0), rel=1e-12)
    before = run.entry("mass_before_air").value
    after = run.entry("mass_after_air").value
    assert before - after == pytest.approx(2e-6 * 1000.0, rel=1e-12)
    assert run.entry("injected_air_volume").value == pytest.approx(n * R * 295.0 / 100e3)


def test_open_end_scale_reads_downwards():
    up = simulate_run(flat, [300.0, 320.0], liquid="water", offset=0.1e-6)
    down = simulate_run(flat, [300.0, 320.0], liquid="water", offset=9e-6, direction=-1)
    assert up.reading[1] > up.reading[0] and down.reading[1] < down.reading[0]
    assert down.entry("graduated_from").value == "open end"


def test_noise_is_seeded_and_stated():
    a = simulate_run(flat, [300.0, 310.0], liquid="water", noise=NOISE,
                     rng=np.random.default_rng(1))
    b = simulate_run(flat, [300.0, 310.0], liquid="water", noise=NOISE,
                     rng=np.random.default_rng(1))
    c = simulate_run(flat, [300.0, 310.0], liquid="water")
    assert a == b and a.reading != c.reading
    assert a.entry("reading_uncertainty") is not None
