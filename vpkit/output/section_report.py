"""The report of many runs: self-contained HTML, Markdown and the summary CSV.

A renderer only: :func:`write_batch_report` formats a
:class:`vpkit.analysis.many_runs.ManyResult` it is handed (its summary table, its per-run
analyses for the figures) and never runs an analysis, so the table and the
figures cannot disagree. Numbers are rounded by :mod:`vpkit.display`.
"""

from __future__ import annotations

import base64
import datetime as _dt
import html
import io

import numpy as np

from .. import display as D
from ..fitting.models import get_model
from ..record.safewrite import (
    atomic_write_bytes,
    atomic_write_text,
    file_names,
    output_folder,
    write_table,
)
from .figures import overview_figure, section_figure
from .run_summary import AIR_TEXT, CSV_FLOAT, SAFETY_NOTE, VAPOR_TEXT, WEIGHT_TEXT, md_text

#: The report's summary table: header -> (column, its uncertainty column or None, how shown).
#: One rule (vpkit.display): a value with its u by GUM 7.2.6; a value without u to four
#: significant digits; a score or a deviation in u with one decimal and its sign.
SUMMARY_TABLE = [
    ("run", "run_id", None, "text"), ("liquid", "liquid", None, "text"),
    ("points used / total", "points used", "points total", "count"),
    ("bath [°C]", "T_min [degC]", "T_max [degC]", "range"),
    ("air amount from", "air amount from", None, "text"),
    ("ΔH_vap [kJ/mol]", "ΔH_vap [kJ/mol]", "u(ΔH_vap) [kJ/mol]", "value_u"),
    ("T_m [K]", "T_m [K]", None, "number"),
    ("deviation from reference [u]", "deviation from reference [u]", None, "signed"),
    ("ζ vs section", "ζ vs consensus", None, "signed"),
    ("signal", "signal", None, "text"),
    ("T_b at 101.325 kPa [°C]", "T_b at 101.325 kPa [degC]", "u(T_b at 101.325 kPa) [K]",
     "value_u"),
    ("T_b bias [K]", "T_b bias at 101.325 kPa [K]", "u(T_b bias) [K]", "value_u"),
    ("measured − predicted T_b [K]", "measured - predicted T_b [K]",
     "u(T_b at run pressure) [K]", "value_u"),
    ("true ΔvapH [kJ/mol]", "true ΔvapH at T_m [kJ/mol]", "u(true ΔvapH) [kJ/mol]",
     "value_u"),
    ("ΔS_vap at T_b [J/(mol K)]", "ΔS_vap at T_b [J/(mol K)]", "u(ΔS_vap) [J/(mol K)]",
     "value_u"),
    ("reduced χ²", "reduced chi2", None, "number"),
    ("u(ΔH_vap) mostly from", "u(ΔH_vap) mostly from", None, "text"),
    ("flags", "flags", None, "text"), ("status", "status", None, "text")]


