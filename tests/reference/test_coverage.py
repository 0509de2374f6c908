"""Honest uncertainty: coverage of the stated 95 % interval of ΔH_vap.

Source of the criterion: JCGM 100:2008 (GUM), section 6.2-6.3: an expanded
uncertainty with k = 1.96 for a normal distribution covers 95 % of the values.
Truth: the published equations (IAPWS-95 for water, via the bundled table;
Poling et al. 2001, App. A, for ethanol); the estimand is the ΔH_vap that the same
choices give on noise-free readings. Noise: the documented default standard
uncertainties (common practice, no source), drawn per run for shared inputs
(barometer, balance, room thermometer) and per point.

Criterion (issue "scientific truth"): every weighting between 93 % and 97 % over
1,000 seeded runs. Measured when written (seed 2026): water GLS 93.6, weighted 95.2,
ordinary 95.0 %; ethanol 94.1, 94.7, 95.4 %. Before the sandwich covariance the
unweighted fit covered 62 % (it ignored the correlations of the points).
"""

import numpy as np
import pytest

import vpkit
from tests.conftest import make_run
from vpkit.batch import analyze_runs
from vpkit.simulate import NOISE

N_RUNS = 1000


@pytest.mark.parametrize("liquid", ["water", "ethanol"])
def test_every_weighting_covers_95_percent(liquid):
    rng = np.random.default_rng(2026)
    runs = {f"r{k}": make_run(liquid, noise=NOISE, rng=rng) for k in range(N_RUNS)}
    for weighting in ("gls", "weighted", "ordinary"):
        truth = vpkit.analyze(make_run(liquid), weighting=weighting,
                              warn=False).enthalpy.nominal_value / 1e3
        s = analyze_runs(runs, weighting=weighting)
        assert (s["status"] == "").all()
        hit = np.abs(s["ΔH_vap [kJ/mol]"] - truth) <= 1.959964 * s["u(ΔH_vap) [kJ/mol]"]
        print(f"{liquid} {weighting}: coverage {hit.mean():.3f}")
        assert 0.93 <= hit.mean() <= 0.97, (weighting, hit.mean())
        expected = "GLS" if weighting == "gls" else "sandwich"
        assert (s["covariance from"] == expected).all()


def test_monte_carlo_agrees_with_linear_propagation():
    """GUM Supplement 1 (JCGM 101:2008) validation idea: where the model is near
    linear, the Monte Carlo standard deviation matches the linear one (here 5 %)."""
    run = make_run("ethanol", noise=NOISE, rng=np.random.default_rng(7))
    a = vpkit.analyze(run)
    mc = a.monte_carlo(20_000, seed=1)
    assert mc.failed == 0
    assert abs(mc.std / a.enthalpy.std_dev - 1) < 0.05
    assert abs(mc.mean - a.enthalpy.nominal_value) < 0.1 * a.enthalpy.std_dev
