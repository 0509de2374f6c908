"""The parameter solve inside every fit, for a fixed whitening, on a stack of data sets.

Linear models are solved by QR of the whitened design; the Antoine model by
Levenberg-Marquardt from a profile start (several starts, the lowest converged
cost kept). :func:`solve_stack` is the entry point for callers that reuse a
fit's weights (Monte Carlo, the self-consistent air amount); :func:`vpkit.fitting.fit.fit_stack`
calls the same solvers inside its effective-variance rounds.

References
----------
See :mod:`vpkit.fitting.lsq` (algebra, Levenberg-Marquardt after Moré 1978) and
:mod:`vpkit.fitting.fit` (effective variance after Orear 1982).
"""

from __future__ import annotations

import numpy as np

from ..arrays import psum
from . import lsq
from .models import Model, get_model


def psum_rows(X, th):
    """X θ for stacks X (B, N, p), θ (B, p), summed over p in order."""
    return psum(X * th[:, None, :], axis=-1)


def residual_covariance(cov_y, cov_yT, cov_T, dfdT):
    """Covariance of y - f(T) from the covariances of y and T (effective variance [2])."""
    out = np.array(cov_y, float)
    if cov_T is not None:
        d = dfdT
        out = (out - cov_yT * d[..., None, :] - d[..., :, None] * np.swapaxes(cov_yT, -1, -2)
               + d[..., :, None] * cov_T * d[..., None, :])
    return 0.5 * (out + np.swapaxes(out, -1, -2))


def _design(m: Model, T, y, mask, th, space):
    """Model values, residuals and Jacobian of every point (masked rows zero)."""
    f = m.f(T, th)
    J = m.jac(T, th)
    if space == "ln_p":
        r = y - f
    else:
        e = np.exp(f)
        r = np.exp(y) - e
        J = J * e[..., None]
    return np.where(mask, r, 0.0), np.where(mask[..., None], J, 0.0), f


def _whitened(m, T, y, mask, L, th, space):
    r, J, _ = _design(m, T, y, mask, th, space)
    Z = lsq.forward_solve(L, np.concatenate([J, r[..., None]], axis=-1))
    return Z[..., -1], Z[..., :-1]


def _solve_linear(m, T, y, mask, L, keep: dict | None = None, rows=None):
    """Linear least squares in the whitened frame; ``keep`` stores its factorisation."""
    X = np.where(mask[..., None], m.basis(T), 0.0)
    Z = lsq.forward_solve(L, np.concatenate([X, np.where(mask, y, 0.0)[..., None]], -1))
    fac = lsq.lstsq(Z[..., :-1], Z[..., -1])
    if keep is not None:
        for key, value in (("Xw", Z[..., :-1]), ("yw", Z[..., -1]), ("Q", fac["Q"]),
                           ("R", fac["R"]), ("rank_ok", fac["rank_ok"])):
            keep[key][rows] = value
    return fac["theta"]


def _levenberg_marquardt(m, T, y, mask, L, th0, space, max_iter=400):
    """Batched Levenberg-Marquardt (lsq ref. [4]); returns θ and a converged flag."""
    th = np.array(th0, float)
    B, p = th.shape
    rw, Jw = _whitened(m, T, y, mask, L, th, space)
    cost = psum(rw * rw)
    D = np.maximum(np.sqrt(psum(Jw * Jw, axis=-2)), 1e-300)
    lam = np.full(B, 1e-3)
    done = ~np.isfinite(cost)
    conv = np.zeros(B, bool)
    for _ in range(max_iter):
        a = np.flatnonzero(~done)
        if a.size == 0:
            break
        with np.errstate(all="ignore"):
            step, pred = lsq.damped_step(Jw[a], rw[a], lam[a], D[a])
            new = th[a] + step
            rn, Jn = _whitened(m, T[a], y[a], mask[a], L[a], new, space)
            cn = psum(rn * rn)
            rho = (cost[a] - cn) / pred
        acc = np.isfinite(cn) & np.all(np.isfinite(new), axis=1) & (rho > 1e-4)
        old = cost[a]
        i = a[acc]
        th[i], rw[i], Jw[i], cost[i] = new[acc], rn[acc], Jn[acc], cn[acc]
        D[i] = np.maximum(D[i], np.sqrt(psum(Jn[acc] * Jn[acc], axis=-2)))
        grow = np.where(rho > 0.75, 1 / 3, np.where(rho < 0.25, 2.0, 1.0))
        lam[a] = np.where(acc, lam[a] * grow, lam[a] * 4.0)
        with np.errstate(all="ignore"):
            xs = np.linalg.norm(D[a] * step, axis=1) <= 1e-14 * (
                np.linalg.norm(D[a] * th[a], axis=1) + 1e-14)
            fs = acc & (old - cn <= 1e-15 * old) & (pred <= 1e-15 * old)
            g = np.abs(psum(Jw[a] * rw[a][..., None], axis=-2)) / (
                D[a] * np.sqrt(np.maximum(cost[a], 1e-300))[:, None])
            gs = np.nanmax(g, axis=1) <= 1e-13
        stop = xs | fs | gs | (cost[a] <= 1e-28) | (lam[a] > 1e30)
        conv[a] |= (xs | fs | gs | (cost[a] <= 1e-28)) & (lam[a] <= 1e30)
        done[a] |= stop
    return th, conv & np.all(np.isfinite(th), axis=1)


