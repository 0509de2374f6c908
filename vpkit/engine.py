"""The one analysis path: a stack of runs in, every result of every run out.

:func:`analyze_stack` resolves the choices, reduces the readings, propagates
the input uncertainties, solves the self-consistent air amount where it is
asked for, fits the model, derives ΔH_vap, boiling points and ΔS_vap, compares
with the published curves and runs the checks, for R runs at once.
:func:`vpkit.analyze` is this call with R = 1; :func:`vpkit.batch.analyze_table`
is the same call on R runs.

References
----------
Equations: :mod:`vpkit.reduce` (reduction), :mod:`vpkit.propagate` (GUM
propagation), :mod:`vpkit.fit` and :mod:`vpkit.models` (fits),
:mod:`vpkit.reference` (published curves). The self-consistent air amount
solves p = g(p), g the fitted curve at the air-reference temperature
(METHOD 2.3 b/c), by secant steps with a bisection fallback; its uncertainty
follows from the implicit-function theorem, dp/du = (dg/du)/(1 - dg/dp).
"""

from __future__ import annotations

import dataclasses
import functools
from dataclasses import dataclass, field

import numpy as np

from . import lsq
from . import reference as refmod
from .choices import AIR_REFERENCE_REASON, Choices, Resolved, resolve, setup_rows
from .constants import P_STANDARD
from .errors import FitError, VpkitError
from .fit import StackFit, fit_stack, solve_stack
from .propagate import (
    InputLayout,
    ReferenceAtAir,
    build_inputs,
    covariances,
    evaluate,
    jacobian,
)
from .reduce import FLAG_TEXT, point_flag_arrays
from .stack import RunStack

#: Self-consistent air amount: relative tolerance |g(p) - p|/p and most rounds (our
#: choice: the finite-difference weights leave a noise floor near 1e-9).
SELF_CONSISTENT_TOL = 1e-8
SELF_CONSISTENT_ROUNDS = 30
#: Passes that make the weights consistent with the dp/du term at one p.
IMPLICIT_PASSES = 3


def _ro(a):
    a = np.asarray(a)
    if a.dtype != object:
        a.setflags(write=False)
    return a


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
    enthalpy, u_enthalpy, T_b_run, u_T_b_run, T_b_normal, u_T_b_normal,
    entropy, u_entropy : ndarray (R,)
        ΔH_vap at T_m [J/mol], boiling points at the run's pressure and at
        101.325 kPa [K], ΔS_vap at the normal boiling point [J/(mol K)].
    comparison : dict of ndarray
        See :func:`vpkit.reference.compare_stack` (NaN without a curve).
    self_consistent_rounds : ndarray of int (R,)
        Rounds of the self-consistent air amount (0 where not used);
        ``self_consistent_error`` the final relative mismatch |g(p) - p|/p.
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
    entropy: np.ndarray
    u_entropy: np.ndarray
    comparison: dict = field(repr=False)
    self_consistent_rounds: np.ndarray
    self_consistent_error: np.ndarray
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


def _rows_layout(layout: InputLayout, idx) -> InputLayout:
    return InputLayout(layout.N, layout.nominal[idx], layout.sigma[idx])


def _reference(res: Resolved, idx, fixed) -> ReferenceAtAir:
    own = res.own_curve.take(idx)
    mode = res.vapor_mode[idx]
    return ReferenceAtAir(own.p, mode == "reference", np.where(mode == "fit", fixed, 0.0))


