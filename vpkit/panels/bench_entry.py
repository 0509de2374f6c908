"""The explorer's bench-entry row: a new reading checked as it is typed, then added.

The row holds no physics: the check is :func:`vpkit.check_reading` and the append
is :func:`vpkit.record.append_reading`, both called through the explorer.
"""

from __future__ import annotations

import html
from collections.abc import Callable

import ipywidgets as W

from ..errors import VpkitError


class BenchEntry:
    """A bath temperature and a reading, a button that adds them, and the check's verdict.

    Parameters
    ----------
    units : (str, str)
        The run's temperature and reading units (the boxes take numbers in them).
    check : callable (t, reading) -> ReadingCheck
    add : callable (t, reading) -> str
        Adds the reading; returns what to tell the user.
    """

    def __init__(self, units: tuple[str, str], check: Callable, add: Callable,
                 style: dict | None = None) -> None:
        tu, ru = units
        style = style or {"description_width": "150px"}
        self._check, self._add = check, add
        self.t = W.FloatText(description=f"new bath t [{tu}]", style=style,
                             layout=W.Layout(width="260px"))
        self.reading = W.FloatText(description=f"reading [{ru}]", style=style,
                                   layout=W.Layout(width="220px"))
        self.button = W.Button(description="add to the run", layout=W.Layout(width="160px"))
        self.message = W.HTML()
        self.t.observe(lambda _: self.on_typed(), names="value")
        self.reading.observe(lambda _: self.on_typed(), names="value")
        self.button.on_click(lambda _: self.on_add())
        self.widget = W.VBox([W.HTML("<b>Add a reading</b> (checked against the run so far as "
                                     "you type)"), W.HBox([self.t, self.reading, self.button]),
                              self.message])

    def on_typed(self) -> None:
        try:
            c = self._check(self.t.value, self.reading.value)
        except VpkitError as exc:
            self.message.value = f"<i>{html.escape(str(exc))}</i>"
            return
        color = "#a00" if c.suspect else "#060"
        self.message.value = f"<span style='color:{color}'>{html.escape(c.message)}</span>"

    def on_add(self) -> None:
        try:
            said = self._add(self.t.value, self.reading.value)
        except VpkitError as exc:
            self.message.value = f"<span style='color:#a00'>{html.escape(str(exc))}</span>"
            return
        self.message.value = f"<i>{html.escape(said)}</i>"