def _solve_nonlinear(m, T, y, mask, L, th0, space, starts, max_iter=400):
    """LM from each starting point; keep, per data set, the lowest converged cost."""
    best, best_cost, ok = np.array(th0, float), np.full(len(T), np.inf), np.zeros(len(T), bool)
    for start in starts:
        th, conv = _levenberg_marquardt(m, T, y, mask, L, start, space, max_iter)
        rw, _ = _whitened(m, T, y, mask, L, th, space)
        cost = np.where(conv, psum(rw * rw), np.inf)
        better = cost < best_cost
        best[better], best_cost[better] = th[better], cost[better]
        ok |= conv
    return best, ok


def _fittable(m: Model, n: np.ndarray, y: np.ndarray, mask: np.ndarray) -> np.ndarray:
    """Which data sets can be fitted: enough points, every included ln p finite."""
    with np.errstate(invalid="ignore"):
        return (n >= m.n_params) & ~np.any(mask & ~np.isfinite(y), axis=1)


def _status(m: Model, n: np.ndarray, y: np.ndarray, mask: np.ndarray) -> list[str]:
    """Why each data set cannot be fitted ("" where it can; texts built only for those)."""
    p = m.n_params
    out = [""] * len(n)
    for r in np.flatnonzero(~_fittable(m, n, y, mask)):
        if n[r] == 0:
            out[r] = f"every point is excluded: include at least {p} points to fit {m.label}"
        elif n[r] < p:
            out[r] = f"{m.label} needs at least {p} included points, got {n[r]}"
        else:
            out[r] = ("an included point has no finite ln p (vapor pressure ≤ 0?); exclude it "
                      "or correct it")
    return out


def solve_stack(model: str | Model, T, y, mask, chol, *, space: str = "ln_p", start=None,
                search: bool = True, max_iter: int = 400) -> tuple[np.ndarray, np.ndarray]:
    """The parameters of R data sets for a fixed whitening: the solve inside every fit.

    Parameters
    ----------
    model : str or Model
    T, y, mask : array_like (R, N)
    chol : array_like (N, N) or (R, N, N)
        Lower Cholesky factor of the residual covariance (shared, or per set).
    space, start, search
        As for :func:`fit_stack`.
    max_iter : int
        Most Levenberg-Marquardt iterations (nonlinear model).

    Returns
    -------
    theta : ndarray (R, p)
        NaN where a set has too few points, a non-finite point, or no convergence.
    ok : ndarray of bool (R,)
    """
    m = model if isinstance(model, Model) else get_model(model)
    T = np.atleast_2d(np.asarray(T, float))
    y = np.atleast_2d(np.asarray(y, float))
    mask = np.broadcast_to(np.asarray(mask, bool), T.shape) & np.isfinite(T)
    ok = _fittable(m, mask.sum(axis=1), y, mask)
    Tsafe = np.where(mask, T, 300.0)
    ysafe = np.where(mask & np.isfinite(y), y, 0.0)
    L = np.asarray(chol, float)
    th = np.full((len(T), m.n_params), np.nan)
    g = np.flatnonzero(ok)
    if not g.size:
        return th, ok
    Lg = L if L.ndim == 2 else L[g]
    if m.linear and space == "ln_p":
        th[g] = _solve_linear(m, Tsafe[g], ysafe[g], mask[g], Lg)
        ok &= np.all(np.isfinite(th), axis=1)
        return th, ok
    given = None if start is None else np.broadcast_to(np.asarray(start, float),
                                                       (len(T), m.n_params))[g]
    starts = [given] if given is not None and not search else (
        ([] if given is None else [given]) + [m.start(Tsafe[g], ysafe[g], mask[g])])
    Lb = np.broadcast_to(Lg, (len(g),) + Lg.shape[-2:])
    th[g], conv = _solve_nonlinear(m, Tsafe[g], ysafe[g], mask[g], Lb, starts[0], space, starts,
                                   max_iter)
    ok[g] &= conv
    th[~ok] = np.nan
    return th, ok
