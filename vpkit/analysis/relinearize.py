"""Each run's fit covariance re-evaluated at the same linearisation, under a change.

A fit's parameter covariance rests on the covariance of its residuals,

    C = (sJ - D) Σ (sJ - D)ᵀ,

J = d ln p/d inputs at the data (:func:`vpkit.physics.propagate.jacobian`), s = p/p_θ
the factor that moves it to the curve θ the covariance is evaluated at, D the
curve's slope f'(T_i) on each point's own thermometer column (the effective
variance), Σ the inputs' variances. Two questions change one ingredient and
recompute the covariance of θ by the fit's own method (GLS, the sandwich of a
weighted or ordinary fit, or the scatter of an unweighted fit), then apply the
χ² rule to the same residuals:

* what if some inputs' uncertainties were multiplied by a factor (the budget's
  "u if halved"): Σ changes;
* what if the covariance of ln p were evaluated at another curve θ' (a section's
  consensus or joint fit: a run's u evaluated at its own ΔH_vap correlates with that
  ΔH_vap, which biases a weighted mean low, the section-level form of Peelle's
  puzzle [1]): s and D change.

Batched over runs (no loop over runs).

References
----------
.. [1] S. Chiba, D. L. Smith, ANL/NDM-121 (1991): build covariances from the fitted
   values, not from each measurement.
.. [2] JCGM 100:2008 (GUM), section 5.1: linear propagation.
"""

from __future__ import annotations

import numpy as np

from ..constants import R
from ..fitting import lsq
from ..fitting.fit import chi2_limits


def residual_covariance(res, rows, theta=None, factor=None):
    """C (k, N, N) of runs ``rows`` of a StackResult with the ln p covariance at curves
    ``theta`` (k, p) (default: each run's own fit) and input uncertainties times
    ``factor`` (k, m) (default 1); masked to the fitted points. Also the mask (k, N)."""
    f = res.fit
    m = f.model
    rows = np.asarray(rows, int)
    inc = f.include[rows] & np.isfinite(f.T[rows]) & np.isfinite(f.y[rows])
    T = np.where(inc, f.T[rows], 300.0)
    th = f.params[rows] if theta is None else np.asarray(theta, float)
    with np.errstate(all="ignore"):
        s = np.where(inc, np.exp(f.y[rows] - m.f(T, th)), 1.0)
        Jd = s[..., None] * np.asarray(res.jacobian[rows], float)
        N = T.shape[-1]
        i = np.arange(N)
        Jd[:, i, i] -= np.where(inc, m.df_dT(T, th), 0.0)
    Jd = np.where(inc[..., None], Jd, 0.0)
    sig = res.layout.sigma[rows] * (1.0 if factor is None else np.asarray(factor, float))
    D = Jd * sig[:, None, :]
    return lsq.masked_cov(np.einsum("knm,kjm->knj", D, D), inc), inc


def parameter_covariance(res, rows, theta=None, factor=None) -> np.ndarray:
    """The covariance (k, p, p) of the fitted parameters of runs ``rows`` under the change
    (see :func:`residual_covariance`), by the fit's own method and χ² rule (NaN where a
    run was not fitted)."""
    f = res.fit
    m = f.model
    rows = np.asarray(rows, int)
    C, inc = residual_covariance(res, rows, theta, factor)
    T = np.where(inc, f.T[rows], 300.0)
    th = np.where(np.isfinite(f.params[rows]), f.params[rows], 0.0)
    with np.errstate(all="ignore"):
        A = np.where(inc[..., None], m.jac(T, th), 0.0)
        L, ok = lsq.cholesky(C)
        Z = lsq.forward_solve(L, A)
        G = np.einsum("knp,knq->kpq", Z, Z)
        good = ok & f.ok[rows] & np.isfinite(G).all(axis=(1, 2))
        G = np.where(good[:, None, None], G, np.eye(m.n_params))
        if f.cov_method == "gls":
            cov = np.linalg.inv(G)
        elif f.cov_method == "sandwich":
            w = (1.0 / np.einsum("knn->kn", C) if f.weighting == "weighted"
                 else np.ones(T.shape))
            w = np.where(inc, w, 0.0)
            AtW = np.swapaxes(A * w[..., None], -1, -2)
            M = np.linalg.solve(AtW @ A, AtW)
            cov = M @ C @ np.swapaxes(M, -1, -2)
        else:  # the scatter of an unweighted fit without stated uncertainties
            return np.array(f.cov[rows], float)
        r = np.where(inc, f.residuals[rows], 0.0)
        zr = lsq.forward_solve(L, r[..., None])[..., 0]
        rss = lsq.lstsq(Z, zr)["rss"]
        dof = np.asarray(f.dof[rows])
        limit = chi2_limits(np.maximum(dof, 0))
        scale = np.where((dof > 0) & (rss > limit), rss / np.maximum(dof, 1), 1.0)
    return np.where(good[:, None, None], cov * scale[:, None, None], np.nan)


def with_enthalpy(model, params, T_m, T, H):
    """Curves (k, p) through each run's fitted ln p at its T_m whose ΔH_vap at T is H
    (J/mol): the Clausius–Clapeyron slope, or constant ΔCp's b, is set; other models
    (and NaN H) keep the run's own curve."""
    th = np.array(params, float)
    H = np.asarray(H, float)
    ok = np.isfinite(H)
    if model.name == "clausius_clapeyron":
        b_new = np.where(ok, -H / R, th[:, 1])
    elif model.name == "constant_dcp":
        b_new = np.where(ok, th[:, 2] * T - H / R, th[:, 1])
    else:
        return th
    th[:, 0] += (th[:, 1] - b_new) / T_m
    th[:, 1] = b_new
    return th
