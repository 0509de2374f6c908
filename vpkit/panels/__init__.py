"""Notebook panels (the only part of vpkit that imports ipywidgets).

Use ``vpkit.panels.explore(path_or_run)``; needs the notebook extra
(``pip install 'vpkit[notebook]'``).
"""

from .overview_panel import OverviewPanel, overview
from .run_panel import RunPanel, explore

__all__ = ["OverviewPanel", "RunPanel", "explore", "overview"]
