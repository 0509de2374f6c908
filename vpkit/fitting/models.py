"""Fit models of ln p against T: one object per model holds all of its behaviour.

Every method works on numpy arrays and broadcasts over runs: ``th`` has shape
(..., p) and ``T`` either (...,) (one temperature per parameter set) or
(..., n) (n temperatures per parameter set). SI throughout: T in K, p in Pa.

* :class:`ClausiusClapeyron`: ln p = a + b/T, constant ΔH_vap = -R b [1];
* :class:`ConstantDeltaCp` (Kirchhoff): ln p = a + b/T + c ln T,
  ΔH_vap(T) = R (c T - b), ΔCp = R c [2];
* :class:`Antoine`: ln p = a - b/(T + C), i.e. log10 p = A - B/(T + C) with
  A = a/ln 10, B = b/ln 10; ΔH_vap(T) = R b T^2/(T + C)^2 [3].

The apparent enthalpy of every model is ΔH_vap(T) = R T^2 d ln p/dT (ideal
vapor, liquid volume neglected) [1].

References
----------
.. [1] R. Clausius, Ann. Phys. 155, 500-524 (1850); B. P. E. Clapeyron,
   J. Éc. Polytech. 14, 153-190 (1834).
.. [2] G. R. Kirchhoff, Ann. Phys. 179, 177-206 (1858): ln p = a + b/T + c ln T.
.. [3] C. Antoine, C. R. Acad. Sci. 107, 681-684 (1888).
"""

from __future__ import annotations

import numpy as np

from ..arrays import psum
from ..constants import R
from ..errors import FitError


def _split(th, T) -> tuple[list[np.ndarray], np.ndarray]:
    """Parameter components shaped to broadcast against ``T``."""
    th = np.asarray(th, float)
    T = np.asarray(T, float)
    extra = T.ndim - (th.ndim - 1)
    if extra < 0:
        raise ValueError(f"temperatures of shape {T.shape} do not fit parameters {th.shape}")
    shape = th.shape[:-1] + (1,) * extra
    return [th[..., k].reshape(shape) for k in range(th.shape[-1])], T


def _stack(parts, T) -> np.ndarray:
    return np.stack(np.broadcast_arrays(*parts, T)[:-1], axis=-1)


