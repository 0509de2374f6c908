"""The run explorer: toggle points, change choices, watch ΔH_vap respond, export.

The panel does no physics: every change reads the controls, calls
:func:`vpkit.analyze`, and renders the result. Exclusions, reasons and choices
are saved to the run's session file on every change and restored the next
time the same run is explored.
"""

from __future__ import annotations

import html
import time
from dataclasses import replace
from pathlib import Path
from typing import Any

import ipywidgets as W
import numpy as np

from ..analysis.one_run import Analysis, analyze
from ..analysis.result_tables import results_columns
from ..constants import T_ZERO_C
from ..errors import VpkitError
from ..output import display as D
from ..output.figures import COLUMN_WIDTHS
from ..output.run_summary import SAFETY_NOTE, bias_text, write_outputs
from ..physics.liquids import canonical_name, has_reference, liquids
from ..planning.bench_check import check_reading
from ..record.assemble import run_in_si
from ..record.cells import parse_number
from ..record.run import Run
from ..record.runfile import append_reading, read_run
from ..record.session import (
    SessionError,
    SessionState,
    load_session,
    points_of,
    run_fingerprint,
    save_session,
    session_path,
)
from ..units import from_si
from .live_figure import LiveFigure

MODELS = [("Clausius–Clapeyron, full covariance (GLS)", ("clausius_clapeyron", "gls")),
          ("Clausius–Clapeyron, weighted", ("clausius_clapeyron", "weighted")),
          ("Clausius–Clapeyron, unweighted", ("clausius_clapeyron", "ordinary")),
          ("constant ΔCp (Kirchhoff), GLS", ("constant_dcp", "gls")),
          ("Antoine, GLS", ("antoine", "gls"))]
AIR = [("weighed room-temperature volume", "weighed"), ("cold reference reading", "cold"),
       ("injected volume", "injected")]
VAPOR = [("automatic", "auto"), ("published equation", "reference"),
         ("self-consistent with the fit", "fit"), ("neglected (biased)", "neglect")]
PRESSURE_UNITS = ["kPa", "Pa", "hPa", "mbar", "bar", "atm", "mmHg", "Torr", "inHg"]
TEMPERATURE_UNITS = [("°C", "degC"), ("K", "K"), ("°F", "degF")]
DEFAULT_CHOICES: dict[str, Any] = {
    "model": "clausius_clapeyron", "weighting": "gls", "air_from": "weighed",
    "vapor_at_air_reference": "auto", "use_head": True, "gas_mass": True,
    "bubble_depth": None, "reference_liquid": None, "pressure_unit": "kPa",
    "temperature_unit": "degC", "water_layer": False,
}
ANALYSIS_KEYS = ("model", "weighting", "air_from", "vapor_at_air_reference", "use_head",
                 "gas_mass", "bubble_depth", "reference_liquid", "water_layer")


def explore(run_or_path, *, canvas: str = "auto", autosave: bool = True) -> RunPanel:
    """Open the interactive explorer for a run (a :class:`Run` or a run-file path).

    Parameters
    ----------
    canvas : {"auto", "ipympl", "static"}
        "auto" uses a live ipympl canvas (click points to toggle them) when
        ipympl is installed, else a static image.
    autosave : bool
        Save exclusions, reasons and choices beside the run file on every
        change (only for runs read from a file).
    """
    return RunPanel(run_or_path, canvas=canvas, autosave=autosave)


