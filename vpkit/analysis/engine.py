"""The one analysis path: a stack of runs in, every result of every run out.

:func:`analyze_stack` resolves the choices, reduces the readings, propagates
the input uncertainties, solves the self-consistent air amount where it is
asked for, fits the model, derives ΔH_vap, boiling points and ΔS_vap, compares
with the published curves and runs the checks, for R runs at once.
:func:`vpkit.analyze` is this call with R = 1; :func:`vpkit.analysis.many_runs.analyze_table`
is the same call on R runs.

References
----------
Equations: :mod:`vpkit.physics.reduce` (reduction), :mod:`vpkit.physics.propagate` (GUM
propagation), :mod:`vpkit.fitting.fit` and :mod:`vpkit.fitting.models` (fits),
:mod:`vpkit.physics.liquids` (published curves). The self-consistent air amount
solves p = g(p), g the fitted curve at the air-reference temperature
(METHOD 2.3 b/c), by secant steps with a bisection fallback; its uncertainty
follows from the implicit-function theorem, dp/du = (dg/du)/(1 - dg/dp).

The covariance of ln p that weights every fit is evaluated at the fitted curve,
not at the measured points (in each effective-variance round): d ln p/du carries 1/p of each
noisy point, and with inputs every point shares (the air amount, the barometer)
weights built from the data favour the points that came out low, which biases
GLS low [1]. Measured on 1,000 simulated water runs (25-60 degC): GLS bias
-0.28 u with the covariance at the data, -0.06 u at the fitted curve.

.. [1] S. Chiba, D. L. Smith, "A suggested procedure for resolving an anomaly in
   least-squares data analysis known as 'Peelle's pertinent puzzle' and the
   general implications for nuclear data evaluation", Argonne National
   Laboratory report ANL/NDM-121 (1991).
"""

from __future__ import annotations

import dataclasses
import functools
from dataclasses import dataclass, field
from types import MappingProxyType

import numpy as np

from ..arrays import readonly
from ..constants import P_STANDARD
from ..errors import FitError, VpkitError
from ..fitting.fit import fit_stack
from ..fitting.results import StackFit
from ..physics.liquids import canonical_name, has_reference
from ..physics.propagate import InputLayout, build_inputs
from ..physics.reduce import FLAG_TEXT, point_flag_arrays
from ..record.stack import RunStack
from . import derived
from .choices import AIR_REFERENCE_REASON, Choices, Resolved, resolve
from .comparison import compare_stack
from .selfconsistent import merge_rows, reduce_and_fit, solve_air_reference


