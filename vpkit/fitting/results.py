"""The fit of one data set: values with uncertainties a user can carry on with.

:class:`FitResult` is a read-only view of one row of a
:class:`vpkit.fitting.results.StackFit`; its ΔH_vap and boiling points are
``uncertainties`` numbers correlated with the fitted parameters, built from the
same values and gradients as the many-run table, so both agree exactly. ΔS_vap at
the boiling point and the true ΔvapH need more than the fit (the published curve,
the virial correction): they are :mod:`vpkit.analysis.derived`'s, read from the results.

References
----------
.. [1] JCGM 100:2008 (GUM), section 5.2: linear propagation with correlations.
"""

from __future__ import annotations

import dataclasses
import functools
import math
from dataclasses import dataclass, field

import numpy as np
import uncertainties
from scipy import stats

from ..arrays import quad, readonly
from ..constants import P_STANDARD
from ..errors import FitError
from .models import Model


@dataclass(frozen=True)
class StackFit:
    """The fits of R data sets (all arrays read-only; NaN where a fit failed).

    Attributes
    ----------
    model : Model
    weighting, space : str
    params : ndarray (R, p)
    cov : ndarray (R, p, p)
        Parameter covariance after the scaling rule.
    T, y, include : ndarray (R, N)
        All points (K, ln(p/Pa)); ``include`` marks those fitted.
    residuals, normalized_residuals, leverage, loo_enthalpy : ndarray (R, N)
        Residual y - f(T) of every point; divided by its standard uncertainty
        (by s for ``ordinary``); hat-matrix diagonal; ΔH_vap at T_m with that
        point alone left out [J/mol] (NaN where not defined).
    chi2, dof, chi2_reduced, scaled, T_m, n : ndarray (R,)
    chol : ndarray (R, N, N)
        Lower Cholesky factor of the (masked) residual covariance used.
    residual_cov : ndarray (R, N, N) or None
    status : tuple of str
        Per data set, "" or why it could not be fitted.
    ill_conditioned : ndarray of bool (R,)
        Three-parameter model whose curvature the data do not fix.
    cov_scale : ndarray (R, N) or None
        Where the covariance of ln p was evaluated at the fitted curve
        (``fit_stack(at_fitted=...)``): the factor p/p_fit it was scaled by per point.
    T_m_weights : ndarray (R,) or None
        Where the fit's own weights put ΔH's reference temperature; ``T_m`` is that,
        clipped to the range of the points fitted (correlated GLS weights of mixed
        sign can put it beyond them).
    cov_method : {"gls", "sandwich", "scatter"}
        How ``cov`` was found: GLS, (J^T C^-1 J)^-1; sandwich, M C M^T for
        weighted or ordinary estimates when the points' covariance is known;
        scatter, s^2 (J^T J)^-1 for an ordinary fit without stated uncertainties.
    """

    model: Model
    weighting: str
    space: str
    params: np.ndarray
    cov: np.ndarray
    T: np.ndarray
    y: np.ndarray
    include: np.ndarray
    residuals: np.ndarray
    normalized_residuals: np.ndarray
    leverage: np.ndarray
    loo_enthalpy: np.ndarray
    chi2: np.ndarray
    dof: np.ndarray
    chi2_reduced: np.ndarray
    scaled: np.ndarray
    T_m: np.ndarray
    n: np.ndarray
    chol: np.ndarray = field(repr=False)
    residual_cov: np.ndarray | None = field(repr=False)
    status: tuple[str, ...] = ()
    ill_conditioned: np.ndarray = field(default=None, repr=False)
    cov_method: str = "gls"
    cov_scale: np.ndarray | None = field(default=None, repr=False)
    T_m_weights: np.ndarray | None = field(default=None, repr=False)

    def take(self, idx) -> StackFit:
        """The fits of the data sets at ``idx`` (an index array)."""
        idx = np.asarray(idx, int)
        n = len(self.params)
        kw = {}
        for f in dataclasses.fields(self):
            v = getattr(self, f.name)
            if f.name == "status":
                kw[f.name] = tuple(v[i] for i in idx)
            elif isinstance(v, np.ndarray) and v.ndim and len(v) == n:
                kw[f.name] = readonly(v[idx])
            else:
                kw[f.name] = v
        return StackFit(**kw)

    @functools.cached_property
    def ok(self) -> np.ndarray:
        out = np.array([s == "" for s in self.status], bool)
        out.setflags(write=False)
        return out

    # -- derived quantities with their gradients in θ ------------------------------
    def enthalpy(self, T=None):
        """ΔH_vap at T (default T_m) per data set: (value, u, gradient) [J/mol]."""
        T = self.T_m if T is None else np.broadcast_to(np.asarray(T, float), self.T_m.shape)
        g = self.model.enthalpy_grad(T, self.params)
        return self.model.enthalpy(T, self.params), quad(g, self.cov), g

    def boiling_point(self, P=P_STANDARD):
        """Where each fitted curve reaches P [Pa]: (T_b, u, dT_b/dθ, dT_b/d ln P).

        Computed once per pressure (the fit is frozen; the arrays are read-only)."""
        P = np.broadcast_to(np.asarray(P, float), self.T_m.shape)
        key = P.tobytes()
        cache = self.__dict__.setdefault("_boiling_cache", {})
        if key not in cache:
            Tb = self.model.solve_T(np.log(P), self.params, self.T_m)
            with np.errstate(all="ignore"):
                dfdT = self.model.df_dT(Tb, self.params)
                g = -self.model.jac(Tb, self.params) / dfdT[..., None]
            cache[key] = tuple(readonly(a) for a in (Tb, quad(g, self.cov), g, 1.0 / dfdT))
        return cache[key]

    def curvature_text(self, r: int) -> str:
        m = self.model
        if m.curvature_index is None:
            return ""
        value, sd = m.curvature(self.params[r], self.cov[r])
        return m.describe_curvature(float(value), float(sd))



