"""Before and during a run: the planner and the bench check of each new reading.

- :mod:`.planner`: :func:`plan`, :func:`predict`, :func:`search` — a planned run's
  forward-model readings analysed by the one analysis path.
- :mod:`.bench_check`: :func:`check_reading` — a typed reading against what the run
  so far predicts.
"""

from .bench_check import ReadingCheck, check_reading
from .planner import Plan, Prediction, plan, predict, search

__all__ = ["Plan", "Prediction", "ReadingCheck", "check_reading", "plan", "predict", "search"]
