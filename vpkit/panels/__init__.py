"""Notebook panels (the only part of vpkit that imports ipywidgets).

Use ``vpkit.panels.explore(path_or_run)``; needs the notebook extra
(``pip install 'vpkit[notebook]'``).
"""

from .run_panel import RunPanel, explore

__all__ = ["RunPanel", "explore"]
