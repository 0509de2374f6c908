"""The explorer's table of points: a tick box, a reason and the numbers of each reading."""

from __future__ import annotations

import html
from collections.abc import Callable

import ipywidgets as W
import numpy as np

from .. import display as D


class PointRows:
    """One row per reading: include box, reason box, and a label with its numbers.

    ``on_toggle(i, ticked)`` is called when a box is ticked or unticked, ``on_reason(i, text)``
    when a reason is typed; :meth:`sync` sets a row from the panel's state without
    calling either.
    """

    def __init__(self, on_toggle: Callable[[int, bool], None],
                 on_reason: Callable[[int, str], None]) -> None:
        self._on_toggle, self._on_reason = on_toggle, on_reason
        self.rows: list[tuple[W.Checkbox, W.Text, W.HTML]] = []
        self.widget = W.VBox()
        self._quiet = False

    def build(self, run, include, reasons) -> None:
        """One row per reading of ``run`` (file line numbers beside each point)."""
        self._quiet = True
        self.rows = []
        boxes = []
        head = W.HTML("<b># (file line)</b> &nbsp; t, reading, V, p_vap ± u, residual, ΔH shift "
                      "if left out [kJ/mol]")
        for i in range(run.n_points):
            line = run.row_of(i)
            cb = W.Checkbox(value=include[i], indent=False,
                            description=f"{i}" + (f" (line {line})" if line else ""),
                            layout=W.Layout(width="110px"))
            tx = W.Text(value=reasons[i], placeholder="reason if excluded",
                        tooltip=reasons[i] or None, layout=W.Layout(width="300px"))
            lab = W.HTML(layout=W.Layout(width="520px"))
            cb.observe(self._toggled(i), names="value")
            tx.observe(self._reasoned(i), names="value")
            self.rows.append((cb, tx, lab))
            boxes.append(W.HBox([cb, tx, lab]))
        self.widget.children = (head, *boxes)
        self._quiet = False

    def _toggled(self, i):
        def handler(change):
            if not self._quiet:
                self._on_toggle(i, bool(change.new))
        return handler

    def _reasoned(self, i):
        def handler(change):
            if not self._quiet:
                self._on_reason(i, change.new)
        return handler

    def sync(self, i: int, include: bool, reason: str) -> None:
        if i >= len(self.rows):
            return
        self._quiet = True
        cb, tx, _ = self.rows[i]
        cb.value = include
        tx.value = reason
        self._quiet = False

    def render(self, a, run, fmt_t: Callable, fmt_p: Callable) -> None:
        """Each row's numbers from the analysis ``a`` (its points table)."""
        table = a.points()
        ru = run.units[1]
        for i, (_, _, lab) in enumerate(self.rows):
            row = table.iloc[i]
            flag = (f" <span style='color:#a00'>⚑ {html.escape(row['flags'])}</span>"
                    if row["flags"] else "")
            shift = row["ΔH shift if left out [kJ/mol]"]
            lab.value = (f"{fmt_t(a.T[i])}, {run.reading[i]:g} {html.escape(ru)}, "
                         f"{D.number(row['V [mL]'], 'mL')}, "
                         f"{fmt_p(a.p_vap[i], a.u_p_vap[i])}, "
                         f"{D.signed(row['residual [Δln p]'], '', 4)}, "
                         + ("—" if not np.isfinite(shift) else D.signed(shift, '', 2)) + flag)
