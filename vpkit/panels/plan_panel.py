"""The planner panel: sliders for bubble size, bath range and number of points, with the
predicted u(ΔH_vap), u(T_b), bias, readings and warnings updating as they move.

No physics here: every change builds a :class:`vpkit.planning.planner.Plan` and calls
:func:`vpkit.planning.planner.predict` (the forward model and the one analysis path).
"""

from __future__ import annotations

import html
import time

import ipywidgets as W
import numpy as np

from .. import display as D
from ..constants import T_ZERO_C
from ..errors import VpkitError
from ..output.run_summary import SAFETY_NOTE
from ..physics.curves import reference_curve
from ..physics.liquids import canonical_name
from ..planning.planner import Plan, predict


def plan_panel(liquid: str, *, bubble_ml: float = 2.0, t_from: float = 25.0,
               t_to: float | None = None, points: int = 8) -> PlanPanel:
    """Open the planner panel for ``liquid`` (bench units: mL, degC)."""
    return PlanPanel(liquid, bubble_ml=bubble_ml, t_from=t_from, t_to=t_to, points=points)


class PlanPanel:
    """Sliders -> :func:`vpkit.planning.planner.predict` -> readouts (``widget`` is the panel)."""

    def __init__(self, liquid: str, *, bubble_ml: float = 2.0, t_from: float = 25.0,
                 t_to: float | None = None, points: int = 8) -> None:
        self.liquid = canonical_name(liquid)
        boil = reference_curve(self.liquid).boiling_point(100_000.0) - T_ZERO_C
        t_to = min(60.0, boil - 12.0) if t_to is None else t_to
        style = {"description_width": "150px"}
        lay = W.Layout(width="480px")
        self.w_bubble = W.FloatSlider(value=bubble_ml, min=0.2, max=6.0, step=0.1,
                                      description="bubble at room [mL]", style=style, layout=lay)
        self.w_range = W.FloatRangeSlider(value=(t_from, t_to), min=0.0,
                                          max=float(np.floor(boil)), step=0.5,
                                          description="bath range [degC]", style=style,
                                          layout=lay)
        self.w_points = W.IntSlider(value=points, min=3, max=15, description="points",
                                    style=style, layout=lay)
        self.w_reading_u = W.BoundedFloatText(value=0.005, min=1e-4, max=0.2, step=0.001,
                                              description="u(reading) [mL]", style=style)
        self.w_capacity = W.BoundedFloatText(value=0.0, min=0.0, max=100.0, step=0.5,
                                             description="tube capacity [mL] (0: none)",
                                             style=style)
        self.w_out = W.HTML()
        self.timings: dict[str, float] = {}
        self.prediction = None
        for w in (self.w_bubble, self.w_range, self.w_points, self.w_reading_u,
                  self.w_capacity):
            w.observe(lambda _: self.refresh(), names="value")
        self.widget = W.VBox([W.HTML(f"<b>Planning a run of {html.escape(self.liquid)}</b>"),
                              self.w_bubble, self.w_range, self.w_points, self.w_reading_u,
                              self.w_capacity, self.w_out,
                              W.HTML(f"<small>{html.escape(SAFETY_NOTE)}</small>")])
        self.refresh()

    def plan(self) -> Plan:
        lo, hi = self.w_range.value
        cap = self.w_capacity.value
        return Plan(self.liquid, self.w_bubble.value * 1e-6,
                    tuple(np.linspace(lo, hi, self.w_points.value) + T_ZERO_C),
                    instruments={"reading": self.w_reading_u.value * 1e-6},
                    capacity=cap * 1e-6 if cap > 0 else None)

    def refresh(self) -> None:
        t0 = time.perf_counter()
        try:
            [p] = predict([self.plan()])
        except VpkitError as exc:
            self.w_out.value = f"<span style='color:#a00'>{html.escape(str(exc))}</span>"
            return
        self.prediction = p
        t1 = time.perf_counter()
        rows = "".join(
            f"<tr><td>{r['t [degC]']:.1f}</td><td>{r['expected reading [mL]']:.3f}</td>"
            f"<td>{r['gas volume [mL]']:.3f}</td><td>{r['p_vap [kPa]']:.3f}</td>"
            f"<td>{r['amplification P_total/p_vap']:.1f}</td></tr>"
            for _, r in p.points.iterrows())
        warn = "".join(f"<br>⚠ {html.escape(w)}" for w in p.warnings)
        self.w_out.value = (
            f"<b>expected u(ΔH_vap) = {D.uncertainty(p.u_enthalpy / 1e3, 'kJ/mol')}</b>; "
            f"u(T_b at 101.325 kPa) = {D.uncertainty(p.u_T_b, 'K')}; extrapolation bias of T_b "
            f"{D.signed(p.bias_T_b, 'K', 2)}"
            + ("" if p.feasible else " <b style='color:#a00'>(not workable)</b>")
            + "<table><tr><th>t [degC]</th><th>reading [mL]</th><th>V [mL]</th>"
            "<th>p_vap [kPa]</th><th>amplification</th></tr>" + rows + "</table>" + warn)
        self.timings = {"predict": t1 - t0, "render": time.perf_counter() - t1}

    def _ipython_display_(self):
        from IPython.display import display

        display(self.widget)
