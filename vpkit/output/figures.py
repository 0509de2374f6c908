"""Report figures (pure: an Analysis in, a matplotlib Figure out; no pyplot)."""

from __future__ import annotations

import numpy as np
from matplotlib.figure import Figure

from .. import display as D
from ..constants import T_ZERO_C

MM_PER_INCH = 25.4
#: Journal column widths [mm]; common practice, no source (typical single and
#: double column widths of two-column journals).
COLUMN_WIDTHS = {"single": 85.0, "double": 175.0}


#: Legend positions tried in turn ("best": matplotlib's least-overlap search); the first
#: that covers no data is used, else the legend goes below the axes (common practice, no
#: source).
LEGEND_PLACES = ("best",)


#: Symbols in figure text, as mathtext (subscripts set as subscripts).
DH = r"$\Delta H_\mathrm{vap}$"
TM = r"$T_\mathrm{m}$"


def enthalpy_title(liquid: str, dH, T_m_text: str, sep: str = ": ", math: bool = True) -> str:
    """'LIQUID: ΔH_vap = v ± u kJ/mol at T_m = ...' for a figure title (the report figure
    and the live one); ``dH`` in J/mol with its uncertainty. ``math=False`` writes the
    subscripts as Unicode characters instead of mathtext, for the live figure: a text
    with mathtext is parsed again whenever a number in it changes (about 9 ms a toggle),
    plain text is not (draw it with ``parse_math=False``)."""
    dh, tm = (DH, TM) if math else ("ΔHᵥₐₚ", "Tₘ")
    return (f"{liquid}{sep}{dh} = "
            f"{D.value_u(dH.nominal_value / 1e3, dH.std_dev / 1e3, 'kJ/mol')} at "
            f"{tm} = {T_m_text}")


def _style(width_mm: float) -> dict:
    """Sizes for a figure width: no text below 7 pt at a single column (common practice for
    journal figures, no source)."""
    base = 8.0 if width_mm < 120 else 9.0
    return {"font": base, "small": base - 1, "lw": 0.8 if width_mm < 120 else 1.0,
            "ms": 3.5 if width_mm < 120 else 4.5}


