"""p_vap at the air reference: reduction at a given value, and the self-consistent solve.

Where the vapor pressure at the air-reference temperature is not taken from a
published equation (METHOD 2.3 b/c), it must agree with the fitted curve
itself: p = g(p), g the fitted ln p extrapolated to the air reference. For a
batch of runs: Φ(p) is the root of g(p) - p with the weights found at p
(secant steps, bisection fallback); the outer iteration solves Φ(p) = p by
secant steps too, to a relative mismatch of :data:`SELF_CONSISTENT_TOL`,
counting rounds per run. The uncertainty then carries dp/du from the
implicit-function theorem, dp/du = (dg/du)/(1 - dg/dp).

References
----------
.. [1] W. H. Press et al., "Numerical Recipes", 3rd ed., Cambridge (2007),
   sections 9.2 (secant method) and 9.1 (bisection).
.. [2] JCGM 100:2008 (GUM), section 5.1: sensitivity coefficients, here of an
   implicitly defined quantity.
"""

from __future__ import annotations

import dataclasses

import numpy as np

from ..arrays import pmatmul, psum, readonly
from ..fitting import lsq
from ..fitting.fit import fit_stack
from ..fitting.results import StackFit
from ..fitting.solve import solve_stack
from ..physics.propagate import InputLayout, ReferenceAtAir, covariances, evaluate, jacobian
from .choices import Resolved, setup_rows

#: Self-consistent air amount: relative tolerance |g(p) - p|/p and most rounds (our
#: choice: the finite-difference weights leave a noise floor near 1e-9).
SELF_CONSISTENT_TOL = 1e-8
SELF_CONSISTENT_ROUNDS = 30
#: A solve that ends further from self-consistency than this has found no solution
#: (our choice: 0.1 % of p_ref moves ΔH_vap by far less than its u; beyond, it is a guess).
SELF_CONSISTENT_GIVE_UP = 1e-3
#: Passes that make the weights consistent with the dp/du term at one p.
IMPLICIT_PASSES = 3
#: The model of the fallback extrapolation to the air reference.
LINE = "clausius_clapeyron"


def _rows_layout(layout: InputLayout, idx) -> InputLayout:
    return InputLayout(layout.N, layout.nominal[idx], layout.sigma[idx])


def _reference(res: Resolved, idx, fixed) -> ReferenceAtAir:
    own = res.own_curve.take(idx)
    mode = res.vapor_mode[idx]
    return ReferenceAtAir(own.p, mode == "reference", np.where(mode == "fit", fixed, 0.0))


def reduce_and_fit(stack, res, choices, idx, fixed_p, inc, implicit_from=None, fit=True,
                   reduced=None):
    """Reduction, Jacobian, covariance and (with ``fit``) fit of runs ``idx`` at p_ref
    ``fixed_p``. ``reduced``, a previous call's result at the same p, reuses its
    reduction and Jacobian (only the dp/du term and the fit change)."""
    layout = _rows_layout(res.layout, idx)
    setup = setup_rows(res.setup, idx)
    mask = stack.mask[idx]
    if reduced is None:
        pref = _reference(res, idx, fixed_p)
        nominal, J, J_pref = jacobian(layout, setup, pref, mask)
        nominal = {k: np.array(v) for k, v in nominal.items()}
        J, J_pref = np.array(J), np.array(J_pref)
        with np.errstate(invalid="ignore", divide="ignore"):
            lnp = np.log(nominal["p_vap"])
        p_ref = np.array(pref.values(nominal["T_ref"]), float)
    else:
        nominal, J, J_pref, lnp, p_ref = (reduced[k] for k in ("nominal", "J", "J_pref", "lnp",
                                                                 "p_ref"))
    fit_inc = inc[idx] & np.isfinite(lnp)
    dp_du = np.zeros(layout.nominal.shape)
    if implicit_from is not None:
        dp_du = _implicit_correction(J, J_pref, implicit_from, choices, layout, setup, nominal)
    cov_y, cov_yT, cov_T = covariances(layout, J, choices.temperature_errors,
                                       cold_columns(setup, len(idx)), J_pref, dp_du)
    if fit:
        fit = fit_stack(choices.model, np.where(mask, stack.T[idx], np.nan), lnp, fit_inc,
                        weighting=choices.weighting, cov_y=cov_y, cov_yT=cov_yT, cov_T=cov_T,
                        influence=False, at_fitted=True)
    else:
        fit = None
    return {"nominal": nominal, "J": J, "J_pref": J_pref, "dp_du": dp_du, "lnp": lnp,
            "fit_inc": np.array(fit_inc), "cov_y": np.array(cov_y), "cov_yT": cov_yT,
            "cov_T": cov_T, "fit": fit, "p_ref": p_ref}


