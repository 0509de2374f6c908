"""The uncertainty budget. Checks: the contributions of independent inputs add up to
the reported u (GUM, JCGM 100:2008, 5.1.3); each group's u equals a Monte Carlo with
only that group varied (GUM Supplement 1, JCGM 101:2008: the validation of the linear
law by propagation of distributions), within 3 %; "u if halved" equals a re-analysis
with that uncertainty halved."""

import dataclasses

import numpy as np
import pytest

import vpkit
from tests.conftest import make_run
from vpkit.analysis.budget import GROUPS, contributions, group_of
from vpkit.physics.simulate import NOISE


def _run(liquid="water"):
    return make_run(liquid, noise=NOISE, rng=np.random.default_rng(11), depth=0.04)


@pytest.mark.parametrize("options", [{}, {"weighting": "weighted"}, {"weighting": "ordinary"},
                                     {"vapor_at_air_reference": "fit"},
                                     {"model": "constant_dcp"}, {"air_from": "injected"}],
                         ids=str)
def test_contributions_add_up_to_the_reported_uncertainty(options):
    a = vpkit.analyze(_run(), warn=False, **options)
    c = contributions(a.result)
    assert np.sqrt(c["ΔH_vap"].sum()) == pytest.approx(a.enthalpy.std_dev, rel=1e-6)
    assert np.sqrt(c["T_b at 101.325 kPa"].sum()) == pytest.approx(
        a.result.u_T_b_normal[0], rel=1e-6)
    assert np.sqrt(c["true ΔvapH"].sum()) == pytest.approx(a.result.u_true_enthalpy[0],
                                                           rel=1e-6)
    b = a.budget()
    for q in ("ΔH_vap", "T_b at 101.325 kPa", "true ΔvapH"):
        assert b.drop(index="total")[(q, "share")].sum() == pytest.approx(1.0, rel=1e-12)


def test_every_input_has_a_group():
    a = vpkit.analyze(_run(), warn=False)
    assert {group_of(n) for n in a.inputs.names} <= set(GROUPS)


@pytest.mark.parametrize("group", ["graduation readings", "bath thermometer", "room temperature",
                                   "barometer", "depths and tube bore"])
def test_each_group_matches_a_monte_carlo_of_that_group_alone(group):
    a = vpkit.analyze(_run(), warn=False)
    mc = a.monte_carlo(40_000, seed=3, inputs=[group])
    expected = a.budget().loc[group, ("ΔH_vap", "u from it")] * 1e3
    assert mc.failed == 0
    assert mc.std == pytest.approx(expected, rel=0.03)


def test_u_if_halved_is_what_a_halved_uncertainty_gives():
    run = _run()
    a = vpkit.analyze(run, warn=False)
    predicted = a.budget().loc["bath thermometer", ("ΔH_vap", "u if halved")]
    entries = tuple((k, dataclasses.replace(e, value=e.value / 2)
                     if k == "temperature_uncertainty" else e) for k, e in run.entries)
    halved = vpkit.analyze(dataclasses.replace(run, entries=entries), warn=False)
    assert halved.enthalpy.std_dev / 1e3 == pytest.approx(predicted, rel=0.02)