@dataclass(frozen=True)
class StackResult:
    """Everything :func:`analyze_stack` found for R runs (arrays read-only, SI).

    Attributes
    ----------
    stack : RunStack
    choices : Choices
    resolved : Resolved
    errors : tuple of VpkitError or None
        Why a run could not be analysed (its numbers are then NaN).
    V, P_total, p_air, p_vap, u_p_vap : ndarray (R, N)
    cov_ln_p : ndarray (R, N, N)
    n_air, p_ref, T_ref : ndarray (R,)
        Air amount [mol], vapor pressure taken at the air reference [Pa] and
        the temperature of that reference [K].
    include : ndarray of bool (R, N)
        Points in the fit; ``reasons`` (R, N) why the others are not.
    requested_include, requested_reasons : ndarray (R, N)
        What was asked for, before the automatic exclusions (cold reference,
        impossible points).
    point_flags : mapping of str -> ndarray of bool (R, N)
    layout : InputLayout
    jacobian : ndarray (R, N, m)
        d ln p_vap / d inputs (with the self-consistent dependence added).
    fit : StackFit
    enthalpy, u_enthalpy, T_b_run, u_T_b_run, T_b_normal, u_T_b_normal : ndarray (R,)
        Apparent ΔH_vap at T_m [J/mol], boiling points at the run's pressure and
        at 101.325 kPa [K].
    true_enthalpy, u_true_enthalpy, delta_z, reference_true_enthalpy : ndarray (R,)
        True ΔvapH at T_m [J/mol] (:func:`vpkit.analysis.derived.true_enthalpy`), the factor
        Δz used, and the published ΔvapH at T_m (NaN where none is bundled).
    entropy, u_entropy : ndarray (R,)
        ΔS_vap at the normal boiling point [J/(mol K)], from the true ΔvapH there
        (:func:`vpkit.analysis.derived.entropy_at_boiling`, at T_b corrected for the
        model's bias where it is estimated); ``entropy_from`` says how ΔH was
        carried to T_b.
    bias_T_b_normal, u_bias_T_b_normal, bias_T_b_run, u_bias_T_b_run : ndarray (R,)
        The model's extrapolation bias of each boiling point [K] (fitted minus
        true; :func:`vpkit.analysis.derived.boiling_point_bias`); ``bias_from`` says from
        what (empty where not estimated).
    comparison : dict of ndarray
        See :func:`vpkit.analysis.comparison.compare_stack` (NaN without a curve).
    self_consistent_rounds : ndarray of int (R,)
        Rounds of the self-consistent air amount (0 where not used);
        ``self_consistent_error`` the final relative mismatch |g(p) - p|/p.
    air_reference : mapping of str -> ndarray (R,)
        How a self-consistent p_ref was found: ``model`` (the model whose curve
        gave it: the chosen one, or the Clausius–Clapeyron line where the chosen
        three-parameter curve has no self-consistent value; "" where not
        solved), ``fallback`` ("reference" or "neglect" where no solution exists),
        and the chosen model's closest attempt ``best_p`` [Pa], ``best_G`` = g - p
        there [Pa] and ``best_enthalpy`` [J/mol] (NaN where a root was found).
    robust_z : ndarray (R, N)
        Distance of each included point from a Theil-Sen line, in its own
        standard uncertainties.
    findings : tuple of tuple of Finding
    """

    stack: RunStack
    choices: Choices
    resolved: Resolved = field(repr=False)
    errors: tuple
    V: np.ndarray
    P_total: np.ndarray
    p_air: np.ndarray
    p_vap: np.ndarray
    u_p_vap: np.ndarray
    cov_ln_p: np.ndarray = field(repr=False)
    n_air: np.ndarray
    p_ref: np.ndarray
    T_ref: np.ndarray
    include: np.ndarray
    reasons: np.ndarray
    requested_include: np.ndarray = field(repr=False)
    requested_reasons: np.ndarray = field(repr=False)
    point_flags: dict = field(repr=False)
    layout: InputLayout = field(repr=False)
    jacobian: np.ndarray = field(repr=False)
    fit: StackFit = field(repr=False)
    enthalpy: np.ndarray
    u_enthalpy: np.ndarray
    T_b_run: np.ndarray
    u_T_b_run: np.ndarray
    T_b_normal: np.ndarray
    u_T_b_normal: np.ndarray
    true_enthalpy: np.ndarray
    u_true_enthalpy: np.ndarray
    delta_z: np.ndarray
    reference_true_enthalpy: np.ndarray
    entropy: np.ndarray
    u_entropy: np.ndarray
    entropy_from: np.ndarray
    bias_T_b_normal: np.ndarray
    u_bias_T_b_normal: np.ndarray
    bias_T_b_run: np.ndarray
    u_bias_T_b_run: np.ndarray
    bias_from: np.ndarray
    comparison: dict = field(repr=False)
    self_consistent_rounds: np.ndarray
    self_consistent_error: np.ndarray
    air_reference: dict = field(repr=False)
    robust_z: np.ndarray
    point_only_u: np.ndarray = field(repr=False)
    findings: tuple = ()

    @property
    def R(self) -> int:
        return self.stack.R

    @functools.cached_property
    def ok(self) -> np.ndarray:
        out = np.array([e is None for e in self.errors], bool)
        out.setflags(write=False)
        return out


def analyze_stack(stack: RunStack, choices: Choices | None = None, *, include=None,
                  reasons=None) -> StackResult:
    """Analyse every run of ``stack`` under ``choices`` (see the module docstring).

    Parameters
    ----------
    stack : RunStack
    choices : Choices, optional
    include, reasons : ndarray (R, N), optional
        Points to fit and why the others are not (default: the stack's own).

    Returns
    -------
    StackResult
        Never raises for one run's trouble: ``errors`` says which runs could not
        be analysed and why.
    """
    with np.errstate(all="ignore"):  # non-finite results are checked and reported, not warned
        return _analyze_stack(stack, choices or Choices(), include, reasons)


