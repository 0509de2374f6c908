"""The whole job for one run: :func:`analyze` -> :class:`Analysis`.

Reads the run's SI view, reduces readings to vapor pressures, propagates the
input uncertainties (keeping the correlations that shared inputs create),
fits the chosen model, compares with the published reference equation and
collects every warning. Tables, the summary text and the figure are views of
the frozen result.

References
----------
See :mod:`vpkit.reduce`, :mod:`vpkit.propagate`, :mod:`vpkit.fit` and
:mod:`vpkit.reference` for the equations and their sources.
"""

from __future__ import annotations

import dataclasses
import math
import warnings
from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import uncertainties

from . import reference as refmod
from .constants import P_STANDARD
from .errors import BadValueError, FitError, InputError, VpkitWarning
from .fit import FitResult, _solve, _whitener, fit_points, get_model
from .propagate import InputVector, build_inputs, central_jacobian, evaluate, step_sizes
from .reduce import AIR_METHODS, VAPOR_AT_AIR_REFERENCE, ReductionSetup, point_flags
from .run import Run, RunSI, read_run

AIR_REFERENCE_REASON = "used for the air amount (cold reference)"


@dataclass(frozen=True)
class Analysis:
    """Everything :func:`analyze` found for one run (frozen).

    Attributes
    ----------
    run : Run
        The run as entered (never modified).
    options : dict
        The choices made (model, weighting, air_from, ...).
    T, V, P_total, p_air, p_vap : ndarray
        Per point, SI.
    u_p_vap : ndarray
        Standard uncertainty of p_vap [Pa].
    cov_ln_p : ndarray
        Covariance of ln p_vap between points.
    n_air : float
        Air amount [mol]; ``p_ref`` the vapor pressure taken at the air
        reference temperature [Pa].
    include : ndarray of bool
        Points in the fit; ``reasons`` why the others are not.
    flags : tuple of tuple of str
        Per point, plain-language flags (never removed silently).
    fit : FitResult
    comparison : ReferenceComparison or None
    warnings : tuple of str
    """

    run: Run
    options: Mapping[str, object]
    T: np.ndarray
    V: np.ndarray
    P_total: np.ndarray
    p_air: np.ndarray
    p_vap: np.ndarray
    u_p_vap: np.ndarray
    cov_ln_p: np.ndarray
    n_air: float
    p_ref: float
    include: np.ndarray
    reasons: tuple[str, ...]
    flags: tuple[tuple[str, ...], ...]
    fit: FitResult
    comparison: refmod.ReferenceComparison | None
    warnings: tuple[str, ...]
    inputs: InputVector = field(repr=False)
    jacobian: np.ndarray = field(repr=False)
    si: RunSI = field(repr=False)
    setup: ReductionSetup = field(repr=False)

    # -- headline numbers ---------------------------------------------------
    @property
    def enthalpy(self):
        """ΔH_vap at T_m with uncertainty [J/mol]."""
        return self.fit.enthalpy

    @property
    def T_m(self) -> float:
        return self.fit.T_m

    def boiling_point(self, pressure=P_STANDARD):
        """Predicted boiling point [K] at ``pressure`` [Pa] with uncertainty."""
        return self.fit.boiling_point(pressure)

    @property
    def measured_boiling_point(self):
        if self.si.T_boil is None:
            return None
        return uncertainties.ufloat(self.si.T_boil, self.si.u["T_boil"])

    def p_vap_correlated(self):
        """Vapor pressures as correlated ``uncertainties`` numbers [Pa]."""
        cov = self.cov_ln_p * np.outer(self.p_vap, self.p_vap)
        return uncertainties.correlated_values(list(self.p_vap), cov)

    # -- views ------------------------------------------------------------
    def points(self):
        """Per-point table (pandas), units in the column names."""
        from .report import points_table

        return points_table(self)

    def results(self):
        """One-row results table (pandas), units in the column names."""
        from .report import results_table

        return results_table(self)

    def summary(self, shifts: bool = True) -> str:
        """Markdown summary of the run's results (see :func:`vpkit.report.summary_markdown`)."""
        from .report import summary_markdown

        return summary_markdown(self, shifts=shifts)

    def figure(self, width_mm: float = 85.0, **kwargs):
        """Report figure (matplotlib Figure); see :func:`vpkit.plots.run_figure`."""
        from .plots import run_figure

        return run_figure(self, width_mm=width_mm, **kwargs)

    def with_choices(self, **changes) -> Analysis:
        """Analyse the same run again with some choices changed."""
        opts = dict(self.options)
        opts.update(changes)
        return analyze(self.run, **opts)

    def monte_carlo(self, draws: int = 100_000, seed: int = 0) -> MonteCarloResult:
        """Propagate the input distributions by Monte Carlo (GUM Supplement 1).

        Every uncertain input is drawn from its normal distribution; each draw
        is reduced (solving the self-consistent air amount per draw where that
        choice was made) and fitted with the weights of the nominal fit. ΔH_vap
        is taken at the nominal T_m.
        """
        return _monte_carlo(self, draws, seed)

    def choice_shifts(self) -> dict[str, float]:
        """How far other workable choices move ΔH_vap [J/mol] (nominal fits).

        Keys name the changed choice: each other air-amount method (the cold
        reference only when the run has a reading below room temperature), the
        hydrostatic head off (when the run gives a depth) and the gas mass in
        the weighing off. Values are ΔH_vap(other) - ΔH_vap(this analysis).
        """
        base = self.enthalpy.nominal_value
        here = (self.options["air_from"], self.options["vapor_at_air_reference"])
        trials = {}
        has_cold = bool(np.min(self.si.T) < self.si.T_room)  # a real cold reference reading
        for air in AIR_METHODS:
            if air == "cold" and not has_cold:
                continue
            if air == "injected" and self.si.V_injected is None:
                continue
            for vap in (VAPOR_AT_AIR_REFERENCE if air != "injected" else ("neglect",)):
                if (air, vap) != here and not (air == "injected" and here[0] == "injected"):
                    trials[f"air from {air}, p_vap at air reference: {vap}"] = dict(
                        air_from=air, vapor_at_air_reference=vap)
        if self.si.depth is not None and self.options["use_head"]:
            trials["hydrostatic head off"] = dict(use_head=False)
        if self.options["gas_mass"] and self.si.mass_before is not None:
            trials["gas mass in the weighing off"] = dict(gas_mass=False)
        out = {}
        for label, change in trials.items():
            try:
                other = analyze(self.run, **{**self.options, **change, "warn": False})
            except (InputError, FitError):
                continue
            out[label] = other.enthalpy.nominal_value - base
        return out

    def point_only_uncertainty(self) -> np.ndarray:
        """Standard uncertainty of each point's residual from its own inputs only.

        Counts the point's reading, bath temperature and own pressure, not the
        inputs every point shares (barometer, weighing, air amount), which move
        all points together and so cannot make one point stand out.
        """
        n = len(self.T)
        J, iv = self.jacobian, self.inputs
        dfdT = self.fit.model.df_dT(self.T, self.fit.params)
        out = np.zeros(n)
        for j, (_, i) in enumerate(iv.fields):
            if i is None:
                continue
            d = J[i, j] - dfdT[i] * J[n + i, j]
            out[i] += (d * iv.sigma[j]) ** 2
        return np.sqrt(out)

    def robust_outliers(self, threshold: float = 5.0) -> dict[int, float]:
        """Included points far from a robust (Theil-Sen) line through ln p vs 1/T.

        Returns index -> distance from the robust line in units of the point's
        own standard uncertainty (:meth:`point_only_uncertainty`), for points
        beyond ``threshold``. Default 5, our choice from simulation: 0.3 % of
        1,200 clean simulated 8-point runs (water, ethanol, toluene, default
        uncertainties) raise it, while a 0.1 mL misread at 45 degC in an
        ethanol run scores 8. A diagnostic only: it never changes which points
        are fitted.

        References
        ----------
        .. [1] P. K. Sen, J. Am. Stat. Assoc. 63, 1379-1389 (1968); H. Theil,
           Indag. Math. 12, 85-91 (1950): the median of pairwise slopes; the
           intercept drops out as the median residual is subtracted.
        """
        idx = np.flatnonzero(self.include)
        if len(idx) < 4:
            return {}
        x, y = 1.0 / self.T[idx], self.fit.y[idx]
        i, j = np.triu_indices(len(x), 1)
        keep = x[j] != x[i]
        slope = np.median((y[j] - y[i])[keep] / (x[j] - x[i])[keep])
        r = y - slope * x
        z = (r - np.median(r)) / self.point_only_uncertainty()[idx]
        return {int(i): float(zi) for i, zi in zip(idx, z) if abs(zi) > threshold}