def methods_paragraph(many) -> str:
    """A methods paragraph generated from the choices and results actually used."""
    c = many.choices
    s = many.summary
    ok = s[s["status"].fillna("") == ""]
    modes = sorted(set(ok["p_vap at air reference"].dropna()))
    vap = "; ".join(VAPOR_TEXT.get(m, m) for m in modes) or "not needed"
    refs = sorted(set(x for x in ok["reference"].dropna() if x))
    n_depth = sum(1 for r in many.runs.values() if r.entry("bubble_depth") is not None)
    head = ("the hydrostatic head of the bubble depth was added to the barometric pressure "
            f"for the {D.count(n_depth, 'run')} that record a depth") if c.use_head \
        else "no hydrostatic head was applied"
    n_excl = int((ok["points total"] - ok["points used"]).sum()) if len(ok) else 0
    counts = ok["air amount from"].value_counts() if len(ok) else {}
    air = "; ".join(f"{AIR_TEXT[m]} ({D.count(int(counts[m]), 'run')})"
                    for m in ("weighed", "injected", "cold") if m in counts) or "no run"
    how = (" (each run by the first method its record supports: the weighing, the injected "
           "volume, the cold reading)" if c.air_from == "auto" else "")
    sessions = len(getattr(many, "sessions", {}) or {})
    label = get_model(ok["model"].iloc[0] if len(ok) else c.model).label
    return (
        f"Vapor pressures of {D.count(len(ok), 'run')} were obtained with the trapped-bubble "
        "method "
        "by subtracting the partial pressure of the trapped air from the total pressure on the "
        "gas (Dalton's law, ideal gas). Gas volumes were the readings corrected for the volume "
        "below the zero mark, calibrated from the weighing where a run has one (the trapped "
        f"gas's own mass {'included' if c.gas_mass else 'ignored'}) and otherwise the stated "
        "scale offset; bubble lengths in a capillary were multiplied by its cross-section; "
        f"{head}. The air amount came from {air}{how}, with the vapor pressure at the "
        f"air-reference temperature {vap}."
        + (" The liquid floated on water touching the bubble, so the saturation pressure of "
           "water (IAPWS-95) was subtracted as well, at every point and at the air "
           "reference." if c.water_layer else "")
        + f" ΔH_vap was obtained from {_a(label)} {label} fit "
        f"of ln p against T by {WEIGHT_TEXT[c.weighting]}; it is the apparent value (ideal "
        "vapor, liquid volume neglected) at T_m, the mean of 1/T weighted as the fit weighs "
        "the points (within the points' range). The true ΔvapH is the apparent value times "
        "Δz = 1 + p(B − V_l)/(RT), "
        "with the second virial coefficient B from the Tsonopoulos correlation and the "
        "liquid molar volume V_l, compared with PPDS equation 12 of the VDI Heat Atlas; "
        "ΔS_vap at the normal boiling point is the true ΔvapH there over T_b. The model's "
        "extrapolation bias of T_b is the same fit made to the published curve at the run's "
        "temperatures, minus where the curve boils. Uncertainties are standard "
        "uncertainties from linear propagation of the reading, thermometer, barometer, balance "
        "and density uncertainties; the parameter covariance was scaled by the reduced χ² "
        "where χ² exceeded its 95th percentile. Reference equations: "
        f"{'; '.join(refs) if refs else 'none'}. {D.count(n_excl, 'point')} "
        f"{'was' if n_excl == 1 else 'were'} left out of the fits (by the analysts or "
        "automatically), each with the reason listed below"
        + (f"; exclusions saved in {D.count(sessions, 'session file')} were applied."
           if sessions else "."))


def _num(v):
    try:
        v = float(v)
    except (TypeError, ValueError):
        return np.nan
    return v


def _a(word: str) -> str:
    """'a' or 'an' before ``word`` (by its first letter; enough for the model labels)."""
    return "an" if word[:1].lower() in "aeiou" else "a"


def _cell(row, col, other, how) -> str:
    """One summary cell as text, by the one rounding rule."""
    v = row.get(col, np.nan)
    if how == "text":
        return "" if v is None or (isinstance(v, float) and np.isnan(v)) else str(v)
    v = _num(v)
    if not np.isfinite(v):
        return ""
    if how == "count":
        w = _num(row.get(other))
        return f"{int(v)} / {int(w)}" if np.isfinite(w) else f"{int(v)}"
    if how == "range":
        return f"{D.number(v)}–{D.number(_num(row.get(other)))}"
    if how == "signed":
        return D.signed(v, "", 1)
    if how == "value_u":
        return D.value_u(v, _num(row.get(other)))
    return D.number(v)


def _rows(summary):
    for _, row in summary.iterrows():
        yield [_cell(row, col, other, how) for _, col, other, how in SUMMARY_TABLE]


SUMMARY_COLUMNS = [head for head, *_ in SUMMARY_TABLE]


