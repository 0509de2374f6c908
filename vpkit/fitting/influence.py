"""Where a fit's ΔH_vap refers to, and how far each point moves it.

References
----------
.. [1] R. D. Cook, S. Weisberg, "Residuals and Influence in Regression",
   Chapman & Hall (1982), section 2.2: leave-one-out fits in closed form.
"""

from __future__ import annotations

import numpy as np

from ..arrays import pmatmul, psum
from . import lsq
from .solve import _levenberg_marquardt


def whitening(L) -> np.ndarray:
    """W = L^-1 of a stack of lower Cholesky factors (B, N, N): the whitening matrix."""
    return lsq.forward_solve(L, np.broadcast_to(np.eye(L.shape[-1]), L.shape))


def weighted_temperature(L, T, mask, W=None) -> np.ndarray:
    """T_m = 1/x_eff: where the fitted slope of ln p against x = 1/T is the true slope [K].

    A straight line fitted with the fit's weights (precision P = C^-1, via its
    whitening L) has slope b = g^T y with g^T 1 = 0 and g^T x = 1. For data with
    curvature, y = y0 + y1 (x - x0) + y2 (x - x0)^2 / 2 + ..., the expected
    slope is y1 + y2 (g^T x^2 / 2 - x0), the true slope at x_eff = g^T x^2 / 2
    (exactly, to second order; independent of x0). For ``ordinary`` weights
    x_eff is near the plain mean of 1/T; GLS weights favour the hot points and
    move it up in T. ΔH_vap is reported, and compared, at this T_m. ``W``, if given,
    is :func:`whitening` of ``L``.
    """
    x = np.where(mask, 1.0 / T, 0.0)
    X = np.stack([np.where(mask, 1.0, 0.0), x], axis=-1)
    W = whitening(L) if W is None else W
    fac = lsq.lstsq(pmatmul(W, X), np.zeros(T.shape))
    g = _slope_row(fac, W)
    return 1.0 / (0.5 * psum(g * x * x))


def _slope_row(fac, W) -> np.ndarray:
    """Row of (X^T P X)^-1 X^T P that gives the slope: R^-1 Q^T W, second row."""
    QtW = pmatmul(np.swapaxes(fac["Q"], -1, -2), W)  # (B, 2, N)
    Rm = fac["R"]
    return QtW[..., 1, :] / Rm[..., 1, 1, None]


def leave_one_out_enthalpy(m, weighting, space, T, y, mask, L, th, fac, rw, T_m, use, W=None):
    """ΔH_vap at T_m with each point left out, keeping the full fit's covariance
    (``W``: :func:`whitening` of ``L``, if already at hand)."""
    Rn, N = T.shape
    out = np.full((Rn, N), np.nan)
    u = np.flatnonzero(use)
    if u.size == 0:
        return out
    if m.linear and space == "ln_p":
        Wu = whitening(L[u]) if W is None else W[u]
        dth = lsq.leave_one_out(fac["Q"][u], fac["R"][u], Wu, rw[u], mask[u])
        thk = th[u][:, None, :] + dth
        out[u] = m.enthalpy(T_m[u][:, None], thk)
        return out
    # nonlinear: refit each data set with point k left out, from the full fit
    for k in range(N):
        sel = u[mask[u, k]]
        if sel.size == 0:
            continue
        mk = mask[sel].copy()
        mk[:, k] = False
        C = L[sel] @ np.swapaxes(L[sel], -1, -2)
        Lk, okL = lsq.cholesky(lsq.masked_cov(C, mk))
        thk, conv = _levenberg_marquardt(m, T[sel], y[sel], mk, Lk, th[sel], space)
        good = conv & okL
        out[sel[good], k] = m.enthalpy(T_m[sel[good]], thk[good])
    return out


