"""Fit models of ln p against T, and the frozen result of a fit.

Three models, all in SI (T in K, p in Pa):

* ``clausius_clapeyron``: ln p = a + b/T, constant ΔH_vap = -R b;
* ``constant_dcp`` (Kirchhoff): ln p = a + b/T + c ln T, ΔH_vap(T) = R (c T - b),
  ΔCp = R c;
* ``antoine``: ln p = a - b/(T + C), i.e. log10 p = A - B/(T + C) with
  A = a/ln 10, B = b/ln 10; ΔH_vap(T) = R b T^2/(T + C)^2.

Weighting: ``ordinary`` (unweighted, covariance from the scatter),
``weighted`` (diagonal of the residual covariance), ``gls`` (generalized least
squares with the full residual covariance, which carries the correlations that
the shared barometric pressure and air amount create). Errors in T are folded
in by the effective-variance method, generalised to correlated errors:
C_r = C_yy - C_yT D - D C_Ty + D C_TT D with D = diag(df/dT).

Covariance scaling rule (stated): for ``weighted`` and ``gls`` the parameter
covariance is (J^T C_r^-1 J)^-1, and is multiplied by the reduced χ² only when
χ² exceeds its 95th percentile for the degrees of freedom (the scatter is
significantly larger than the stated uncertainties). ``ordinary`` always uses
s^2 (J^T J)^-1.

References
----------
.. [1] R. Clausius, Ann. Phys. 155, 500-524 (1850); B. P. E. Clapeyron,
   J. Éc. Polytech. 14, 153-190 (1834).
.. [2] G. R. Kirchhoff, Ann. Phys. 179, 177-206 (1858): ln p = a + b/T + c ln T.
.. [3] C. Antoine, C. R. Acad. Sci. 107, 681-684 (1888).
.. [4] J. Orear, "Least squares when both variables have uncertainties",
   Am. J. Phys. 50, 912-916 (1982): effective variance.
.. [5] A. C. Aitken, "On least squares and linear combination of
   observations", Proc. R. Soc. Edinburgh 55, 42-48 (1935): generalized
   least squares.
.. [6] R. T. Birge, "The calculation of errors by the method of least
   squares", Phys. Rev. 40, 207-227 (1932): scaling by the reduced χ².
.. [7] F. Trouton, Philos. Mag. 18, 54-57 (1884): Trouton's rule.
.. [8] D. A. Belsley, E. Kuh, R. E. Welsch, "Regression Diagnostics", Wiley
   (1980): leverage and leave-one-out influence.
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass, field

import numpy as np
import uncertainties
from scipy import optimize, stats

from .constants import P_STANDARD, R
from .errors import FitError

LN10 = math.log(10.0)
WEIGHTINGS = ("ordinary", "weighted", "gls")

#: Trouton's rule band for liquids without hydrogen bonding [J/(mol K)];
#: from memory (textbook value 85-88 J/(mol K), about 10.5 R).
TROUTON_BAND = (85.0, 88.0)
#: Typical for hydrogen-bonded liquids (water, alcohols) [J/(mol K)]; from memory.
TROUTON_HBOND_BAND = (100.0, 125.0)


# ---------------------------------------------------------------------------
# models
# ---------------------------------------------------------------------------


@dataclass(frozen=True)
class Model:
    """A fit model: ln p = f(T; θ), with what is needed to fit and report it."""

    name: str
    label: str
    param_names: tuple[str, ...]
    linear: bool

    @property
    def n_params(self) -> int:
        return len(self.param_names)

    # Each method works on floats, numpy arrays or uncertainties numbers.
    def f(self, T, th):
        if self.name == "clausius_clapeyron":
            return th[0] + th[1] / T
        if self.name == "constant_dcp":
            return th[0] + th[1] / T + th[2] * _log(T)
        return th[0] - th[1] / (T + th[2])

    def df_dT(self, T, th):
        if self.name == "clausius_clapeyron":
            return -th[1] / T**2
        if self.name == "constant_dcp":
            return -th[1] / T**2 + th[2] / T
        return th[1] / (T + th[2]) ** 2

    def jac(self, T, th) -> np.ndarray:
        """d f / d θ, shape (..., n, p)."""
        T = np.asarray(T, float)
        one = np.ones_like(T)
        if self.name == "clausius_clapeyron":
            return np.stack([one, 1.0 / T], axis=-1)
        if self.name == "constant_dcp":
            return np.stack([one, 1.0 / T, np.log(T)], axis=-1)
        th = [np.asarray(t, float)[..., None] for t in th]
        d = T + th[2]
        return np.stack([one, -1.0 / d, th[1] / d**2], axis=-1)

    def enthalpy(self, T, th):
        """ΔH_vap(T) = R T^2 df/dT [J/mol]."""
        return R * T**2 * self.df_dT(T, th)

    def start(self, T, y) -> np.ndarray:
        """Starting values (exact for the linear models)."""
        if self.linear:
            X = self.jac(T, None)
            return np.linalg.lstsq(X, y, rcond=None)[0]
        return _antoine_profile_start(T, y)


def _log(x):
    try:
        return np.log(x)
    except TypeError:
        return uncertainties.umath.log(x)


MODELS: dict[str, Model] = {
    "clausius_clapeyron": Model("clausius_clapeyron", "Clausius–Clapeyron (constant ΔH)",
                                ("a", "b [K]"), True),
    "constant_dcp": Model("constant_dcp", "constant ΔCp (Kirchhoff)",
                          ("a", "b [K]", "c"), True),
    "antoine": Model("antoine", "Antoine", ("a", "b [K]", "C [K]"), False),
}


def get_model(name: str) -> Model:
    try:
        return MODELS[name]
    except KeyError:
        raise FitError(f"unknown fit model {name!r}; choose one of {', '.join(MODELS)}") from None


def _antoine_profile_start(T, y) -> np.ndarray:
    """Antoine start: for each C on a grid, (a, b) by linear least squares."""
    T = np.asarray(T, float)
    lo = -T.min() + 1.0
    grid = np.concatenate([np.linspace(lo, lo + 50, 60), np.linspace(lo + 50, 2000, 200)])
    best, best_th = np.inf, None
    for C in grid:
        X = np.stack([np.ones_like(T), -1.0 / (T + C)], axis=-1)
        th, *_ = np.linalg.lstsq(X, y, rcond=None)
        rss = float(np.sum((X @ th - y) ** 2))
        if rss < best:
            best, best_th = rss, np.array([th[0], th[1], C])
    return best_th


# ---------------------------------------------------------------------------
# the fit result
# ---------------------------------------------------------------------------


@dataclass(frozen=True)
class FitResult:
    """The outcome of one fit (frozen).

    Attributes
    ----------
    model : Model
    weighting : str
    params : ndarray
        θ, in SI (see the module docstring for each model).
    cov : ndarray
        Parameter covariance after the scaling rule.
    T, y : ndarray
        All points (K, ln(p/Pa)); ``include`` marks those fitted.
    residuals : ndarray
        y - f(T) for every point (excluded ones too).
    normalized_residuals : ndarray
        Residuals divided by their standard uncertainty (NaN for ``ordinary``
        where none is stated: then by s).
    leverage : ndarray
        Diagonal of the hat matrix in the whitened problem (NaN if excluded).
    loo_enthalpy : ndarray
        ΔH_vap at T_m with that point alone left out [J/mol] (NaN if excluded
        or if too few points would remain).
    chi2, dof, chi2_reduced : float
    scaled : bool
        Whether the covariance was multiplied by the reduced χ².
    T_m : float
        1/mean(1/T) of the fitted points [K].
    warnings : tuple of str
    space : str
        "ln_p" or "p": where the residuals were taken.
    """

    model: Model
    weighting: str
    params: np.ndarray
    cov: np.ndarray
    T: np.ndarray
    y: np.ndarray
    include: np.ndarray
    residuals: np.ndarray
    normalized_residuals: np.ndarray
    leverage: np.ndarray
    loo_enthalpy: np.ndarray
    chi2: float
    dof: int
    chi2_reduced: float
    scaled: bool
    T_m: float
    warnings: tuple[str, ...]
    space: str = "ln_p"
    residual_cov: np.ndarray | None = field(default=None, repr=False)

    # -- values with uncertainty -------------------------------------------
    @functools.cached_property
    def _uparams(self):
        return tuple(uncertainties.correlated_values(list(self.params), self.cov))

    def uparams(self):
        """Parameters as correlated ``uncertainties`` numbers (the same objects each call)."""
        return self._uparams

    def _linear(self, value: float, grad: np.ndarray):
        """value + grad·(θ - θ̂) as an uncertain number correlated with θ."""
        up = self.uparams()
        out = value
        for g, u, t in zip(grad, up, self.params):
            out = out + float(g) * (u - float(t))
        return out

    def enthalpy_at(self, T: float):
        """ΔH_vap(T) with uncertainty [J/mol]."""
        up = self.uparams()
        return self.model.enthalpy(float(T), up)

    @property
    def enthalpy(self):
        """ΔH_vap at T_m with uncertainty [J/mol]."""
        return self.enthalpy_at(self.T_m)

    def ln_p(self, T):
        return self.model.f(np.asarray(T, float), self.params)

    def p(self, T):
        return np.exp(self.ln_p(T))

    def ln_p_band(self, T, level: float = 0.95):
        """Confidence band of the fitted ln p at T: (lower, upper)."""
        T = np.asarray(T, float)
        J = self.model.jac(T, self.params)
        var = np.einsum("...i,ij,...j->...", J, self.cov, J)
        k = stats.norm.ppf(0.5 + level / 2)
        f = self.ln_p(T)
        return f - k * np.sqrt(var), f + k * np.sqrt(var)

    def boiling_point(self, pressure=P_STANDARD):
        """Temperature [K] where the fitted curve reaches ``pressure`` [Pa].

        ``pressure`` may be an ``uncertainties`` number; its uncertainty is
        then included. Returns an uncertain number correlated with the
        parameters.
        """
        P = pressure
        Pn = float(getattr(P, "nominal_value", P))
        if not Pn > 0:
            raise FitError(f"pressure must be positive, got {Pn}")
        target = math.log(Pn)
        Tb = self._solve_T(target)
        dfdT = float(self.model.df_dT(Tb, self.params))
        grad = -self.model.jac(np.array([Tb]), self.params)[0] / dfdT
        out = self._linear(Tb, grad)
        if hasattr(P, "std_dev"):
            out = out + (P - Pn) / (Pn * dfdT)
        return out

    def _solve_T(self, target: float) -> float:
        m, th = self.model, self.params
        if m.name == "clausius_clapeyron":
            with np.errstate(divide="ignore", invalid="ignore"):
                T = float(th[1] / (target - th[0]))
            if not (np.isfinite(T) and T > 0):
                raise FitError("the fitted line never reaches that pressure at a positive "
                               "temperature")
            return T
        lo = 50.0 if m.name != "antoine" else max(50.0, -th[2] + 1e-6)
        hi = 2000.0
        g = lambda t: float(m.f(t, th)) - target  # noqa: E731
        grid = np.linspace(lo, hi, 400)
        vals = np.array([g(t) for t in grid])
        sign = np.flatnonzero(np.sign(vals[:-1]) != np.sign(vals[1:]))
        if sign.size == 0:
            raise FitError("the fitted curve does not reach that pressure between 50 and 2000 K")
        # take the crossing nearest the data
        i = sign[np.argmin(np.abs(grid[sign] - self.T_m))]
        return float(optimize.brentq(g, grid[i], grid[i + 1], xtol=1e-12))

    def entropy_at_boiling(self, pressure=P_STANDARD):
        """ΔS_vap = ΔH_vap(T_b)/T_b at the boiling point for ``pressure`` [J/(mol K)]."""
        Tb = self.boiling_point(pressure)
        dH = self.model.enthalpy(Tb, self.uparams())
        return dH / Tb

    def trouton_verdict(self) -> str:
        """Plain-language comparison of ΔS_vap at the normal boiling point with Trouton's rule."""
        s = self.entropy_at_boiling()
        v, u = s.nominal_value, s.std_dev
        lo, hi = TROUTON_BAND
        if lo - 2 * u <= v <= hi + 2 * u:
            return f"ΔS_vap = {v:.1f} ± {u:.1f} J/(mol K): within Trouton's rule ({lo:g}–{hi:g})"
        hlo, hhi = TROUTON_HBOND_BAND
        if v > hi and hlo - 2 * u <= v <= hhi + 2 * u:
            return (f"ΔS_vap = {v:.1f} ± {u:.1f} J/(mol K): above Trouton's rule, as for "
                    f"hydrogen-bonded liquids ({hlo:g}–{hhi:g})")
        return (f"ΔS_vap = {v:.1f} ± {u:.1f} J/(mol K): outside Trouton's rule ({lo:g}–{hi:g}) "
                f"and the hydrogen-bonded range ({hlo:g}–{hhi:g}); check the data")