#: The report's consensus table (one row per liquid).
CONSENSUS_TABLE = [
    ("liquid", "liquid", None, "text"), ("runs in consensus / runs", "runs used", "runs", "count"),
    ("T_m [K]", "T_m [K]", None, "number"),
    ("consensus ΔH_vap [kJ/mol]", "consensus ΔH_vap [kJ/mol]", "u(consensus ΔH_vap) [kJ/mol]",
     "value_u"),
    ("method", "method", None, "text"), ("Birge ratio", "Birge ratio", None, "number"),
    ("between-run SD [kJ/mol]", "between-run SD [kJ/mol]", None, "number"),
    ("robust ΔH_vap (Algorithm A) [kJ/mol]", "robust ΔH_vap (Algorithm A) [kJ/mol]",
     None, "number"),
    ("joint fit ΔH_vap [kJ/mol]", "joint-fit ΔH_vap [kJ/mol]", "u(joint-fit ΔH_vap) [kJ/mol]",
     "value_u"),
    ("published ΔH_vap at T_m [kJ/mol]", "reference ΔH_vap at T_m [kJ/mol]", None, "number"),
    ("consensus T_b at 101.325 kPa [°C]", "consensus T_b at 101.325 kPa [degC]",
     "u(consensus T_b at 101.325 kPa) [K]", "value_u"),
    ("published T_b [°C]", "reference T_b at 101.325 kPa [degC]", None, "number")]


def _consensus_rows(cons):
    for _, row in cons.iterrows():
        yield [_cell(row, col, other, how) for _, col, other, how in CONSENSUS_TABLE]


ROUNDING_NOTE = ("Numbers are rounded by one rule: a value with its standard uncertainty to "
                 "two significant digits of the uncertainty (GUM 7.2.6), a value without one "
                 "to four significant digits, scores and deviations in u to one decimal; "
                 "summary.csv and consensus.csv keep full precision.")

CONSENSUS_SENTENCE = (
    "For each liquid with two or more analysed runs, ΔH_vap of every run was carried to the "
    "mean of the runs' T_m and the section's value taken as follows: runs with a robust "
    "|z| ≥ 3 (ISO 13528:2022 Algorithm A) were left out; of the rest, the weighted mean "
    "(Birge ratio R_B, Birge 1932) when their χ² lay below its 95th percentile, else the "
    "Paule–Mandel random-effects mean (Paule & Mandel 1982; DerSimonian–Laird, DerSimonian & "
    "Laird 1986, and the robust mean are listed beside it); runs 3 or more of the expected "
    "spread from the consensus without them were then left out one at a time. Each run's "
    "uncertainty there was evaluated at the consensus. Each run's ζ compares it with the "
    "consensus without it, using both uncertainties; |ζ| ≥ 3 is an action signal and 2 < |ζ| "
    "< 3 a warning (ISO 13528:2022). The joint fit fits one curve to every point of the "
    "runs in the consensus, each run weighted by its own covariance evaluated at that curve.")


def _png(fig, dpi=150) -> bytes:
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=dpi)
    return buf.getvalue()


