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

    text = html.escape(str(text), quote=False)
    return text.replace("|", "\\|").replace("\n", " ").replace("`", "'")


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


# ---------------------------------------------------------------------------
# reports for a set of runs
# ---------------------------------------------------------------------------

SUMMARY_COLUMNS = ["run_id", "liquid", "points used", "points total", "T_min [degC]",
                   "T_max [degC]", "ΔH_vap [kJ/mol]", "u(ΔH_vap) [kJ/mol]",
                   "reference ΔH_vap [kJ/mol]", "deviation [u]", "T_b at 101.325 kPa [degC]",
                   "u(T_b at 101.325 kPa) [K]", "measured - predicted T_b [K]",
                   "ΔS_vap [J/(mol K)]", "reduced chi2", "flags"]

_AIR_TEXT = {
    "weighed": "the gas volume weighed at room temperature",
    "cold": "the coldest reading of each run (a cold reference)",
    "injected": "the injected air volume at room conditions",
}
_WEIGHT_TEXT = {
    "gls": "generalized least squares with the full covariance of ln p (the shared "
           "barometer reading, weighing and air amount correlate the points), thermometer "
           "errors folded in by effective variance",
    "weighted": "weighted least squares (diagonal of the covariance of ln p, thermometer "
                "errors by effective variance)",
    "ordinary": "ordinary (unweighted) least squares",
}


def methods_paragraph(options: dict, runs: dict, summary) -> str:
    """A methods paragraph generated from the choices actually made."""
    vap = options.get("vapor_at_air_reference", "auto")
    vap_text = {"auto": "taken from the published equation of the liquid (Poling et al. "
                        "2001, Appendix A)", "reference": "taken from the published equation "
                "of the liquid (Poling et al. 2001, Appendix A)",
                "neglect": "neglected"}.get(vap, vap)
    n_depth = sum(1 for r in runs.values() if r.entry("bubble_depth") is not None)
    head = ("the hydrostatic head of the bubble depth was added to the barometric pressure "
            f"for the {n_depth} run(s) that record a depth") if options.get("use_head", True) \
        else "no hydrostatic head was applied"
    n_excl = sum(int((~np.asarray(r.include)).sum()) for r in runs.values())
    text = (
        f"Vapor pressures of {len(summary)} run(s) were obtained with the trapped-bubble method "
        "by subtracting the partial pressure of the trapped air from the total pressure on the "
        "gas (Dalton's law, ideal gas). Gas volumes were corrected for the volume below the "
        "zero mark, calibrated from the weighing (the trapped gas's own mass "
        f"{'included' if options.get('gas_mass', True) else 'ignored'}); {head}. The air "
        f"amount came from {_AIR_TEXT[options.get('air_from', 'weighed')]}, with the vapor "
        f"pressure at the air-reference temperature {vap_text}. ΔH_vap was obtained from a "
        "Clausius–Clapeyron fit of ln p against 1/T by "
        f"{_WEIGHT_TEXT[options.get('weighting', 'gls')]}; it is the apparent value (ideal "
        "vapor, liquid volume neglected) at T_m = 1/mean(1/T). Uncertainties are standard "
        "uncertainties from linear propagation of the reading, thermometer, barometer, balance "
        "and density uncertainties; the parameter covariance was scaled by the reduced χ² "
        "where χ² exceeded its 95th percentile. "
        f"{n_excl} point(s) were excluded by the analysts, each with the reason listed below.")
    return text


def _png(fig, dpi=150) -> bytes:
    import io

    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=dpi)
    return buf.getvalue()


