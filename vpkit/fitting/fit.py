"""Fitting ln p against T on a stack of runs, and the frozen results of a fit.

:func:`fit_stack` fits R data sets at once (masks select each set's points);
:func:`fit_points` is the same call for one set. Models live in
:mod:`vpkit.fitting.models`, the batched algebra in :mod:`vpkit.fitting.lsq`.

Weighting: ``ordinary`` (unweighted, covariance from the scatter),
``weighted`` (diagonal of the residual covariance), ``gls`` (generalized least
squares with the full residual covariance, which carries the correlations that
the shared barometric pressure and air amount create) [1]. Errors in T are
folded in by the effective-variance method, generalised to correlated errors
[2]: C_r = C_yy - C_yT D - D C_Ty + D C_TT D with D = diag(df/dT), iterated
with the parameters (at most four rounds, stopping at 1e-13 relative change).

Covariance rule (stated): for ``gls`` the parameter covariance is
(J^T C_r^-1 J)^-1; for ``weighted`` and ``ordinary`` fits, when the points'
covariance is known, it is the sandwich M C_r M^T of the estimator actually
used (θ = M y), so the correlated part of the errors is counted whatever the
weights [7]. Either is multiplied by the reduced χ² (χ² = r^T C_r^-1 r) only
when χ² exceeds its 95th percentile for the degrees of freedom [3]. An
``ordinary`` fit without stated uncertainties uses s^2 (J^T J)^-1.

References
----------
.. [1] A. C. Aitken, Proc. R. Soc. Edinburgh 55, 42-48 (1935).
.. [2] J. Orear, "Least squares when both variables have uncertainties",
   Am. J. Phys. 50, 912-916 (1982): effective variance.
.. [3] R. T. Birge, Phys. Rev. 40, 207-227 (1932): scaling by the reduced χ².
.. [4] D. A. Belsley, E. Kuh, R. E. Welsch, "Regression Diagnostics", Wiley
   (1980): leverage and leave-one-out influence.
.. [5] F. Trouton, Philos. Mag. 18, 54-57 (1884): Trouton's rule.
.. [7] H. White, "A heteroskedasticity-consistent covariance matrix estimator
   and a direct test for heteroskedasticity", Econometrica 48, 817-838 (1980):
   the sandwich form; here with the known (propagated) covariance in the middle.
.. [6] P. R. Bevington, D. K. Robinson, "Data Reduction and Error Analysis for the
   Physical Sciences", 3rd ed., McGraw-Hill (2003), section 6.4: the fitted
   straight line's intercept at the weighted mean of x is uncorrelated with
   its slope (from memory of the section number).
.. [8] S. Chiba, D. L. Smith, "A suggested procedure for resolving an anomaly in
   least-squares data analysis known as 'Peelle's pertinent puzzle' and the
   general implications for nuclear data evaluation", Argonne National
   Laboratory report ANL/NDM-121 (1991): a covariance built from the measured
   values with a shared multiplicative error biases GLS; build it from the fit.
"""

from __future__ import annotations

import dataclasses
import functools

import numpy as np
from scipy import stats

from ..arrays import pmatmul, psum, readonly
from ..errors import FitError
from . import lsq
from .influence import leave_one_out_enthalpy, weighted_temperature, whitening
from .models import Model, get_model
from .results import FitResult, StackFit
from .solve import (
    _design,
    _solve_linear,
    _solve_nonlinear,
    _status,
    _whitened,
    psum_rows,
    residual_covariance,
)

WEIGHTINGS = ("ordinary", "weighted", "gls")
SPACES = ("ln_p", "p")



@functools.lru_cache(maxsize=256)
def _chi2_limit(dof: int, level: float = 0.95) -> float:
    """Percentile ``level`` of χ² with ``dof`` degrees of freedom."""
    return float(stats.chi2.ppf(level, dof))


def chi2_limits(dof: np.ndarray, level: float = 0.95) -> np.ndarray:
    """:func:`_chi2_limit` of every entry of ``dof`` (inf where dof ≤ 0), once per value."""
    d = np.asarray(dof).astype(int)
    values, where = np.unique(d, return_inverse=True)
    lim = np.array([_chi2_limit(int(v), level) if v > 0 else np.inf for v in values])
    return lim[where.reshape(d.shape)] if values.size else np.full(d.shape, np.inf)