@dataclass(frozen=True)
class MonteCarloResult:
    """Monte Carlo propagation of the input distributions to ΔH_vap.

    Attributes
    ----------
    enthalpy : ndarray
        ΔH_vap at T_m of every successful draw [J/mol].
    draws, failed : int
        Number of draws, and of those with an impossible point (p_vap <= 0).
    """

    enthalpy: np.ndarray
    draws: int
    failed: int

    @property
    def mean(self) -> float:
        return float(np.mean(self.enthalpy))

    @property
    def std(self) -> float:
        return float(np.std(self.enthalpy, ddof=1))

    def interval(self, level: float = 0.95) -> tuple[float, float]:
        q = np.quantile(self.enthalpy, [0.5 - level / 2, 0.5 + level / 2])
        return float(q[0]), float(q[1])


def _exclusions(exclude, n) -> dict[int, str]:
    if exclude is None:
        return {}
    if isinstance(exclude, Mapping):
        items = exclude.items()
    else:
        items = ((i, "excluded by the user") for i in exclude)
    out = {}
    for i, why in items:
        i = int(i)
        if not 0 <= i < n:
            raise BadValueError(f"cannot exclude point {i}: the run has points 0 to {n - 1}",
                             column="exclude", hint="count points from 0 in file order")
        out[i] = str(why) if why else "excluded by the user"
    return out