def _place_legend(fig, ax, data_xy: np.ndarray, fontsize: float):
    """A legend that covers none of ``data_xy`` (points in data coordinates, markers and
    sampled lines): the first free place of :data:`LEGEND_PLACES`, else below the axes.
    The check uses the drawn legend's own box, so it holds for the rendered figure."""
    if not hasattr(fig.canvas, "get_renderer"):
        from matplotlib.backends.backend_agg import FigureCanvasAgg

        FigureCanvasAgg(fig)  # a renderer to measure text with (no window, no pyplot)
    fig.draw_without_rendering()
    renderer = fig.canvas.get_renderer()
    pix = ax.transData.transform(data_xy[np.isfinite(data_xy).all(axis=1)])
    pad = fontsize * fig.dpi / 72.0 * 0.6  # a marker's reach, in pixels
    for loc in LEGEND_PLACES:
        leg = ax.legend(fontsize=fontsize, frameon=False, loc=loc, numpoints=1)
        fig.draw_without_rendering()
        box = leg.get_window_extent(renderer)
        inside = ((pix[:, 0] > box.x0 - pad) & (pix[:, 0] < box.x1 + pad)
                  & (pix[:, 1] > box.y0 - pad) & (pix[:, 1] < box.y1 + pad))
        if not inside.any():
            return leg
        leg.remove()
    handles, labels = ax.get_legend_handles_labels()
    ncol = 1 if fig.get_figwidth() * MM_PER_INCH < 120 else 2
    rows = -(-len(labels) // ncol)
    fig.set_figheight(fig.get_figheight() + rows * fontsize * 1.5 / 72.0)  # room below
    return fig.legend(handles, labels, fontsize=fontsize, frameon=False, numpoints=1,
                      loc="outside lower center", ncol=ncol)


def run_figure(a, width_mm: float = 85.0, *, reference: bool = True,
               height_mm: float | None = None) -> Figure:
    """ln p against 1/T with the fit, its 95 % band, the reference and residuals.

    Parameters
    ----------
    a : Analysis
    width_mm : float
        Figure width; 85 (single column) and 175 (double column) are the usual
        journal widths. Fonts and lines are sized for it.
    reference : bool
        Draw the reference curve when the analysis has one.
    height_mm : float, optional
        Default 0.85 of the width for a single column, 0.55 for wider figures.
    """
    st = _style(width_mm)
    if height_mm is None:
        height_mm = width_mm * (0.85 if width_mm < 120 else 0.55)
    fig = Figure(figsize=(width_mm / MM_PER_INCH, height_mm / MM_PER_INCH),
                 layout="constrained")
    gs = fig.add_gridspec(2, 1, height_ratios=[3, 1])
    ax = fig.add_subplot(gs[0])
    axr = fig.add_subplot(gs[1], sharex=ax)
    f = a.fit
    inc = a.include
    x = 1000.0 / a.T
    with np.errstate(invalid="ignore", divide="ignore"):
        y = np.log(a.p_vap)
    ok = np.isfinite(y)
    Tfit = a.T[inc]
    lo, hi = Tfit.min(), Tfit.max()
    pad = 0.08 * (hi - lo + 1.0)
    Tg = np.linspace(max(lo - pad, 1.0), hi + pad, 200)
    band_lo, band_hi = f.ln_p_band(Tg)
    ax.fill_between(1000 / Tg, band_lo, band_hi, color="0.80", lw=0, label="95 % band of fit")
    ax.plot(1000 / Tg, f.ln_p(Tg), color="k", lw=st["lw"],
            label=f"fit ({f.model.label.split(' (')[0]})")
    if reference and a.comparison is not None:
        c = a.comparison.curve
        ax.plot(1000 / Tg, c.ln_p(Tg), color="tab:blue", lw=st["lw"], ls="--",
                label=c.label)
    yerr = a.u_p_vap / np.where(a.p_vap > 0, a.p_vap, np.nan)
    ax.errorbar(x[inc & ok], y[inc & ok], yerr=yerr[inc & ok], fmt="o", ms=st["ms"],
                color="tab:red", mec="tab:red", lw=st["lw"], capsize=0, label="included")
    exc = ~inc & ok
    if exc.any():
        ax.plot(x[exc], y[exc], "s", ms=st["ms"], mfc="none", mec="0.3", mew=st["lw"],
                label="excluded (point numbers)", clip_on=False)
        mid = 0.5 * (np.nanmin(x[ok]) + np.nanmax(x[ok]))
        for i in np.flatnonzero(exc):  # inwards, away from the frame and from the fit line
            right = x[i] < mid
            below = f.residuals[i] < 0
            ax.annotate(str(i), (x[i], y[i]), xytext=(4 if right else -4, -4 if below else 4),
                        textcoords="offset points", ha="left" if right else "right",
                        va="top" if below else "bottom", fontsize=st["small"], color="0.3")
    ax.set_ylabel(r"$\ln(p_\mathrm{vap}/\mathrm{Pa})$", fontsize=st["font"])
    dH = f.enthalpy
    sep = "\n" if width_mm < 120 else ": "  # two lines at a single column, so it fits
    ax.set_title(enthalpy_title(a.si.liquid, dH, D.number(f.T_m, "K"), sep),
                 fontsize=st["font"])
    res = f.residuals
    axr.axhline(0, color="k", lw=st["lw"] * 0.7)
    axr.errorbar(x[inc & ok], res[inc & ok], yerr=yerr[inc & ok], fmt="o", ms=st["ms"],
                 color="tab:red", lw=st["lw"], capsize=0)
    if exc.any():
        axr.plot(x[exc], res[exc], "s", ms=st["ms"], mfc="none", mec="0.3", mew=st["lw"],
                 clip_on=False)
    axr.margins(y=0.2)
    axr.set_ylabel(r"$\Delta \ln p$", fontsize=st["font"])
    axr.set_xlabel(r"$1000\,\mathrm{K}/T$", fontsize=st["font"])
    top = ax.secondary_xaxis("top", functions=(lambda v: 1000.0 / np.asarray(v) - T_ZERO_C,
                                               lambda t: 1000.0 / (np.asarray(t) + T_ZERO_C)))
    top.set_xlabel("t / °C", fontsize=st["font"])
    for axis in (ax, axr, top):
        axis.tick_params(labelsize=st["small"], width=st["lw"] * 0.8, length=3)
    ax.tick_params(labelbottom=False)
    for axis in (ax, axr):
        for s in axis.spines.values():
            s.set_linewidth(st["lw"] * 0.8)
    xs = 1000 / Tg
    lines = [np.c_[xs, f.ln_p(Tg)], np.c_[xs, band_lo], np.c_[xs, band_hi]]
    if reference and a.comparison is not None:
        lines.append(np.c_[xs, a.comparison.curve.ln_p(Tg)])
    err_lo, err_hi = y - yerr, y + yerr
    marks = [np.c_[x[ok], y[ok]], np.c_[x[inc & ok], err_lo[inc & ok]],
             np.c_[x[inc & ok], err_hi[inc & ok]]]
    _place_legend(fig, ax, np.concatenate(lines + marks), st["small"])
    return fig


def overview_figure(summary, width_mm: float = 175.0) -> Figure:
    """ΔH_vap ± u of every run, grouped by liquid, against each liquid's reference.

    Parameters
    ----------
    summary : DataFrame
        From :func:`vpkit.analysis.many_runs.analyze_table`.
    """
    st = _style(width_mm)
    liquids = list(dict.fromkeys(summary["liquid"]))
    n = len(summary)
    height_mm = min(60 + 4.5 * n, 240) if width_mm < 120 else min(50 + 3.2 * n, 240)
    fig = Figure(figsize=(width_mm / MM_PER_INCH, height_mm / MM_PER_INCH), layout="constrained")
    ax = fig.add_subplot()
    y = 0.0
    ticks, labels = [], []
    for k, liquid in enumerate(liquids):
        part = summary[summary["liquid"] == liquid]
        ys = y + np.arange(len(part))
        flagged = part["flags"].astype(str) != ""
        color = f"C{k % 10}"
        ax.errorbar(part["ΔH_vap [kJ/mol]"][~flagged], ys[~flagged.to_numpy()],
                    xerr=part["u(ΔH_vap) [kJ/mol]"][~flagged], fmt="o", ms=st["ms"],
                    color=color, lw=st["lw"], capsize=0)
        ax.errorbar(part["ΔH_vap [kJ/mol]"][flagged], ys[flagged.to_numpy()],
                    xerr=part["u(ΔH_vap) [kJ/mol]"][flagged], fmt="s", ms=st["ms"],
                    mfc="none", color=color, lw=st["lw"], capsize=0)
        ref = part["reference ΔH_vap at T_m [kJ/mol]"].median()
        if np.isfinite(ref):
            ax.plot([ref, ref], [ys[0] - 0.4, ys[-1] + 0.4], color=color, lw=st["lw"], ls="--")
        ticks += list(ys)
        labels += [f"{rid}" for rid in part["run_id"]]
        ax.text(1.0, ys.mean(), f" {liquid}", transform=ax.get_yaxis_transform(),
                fontsize=st["font"], va="center", ha="left", color=color)
        y = ys[-1] + 2.0
    ax.set_yticks(ticks, labels, fontsize=max(st["small"] - 1, 4))
    ax.invert_yaxis()
    ax.set_xlabel(DH + " [kJ/mol]   (open squares: flagged; dashed: reference)",
                  fontsize=st["font"])
    ax.tick_params(labelsize=st["small"])
    return fig


def section_figure(scores, row, width_mm: float = 120.0) -> Figure:
    """One liquid's section: every run's ΔH_vap at the section's T_m with its 95 %
    interval, ranked; the consensus and its 95 % band; the published curve's value; runs
    with an action signal as filled triangles, a warning signal as open triangles.

    ``scores`` holds the runs of the liquid (columns ``run_id``,
    ``ΔH_vap at section T_m [kJ/mol]``, its u, ``signal``); ``row`` is the liquid's row
    of the consensus table."""
    st = _style(width_mm)
    k = 1.959964
    d = scores.sort_values("ΔH_vap at section T_m [kJ/mol]").reset_index(drop=True)
    x = d["ΔH_vap at section T_m [kJ/mol]"].astype(float).to_numpy()
    u = d["u(ΔH_vap at section T_m) [kJ/mol]"].astype(float).to_numpy()
    n = len(d)
    height = min(max(2.2, 0.9 + 0.16 * n), 9.0)
    fig = Figure(figsize=(width_mm / MM_PER_INCH, height), layout="constrained")
    ax = fig.add_subplot()
    y = np.arange(n)
    c, uc = float(row["consensus ΔH_vap [kJ/mol]"]), float(row["u(consensus ΔH_vap) [kJ/mol]"])
    ax.axvspan(c - k * uc, c + k * uc, color="0.85", lw=0, label="consensus, 95 %")
    ax.axvline(c, color="0.35", lw=st["lw"])
    ref = row.get("reference ΔH_vap at T_m [kJ/mol]", np.nan)
    if np.isfinite(ref):
        ax.axvline(ref, color="k", ls="--", lw=st["lw"], label="published curve")
    sig = d["signal"].fillna("").to_numpy()
    for kind, marker, face, label in (("", "o", "k", "run, 95 % interval"),
                                      ("warning", "^", "none", "warning signal (2 < |ζ| < 3)"),
                                      ("action", "^", "k", "action signal (|ζ| ≥ 3)")):
        sel = sig == kind
        if sel.any():
            ax.errorbar(x[sel], y[sel], xerr=k * u[sel], fmt=marker, mfc=face, mec="k",
                        ecolor="0.4", ms=st["ms"], lw=st["lw"], label=label)
    ax.set_yticks(y, [str(r) for r in d["run_id"]], fontsize=st["small"] if n <= 40 else 5)
    ax.set_xlabel(DH + " at " + D.number(float(row["T_m [K]"]), "K")
                  + " [kJ/mol]", fontsize=st["font"])
    ax.tick_params(labelsize=st["small"])
    ax.set_title(f"{row['liquid']}: {int(row['runs used'])} of {int(row['runs'])} runs in "
                 f"the consensus ({row['method']})", fontsize=st["font"])
    fig.legend(fontsize=st["small"], frameon=False, loc="outside lower center", ncol=2)
    return fig
