"""The explorer's readouts: the numbers it shows (read off the results table) as HTML.

Nothing here computes physics: the numbers come from
:func:`vpkit.analysis.result_tables.results_columns` (the same numbers every
report shows) and :meth:`Analysis.boiling_point`; text comes from
:mod:`vpkit.display` (the one rounding rule).
"""

from __future__ import annotations

import html
from collections.abc import Callable

import numpy as np

from .. import display as D
from ..analysis.result_tables import results_columns
from ..constants import T_ZERO_C
from ..errors import VpkitError
from ..output.run_summary import AIR_TEXT, VAPOR_TEXT, bias_text
from ..record.cells import parse_number
from ..units import to_si

RED = "<span style='color:#a00'>{}</span>"


def readout_numbers(a, previous_enthalpy: float | None) -> dict:
    """The numbers the readout area shows, in SI, from the analysis ``a``'s results row
    (converted back to SI where the table holds display units)."""
    row = {k: v[0] for k, v in results_columns(a.result, [a.index]).items()}
    kelvin = lambda c: float(row[c]) + T_ZERO_C  # noqa: E731
    out = {"enthalpy": float(row["ΔH_vap [kJ/mol]"]) * 1e3,
           "u_enthalpy": float(row["u(ΔH_vap) [kJ/mol]"]) * 1e3, "T_m": float(row["T_m [K]"]),
           "chi2_reduced": float(row["reduced chi2"]),
           "T_b_run": kelvin("T_b at run pressure [degC]"),
           "u_T_b_run": float(row["u(T_b at run pressure) [K]"]),
           "T_b_normal": kelvin("T_b at 101.325 kPa [degC]"),
           "u_T_b_normal": float(row["u(T_b at 101.325 kPa) [K]"]),
           "entropy": float(row["ΔS_vap at T_b [J/(mol K)]"]),
           "u_entropy": float(row["u(ΔS_vap) [J/(mol K)]"]), "trouton": row["Trouton"],
           "true_enthalpy": float(row["true ΔvapH at T_m [kJ/mol]"]) * 1e3,
           "u_true_enthalpy": float(row["u(true ΔvapH) [kJ/mol]"]) * 1e3,
           "extrapolation": bias_text(row),
           "shift": (None if previous_enthalpy is None
                     else float(row["ΔH_vap [kJ/mol]"]) * 1e3 - previous_enthalpy)}
    if np.isfinite(row["measured T_b [degC]"]):
        out["T_b_measured"] = kelvin("measured T_b [degC]")
        out["T_b_gap"] = float(row["measured - predicted T_b [K]"])
    if row["reference"]:
        out.update(reference=row["reference"],
                   reference_enthalpy=float(row["reference ΔH_vap at T_m [kJ/mol]"]) * 1e3,
                   deviation_percent=float(row["deviation from reference [%]"]),
                   deviation_u=float(row["deviation from reference [u]"]))
    return out


def readouts_html(r: dict, a, fmt_t: Callable, fmt_p: Callable, temperature_unit: str) -> str:
    """The readout area for the numbers ``r`` of :func:`readout_numbers`."""
    lines = [f"<b>ΔH_vap = {D.value_u(r['enthalpy'] / 1e3, r['u_enthalpy'] / 1e3, 'kJ/mol')}"
             f"</b> at T_m = {fmt_t(r['T_m'])}"]
    if r["shift"] is not None:
        lines[0] += f" &nbsp; (shift from previous: {D.signed(r['shift'] / 1e3, 'kJ/mol', 2)})"
    if np.isfinite(r["true_enthalpy"]):
        lines[0] += (" &nbsp; true ΔvapH = " + D.value_u(r["true_enthalpy"] / 1e3,
                                                       r["u_true_enthalpy"] / 1e3, "kJ/mol"))
    lines.append(f"air amount from {html.escape(AIR_TEXT[a.air_method])}; p_vap at the air "
                 f"reference {html.escape(VAPOR_TEXT.get(a.vapor_mode, 'not needed'))}")
    lines.append(html.escape(r["trouton"]))
    lines.append(f"boiling point at the run's pressure ({fmt_p(a.si.P_bar)}): "
                 f"{fmt_t(r['T_b_run'], r['u_T_b_run'])}; at 101.325 kPa: "
                 f"{fmt_t(r['T_b_normal'], r['u_T_b_normal'])}")
    lines.append(html.escape(r["extrapolation"]))
    if "T_b_measured" in r:
        dT = D.quantity(r["T_b_gap"], None, temperature_unit, "temperature", delta=True)
        lines.append(f"measured boiling point {fmt_t(r['T_b_measured'])}; measured − "
                     f"predicted = {dT}")
    lines.append(f"reduced χ² = {D.number(r['chi2_reduced'], digits=3)}"
                 + (" (covariance scaled by it)" if a.fit.scaled else ""))
    if "reference_enthalpy" in r:
        lines.append(f"{html.escape(r['reference'])}: ΔH_vap at T_m = "
                     f"{D.number(r['reference_enthalpy'] / 1e3, 'kJ/mol')}; deviation "
                     f"{D.signed(r['deviation_percent'], '%')} "
                     f"({D.signed(r['deviation_u'], 'u')})")
    return "<br>".join(lines)


def to_pascal(value: float, unit: str) -> float:
    return float(to_si(float(value), unit, "pressure"))


def other_boiling_point_html(a, typed: str, unit: str, fmt_t: Callable) -> str:
    """The boiling point at the pressure typed (in ``unit``), or why there is none, with
    the distance beyond the data when it is an extrapolation."""
    try:
        value = parse_number(typed, column="pressure")
        if value <= 0:
            return RED.format(html.escape(f"the pressure must be positive, got {value:g} "
                                          f"{unit}"))
        Tb = a.boiling_point(to_pascal(value, unit))
    except (VpkitError, ValueError) as exc:
        return RED.format(html.escape(str(exc)))
    out = f"→ {fmt_t(Tb.nominal_value, Tb.std_dev)}"
    T = a.T[a.include]
    lim = max(a.result.choices.limits["extrapolation_K"], float(T.max() - T.min()))
    beyond = max(Tb.nominal_value - T.max(), T.min() - Tb.nominal_value)
    if beyond > lim:
        out += RED.format(html.escape(
            f" (an extrapolation {beyond:.0f} K beyond the points used, more than "
            f"{lim:.0f} K: the model's curvature decides it, not the data)"))
    return out


def budget_html(a) -> str:
    """The uncertainty budget of ΔH_vap as bars (shares of u²); empty without one."""
    try:
        b = a.budget().drop(index="total")
    except (ValueError, KeyError):
        return ""
    b = b.sort_values(("ΔH_vap", "share"), ascending=False)
    rows = []
    for g, row in b.iterrows():
        share = row[("ΔH_vap", "share")]
        if share < 0.005:
            continue
        rows.append(
            f"<tr><td>{html.escape(str(g))}</td><td><div style='background:#4a6fa5;"
            f"height:10px;width:{200 * share:.0f}px'></div></td>"
            f"<td>{D.uncertainty(100 * share, '%')}</td><td>"
            f"{D.uncertainty(row[('ΔH_vap', 'u from it')], 'kJ/mol')}</td></tr>")
    return ("<b>What limits u(ΔH_vap)</b> (share of u²; the rest under 0.5 %)<table>"
            + "".join(rows) + "</table>")
