"""Overview of many runs: ΔH_vap of every run against the reference, a sortable
table with flags, and a drill-down into the single-run explorer.

The panel does no physics: it calls :func:`vpkit.analysis.many_runs.analyze_many` and
opens :class:`vpkit.panels.RunPanel` for a selected run. Point exclusions made
there are saved in that run's session file and come back into the summary on
:meth:`OverviewPanel.refresh`. Numbers are shown by :mod:`vpkit.display`.
"""

from __future__ import annotations

import html
import io

import ipywidgets as W

from .. import display as D
from ..analysis.many_runs import analyze_many
from ..output.figures import overview_figure, section_figure
from ..output.run_summary import SAFETY_NOTE
from .explorer import RunPanel

TABLE_COLUMNS = ["run_id", "liquid", "points used", "ΔH_vap [kJ/mol]", "u(ΔH_vap) [kJ/mol]",
                 "deviation from reference [u]", "ζ vs consensus", "signal",
                 "T_b at 101.325 kPa [degC]", "measured - predicted T_b [K]", "reduced chi2",
                 "flags", "status"]


def overview(source, **options) -> OverviewPanel:
    """Open the overview of a folder of run files or a long-table CSV.

    ``options`` are those of :func:`vpkit.analyze` (weighting, air_from, ...).
    """
    return OverviewPanel(source, **options)