def write_batch_report(source, out_dir, *, max_run_figures: int = 60, **options) -> dict:
    """Self-contained HTML and a Markdown report for a folder or long table of runs.

    Parameters
    ----------
    source : path
        A folder of run files or a long-table CSV (see :mod:`vpkit.batch`).
    out_dir : path
        Where ``report.html``, ``report.md``, ``summary.csv`` and the Markdown's
        figures go.
    max_run_figures : int
        One figure per run up to this many runs; beyond it, flagged runs only.
    **options
        Choices passed to :func:`vpkit.batch.analyze_table` and, for the per-run
        figures, to :func:`vpkit.analyze`.

    Returns
    -------
    dict of paths, plus ``summary`` (the DataFrame) and ``failed``.
    """
    import base64
    import datetime as _dt
    import html

    from .analysis import analyze
    from .batch import analyze_table, read_runs, table_to_runs
    from .errors import VpkitError
    from .plots import overview_figure

    out = Path(out_dir)
    (out / "figures").mkdir(parents=True, exist_ok=True)
    load = read_runs(source)
    summary = analyze_table(load.table, **options)
    runs = dict(load.runs) or table_to_runs(load.table)
    summary.to_csv(out / "summary.csv", index=False)
    over = _png(overview_figure(summary))
    (out / "figures" / "overview.png").write_bytes(over)
    flagged = summary[summary["flags"] != ""]
    wanted = list(summary["run_id"]) if len(summary) <= max_run_figures \
        else list(flagged["run_id"])
    run_figs: dict[str, bytes] = {}
    run_errors: dict[str, str] = {}
    single = {k: v for k, v in options.items() if k in ("weighting", "air_from",
                                                        "vapor_at_air_reference", "use_head",
                                                        "gas_mass")}
    for rid in wanted:
        try:
            a = analyze(runs[rid], reference=options.get("reference", "antoine"), warn=False,
                        **single)
            run_figs[rid] = _png(a.figure(width_mm=120))
        except VpkitError as exc:
            run_errors[rid] = str(exc)
    for rid, png in run_figs.items():
        (out / "figures" / f"{_safe(rid)}.png").write_bytes(png)
    methods = methods_paragraph(options, runs, summary)
    exclusions = [(rid, i, r.reason[i] or "no reason given", r.bath_temperature[i],
                   r.units[0]) for rid, r in runs.items() for i in range(r.n_points)
                  if not r.include[i]]
    table = summary[SUMMARY_COLUMNS]
    stamp = _dt.datetime.now(_dt.timezone.utc).strftime("%Y-%m-%d %H:%M UTC")
    title = f"Vapor-pressure runs: {Path(str(source)).name}"

    # -- HTML (self-contained: figures embedded, no external assets) --------------
    e = html.escape

    def img(png: bytes, alt: str) -> str:
        return (f'<img alt="{e(alt)}" style="max-width:100%" '
                f'src="data:image/png;base64,{base64.b64encode(png).decode()}">')

    def html_table(df) -> str:
        head = "".join(f"<th>{e(str(c))}</th>" for c in df.columns)
        rows = []
        for _, row in df.iterrows():
            cells = []
            for v in row:
                if isinstance(v, float):
                    cells.append(f"<td>{'' if np.isnan(v) else f'{v:.4g}'}</td>")
                else:
                    cells.append(f"<td>{e(str(v))}</td>")
            rows.append("<tr>" + "".join(cells) + "</tr>")
        return f"<table><thead><tr>{head}</tr></thead><tbody>{''.join(rows)}</tbody></table>"

    parts = [
        "<!DOCTYPE html><html lang='en'><head><meta charset='utf-8'>",
        f"<title>{e(title)}</title><style>{_CSS}</style></head><body>",
        f"<h1>{e(title)}</h1><p>Generated by vpkit on {e(stamp)}.</p>",
        f"<p class='safety'>{e(SAFETY_NOTE)}</p>",
        f"<h2>Methods</h2><p>{e(methods)}</p>",
        "<h2>Summary</h2>", html_table(table),
        "<h2>Overview</h2>", img(over, "ΔH_vap of every run against the reference"),
        "<h2>Runs that need a second look</h2>",
    ]
    if len(flagged):
        parts.append("<ul>" + "".join(
            f"<li><b>{e(str(r['run_id']))}</b> ({e(str(r['liquid']))}): "
            f"{e(str(r['flag reasons']))}</li>" for _, r in flagged.iterrows()) + "</ul>")
    else:
        parts.append("<p>None.</p>")
    if load.failed:
        parts.append("<h2>Runs that could not be read</h2><ul>" + "".join(
            f"<li>{e(src)}: {e(msg)}</li>" for src, msg in load.failed) + "</ul>")
    if load.notes:
        parts.append("<ul>" + "".join(f"<li>{e(n)}</li>" for n in load.notes) + "</ul>")
    parts.append("<h2>Excluded points</h2>")
    parts.append("<ul>" + "".join(f"<li>{e(rid)}, point {i} ({t:g} {e(u)}): {e(why)}</li>"
                                  for rid, i, why, t, u in exclusions) + "</ul>"
                 if exclusions else "<p>None.</p>")
    parts.append("<h2>Runs</h2>")
    for rid, png in run_figs.items():
        parts.append(f"<h3>{e(rid)}</h3>" + img(png, f"run {rid}"))
    for rid, msg in run_errors.items():
        parts.append(f"<h3>{e(rid)}</h3><p>no figure: {e(msg)}</p>")
    parts.append("</body></html>")
    html_path = out / "report.html"
    html_path.write_text("\n".join(parts), encoding="utf-8")

    # -- Markdown ---------------------------------------------------------------
    md = [f"# {md_text(title)}", "", f"Generated by vpkit on {stamp}.", "",
          f"> {SAFETY_NOTE}", "", "## Methods", "", md_text(methods), "", "## Summary", ""]
    md.append("| " + " | ".join(md_text(c) for c in table.columns) + " |")
    md.append("|" + "---|" * len(table.columns))
    for _, row in table.iterrows():
        md.append("| " + " | ".join(
            ("" if np.isnan(v) else f"{v:.4g}") if isinstance(v, float) else md_text(v)
            for v in row) + " |")
    md += ["", "## Overview", "", "![overview](figures/overview.png)", "",
           "## Runs that need a second look", ""]
    md += [f"- **{md_text(r['run_id'])}** ({md_text(r['liquid'])}): {md_text(r['flag reasons'])}"
           for _, r in flagged.iterrows()] or ["None."]
    if load.failed:
        md += ["", "## Runs that could not be read", ""]
        md += [f"- {md_text(src)}: {md_text(msg)}" for src, msg in load.failed]
    md += ["", "## Excluded points", ""]
    md += [f"- {md_text(rid)}, point {i} ({t:g} {md_text(u)}): {md_text(why)}"
           for rid, i, why, t, u in exclusions] or ["None."]
    md += ["", "## Runs", ""]
    for rid in run_figs:
        md += [f"### {md_text(rid)}", "", f"![{md_text(rid)}](figures/{_safe(rid)}.png)", ""]
    md_path = out / "report.md"
    md_path.write_text("\n".join(md) + "\n", encoding="utf-8")
    return {"html": html_path, "markdown": md_path, "summary_csv": out / "summary.csv",
            "summary": summary, "failed": load.failed}


_CSS = ("body{font-family:sans-serif;max-width:1100px;margin:2em auto;padding:0 1em}"
        "table{border-collapse:collapse;font-size:0.85em}"
        "td,th{border:1px solid #ccc;padding:2px 6px;text-align:right}"
        ".safety{border-left:4px solid #c60;padding:0.5em 1em;background:#fff6ec}")


def _safe(name: str) -> str:
    """A file-name-safe version of a run id."""
    import re

    return re.sub(r"[^A-Za-z0-9._-]+", "_", str(name))[:80] or "run"
