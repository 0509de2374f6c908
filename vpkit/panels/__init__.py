"""Notebook panels (the only part of vpkit that imports ipywidgets).

Use ``vpkit.panels.explore(path_or_run)``; needs the notebook extra
(``pip install 'vpkit[notebook]'``).
"""

from .overview_panel import OverviewPanel, overview
from .plan_panel import PlanPanel, plan_panel
from .run_panel import RunPanel, explore

__all__ = ["OverviewPanel", "PlanPanel", "RunPanel", "explore", "overview", "plan_panel"]