def _reduce_and_fit(stack, res, choices, idx, fixed_p, inc, implicit_from=None, fit=True):
    """Reduction, Jacobian, covariance and (with ``fit``) fit of runs ``idx`` at p_ref
    ``fixed_p``."""
    layout = _rows_layout(res.layout, idx)
    setup = setup_rows(res.setup, idx)
    pref = _reference(res, idx, fixed_p)
    mask = stack.mask[idx]
    nominal, J, J_pref = jacobian(layout, setup, pref, mask)
    with np.errstate(invalid="ignore", divide="ignore"):
        lnp = np.log(nominal["p_vap"])
    fit_inc = inc[idx] & np.isfinite(lnp)
    dp_du = np.zeros(layout.nominal.shape)
    if implicit_from is not None:
        dp_du = _implicit_correction(J, J_pref, implicit_from, choices, layout, setup, nominal)
    cov_y, cov_yT, cov_T = covariances(layout, J, choices.temperature_errors, _cold(setup),
                                       J_pref, dp_du)
    if fit:
        fit = fit_stack(choices.model, np.where(mask, stack.T[idx], np.nan), lnp, fit_inc,
                        weighting=choices.weighting, cov_y=cov_y, cov_yT=cov_yT, cov_T=cov_T,
                        influence=False)
    else:
        fit = None
    return {"nominal": {k: np.array(v) for k, v in nominal.items()}, "J": np.array(J),
            "J_pref": np.array(J_pref), "dp_du": dp_du, "lnp": np.array(lnp),
            "fit_inc": np.array(fit_inc),
            "cov_y": np.array(cov_y), "cov_yT": cov_yT, "cov_T": cov_T, "fit": fit,
            "p_ref": np.array(pref.values(nominal["T_ref"]), float)}


def _cold(setup):
    return np.asarray(setup.cold_index) if setup.air_from == "cold" else None


def _implicit_correction(J, J_pref, fit: StackFit, choices, layout, setup, nominal):
    """dp_ref/d inputs (R, m) of a self-consistent p_ref (implicit function theorem).

    The full Jacobian of ln p is then J + J_pref ⊗ dp_ref/du.
    """
    m = fit.model
    th = np.where(np.isfinite(fit.params), fit.params, 0.0)
    mask = fit.include
    N = layout.N
    T = np.where(mask, fit.T, 300.0)
    X = np.where(mask[..., None], m.jac(T, th), 0.0)
    W = lsq.forward_solve(fit.chol, np.broadcast_to(np.eye(N), fit.chol.shape))
    fac = lsq.lstsq(lsq.pmatmul(W, X), np.zeros(T.shape))
    QtW = lsq.pmatmul(np.swapaxes(fac["Q"], -1, -2), W)
    S = np.stack([lsq.back_solve(fac["R"], QtW[..., k]) for k in range(N)], axis=-1)
    dfdT = np.where(mask, m.df_dT(T, th), 0.0)
    dth = lsq.pmatmul(S, J)
    dth[..., :N] -= S * dfdT[:, None, :]  # the T rows of the Jacobian are selectors
    T_ref = nominal["T_ref"]
    g = np.exp(m.f(T_ref, th))
    grad_ref = m.jac(T_ref, th)
    dg_du = g[:, None] * np.einsum("bp,bpm->bm", grad_ref, dth)
    rows = np.arange(len(T))
    col = (np.asarray(setup.cold_index) if setup.air_from == "cold"
           else np.full(len(T), layout.column("T_room")))
    dg_du[rows, col] += g * m.df_dT(T_ref, th)
    dg_dp = g * np.einsum("bp,bp->b", grad_ref, lsq.psum(S * J_pref[:, None, :]))
    with np.errstate(all="ignore"):
        dp_du = dg_du / (1.0 - dg_dp)[:, None]
    ok = np.isfinite(dp_du).all(axis=1) & fit.ok
    return np.where(ok[:, None], dp_du, 0.0)