def analyze(
    run: Run | str | Path,
    *,
    model: str = "clausius_clapeyron",
    weighting: str = "gls",
    air_from: str = "weighed",
    vapor_at_air_reference: str = "auto",
    cold_index: int | None = None,
    use_head: bool = True,
    gas_mass: bool = True,
    exclude: Mapping[int, str] | Iterable[int] | None = None,
    reference: str | None = "auto",
    reference_liquid: str | None = None,
    bubble_depth: float | None = None,
    temperature_errors: bool = True,
    warn: bool = True,
) -> Analysis:
    """Reduce, propagate, fit and compare one run.

    Parameters
    ----------
    run : Run or path
    model : {"clausius_clapeyron", "constant_dcp", "antoine"}
    weighting : {"gls", "weighted", "ordinary"}
    air_from : {"weighed", "cold", "injected"}
        Air amount from the weighed room-temperature volume, from the cold
        reference reading (the coldest point unless ``cold_index``), or from
        the injected volume (METHOD 2.3).
    vapor_at_air_reference : {"auto", "reference", "fit", "neglect"}
        p_vap at the air-reference temperature: from the published equation,
        self-consistent with the fitted curve, or neglected. "auto" takes the
        published equation when the liquid has one, else "fit". The
        self-consistent choice extrapolates the fitted model to the air
        reference temperature; near room temperature that amplifies both
        noise and any model error (for 25-60 degC data and a room-temperature
        weighing, about a factor 100), so it is the fallback, not the default.
    use_head : bool
        Add the hydrostatic head of ``bubble_depth`` when the run gives one.
    gas_mass : bool
        Count the trapped gas's mass in the weighing.
    exclude : mapping index -> reason, or iterable of indices
        Points to leave out of the fit, on top of the run's own flags.
    reference : {"auto", "antoine", "iapws95"} or None
        Reference equation for the comparison (None: no comparison).
    reference_liquid : str, optional
        Compare with another liquid's equation (default: the run's liquid).
    bubble_depth : float, optional
        Bubble depth [m] to use instead of the run's own (a what-if; the run is
        not changed).
    temperature_errors : bool
        Fold the thermometer's uncertainty into the fit (effective variance).
    warn : bool
        Also emit each warning as a :class:`vpkit.VpkitWarning` (they are
        always in ``Analysis.warnings``).

    Returns
    -------
    Analysis
    """
    if not isinstance(run, Run):
        run = read_run(run)
    si = run.to_si()
    if bubble_depth is not None:
        if not np.isfinite(bubble_depth):
            raise BadValueError(f"bubble_depth must be a finite length in m, got {bubble_depth!r}",
                             column="bubble_depth")
        si = dataclasses.replace(si, depth=float(bubble_depth))
    n = len(si.T)
    get_model(model)
    if air_from not in AIR_METHODS:
        raise BadValueError(f"air_from must be one of {', '.join(AIR_METHODS)}, got {air_from!r}",
                         column="air_from")
    if vapor_at_air_reference == "auto":
        vapor_at_air_reference = "reference" if refmod.has_reference(si.liquid) else "fit"
    if vapor_at_air_reference not in VAPOR_AT_AIR_REFERENCE:
        raise BadValueError("vapor_at_air_reference must be one of "
                         f"{', '.join(VAPOR_AT_AIR_REFERENCE)}, got {vapor_at_air_reference!r}",
                         column="vapor_at_air_reference")
    options = dict(model=model, weighting=weighting, air_from=air_from,
                   vapor_at_air_reference=vapor_at_air_reference, cold_index=cold_index,
                   use_head=use_head, gas_mass=gas_mass,
                   exclude=None if exclude is None else dict(_exclusions(exclude, n)),
                   reference=reference, reference_liquid=reference_liquid,
                   bubble_depth=bubble_depth, temperature_errors=temperature_errors)
    msgs: list[str] = []

    curve = None
    compare_with = reference_liquid or si.liquid
    if reference is not None and refmod.has_reference(compare_with):
        curve = refmod.reference_curve(compare_with, reference)
        if reference_liquid and refmod.canonical_name(reference_liquid) != (
                refmod.canonical_name(si.liquid) if refmod.has_reference(si.liquid) else None):
            msgs.append(f"compared with {curve.liquid}, not with the run's liquid {si.liquid!r}")
    elif reference is not None:
        msgs.append(f"no reference equation for {compare_with!r}: no comparison made")

    if si.density is not None:
        density = si.density
    else:
        if not refmod.has_reference(si.liquid):
            raise InputError(f"liquid_density is 'reference' but {si.liquid!r} has no "
                             "bundled density", file=run.source, column="liquid_density",
                             hint="enter the measured density")
        density = float(refmod.liquid_density(si.liquid, si.T_room))

    weighing = si.mass_before is not None
    if air_from == "injected" and si.V_injected is None:
        raise InputError("air_from='injected' needs injected_air_volume", file=run.source,
                         column="injected_air_volume", hint="add it, or use air_from='weighed'")
    if air_from == "weighed" and si.room_reading is None:
        raise InputError("air_from='weighed' needs room_reading", file=run.source,
                         column="room_reading", hint="add the reading taken at the weighing")
    if cold_index is None:
        cold_index = int(np.argmin(si.T))
    if (air_from != "injected" and vapor_at_air_reference == "reference"
            and not refmod.has_reference(si.liquid)):
        raise InputError("vapor_at_air_reference='reference' needs a reference equation",
                         column="vapor_at_air_reference", hint="use 'fit' or 'neglect'")
    setup = ReductionSetup(air_from=air_from, vapor_at_air_reference=vapor_at_air_reference,
                           cold_index=cold_index, offset_from_weighing=weighing,
                           direction=si.direction, use_head=use_head, gas_mass=gas_mass)

    # which points are fitted, and why not
    include = si.include.copy()
    reasons = list(si.reason)
    for i, why in _exclusions(exclude, n).items():
        include[i] = False
        reasons[i] = why
    if air_from == "cold":
        include[cold_index] = False
        reasons[cold_index] = AIR_REFERENCE_REASON

    iv = build_inputs(si, setup, density)
    u0 = iv.nominal[None, :]
    steps = step_sizes(iv)
    mode = "none" if air_from == "injected" else vapor_at_air_reference
    if mode == "reference":
        own = refmod.reference_curve(si.liquid, reference or "auto")
        p_ref_of = own.p
    else:
        p_ref_of = None

    def batch(U, p_ref):
        out = evaluate(iv, si, setup, U, p_ref if p_ref_of is None else p_ref_of)
        with np.errstate(invalid="ignore", divide="ignore"):
            lnp = np.log(out["p_vap"])
        return out, lnp

    m = get_model(model)

    def fixed_weight_fit(Winv, inc, p_ref):
        out, lnp = batch(u0, np.array([p_ref]))
        if not np.all(np.isfinite(lnp[0, inc])):
            return None
        th = _solve(m, out["T"][0, inc], lnp[0, inc], Winv, fit.params, "ln_p")
        return float(np.exp(m.f(out["T_ref"][0], th)))

    p_ref = 0.0
    if mode == "fit" and curve is not None:
        p_ref = float(curve.p(air_ref_T(si, setup)))
    fit = None
    for _round in range(3 if mode == "fit" else 1):
        if mode == "fit" and fit is not None:
            Winv = (_whitener(fit.residual_cov) if fit.residual_cov is not None
                    else np.eye(int(fit.include.sum())))
            p_ref = _solve_p_ref(fixed_weight_fit, Winv, fit.include, si, p_ref)
        out, lnp = batch(u0, np.array([p_ref]))
        flags = point_flags(si.T, out["V"][0], out["P_total"][0], out["p_vap"][0],
                            si.T_boil)
        fit_inc = include.copy()
        fit_reasons = list(reasons)
        for i in range(n):
            if fit_inc[i] and not np.isfinite(lnp[0, i]):
                fit_inc[i] = False
                fit_reasons[i] = "impossible: " + flags[i][0] if flags[i] else "impossible"
        # linear propagation: derivative of [ln p, T] with respect to inputs (and p_ref)
        J, J_pref = _jacobian(batch, iv, steps, p_ref, n)
        if mode == "fit":
            J = _implicit_correction(J, J_pref, fit, m, si, setup, iv, n, batch, p_ref,
                                     fit_inc) if fit is not None else J
        Sigma = iv.sigma**2
        Jy, JT = J[:n], J[n:]
        cov_y = (Jy * Sigma) @ Jy.T
        cov_yT = (Jy * Sigma) @ JT.T if temperature_errors else None
        cov_T = (JT * Sigma) @ JT.T if temperature_errors else None
        fit = fit_points(si.T, lnp[0], model=model, weighting=weighting, include=fit_inc,
                         cov_y=cov_y, cov_yT=cov_yT, cov_T=cov_T)
    reduced = {k: v[0] for k, v in out.items()}
    msgs.extend(fit.warnings)
    seen: dict[float, int] = {}
    for i in range(n):
        key = round(float(si.T[i]), 2)
        if key in seen:
            msgs.append(f"points {seen[key]} and {i} have the same bath temperature "
                        f"({si.T[i] - 273.15:.2f} degC): fine for repeated readings, but check "
                        "for a copied row")
        seen.setdefault(key, i)
    for i in range(n):
        if flags[i]:
            state = "excluded" if not fit_inc[i] else "still included"
            msgs.append(f"point {i} ({si.T[i] - 273.15:.2f} degC), {state}: " + "; ".join(flags[i]))
    comparison = None
    if curve is not None:
        comparison = refmod.compare_to_reference(curve, si.T, reduced["p_vap"], fit_inc, fit.T_m)
        msgs.extend(comparison.warnings)
    Tb = fit.boiling_point(P_STANDARD).nominal_value
    span = fit.T[fit_inc].max() - fit.T[fit_inc].min()
    if Tb - fit.T[fit_inc].max() > max(10.0, span):
        msgs.append(f"the normal boiling point ({Tb - 273.15:.1f} degC) lies "
                    f"{Tb - fit.T[fit_inc].max():.0f} K beyond the highest point: an extrapolation")
    u_p = np.sqrt(np.diag(cov_y)) * reduced["p_vap"]
    result = Analysis(run, options, si.T, reduced["V"], reduced["P_total"], reduced["p_air"],
                    reduced["p_vap"], u_p, cov_y, float(reduced["n_air"]), float(p_ref),
                    fit_inc, tuple(fit_reasons), tuple(flags), fit, comparison, tuple(msgs),
                    iv, J, si, setup)
    suspects = result.robust_outliers()
    if suspects:
        extra = tuple(f"point {i} ({si.T[i] - 273.15:.2f} degC) lies {abs(z):.1f} of its own "
                      "standard uncertainties off a robust line through the other points: "
                      "suspect (not excluded)" for i, z in suspects.items())
        result = dataclasses.replace(result, warnings=result.warnings + extra)
    if warn:
        for message in result.warnings:
            warnings.warn(message, VpkitWarning, stacklevel=2)
    return result