def fit_stack(model: str | Model, T, y, mask=None, *, weighting: str = "gls", cov_y=None,
              cov_yT=None, cov_T=None, space: str = "ln_p", start=None,
              search: bool = True, influence: bool = True, chol=None,
              at_fitted: int = 0) -> StackFit:
    """Fit ln p = f(T) to R data sets at once.

    Parameters
    ----------
    model : str or Model
        One of :data:`vpkit.fitting.models.MODELS`.
    T, y : array_like, shape (R, N)
        Temperatures [K] and ln(p / Pa); values outside ``mask`` are ignored.
    mask : array_like of bool, shape (R, N), optional
        Points to fit (default all); the others get residuals only.
    weighting : {"ordinary", "weighted", "gls"}
    cov_y, cov_yT, cov_T : array_like, shape (R, N, N), optional
        Covariance of y, cross-covariance of y with T, covariance of T.
        Needed for ``weighted`` and ``gls``.
    space : {"ln_p", "p"}
        Residuals in ln p (default) or in p.
    start : array_like, shape (p,) or (R, p), optional
        Starting values of a nonlinear model (a profile search over C is
        tried as well, and the better solution kept, unless ``search`` is
        False).
    search : bool
        With ``start`` given, also try the profile search (default).
    influence : bool
        Compute leave-one-out enthalpies.
    chol : array_like, shape (R, N, N) or (N, N), optional
        A fixed whitening (lower Cholesky factor of the residual covariance):
        no effective-variance rounds (Monte Carlo and self-consistent solves
        reuse the nominal fit's weights).
    at_fitted : bool
        Evaluate the covariance of ln p at the fitted curve instead of the data
        (``space="ln_p"``): in every round of the effective variance, cov_y and cov_yT
        are scaled by s_i s_j and s_i, s_i = p_i/p_fit(T_i) at the current parameters.
        A covariance built from the measured points (d ln p/du carries 1/p of each
        noisy point) with inputs every point shares biases GLS [8];
        ``StackFit.cov_scale`` holds s at the solution.

    Returns
    -------
    StackFit
        Data sets that cannot be fitted get NaN numbers and the reason in
        ``status``; this function never raises for them.
    """
    with np.errstate(all="ignore"):  # failures are reported in ``status``, not warned
        at = bool(at_fitted and cov_y is not None and chol is None and space == "ln_p")
        fit = _fit_stack(model, T, y, mask, weighting, cov_y, cov_yT, cov_T, space, start,
                         search, influence, chol, at)
        if not at:
            return fit
        return dataclasses.replace(fit, cov_scale=readonly(_fitted_scale(
            fit, np.atleast_2d(np.asarray(T, float)), np.atleast_2d(np.asarray(y, float)))))


def _fitted_scale(fit: StackFit, T, y) -> np.ndarray:
    """p / p_fit per point (1 where either is missing or the fit failed)."""
    th = np.where(fit.ok[:, None], fit.params, np.nan)
    s = np.exp(y - fit.model.f(np.where(np.isfinite(T), T, 300.0), th))
    return np.where(np.isfinite(s) & (s > 0), s, 1.0)


NOT_PD = ("the covariance of the points is not positive definite (a point with zero or "
          "undefined uncertainty?)")


def _not_converged(m: Model) -> str:
    return (f"the {m.label} fit did not converge (the data may not fix its curvature: the "
            "parameters run off towards a straight line); prefer Clausius–Clapeyron or "
            "constant ΔCp, or widen the temperature range")