def solve_fixed_point(G, p0: np.ndarray, hi: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Solve G(p) = 0 for a batch (p in [0, hi)): secant steps, then bisection.

    Returns the roots and which were found (|G| <= 1e-11 max(p, 1)).
    """
    p0 = np.clip(np.nan_to_num(p0), 1.0, hi)
    p1 = p0 * (1 + 1e-3)
    g0, g1 = G(p0), G(p1)
    tol = lambda p: 1e-11 * np.maximum(p, 1.0)  # noqa: E731
    done = np.isfinite(g1) & (np.abs(g1) <= tol(p1))
    for _ in range(40):
        if done.all():
            break
        with np.errstate(all="ignore"):
            p2 = p1 - g1 * (p1 - p0) / (g1 - g0)
        good = np.isfinite(p2) & (p2 >= 0) & (p2 < hi) & ~done
        p0, g0 = np.where(good, p1, p0), np.where(good, g1, g0)
        p1 = np.where(good, p2, p1)
        g1 = np.where(good | done, G(p1), g1)
        done |= np.isfinite(g1) & (np.abs(g1) <= tol(p1))
        if not (good | done).any():
            break
    if done.all():
        return p1, done
    # bisection in the bracket nearest the start, from a scan of [1 Pa, hi)
    grid = np.exp(np.linspace(0.0, 1.0, 48)[None, :] * np.log(hi)[:, None])
    vals = np.stack([G(grid[:, k]) for k in range(grid.shape[1])], axis=1)
    change = (np.isfinite(vals[:, :-1]) & np.isfinite(vals[:, 1:])
              & (np.sign(vals[:, :-1]) != np.sign(vals[:, 1:])))
    dist = np.where(change, np.abs(np.log(grid[:, :-1] / np.maximum(p0, 1.0)[:, None])), np.inf)
    k = np.argmin(dist, axis=1)
    bracket = ~done & change.any(axis=1)
    rows = np.arange(len(p0))
    a, b = grid[rows, k], grid[rows, k + 1]
    ga = vals[rows, k]
    for _ in range(80):
        if not bracket.any():
            break
        mid = 0.5 * (a + b)
        gm = G(mid)
        left = bracket & (np.sign(gm) == np.sign(ga))
        a, ga = np.where(left, mid, a), np.where(left, gm, ga)
        b = np.where(bracket & ~left, mid, b)
    found = bracket & (np.abs(b - a) <= 1e-12 * np.maximum(b, 1.0))
    return np.where(done, p1, np.where(found, 0.5 * (a + b), np.nan)), done | found


def _at_p(stack, res, choices, idx, p, inc):
    """Reduction and fit of runs ``idx`` at p_ref = p, with the self-consistent term.

    The covariance then carries dp/du, which depends on the fit's weights, which
    depend on the covariance: a few passes make that consistent at this p.
    """
    cur = _reduce_and_fit(stack, res, choices, idx, p, inc)
    for _ in range(IMPLICIT_PASSES):  # a fixed count: every run is treated alike in a batch
        cur = _reduce_and_fit(stack, res, choices, idx, p, inc, implicit_from=cur["fit"])
    return cur


def _self_consistent(stack, res, choices, idx, start, inc):
    """Solve p_ref of the runs ``idx`` for self-consistency with their own fits.

    Φ(p) is the p at which the fit with the weights found at p reproduces its
    own value at the air reference (secant steps at fixed weights); the outer
    iteration solves Φ(p) = p by secant steps too.
    """
    n = len(idx)
    p = np.nan_to_num(np.asarray(start, float))
    cur = _at_p(stack, res, choices, idx, p, inc)
    model = cur["fit"].model
    rounds = np.zeros(n, int)
    err = np.full(n, np.nan)
    active = np.ones(n, bool)
    failed = np.zeros(n, bool)
    p_prev, h_prev = np.full(n, np.nan), np.full(n, np.nan)
    for _ in range(SELF_CONSISTENT_ROUNDS):
        fit = cur["fit"]
        active &= fit.ok
        a = np.flatnonzero(active)
        if a.size == 0:
            break
        sub = idx[a]
        G = _fixed_weight_map(stack, res, choices, model, sub, fit, a)
        hi = stack.scalar["P_bar"][sub] * 0.999
        phi, found = solve_fixed_point(G, p[a], hi)
        failed[a[~found]] = True
        active[a[~found]] = False
        h = phi - p[a]
        with np.errstate(all="ignore"):
            sec = p[a] - h * (p[a] - p_prev[a]) / (h - h_prev[a])
        use = found & np.isfinite(sec) & (sec > 0) & (sec < hi)
        p_prev[a], h_prev[a] = p[a], h
        keep = a[found]
        if keep.size == 0:
            break
        p[keep] = np.where(use, sec, phi)[found]
        nxt = _at_p(stack, res, choices, idx[keep], p[keep], inc)
        rounds[keep] += 1
        with np.errstate(all="ignore"):
            g = np.exp(model.f(nxt["nominal"]["T_ref"], nxt["fit"].params))
            e = np.abs(g - p[keep]) / np.maximum(p[keep], 1e-300)
        err[keep] = e
        cur = _merge(cur, keep, nxt)
        active[keep] = ~(e <= SELF_CONSISTENT_TOL)
    return cur, p, rounds, err, failed


def _fixed_weight_map(stack, res, choices, model, sub, fit, a):
    """G(p) = g(p) - p for runs ``sub``, g the curve fitted with the weights of ``fit``."""
    L = fit.chol[a]
    layout = _rows_layout(res.layout, sub)
    setup = setup_rows(res.setup, sub)
    T = np.where(stack.mask[sub], stack.T[sub], np.nan)
    fit_inc = fit.include[a]
    start_th = fit.params[a]

    def G(pp):
        ref = ReferenceAtAir(None, np.zeros(len(pp), bool), pp)
        o = evaluate(layout, setup, layout.nominal, ref)
        with np.errstate(invalid="ignore", divide="ignore"):
            y = np.log(o["p_vap"])
        th, _ = solve_stack(model, T, y, fit_inc, L, start=start_th, search=False)
        return np.exp(model.f(o["T_ref"], th)) - pp

    return G


def _merge(cur: dict, keep, nxt: dict) -> dict:
    """Rows ``keep`` of a round's arrays and fit replaced by the next round's."""
    out = {k: (np.array(v) if isinstance(v, np.ndarray) else v) for k, v in cur.items()}
    for key in ("J", "J_pref", "dp_du", "lnp", "fit_inc", "cov_y", "cov_yT", "cov_T", "p_ref"):
        if out[key] is not None:
            out[key][keep] = nxt[key]
    out["nominal"] = {k: np.array(v) for k, v in cur["nominal"].items()}
    for key in out["nominal"]:
        out["nominal"][key][keep] = nxt["nominal"][key]
    return _merge_fit(out, keep, nxt) if cur["fit"] is not None else out


def _fit_rows(fit: StackFit, pos) -> StackFit:
    """Rows ``pos`` of a fit, as a fit of those data sets."""
    pick = lambda v: v[pos] if isinstance(v, np.ndarray) and v.ndim and len(v) == len(  # noqa: E731
        fit.params) else v
    sub_all = {f.name: getattr(fit, f.name) for f in dataclasses.fields(fit)}
    take = {k: (pick(v) if k != "status" else tuple(v[i] for i in pos))
            for k, v in sub_all.items()}
    return StackFit(**take)


def _merge_fit(cur: dict, keep, nxt: dict) -> dict:
    """Replace rows ``keep`` of the current round's fit by the new round's fit."""
    fit, new = cur["fit"], nxt["fit"]
    merged = {}
    for f in dataclasses.fields(fit):
        old, upd = getattr(fit, f.name), getattr(new, f.name)
        if f.name == "status":
            st = list(old)
            for j, i in enumerate(keep):
                st[i] = upd[j]
            merged[f.name] = tuple(st)
        elif isinstance(old, np.ndarray) and old.ndim and len(old) == len(fit.params):
            arr = np.array(old)
            arr[keep] = upd
            merged[f.name] = _ro(arr)
        else:
            merged[f.name] = old
    out = dict(cur)
    out["fit"] = StackFit(**merged)
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
    from .checks import run_checks

    choices = choices or Choices()
    res = resolve(stack, choices)
    R, N = stack.T.shape
    inc = np.array(stack.include if include is None else include, bool) & stack.mask
    why = np.array(stack.reason if reasons is None else reasons, dtype=object)
    asked = (_ro(inc.copy()), why.copy())
    setup = res.setup
    rows = np.arange(R)
    if setup.air_from == "cold" and N:
        c = np.asarray(setup.cold_index)
        real = stack.mask[rows, c]
        inc[rows[real], c[real]] = False
        why[rows[real], c[real]] = AIR_REFERENCE_REASON
    res = dataclasses.replace(res, layout=build_inputs(stack, setup, res.density, res.depth))
    mode = res.vapor_mode
    T_ref0 = (stack.T[rows, np.asarray(setup.cold_index)] if setup.air_from == "cold" and N
              else stack.scalar["T_room"])
    start = np.nan_to_num(res.compare_curve.p(T_ref0))
    fixed = np.where(mode == "fit", start, 0.0)
    errors: list[VpkitError | None] = list(res.errors)
    sc_rounds = np.zeros(R, int)
    sc_err = np.full(R, np.nan)
    out = _reduce_and_fit(stack, res, choices, rows, fixed, inc, fit=False)
    fit_mode = np.flatnonzero((mode == "fit") & np.array([e is None for e in errors]))
    if fit_mode.size:
        sc, p_sc, rnd, err, failed = _self_consistent(stack, res, choices, fit_mode,
                                                      fixed[fit_mode], inc)
        out = _merge(out, fit_mode, sc)
        sc_rounds[fit_mode], sc_err[fit_mode] = rnd, err
        for r in fit_mode[failed]:
            errors[r] = FitError("no self-consistent vapor pressure at the air reference "
                                 "temperature was found; use vapor_at_air_reference="
                                 "'reference' or 'neglect'", run_id=stack.run_ids[r])
    return _finish(stack, choices, res, errors, out, inc, why, sc_rounds, sc_err, run_checks,
                   asked)


def _finish(stack, choices, res, errors, out, inc, why, sc_rounds, sc_err, run_checks, asked):
    """The final fit of every run, derived results, comparison and checks."""
    R, N = stack.T.shape
    nominal, lnp = out["nominal"], out["lnp"]
    fit_inc = inc & np.isfinite(lnp)
    layout = res.layout
    cov_y, cov_yT, cov_T = out["cov_y"], out["cov_yT"], out["cov_T"]
    T = np.where(stack.mask, stack.T, np.nan)
    fit = fit_stack(choices.model, T, lnp, fit_inc, weighting=choices.weighting, cov_y=cov_y,
                    cov_yT=cov_yT, cov_T=cov_T)
    cold = np.zeros((R, N), bool)
    if res.setup.air_from == "cold" and N:
        cold[np.arange(R), np.asarray(res.setup.cold_index)] = True
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
    dS, u_dS, _ = fit.entropy_at_boiling()
    cmp = refmod.compare_stack(res.compare_curve, T, nominal["p_vap"], fit_inc, fit.T_m)
    u_p = np.sqrt(np.einsum("bii->bi", cov_y)) * nominal["p_vap"]
    u_own = _point_only_uncertainty(layout, out["J"], fit)
    J_full = out["J"] + out["J_pref"][:, :, None] * out["dp_du"][:, None, :]
    z = _robust_z(T, lnp, fit_inc, u_own)
    bad = np.array([e is not None for e in errors])
    nan_bad = lambda a: _ro(np.where(bad, np.nan, a))  # noqa: E731
    result = StackResult(
        stack=stack, choices=choices, resolved=res, errors=tuple(errors),
        V=_ro(nominal["V"]), P_total=_ro(nominal["P_total"]), p_air=_ro(nominal["p_air"]),
        p_vap=_ro(nominal["p_vap"]), u_p_vap=_ro(u_p), cov_ln_p=_ro(cov_y),
        n_air=_ro(nominal["n_air"]), p_ref=_ro(out["p_ref"]), T_ref=_ro(nominal["T_ref"]),
        include=_ro(fit_inc), reasons=why, requested_include=asked[0],
        requested_reasons=asked[1], point_flags={k: _ro(v) for k, v in flags.items()},
        layout=layout, jacobian=_ro(J_full), fit=fit, enthalpy=nan_bad(dH),
        u_enthalpy=nan_bad(u_dH), T_b_run=nan_bad(Tb_run), u_T_b_run=nan_bad(u_run),
        T_b_normal=nan_bad(Tb_n), u_T_b_normal=nan_bad(u_n), entropy=nan_bad(dS),
        u_entropy=nan_bad(u_dS), comparison={k: _ro(v) for k, v in cmp.items()},
        self_consistent_rounds=_ro(sc_rounds), self_consistent_error=_ro(sc_err),
        robust_z=_ro(z), point_only_u=_ro(u_own))
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
        slope = np.full(R, np.nan)
        slope[use] = np.nanmedian(s[use], axis=1)
        r = yy - slope[:, None] * x
        med = np.full(R, np.nan)
        med[use] = np.nanmedian(r[use], axis=1)
        z = (r - med[:, None]) / u_own
    return np.where(inc & use[:, None], z, np.nan)
