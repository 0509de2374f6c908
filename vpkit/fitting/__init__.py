"""Fitting ln p(T): the models, the batched least-squares algebra and the fit results.

- :mod:`.models`: one object per model (Clausius–Clapeyron, constant ΔCp, Antoine).
- :mod:`.lsq`: batched masked Cholesky, QR, damped steps, closed-form leave-one-out.
- :mod:`.solve`: the parameter solve for fixed weights (QR; Levenberg–Marquardt).
- :mod:`.fit`: GLS with effective variance, the χ² rule, the sandwich covariance.
- :mod:`.influence`: where ΔH_vap refers to (T_m) and each point's leave-one-out shift.
- :mod:`.results`: :class:`StackFit` (many data sets) and :class:`FitResult` (one).

Imports only the shared base modules: fitting knows nothing of bubbles.
"""

from .fit import chi2_limits, fit_points, fit_stack
from .models import MODELS, Model, get_model
from .results import FitResult, StackFit

__all__ = ["MODELS", "FitResult", "Model", "StackFit", "chi2_limits", "fit_points",
           "fit_stack", "get_model"]