def _fit_stack(model, T, y, mask, weighting, cov_y, cov_yT, cov_T, space, start, search,
               influence, chol, at_fitted=False) -> StackFit:
    m = model if isinstance(model, Model) else get_model(model)
    if weighting not in WEIGHTINGS:
        raise FitError(f"weighting must be one of {', '.join(WEIGHTINGS)}, got {weighting!r}")
    if space not in SPACES:
        raise FitError(f"space must be one of {', '.join(SPACES)}, got {space!r}")
    if weighting != "ordinary" and cov_y is None and chol is None:
        raise FitError(f"weighting={weighting!r} needs the covariance of the points")
    T = np.atleast_2d(np.asarray(T, float))
    y = np.atleast_2d(np.asarray(y, float))
    mask = np.ones(T.shape, bool) if mask is None else np.atleast_2d(np.asarray(mask, bool))
    mask = mask & np.isfinite(T)
    Rn, N = T.shape
    status = _status(m, mask.sum(axis=1), y, mask)
    good = np.array([s == "" for s in status])
    Tsafe = np.where(mask, T, 300.0)
    ysafe = np.where(mask & np.isfinite(y), y, 0.0)
    L = (np.array(np.broadcast_to(np.asarray(chol, float), (Rn, N, N))) if chol is not None
         else np.array(np.broadcast_to(np.eye(N), (Rn, N, N))))
    th, starts = _starting_values(m, Tsafe, ysafe, mask, good, start, search)
    at = (ysafe,) if at_fitted else ()  # scale cov(ln p) to the curve at each round
    covs = None if (weighting == "ordinary" or chol is not None) else (cov_y, cov_yT, cov_T, *at)
    C, last = _effective_variance(m, weighting, space, covs, Tsafe, ysafe, mask, th, L,
                                  starts, status, good)
    reuse = last if (m.linear and space == "ln_p") else None
    full = (cov_y, cov_yT, cov_T, *at) if (weighting != "gls" and cov_y is not None
                                           and chol is None) else None
    return _finish(m, weighting, space, T, y, mask, Tsafe, ysafe, th, L, C, status, influence,
                   reuse, full)


def _starting_values(m, Tsafe, ysafe, mask, good, start, search):
    """Ordinary least squares (linear models) or the profile over C (and a given start)."""
    Rn, p = len(Tsafe), m.n_params
    th = np.full((Rn, p), np.nan)
    g = np.flatnonzero(good)
    starts = []
    if not g.size:
        return th, starts
    if m.linear:
        th[g] = _solve_linear(m, Tsafe[g], ysafe[g], mask[g], np.eye(Tsafe.shape[1]))
        return th, starts
    given = None if start is None else np.broadcast_to(np.asarray(start, float), (Rn, p))[g]
    if given is not None and not search:
        starts = [given]
    else:
        prof = m.start(Tsafe[g], ysafe[g], mask[g])
        starts = [prof] if given is None else [given, prof]
    th[g] = starts[0]
    return th, [(g, s) for s in starts]


def _effective_variance(m, weighting, space, covs, Tsafe, ysafe, mask, th, L, starts, status,
                        good):
    """Rounds of weights from the current θ and a solve, until θ is stable (4 at most).

    Updates ``th``, ``L``, ``status`` and ``good`` in place; returns the residual
    covariance (None without weights) and the last linear factorisation of each set.
    """
    Rn, N = Tsafe.shape
    p = m.n_params
    last = {"Xw": np.zeros((Rn, N, p)), "yw": np.zeros((Rn, N)), "Q": np.zeros((Rn, N, p)),
            "R": np.broadcast_to(np.eye(p), (Rn, p, p)).copy(), "rank_ok": np.zeros(Rn, bool)}
    C = None
    active = good.copy()
    for it in range(4 if covs is not None else 1):
        a = np.flatnonzero(active)
        if a.size == 0:
            break
        if covs is not None:
            Ca = _round_covariance(m, weighting, space, covs, Tsafe[a], th[a], mask[a], a)
            C = np.array(np.broadcast_to(np.eye(N), (Rn, N, N))) if C is None else C
            C[a] = Ca
            L[a], okL = lsq.cholesky(lsq.masked_cov(Ca, mask[a]))
            for r in a[~okL]:
                status[r], good[r], active[r] = NOT_PD, False, False
            a = a[okL]
        if m.linear and space == "ln_p":
            new = _solve_linear(m, Tsafe[a], ysafe[a], mask[a], L[a], last, a)
            conv = np.ones(len(a), bool)
        else:
            trial = [th[a]] if it else [s[np.searchsorted(g, a)] for g, s in starts]
            new, conv = _solve_nonlinear(m, Tsafe[a], ysafe[a], mask[a], L[a], th[a], space,
                                         trial)
        for r in a[~conv]:
            status[r], good[r], active[r] = _not_converged(m), False, False
        change = np.max(np.abs(new - th[a]) / np.maximum(np.abs(th[a]), 1e-300), axis=1)
        th[a] = new
        active[a] = conv & ~(change < 1e-13)
    return C, last