def write_batch_report(many, out_dir, *, title: str = "Vapor-pressure runs",
                       max_run_figures: int = 60) -> dict:
    """Write ``report.html``, ``report.md``, ``summary.csv`` and figures for ``many``.

    Parameters
    ----------
    many : vpkit.analysis.many_runs.ManyResult
    out_dir : path
    max_run_figures : int
        One figure per run up to this many runs; beyond it, flagged runs only.

    Returns
    -------
    dict of paths, plus ``summary`` (the DataFrame) and ``failed``.
    """
    out = output_folder(out_dir)
    output_folder(out / "figures")
    summary = many.summary
    write_table(summary, out / "summary.csv", float_format=CSV_FLOAT)
    ok = summary[summary["status"].fillna("") == ""]
    over = _png(overview_figure(ok))
    atomic_write_bytes(out / "figures" / "overview.png", over)
    flagged = ok[ok["flags"] != ""]
    wanted = list(ok["run_id"]) if len(ok) <= max_run_figures else list(flagged["run_id"])
    analyses = many.analyses()
    run_figs = {rid: _png(analyses[rid].figure(width_mm=120)) for rid in wanted
                if rid in analyses}
    files = {rid: f"figures/run_{name}.png" for rid, name in zip(run_figs, file_names(run_figs))}
    for rid, png in run_figs.items():
        atomic_write_bytes(out / files[rid], png)
    not_analysed = summary[summary["status"].fillna("") != ""]
    exclusions = [(rid, i, a.reasons[i] or "no reason given", a.T[i] - 273.15)
                  for rid, a in analyses.items() for i in range(a.n) if not a.include[i]]
    methods = methods_paragraph(many)
    stamp = _dt.datetime.now(_dt.timezone.utc).strftime("%Y-%m-%d %H:%M UTC")
    cons = many.consensus
    write_table(cons, out / "consensus.csv", float_format=CSV_FLOAT)
    section_figs = {}
    liquids = [str(x) for x in cons["liquid"]]
    section_files = {liq: f"figures/section_{name}.png"
                     for liq, name in zip(liquids, file_names(liquids))}
    for _, row in cons.iterrows():
        runs = summary[(summary["section"] == row["liquid"])
                       & summary["ΔH_vap at section T_m [kJ/mol]"].astype(float).notna()]
        png = _png(section_figure(runs, row))
        section_figs[str(row["liquid"])] = png
        atomic_write_bytes(out / section_files[str(row["liquid"])], png)
    parts = _html(title, stamp, methods, summary, over, flagged, not_analysed, exclusions,
                  run_figs, cons, section_figs, many.notes)
    html_path = out / "report.html"
    atomic_write_text(html_path, "\n".join(parts))
    md_path = out / "report.md"
    atomic_write_text(md_path, _markdown(title, stamp, methods, summary, flagged, not_analysed,
                                         exclusions, files, cons, section_files,
                                         many.notes))
    return {"html": html_path, "markdown": md_path, "summary_csv": out / "summary.csv",
            "consensus_csv": out / "consensus.csv", "summary": summary,
            "consensus": cons, "failed": many.failed}


def _html(title, stamp, methods, summary, over, flagged, not_analysed, exclusions, run_figs,
          cons, section_figs, notes=()):
    e = html.escape

    def img(png: bytes, alt: str) -> str:
        return (f'<img alt="{e(alt)}" style="max-width:100%" '
                f'src="data:image/png;base64,{base64.b64encode(png).decode()}">')

    head = "".join(f"<th>{e(c)}</th>" for c in SUMMARY_COLUMNS)
    body = "".join("<tr>" + "".join(f"<td>{e(v)}</td>" for v in row) + "</tr>"
                   for row in _rows(summary))
    parts = [
        "<!DOCTYPE html><html lang='en'><head><meta charset='utf-8'>",
        f"<title>{e(title)}</title><style>{_CSS}</style></head><body>",
        f"<h1>{e(title)}</h1><p>Generated by vpkit on {e(stamp)}.</p>",
        f"<p class='safety'>{e(SAFETY_NOTE)}</p>",
        f"<h2>Methods</h2><p>{e(methods)}</p>",
        "<h2>Summary</h2>", f"<table><thead><tr>{head}</tr></thead><tbody>{body}</tbody></table>",
        f"<p><small>{e(ROUNDING_NOTE)}</small></p>",
        "<h2>Overview</h2>", img(over, "ΔH_vap of every run against the reference"),
        "<h2>Section consensus</h2>",
    ]
    if len(cons):
        chead = "".join(f"<th>{e(c)}</th>" for c, *_ in CONSENSUS_TABLE)
        cbody = "".join("<tr>" + "".join(f"<td>{e(v)}</td>" for v in row) + "</tr>"
                        for row in _consensus_rows(cons))
        parts += [f"<p>{e(CONSENSUS_SENTENCE)}</p>",
                  f"<table><thead><tr>{chead}</tr></thead><tbody>{cbody}</tbody></table>",
                  "<p><small>consensus.csv holds every estimator with full precision."
                  "</small></p>"]
        parts += [f"<h3>{e(liq)}</h3>" + img(png, f"runs of {liq} against the consensus")
                  for liq, png in section_figs.items()]
    else:
        parts.append("<p>No liquid has two or more analysed runs.</p>")
    parts += [
        "<h2>Runs that need a second look</h2>",
    ]
    if len(flagged):
        parts.append("<ul>" + "".join(
            f"<li><b>{e(str(r['run_id']))}</b> ({e(str(r['liquid']))}): "
            f"{e(str(r['flag reasons']))}</li>" for _, r in flagged.iterrows()) + "</ul>")
    else:
        parts.append("<p>None.</p>")
    if len(not_analysed):
        parts.append("<h2>Runs not analysed</h2><ul>" + "".join(
            f"<li>{e(str(r['run_id']))}: {e(str(r['status']))}</li>"
            for _, r in not_analysed.iterrows()) + "</ul>")
    if notes:
        parts.append("<h2>Reading notes</h2><ul>" + "".join(f"<li>{e(n)}</li>" for n in notes)
                     + "</ul>")
    parts.append("<h2>Excluded points</h2>")
    parts.append("<ul>" + "".join(f"<li>{e(rid)}, point {i} ({D.number(t, 'degC')}): {e(why)}</li>"
                                  for rid, i, why, t in exclusions) + "</ul>"
                 if exclusions else "<p>None.</p>")
    parts.append("<h2>Runs</h2>")
    for rid, png in run_figs.items():
        parts.append(f"<h3>{e(rid)}</h3>" + img(png, f"run {rid}"))
    parts.append("</body></html>")
    return parts