class Model:
    """Base of the fit models: what is needed to fit, report and extrapolate one.

    Subclasses give ``f``, its first and second derivative in T, the
    derivative in the parameters (``jac``) and its T derivative (``jac_dT``).
    """

    name: str = ""
    label: str = ""
    param_names: tuple[str, ...] = ()
    linear: bool = True
    #: index and description of the curvature parameter (three-parameter models)
    curvature_index: int | None = None

    @property
    def n_params(self) -> int:
        return len(self.param_names)

    def f(self, T, th):  # pragma: no cover - abstract
        raise NotImplementedError

    def df_dT(self, T, th):  # pragma: no cover - abstract
        raise NotImplementedError

    def d2f_dT2(self, T, th):  # pragma: no cover - abstract
        raise NotImplementedError

    def jac(self, T, th) -> np.ndarray:  # pragma: no cover - abstract
        """d f/d θ, shape T.shape + (p,)."""
        raise NotImplementedError

    def jac_dT(self, T, th) -> np.ndarray:  # pragma: no cover - abstract
        """d^2 f/(dT dθ), shape T.shape + (p,)."""
        raise NotImplementedError

    def basis(self, T) -> np.ndarray:
        """Design matrix of a linear model (T.shape + (p,))."""
        return self.jac(T, np.zeros(self.n_params))

    # -- derived, the same for every model ---------------------------------------
    def enthalpy(self, T, th):
        """Apparent ΔH_vap(T) = R T^2 df/dT [J/mol]."""
        T = np.asarray(T, float)
        return R * T**2 * self.df_dT(T, th)

    def enthalpy_grad(self, T, th) -> np.ndarray:
        """d ΔH_vap(T)/d θ [J/mol per parameter unit], shape T.shape + (p,)."""
        T = np.asarray(T, float)
        return R * (T**2)[..., None] * self.jac_dT(T, th)

    def enthalpy_dT(self, T, th):
        """d ΔH_vap/dT = R (2 T f' + T^2 f'') [J/(mol K)]: the apparent ΔCp."""
        T = np.asarray(T, float)
        return R * (2 * T * self.df_dT(T, th) + T**2 * self.d2f_dT2(T, th))

    def solve_T(self, ln_P, th, T_guess):
        """Temperature where f(T) = ln P, by safeguarded Newton steps from ``T_guess``.

        Returns NaN where the curve does not reach ln P near the data.
        """
        ln_P = np.asarray(ln_P, float)
        T = np.array(np.broadcast_to(np.asarray(T_guess, float), np.broadcast(
            ln_P, np.asarray(th)[..., 0]).shape), dtype=float)
        lo = self.lower_T(th) + 1e-9
        done = np.zeros(T.shape, bool)
        with np.errstate(all="ignore"):
            for _ in range(100):  # a converged entry is left alone (batch-independent)
                g = self.f(T, th) - ln_P
                new = T - g / self.df_dT(T, th)
                new = np.where(new <= lo, 0.5 * (T + lo), new)  # stay on the data's branch
                new = np.where(done, T, new)
                done |= (np.abs(new - T) <= 1e-12 * np.abs(T)) | ~np.isfinite(new)
                T = new
                if np.all(done):
                    break
            ok = np.isfinite(T) & (T > lo) & (np.abs(self.f(T, th) - ln_P) < 1e-9)
        return np.where(ok, T, np.nan)

    def lower_T(self, th):
        """Lowest temperature of the curve's branch (0 K, or -C for Antoine)."""
        return np.zeros(np.asarray(th).shape[:-1])

    def curvature(self, th, cov) -> tuple[np.ndarray, np.ndarray]:
        """(value, standard uncertainty) of the curvature parameter (three-parameter models)."""
        k = self.curvature_index
        th = np.asarray(th, float)
        return th[..., k], np.sqrt(np.asarray(cov)[..., k, k])

    def describe_curvature(self, value: float, sd: float) -> str:
        return ""

    def start(self, T, y, mask):  # pragma: no cover - only the nonlinear model needs one
        raise NotImplementedError


class ClausiusClapeyron(Model):
    name = "clausius_clapeyron"
    label = "Clausius–Clapeyron (constant ΔH)"
    param_names = ("a", "b [K]")

    def f(self, T, th):
        (a, b), T = _split(th, T)
        return a + b / T

    def df_dT(self, T, th):
        (_, b), T = _split(th, T)
        return -b / T**2

    def d2f_dT2(self, T, th):
        (_, b), T = _split(th, T)
        return 2 * b / T**3

    def jac(self, T, th):
        _, T = _split(th, T)
        return np.stack([np.ones_like(T), 1.0 / T], axis=-1)

    def jac_dT(self, T, th):
        _, T = _split(th, T)
        return np.stack([np.zeros_like(T), -1.0 / T**2], axis=-1)

    def solve_T(self, ln_P, th, T_guess=None):
        (a, b), _ = _split(th, np.zeros(np.asarray(th).shape[:-1]))
        with np.errstate(all="ignore"):
            T = b / (np.asarray(ln_P, float) - a)
        return np.where(np.isfinite(T) & (T > 0), T, np.nan)


class ConstantDeltaCp(Model):
    name = "constant_dcp"
    label = "constant ΔCp (Kirchhoff)"
    param_names = ("a", "b [K]", "c")
    curvature_index = 2

    def f(self, T, th):
        (a, b, c), T = _split(th, T)
        return a + b / T + c * np.log(T)

    def df_dT(self, T, th):
        (_, b, c), T = _split(th, T)
        return -b / T**2 + c / T

    def d2f_dT2(self, T, th):
        (_, b, c), T = _split(th, T)
        return 2 * b / T**3 - c / T**2

    def jac(self, T, th):
        _, T = _split(th, T)
        return np.stack([np.ones_like(T), 1.0 / T, np.log(T)], axis=-1)

    def jac_dT(self, T, th):
        _, T = _split(th, T)
        return np.stack([np.zeros_like(T), -1.0 / T**2, 1.0 / T], axis=-1)

    def describe_curvature(self, value, sd):
        return f"ΔCp = {R * value:.0f} ± {R * sd:.0f} J/(mol K)"