def _round_covariance(m, weighting, space, covs, T, th, mask, a):
    """Residual covariance of the sets ``a`` at their current parameters (effective variance)."""
    cov_y, cov_yT, cov_T, *at = covs
    cy = np.asarray(cov_y, float)[a]
    cyT = None if cov_yT is None else np.asarray(cov_yT)[a]
    if at:  # at the curve: d ln p/du carries 1/p_fit, not 1/p of the noisy point
        s = np.where(mask, np.exp(at[0][a] - m.f(T, th)), 1.0)
        s = np.where(np.isfinite(s) & (s > 0), s, 1.0)
        cy = s[..., :, None] * cy * s[..., None, :]
        cyT = None if cyT is None else s[..., :, None] * cyT
    C = residual_covariance(cy, cyT, None if cov_T is None else np.asarray(cov_T)[a],
                            np.where(mask, m.df_dT(T, th), 0.0))
    if space == "p":
        e = np.exp(m.f(T, th))
        C = C * e[..., :, None] * e[..., None, :]
    if weighting == "weighted":
        C = C * np.eye(T.shape[-1])
    return C


def _finish(m, weighting, space, T, y, mask, Tsafe, ysafe, th, L, C, status, influence,
            reuse=None, full=None):
    """Covariance, χ², residuals, leverage and leave-one-out of converged fits.

    With ``full`` (the covariances of the points) a ``weighted`` or ``ordinary`` fit
    gets the sandwich covariance M C M^T of its estimator M, C the full residual
    covariance: the weights are the user's choice, the errors' correlations are not.
    """
    Rn, N = T.shape
    p = m.n_params
    good = np.array([s == "" for s in status])
    n = mask.sum(axis=1)
    cov = np.full((Rn, p, p), np.nan)
    lev = np.full((Rn, N), np.nan)
    chi2 = np.full(Rn, np.nan)
    loo = np.full((Rn, N), np.nan)
    g = np.flatnonzero(good)
    dof = n - p
    thg = np.where(good[:, None], th, 0.0)
    if reuse is not None:  # linear: the whitened design does not depend on θ
        Jw = reuse["Xw"]
        rw = reuse["yw"] - psum_rows(Jw, thg)
        fac = {"Q": reuse["Q"], "R": reuse["R"], "rank_ok": reuse["rank_ok"]}
    else:
        rw, Jw = _whitened(m, Tsafe, ysafe, mask, L, thg, space)
        fac = lsq.lstsq(Jw, rw)
    for r in np.flatnonzero(good & ~fac["rank_ok"]):
        status[r] = ("the fit is singular: the points do not determine every parameter "
                     "(e.g. all at one temperature)")
    good &= fac["rank_ok"]
    g = np.flatnonzero(good)
    Rinv = lsq.upper_inverse(np.where(good[:, None, None], fac["R"], np.eye(p)))
    cov0 = Rinv @ np.swapaxes(Rinv, -1, -2)
    chi2[g] = psum(rw[g] * rw[g])
    method = "gls" if weighting == "gls" else ("sandwich" if full is not None else "scatter")
    W = whitening(L)
    if method == "sandwich":
        cov0, chi2, C = _sandwich(m, space, full, Tsafe, ysafe, mask, thg, W, fac, Rinv, status,
                                  good)
        g = np.flatnonzero(good)
    with np.errstate(all="ignore"):
        chi2_red = np.where(dof > 0, chi2 / dof, np.nan)
    if method == "scatter":
        scaled = np.ones(Rn, bool)
        cov = cov0 * np.where(dof > 0, chi2_red, np.nan)[:, None, None]
    else:
        scaled = (dof > 0) & (chi2 > chi2_limits(dof))
        cov = cov0 * np.where(scaled, chi2_red, 1.0)[:, None, None]
    lev = np.where(mask, np.einsum("bnp,bnp->bn", fac["Q"], fac["Q"]), np.nan)
    if C is None and weighting != "ordinary":  # a fixed whitening was given
        C = L @ np.swapaxes(L, -1, -2)
    f_all = m.f(np.where(np.isfinite(T), T, 300.0), thg)
    with np.errstate(all="ignore"):
        res = y - f_all if space == "ln_p" else np.exp(y) - np.exp(f_all)
        if method == "scatter":
            norm = res / np.sqrt(chi2_red)[:, None]
        else:
            norm = res / np.sqrt(np.einsum("bii->bi", C))
        T_w = weighted_temperature(L, Tsafe, mask, W)
        # ΔH refers to a temperature inside the points used: correlated GLS weights of
        # mixed sign can put the weights' own T_m beyond them; then the nearest end
        T_m = np.clip(T_w, np.where(mask, Tsafe, np.inf).min(axis=1),
                      np.where(mask, Tsafe, -np.inf).max(axis=1))
    norm = np.where(mask, norm, np.nan)
    res = np.where(np.isfinite(T), res, np.nan)
    if influence:
        loo = leave_one_out_enthalpy(m, weighting, space, Tsafe, ysafe, mask, L, thg, fac, rw, T_m,
                                     good & (n - 1 >= p) & (n >= 3), W)
    ill = np.zeros(Rn, bool)
    if m.curvature_index is not None:
        curv, sd = m.curvature(thg, cov)
        with np.errstate(invalid="ignore"):
            ill = good & ((np.abs(curv) < 2 * sd) | (n < 2 * p))
    bad = ~good
    th = np.where(bad[:, None], np.nan, th)
    cov = np.where(bad[:, None, None], np.nan, cov)
    for a in (chi2, chi2_red, T_m, T_w):
        a[bad] = np.nan
    lev[bad], loo[bad], res[bad], norm[bad] = np.nan, np.nan, np.nan, np.nan
    ro = readonly
    return StackFit(m, weighting, space, ro(th), ro(cov), ro(T), ro(y), ro(mask), ro(res),
                    ro(norm), ro(lev), ro(loo), ro(chi2), ro(dof), ro(chi2_red),
                    ro(scaled & good), ro(T_m), ro(n), ro(L), None if C is None else ro(C),
                    tuple(status), ro(ill), method, T_m_weights=ro(T_w))


