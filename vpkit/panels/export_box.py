"""The explorer's export box: folder, figure width and resolution, and a save button."""

from __future__ import annotations

import html
from collections.abc import Callable
from pathlib import Path

import ipywidgets as W

from ..errors import VpkitError
from ..output.figures import COLUMN_WIDTHS


class ExportBox:
    """Widgets that call ``save(folder, width_mm, dpi) -> {kind: Path}`` and say what was
    written (or why not)."""

    def __init__(self, folder: Path, save: Callable, style: dict, layout) -> None:
        self._save = save
        self.folder = W.Text(value=str(folder), description="folder", style=style,
                             layout=W.Layout(width="520px"))
        self.width = W.Dropdown(options=[("single column, 85 mm", COLUMN_WIDTHS["single"]),
                                         ("double column, 175 mm", COLUMN_WIDTHS["double"])],
                                value=COLUMN_WIDTHS["single"], description="figure width",
                                style=style, layout=layout)
        self.dpi = W.BoundedIntText(value=300, min=72, max=1200, description="PNG dpi",
                                    style=style, layout=layout)
        self.button = W.Button(description="Save figure, tables and summary",
                               layout=W.Layout(width="280px"))
        self.message = W.HTML()
        self.button.on_click(lambda _: self.on_save())
        self.widget = W.VBox([W.HTML("<b>Export for a report</b>"), self.folder, self.width,
                              self.dpi, self.button, self.message])

    def on_save(self) -> None:
        try:
            paths = self._save(self.folder.value, width_mm=float(self.width.value),
                               dpi=int(self.dpi.value))
        except (OSError, VpkitError) as exc:
            self.message.value = f"<span style='color:#a00'>{html.escape(str(exc))}</span>"
            return
        self.message.value = "saved: " + ", ".join(html.escape(p.name) for p in paths.values())
