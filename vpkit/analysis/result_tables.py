"""Result tables (pandas), with units in the column names.

:func:`results_table` gives one row per run of a stack result: it is the
one-row table of :meth:`vpkit.Analysis.results` and the many-run summary of
:func:`vpkit.analysis.many_runs.analyze_table` alike. :func:`points_table` is one run's
points. Full precision is kept (CSV files write it); rounding for display is
:mod:`vpkit.display`'s job. Unit conversion from SI happens here (an edge).
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from ..constants import T_ZERO_C
from .derived import trouton_verdict
from .findings import flag_columns


def results_table(res, rows=None) -> pd.DataFrame:
    """One row per run of ``res`` (a StackResult), or of the runs ``rows``.

    Runs that could not be analysed keep their id and liquid, NaN numbers and
    the reason in ``status``.
    """
    return pd.DataFrame(results_columns(res, rows), columns=list(RESULT_COLUMNS))


def results_columns(res, rows=None) -> dict:
    """The columns of :func:`results_table` as a dict of arrays (no DataFrame)."""
    idx = np.arange(res.R) if rows is None else np.asarray(rows, int)
    s, f, c = res.stack, res.fit, res.comparison
    inc = res.include[idx]
    T = s.T[idx]
    with np.errstate(invalid="ignore"):
        t_min = np.where(inc.any(1), np.where(inc, T, np.inf).min(1), np.nan) - T_ZERO_C
        t_max = np.where(inc.any(1), np.where(inc, T, -np.inf).max(1), np.nan) - T_ZERO_C
        dH, u = res.enthalpy[idx], res.u_enthalpy[idx]
        ref = c["enthalpy"][idx]
        T_boil = s.scalar["T_boil"][idx]
        beyond = res.T_b_normal[idx] - (t_max + T_ZERO_C)
        true, pub = res.true_enthalpy[idx], res.reference_true_enthalpy[idx]
    from .budget import largest_share

    top_group, top_share = largest_share(res)
    all_ok = res.ok
    ok = all_ok[idx]
    flags, reasons = flag_columns(res.findings, idx)
    text = lambda a: np.asarray(a, dtype=object)[idx]  # noqa: E731
    data = {
        "run_id": text(s.run_ids),
        "liquid": text(s.liquid),
        "model": f.model.name,
        "weighting": f.weighting,
        "air amount from": np.broadcast_to(
            np.asarray(res.resolved.setup.air_from, dtype=str), (s.R,)).astype(object)[idx],
        "p_vap at air reference": np.asarray(res.resolved.vapor_mode, dtype=str).astype(
            object)[idx],
        "points used": np.where(ok, inc.sum(1), 0),
        "points total": s.n_points[idx],
        "T_min [degC]": t_min,
        "T_max [degC]": t_max,
        "T_m [K]": f.T_m[idx],
        "ΔH_vap [kJ/mol]": dH / 1e3,
        "u(ΔH_vap) [kJ/mol]": u / 1e3,
        "reduced chi2": f.chi2_reduced[idx],
        "covariance scaled by chi2": f.scaled[idx],
        "covariance from": {"gls": "GLS", "sandwich": "sandwich",
                            "scatter": "scatter"}[f.cov_method],
        "u(ΔH_vap) mostly from": top_group[idx],
        "largest share of u(ΔH_vap)²": top_share[idx],
        "T_b at run pressure [degC]": res.T_b_run[idx] - T_ZERO_C,
        "u(T_b at run pressure) [K]": res.u_T_b_run[idx],
        "T_b at 101.325 kPa [degC]": res.T_b_normal[idx] - T_ZERO_C,
        "u(T_b at 101.325 kPa) [K]": res.u_T_b_normal[idx],
        "T_b bias at run pressure [K]": res.bias_T_b_run[idx],
        "T_b bias at 101.325 kPa [K]": res.bias_T_b_normal[idx],
        "u(T_b bias) [K]": res.u_bias_T_b_normal[idx],
        "T_b bias from": res.bias_from[idx],
        "T_b beyond data [K]": beyond,
        "true ΔvapH at T_m [kJ/mol]": true / 1e3,
        "u(true ΔvapH) [kJ/mol]": res.u_true_enthalpy[idx] / 1e3,
        "Δz at T_m": res.delta_z[idx],
        "published ΔvapH at T_m [kJ/mol]": pub / 1e3,
        "true ΔvapH - published [%]": 100 * (true / pub - 1),
        "ΔS_vap at T_b [J/(mol K)]": res.entropy[idx],
        "u(ΔS_vap) [J/(mol K)]": res.u_entropy[idx],
        "ΔH carried to T_b by": res.entropy_from[idx],
        "Trouton": trouton_verdict(np.where(all_ok[idx], res.entropy[idx], np.nan),
                                   res.u_entropy[idx]),
        "barometric pressure [kPa]": s.scalar["P_bar"][idx] / 1e3,
        "n_air [mmol]": res.n_air[idx] * 1e3,
        "p_vap at air reference [Pa]": res.p_ref[idx],
        "self-consistent rounds": res.self_consistent_rounds[idx],
        "measured T_b [degC]": T_boil - T_ZERO_C,
        "measured - predicted T_b [K]": T_boil - res.T_b_run[idx],
        "reference": res.resolved.compare_curve.labels()[idx],
        "reference ΔH_vap at T_m [kJ/mol]": ref / 1e3,
        "reference chord ΔH_vap [kJ/mol]": c["chord"][idx] / 1e3,
        "deviation from reference [%]": 100 * (dH / ref - 1),
        "deviation from reference [u]": (dH - ref) / u,
        "reference T_b at 101.325 kPa [degC]": c["boiling"][idx] - T_ZERO_C,
        "flags": flags,
        "flag reasons": reasons,
        "status": text(["" if e is None else str(e) for e in res.errors]),
    }
    n = len(idx)
    out = {k: (np.full(n, v, dtype=object) if isinstance(v, str) else v) for k, v in data.items()}
    if not ok.all():  # a run that could not be analysed shows what was entered, and why
        for k in _COMPUTED:
            col = np.array(out[k], dtype=float)
            col[~ok] = np.nan
            out[k] = col
    return out


#: Columns computed by the analysis (blank for runs that could not be analysed).
_COMPUTED = ("T_min [degC]", "T_max [degC]", "T_m [K]", "n_air [mmol]", "T_b beyond data [K]",
             "largest share of u(ΔH_vap)²",
             "published ΔvapH at T_m [kJ/mol]",
             "p_vap at air reference [Pa]", "reference ΔH_vap at T_m [kJ/mol]",
             "reference chord ΔH_vap [kJ/mol]", "reference T_b at 101.325 kPa [degC]",
             "measured - predicted T_b [K]")


#: Columns of :func:`results_table`, in order.
RESULT_COLUMNS = (
    "run_id", "liquid", "model", "weighting", "air amount from", "p_vap at air reference",
    "points used", "points total", "T_min [degC]", "T_max [degC]", "T_m [K]",
    "ΔH_vap [kJ/mol]", "u(ΔH_vap) [kJ/mol]", "reduced chi2", "covariance scaled by chi2",
    "covariance from", "u(ΔH_vap) mostly from", "largest share of u(ΔH_vap)²",
    "T_b at run pressure [degC]", "u(T_b at run pressure) [K]", "T_b at 101.325 kPa [degC]",
    "u(T_b at 101.325 kPa) [K]", "T_b bias at run pressure [K]", "T_b bias at 101.325 kPa [K]",
    "u(T_b bias) [K]", "T_b bias from", "T_b beyond data [K]", "true ΔvapH at T_m [kJ/mol]",
    "u(true ΔvapH) [kJ/mol]", "Δz at T_m", "published ΔvapH at T_m [kJ/mol]",
    "true ΔvapH - published [%]", "ΔS_vap at T_b [J/(mol K)]", "u(ΔS_vap) [J/(mol K)]",
    "ΔH carried to T_b by", "Trouton", "barometric pressure [kPa]", "n_air [mmol]",
    "p_vap at air reference [Pa]",
    "self-consistent rounds", "measured T_b [degC]", "measured - predicted T_b [K]",
    "reference", "reference ΔH_vap at T_m [kJ/mol]", "reference chord ΔH_vap [kJ/mol]",
    "deviation from reference [%]", "deviation from reference [u]",
    "reference T_b at 101.325 kPa [degC]", "flags", "flag reasons", "status")


def points_table(a) -> pd.DataFrame:
    """Per-point table of one Analysis: T, V, p_air, p_vap ± u, included, reason,
    residual, leverage, influence and flags."""
    f = a.fit
    dH = f.enthalpy.nominal_value
    with np.errstate(invalid="ignore", divide="ignore"):
        shift = (f.loo_enthalpy - dH) / 1000.0
        lnp = np.log(np.where(a.p_vap > 0, a.p_vap, np.nan))
    rows = [a.run.row_of(i) for i in range(a.n)]
    out = {
        "point": np.arange(a.n),
        "file row": pd.array([r if r is not None else pd.NA for r in rows], dtype="Int64"),
        "T [K]": a.T,
        "t [degC]": a.T - T_ZERO_C,
        "V [mL]": a.V * 1e6,
        "P_total [kPa]": a.P_total / 1000.0,
        "p_air [kPa]": a.p_air / 1000.0,
        "p_vap [kPa]": a.p_vap / 1000.0,
        "u(p_vap) [kPa]": a.u_p_vap / 1000.0,
        "ln(p_vap/Pa)": lnp,
        "included": a.include,
        "reason": list(a.reasons),
        "residual [Δln p]": f.residuals,
        "normalized residual": f.normalized_residuals,
        "leverage": f.leverage,
        "ΔH shift if left out [kJ/mol]": shift,
        "flags": ["; ".join(x) for x in a.flags],
    }
    if a.comparison is not None:
        out["reference deviation [%]"] = a.comparison.deviation_percent
    return pd.DataFrame(out)