def air_ref_T(si: RunSI, setup: ReductionSetup) -> float:
    return float(si.T[setup.cold_index] if setup.air_from == "cold" else si.T_room)


def _jacobian(batch, iv, steps, p_ref, n):
    """d[ln p, T]/d inputs (2n, m) and d[ln p]/d p_ref (n,)."""

    def f(U):
        out, lnp = batch(U, np.full(U.shape[0], p_ref))
        return np.concatenate([lnp, out["T"]], axis=1)

    J = central_jacobian(f, iv.nominal, steps)
    # the T rows are a selector: write it exactly rather than as a difference quotient
    J[n:] = 0.0
    for j, (name, i) in enumerate(iv.fields):
        if name == "T":
            J[n + i, j] = 1.0
    h = max(abs(p_ref) * 1e-6, 1e-3)
    u0 = iv.nominal[None, :]
    _, up = batch(u0, np.array([p_ref + h]))
    _, dn = batch(u0, np.array([p_ref - h]))
    return J, (up[0] - dn[0]) / (2 * h)


def _implicit_correction(J, J_pref, fit, m, si, setup, iv, n, batch, p_ref, inc):
    """Add the dependence of p_ref on the data when p_ref is self-consistent.

    At the solution, p_ref = g(u, p_ref) with g the fitted curve at the air
    reference temperature. The implicit-function theorem gives
    dp_ref/du = (dg/du) / (1 - dg/dp_ref).
    """
    idx = np.flatnonzero(inc)
    Winv = (_whitener(fit.residual_cov) if fit.residual_cov is not None and
            fit.residual_cov.shape[0] == len(idx) else np.eye(len(idx)))
    T = si.T[idx]
    X = m.jac(T, fit.params)
    Xw = Winv @ X
    S = np.linalg.pinv(Xw) @ Winv  # dθ/dy (p, n_inc), linearised
    T_ref = air_ref_T(si, setup)
    f_ref = float(m.f(T_ref, fit.params))
    g = math.exp(f_ref)
    grad_ref = m.jac(np.array([T_ref]), fit.params)[0]  # df(T_ref)/dθ
    # dθ/dT_i through the model (y fixed): -S diag(df/dT)
    dfdT = m.df_dT(T, fit.params)
    Jy, JT = J[:n][idx], J[n:][idx]
    dtheta_du = S @ Jy - S @ (dfdT[:, None] * JT)
    dg_du = g * (grad_ref @ dtheta_du)
    if setup.air_from == "cold":
        # T_ref itself is an input
        dg_du = dg_du + g * float(m.df_dT(T_ref, fit.params)) * J[n + setup.cold_index]
    else:
        j = iv.names.index("T_room")
        dg_du[j] += g * float(m.df_dT(T_ref, fit.params))
    dg_dp = g * (grad_ref @ (S @ J_pref[idx]))
    dp_du = dg_du / (1.0 - dg_dp)
    out = J.copy()
    out[:n] = J[:n] + np.outer(J_pref, dp_du)
    return out


