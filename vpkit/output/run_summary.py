"""Text and files for one analysed run: the Markdown summary and the output files.

Renderers only: every function takes results it is handed (an
:class:`~vpkit.Analysis`) and never runs an analysis. Numbers are rounded by
the one rule of :mod:`vpkit.display`; tables keep full precision in CSV.
"""

from __future__ import annotations

import html
import io

from .. import display as D
from ..record.safewrite import atomic_write_bytes, atomic_write_text, output_folder, write_table

#: CSV numbers: 15 significant digits (all a double holds, without the 17th-digit noise
#: of unit conversions, e.g. 29.6 rather than 29.600000000000023).
CSV_FLOAT = "%.15g"

SAFETY_NOTE = (
    "Safety: flammable solvents must be heated on a hot plate or in a water bath, never "
    "near a flame, in a fume hood or a well-ventilated place. Hot baths and hot glass "
    "burn, and glass under thermal stress can crack: wear eye protection. Local rules, "
    "safety data sheets and the supervising staff take precedence over this tool."
)

AIR_TEXT = {
    "weighed": "the gas volume weighed at room temperature",
    "cold": "the coldest reading (a cold reference, set aside from the fit)",
    "injected": "the injected air volume at room conditions",
}
VAPOR_TEXT = {"reference": "taken from the published equation of the liquid",
              "fit": "solved self-consistently with the fitted curve",
              "neglect": "neglected", "none": "not needed (injected air)"}
WEIGHT_TEXT = {
    "gls": "generalized least squares with the full covariance of ln p (the shared "
           "barometer reading, weighing and air amount correlate the points), thermometer "
           "errors folded in by effective variance",
    "weighted": "weighted least squares (diagonal of the covariance of ln p, thermometer "
                "errors by effective variance), its uncertainty from the sandwich covariance "
                "with the full covariance of ln p",
    "ordinary": "ordinary (unweighted) least squares, its uncertainty from the sandwich "
                "covariance with the full covariance of ln p",
}


def md_text(text) -> str:
    """User text made safe for Markdown and HTML: no markup, no links, no table breaks
    (HTML escaped; backslash, brackets, emphasis marks and bars backslash-escaped)."""
    text = html.escape(str(text), quote=False).replace("\\", "\\\\")
    for ch in "[]*_|":
        text = text.replace(ch, "\\" + ch)
    return text.replace("\n", " ").replace("\r", " ").replace("`", "'")


def bias_text(r) -> str:
    """How far the normal boiling point lies beyond the data, and the model's bias there."""
    beyond = r["T_b beyond data [K]"]
    if beyond != beyond:  # NaN
        return "not computed"
    where = (f"T_b lies {D.number(beyond, 'K')} beyond the highest point used"
             if beyond > 0 else "T_b lies within the data")
    if not r["T_b bias from"]:
        return where + "; the model's bias there is not estimated"
    return (where + "; the model's own bias there (fitted − true) is "
            f"{D.value_u(r['T_b bias at 101.325 kPa [K]'], r['u(T_b bias) [K]'], 'K')} "
            f"(from the {md_text(r['T_b bias from'])}), against u(T_b) = "
            f"{D.uncertainty(r['u(T_b at 101.325 kPa) [K]'], 'K')}")


def true_text(r) -> str:
    """The true ΔvapH with Δz and the published value it is compared with."""
    v, u = r["true ΔvapH at T_m [kJ/mol]"], r["u(true ΔvapH) [kJ/mol]"]
    if v != v:
        return "not computed (no virial data bundled for this liquid)"
    out = f"{D.value_u(v, u, 'kJ/mol')} (Δz = {D.number(r['Δz at T_m'], digits=4)})"
    pub = r["published ΔvapH at T_m [kJ/mol]"]
    if pub == pub:
        out += (f"; PPDS eq. 12: {D.number(pub, 'kJ/mol')} "
                f"({D.signed(r['true ΔvapH - published [%]'], '%')})")
    return out