class RunPanel:
    """Interactive explorer of one run (see :func:`explore`).

    Attributes
    ----------
    analysis : Analysis
        The analysis currently shown.
    state : dict
        Include flags, reasons and choices, as saved in the session file.
    widget : ipywidgets.Widget
        The whole panel.
    """

    def __init__(self, run_or_path, *, canvas: str = "auto", autosave: bool = True) -> None:
        if isinstance(run_or_path, Run):
            self.run = run_or_path
            self.path = Path(run_or_path.source) if run_or_path.source and Path(
                str(run_or_path.source)).exists() else None
        else:
            self.path = Path(run_or_path)
            self.run = read_run(self.path)
        self.autosave = autosave and self.path is not None
        self.include = list(self.run.include)
        self.reasons = list(self.run.reason)
        self.choices = dict(DEFAULT_CHOICES)
        if has_reference(self.run.liquid):
            self.choices["reference_liquid"] = canonical_name(self.run.liquid)
        self.messages: list[str] = []
        self._restore_session()
        self.analysis: Analysis | None = None
        self.previous_enthalpy: float | None = None
        self.last_error: str | None = None
        self.timings: dict[str, float] = {}
        self._building = True
        self.figure = LiveFigure(on_pick=self.toggle,
                                 canvas="agg" if canvas == "static" else canvas)
        self._build_widgets()
        self._building = False
        self.refresh()

    # -- session ---------------------------------------------------------------
    @property
    def session_file(self) -> Path | None:
        return None if self.path is None else session_path(self.path)

    def _restore_session(self) -> None:
        sf = self.session_file
        if sf is None or not sf.exists():
            return
        try:
            state = load_session(sf, self.run)
        except SessionError as exc:
            # keep the refused file for the user, never overwrite it
            try:
                old = load_session(sf)  # readable, but for an edited run file?
            except SessionError:
                old = None
            aside = sf.with_name(sf.name + f".refused-{int(time.time())}")
            sf.rename(aside)
            if old is not None and old.points:
                run, applied, lost = old.reapply(self.run)
                self.include, self.reasons = list(run.include), list(run.reason)
                self.choices.update(old.choices)
                self.messages.append(
                    f"the run file changed since the session was saved (old session kept as "
                    f"{aside.name}): re-applied the exclusions and reasons of "
                    f"{len(applied)} point(s) whose readings are unchanged"
                    + (f"; {len(lost)} saved point(s) ({', '.join(map(str, lost))}) no longer "
                       "match a reading and were not applied" if lost else ""))
                return
            self.messages.append(f"{exc} — kept as {aside.name}; starting from the run file")
            return
        self.include = list(state.include)
        self.reasons = list(state.reasons)
        self.choices.update(state.choices)
        self.messages.append(f"restored exclusions and choices from {sf.name}")

    @property
    def state(self) -> dict:
        """Include flags, reasons and choices (what the session file holds)."""
        return {"include": list(self.include), "reasons": list(self.reasons),
                "choices": dict(self.choices)}

    def _save(self) -> None:
        if not self.autosave:
            return
        state = SessionState(run_fingerprint(self.run), tuple(self.include),
                             tuple(self.reasons), dict(self.choices),
                             points=points_of(self.run))
        save_session(state, self.session_file)

    # -- actions (also the programmatic interface) ------------------------------
    def toggle(self, index: int, reason: str | None = None) -> None:
        """Include an excluded point or exclude an included one."""
        i = int(index)
        self.include[i] = not self.include[i]
        if not self.include[i]:
            self.reasons[i] = reason or self.reasons[i] or "excluded in the explorer"
        elif reason is not None:
            self.reasons[i] = reason
        elif self.reasons[i]:  # an included point keeps no reason for exclusion
            self.messages.append(f"point {i} included again; its reason "
                                 f"{self.reasons[i]!r} was removed")
            self.reasons[i] = ""
        self._sync_point_widgets(i)
        self.refresh()

    def set_reason(self, index: int, reason: str) -> None:
        self.reasons[int(index)] = str(reason)
        self._save()

    def set_choices(self, **changes) -> None:
        """Change analysis or display choices (keys of ``DEFAULT_CHOICES``)."""
        unknown = set(changes) - set(DEFAULT_CHOICES)
        if unknown:
            raise KeyError(f"unknown choice(s): {', '.join(sorted(unknown))}")
        self.choices.update(changes)
        self._sync_choice_widgets()
        self.refresh()

    def analysis_options(self) -> dict:
        """The keyword arguments this panel passes to :func:`vpkit.analyze`."""
        return {k: self.choices[k] for k in ANALYSIS_KEYS}

    def current_run(self) -> Run:
        return self.run.with_include(self.include, self.reasons)

    def refresh(self) -> None:
        """Re-analyse with the current points and choices and update every view."""
        if self._building:
            return
        t0 = time.perf_counter()
        try:
            a = analyze(self.current_run(), **self.analysis_options(), warn=False)
        except VpkitError as exc:
            self.last_error = str(exc)
            self._show_messages(error=str(exc))
            self._save()
            return
        t1 = time.perf_counter()
        if self.analysis is not None:
            self.previous_enthalpy = self.analysis.enthalpy.nominal_value
        self.analysis = a
        self.last_error = None
        self._render_readouts(points=False)
        t2 = time.perf_counter()
        self.figure.update(a, temperature_unit=self.choices["temperature_unit"])
        if self.figure.kind == "agg":
            self._image.value = self.figure.png()
        t3 = time.perf_counter()
        self._render_points()  # the table last: readouts and figure reach the page first
        self._render_budget()
        self.timings = {"analyze": t1 - t0, "readouts": t2 - t1, "figure": t3 - t2,
                        "table": time.perf_counter() - t3}
        self._save()

    # -- numbers for display: SI from the result, text from vpkit.display ----------
    def _p(self, pa: float, u: float | None = None) -> str:
        return D.quantity(pa, u, self.choices["pressure_unit"], "pressure")

    def _t(self, kelvin: float, u: float | None = None) -> str:
        return D.quantity(kelvin, u, self.choices["temperature_unit"], "temperature")

    def readouts(self) -> dict:
        """The numbers the readout area shows, in SI (for code and tests).

        They are read off the analysis's results table (the same numbers every
        report shows), converted back to SI where the table holds display units.
        """
        a = self.analysis
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
               "shift": (None if self.previous_enthalpy is None
                         else float(row["ΔH_vap [kJ/mol]"]) * 1e3 - self.previous_enthalpy)}
        if np.isfinite(row["measured T_b [degC]"]):
            out["T_b_measured"] = kelvin("measured T_b [degC]")
            out["T_b_gap"] = float(row["measured - predicted T_b [K]"])
        if row["reference"]:
            out.update(reference=row["reference"],
                       reference_enthalpy=float(row["reference ΔH_vap at T_m [kJ/mol]"]) * 1e3,
                       deviation_percent=float(row["deviation from reference [%]"]),
                       deviation_u=float(row["deviation from reference [u]"]))
        return out

    # -- widgets ----------------------------------------------------------------
    def _build_widgets(self) -> None:
        c = self.choices
        style = {"description_width": "150px"}
        lay = W.Layout(width="440px")
        self.w_model = W.Dropdown(options=MODELS, value=(c["model"], c["weighting"]),
                                  description="fit model", style=style, layout=lay)
        self.w_air = W.Dropdown(options=AIR, value=c["air_from"], description="air amount from",
                                style=style, layout=lay)
        self.w_vapor = W.Dropdown(options=VAPOR, value=c["vapor_at_air_reference"],
                                  description="p_vap at air reference", style=style, layout=lay)
        self.w_head = W.Checkbox(value=c["use_head"], description="hydrostatic head",
                                 indent=False)
        depth0 = c["bubble_depth"]
        if depth0 is None:
            e = self.run.entry("bubble_depth")
            depth0 = 0.0 if e is None else float(run_in_si(self.run).depth or 0.0)
        self.w_depth = W.BoundedFloatText(value=round(depth0 * 100, 3), min=-100, max=100,
                                          step=0.1, description="bubble depth [cm]",
                                          style=style, layout=lay)
        self.w_gas = W.Checkbox(value=c["gas_mass"], description="gas mass in weighing",
                                indent=False)
        self.w_layer = W.Checkbox(value=c["water_layer"], indent=False,
                                  description="liquid floats on water (subtract its vapor)")
        names = liquids()
        self.w_ref = W.Dropdown(options=[("none", None)] + [(x, x) for x in names],
                                value=c["reference_liquid"] if c["reference_liquid"] in names
                                else None, description="reference liquid", style=style,
                                layout=lay)
        self.w_punit = W.Dropdown(options=PRESSURE_UNITS, value=c["pressure_unit"],
                                  description="pressure unit", style=style, layout=lay)
        self.w_tunit = W.Dropdown(options=TEMPERATURE_UNITS, value=c["temperature_unit"],
                                  description="temperature unit", style=style, layout=lay)
        for w in (self.w_model, self.w_air, self.w_vapor, self.w_head, self.w_depth, self.w_gas,
                  self.w_layer,
                  self.w_ref, self.w_punit, self.w_tunit):
            w.observe(self._on_choice, names="value")
        # boiling point at another pressure
        p0 = float(from_si(run_in_si(self.run).P_bar, c["pressure_unit"], "pressure"))
        self.w_pressure = W.Text(value=f"{p0:.6g}",
                                 description=f"at pressure [{c['pressure_unit']}]",
                                 style=style, layout=lay)
        self.w_pressure.observe(lambda _: self._render_readouts(), names="value")
        self.w_tb_other = W.HTML()
        # readouts and messages
        self.w_readouts = W.HTML()
        self.w_messages = W.HTML()
        # points table
        self.w_points = W.VBox()
        self._build_point_rows()
        # a new reading at the bench: checked as it is typed, then appended to the file
        tu, ru, _ = self.run.units
        self.w_new_t = W.FloatText(description=f"new bath t [{tu}]", style=style,
                                   layout=W.Layout(width="260px"))
        self.w_new_r = W.FloatText(description=f"reading [{ru}]", style=style,
                                   layout=W.Layout(width="220px"))
        self.w_new_add = W.Button(description="add to the run", layout=W.Layout(width="160px"))
        self.w_new_msg = W.HTML()
        self.w_new_t.observe(lambda _: self._on_new_reading(), names="value")
        self.w_new_r.observe(lambda _: self._on_new_reading(), names="value")
        self.w_new_add.on_click(lambda _: self._on_add_reading())
        # uncertainty budget (bars)
        self.w_budget = W.HTML()
        # export
        self.w_folder = W.Text(value=str(self._default_export_folder()), description="folder",
                               style=style, layout=W.Layout(width="520px"))
        self.w_width = W.Dropdown(options=[("single column, 85 mm", COLUMN_WIDTHS["single"]),
                                           ("double column, 175 mm", COLUMN_WIDTHS["double"])],
                                  value=COLUMN_WIDTHS["single"], description="figure width",
                                  style=style, layout=lay)
        self.w_dpi = W.BoundedIntText(value=300, min=72, max=1200, description="PNG dpi",
                                      style=style, layout=lay)
        self.w_export = W.Button(description="Save figure, tables and summary",
                                 layout=W.Layout(width="280px"))
        self.w_export_msg = W.HTML()
        self.w_export.on_click(lambda _: self._on_export())
        # figure
        if self.figure.kind == "ipympl":
            self.w_figure = self.figure.canvas
            self._image = None
        else:
            self._image = W.Image(format="png", layout=W.Layout(width="620px", max_width="100%"))
            self.w_figure = self._image
        controls = W.VBox([W.HTML("<b>Choices</b>"), self.w_model, self.w_air, self.w_vapor,
                           self.w_head, self.w_depth, self.w_gas, self.w_layer, self.w_ref,
                           self.w_punit,
                           self.w_tunit, W.HTML("<b>Boiling point at another pressure</b>"),
                           self.w_pressure, self.w_tb_other],
                          layout=W.Layout(flex="0 1 450px", min_width="0", max_width="100%"))
        # side by side where there is room, the figure below the choices where there is not
        # (a laptop screen with the notebook's file browser open): nothing is cut off
        top = W.HBox([controls, W.VBox([self.w_figure],
                                       layout=W.Layout(flex="1 1 auto", min_width="0",
                                                       max_width="100%", overflow="auto"))],
                     layout=W.Layout(flex_flow="row wrap", width="100%"))
        export = W.VBox([W.HTML("<b>Export for a report</b>"), self.w_folder, self.w_width,
                         self.w_dpi, self.w_export, self.w_export_msg])
        safety = W.HTML(f"<small>{html.escape(SAFETY_NOTE)}</small>")
        new = W.VBox([W.HTML("<b>Add a reading</b> (checked against the run so far as you "
                             "type)"), W.HBox([self.w_new_t, self.w_new_r, self.w_new_add]),
                      self.w_new_msg])
        self.widget = W.VBox([top, self.w_readouts, self.w_messages, self.w_budget,
                              W.HTML("<b>Points</b> (untick or click a point to exclude it)"),
                              self.w_points, new, export, safety])

    def _default_export_folder(self) -> Path:
        """vpkit-report/<run> under the working folder: never inside the data folder."""
        stem = self.path.stem if self.path is not None else "run"
        return Path.cwd() / "vpkit-report" / stem

    def _ipython_display_(self):
        from IPython.display import display

        display(self.widget)

    def _on_choice(self, change) -> None:
        if self._building:
            return
        model, weighting = self.w_model.value
        depth_cm = self.w_depth.value
        self.choices.update(
            model=model, weighting=weighting, air_from=self.w_air.value,
            vapor_at_air_reference=self.w_vapor.value, use_head=bool(self.w_head.value),
            gas_mass=bool(self.w_gas.value), reference_liquid=self.w_ref.value,
            pressure_unit=self.w_punit.value, temperature_unit=self.w_tunit.value,
            water_layer=bool(self.w_layer.value))
        own = run_in_si(self.run).depth
        if own is None and depth_cm == 0.0:
            self.choices["bubble_depth"] = None
        elif own is not None and abs(own - depth_cm / 100) < 1e-9:
            self.choices["bubble_depth"] = None
        else:
            self.choices["bubble_depth"] = depth_cm / 100.0
        if change.owner is self.w_punit:
            self._building = True
            old = change.old
            try:
                pa = _to_pa(parse_number(self.w_pressure.value, column="pressure"), old)
                self.w_pressure.value = f"{float(from_si(pa, self.w_punit.value, 'pressure')):.6g}"
            except VpkitError:
                pass  # the box keeps what was typed; the readout says what is wrong
            self.w_pressure.description = f"at pressure [{self.w_punit.value}]"
            self._building = False
        self.refresh()

    def _build_point_rows(self) -> None:
        self._point_rows: list[tuple[W.Checkbox, W.Text, W.HTML]] = []
        rows = []
        head = W.HTML("<b># (file line)</b> &nbsp; t, reading, V, p_vap ± u, residual, ΔH shift "
                      "if left out [kJ/mol]")
        for i in range(self.run.n_points):
            line = self.run.row_of(i)
            cb = W.Checkbox(value=self.include[i], indent=False,
                            description=f"{i}" + (f" (line {line})" if line else ""),
                            layout=W.Layout(width="110px"))
            tx = W.Text(value=self.reasons[i], placeholder="reason if excluded",
                        tooltip=self.reasons[i] or None, layout=W.Layout(width="300px"))
            lab = W.HTML(layout=W.Layout(width="520px"))
            cb.observe(self._on_include_box(i), names="value")
            tx.observe(self._on_reason_box(i), names="value")
            self._point_rows.append((cb, tx, lab))
            rows.append(W.HBox([cb, tx, lab]))
        self.w_points.children = (head, *rows)

    # -- a new reading ------------------------------------------------------------
    def check_new(self, temperature: float, reading: float):
        """The bench check of a reading not yet in the run (:func:`vpkit.check_reading`)."""
        return check_reading(self.current_run(), temperature, reading,
                             **self.analysis_options())

    def add_reading(self, temperature: float, reading: float, reason: str = "") -> None:
        """Append a reading to the run (and, when the run came from a file, to the file:
        an atomic write that keeps everything else in it) and re-analyse."""
        if self.path is not None:
            self.run = append_reading(self.path, temperature, reading, reason=reason)
        else:
            r = self.run
            self.run = replace(r, bath_temperature=r.bath_temperature + (float(temperature),),
                               reading=r.reading + (float(reading),),
                               pressure=r.pressure + (None,), include=r.include + (True,),
                               reason=r.reason + (reason,), rows=())
        self.include.append(True)
        self.reasons.append(reason)
        self._building = True
        self._build_point_rows()
        self._building = False
        self.refresh()

    def _on_new_reading(self) -> None:
        if self._building:
            return
        try:
            c = self.check_new(self.w_new_t.value, self.w_new_r.value)
        except VpkitError as exc:
            self.w_new_msg.value = f"<i>{html.escape(str(exc))}</i>"
            return
        color = "#a00" if c.suspect else "#060"
        self.w_new_msg.value = f"<span style='color:{color}'>{html.escape(c.message)}</span>"

    def _on_add_reading(self) -> None:
        try:
            self.add_reading(self.w_new_t.value, self.w_new_r.value)
            self.w_new_msg.value = "<i>added; the run file was updated</i>" if self.path \
                else "<i>added (the run has no file)</i>"
        except VpkitError as exc:
            self.w_new_msg.value = f"<span style='color:#a00'>{html.escape(str(exc))}</span>"

    def _render_budget(self) -> None:
        """The uncertainty budget of ΔH_vap as bars (shares of u²)."""
        try:
            b = self.analysis.budget().drop(index="total")
        except (ValueError, KeyError):
            self.w_budget.value = ""
            return
        b = b.sort_values(("ΔH_vap", "share"), ascending=False)
        rows = []
        for g, row in b.iterrows():
            share = row[("ΔH_vap", "share")]
            if share < 0.005:
                continue
            rows.append(
                f"<tr><td>{html.escape(str(g))}</td><td><div style='background:#4a6fa5;"
                f"height:10px;width:{200 * share:.0f}px'></div></td>"
                f"<td>{D.number(100 * share, '%', 2)}</td><td>"
                f"{D.number(row[('ΔH_vap', 'u from it')], 'kJ/mol', 2)}</td></tr>")
        self.w_budget.value = ("<b>What limits u(ΔH_vap)</b> (share of u²; the rest under "
                               "0.5 %)<table>" + "".join(rows) + "</table>")

    def _on_include_box(self, i):
        def handler(change):
            if self._building or change.new == self.include[i]:
                return
            self.toggle(i)
        return handler

    def _on_reason_box(self, i):
        def handler(change):
            if self._building:
                return
            self.set_reason(i, change.new)
        return handler

    def _sync_point_widgets(self, i: int) -> None:
        if not hasattr(self, "_point_rows"):
            return
        self._building = True
        cb, tx, _ = self._point_rows[i]
        cb.value = self.include[i]
        tx.value = self.reasons[i]
        self._building = False

    def _sync_choice_widgets(self) -> None:
        self._building = True
        c = self.choices
        self.w_model.value = (c["model"], c["weighting"])
        self.w_air.value = c["air_from"]
        self.w_vapor.value = c["vapor_at_air_reference"]
        self.w_head.value = c["use_head"]
        self.w_gas.value = c["gas_mass"]
        self.w_layer.value = c["water_layer"]
        if c["bubble_depth"] is not None:
            self.w_depth.value = round(c["bubble_depth"] * 100, 3)
        self.w_ref.value = c["reference_liquid"] if c["reference_liquid"] in liquids() \
            else None
        self.w_punit.value = c["pressure_unit"]
        self.w_tunit.value = c["temperature_unit"]
        self._building = False

    # -- rendering ----------------------------------------------------------------
    def _render_readouts(self, points: bool = True) -> None:
        a = self.analysis
        if a is None:
            return
        r = self.readouts()
        lines = [f"<b>ΔH_vap = {D.value_u(r['enthalpy'] / 1e3, r['u_enthalpy'] / 1e3, 'kJ/mol')}"
                 f"</b> at T_m = {self._t(r['T_m'])}"]
        if r["shift"] is not None:
            lines[0] += f" &nbsp; (shift from previous: {D.signed(r['shift'] / 1e3, 'kJ/mol', 2)})"
        if np.isfinite(r["true_enthalpy"]):
            lines[0] += (" &nbsp; true ΔvapH = " + D.value_u(r["true_enthalpy"] / 1e3,
                                                           r["u_true_enthalpy"] / 1e3, "kJ/mol"))
        lines.append(html.escape(r["trouton"]))
        lines.append(f"boiling point at the run's pressure ({self._p(a.si.P_bar)}): "
                     f"{self._t(r['T_b_run'], r['u_T_b_run'])}; at 101.325 kPa: "
                     f"{self._t(r['T_b_normal'], r['u_T_b_normal'])}")
        lines.append(html.escape(r["extrapolation"]))
        if "T_b_measured" in r:
            dT = D.quantity(r["T_b_gap"], None, self.choices["temperature_unit"], "temperature",
                            delta=True)
            lines.append(f"measured boiling point {self._t(r['T_b_measured'])}; measured − "
                         f"predicted = {dT}")
        lines.append(f"reduced χ² = {D.number(r['chi2_reduced'], digits=3)}"
                     + (" (covariance scaled by it)" if a.fit.scaled else ""))
        if "reference_enthalpy" in r:
            lines.append(f"{html.escape(r['reference'])}: ΔH_vap at T_m = "
                         f"{D.number(r['reference_enthalpy'] / 1e3, 'kJ/mol')}; deviation "
                         f"{D.signed(r['deviation_percent'], '%')} "
                         f"({D.signed(r['deviation_u'], 'u')})")
        self.w_readouts.value = "<br>".join(lines)
        self.w_tb_other.value = self._other_boiling_point(a)
        self._show_messages()
        if points:
            self._render_points()

    def _other_boiling_point(self, a) -> str:
        """The boiling point at the typed pressure, or why there is none (in the unit typed),
        with the distance beyond the data when it is an extrapolation."""
        unit = self.choices["pressure_unit"]
        red = "<span style='color:#a00'>{}</span>"
        try:
            value = parse_number(self.w_pressure.value, column="pressure")
            if value <= 0:
                return red.format(html.escape(f"the pressure must be positive, got {value:g} "
                                              f"{unit}"))
            Tb = a.boiling_point(_to_pa(value, unit))
        except (VpkitError, ValueError) as exc:
            return red.format(html.escape(str(exc)))
        out = f"→ {self._t(Tb.nominal_value, Tb.std_dev)}"
        T = a.T[a.include]
        lim = max(a.result.choices.limits["extrapolation_K"], float(T.max() - T.min()))
        beyond = max(Tb.nominal_value - T.max(), T.min() - Tb.nominal_value)
        if beyond > lim:
            out += red.format(html.escape(
                f" (an extrapolation {beyond:.0f} K beyond the points used, more than "
                f"{lim:.0f} K: the model's curvature decides it, not the data)"))
        return out

    def _render_points(self) -> None:
        a = self.analysis
        table = a.points()
        ru = self.run.units[1]
        for i, (_, _, lab) in enumerate(self._point_rows):
            row = table.iloc[i]
            flag = (f" <span style='color:#a00'>⚑ {html.escape(row['flags'])}</span>"
                    if row["flags"] else "")
            shift = row["ΔH shift if left out [kJ/mol]"]
            lab.value = (f"{self._t(a.T[i])}, {self.run.reading[i]:g} {html.escape(ru)}, "
                         f"{D.number(row['V [mL]'], 'mL')}, "
                         f"{self._p(a.p_vap[i], a.u_p_vap[i])}, "
                         f"{D.signed(row['residual [Δln p]'], '', 4)}, "
                         + ("—" if not np.isfinite(shift) else D.signed(shift, '', 2)) + flag)

    def _show_messages(self, error: str | None = None) -> None:
        parts = []
        if error:
            parts.append(f"<span style='color:#a00'><b>Cannot analyse with these choices:</b> "
                         f"{html.escape(error)} (the last valid result stays shown)</span>")
        warnings = [] if self.analysis is None else list(self.analysis.warnings)
        parts += [f"⚠ {html.escape(w)}" for w in warnings]
        parts += [f"<i>{html.escape(m)}</i>" for m in self.messages]
        self.w_messages.value = "<br>".join(parts)

    # -- export -------------------------------------------------------------------
    def export(self, folder=None, *, width_mm: float = COLUMN_WIDTHS["single"], dpi: int = 300,
               formats: tuple[str, ...] = ("png", "svg", "pdf")) -> dict[str, Path]:
        """Save figure (PNG/SVG/PDF at ``width_mm``), tables (CSV) and summary (Markdown)."""
        a = self.analysis
        if a is None:
            raise VpkitError("nothing to export: the current choices give no analysis")
        folder = Path(folder) if folder is not None else self._default_export_folder()
        stem = self.path.stem if self.path is not None else "run"
        paths = write_outputs(a, folder, width_mm=width_mm, stem=stem, dpi=dpi,
                              formats=formats)
        return paths

    def _on_export(self) -> None:
        try:
            paths = self.export(self.w_folder.value, width_mm=float(self.w_width.value),
                                dpi=int(self.w_dpi.value))
        except (OSError, VpkitError) as exc:
            self.w_export_msg.value = f"<span style='color:#a00'>{html.escape(str(exc))}</span>"
            return
        self.w_export_msg.value = "saved: " + ", ".join(html.escape(p.name)
                                                        for p in paths.values())


def _to_pa(value: float, unit: str) -> float:
    from ..units import to_si

    return float(to_si(float(value), unit, "pressure"))