def _sandwich(m, space, full, T, y, mask, th, W, fac, Rinv, status, good):
    """M C M^T and the χ² against the full covariance C, for non-GLS weights [7].

    The χ² that decides the scaling is that of the GLS line for C (the smallest
    r^T C^-1 r, which is χ²-distributed), not of the chosen weights' line.
    """
    Rn, N = T.shape
    C = _round_covariance(m, "gls", space, full, T, th, mask, np.arange(Rn))
    Cm = lsq.masked_cov(C, mask)
    Lf, ok = lsq.cholesky(Cm)
    for r in np.flatnonzero(good & ~ok):
        status[r] = NOT_PD
    good &= ok
    M = pmatmul(Rinv, pmatmul(np.swapaxes(fac["Q"], -1, -2), W))  # θ = M y
    cov = pmatmul(pmatmul(M, Cm), np.swapaxes(M, -1, -2))
    # χ² of the best (GLS) line for C, linearised at θ: the scatter test must not count
    # the misfit that the chosen weights add by design
    r, J, _ = _design(m, T, y, mask, th, space)
    Z = lsq.forward_solve(Lf, np.concatenate([J, r[..., None]], axis=-1))
    chi2 = lsq.lstsq(Z[..., :-1], Z[..., -1])["rss"]
    return cov, np.where(good, chi2, np.nan), Cm


def fit_points(T, y, *, model: str = "clausius_clapeyron", weighting: str = "gls",
               include=None, cov_y=None, cov_yT=None, cov_T=None, space: str = "ln_p",
               start=None, influence: bool = True) -> FitResult:
    """Fit ln p = f(T) to one set of points: :func:`fit_stack` with R = 1.

    Parameters are those of :func:`fit_stack` for one data set (1-D ``T``,
    ``y``, ``include``; 2-D covariances).

    Raises
    ------
    FitError
        Too few points for the model, a singular problem, or no convergence.
    """
    m = get_model(model)
    T = np.asarray(T, float)[None]
    add = lambda c: None if c is None else np.asarray(c, float)[None]  # noqa: E731
    sf = fit_stack(m, T, np.asarray(y, float)[None],
                   None if include is None else np.asarray(include, bool)[None],
                   weighting=weighting, cov_y=add(cov_y), cov_yT=add(cov_yT), cov_T=add(cov_T),
                   space=space, start=start, influence=influence)
    if sf.status[0]:
        raise FitError(sf.status[0], n_points=int(sf.n[0]), n_params=m.n_params)
    return FitResult(sf, 0)