# ---------------------------------------------------------------------------
# fitting
# ---------------------------------------------------------------------------


def residual_covariance(cov_y, cov_yT, cov_T, dfdT):
    """Covariance of y - f(T) from the covariances of y and T (effective variance)."""
    D = np.diag(dfdT)
    out = np.array(cov_y, float)
    if cov_T is not None:
        out = out - cov_yT @ D - D @ cov_yT.T + D @ cov_T @ D
    return 0.5 * (out + out.T)


def _whitener(C: np.ndarray) -> np.ndarray:
    """L^-1 with C = L L^T; raises FitError if C is not positive definite."""
    try:
        L = np.linalg.cholesky(C)
    except np.linalg.LinAlgError:
        raise FitError("the covariance of the points is not positive definite "
                       "(a point with zero or undefined uncertainty?)") from None
    return np.linalg.inv(L)


def _solve(model: Model, T, y, Winv, th0, space, try_profile: bool = False):
    """Minimise |Winv r|^2, r = y - f or exp(y) - exp(f); return θ.

    For the nonlinear model, ``try_profile`` also starts from the profile
    search over C and keeps the better solution (for far-off starting values).
    """
    if model.linear and space == "ln_p":
        X = model.jac(T, None)
        th, *_ = np.linalg.lstsq(Winv @ X, Winv @ y, rcond=None)
        return th
    obs = y if space == "ln_p" else np.exp(y)

    def resid(th):
        f = model.f(T, th)
        r = obs - (f if space == "ln_p" else np.exp(f))
        return Winv @ r

    def jac(th):
        J = model.jac(T, th)
        if space == "p":
            J = J * np.exp(model.f(T, th))[:, None]
        return -(Winv @ J)

    candidates = [np.asarray(th0, float)]
    if model.name == "antoine" and try_profile:
        candidates.append(_antoine_profile_start(T, y))
    best = None
    for start in candidates:
        scale = np.maximum(np.abs(start), 1e-8)
        with np.errstate(all="ignore"):
            try:
                sol = optimize.least_squares(resid, start, jac=jac, method="lm", x_scale=scale,
                                             xtol=1e-15, ftol=1e-15, gtol=1e-15, max_nfev=20000)
            except (ValueError, FloatingPointError):
                continue
        if np.all(np.isfinite(sol.x)) and (best is None or sol.cost < best.cost):
            best = sol
    if best is None:
        raise FitError("the nonlinear fit did not converge", n_points=len(T),
                       n_params=model.n_params)
    return best.x


