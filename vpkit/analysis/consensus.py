"""Consensus of many runs of one quantity, and each run's scores against it.

Pure functions on arrays of values ``x`` with standard uncertainties ``u`` (one
entry per run, any unit):

* :func:`weighted_mean`: Σwx/Σw, w = 1/u², u = (Σw)^-½, and the Birge ratio
  R_B = √(χ²/(n-1)) [1]: R_B well above 1 means the runs disagree beyond their
  stated uncertainties.
* :func:`dersimonian_laird`, :func:`paule_mandel`: random effects x_i = μ + b_i + e_i,
  b_i ~ N(0, τ²), weights 1/(u_i² + τ²); τ² by moments [2] or from
  Σ(x_i - μ)²/(u_i² + τ²) = n - 1 [3]; a 95 % interval of τ from the Q profile [4].
* :func:`algorithm_a`: the robust mean x* and standard deviation s* of ISO 13528
  Algorithm A [5] (Huber's estimator with the scale iterated).
* :func:`consensus`: the section's value by the rule stated there, with every
  estimator beside it; :func:`scores`: z against the robust SD, ζ against the
  consensus without the run itself, and ISO 13528's signals.

References
----------
.. [1] R. T. Birge, "The calculation of errors by the method of least squares",
   Phys. Rev. 40, 207-227 (1932).
.. [2] R. DerSimonian, N. Laird, "Meta-analysis in clinical trials", Control. Clin.
   Trials 7, 177-188 (1986).
.. [3] R. C. Paule, J. Mandel, "Consensus values and weighting factors", J. Res. Natl.
   Bur. Stand. 87, 377-385 (1982).
.. [4] W. Viechtbauer, "Confidence intervals for the amount of heterogeneity in
   meta-analysis", Stat. Med. 26, 37-52 (2007): the Q-profile interval.
.. [5] ISO 13528:2022, "Statistical methods for use in proficiency testing by
   interlaboratory comparison", annex C.3 (Algorithm A) and section 9 (z and ζ
   scores; |score| ≥ 3 an action signal, 2 < |score| < 3 a warning signal); the
   standard uncertainty of a robust mean, 1.25 s*/√p, section 7.7.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import stats

#: The consensus rule (ours, stated in the README): runs whose robust z (Algorithm A)
#: reaches :data:`SCREEN_Z` are left out of the consensus (they are still scored); of the
#: rest, the weighted mean when their χ² lies below its :data:`CHI2_LEVEL` percentile
#: (the runs agree within their stated u), else the Paule–Mandel random-effects mean;
#: then, one at a time, the run furthest from the consensus without it is left out while
#: it lies :data:`ACTION` or more of the spread the chosen model expects (√(u_i² + τ² +
#: u(X₋ᵢ)²), τ = 0 for the weighted mean) away: a gross error that the robust scale,
#: widened by the gross errors themselves, let through.
SCREEN_Z = 3.0
CHI2_LEVEL = 0.95
#: ISO 13528 signals on |score| [5].
ACTION, WARNING = 3.0, 2.0


def weighted_mean(x, u) -> tuple[float, float, float, float]:
    """(mean, u(mean), χ², Birge ratio) of values x with standard uncertainties u [1]."""
    x, w = np.asarray(x, float), 1.0 / np.asarray(u, float) ** 2
    S = w.sum()
    mean = float((w * x).sum() / S)
    chi2 = float((w * (x - mean) ** 2).sum())
    n = len(x)
    return mean, float(S ** -0.5), chi2, float(np.sqrt(chi2 / (n - 1))) if n > 1 else np.nan


def _random_effects(x, u, tau2) -> tuple[float, float]:
    w = 1.0 / (np.asarray(u, float) ** 2 + tau2)
    return float((w * x).sum() / w.sum()), float(w.sum() ** -0.5)


def _q(x, u, tau2) -> float:
    """Generalised Q: Σ (x_i - μ(τ²))² / (u_i² + τ²)."""
    mu, _ = _random_effects(x, u, tau2)
    return float(((np.asarray(x) - mu) ** 2 / (np.asarray(u) ** 2 + tau2)).sum())


def _solve_tau2(x, u, target: float) -> float:
    """τ² ≥ 0 where the generalised Q equals ``target`` (Q falls as τ² grows); 0 if Q(0)
    is already at or below it."""
    if _q(x, u, 0.0) <= target:
        return 0.0
    hi = max(float(np.var(x)), float(np.max(np.asarray(u)) ** 2), 1e-300)
    while _q(x, u, hi) > target:
        hi *= 4.0
    lo = 0.0
    for _ in range(200):
        mid = 0.5 * (lo + hi)
        if _q(x, u, mid) > target:
            lo = mid
        else:
            hi = mid
        if hi - lo <= 1e-12 * hi:
            break
    return 0.5 * (lo + hi)


def dersimonian_laird(x, u) -> tuple[float, float, float]:
    """(mean, u(mean), τ) of the DerSimonian–Laird random-effects model [2]."""
    x, w = np.asarray(x, float), 1.0 / np.asarray(u, float) ** 2
    mean, _, chi2, _ = weighted_mean(x, u)
    n = len(x)
    tau2 = max(0.0, (chi2 - (n - 1)) / (w.sum() - (w**2).sum() / w.sum())) if n > 1 else 0.0
    m, um = _random_effects(x, u, tau2)
    return m, um, float(np.sqrt(tau2))


def paule_mandel(x, u) -> tuple[float, float, float]:
    """(mean, u(mean), τ) of the Paule–Mandel random-effects model [3]."""
    tau2 = _solve_tau2(x, u, len(x) - 1) if len(x) > 1 else 0.0
    m, um = _random_effects(x, u, tau2)
    return m, um, float(np.sqrt(tau2))


def tau_interval(x, u, level: float = 0.95) -> tuple[float, float]:
    """The Q-profile interval of τ [4] (0 where the lower end is not positive)."""
    n = len(x)
    if n < 2:
        return np.nan, np.nan
    lo_q, hi_q = stats.chi2.ppf([(1 + level) / 2, (1 - level) / 2], n - 1)
    return float(np.sqrt(_solve_tau2(x, u, lo_q))), float(np.sqrt(_solve_tau2(x, u, hi_q)))


def algorithm_a(x, tol: float = 1e-12, max_iter: int = 500) -> tuple[float, float]:
    """(x*, s*): ISO 13528 Algorithm A [5]: start at the median and 1.483 MAD, winsorize at
    x* ± 1.5 s*, x* = mean and s* = 1.134 SD of the winsorized values, until settled."""
    x = np.asarray(x, float)
    xs = float(np.median(x))
    ss = 1.483 * float(np.median(np.abs(x - xs)))
    if len(x) < 2 or ss == 0.0:
        return xs, ss if len(x) > 1 else np.nan
    for _ in range(max_iter):
        d = 1.5 * ss
        c = np.clip(x, xs - d, xs + d)
        new_x, new_s = float(c.mean()), 1.134 * float(c.std(ddof=1))
        done = abs(new_x - xs) <= tol * max(abs(xs), 1.0) and abs(new_s - ss) <= tol * ss
        xs, ss = new_x, new_s
        if done:
            break
    return xs, ss


@dataclass(frozen=True)
class Consensus:
    """The consensus of n runs of one quantity, with every estimator (see the module).

    ``value`` ± ``u`` is the consensus by the rule of :data:`SCREEN_Z`; ``method`` names
    it ("weighted mean" or "random effects (Paule–Mandel)"); ``used`` marks the runs in
    it. ``birge`` is the Birge ratio of the runs used; ``tau`` (with ``tau_low``,
    ``tau_high``, its 95 % Q-profile interval) the Paule–Mandel between-run SD, and
    ``tau_used`` the τ of the chosen method (0 for the weighted mean).
    """

    n: int
    value: float
    u: float
    method: str
    used: np.ndarray
    weighted: float
    u_weighted: float
    birge: float
    chi2: float
    dl: float
    u_dl: float
    tau_dl: float
    pm: float
    u_pm: float
    tau: float
    tau_low: float
    tau_high: float
    robust: float
    robust_sd: float
    u_robust: float
    tau_used: float


def consensus(x, u) -> Consensus:
    """The section's value of runs x ± u by the stated rule (needs n ≥ 2)."""
    x, u = np.asarray(x, float), np.asarray(u, float)
    rob, s_rob = algorithm_a(x)
    with np.errstate(invalid="ignore", divide="ignore"):
        z = (x - rob) / s_rob
    used = ~(np.abs(z) >= SCREEN_Z) | ~np.isfinite(z)
    if used.sum() < 2:
        used = np.ones(len(x), bool)
    c = _estimate(x, u, used, rob, s_rob)
    while used.sum() > 2:
        sc = scores(x, u, c)  # the spread the chosen model expects: u_i, τ and u(X₋ᵢ)
        with np.errstate(invalid="ignore"):
            dev = np.abs(x - sc["consensus_without"]) / np.sqrt(
                u**2 + c.tau_used**2 + sc["u_consensus_without"] ** 2)
        zeta = np.where(used & np.isfinite(dev), dev, 0.0)
        worst = int(np.argmax(zeta))
        if not zeta[worst] >= ACTION:
            break
        used = used.copy()
        used[worst] = False
        c = _estimate(x, u, used, rob, s_rob)
    return c