def _analyze_stack(stack, choices, include, reasons) -> StackResult:
    from .findings import run_checks

    res = resolve(stack, choices)
    R, N = stack.T.shape
    inc = np.array(stack.include if include is None else include, bool) & stack.mask
    why = np.array(stack.reason if reasons is None else reasons, dtype=object)
    asked = (readonly(inc.copy()), why.copy())
    setup = res.setup
    rows = np.arange(R)
    is_cold = np.broadcast_to(setup.uses("cold"), (R,))
    if is_cold.any() and N:
        c = np.broadcast_to(np.asarray(setup.cold_index, int), (R,))
        real = stack.mask[rows, c] & is_cold
        inc[rows[real], c[real]] = False
        why[rows[real], c[real]] = AIR_REFERENCE_REASON
    mode = res.vapor_mode
    ref_u = np.where(mode == "reference", res.own_curve.bound("u_rel"), 0.0)
    res = dataclasses.replace(res, layout=build_inputs(stack, setup, res.density, res.depth,
                                                       ref_u))
    T_ref0 = (np.where(is_cold, stack.T[rows, np.broadcast_to(setup.cold_index, (R,))],
                       stack.scalar["T_room"]) if N else stack.scalar["T_room"])
    start = np.nan_to_num(res.compare_curve.p(T_ref0))
    fixed = np.where(mode == "fit", start, 0.0)
    errors: list[VpkitError | None] = list(res.errors)
    sc_rounds = np.zeros(R, int)
    sc_err = np.full(R, np.nan)
    out = reduce_and_fit(stack, res, choices, rows, fixed, inc, fit=False)
    fit_mode = np.flatnonzero((mode == "fit") & np.array([e is None for e in errors]))
    how = {"model": np.full(R, "", dtype=object), "fallback": np.full(R, "", dtype=object),
           "best_p": np.full(R, np.nan), "best_G": np.full(R, np.nan),
           "best_enthalpy": np.full(R, np.nan)}
    if fit_mode.size:
        sc, p_sc, rnd, err, failed, model_used, best = solve_air_reference(
            stack, res, choices, fit_mode, fixed[fit_mode], inc)
        out = merge_rows(out, fit_mode, sc)
        sc_rounds[fit_mode], sc_err[fit_mode] = rnd, err
        how["model"][fit_mode] = model_used
        how["best_p"][fit_mode], how["best_G"][fit_mode] = best["p"], best["G"]
        if failed.any():
            res, out = _fallback(stack, res, choices, out, inc, fit_mode[failed],
                                 best["p"][failed], best["G"][failed], how)
    return _finish(stack, choices, res, errors, out, inc, why, sc_rounds, sc_err, run_checks,
                   asked, how)


def _fallback(stack, res, choices, out, inc, rows, best_p, best_G, how):
    """Runs without a self-consistent p_ref keep their place: p_ref from the published
    curve where the liquid has one, else neglected; the closest attempt (its |g - p|
    and ΔH_vap) is kept for the warning."""
    tried = reduce_and_fit(stack, res, choices, rows, np.nan_to_num(best_p), inc)
    how["best_p"][rows], how["best_G"][rows] = best_p, best_G
    how["best_enthalpy"][rows] = tried["fit"].enthalpy()[0]
    has = res.own_curve.has[rows]
    mode = np.array(res.vapor_mode, dtype=object)
    mode[rows] = np.where(has, "reference", "neglect")
    how["fallback"][rows] = mode[rows]
    ref_u = np.where(mode == "reference", res.own_curve.bound("u_rel"), 0.0)
    res = dataclasses.replace(res, vapor_mode=readonly(mode), layout=build_inputs(
        stack, res.setup, res.density, res.depth, ref_u))
    nxt = reduce_and_fit(stack, res, choices, rows, np.zeros(len(rows)), inc, fit=False)
    return res, merge_rows(out, rows, nxt)