def budget_markdown(a) -> list[str]:
    """The uncertainty budget as Markdown lines (largest contribution first)."""
    try:
        b = a.budget()
    except (ValueError, KeyError, FloatingPointError):  # a failed fit has no budget
        return []
    body = b.drop(index="total").sort_values(("ΔH_vap", "share"), ascending=False)
    tot = b.loc["total"]
    out = ["", "## Uncertainty budget", "",
           "Inputs are independent (a quantity every point shares is one input), so the "
           "shares of u² add to 100 % with no cross terms.", "",
           "| input group | u(ΔH_vap) from it [kJ/mol] | share | u(ΔH_vap) if halved "
           "[kJ/mol] | u(T_b) from it [K] |", "|---|---|---|---|---|"]
    for g, row in body.iterrows():
        if row[("ΔH_vap", "share")] < 1e-4 and row[("T_b at 101.325 kPa", "share")] < 1e-4:
            continue
        out.append(f"| {g} | {D.number(row[('ΔH_vap', 'u from it')], digits=2)} | "
                   f"{D.uncertainty(100 * row[('ΔH_vap', 'share')], '%')} | "
                   f"{D.number(row[('ΔH_vap', 'u if halved')], digits=2)} | "
                   f"{D.number(row[('T_b at 101.325 kPa', 'u from it')], digits=2)} |")
    out.append(f"| total | {D.number(tot[('ΔH_vap', 'u from it')], digits=2)} | 100 % | | "
               f"{D.number(tot[('T_b at 101.325 kPa', 'u from it')], digits=2)} |")
    return out


def summary_markdown(a, *, shifts: dict[str, float] | None = None) -> str:
    """A Markdown summary: headline numbers, choices, exclusions, warnings, safety.

    ``shifts`` (from :meth:`Analysis.choice_shifts`) adds how far the other
    correction choices move ΔH_vap.
    """
    f = a.fit
    r = a.results().iloc[0]
    si = a.si
    kJ = lambda v: v / 1e3  # noqa: E731
    dH = f.enthalpy
    dS = D.value_u(r["ΔS_vap at T_b [J/(mol K)]"], r["u(ΔS_vap) [J/(mol K)]"], "J/(mol K)")
    C = lambda t: t - 273.15  # noqa: E731
    lines = [f"# Vapor-pressure analysis: {md_text(si.liquid)}", ""]
    if a.run.source:
        lines += [f"Run file: {md_text(a.run.source)}", ""]
    lines += [
        "| quantity | value |",
        "|---|---|",
        f"| ΔH_vap at T_m = {D.number(f.T_m, 'K')} | "
        f"{D.value_u(kJ(dH.nominal_value), kJ(dH.std_dev), 'kJ/mol')} (standard uncertainty) |",
        f"| boiling point at run pressure ({D.number(si.P_bar / 1e3, 'kPa')}) | "
        f"{D.value_u(r['T_b at run pressure [degC]'], r['u(T_b at run pressure) [K]'], 'degC')} |",
        f"| normal boiling point (101.325 kPa) | "
        f"{D.value_u(r['T_b at 101.325 kPa [degC]'], r['u(T_b at 101.325 kPa) [K]'], 'degC')} |",
        f"| extrapolation | {bias_text(r)} |",
        f"| true ΔvapH at T_m (virial and liquid-volume correction) | {true_text(r)} |",
        f"| ΔS_vap at the normal T_b (true ΔvapH, carried by the "
        f"{md_text(r['ΔH carried to T_b by']) or '-'}) | {dS} |",
        f"| reduced χ² | {D.number(f.chi2_reduced, digits=3)}"
        f"{' (covariance scaled by it)' if f.scaled else ''} |",
        f"| points used | {int(a.include.sum())} of {len(a.T)} |",
    ]
    mb = a.measured_boiling_point
    if mb is not None:
        lines.append(f"| measured boiling point | {D.number(C(mb.nominal_value), 'degC')} "
                     f"(measured − predicted: "
                     f"{D.signed(r['measured - predicted T_b [K]'], 'K', 2)}) |")
    c = a.comparison
    if c is not None:
        lines.append(f"| {md_text(c.curve.label)} ΔH_vap at T_m | "
                     f"{D.number(kJ(c.enthalpy), 'kJ/mol')} (deviation "
                     f"{D.signed(r['deviation from reference [%]'], '%')}, "
                     f"{D.signed(r['deviation from reference [u]'], 'u')}) |")
        lines.append(f"| reference normal boiling point | "
                     f"{D.number(C(c.normal_boiling_point), 'degC')} |")
    lines += ["", f"Trouton's rule: {r['Trouton'] or 'not computable'}.", "", "## Choices", "",
              f"- model: {f.model.label}; weighting: {WEIGHT_TEXT[f.weighting]}",
              f"- air amount from: {AIR_TEXT[a.air_method]}"
              + (" (chosen from what the run records)" if a.result.choices.air_from == "auto"
                 else "") + "; p_vap at the air "
              f"reference: {VAPOR_TEXT[a.vapor_mode]}"
              + (f" ({int(r['self-consistent rounds'])} rounds)" if a.vapor_mode == "fit"
                 else ""),
              f"- hydrostatic head: {'on' if a.setup.use_head[0] else 'off'}; trapped-gas mass "
              f"in the weighing: {'on' if a.result.choices.gas_mass else 'off'}",
              "- ΔH_vap is the apparent (Clausius–Clapeyron) value: ideal vapor, liquid volume "
              "neglected; the reference value is computed the same way from its curve. The "
              "true ΔvapH is ΔH_vap·Δz, Δz = 1 + p(B − V_l)/(RT) with B from the Tsonopoulos "
              "correlation and V_l from the PPDS density, compared with PPDS equation 12 "
              "(VDI Heat Atlas 2010).",
              "- numbers are rounded so that a standard uncertainty keeps two significant "
              "digits (GUM 7.2.6); the CSV tables keep full precision."]
    excluded = [i for i in range(len(a.T)) if not a.include[i]]
    if excluded:
        lines += ["", "## Excluded points", ""]
        for i in excluded:
            why = md_text(a.reasons[i]) or "no reason given"
            row = a.run.row_of(i)
            where = f", file row {row}" if row is not None else ""
            lines.append(f"- point {i} ({D.number(C(a.T[i]), 'degC')}{where}): {why}")
    lines += budget_markdown(a)
    if shifts:
        lines += ["", "## How other choices would move ΔH_vap", "",
                  "| choice | ΔH_vap shift [kJ/mol] |", "|---|---|"]
        lines += [f"| {k} | {D.signed(kJ(v), '', 2)} |" for k, v in shifts.items()]
    if a.warnings:
        lines += ["", "## Warnings", ""] + [f"- {md_text(w)}" for w in a.warnings]
    lines += ["", "> " + SAFETY_NOTE, ""]
    return "\n".join(lines)


