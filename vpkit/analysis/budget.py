"""The uncertainty budget: how much each input adds to u(ΔH_vap), u(T_b) and u(true ΔvapH).

For every run of a :class:`~vpkit.analysis.engine.StackResult`, the sensitivity of a
result q to input k is the chain rule through the one analysis path

    s_qk = g_qᵀ M (J - D)[:, k],

with J = d ln p/d inputs (:func:`vpkit.physics.propagate.jacobian`, the self-consistent
air amount included; at the fitted curve, as the fit's covariance), D the fitted
curve's slope f'(T_i) on each point's own bath temperature (a thermometer error
moves the point along T as well as in ln p: the effective-variance view),
M = (AᵀWA)⁻¹AᵀW the estimator of the fit that was made (A = d f/dθ at the
solution, W the weights actually used) and g_q = dq/dθ. Each input's variance
contribution is (s_qk u_k)².

The inputs are independent by construction: a quantity every point shares (the
barometer, the weighing, the room thermometer) is *one* input, and that is how
the points' correlation arises. So the contributions add up to u(q)² exactly,
with no cross terms, and a group's contribution is the sum of its inputs'. The
sum equals the u(q) the analysis reports, before the χ² scaling; where the
covariance was scaled, every contribution is scaled by the same factor (the
shares do not change). The true ΔvapH adds one more, independent term, the
second virial coefficient (:mod:`vpkit.physics.nonideal`).

"What if" halves one group's uncertainty and refits at the same linearisation:
the covariance of the residuals becomes (J - D) Σ' (J - D)ᵀ, the weights of the
chosen weighting follow it (GLS re-weights; weighted and ordinary keep their
form), and the χ² rule is applied to the same residuals with the new covariance,
so a smaller stated uncertainty that the scatter does not support comes out
scaled, as a re-analysis would. (Keeping the old weights, u² - ¾ c², is 1.5-2.6 %
off a re-analysis for the bath thermometer of four simulated water runs; this is
within 0.8 %.)

References
----------
.. [1] JCGM 100:2008 (GUM), section 5.1.3: the law of propagation of uncertainty;
   the terms c_k² u²(x_k) are the contributions of independent inputs.
.. [2] JCGM 101:2008 (GUM Supplement 1): the Monte Carlo check of a single input
   (``Analysis.monte_carlo(inputs=...)``), tests/unit/test_budget.py.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from ..arrays import psum
from ..constants import P_STANDARD
from ..fitting.lsq import back_solve, forward_solve
from .relinearize import parameter_covariance

#: Input groups of the budget: name -> input names (``T``, ``reading``, ``P`` are the
#: per-point inputs, all points together).
GROUPS: dict[str, tuple[str, ...]] = {
    "graduation readings": ("reading", "room_reading"),
    "bath thermometer": ("T",),
    "barometer": ("P_bar", "P"),
    "room temperature": ("T_room",),
    "weighing": ("mass_before", "mass_after"),
    "scale offset": ("scale_offset",),
    "injected volume": ("V_injected",),
    "liquid density": ("density",),
    "depths and tube bore": ("depth", "room_depth", "bore"),
    "humidity of injected air": ("RH",),
    "reference equation": ("ref_rel",),
}

QUANTITIES = ("ΔH_vap", "T_b at 101.325 kPa", "true ΔvapH")


def group_of(name: str) -> str:
    """The budget group of an input name such as ``reading[3]`` or ``P_bar``."""
    base = name.split("[")[0]
    for group, members in GROUPS.items():
        if base in members:
            return group
    raise KeyError(name)


def _at_fit(res) -> np.ndarray:
    """d ln p/d inputs (R, N, m) at the fitted curve, the linearisation the fit's
    covariance was built on (``StackFit.cov_scale``; the data's where it is None)."""
    J = np.array(res.jacobian, float)
    scale = res.fit.cov_scale
    return J if scale is None else J * scale[:, :, None]


def sensitivities(res) -> dict[str, np.ndarray]:
    """See :func:`_sensitivities` (non-finite values come out as NaN, not warnings)."""
    with np.errstate(all="ignore"):
        return _sensitivities(res)


def _sensitivities(res) -> dict[str, np.ndarray]:
    """s_qk (R, m) of ΔH_vap at T_m [J/mol], T_b at 101.325 kPa [K] and the true ΔvapH
    [J/mol] to every input of ``res`` (a StackResult), per unit of the input (SI).

    Computed by the adjoint: v_q = L⁻ᵀ Z (ZᵀZ)⁻¹ g_q (R, N) with Z = L⁻¹A, then
    s_q = v_qᵀ (J - D); the same numbers as gᵀM(J - D), without an (R, N, m) solve.
    """
    f = res.fit
    m = f.model
    N = res.layout.N
    inc = f.include & np.isfinite(f.T)
    th = np.where(np.isfinite(f.params), f.params, 0.0)
    T = np.where(inc, f.T, 300.0)
    A = np.where(inc[..., None], m.jac(T, th), 0.0)
    Jd = _at_fit(res)
    i = np.arange(N)
    Jd[:, i, i] -= np.where(inc, m.df_dT(T, th), 0.0)  # the T columns: along T as well
    Jd = np.where(inc[..., None], Jd, 0.0)
    Z = np.where(inc[..., None], forward_solve(f.chol, A), 0.0)  # L⁻¹A
    G = np.einsum("rnp,rnq->rpq", Z, Z)
    good = f.ok & np.isfinite(G).all(axis=(1, 2)) & (np.abs(np.linalg.det(
        np.where(np.isfinite(G), G, 0.0))) > 0)
    G = np.where(good[:, None, None], G, np.eye(G.shape[-1]))
    Lt = np.swapaxes(f.chol, -1, -2)
    _, _, gH = f.enthalpy()
    _, _, gT, _ = f.boiling_point(P_STANDARD)
    out = {}
    with np.errstate(all="ignore"):
        for q, g in (("ΔH_vap", gH), ("T_b at 101.325 kPa", gT)):
            w = np.linalg.solve(G, np.nan_to_num(g)[..., None])[..., 0]  # (ZᵀZ)⁻¹ g
            v = back_solve(Lt, np.where(inc, np.einsum("rnp,rp->rn", Z, w), 0.0))
            s = np.einsum("rn,rnk->rk", np.where(inc, v, 0.0), Jd)
            out[q] = np.where(good[:, None], s, np.nan)
    dz = np.where(np.isfinite(res.delta_z), res.delta_z, np.nan)
    out["true ΔvapH"] = out["ΔH_vap"] * dz[:, None]
    return out


def contributions(res) -> dict[str, np.ndarray]:
    """(s_qk u_k)² (R, m) per quantity, scaled like the reported covariance; the true
    ΔvapH gets an extra last column, the second virial coefficient."""
    s = sensitivities(res)
    sig = res.layout.sigma
    f = res.fit
    scale = np.where(f.scaled, f.chi2_reduced, 1.0)[:, None]
    out = {q: (v * sig) ** 2 * scale for q, v in s.items()}
    virial = (res.u_true_enthalpy ** 2
              - psum(out["ΔH_vap"]) * np.where(np.isfinite(res.delta_z), res.delta_z, 0.0) ** 2)
    out["true ΔvapH"] = np.concatenate(
        [out["true ΔvapH"], np.maximum(np.nan_to_num(virial), 0.0)[:, None]], axis=1)
    return out


def largest_share(res, quantity: str = "ΔH_vap") -> tuple[np.ndarray, np.ndarray]:
    """Per run (R,): the input group with the largest share of u(quantity)², and that share
    (empty text and NaN where the run has no budget)."""
    names = list(GROUPS)
    index = np.array([names.index(group_of(n)) for n in res.layout.names])
    c = contributions(res)[quantity][:, :len(index)]
    per = np.zeros((c.shape[0], len(names)))
    for g in range(len(names)):
        per[:, g] = psum(np.where(index == g, c, 0.0))
    total = per.sum(axis=1)
    k = np.argmax(per, axis=1)
    with np.errstate(invalid="ignore", divide="ignore"):
        share = per[np.arange(len(k)), k] / total
    ok = np.isfinite(share) & (total > 0)
    return (np.where(ok, np.array(names, dtype=object)[k], ""), np.where(ok, share, np.nan))


def refit_uncertainty(res, r: int, factor: np.ndarray) -> dict[str, float]:
    """u(q) of run ``r`` if every input's uncertainty were multiplied by ``factor`` (m,),
    refitted at the same linearisation (:func:`vpkit.analysis.relinearize.
    parameter_covariance`); q as in :data:`QUANTITIES`. ``factor`` of ones gives the
    reported uncertainties."""
    cov = parameter_covariance(res, [r], factor=np.asarray(factor, float)[None])[0]
    f = res.fit
    _, _, gH = f.enthalpy()
    _, _, gT, _ = f.boiling_point(P_STANDARD)
    out = {"ΔH_vap": float(np.sqrt(gH[r] @ cov @ gH[r])),
           "T_b at 101.325 kPa": float(np.sqrt(gT[r] @ cov @ gT[r]))}
    dz = res.delta_z[r]
    virial = res.u_true_enthalpy[r] ** 2 - (res.u_enthalpy[r] * dz) ** 2
    out["true ΔvapH"] = float(np.sqrt((out["ΔH_vap"] * dz) ** 2 + max(virial, 0.0)))
    return out


def budget_table(res, r: int = 0) -> pd.DataFrame:
    """The budget of run ``r``: one row per group with a nonzero contribution.

    Columns, per quantity q: ``u from it`` (the u(q) this group alone gives, in the
    display unit: kJ/mol or K), ``share`` (of u(q)², adds to 1) and ``u if halved``
    (u(q) with this group's uncertainty halved). A final row ``total`` holds u(q).
    """
    names = res.layout.names
    groups = [group_of(n) for n in names]
    contrib = contributions(res)
    order = list(GROUPS) + ["second virial coefficient"]
    rows = {g: {} for g in order}
    totals = {}
    member = np.array(groups, dtype=object)
    halved = {g: refit_uncertainty(res, r, np.where(member == g, 0.5, 1.0))
              for g in order if g in set(groups) and contrib["ΔH_vap"][r][member == g].sum() > 0}
    if "second virial coefficient" in order:  # half the u(B) term of the true ΔvapH only
        c_b = contrib["true ΔvapH"][r][-1]
        halved["second virial coefficient"] = {
            q: np.sqrt(max(contrib[q][r].sum() - (0.75 * c_b if q == "true ΔvapH" else 0.0),
                           0.0)) for q in QUANTITIES}
    for q in QUANTITIES:
        c = contrib[q][r]
        keys = groups + (["second virial coefficient"] if q == "true ΔvapH" else [])
        per = {g: 0.0 for g in order}
        for g, v in zip(keys, c):
            per[g] += float(v)
        total = sum(per.values())
        totals[q] = total
        unit = 1e3 if q != "T_b at 101.325 kPa" else 1.0
        for g in order:
            rows[g][(q, "u from it")] = np.sqrt(per[g]) / unit
            rows[g][(q, "share")] = per[g] / total if total > 0 else np.nan
            rows[g][(q, "u if halved")] = halved[g][q] / unit if g in halved else np.nan
    keep = [g for g in order if any(rows[g][(q, "share")] > 0 for q in QUANTITIES)]
    df = pd.DataFrame({g: rows[g] for g in keep}).T
    df.loc["total"] = {(q, k): (np.sqrt(totals[q]) / (1e3 if q != "T_b at 101.325 kPa" else 1.0)
                                if k != "share" else 1.0) for q in QUANTITIES
                       for k in ("u from it", "share", "u if halved")}
    df.columns = pd.MultiIndex.from_tuples(df.columns)
    df.index.name = "input group"
    return df
