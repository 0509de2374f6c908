"""A section of runs: per liquid, the consensus, each run's scores, and one joint fit.

For every liquid with at least two analysed runs in a many-run result:

* ΔH_vap of every run is carried to one temperature, the section's T_m (the mean
  of the runs' T_m), by :func:`vpkit.analysis.derived.enthalpy_at` (the model's own
  curvature, else the published curve's change of apparent ΔH, else an assumed
  ΔCp, with that step's uncertainty added), so like is compared with like;
* the consensus of ΔH_vap at that T_m and of T_b at 101.325 kPa (each run's T_b
  corrected for its model's extrapolation bias where that is estimated, see
  :func:`vpkit.analysis.derived.boiling_point_bias`), by the rule of
  :mod:`vpkit.analysis.consensus` (every estimator is reported beside it), and
  each run's z, ζ and ISO 13528 signal;
* a joint fit: one set of model parameters shared by all runs of the liquid, each
  run keeping its own full covariance of ln p (its air amount, barometer and
  weighing are shared by its own points only, so the runs' nuisance quantities
  stay their own: their measured values act as priors through that covariance).

References
----------
.. [1] ISO 13528:2022 (scores and signals), R. T. Birge (1932), R. DerSimonian and
   N. Laird (1986), R. C. Paule and J. Mandel (1982): see :mod:`.consensus`.
.. [2] A. C. Aitken, Proc. R. Soc. Edinburgh 55, 42-48 (1935): generalized least
   squares; with independent runs the normal equations are the sums of the runs'.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from ..arrays import quad
from ..constants import P_STANDARD, T_ZERO_C
from ..fitting import lsq
from ..fitting.fit import chi2_limits
from ..physics.curves import reference_curve
from ..physics.liquids import canonical_name, has_reference
from .consensus import consensus, scores
from .derived import enthalpy_at
from .relinearize import parameter_covariance, residual_covariance, with_enthalpy

#: Passes evaluating each run's u at the consensus (see :mod:`.relinearize`).
CONSENSUS_PASSES = 2

#: Columns the section adds to the many-run summary.
SCORE_COLUMNS = ("section", "ΔH_vap at section T_m [kJ/mol]",
                 "u(ΔH_vap at section T_m) [kJ/mol]", "z", "ζ vs consensus", "z (T_b)",
                 "ζ vs consensus (T_b)", "signal")


def liquid_key(liquid: str) -> str:
    """The group a run belongs to: the bundled name of its liquid, else the name typed
    (spaces and case ignored)."""
    return canonical_name(liquid) if has_reference(liquid) else " ".join(
        str(liquid).split()).lower()


def _carried(blocks, targets: dict[str, float]) -> dict:
    """Every analysed run of a section, at its liquid's section T_m, as arrays: ``id``,
    ``x`` (ΔH_vap [J/mol]), ``u`` (from the run's own covariance), and what re-evaluating
    u needs: ``block`` and ``row`` of its result, ``grad`` (dΔH/dθ), ``gT`` (dT_b/dθ),
    ``u_adj`` (the carrying's own u) and ``T`` (the section T_m)."""
    parts = []
    for b, (_, res) in enumerate(blocks):
        names = np.asarray(res.stack.liquid, dtype=object)
        T = np.full(res.R, np.nan)
        for liq in set(res.stack.liquid):  # one lookup per liquid, not per run
            T[names == liq] = targets.get(liquid_key(liq), np.nan)
        rows = np.flatnonzero(res.ok & np.isfinite(T))
        if not rows.size:
            continue
        f = res.fit.take(rows)
        c = enthalpy_at(f, res.resolved.own_curve.take(rows), T[rows])
        _, _, gT, _ = f.boiling_point(P_STANDARD)
        parts.append({"id": np.asarray(res.stack.run_ids, dtype=object)[rows],
                      "x": c["value"], "u": np.hypot(quad(c["grad"], f.cov), c["u_adj"]),
                      "block": np.full(rows.size, b), "row": rows, "grad": c["grad"],
                      "gT": gT, "u_adj": c["u_adj"], "T": T[rows]})
    if not parts:
        return {}
    return {k: np.concatenate([q[k] for q in parts]) for k in parts[0]}


def _u_at_consensus(blocks, c: dict, pos: np.ndarray, X: float) -> tuple[np.ndarray,
                                                                         np.ndarray]:
    """u(ΔH_vap) and u(T_b) of the runs ``pos`` of :func:`_carried` with each run's ln p
    covariance evaluated at the curve through its own data whose ΔH_vap at the section
    T_m is the consensus X (one batch per block of results), instead of at its own."""
    uH, uT = np.empty(pos.size), np.empty(pos.size)
    for b in np.unique(c["block"][pos]):
        k = np.flatnonzero(c["block"][pos] == b)
        res = blocks[b][1]
        rows = c["row"][pos[k]]
        f = res.fit
        theta = with_enthalpy(f.model, f.params[rows], f.T_m[rows], c["T"][pos[k]],
                              np.full(k.size, X))
        cov = parameter_covariance(res, rows, theta=theta)
        uH[k] = np.hypot(quad(c["grad"][pos[k]], cov), c["u_adj"][pos[k]])
        uT[k] = quad(c["gT"][pos[k]], cov)
    return uH, uT


def joint_fit(blocks, run_ids, passes: int = 2) -> dict:
    """One model fitted to every point of the runs ``run_ids``, each run whitened by its
    own covariance of ln p [2], evaluated at the joint curve (``passes`` times, as a run's
    own fit evaluates its covariance at its curve). Gauss–Newton on the summed normal
    equations. Returns ``params``, ``cov`` (scaled by χ²/dof where χ² exceeds its 95th
    percentile: the runs disagree beyond their stated u), ``chi2``, ``dof``, ``T_m`` (for
    a Clausius–Clapeyron line, where its slope is the true one; else NaN), ``model`` and
    ``n`` (runs)."""
    want = set(run_ids)
    picked = []
    for _, res in blocks:
        rows = np.array([r for r, rid in enumerate(res.stack.run_ids)
                         if rid in want and res.ok[r]], int)
        if rows.size:
            picked.append((res, rows))
    if not picked:
        return {}
    m = picked[0][0].fit.model
    th = np.nanmean(np.concatenate([res.fit.params[rows] for res, rows in picked]), axis=0)
    parts = [_part(res, rows, None) for res, rows in picked]
    for k in range(passes + 1):
        if k:
            parts = [_part(res, rows, th) for res, rows in picked]
        th = _gauss_newton(parts, m, th)
    G, _, chi2 = _normal(parts, m, th)
    cov = np.linalg.inv(G)
    n_points = int(sum(p[2].sum() for p in parts))
    dof = n_points - m.n_params
    if dof > 0 and chi2 > chi2_limits(np.array([dof]))[0]:
        cov = cov * chi2 / dof
    T_m = _line_T_m(parts, G) if m.name == "clausius_clapeyron" else np.nan
    return {"params": th, "cov": cov, "chi2": chi2, "dof": dof, "T_m": T_m, "model": m,
            "n": sum(len(rows) for _, rows in picked)}


def _part(res, rows, theta):
    """T, ln p, the fitted points and the whitening of runs ``rows``: their own fit's, or
    with the covariance evaluated at the curve ``theta``."""
    f = res.fit
    inc = f.include[rows] & np.isfinite(f.y[rows])
    if theta is None:
        L = f.chol[rows]
    else:
        C, _ = residual_covariance(res, rows, np.broadcast_to(theta, (len(rows), len(theta))))
        L, _ = lsq.cholesky(C)
    return f.T[rows], f.y[rows], inc, L


def _gauss_newton(parts, m, th):
    """Gauss–Newton with step halving on fixed whitenings (one step for a linear model)."""
    for _ in range(50):
        G, b, chi2 = _normal(parts, m, th)
        step = np.linalg.solve(G, b)
        t = 1.0
        while t > 1e-6 and not _chi2(parts, m, th + t * step) <= chi2:
            t /= 2.0
        th = th + t * step
        if np.all(np.abs(t * step) <= 1e-12 * (np.abs(th) + 1e-12)):
            break
    return th


def _normal(parts, m, th):
    """Σ ZᵀZ, Σ Zᵀz and χ² at θ over all runs (Z = L⁻¹A, z = L⁻¹r per run)."""
    G = np.zeros((m.n_params, m.n_params))
    b = np.zeros(m.n_params)
    chi2 = 0.0
    for T, y, inc, L in parts:
        Ts = np.where(inc, T, 300.0)
        A = np.where(inc[..., None], m.jac(Ts, th[None]), 0.0)
        r = np.where(inc, y - m.f(Ts, th[None]), 0.0)
        Z, zr = lsq.forward_solve(L, A), lsq.forward_solve(L, r[..., None])[..., 0]
        G += np.einsum("knp,knq->pq", Z, Z)
        b += np.einsum("knp,kn->p", Z, zr)
        chi2 += float((zr**2).sum())
    return G, b, chi2


def _chi2(parts, m, th) -> float:
    out = 0.0
    for T, y, inc, L in parts:
        Ts = np.where(inc, T, 300.0)
        r = np.where(inc, y - m.f(Ts, th[None]), 0.0)
        out += float((lsq.forward_solve(L, r[..., None])[..., 0] ** 2).sum())
    return out


def _line_T_m(parts, G) -> float:
    """1/x_eff of the joint line: x_eff = ½ Σ g x², g the slope's weights on the points
    (as :func:`vpkit.fitting.influence.weighted_temperature` for one run)."""
    Ginv = np.linalg.inv(G)
    acc = 0.0
    for T, _, inc, L in parts:
        x = np.where(inc, 1.0 / np.where(inc, T, 300.0), 0.0)
        A = np.stack([inc.astype(float), x], axis=-1)
        Z = lsq.forward_solve(L, A)
        # weights on y: row 2 of G⁻¹ Zᵀ L⁻¹, applied to x²
        w = lsq.back_solve(np.swapaxes(L, -1, -2), Z @ Ginv[:, 1])
        acc += float((np.where(inc, w, 0.0) * x * x).sum())
    return 1.0 / (0.5 * acc)


def section_tables(summary: pd.DataFrame, blocks) -> tuple[pd.DataFrame, pd.DataFrame]:
    """The consensus table (one row per liquid with ≥ 2 analysed runs) and the per-run
    score columns (indexed like ``summary``; NaN and "" for runs not in a section)."""
    ok = summary["status"].fillna("") == ""
    keys = summary["liquid"].fillna("").map(liquid_key)
    counts = keys[ok].value_counts()
    groups = [k for k in counts.index if counts[k] >= 2]
    T_m = summary["T_m [K]"].astype(float)
    targets = {k: float(T_m[ok & (keys == k)].mean()) for k in groups}
    carried = _carried(blocks, targets)
    where = {rid: n for n, rid in enumerate(carried.get("id", ()))}
    run_ids = summary["run_id"].astype(str).to_numpy()
    score = pd.DataFrame(index=summary.index, columns=list(SCORE_COLUMNS), dtype=object)
    for col in SCORE_COLUMNS[1:-1]:
        score[col] = np.nan
    score["signal"] = ""
    score["section"] = ""
    rows = []
    ok_a, keys_a = ok.to_numpy(), keys.to_numpy()
    for k in sorted(groups):
        sel = np.flatnonzero(ok_a & (keys_a == k))
        pos = np.array([where.get(run_ids[i], -1) for i in sel], int)
        have = summary.index[sel[pos >= 0]]
        pos = pos[pos >= 0]
        if len(have) < 2:
            continue
        x, u = carried["x"][pos], carried["u"][pos]
        cH = consensus(x, u)
        for _ in range(CONSENSUS_PASSES):  # each run's u evaluated at the consensus
            u, utb = _u_at_consensus(blocks, carried, pos, cH.value)
            cH = consensus(x, u)
        sH = scores(x, u, cH)
        # T_b corrected for the model's own extrapolation bias where it is estimated
        tb = summary.loc[have, "T_b at 101.325 kPa [degC]"].astype(float).to_numpy() + T_ZERO_C
        bias = summary.loc[have, "T_b bias at 101.325 kPa [K]"].astype(float).to_numpy()
        ubias = summary.loc[have, "u(T_b bias) [K]"].astype(float).to_numpy()
        known = np.isfinite(bias) & np.isfinite(ubias)
        tb = np.where(known, tb - bias, tb)
        utb = np.where(known, np.hypot(utb, ubias), utb)
        fin = np.isfinite(tb) & np.isfinite(utb) & (utb > 0)
        cT = consensus(tb[fin], utb[fin]) if fin.sum() >= 2 else None
        sT = scores(tb[fin], utb[fin], cT) if cT is not None else None
        score.loc[have, "section"] = k
        score.loc[have, SCORE_COLUMNS[1]] = x / 1e3
        score.loc[have, SCORE_COLUMNS[2]] = u / 1e3
        score.loc[have, "z"] = sH["z"]
        score.loc[have, "ζ vs consensus"] = sH["zeta"]
        worst = np.abs(sH["zeta"])
        if sT is not None:
            idx = np.asarray(have)[fin]
            score.loc[idx, "z (T_b)"] = sT["z"]
            score.loc[idx, "ζ vs consensus (T_b)"] = sT["zeta"]
            worst = worst.copy()
            worst[fin] = np.fmax(worst[fin], np.abs(sT["zeta"]))
        score.loc[have, "signal"] = np.where(worst >= 3.0, "action",
                                             np.where(worst > 2.0, "warning", ""))
        joint = joint_fit(blocks, list(summary.loc[np.asarray(have)[cH.used], "run_id"]
                                       .astype(str)))
        rows.append(_consensus_row(summary, have, k, targets[k], cH, cT, joint))
    return pd.DataFrame(rows, columns=CONSENSUS_COLUMNS), score


CONSENSUS_COLUMNS = [
    "liquid", "runs", "runs used", "T_m [K]", "consensus ΔH_vap [kJ/mol]",
    "u(consensus ΔH_vap) [kJ/mol]", "method", "Birge ratio", "between-run SD [kJ/mol]",
    "between-run SD 95 % low [kJ/mol]", "between-run SD 95 % high [kJ/mol]",
    "weighted mean ΔH_vap [kJ/mol]", "u(weighted mean ΔH_vap) [kJ/mol]",
    "DerSimonian-Laird ΔH_vap [kJ/mol]", "u(DerSimonian-Laird ΔH_vap) [kJ/mol]",
    "Paule-Mandel ΔH_vap [kJ/mol]", "u(Paule-Mandel ΔH_vap) [kJ/mol]",
    "robust ΔH_vap (Algorithm A) [kJ/mol]", "robust SD [kJ/mol]",
    "joint-fit ΔH_vap [kJ/mol]", "u(joint-fit ΔH_vap) [kJ/mol]", "joint-fit T_m [K]",
    "joint-fit reduced chi2", "joint-fit T_b at 101.325 kPa [degC]",
    "u(joint-fit T_b at 101.325 kPa) [K]",
    "consensus T_b at 101.325 kPa [degC]", "u(consensus T_b at 101.325 kPa) [K]",
    "method (T_b)", "Birge ratio (T_b)", "between-run SD (T_b) [K]", "runs used (T_b)",
    "reference", "reference ΔH_vap at T_m [kJ/mol]", "reference T_b at 101.325 kPa [degC]"]


def _consensus_row(summary, have, key, T_star, cH, cT, joint) -> dict:
    nan = np.nan
    row = {"liquid": key, "runs": len(have), "runs used": int(cH.used.sum()), "T_m [K]": T_star,
           "consensus ΔH_vap [kJ/mol]": cH.value / 1e3,
           "u(consensus ΔH_vap) [kJ/mol]": cH.u / 1e3, "method": cH.method,
           "Birge ratio": cH.birge, "between-run SD [kJ/mol]": cH.tau / 1e3,
           "between-run SD 95 % low [kJ/mol]": cH.tau_low / 1e3,
           "between-run SD 95 % high [kJ/mol]": cH.tau_high / 1e3,
           "weighted mean ΔH_vap [kJ/mol]": cH.weighted / 1e3,
           "u(weighted mean ΔH_vap) [kJ/mol]": cH.u_weighted / 1e3,
           "DerSimonian-Laird ΔH_vap [kJ/mol]": cH.dl / 1e3,
           "u(DerSimonian-Laird ΔH_vap) [kJ/mol]": cH.u_dl / 1e3,
           "Paule-Mandel ΔH_vap [kJ/mol]": cH.pm / 1e3,
           "u(Paule-Mandel ΔH_vap) [kJ/mol]": cH.u_pm / 1e3,
           "robust ΔH_vap (Algorithm A) [kJ/mol]": cH.robust / 1e3,
           "robust SD [kJ/mol]": cH.robust_sd / 1e3}
    if joint:
        m, th, cov = joint["model"], joint["params"], joint["cov"]
        T_ref = joint["T_m"] if np.isfinite(joint["T_m"]) else T_star
        g = m.enthalpy_grad(np.array([T_ref]), th[None])[0]
        Tb = float(m.solve_T(np.log([P_STANDARD]), th[None], np.array([T_ref]))[0])
        gT = -m.jac(np.array([Tb]), th[None])[0] / m.df_dT(np.array([Tb]), th[None])[0]
        row.update({"joint-fit ΔH_vap [kJ/mol]": float(m.enthalpy(np.array([T_ref]),
                                                                   th[None])[0]) / 1e3,
                    "u(joint-fit ΔH_vap) [kJ/mol]": float(np.sqrt(g @ cov @ g)) / 1e3,
                    "joint-fit T_m [K]": T_ref,
                    "joint-fit reduced chi2": joint["chi2"] / joint["dof"] if joint["dof"] > 0
                    else nan,
                    "joint-fit T_b at 101.325 kPa [degC]": Tb - T_ZERO_C,
                    "u(joint-fit T_b at 101.325 kPa) [K]": float(np.sqrt(gT @ cov @ gT))})
    if has_reference(key):
        curve = reference_curve(key)
        row.update({"reference": curve.label,
                    "reference ΔH_vap at T_m [kJ/mol]": float(
                        curve.apparent_enthalpy(T_star)) / 1e3,
                    "reference T_b at 101.325 kPa [degC]": curve.boiling_point() - T_ZERO_C})
    if cT is not None:
        row.update({"consensus T_b at 101.325 kPa [degC]": cT.value - T_ZERO_C,
                    "u(consensus T_b at 101.325 kPa) [K]": cT.u, "method (T_b)": cT.method,
                    "Birge ratio (T_b)": cT.birge, "between-run SD (T_b) [K]": cT.tau,
                    "runs used (T_b)": int(cT.used.sum())})
    return row