def fit_points(
    T,
    y,
    *,
    model: str = "clausius_clapeyron",
    weighting: str = "gls",
    include=None,
    cov_y=None,
    cov_yT=None,
    cov_T=None,
    space: str = "ln_p",
    start=None,
    influence: bool = True,
) -> FitResult:
    """Fit ln p = f(T) to points.

    Parameters
    ----------
    T : array_like
        Temperatures [K].
    y : array_like
        ln(p / Pa).
    model : str
        One of :data:`MODELS`.
    weighting : {"ordinary", "weighted", "gls"}
    include : array_like of bool, optional
        Points to fit (default all); the others get residuals only.
    cov_y, cov_yT, cov_T : array_like, optional
        Covariance of y, cross-covariance of y with T, covariance of T, over
        all points. Needed for ``weighted`` and ``gls``.
    space : {"ln_p", "p"}
        Residuals in ln p (default) or in p.
    start : array_like, optional
        Starting values for a nonlinear model (a profile search over C is
        tried as well, and the better solution kept).
    influence : bool
        Compute leave-one-out enthalpies.

    Returns
    -------
    FitResult

    Raises
    ------
    FitError
        Too few points for the model, or a singular problem.
    """
    m = get_model(model)
    if weighting not in WEIGHTINGS:
        raise FitError(f"weighting must be one of {', '.join(WEIGHTINGS)}, got {weighting!r}")
    T = np.asarray(T, float)
    y = np.asarray(y, float)
    n_all = len(T)
    inc = np.ones(n_all, bool) if include is None else np.asarray(include, bool)
    idx = np.flatnonzero(inc)
    n, p = len(idx), m.n_params
    if n == 0:
        raise FitError("every point is excluded: include at least "
                       f"{p} points to fit {m.label}", n_points=0, n_params=p)
    if n < p:
        raise FitError(f"{m.label} needs at least {p} included points, got {n}", n_points=n,
                       n_params=p)
    if not np.all(np.isfinite(y[idx])):
        raise FitError("an included point has no finite ln p (vapor pressure <= 0?); "
                       "exclude it or correct it", n_points=n, n_params=p)
    if weighting != "ordinary" and cov_y is None:
        raise FitError(f"weighting={weighting!r} needs the covariance of the points")
    Ti, yi = T[idx], y[idx]
    sub = np.ix_(idx, idx)
    cy = None if cov_y is None else np.asarray(cov_y, float)[sub]
    cyT = None if cov_yT is None else np.asarray(cov_yT, float)[sub]
    cT = None if cov_T is None else np.asarray(cov_T, float)[sub]

    th = np.asarray(start, float) if start is not None else m.start(Ti, yi)
    C = None
    for it in range(4 if weighting != "ordinary" else 1):
        if weighting == "ordinary":
            Winv = np.eye(n)
        else:
            C = residual_covariance(cy, cyT, cT, m.df_dT(Ti, th))
            if space == "p":
                e = np.exp(m.f(Ti, th))
                C = C * np.outer(e, e)
            if weighting == "weighted":
                C = np.diag(np.diag(C))
            Winv = _whitener(C)
        th_new = _solve(m, Ti, yi, Winv, th, space, try_profile=(it == 0 and start is not None))
        converged = bool(np.max(np.abs(th_new - th) / np.maximum(np.abs(th), 1e-300)) < 1e-13)
        th = th_new
        if converged:
            break

    # covariance, χ²
    J = m.jac(Ti, th)
    f = m.f(Ti, th)
    r = yi - f if space == "ln_p" else np.exp(yi) - np.exp(f)
    if space == "p":
        J = J * np.exp(f)[:, None]
    Jw = Winv @ J
    rw = Winv @ r
    dof = n - p
    chi2 = float(rw @ rw)
    chi2_red = chi2 / dof if dof > 0 else float("nan")
    try:
        U, s, Vt = np.linalg.svd(Jw, full_matrices=False)
    except np.linalg.LinAlgError:
        raise FitError("the fit is singular", n_points=n, n_params=p) from None
    if s.min() <= s.max() * 1e-14:
        raise FitError("the fit is singular: the points do not determine every parameter "
                       "(e.g. all at one temperature)", n_points=n, n_params=p)
    cov0 = (Vt.T / s**2) @ Vt
    scaled = False
    if weighting == "ordinary":
        cov = cov0 * (chi2_red if dof > 0 else np.nan)
        scaled = True
    elif dof > 0 and chi2 > _chi2_limit(dof):
        cov, scaled = cov0 * chi2_red, True
    else:
        cov = cov0
    lev = np.full(n_all, np.nan)
    lev[idx] = np.sum(U**2, axis=1)

    # residuals of every point
    f_all = m.f(T, th)
    res = y - f_all if space == "ln_p" else np.exp(y) - np.exp(f_all)
    norm = np.full(n_all, np.nan)
    if weighting == "ordinary":
        norm[idx] = r / math.sqrt(chi2_red) if dof > 0 else np.nan
    else:
        norm[idx] = r / np.sqrt(np.diag(C))
    T_m = float(1.0 / np.mean(1.0 / Ti))

    warn = list(_conditioning_warnings(m, th, cov, Ti, n))
    loo = np.full(n_all, np.nan)
    if influence and n - 1 >= p and n >= 3:
        loo[idx] = _leave_one_out(m, Ti, yi, C, th, space, T_m)
    result = FitResult(m, weighting, th, cov, T, y, inc, res, norm, lev, loo, chi2, dof,
                       chi2_red, scaled, T_m, tuple(warn), space,
                       None if C is None else C)
    return result


