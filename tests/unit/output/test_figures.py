"""Report figures survive a journal page: at 85 and 175 mm no legend or point label
covers a data marker, no text is cut off at the figure's edge, and no text is below 7 pt
(common practice for journal figures, no source). Checked on the rendered figure's own
artists."""

import numpy as np
import pytest
from matplotlib.lines import Line2D

import vpkit
from tests.conftest import make_run
from vpkit.output.figures import run_figure
from vpkit.physics.simulate import NOISE


def _analyses():
    rng = np.random.default_rng(8)
    out = []
    for liquid, excl in (("water", {0: "too cold"}), ("2-propanol", {7: "bubble escaped"}),
                         ("ethanol", {3: "misread"}), ("toluene", {})):
        run = make_run(liquid, noise=NOISE, rng=rng)
        out.append(vpkit.analyze(run, exclude=excl, warn=False))
    return out


def _texts_and_markers(fig):
    fig.draw_without_rendering()
    r = fig.canvas.get_renderer()
    boxes = []
    legends = list(fig.legends) + [ax.get_legend() for ax in fig.axes if ax.get_legend()]
    boxes += [leg.get_window_extent(r) for leg in legends]
    for ax in fig.axes:
        boxes += [t.get_window_extent(r) for t in ax.texts]  # point labels
    marks = []
    for ax in fig.axes:
        for line in ax.get_lines():
            if isinstance(line, Line2D) and line.get_marker() not in ("None", None, ""):
                xy = line.get_xydata()
                if len(xy):
                    marks.append(ax.transData.transform(xy))
    return boxes, np.concatenate(marks), legends, r


@pytest.mark.parametrize("width", [85.0, 175.0])
def test_legend_and_labels_cover_no_marker_and_nothing_is_cut(width):
    for a in _analyses():
        fig = run_figure(a, width_mm=width)
        boxes, marks, legends, r = _texts_and_markers(fig)
        assert legends, "no legend"
        reach = 3.0 * fig.dpi / 72.0  # a marker's radius, about 3 pt
        for b in boxes:
            inside = ((marks[:, 0] > b.x0 - reach) & (marks[:, 0] < b.x1 + reach)
                      & (marks[:, 1] > b.y0 - reach) & (marks[:, 1] < b.y1 + reach))
            assert not inside.any(), (a.si.liquid, width, b)
        W, H = fig.bbox.width, fig.bbox.height
        for artist in [*legends, *(ax.title for ax in fig.axes)]:
            b = artist.get_window_extent(r)
            assert b.x0 >= -1 and b.x1 <= W + 1 and b.y0 >= -1 and b.y1 <= H + 1, (width, b)


def test_no_text_below_7_pt_at_a_single_column():
    fig = run_figure(_analyses()[0], width_mm=85.0)
    fig.draw_without_rendering()
    sizes = []
    for ax in fig.axes:
        sizes += [t.get_fontsize() for t in ax.get_xticklabels() + ax.get_yticklabels()]
        sizes += [t.get_fontsize() for t in ax.texts]
    for leg in list(fig.legends) + [ax.get_legend() for ax in fig.axes if ax.get_legend()]:
        sizes += [t.get_fontsize() for t in leg.get_texts()]
    assert sizes and min(sizes) >= 7.0


def test_symbols_in_figure_text_are_set_as_subscripts():
    """No literal 'ΔH_vap' or 'T_m' in a figure: mathtext subscripts (issue "newcomer")."""
    import re

    a = vpkit.analyze(make_run("ethanol", noise=NOISE, rng=np.random.default_rng(3)))
    fig = run_figure(a, width_mm=175)
    fig.canvas.draw()  # mathtext must parse
    texts = [t.get_text() for ax in fig.axes for t in (ax.title, ax.xaxis.label, ax.yaxis.label)]
    title = fig.axes[0].get_title()
    assert r"$\Delta H_\mathrm{vap}$ = " in title and r"$T_\mathrm{m}$ = " in title
    outside_math = [re.sub(r"\$[^$]*\$", "", t) for t in texts]
    assert not any("_vap" in t or "T_m" in t for t in outside_math), texts


def test_live_title_needs_no_mathtext_parse():
    """The live figure's title changes with every toggle: its subscripts are Unicode
    characters (no '$'), so matplotlib does not parse mathtext again on each change."""
    from vpkit.output.figures import enthalpy_title

    a = vpkit.analyze(make_run("ethanol", noise=NOISE, rng=np.random.default_rng(3)))
    plain = enthalpy_title("ethanol", a.enthalpy, "318.2 K", math=False)
    assert "$" not in plain and "ΔHᵥₐₚ = " in plain and "Tₘ = 318.2 K" in plain
    assert plain.replace("ΔHᵥₐₚ", "").replace("Tₘ", "") == enthalpy_title(
        "ethanol", a.enthalpy, "318.2 K").replace(r"$\Delta H_\mathrm{vap}$", "").replace(
        r"$T_\mathrm{m}$", "")