def flat_budget(budget):
    """The budget with one header row, units in brackets, like the other tables:
    ``input group``, then per quantity ``u from it [unit]``, ``share``, ``u if halved``."""
    out = budget.copy()
    unit = lambda q: "K" if q.startswith("T_b") else "kJ/mol"  # noqa: E731
    out.columns = [f"{q}: {k} [{unit(q)}]" if k != "share" else f"{q}: share of u²"
                   for q, k in out.columns]
    return out.reset_index()


def write_outputs(a, out_dir, *, width_mm: float = 85.0, stem: str | None = None,
                  dpi: int = 300, formats: tuple[str, ...] = ("png", "svg")) -> dict:
    """Write the figure (``formats`` among png, svg, pdf; PNG at ``dpi``), the
    tables (CSV) and the summary (Markdown) into ``out_dir``; returns the paths."""
    out = output_folder(out_dir)
    stem = stem or a.run.name or "run"
    fig = a.figure(width_mm=width_mm)
    paths = {}
    for fmt in formats:
        if fmt not in ("png", "svg", "pdf"):
            raise ValueError(f"figure format must be png, svg or pdf, got {fmt!r}")
        paths[fmt] = out / f"{stem}.{fmt}"
        buf = io.BytesIO()
        fig.savefig(buf, format=fmt, dpi=dpi if fmt == "png" else "figure")
        atomic_write_bytes(paths[fmt], buf.getvalue())
    paths["points"] = out / f"{stem}_points.csv"
    paths["results"] = out / f"{stem}_results.csv"
    paths["summary"] = out / f"{stem}_summary.md"
    paths["budget"] = out / f"{stem}_budget.csv"
    write_table(flat_budget(a.budget()), paths["budget"], float_format=CSV_FLOAT)
    write_table(a.points(), paths["points"], float_format=CSV_FLOAT)
    write_table(a.results(), paths["results"], float_format=CSV_FLOAT)
    atomic_write_text(paths["summary"], a.summary())
    return paths