class Antoine(Model):
    name = "antoine"
    label = "Antoine"
    param_names = ("a", "b [K]", "C [K]")
    linear = False
    curvature_index = 2

    def f(self, T, th):
        (a, b, C), T = _split(th, T)
        return a - b / (T + C)

    def df_dT(self, T, th):
        (_, b, C), T = _split(th, T)
        return b / (T + C) ** 2

    def d2f_dT2(self, T, th):
        (_, b, C), T = _split(th, T)
        return -2 * b / (T + C) ** 3

    def jac(self, T, th):
        (_, b, C), T = _split(th, T)
        d = T + C
        return _stack([np.ones_like(d), -1.0 / d, b / d**2], T)

    def jac_dT(self, T, th):
        (_, b, C), T = _split(th, T)
        d = T + C
        return _stack([np.zeros_like(d), 1.0 / d**2, -2 * b / d**3], T)

    def lower_T(self, th):
        return np.maximum(-np.asarray(th, float)[..., 2], 0.0)

    def describe_curvature(self, value, sd):
        return f"C = {value:.0f} ± {sd:.0f} K"

    def start(self, T, y, mask):
        """Start values by a profile over C: for each C, (a, b) by linear least squares.

        A coarse grid over T_min + C from 1 K to 2000 K, refined by golden-section
        search on the profile's residual sum of squares; vectorised over runs.
        """
        T = np.asarray(T, float)
        w = np.asarray(mask, float)
        Tmin = np.min(np.where(mask, T, np.inf), axis=-1)

        def profile(C):  # C (..., G) -> rss (..., G), a, b
            x = -1.0 / (np.where(mask, T, 1.0)[..., None, :] + C[..., None])
            ww = w[..., None, :]
            yy = np.where(mask, y, 0.0)[..., None, :]
            n = psum(ww)
            xm = psum(ww * x) / n
            ym = psum(ww * yy) / n
            dx = (x - xm[..., None]) * ww
            with np.errstate(all="ignore"):
                b = psum(dx * (yy - ym[..., None])) / psum(dx * dx)
            a = ym - b * xm
            rss = psum(ww * (yy - a[..., None] - b[..., None] * x) ** 2)
            return np.where(np.isfinite(rss), rss, np.inf), a, b

        grid = np.geomspace(1.0, 2000.0, 48)
        C = grid - Tmin[..., None]
        rss, _, _ = profile(C)
        k = np.argmin(rss, axis=-1)
        lo = grid[np.maximum(k - 1, 0)]
        hi = grid[np.minimum(k + 1, len(grid) - 1)]
        g = (np.sqrt(5) - 1) / 2
        a_, b_ = lo.copy(), hi.copy()
        for _ in range(60):  # golden-section search on the bracket
            c1 = b_ - g * (b_ - a_)
            c2 = a_ + g * (b_ - a_)
            r, _, _ = profile(np.stack([c1, c2], -1) - Tmin[..., None])
            left = r[..., 0] < r[..., 1]
            b_ = np.where(left, c2, b_)
            a_ = np.where(left, a_, c1)
        best = 0.5 * (a_ + b_) - Tmin
        _, a, b = profile(best[..., None])  # ln p = a + b x with x = -1/(T + C)
        return np.stack([a[..., 0], b[..., 0], best], axis=-1)


MODELS: dict[str, Model] = {m.name: m for m in (ClausiusClapeyron(), ConstantDeltaCp(),
                                                Antoine())}


def get_model(name: str) -> Model:
    """The model called ``name`` (one of :data:`MODELS`)."""
    try:
        return MODELS[name]
    except KeyError:
        raise FitError(f"unknown fit model {name!r}; choose one of {', '.join(MODELS)}") from None