@dataclass(frozen=True)
class FitResult:
    """The fit of one data set: a view of one row of a :class:`StackFit` (frozen).

    Attributes mirror :class:`StackFit` for that row (arrays of length ``n``,
    the row's real points; scalars for the rest); ``warnings`` holds the
    conditioning notice, if any.
    """

    stack: StackFit = field(repr=False)
    index: int = 0
    n: int | None = None

    _POINTS = ("T", "y", "include", "residuals", "normalized_residuals", "leverage",
               "loo_enthalpy")

    def _row(self, name):
        v = getattr(self.stack, name)[self.index]
        if self.n is not None and name in self._POINTS:
            return v[:self.n]
        if self.n is not None and name == "residual_cov":
            return v[:self.n, :self.n]
        return v

    model = property(lambda self: self.stack.model)
    weighting = property(lambda self: self.stack.weighting)
    space = property(lambda self: self.stack.space)
    params = property(lambda self: self._row("params"))
    cov = property(lambda self: self._row("cov"))
    T = property(lambda self: self._row("T"))
    y = property(lambda self: self._row("y"))
    include = property(lambda self: self._row("include"))
    residuals = property(lambda self: self._row("residuals"))
    normalized_residuals = property(lambda self: self._row("normalized_residuals"))
    leverage = property(lambda self: self._row("leverage"))
    loo_enthalpy = property(lambda self: self._row("loo_enthalpy"))
    chi2 = property(lambda self: float(self._row("chi2")))
    dof = property(lambda self: int(self._row("dof")))
    chi2_reduced = property(lambda self: float(self._row("chi2_reduced")))
    scaled = property(lambda self: bool(self._row("scaled")))
    T_m = property(lambda self: float(self._row("T_m")))

    @property
    def residual_cov(self):
        return None if self.stack.residual_cov is None else self._row("residual_cov")

    @property
    def warnings(self) -> tuple[str, ...]:
        if not self.stack.ill_conditioned[self.index]:
            return ()
        m = self.model
        T = self.T[self.include]
        return (f"{m.label} is ill-conditioned for {len(T)} points over "
                f"{T.max() - T.min():.0f} K ({self.stack.curvature_text(self.index)}): the "
                "data do not fix the curvature, so extrapolations (boiling points) are "
                "unsafe; prefer Clausius–Clapeyron, or widen the range",)

    # -- values with uncertainty (correlated with the parameters) -----------------
    @functools.cached_property
    def _uparams(self):
        return tuple(uncertainties.correlated_values(list(self.params), self.cov))

    def uparams(self):
        """Parameters as correlated ``uncertainties`` numbers (the same objects each call)."""
        return self._uparams

    def _linear(self, value: float, grad: np.ndarray):
        """value + grad·(θ - θ̂) as an uncertain number correlated with θ."""
        out = float(value)
        for gk, u, t in zip(grad, self.uparams(), self.params):
            out = out + float(gk) * (u - float(t))
        return out

    def enthalpy_at(self, T: float):
        """ΔH_vap(T) with uncertainty [J/mol]."""
        g = self.model.enthalpy_grad(float(T), self.params)
        return self._linear(float(self.model.enthalpy(float(T), self.params)), g)

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
        sd = quad(self.model.jac(T, self.params), self.cov)
        k = stats.norm.ppf(0.5 + level / 2)
        f = self.ln_p(T)
        return f - k * sd, f + k * sd

    def boiling_point(self, pressure=P_STANDARD):
        """Temperature [K] where the fitted curve reaches ``pressure`` [Pa].

        ``pressure`` may be an ``uncertainties`` number; its uncertainty is
        then included. Returns an uncertain number correlated with the
        parameters.
        """
        Pn = float(getattr(pressure, "nominal_value", pressure))
        if not (math.isfinite(Pn) and Pn > 0):
            raise FitError(f"pressure must be a positive number of Pa, got {Pn}")
        Tb = float(self.model.solve_T(math.log(Pn), self.params, self.T_m))
        if not math.isfinite(Tb):
            raise FitError(f"the fitted curve never reaches {Pn:g} Pa near the data")
        dfdT = float(self.model.df_dT(Tb, self.params))
        out = self._linear(Tb, -self.model.jac(Tb, self.params) / dfdT)
        if hasattr(pressure, "std_dev"):
            out = out + (pressure - Pn) / (Pn * dfdT)
        return out