def _solve_p_ref(fixed_weight_fit, Winv, inc, si, p_start) -> float:
    """Solve p = g(p): the fitted curve's own vapor pressure at the air reference.

    Secant steps from the current value (G is nearly linear in p); a bracketing
    search (Brent) if they fail.
    """
    from scipy.optimize import brentq

    def G(p):
        g = fixed_weight_fit(Winv, inc, p)
        return np.nan if g is None else g - p

    hi = si.P_bar * 0.999
    p0 = min(max(p_start, 1.0), hi)
    p1 = p0 * (1 + 1e-3)
    g0, g1 = G(p0), G(p1)
    for _ in range(30):
        if not (np.isfinite(g0) and np.isfinite(g1)) or g1 == g0:
            break
        p2 = p1 - g1 * (p1 - p0) / (g1 - g0)
        if not 0.0 <= p2 < hi:
            break
        p0, g0, p1 = p1, g1, p2
        g1 = G(p1)
        if np.isfinite(g1) and abs(g1) <= 1e-11 * max(p1, 1.0):
            return float(p1)
    a, b = 0.0, min(hi, max(p_start * 2.0, 1.0))
    Ga, Gb = G(a), G(b)
    tries = 0
    while not (np.isfinite(Ga) and np.isfinite(Gb) and Ga * Gb <= 0) and tries < 30:
        b = min(hi, b * 2.0 + 1.0)
        Gb = G(b)
        tries += 1
    if not (np.isfinite(Ga) and np.isfinite(Gb) and Ga * Gb <= 0):
        raise FitError("no self-consistent vapor pressure at the air reference temperature "
                       "was found; use vapor_at_air_reference='reference' or 'neglect'")
    return float(brentq(G, a, b, xtol=1e-12, rtol=1e-14))


