"""The bench check of a new reading. Criteria (issue "before and during the run"): a
swapped-digit reading is flagged; clean readings are flagged at the design rate. Design
rate (stated in vpkit.planning.bench_check): |z| > 4 for about 1 in 16,000 clean readings if
errors are normal; the z of clean readings must have unit spread (that is what makes
the threshold mean what it says). Measured when written (seed 2026, 400 checks on 200
simulated runs of water, ethanol, 2-propanol, toluene): none flagged, spread of z 1.00,
largest |z| 3.3. Truth: runs simulated from the published curves with the default
instrument noise (common practice, no source)."""

import dataclasses

import numpy as np
import pytest

import vpkit
from tests.conftest import make_run
from vpkit.physics.simulate import NOISE


def _first(run, k):
    return dataclasses.replace(run, bath_temperature=run.bath_temperature[:k],
                               reading=run.reading[:k], pressure=run.pressure[:k],
                               include=run.include[:k], reason=run.reason[:k], rows=())


def test_clean_readings_have_unit_spread_and_are_not_flagged():
    rng = np.random.default_rng(2026)
    z = []
    for j in range(200):
        run = make_run(["water", "ethanol", "2-propanol", "toluene"][j % 4], noise=NOISE,
                       rng=rng)
        for k in (4, 7):
            z.append(vpkit.check_reading(_first(run, k), run.bath_temperature[k],
                                         run.reading[k]).z)
    z = np.array(z)
    assert 0.9 < z.std() < 1.1
    assert np.mean(np.abs(z) > 4) <= 0.005


def test_a_swapped_digit_is_flagged_with_the_expected_value():
    run = make_run("ethanol", noise=NOISE, rng=np.random.default_rng(3))
    for k in range(3, 8):  # the first reading whose two decimals differ
        typed = f"{run.reading[k]:.2f}"  # e.g. 2.18
        swapped = float(typed[0] + "." + typed[3] + typed[2])  # 2.81
        if abs(swapped - float(typed)) >= 0.05:
            break
    else:
        raise AssertionError("no reading with distinct decimals")
    c = vpkit.check_reading(_first(run, k), run.bath_temperature[k], swapped)
    assert c.suspect and abs(c.z) > 4
    assert "expected" in c.message and "mL" in c.message and "check it" in c.message
    ok = vpkit.check_reading(_first(run, k), run.bath_temperature[k], run.reading[k])
    assert not ok.suspect and abs(ok.expected - run.reading[k]) < 3 * ok.u


def test_needs_three_readings():
    run = make_run("ethanol")
    with pytest.raises(vpkit.InputError, match="at least three"):
        vpkit.check_reading(_first(run, 2), 40.0, 2.0)
