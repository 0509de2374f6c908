"""Consensus estimators and scores (vpkit.analysis.consensus), checked against their
defining equations worked by hand here: Birge (1932), DerSimonian & Laird (1986),
Paule & Mandel (1982), ISO 13528:2022 Algorithm A and its z and ζ scores."""

import numpy as np
import pytest
from scipy import stats

from vpkit.analysis import consensus as C

X = np.array([41.2, 42.0, 41.7, 40.9, 42.4, 41.5])
U = np.array([0.5, 0.8, 0.6, 0.7, 0.9, 0.4])


def test_weighted_mean_and_birge_ratio_by_hand():
    w = 1 / U**2
    mean = (w * X).sum() / w.sum()
    chi2 = (w * (X - mean) ** 2).sum()
    m, um, c2, birge = C.weighted_mean(X, U)
    assert m == pytest.approx(mean, rel=1e-15) and um == pytest.approx(w.sum() ** -0.5)
    assert c2 == pytest.approx(chi2) and birge == pytest.approx(np.sqrt(chi2 / 5))


def test_dersimonian_laird_moment_estimate_by_hand():
    x = np.array([10.0, 12.0, 9.0, 14.0, 11.0])
    u = np.array([0.5, 0.6, 0.4, 0.7, 0.5])
    w = 1 / u**2
    mean = (w * x).sum() / w.sum()
    Q = (w * (x - mean) ** 2).sum()
    tau2 = (Q - 4) / (w.sum() - (w**2).sum() / w.sum())
    ws = 1 / (u**2 + tau2)
    m, um, tau = C.dersimonian_laird(x, u)
    assert tau == pytest.approx(np.sqrt(tau2), rel=1e-12)
    assert m == pytest.approx((ws * x).sum() / ws.sum(), rel=1e-12)
    assert um == pytest.approx(ws.sum() ** -0.5, rel=1e-12)


def test_paule_mandel_solves_its_equation_and_is_zero_without_excess_scatter():
    x = np.array([10.0, 12.0, 9.0, 14.0, 11.0])
    u = np.array([0.5, 0.6, 0.4, 0.7, 0.5])
    m, um, tau = C.paule_mandel(x, u)
    ws = 1 / (u**2 + tau**2)
    assert ((ws * (x - m) ** 2).sum()) == pytest.approx(len(x) - 1, rel=1e-9)
    assert m == pytest.approx((ws * x).sum() / ws.sum(), rel=1e-12)
    calm = np.array([10.0, 10.2, 9.9, 10.1])
    assert C.paule_mandel(calm, np.ones(4))[2] == 0.0
    assert C.paule_mandel(calm, np.ones(4))[0] == pytest.approx(calm.mean())


def test_q_profile_interval_brackets_the_estimate():
    """Viechtbauer (2007): the generalised Q at the interval's ends equals the χ² quantiles."""
    x = np.array([10.0, 12.0, 9.0, 14.0, 11.0, 13.5, 8.0])
    u = np.full(7, 0.6)
    lo, hi = C.tau_interval(x, u)
    _, _, tau = C.paule_mandel(x, u)
    assert lo < tau < hi
    for t, q in ((lo, stats.chi2.ppf(0.975, 6)), (hi, stats.chi2.ppf(0.025, 6))):
        mu = (x / (u**2 + t**2)).sum() / (1 / (u**2 + t**2)).sum()
        assert ((x - mu) ** 2 / (u**2 + t**2)).sum() == pytest.approx(q, rel=1e-6)


def test_algorithm_a_is_a_fixed_point_of_its_own_rule_and_ignores_an_outlier():
    """ISO 13528 C.3: x* = mean and s* = 1.134 SD of the values clipped at x* ± 1.5 s*."""
    rng = np.random.default_rng(4)
    x = np.r_[rng.normal(100.0, 2.0, 40), 160.0]
    xs, ss = C.algorithm_a(x)
    c = np.clip(x, xs - 1.5 * ss, xs + 1.5 * ss)
    assert xs == pytest.approx(c.mean(), rel=1e-10)
    assert ss == pytest.approx(1.134 * c.std(ddof=1), rel=1e-9)
    assert abs(xs - np.median(x[:-1])) < 1.0 and 1.5 < ss < 3.0


def test_scores_leave_the_run_out_and_signal_at_2_and_3():
    x = np.r_[np.full(10, 40.0) + np.linspace(-0.3, 0.3, 10), 45.0]
    u = np.full(11, 1.0)
    c = C.consensus(x, u)
    assert not c.used[-1] and c.used[:-1].all()  # the gross run is not in the consensus
    s = C.scores(x, u, c)
    assert s["zeta"][-1] == pytest.approx((45.0 - c.value) / np.sqrt(1 + c.u**2))
    w = np.ones(10)
    X0 = (x[1:10] * w[1:]).sum() / 9  # run 0 left out
    assert s["consensus_without"][0] == pytest.approx(X0)
    assert s["signal"][-1] == "action"
    assert C.scores(np.array([0.0, 0.0, 2.5]), np.ones(3),
                    C.consensus(np.array([0.0, 0.0, 2.5]), np.ones(3)))["signal"][2] in (
        "warning", "action")


def test_the_rule_takes_random_effects_when_runs_disagree():
    rng = np.random.default_rng(2)
    x = 40.0 + rng.normal(0.0, 2.0, 20)  # scatter 2 against stated u 0.5
    c = C.consensus(x, np.full(20, 0.5))
    assert c.method.startswith("random effects") and c.birge > 2
    assert c.value == pytest.approx(c.pm) and c.tau > 1.0
    calm = C.consensus(40.0 + rng.normal(0.0, 0.5, 20), np.full(20, 0.5))
    assert calm.method == "weighted mean" and calm.value == pytest.approx(calm.weighted)