def _finish(stack, choices, res, errors, out, inc, why, sc_rounds, sc_err, run_checks, asked,
            how):
    """The final fit of every run, derived results, comparison and checks."""
    R, N = stack.T.shape
    nominal, lnp = out["nominal"], out["lnp"]
    fit_inc = inc & np.isfinite(lnp)
    layout = res.layout
    cov_T = out["cov_T"]
    T = np.where(stack.mask, stack.T, np.nan)
    cov_y, cov_yT = out["cov_y"], out["cov_yT"]
    fit = fit_stack(choices.model, T, lnp, fit_inc, weighting=choices.weighting, cov_y=cov_y,
                    cov_yT=cov_yT, cov_T=cov_T, at_fitted=True)
    cold = np.zeros((R, N), bool)
    is_cold = np.broadcast_to(res.setup.uses("cold"), (R,))
    if is_cold.any() and N:
        c = np.broadcast_to(np.asarray(res.setup.cold_index, int), (R,))
        cold[np.flatnonzero(is_cold), c[is_cold]] = True
    T_boil = stack.scalar["T_boil"]
    flags = point_flag_arrays(T, nominal["V"], nominal["P_total"], nominal["p_vap"], T_boil,
                              stack.mask, cold)
    why = why.copy()
    for r, i in zip(*np.nonzero(inc & ~fit_inc)):
        first = next((FLAG_TEXT[k] for k in FLAG_TEXT if flags[k][r, i]), None)
        why[r, i] = "impossible: " + first if first else "impossible"
    for r in range(R):
        if errors[r] is None and fit.status[r]:
            errors[r] = FitError(fit.status[r], n_points=int(fit.n[r]),
                                 n_params=fit.model.n_params,
                                 run_id=stack.run_ids[r] if R > 1 else None)
    dH, u_dH, _ = fit.enthalpy()
    Tb_run, u_run, _, _ = fit.boiling_point(stack.scalar["P_bar"])
    Tb_n, u_n, _, _ = fit.boiling_point(P_STANDARD)
    names = {x: canonical_name(x) if has_reference(x) else x
             for x in set(stack.liquid)}
    liquids = [names[x] for x in stack.liquid]
    p_m = np.exp(fit.model.f(fit.T_m, fit.params))
    true = derived.true_enthalpy(liquids, fit.T_m, p_m, dH, u_dH)
    own = res.own_curve
    on_curve = None
    if own.has.any():  # the same fit on the published curves: the model's own error
        y_ref = np.where(own.has[:, None], own.ln_p(np.where(stack.mask, stack.T, 300.0)), 0.0)
        start = None if fit.model.linear else np.where(np.isfinite(fit.params), fit.params,
                                                       np.nan)
        on_curve = fit_stack(choices.model, T, y_ref, fit_inc, weighting=choices.weighting,
                             cov_y=cov_y, cov_yT=cov_yT, cov_T=cov_T, chol=fit.chol,
                             start=start, search=start is None, influence=False)
    bias_n = derived.boiling_point_bias(fit, own, P_STANDARD, on_curve)
    bias_r = derived.boiling_point_bias(fit, own, stack.scalar["P_bar"], on_curve)
    ent = derived.entropy_at_boiling(fit, liquids, own, P_STANDARD, bias_n["bias"])
    cmp = compare_stack(res.compare_curve, T, nominal["p_vap"], fit_inc, fit.T_m)
    u_p = np.sqrt(np.einsum("bii->bi", out["cov_y"])) * nominal["p_vap"]  # |dp/du| σ
    u_own = _point_only_uncertainty(layout, fit.cov_scale[:, :, None] * out["J"], fit)
    J_full = out["J"] + out["J_pref"][:, :, None] * out["dp_du"][:, None, :]
    z = _robust_z(T, lnp, fit_inc, u_own)
    bad = np.array([e is not None for e in errors])
    ro = readonly
    nan_bad = lambda a: ro(np.where(bad, np.nan, a))  # noqa: E731
    result = StackResult(
        stack=stack, choices=choices, resolved=res, errors=tuple(errors),
        V=ro(nominal["V"]), P_total=ro(nominal["P_total"]), p_air=ro(nominal["p_air"]),
        p_vap=ro(nominal["p_vap"]), u_p_vap=ro(u_p), cov_ln_p=ro(cov_y),
        n_air=ro(nominal["n_air"]), p_ref=ro(out["p_ref"]), T_ref=ro(nominal["T_ref"]),
        include=ro(fit_inc), reasons=ro(why), requested_include=asked[0],
        requested_reasons=ro(asked[1]),
        point_flags=MappingProxyType({k: ro(v) for k, v in flags.items()}),
        layout=layout, jacobian=ro(J_full), fit=fit, enthalpy=nan_bad(dH),
        u_enthalpy=nan_bad(u_dH), T_b_run=nan_bad(Tb_run), u_T_b_run=nan_bad(u_run),
        T_b_normal=nan_bad(Tb_n), u_T_b_normal=nan_bad(u_n),
        true_enthalpy=nan_bad(true["value"]), u_true_enthalpy=nan_bad(true["u"]),
        delta_z=nan_bad(true["delta_z"]), reference_true_enthalpy=ro(true["reference"]),
        entropy=nan_bad(ent["value"]), u_entropy=nan_bad(ent["u"]),
        entropy_from=ro(np.where(bad, "", ent["carried_by"]).astype(object)),
        bias_T_b_normal=nan_bad(bias_n["bias"]), u_bias_T_b_normal=nan_bad(bias_n["u"]),
        bias_T_b_run=nan_bad(bias_r["bias"]), u_bias_T_b_run=nan_bad(bias_r["u"]),
        bias_from=ro(np.where(bad, "", bias_n["from"]).astype(object)),
        comparison=MappingProxyType({k: ro(v) for k, v in cmp.items()}),
        self_consistent_rounds=ro(sc_rounds), self_consistent_error=ro(sc_err),
        air_reference=MappingProxyType({k: ro(v) for k, v in how.items()}),
        robust_z=ro(z), point_only_u=ro(u_own))
    object.__setattr__(result, "findings", run_checks(result))
    return result


