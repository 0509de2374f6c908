"""Tables and text for one analysed run: pandas tables, Markdown, files.

Unit conversion for display happens here (kJ/mol, kPa, degC); the numbers
come from :class:`vpkit.analysis.Analysis` in SI.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd

from .constants import P_STANDARD, T_ZERO_C

SAFETY_NOTE = (
    "Safety: flammable solvents must be heated on a hot plate or in a water bath, never "
    "near a flame, in a fume hood or a well-ventilated place. Hot baths and hot glass "
    "burn, and glass under thermal stress can crack: wear eye protection. Local rules, "
    "safety data sheets and the supervising staff take precedence over this tool."
)


def points_table(a) -> pd.DataFrame:
    """Per-point table: T, V, p_air, p_vap ± u, included, reason, residual, influence."""
    f = a.fit
    dH = f.enthalpy.nominal_value
    with np.errstate(invalid="ignore"):
        shift = (f.loo_enthalpy - dH) / 1000.0
    return pd.DataFrame({
        "point": np.arange(len(a.T)),
        "T [K]": a.T,
        "t [degC]": a.T - T_ZERO_C,
        "V [mL]": a.V * 1e6,
        "P_total [kPa]": a.P_total / 1000.0,
        "p_air [kPa]": a.p_air / 1000.0,
        "p_vap [kPa]": a.p_vap / 1000.0,
        "u(p_vap) [kPa]": a.u_p_vap / 1000.0,
        "ln(p_vap/Pa)": np.log(np.where(a.p_vap > 0, a.p_vap, np.nan)),
        "included": a.include,
        "reason": list(a.reasons),
        "residual [ln p]": f.residuals,
        "normalized residual": f.normalized_residuals,
        "leverage": f.leverage,
        "ΔH shift if left out [kJ/mol]": shift,
        "flags": ["; ".join(x) for x in a.flags],
        **({"reference deviation [%]": a.comparison.deviation_percent}
           if a.comparison is not None else {}),
    })


def results_table(a) -> pd.DataFrame:
    """One row of results with units in the column names."""
    f = a.fit
    dH = f.enthalpy
    Tb_n = f.boiling_point(P_STANDARD)
    Tb_run = f.boiling_point(a.si.P_bar)
    dS = f.entropy_at_boiling()
    row = {
        "liquid": a.si.liquid,
        "model": f.model.name,
        "weighting": f.weighting,
        "air amount from": a.options["air_from"],
        "p_vap at air reference": a.options["vapor_at_air_reference"],
        "points used": int(a.include.sum()),
        "points total": len(a.T),
        "T_min [degC]": float(a.T[a.include].min() - T_ZERO_C),
        "T_max [degC]": float(a.T[a.include].max() - T_ZERO_C),
        "T_m [K]": f.T_m,
        "ΔH_vap [kJ/mol]": dH.nominal_value / 1000,
        "u(ΔH_vap) [kJ/mol]": dH.std_dev / 1000,
        "reduced chi2": f.chi2_reduced,
        "covariance scaled by chi2": f.scaled,
        "T_b at run pressure [degC]": Tb_run.nominal_value - T_ZERO_C,
        "u(T_b at run pressure) [K]": Tb_run.std_dev,
        "T_b at 101.325 kPa [degC]": Tb_n.nominal_value - T_ZERO_C,
        "u(T_b at 101.325 kPa) [K]": Tb_n.std_dev,
        "ΔS_vap at T_b [J/(mol K)]": dS.nominal_value,
        "u(ΔS_vap) [J/(mol K)]": dS.std_dev,
        "barometric pressure [kPa]": a.si.P_bar / 1000,
        "n_air [mmol]": a.n_air * 1000,
    }
    mb = a.measured_boiling_point
    if mb is not None:
        row["measured T_b [degC]"] = mb.nominal_value - T_ZERO_C
        row["measured - predicted T_b [K]"] = mb.nominal_value - Tb_run.nominal_value
    c = a.comparison
    if c is not None:
        row["reference"] = c.curve.label
        row["reference ΔH_vap at T_m [kJ/mol]"] = c.enthalpy / 1000
        row["reference chord ΔH_vap [kJ/mol]"] = c.enthalpy_chord / 1000
        row["deviation from reference [%]"] = 100 * (dH.nominal_value / c.enthalpy - 1)
        row["deviation from reference [u]"] = (dH.nominal_value - c.enthalpy) / dH.std_dev
        row["reference T_b at 101.325 kPa [degC]"] = c.normal_boiling_point - T_ZERO_C
    return pd.DataFrame([row])


def md_text(text) -> str:
    """User text made safe for Markdown and HTML: no markup, no table breaks."""
    import html

    return html.escape(str(text)).replace("|", "\\|").replace("\n", " ").replace("`", "'")


def _fmt(x, digits=2):
    return f"{x:.{digits}f}"


def summary_markdown(a, *, shifts: bool = True) -> str:
    """A Markdown summary: headline numbers, choices, exclusions, warnings, safety.

    ``shifts`` adds how far the other correction choices move ΔH_vap (it
    re-analyses the run a few times).
    """
    f = a.fit
    r = results_table(a).iloc[0]
    lines = [f"# Vapor-pressure analysis: {md_text(a.si.liquid)}", ""]
    if a.run.source:
        lines += [f"Run file: {md_text(a.run.source)}", ""]
    lines += [
        "| quantity | value |",
        "|---|---|",
        f"| ΔH_vap at T_m = {f.T_m:.1f} K | {r['ΔH_vap [kJ/mol]']:.2f} ± "
        f"{r['u(ΔH_vap) [kJ/mol]']:.2f} kJ/mol (standard uncertainty) |",
        f"| boiling point at run pressure ({a.si.P_bar / 1000:.2f} kPa) | "
        f"{_fmt(r['T_b at run pressure [degC]'])} ± {_fmt(r['u(T_b at run pressure) [K]'])} °C |",
        f"| normal boiling point (101.325 kPa) | {_fmt(r['T_b at 101.325 kPa [degC]'])} ± "
        f"{_fmt(r['u(T_b at 101.325 kPa) [K]'])} °C |",
        f"| ΔS_vap at T_b | {r['ΔS_vap at T_b [J/(mol K)]']:.1f} ± "
        f"{r['u(ΔS_vap) [J/(mol K)]']:.1f} J/(mol K) |",
        f"| reduced χ² | {f.chi2_reduced:.3g}"
        f"{' (covariance scaled by it)' if f.scaled else ''} |",
        f"| points used | {int(a.include.sum())} of {len(a.T)} |",
    ]
    if "measured T_b [degC]" in r:
        lines.append(f"| measured boiling point | {_fmt(r['measured T_b [degC]'])} °C "
                     f"(measured − predicted: {r['measured - predicted T_b [K]']:+.2f} K) |")
    if a.comparison is not None:
        lines.append(f"| {r['reference']} ΔH_vap at T_m | "
                     f"{r['reference ΔH_vap at T_m [kJ/mol]']:.2f} kJ/mol "
                     f"(deviation {r['deviation from reference [%]']:+.1f} %, "
                     f"{r['deviation from reference [u]']:+.1f} u) |")
        lines.append(f"| reference normal boiling point | "
                     f"{_fmt(r['reference T_b at 101.325 kPa [degC]'])} °C |")
    lines += ["", f"Trouton's rule: {f.trouton_verdict()}.", "", "## Choices", "",
              f"- model: {f.model.label}; weighting: {f.weighting}",
              f"- air amount from: {a.options['air_from']}; p_vap at the air reference: "
              f"{a.options['vapor_at_air_reference']}",
              f"- hydrostatic head: {'on' if a.options['use_head'] and a.si.depth else 'off'}; "
              f"trapped-gas mass in the weighing: {'on' if a.options['gas_mass'] else 'off'}",
              "- ΔH_vap is the apparent (Clausius–Clapeyron) value: ideal vapor, liquid volume "
              "neglected; the reference value is computed the same way from its curve."]
    excluded = [i for i in range(len(a.T)) if not a.include[i]]
    if excluded:
        lines += ["", "## Excluded points", ""]
        for i in excluded:
            why = md_text(a.reasons[i]) or "no reason given"
            lines.append(f"- point {i} ({a.T[i] - T_ZERO_C:.2f} °C): {why}")
    if shifts:
        moves = a.choice_shifts()
        if moves:
            lines += ["", "## How other choices would move ΔH_vap", "",
                      "| choice | ΔH_vap shift [kJ/mol] |", "|---|---|"]
            lines += [f"| {k} | {v / 1000:+.2f} |" for k, v in moves.items()]
    if a.warnings:
        lines += ["", "## Warnings", ""] + [f"- {md_text(w)}" for w in a.warnings]
    lines += ["", "> " + SAFETY_NOTE, ""]
    return "\n".join(lines)


def write_outputs(a, out_dir, *, width_mm: float = 85.0, stem: str | None = None,
                  dpi: int = 300, formats: tuple[str, ...] = ("png", "svg")) -> dict:
    """Write the figure (``formats`` among png, svg, pdf; PNG at ``dpi``), the
    tables (CSV) and the summary (Markdown) into ``out_dir``; returns the paths."""
    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    stem = stem or (Path(a.run.source).stem if a.run.source else "run")
    fig = a.figure(width_mm=width_mm)
    paths = {}
    for fmt in formats:
        if fmt not in ("png", "svg", "pdf"):
            raise ValueError(f"figure format must be png, svg or pdf, got {fmt!r}")
        paths[fmt] = out / f"{stem}.{fmt}"
        fig.savefig(paths[fmt], dpi=dpi if fmt == "png" else "figure")
    paths["points"] = out / f"{stem}_points.csv"
    paths["results"] = out / f"{stem}_results.csv"
    paths["summary"] = out / f"{stem}_summary.md"
    a.points().to_csv(paths["points"], index=False)
    a.results().to_csv(paths["results"], index=False)
    paths["summary"].write_text(a.summary(), encoding="utf-8")
    return paths