def cold_columns(setup, R: int):
    """Each run's cold-reference reading (-1 for runs without one), or None if no run has
    one (the form :func:`vpkit.physics.propagate.covariances` takes)."""
    cold = np.broadcast_to(setup.uses("cold"), (R,))
    if not cold.any():
        return None
    return np.where(cold, np.broadcast_to(np.asarray(setup.cold_index, int), (R,)), -1)


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
    fac = lsq.lstsq(pmatmul(W, X), np.zeros(T.shape))
    QtW = pmatmul(np.swapaxes(fac["Q"], -1, -2), W)
    S = lsq.back_solve(fac["R"], QtW)
    dfdT = np.where(mask, m.df_dT(T, th), 0.0)
    dth = pmatmul(S, J)
    dth[..., :N] -= S * dfdT[:, None, :]  # the T rows of the Jacobian are selectors
    T_ref = nominal["T_ref"]
    g = np.exp(m.f(T_ref, th))
    grad_ref = m.jac(T_ref, th)
    dg_du = g[:, None] * np.einsum("bp,bpm->bm", grad_ref, dth)
    rows = np.arange(len(T))
    cold = np.broadcast_to(setup.uses("cold"), (len(T),))
    col = np.where(cold, np.broadcast_to(np.asarray(setup.cold_index, int), (len(T),)),
                   layout.column("T_room"))
    dg_du[rows, col] += g * m.df_dT(T_ref, th)
    dg_dp = g * np.einsum("bp,bp->b", grad_ref, psum(S * J_pref[:, None, :]))
    with np.errstate(all="ignore"):
        dp_du = dg_du / (1.0 - dg_dp)[:, None]
    ok = np.isfinite(dp_du).all(axis=1) & fit.ok
    return np.where(ok[:, None], dp_du, 0.0)


def solve_fixed_point(G, p0: np.ndarray, hi: np.ndarray, best: dict | None = None
                      ) -> tuple[np.ndarray, np.ndarray]:
    """Solve G(p) = 0 for a batch (p in [0, hi)): secant steps, then bisection.

    G(0) > 0 (a fitted vapor pressure is positive) and p = hi, where the air
    amount vanishes, is a degenerate root; the physical root is the first sign
    change of G going up from 0. Secant steps from ``p0`` are tried first; where
    they do not settle below 0.9 hi, a scan of [1 Pa, hi) brackets the lowest sign
    change from + to - and bisection finds it.

    Returns the roots and which were found (|G| <= 1e-11 max(p, 1)). ``best``, if
    given, receives ``p`` and ``G``: per row the evaluated p with the smallest |G|
    (the closest attempt, for rows without a root).
    """
    p0 = np.clip(np.nan_to_num(p0), 1.0, hi)
    p1 = p0 * (1 + 1e-3)
    g0, g1 = G(p0), G(p1)
    seen_p, seen_g = np.stack([p0, p1]), np.stack([g0, g1])
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
    done &= p1 < 0.9 * hi  # a root up at hi is the degenerate one (no air), not p_vap
    if done.all():
        _keep_best(best, seen_p, seen_g, p1, g1, hi)
        return p1, done
    # bisection in the lowest bracket from + to -, from a scan of [1 Pa, hi)
    grid = np.exp(np.linspace(0.0, 1.0, 32)[None, :] * np.log(hi)[:, None])
    vals = np.stack([G(grid[:, k]) for k in range(grid.shape[1])], axis=1)
    change = (np.isfinite(vals[:, :-1]) & np.isfinite(vals[:, 1:])
              & (vals[:, :-1] > 0) & (vals[:, 1:] <= 0))
    k = np.argmax(change, axis=1)
    bracket = ~done & change.any(axis=1)
    rows = np.arange(len(p0))
    a, b = grid[rows, k], grid[rows, k + 1]
    ga = vals[rows, k]
    for _ in range(64):
        if not bracket.any():
            break
        mid = 0.5 * (a + b)
        gm = G(mid)
        left = bracket & (np.sign(gm) == np.sign(ga))
        a, ga = np.where(left, mid, a), np.where(left, gm, ga)
        b = np.where(bracket & ~left, mid, b)
    found = bracket & (np.abs(b - a) <= 1e-12 * np.maximum(b, 1.0))
    _keep_best(best, np.concatenate([seen_p, grid.T]), np.concatenate([seen_g, vals.T]), p1, g1,
               hi)
    return np.where(done, p1, np.where(found, 0.5 * (a + b), np.nan)), done | found


def _keep_best(best: dict | None, ps, gs, p1, g1, hi) -> None:
    """The evaluated p with the smallest finite |G| per row (ps, gs: (k, n)), below 0.9 hi
    (up at hi, G vanishes with the air amount: no attempt at p_vap)."""
    if best is None:
        return
    ps, gs = np.concatenate([ps, p1[None]]), np.concatenate([gs, g1[None]])
    score = np.where(np.isfinite(gs) & (ps < 0.9 * hi), np.abs(gs), np.inf)
    k = np.argmin(score, axis=0)
    rows = np.arange(ps.shape[1])
    best["p"], best["G"] = ps[k, rows], np.where(np.isfinite(score[k, rows]), gs[k, rows], np.nan)