def _point_only_uncertainty(layout: InputLayout, J: np.ndarray, fit: StackFit) -> np.ndarray:
    """Standard uncertainty of each point's residual from its own inputs only.

    Counts the point's reading, bath temperature and own pressure, not the
    inputs every point shares (barometer, weighing, air amount), which move
    all points together and so cannot make one point stand out.
    """
    N = layout.N
    i = np.arange(N)
    th = np.where(np.isfinite(fit.params), fit.params, 0.0)
    dfdT = fit.model.df_dT(np.where(np.isfinite(fit.T), fit.T, 300.0), th)
    var = np.zeros(J.shape[:2])
    for k in range(3):
        d = J[:, i, k * N + i] - (dfdT if k == 0 else 0.0)
        var += (d * layout.sigma[:, k * N:(k + 1) * N]) ** 2
    return np.sqrt(var)


def _median_rows(a: np.ndarray) -> np.ndarray:
    """Median of the finite values of each row (NaN where a row has none)."""
    a = np.where(np.isfinite(a), a, np.nan)
    srt = np.sort(a, axis=1)  # NaN sort last
    k = np.isfinite(a).sum(axis=1)
    lo = np.take_along_axis(srt, np.maximum((k - 1) // 2, 0)[:, None], axis=1)[:, 0]
    hi = np.take_along_axis(srt, np.maximum(k // 2, 0)[:, None], axis=1)[:, 0]
    return np.where(k > 0, 0.5 * (lo + hi), np.nan)


def _robust_z(T, y, inc, u_own) -> np.ndarray:
    """Distance of each included point from a Theil-Sen line through ln p vs 1/T.

    References: P. K. Sen, J. Am. Stat. Assoc. 63, 1379-1389 (1968); H. Theil,
    Indag. Math. 12, 85-91 (1950): the median of pairwise slopes; the
    intercept drops out as the median residual is subtracted. Runs with fewer
    than four included points get NaN.
    """
    R, N = T.shape
    out = np.full((R, N), np.nan)
    if N < 4:
        return out
    x = np.where(inc, 1.0 / np.where(np.isfinite(T), T, 1.0), np.nan)
    yy = np.where(inc, y, np.nan)
    i, j = np.triu_indices(N, 1)
    with np.errstate(all="ignore"):
        dx = x[:, j] - x[:, i]
        s = np.where(dx != 0, (yy[:, j] - yy[:, i]) / dx, np.nan)
        use = (inc.sum(axis=1) >= 4) & np.isfinite(s).any(axis=1)
        if not use.any():
            return out
        slope = _median_rows(s)
        r = yy - slope[:, None] * x
        med = _median_rows(r)
        z = (r - med[:, None]) / u_own
    return np.where(inc & use[:, None], z, np.nan)