class OverviewPanel:
    """Many runs at a glance, with drill-down (see :func:`overview`).

    Attributes
    ----------
    summary : DataFrame
        One row per run (from :func:`vpkit.analysis.many_runs.analyze_many`).
    failed : tuple
        Runs that could not be read, with the reason.
    explorers : dict
        The single-run explorers opened so far, by run id.
    widget : ipywidgets.Widget
    """

    def __init__(self, source, **options) -> None:
        self.source = source
        self.options = options
        self.explorers: dict[str, RunPanel] = {}
        self._sort = ("flags", False)
        self.w_sort = W.Dropdown(options=TABLE_COLUMNS, value="flags", description="sort by")
        self.w_desc = W.Checkbox(value=True, description="descending", indent=False)
        self.w_flagged = W.Checkbox(value=False, description="flagged runs only", indent=False)
        self.w_runs = W.Select(options=[], rows=10, description="open run",
                               layout=W.Layout(width="360px"))
        self.w_refresh = W.Button(description="Re-analyse (pick up exclusions)")
        self.w_table = W.HTML()
        self.w_figure = W.Image(format="png", layout=W.Layout(max_width="900px"))
        self.w_messages = W.HTML()
        self.w_detail = W.VBox()
        self.w_liquid = W.Dropdown(options=[], description="section")
        self.w_section = W.Image(format="png", layout=W.Layout(max_width="760px"))
        self.w_consensus = W.HTML()
        self.w_liquid.observe(lambda _: self._render_section(), names="value")
        for w in (self.w_sort, self.w_desc, self.w_flagged):
            w.observe(lambda _: self._render_table(), names="value")
        self.w_runs.observe(self._on_select, names="value")
        self.w_refresh.on_click(lambda _: self.refresh())
        self.widget = W.VBox([
            self.w_figure, W.HTML("<b>Section consensus</b>"), self.w_liquid, self.w_consensus,
            self.w_section,
            W.HBox([self.w_sort, self.w_desc, self.w_flagged, self.w_refresh]),
            self.w_table, self.w_messages, self.w_runs, self.w_detail,
            W.HTML(f"<small>{html.escape(SAFETY_NOTE)}</small>")])
        self.refresh()

    def _ipython_display_(self):
        from IPython.display import display

        display(self.widget)

    def refresh(self) -> None:
        """Reload the runs (with their sessions) and re-analyse them all."""
        self.result = analyze_many(self.source, **self.options)
        self.failed = self.result.failed
        self.runs = dict(self.result.runs)
        self.summary = self.result.summary
        analysed = self.summary[self.summary["status"].fillna("") == ""]
        buf = io.BytesIO()
        overview_figure(analysed).savefig(buf, format="png", dpi=110)
        self.w_figure.value = buf.getvalue()
        msgs = [f"<span style='color:#a00'>not analysed: {html.escape(str(r['run_id']))}: "
                f"{html.escape(str(r['status']))}</span>"
                for _, r in self.summary[self.summary["status"].fillna("") != ""].iterrows()]
        self.w_messages.value = "<br>".join(msgs)
        liquids = list(self.result.consensus["liquid"])
        self.w_liquid.options = liquids
        if liquids and self.w_liquid.value not in liquids:
            self.w_liquid.value = liquids[0]
        self._render_section()
        self._render_table()

    def _render_section(self) -> None:
        """The chosen liquid's runs against the consensus (figure), and its numbers."""
        cons = self.result.consensus.set_index("liquid", drop=False)
        liq = self.w_liquid.value
        if liq is None or liq not in cons.index:
            self.w_section.value, self.w_consensus.value = b"", (
                "<i>no liquid has two or more analysed runs</i>")
            return
        row = cons.loc[liq]
        runs = self.summary[(self.summary["section"] == liq)
                            & self.summary["ΔH_vap at section T_m [kJ/mol]"].notna()]
        buf = io.BytesIO()
        section_figure(runs, row).savefig(buf, format="png", dpi=110)
        self.w_section.value = buf.getvalue()
        vu = lambda v, u, unit: D.value_u(row[v], row[u], unit)  # noqa: E731
        self.w_consensus.value = html.escape(
            f"{liq}: ΔH_vap = "
            + vu("consensus ΔH_vap [kJ/mol]", "u(consensus ΔH_vap) [kJ/mol]", "kJ/mol")
            + f" at {D.number(row['T_m [K]'], 'K')} ({row['method']}, "
            f"{int(row['runs used'])} of {int(row['runs'])} runs, Birge ratio "
            f"{D.number(row['Birge ratio'])}); joint fit "
            + vu("joint-fit ΔH_vap [kJ/mol]", "u(joint-fit ΔH_vap) [kJ/mol]", "kJ/mol")
            + "; T_b at 101.325 kPa "
            + vu("consensus T_b at 101.325 kPa [degC]", "u(consensus T_b at 101.325 kPa) [K]",
                 "degC"))

    def sorted_summary(self):
        col = self.w_sort.value
        df = self.summary
        if self.w_flagged.value:
            df = df[df["flags"] != ""]
        return df.sort_values(col, ascending=not self.w_desc.value, kind="stable")

    def _render_table(self) -> None:
        df = self.sorted_summary()[TABLE_COLUMNS + ["flag reasons"]]
        rows = []
        for _, r in df.iterrows():
            cells = []
            for c in TABLE_COLUMNS:
                v = r[c]
                text = (D.number(v) if isinstance(v, float) and c != "points used"
                        else "" if isinstance(v, float) and v != v else str(v))
                cells.append(f"<td>{html.escape(text)}</td>")
            title = html.escape(str(r["flag reasons"]), quote=True)
            style = " style='background:#fff0e6'" if r["flags"] or r["status"] else ""
            rows.append(f"<tr title='{title}'{style}>" + "".join(cells) + "</tr>")
        head = "".join(f"<th>{html.escape(c)}</th>" for c in TABLE_COLUMNS)
        self.w_table.value = (f"<table style='border-collapse:collapse;font-size:0.85em'>"
                              f"<tr>{head}</tr>{''.join(rows)}</table>"
                              "<small>hover a row for the flag reasons</small>")
        current = self.w_runs.value
        df = df[df["status"].fillna("") == ""]
        labels = [(f"{'⚑ ' if f else ''}{rid} ({liq})", rid) for rid, liq, f in
                  zip(df["run_id"], df["liquid"], df["flags"])]
        self.w_runs.options = labels
        if current in dict((v, k) for k, v in labels):
            self.w_runs.value = current

    def select(self, run_id: str) -> RunPanel:
        """Open (or return) the single-run explorer of ``run_id``."""
        if run_id not in self.explorers:
            path = self.result.paths.get(run_id)
            self.explorers[run_id] = RunPanel(path if path is not None else self.runs[run_id],
                                              canvas="auto")
        panel = self.explorers[run_id]
        self.w_detail.children = [W.HTML(f"<h3>{html.escape(run_id)}</h3>"), panel.widget]
        return panel

    def _on_select(self, change) -> None:
        if change.new:
            self.select(change.new)