def _leave_one_out(m: Model, T, y, C, th, space, T_m) -> np.ndarray:
    """ΔH_vap at T_m with each point left out, keeping the full fit's weights.

    For the linear models all n refits come at once: deleting point k from a
    generalized least-squares problem with precision matrix P = C^-1 leaves
    the precision P - P[:, k] P[k, :] / P[k, k] on the other points (Schur
    complement), so A_k = A - a_k a_k^T / P_kk and b_k = b - a_k (P y)_k / P_kk
    with A = X^T P X, b = X^T P y, a_k = X^T P[:, k].
    """
    n = len(T)
    out = np.full(n, np.nan)
    if m.linear and space == "ln_p":
        X = m.jac(T, None)
        P = np.eye(n) if C is None else np.linalg.inv(C)
        A = X.T @ P @ X
        b = X.T @ P @ y
        a = X.T @ P  # (p, n): column k is a_k
        Py = P @ y
        d = np.diag(P)
        Ak = A[None] - np.einsum("pk,qk->kpq", a, a) / d[:, None, None]
        bk = b[None] - (a * (Py / d)).T
        try:
            thk = np.linalg.solve(Ak, bk[..., None])[..., 0]
        except np.linalg.LinAlgError:
            return out
        return np.asarray(m.enthalpy(T_m, [thk[:, j] for j in range(m.n_params)]), float)
    for k in range(n):
        keep = np.arange(n) != k
        try:
            Wk = np.eye(n - 1) if C is None else _whitener(C[np.ix_(keep, keep)])
            th_k = _solve(m, T[keep], y[keep], Wk, th, space)
        except (FitError, np.linalg.LinAlgError):
            continue
        out[k] = float(m.enthalpy(T_m, th_k))
    return out


