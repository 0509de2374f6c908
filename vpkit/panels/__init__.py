"""Notebook panels (the only part of vpkit that imports ipywidgets).

Use ``vpkit.panels.explore(path_or_run)``; needs the notebook extra
(``pip install 'vpkit[notebook]'``).
"""

from .explorer import RunPanel, explore
from .overview_panel import OverviewPanel, overview
from .plan_panel import PlanPanel, plan_panel

__all__ = ["OverviewPanel", "PlanPanel", "RunPanel", "explore", "overview", "plan_panel"]