def _estimate(x, u, used, rob, s_rob) -> Consensus:
    xu, uu = x[used], u[used]
    wm, u_wm, chi2, birge = weighted_mean(xu, uu)
    dl, u_dl, tau_dl = dersimonian_laird(xu, uu)
    pm, u_pm, tau = paule_mandel(xu, uu)
    t_lo, t_hi = tau_interval(xu, uu)
    agree = used.sum() < 2 or chi2 <= stats.chi2.ppf(CHI2_LEVEL, used.sum() - 1)
    value, uv, method = (wm, u_wm, "weighted mean") if agree else (
        pm, u_pm, "random effects (Paule–Mandel)")
    return Consensus(len(x), value, uv, method, used, wm, u_wm, birge, chi2, dl, u_dl, tau_dl,
                     pm, u_pm, tau, t_lo, t_hi, rob, s_rob, 1.25 * s_rob / np.sqrt(len(x)),
                     0.0 if agree else tau)


def scores(x, u, c: Consensus) -> dict[str, np.ndarray]:
    """Per run: ``z`` = (x - x*)/s* (Algorithm A), ``zeta`` = (x - X₋ᵢ)/√(u² + u(X₋ᵢ)²)
    with X₋ᵢ the consensus without run i (same method, τ kept from all runs; for a run
    already left out, X itself), and ``signal`` "action", "warning" or "" from |ζ| [5]."""
    x, u = np.asarray(x, float), np.asarray(u, float)
    with np.errstate(invalid="ignore", divide="ignore"):
        z = (x - c.robust) / c.robust_sd
        w = np.where(c.used, 1.0 / (u**2 + c.tau_used**2), 0.0)
        S, Sx = w.sum(), (w * x).sum()
        S_i, Sx_i = S - w, Sx - w * x
        X_i = np.where(S_i > 0, Sx_i / S_i, np.nan)
        u_i = np.where(S_i > 0, S_i ** -0.5, np.nan)
        zeta = (x - X_i) / np.sqrt(u**2 + u_i**2)
    a = np.abs(zeta)
    signal = np.where(a >= ACTION, "action", np.where(a > WARNING, "warning", "")).astype(object)
    return {"z": z, "zeta": zeta, "signal": signal, "consensus_without": X_i,
            "u_consensus_without": u_i}