@functools.lru_cache(maxsize=256)
def _chi2_limit(dof: int) -> float:
    """95th percentile of χ² with ``dof`` degrees of freedom."""
    return float(stats.chi2.ppf(0.95, dof))


def _conditioning_warnings(m: Model, th, cov, T, n) -> list[str]:
    """Warn when a three-parameter model is not supported by the data.

    Rule (ours): the curvature parameter (C of Antoine, c = ΔCp/R of the
    constant-ΔCp form; both are zero for a straight Clausius-Clapeyron line) is
    less than twice its standard uncertainty, or there are fewer than two
    points per parameter.
    """
    if m.n_params < 3:
        return []
    span = float(T.max() - T.min())
    sd = float(np.sqrt(cov[2, 2]))
    curv = float(th[2])
    if m.name == "antoine":
        what = f"C = {curv:.0f} ± {sd:.0f} K"
    else:
        what = f"ΔCp = {R * curv:.0f} ± {R * sd:.0f} J/(mol K)"
    if abs(curv) < 2 * sd or n < 2 * m.n_params:
        return [f"{m.label} is ill-conditioned for {n} points over {span:.0f} K ({what}): the "
                "data do not fix the curvature, so extrapolations (boiling points) are unsafe; "
                "prefer Clausius–Clapeyron, or widen the range"]
    return []