def _markdown(title, stamp, methods, summary, flagged, not_analysed, exclusions, run_files,
              cons, section_files, notes=()):
    """The report in Markdown; figures linked by the file names written
    (``run_files``, ``section_files``: run id or liquid to path)."""
    md = [f"# {md_text(title)}", "", f"Generated by vpkit on {stamp}.", "",
          f"> {SAFETY_NOTE}", "", "## Methods", "", md_text(methods), "", "## Summary", ""]
    md.append("| " + " | ".join(md_text(c) for c in SUMMARY_COLUMNS) + " |")
    md.append("|" + "---|" * len(SUMMARY_COLUMNS))
    md += ["| " + " | ".join(md_text(v) for v in row) + " |" for row in _rows(summary)]
    md += ["", md_text(ROUNDING_NOTE), "", "## Overview", "", "![overview](figures/overview.png)",
           "", "## Section consensus", ""]
    if len(cons):
        md += [md_text(CONSENSUS_SENTENCE), ""]
        md.append("| " + " | ".join(md_text(c) for c, *_ in CONSENSUS_TABLE) + " |")
        md.append("|" + "---|" * len(CONSENSUS_TABLE))
        md += ["| " + " | ".join(md_text(v) for v in row) + " |"
               for row in _consensus_rows(cons)]
        md += ["", "consensus.csv holds every estimator with full precision.", ""]
        for liq, path in section_files.items():
            md += [f"### {md_text(liq)}", "", f"![{md_text(liq)}]({path})", ""]
    else:
        md += ["No liquid has two or more analysed runs.", ""]
    md += ["## Runs that need a second look", ""]
    md += [f"- **{md_text(r['run_id'])}** ({md_text(r['liquid'])}): {md_text(r['flag reasons'])}"
           for _, r in flagged.iterrows()] or ["None."]
    if len(not_analysed):
        md += ["", "## Runs not analysed", ""]
        md += [f"- {md_text(r['run_id'])}: {md_text(r['status'])}"
               for _, r in not_analysed.iterrows()]
    if notes:
        md += ["", "## Reading notes", ""] + [f"- {md_text(n)}" for n in notes]
    md += ["", "## Excluded points", ""]
    md += [f"- {md_text(rid)}, point {i} ({D.number(t, 'degC')}): {md_text(why)}"
           for rid, i, why, t in exclusions] or ["None."]
    md += ["", "## Runs", ""]
    for rid, path in run_files.items():
        md += [f"### {md_text(rid)}", "", f"![{md_text(rid)}]({path})", ""]
    return "\n".join(md) + "\n"


_CSS = ("body{font-family:sans-serif;max-width:1100px;margin:2em auto;padding:0 1em}"
        "table{border-collapse:collapse;font-size:0.85em}"
        "td,th{border:1px solid #ccc;padding:2px 6px;text-align:right}"
        ".safety{border-left:4px solid #c60;padding:0.5em 1em;background:#fff6ec}")