def _at_p(stack, res, choices, idx, p, inc):
    """Reduction and fit of runs ``idx`` at p_ref = p, with the self-consistent term.

    The covariance then carries dp/du, which depends on the fit's weights, which
    depend on the covariance: a few passes make that consistent at this p.
    """
    cur = reduce_and_fit(stack, res, choices, idx, p, inc)
    for _ in range(IMPLICIT_PASSES):  # a fixed count: every run is treated alike in a batch
        cur = reduce_and_fit(stack, res, choices, idx, p, inc, implicit_from=cur["fit"],
                             reduced=cur)
    return cur


def self_consistent(stack, res, choices, idx, start, inc):
    """Solve p_ref of the runs ``idx`` for self-consistency with their own fits.

    Φ(p) is the p at which the fit with the weights found at p reproduces its
    own value at the air reference (secant steps at fixed weights); the outer
    iteration solves Φ(p) = p by secant steps too. The closest attempt of a run
    that fails is the outer iterate with the smallest |g(p) - p| (weights found at
    that p), or, before any round, the closest point of the first scan.
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
    best_p, best_g = np.full(n, np.nan), np.full(n, np.nan)
    for _ in range(SELF_CONSISTENT_ROUNDS):
        fit = cur["fit"]
        active &= fit.ok
        a = np.flatnonzero(active)
        if a.size == 0:
            break
        sub = idx[a]
        G = _fixed_weight_map(stack, res, choices, model, sub, fit, a)
        hi = stack.scalar["P_bar"][sub] * 0.999
        seen: dict = {}
        phi, found = solve_fixed_point(G, p[a], hi, seen)
        first = np.isnan(best_g[a]) & (rounds[a] == 0)
        best_p[a[first]], best_g[a[first]] = seen["p"][first], seen["G"][first]
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
        closer = ~(np.abs(g - p[keep]) >= np.abs(best_g[keep])) | (rounds[keep] == 1)
        best_p[keep[closer]], best_g[keep[closer]] = p[keep][closer], (g - p[keep])[closer]
        cur = merge_rows(cur, keep, nxt)
        active[keep] = ~(e <= SELF_CONSISTENT_TOL)
    failed |= ~(err <= SELF_CONSISTENT_GIVE_UP)  # NaN: never got that far
    return cur, p, rounds, err, failed, {"p": best_p, "G": best_g}


def solve_air_reference(stack, res, choices, idx, start, inc):
    """The self-consistent p_ref of runs ``idx``, found wherever a solution exists.

    First with the chosen model; for a three-parameter model without a root (its
    curvature can absorb the air amount, so g(p) - p may stay above 0), with the
    Clausius–Clapeyron line fitted to the same points with the same weights,
    then the chosen model fitted at that p_ref with the line's dp/du. Returns the
    rounds' arrays (as :func:`self_consistent`), the model each p_ref came from
    (``""`` where none was found), and the closest attempt ``{"p", "G"}`` of the
    chosen model for every run.
    """
    cur, p, rounds, err, failed, best = self_consistent(stack, res, choices, idx, start, inc)
    how = np.where(failed, "", choices.model).astype(object)
    pos = np.flatnonzero(failed)
    if pos.size and choices.model != LINE:
        line = dataclasses.replace(choices, model=LINE)
        c2, p2, r2, e2, f2, _ = self_consistent(stack, res, line, idx[pos], start[pos], inc)
        good = np.flatnonzero(~f2)
        if good.size:
            fin = reduce_and_fit(stack, res, choices, idx[pos[good]], p2[good], inc,
                                 implicit_from=c2["fit"].take(good))
            cur = merge_rows(cur, pos[good], fin)
            p[pos[good]], rounds[pos[good]], err[pos[good]] = p2[good], r2[good], e2[good]
            how[pos[good]] = LINE
            failed[pos[good]] = False
    return cur, p, rounds, err, failed, how, best


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
        # from the fit's own parameters, few steps are needed; a diverging step is a NaN
        th, _ = solve_stack(model, T, y, fit_inc, L, start=start_th, search=False, max_iter=150)
        return np.exp(model.f(o["T_ref"], th)) - pp

    return G


def merge_rows(cur: dict, keep, nxt: dict) -> dict:
    """Rows ``keep`` of a round's arrays and fit replaced by the next round's."""
    out = {k: (np.array(v) if isinstance(v, np.ndarray) else v) for k, v in cur.items()}
    for key in ("J", "J_pref", "dp_du", "lnp", "fit_inc", "cov_y", "cov_yT", "cov_T", "p_ref"):
        if out[key] is not None:
            out[key][keep] = nxt[key]
    out["nominal"] = {k: np.array(v) for k, v in cur["nominal"].items()}
    for key in out["nominal"]:
        out["nominal"][key][keep] = nxt["nominal"][key]
    return _merge_fit(out, keep, nxt) if cur["fit"] is not None else out


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
            merged[f.name] = readonly(arr)
        else:
            merged[f.name] = old
    out = dict(cur)
    out["fit"] = StackFit(**merged)
    return out