def fit_batch(model: str, T: np.ndarray, y: np.ndarray, Winv: np.ndarray, start,
              iterations: int = 12) -> np.ndarray:
    """Fit many data sets at once with one fixed whitening matrix.

    Parameters
    ----------
    model : str
    T, y : ndarray, shape (B, n)
        Temperatures [K] and ln(p/Pa) of B data sets of the same n points.
    Winv : ndarray, shape (n, n)
        Whitening matrix (inverse Cholesky factor of the residual covariance).
    start : array_like, shape (p,)
        Starting parameters (used by the nonlinear model).
    iterations : int
        Gauss-Newton steps for the nonlinear model.

    Returns
    -------
    ndarray, shape (B, p)
        NaN rows where the nonlinear fit did not converge.
    """
    m = get_model(model)
    B = T.shape[0]
    yw = y @ Winv.T
    if m.linear:
        X = m.jac(T, None)  # (B, n, p)
        Xw = np.matmul(Winv, X)
        A = np.matmul(Xw.transpose(0, 2, 1), Xw)
        rhs = np.matmul(Xw.transpose(0, 2, 1), yw[..., None])
        return np.linalg.solve(A, rhs)[..., 0]
    th = np.repeat(np.asarray(start, float)[None, :], B, axis=0)
    step = np.zeros_like(th)
    for _ in range(iterations):
        thc = [th[:, k][:, None] for k in range(m.n_params)]
        r = y - m.f(T, thc)
        J = m.jac(T, [th[:, k] for k in range(m.n_params)])
        Jw = np.einsum("ij,bjp->bip", Winv, J)
        rw = r @ Winv.T
        A = np.einsum("bip,biq->bpq", Jw, Jw)
        rhs = np.einsum("bip,bi->bp", Jw, rw)
        # rows that diverged (non-finite) are kept as NaN, never solved
        good = np.all(np.isfinite(A), axis=(1, 2)) & np.all(np.isfinite(rhs), axis=1)
        A[~good] = np.eye(m.n_params)
        rhs[~good] = 0.0
        A = A + np.eye(m.n_params) * (1e-14 * np.trace(A, axis1=1, axis2=2))[:, None, None]
        step = np.linalg.solve(A, rhs[..., None])[..., 0]
        th = th + step
        th[~good] = np.nan
    # rows whose last step was still large did not converge: NaN, never a number
    unconverged = np.any(np.abs(step) > 1e-6 * np.maximum(np.abs(th), 1.0), axis=1)
    th[unconverged] = np.nan
    return th