def _fast_p(curve: refmod.ReferenceCurve, T0: float):
    """p(T) of the curve, or its second-order expansion of ln p about T0 for curves
    that are slow to evaluate (IAPWS-95); the error is below 1e-9 for |T - T0| < 2 K."""
    if curve._kind == "antoine":
        return curve.p
    h = 0.05
    l0, lp, lm = (float(curve.ln_p(t)) for t in (T0, T0 + h, T0 - h))
    d1, d2 = (lp - lm) / (2 * h), (lp - 2 * l0 + lm) / h**2
    return lambda T: np.exp(l0 + d1 * (T - T0) + 0.5 * d2 * (T - T0) ** 2)


def _monte_carlo(a: Analysis, draws: int, seed: int) -> MonteCarloResult:
    from .fit import fit_batch

    rng = np.random.default_rng(seed)
    iv, si, setup, f = a.inputs, a.si, a.setup, a.fit
    U = iv.nominal + rng.standard_normal((draws, len(iv.nominal))) * iv.sigma
    inc = a.include
    C = f.residual_cov if f.residual_cov is not None else np.eye(int(inc.sum()))
    Winv = _whitener(C)
    model = f.model.name
    mode = "none" if setup.air_from == "injected" else setup.vapor_at_air_reference

    def fitted(p_ref):
        out = evaluate(iv, si, setup, U, p_ref)
        with np.errstate(invalid="ignore", divide="ignore"):
            y = np.log(out["p_vap"][:, inc])
        bad = ~np.all(np.isfinite(y), axis=1)
        y[bad] = f.y[inc]
        th = fit_batch(model, out["T"][:, inc], y, Winv, f.params)
        return out, th, bad

    if mode == "reference":
        curve = refmod.reference_curve(si.liquid, a.options["reference"] or "auto")
        p_ref = _fast_p(curve, air_ref_T(si, setup))
    elif mode == "fit":
        m = f.model

        def G(p):
            out, th, _ = fitted(p)
            return np.exp(m.f(out["T_ref"], [th[:, k] for k in range(m.n_params)])) - p

        p0 = np.full(draws, a.p_ref)
        p1 = p0 * (1 + 1e-3) + 1e-3
        g0, g1 = G(p0), G(p1)
        for _ in range(12):
            with np.errstate(invalid="ignore", divide="ignore"):
                p2 = p1 - g1 * (p1 - p0) / (g1 - g0)
            p2 = np.where(np.isfinite(p2), p2, p1)
            p0, g0, p1 = p1, g1, p2
            g1 = G(p1)
            if np.nanmax(np.abs(g1)) < 1e-9 * max(a.p_ref, 1.0):
                break
        p_ref = p1
    else:
        p_ref = np.zeros(draws)
    _, th, bad = fitted(p_ref)
    dH = f.model.enthalpy(f.T_m, [th[:, k] for k in range(f.model.n_params)])
    ok = ~bad & np.isfinite(dH)
    return MonteCarloResult(np.asarray(dH)[ok], draws, int((~ok).sum()))
