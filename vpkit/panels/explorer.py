"""The run explorer: toggle points, change choices, watch ΔH_vap respond, export.

The panel does no physics: every change reads the controls, calls
:func:`vpkit.analyze`, and renders the result. Exclusions, reasons and choices
are saved to the run's session file on every change and restored the next
time the same run is explored.
"""

from __future__ import annotations

import asyncio
import html
import time
from dataclasses import replace
from pathlib import Path

import ipywidgets as W

from .. import display as D
from ..analysis.one_run import Analysis, analyze
from ..errors import VpkitError
from ..output.figures import COLUMN_WIDTHS
from ..output.run_summary import SAFETY_NOTE, write_outputs
from ..physics.liquids import canonical_name, has_reference
from ..planning.bench_check import check_reading
from ..record.assemble import run_in_si
from ..record.cells import parse_number
from ..record.run import Run
from ..record.runfile import append_reading, read_run
from ..record.session import (
    SessionConflict,
    SessionState,
    file_digest,
    points_of,
    restore_session,
    run_fingerprint,
    save_session,
    session_path,
)
from ..units import from_si
from .bench_entry import BenchEntry
from .explorer_choices import ANALYSIS_KEYS, DEFAULT_CHOICES, ChoiceControls
from .explorer_points import PointRows
from .explorer_readouts import (
    budget_html,
    other_boiling_point_html,
    readout_numbers,
    readouts_html,
    to_pascal,
)
from .export_box import ExportBox
from .live_figure import LiveFigure


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
        self.conflict: str | None = None
        self._session_digest: str | None = None
        self._saved: tuple | None = None
        self._restore()
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

    @property
    def state(self) -> dict:
        """Include flags, reasons and choices (what the session file holds)."""
        return {"include": list(self.include), "reasons": list(self.reasons),
                "choices": dict(self.choices)}

    def _restore(self) -> None:
        if self.session_file is None:
            return
        restored = restore_session(self.session_file, self.run)
        if restored is not None:
            self.include, self.reasons = list(restored.include), list(restored.reasons)
            self.choices.update(restored.choices)
            self.messages.append(restored.message)
        self._session_digest = file_digest(self.session_file)
        self._saved = self._state_key() if self._session_digest is not None else None

    def _state_key(self) -> tuple:
        return (tuple(self.include), tuple(self.reasons), tuple(sorted(
            (k, repr(v)) for k, v in self.choices.items())))

    def _save(self) -> None:
        """Write the session when the state differs from what the file holds (opening a
        run writes nothing, so two explorers can open it side by side)."""
        if not self.autosave or self.conflict or self._state_key() == self._saved:
            return
        state = SessionState(run_fingerprint(self.run), tuple(self.include),
                             tuple(self.reasons), dict(self.choices),
                             points=points_of(self.run))
        try:
            save_session(state, self.session_file, expected=self._session_digest)
        except SessionConflict as exc:  # another explorer wrote it: say so, keep ours aside
            self.conflict = str(exc)
            if hasattr(self, "w_reload"):
                self.w_reload.layout.display = None
                self._show_messages()
            return
        self._session_digest = file_digest(self.session_file)
        self._saved = self._state_key()

    def reload_session(self) -> None:
        """Take the session file as another writer left it (after a conflict) and show it;
        this panel's own unsaved state was kept aside, as the conflict message says."""
        self.conflict = None
        self.include, self.reasons = list(self.run.include), list(self.run.reason)
        self._restore()
        self.points.build(self.run, self.include, self.reasons)
        self._sync_choice_widgets()
        self.w_reload.layout.display = "none"
        self.refresh()

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
        self.points.sync(i, self.include[i], self.reasons[i])
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
        self.timings = {"analyze": t1 - t0, "readouts": t2 - t1, "figure": t3 - t2}
        if not self._later(self._render_table):  # last: readouts and figure first
            self._render_table()
        self._save()

    #: With a live canvas in a kernel, the points table and budget bars are rendered this
    #: long after a change [s], so that the figure's new frame is drawn in the browser
    #: before their messages arrive (measured: 10 row updates arriving with the frame held
    #: its drawing back by 10-20 ms).
    TABLE_DELAY = 0.04

    def _later(self, render) -> bool:
        """Schedule ``render`` on the kernel's running event loop (once for several quick
        changes); False where there is none (plain Python, a static canvas)."""
        if self.figure.kind != "ipympl":
            return False
        try:
            loop = asyncio.get_running_loop()
        except RuntimeError:
            return False
        if not getattr(self, "_table_pending", False):
            self._table_pending = True
            loop.call_later(self.TABLE_DELAY, render)
        return True

    def _render_table(self) -> None:
        """The points table and the budget bars of the current analysis."""
        self._table_pending = False
        a = self.analysis
        if a is None:
            return
        t0 = time.perf_counter()
        self.points.render(a, self.run, self._t, self._p)
        self.w_budget.value = budget_html(a)
        self.timings["table"] = time.perf_counter() - t0

    # -- numbers for display: SI from the result, text from vpkit.display ----------
    def _p(self, pa: float, u: float | None = None) -> str:
        return D.quantity(pa, u, self.choices["pressure_unit"], "pressure")

    def _t(self, kelvin: float, u: float | None = None) -> str:
        return D.quantity(kelvin, u, self.choices["temperature_unit"], "temperature")

    def readouts(self) -> dict:
        """The numbers the readout area shows, in SI (for code and tests): read off the
        analysis's results table, the same numbers every report shows."""
        return readout_numbers(self.analysis, self.previous_enthalpy)

    # -- widgets ----------------------------------------------------------------
    def _build_widgets(self) -> None:
        c = self.choices
        style = {"description_width": "150px"}
        lay = W.Layout(width="440px")
        own = run_in_si(self.run).depth
        self.controls = ChoiceControls(c, own, style, lay, self._on_choice)
        for name in ("model", "air", "vapor", "head", "depth", "gas", "layer", "ref", "punit",
                     "tunit"):
            setattr(self, f"w_{name}", getattr(self.controls, name))
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
        self.w_reload = W.Button(description="reload the session", layout=W.Layout(
            display="none"))
        self.w_reload.on_click(lambda _: self.reload_session())
        # points table
        self.points = PointRows(self._on_point_box, self.set_reason)
        self.points.build(self.run, self.include, self.reasons)
        self.w_points = self.points.widget
        # a new reading at the bench: checked as it is typed, then appended to the file
        tu, ru, _ = self.run.units
        self.bench = BenchEntry((tu, ru), self.check_new, self._add_typed, style)
        self.w_new_t, self.w_new_r = self.bench.t, self.bench.reading
        self.w_new_add, self.w_new_msg = self.bench.button, self.bench.message
        # uncertainty budget (bars)
        self.w_budget = W.HTML()
        # export
        self.exporter = ExportBox(self._default_export_folder(), self.export, style, lay)
        self.w_folder, self.w_export_msg = self.exporter.folder, self.exporter.message
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
        safety = W.HTML(f"<small>{html.escape(SAFETY_NOTE)}</small>")
        self.widget = W.VBox([top, self.w_readouts, self.w_messages, self.w_reload, self.w_budget,
                              W.HTML("<b>Points</b> (untick or click a point to exclude it)"),
                              self.w_points, self.bench.widget, self.exporter.widget, safety])

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
        self.choices.update(self.controls.read(run_in_si(self.run).depth))
        if change.owner is self.w_punit:
            self._building = True
            old = change.old
            try:
                pa = to_pascal(parse_number(self.w_pressure.value, column="pressure"), old)
                self.w_pressure.value = f"{float(from_si(pa, self.w_punit.value, 'pressure')):.6g}"
            except VpkitError:
                pass  # the box keeps what was typed; the readout says what is wrong
            self.w_pressure.description = f"at pressure [{self.w_punit.value}]"
            self._building = False
        self.refresh()

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
        self.points.build(self.run, self.include, self.reasons)
        self.refresh()

    def _add_typed(self, temperature: float, reading: float) -> str:
        self.add_reading(temperature, reading)
        return "added; the run file was updated" if self.path else "added (the run has no file)"

    def _on_point_box(self, i: int, ticked: bool) -> None:
        if not self._building and ticked != self.include[i]:
            self.toggle(i)

    def _sync_choice_widgets(self) -> None:
        self._building = True
        self.controls.sync(self.choices)
        self._building = False

    # -- rendering ----------------------------------------------------------------
    def _render_readouts(self, points: bool = True) -> None:
        a = self.analysis
        if a is None:
            return
        self.w_readouts.value = readouts_html(self.readouts(), a, self._t, self._p,
                                              self.choices["temperature_unit"])
        self.w_tb_other.value = other_boiling_point_html(
            a, self.w_pressure.value, self.choices["pressure_unit"], self._t)
        self._show_messages()
        if points:
            self.points.render(a, self.run, self._t, self._p)

    def _show_messages(self, error: str | None = None) -> None:
        parts = []
        if error:
            parts.append(f"<span style='color:#a00'><b>Cannot analyse with these choices:</b> "
                         f"{html.escape(error)} (the last valid result stays shown)</span>")
        warnings = [] if self.analysis is None else list(self.analysis.warnings)
        parts += [f"⚠ {html.escape(w)}" for w in warnings]
        parts += [f"<i>{html.escape(m)}</i>" for m in self.messages]
        if self.conflict:
            parts.insert(0, f"<span style='color:#a00'><b>Session conflict:</b> "
                            f"{html.escape(self.conflict)}</span>")
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
