"""Honest uncertainty: coverage of the stated 95 % interval of ΔH_vap.

Source of the criterion: JCGM 100:2008 (GUM), section 6.2-6.3: an expanded
uncertainty with k = 1.96 for a normal distribution covers 95 % of the values.
Truth: the published equations (IAPWS-95 for water, via the bundled table;
Poling et al. 2001, App. A, for ethanol); the estimand is the ΔH_vap that the same
choices give on noise-free readings. Noise: the documented default standard
uncertainties (common practice, no source), drawn per run for shared inputs
(barometer, balance, room thermometer) and per point.

Criterion (issue "scientific truth"): every weighting between 93 % and 97 % over
1,000 seeded runs, and (issue "real sections") a mean error below 0.1 u: a bias of
0.23 u per run becomes 1.3 u of a 30-run section's consensus. Measured when written
(seed 2026, covariance at the fitted curve): coverage water GLS 94.5, weighted 95.0,
ordinary 95.4 %; ethanol 94.5, 95.0, 95.5 %; mean error water -0.06, -0.04, -0.04 u,
ethanol -0.05, -0.04, -0.03 u. With the covariance evaluated at the measured points
GLS read -0.28 u (water) and -0.14 u (ethanol): Peelle's pertinent puzzle (S. Chiba,
D. L. Smith, ANL/NDM-121, 1991). Before the sandwich covariance the unweighted fit
covered 62 % (it ignored the correlations of the points).
"""

import numpy as np
import pytest

import vpkit
from tests.conftest import make_run
from vpkit.analysis.many_runs import analyze_runs
from vpkit.physics.simulate import NOISE

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
        err = (s["ΔH_vap [kJ/mol]"] - truth) / s["u(ΔH_vap) [kJ/mol]"]
        hit = np.abs(err) <= 1.959964
        print(f"{liquid} {weighting}: coverage {hit.mean():.3f}, mean error {err.mean():+.3f} u")
        assert 0.93 <= hit.mean() <= 0.97, (weighting, hit.mean())
        assert abs(err.mean()) < 0.1, (weighting, err.mean())
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


@pytest.mark.parametrize("liquid,t_c", [("water", (35, 40, 45, 50, 55, 60, 65, 70)),
                                       ("ethanol", (25, 30, 35, 40, 45, 50, 55, 60))])
def test_coverage_with_coarse_graduations_declared(liquid, t_c):
    """Readings rounded to 0.05 mL graduations with `reading_resolution` declared and no
    reading uncertainty: u(reading) = 0.05/sqrt(12) mL (GUM 4.3.7). Bubble size and scale
    offset vary from run to run, so the rounding errors are independent. Truth: the curve's
    apparent ΔH_vap at each run's T_m (within 0.05 kJ/mol of the noise-free fit, see
    test_apparent_enthalpy.py; the intervals here are about 40 times wider).

    Measured when written (seed 7; GLS, weighted, ordinary): water 35-70 degC 94.5, 95.6,
    95.3 %; ethanol 25-60 degC 94.9, 95.0, 94.5 %. Not asserted, and said so: water from
    25 degC with these graduations covers only 89 % by GLS (mean error -0.57 u), because
    p_vap at 25 degC is 3 % of the gas pressure and a 0.025 mL rounding moves it by tens
    of percent, beyond linear propagation; 98 % of those runs carry the "amplified error"
    warning that says so.
    """
    import dataclasses

    from vpkit.physics.curves import reference_curve
    from vpkit.record.fields import Entry

    rng = np.random.default_rng(7)
    curve = reference_curve(liquid)
    step = 0.05
    noise = {k: v for k, v in NOISE.items() if k != "reading"}
    runs = {}
    for k in range(N_RUNS):
        run = make_run(liquid, t_c, noise=noise, rng=rng, V_room=rng.uniform(1.8e-6, 2.6e-6),
                       offset=rng.uniform(0.1e-6, 0.2e-6))
        q = lambda v: round(v / step) * step  # noqa: E731
        entries = tuple((name, Entry(q(e.value), e.unit) if name == "room_reading" else e)
                        for name, e in run.entries if name != "reading_uncertainty")
        runs[f"r{k}"] = dataclasses.replace(
            run, entries=entries + (("reading_resolution", Entry(step, "mL")),),
            reading=tuple(q(r) for r in run.reading))
    for weighting in ("gls", "weighted", "ordinary"):
        s = analyze_runs(runs, weighting=weighting)
        assert (s["status"] == "").all()
        truth = curve.apparent_enthalpy(s["T_m [K]"].to_numpy()) / 1e3
        hit = np.abs(s["ΔH_vap [kJ/mol]"] - truth) <= 1.959964 * s["u(ΔH_vap) [kJ/mol]"]
        print(f"{liquid} {weighting} resolution {step} mL: coverage {hit.mean():.3f}")
        assert 0.93 <= hit.mean() <= 0.97, (weighting, hit.mean())
