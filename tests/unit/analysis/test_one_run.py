"""analyze(): choices, exclusions, flags, immutability. Expected values come from
the published curve the runs were simulated from (Poling et al. 2001 Antoine
equations, bundled) or from the fit module applied by hand."""

import copy

import numpy as np
import pytest

import vpkit
from tests.conftest import make_run
from vpkit.errors import FitError, InputError
from vpkit.physics.simulate import NOISE


@pytest.fixture(scope="module")
def noisy():
    return make_run("ethanol", noise=NOISE, rng=np.random.default_rng(4), boiling_point=351.4)


def test_exclusion_persists_and_reincluding_restores(noisy):
    base = vpkit.analyze(noisy)
    ex = vpkit.analyze(noisy, exclude={2: "bath not settled"})
    assert not ex.include[2] and ex.reasons[2] == "bath not settled"
    assert ex.enthalpy.nominal_value != base.enthalpy.nominal_value
    again = ex.with_choices(model="constant_dcp")
    assert not again.include[2] and again.reasons[2] == "bath not settled"
    back = ex.with_choices(exclude=None)
    assert back.enthalpy.nominal_value == base.enthalpy.nominal_value
    assert back.enthalpy.std_dev == base.enthalpy.std_dev


def test_run_flags_from_file_are_kept(noisy):
    run = noisy.with_include([True] * 7 + [False], [""] * 7 + ["bubble touched the wall"])
    a = vpkit.analyze(run)
    assert not a.include[7] and a.reasons[7] == "bubble touched the wall"
    assert noisy.include[7]  # the original run is unchanged


def test_analysis_does_not_mutate_the_run(noisy):
    before = copy.deepcopy(noisy)
    vpkit.analyze(noisy, exclude=[1, 3], model="antoine")
    assert noisy == before


def test_impossible_point_flagged_and_shown_not_dropped():
    run = make_run("ethanol")
    r = list(run.reading)
    r[0] = r[0] - 0.3  # a bubble far smaller than the air alone fills
    bad = run.__class__(run.entries, run.units, run.bath_temperature, tuple(r), run.pressure,
                        run.include, run.reason)
    a = vpkit.analyze(bad)
    assert len(a.T) == 8 and not a.include[0]
    assert a.reasons[0].startswith("impossible")
    assert any("point 0" in w for w in a.warnings)
    assert a.points().shape[0] == 8


def test_cold_reference_point_is_set_aside_with_reason():
    a = vpkit.analyze(make_run("toluene", (2, 25, 30, 35, 40, 45, 50, 55)), air_from="cold")
    assert not a.include[0] and "air amount" in a.reasons[0]


def test_choices_that_cannot_work_raise_clear_errors(noisy):
    with pytest.raises(InputError, match="air_from"):
        vpkit.analyze(noisy, air_from="guess")
    with pytest.raises(FitError, match="at least 3"):
        vpkit.analyze(noisy, model="antoine", exclude=range(6))
    with pytest.raises(InputError, match="exclude"):
        vpkit.analyze(noisy, exclude=[99])


def test_comparison_and_boiling_point_against_reference(noisy):
    """The Antoine curve the run came from reaches 101.325 kPa at 351.4 K (Poling set)."""
    a = vpkit.analyze(noisy)
    c = a.comparison
    assert c is not None and c.normal_boiling_point == pytest.approx(351.41, abs=0.05)
    assert np.all(np.abs(c.deviation_percent) < 20)
    Tb = a.boiling_point()
    assert abs(Tb.nominal_value - 351.4) < 4 * Tb.std_dev + 1.0
    assert a.results()["measured T_b [degC]"].iloc[0] == pytest.approx(351.4 - 273.15)


def test_choice_shifts_listed(noisy):
    a = vpkit.analyze(noisy)
    shifts = a.choice_shifts()
    key = "air from weighed, p_vap at air reference: neglect"
    assert key in shifts and "gas mass in the weighing off" in shifts
    # neglecting p_vap at room temperature overestimates the air and raises ΔH (METHOD 2.3)
    assert shifts[key] > 0
    assert "How other choices" in a.summary()


def test_robust_check_finds_a_planted_outlier():
    run = make_run("ethanol", noise=NOISE, rng=np.random.default_rng(4))
    r = list(run.reading)
    r[4] -= 0.1  # a misread graduation, 20x the reading uncertainty
    bad = run.__class__(run.entries, run.units, run.bath_temperature, tuple(r), run.pressure,
                        run.include, run.reason)
    a = vpkit.analyze(bad)
    assert 4 in a.robust_outliers()
    assert any("point 4" in w and "suspect" in w for w in a.warnings)
    assert a.include[4]  # diagnostics never exclude
