"""One analysis path for one run or ten thousand: choices, engine, findings, results.

- :mod:`.choices`: validated options and what "auto" means for each run.
- :mod:`.selfconsistent`: p_vap at the air reference solved together with the fit.
- :mod:`.engine`: :func:`analyze_stack`, reduction → propagation → fit → derived values.
- :mod:`.comparison`, :mod:`.derived`, :mod:`.budget`, :mod:`.findings`: the
  published-curve comparison; true ΔvapH, ΔS_vap and the T_b bias; the uncertainty
  budget; the warnings (each with the number that triggered it).
- :mod:`.one_run` (:func:`analyze`, :class:`Analysis`), :mod:`.many_runs`
  (:func:`analyze_many`), :mod:`.monte_carlo`, :mod:`.result_tables`.

Imports :mod:`vpkit.record`, :mod:`vpkit.physics` and :mod:`vpkit.fitting`. The one
exception to "lower stages never import higher ones": :meth:`Analysis.summary` and
:meth:`Analysis.figure` hand over to :mod:`vpkit.output` inside the method (output
never imports analysis, so there is no circle).
"""

from .choices import DEFAULT_THRESHOLDS, Choices
from .comparison import ReferenceComparison, compare_to_reference
from .engine import StackResult, analyze_stack
from .many_runs import ManyResult, analyze_many, analyze_runs, analyze_table, summary_columns
from .monte_carlo import MonteCarloResult
from .one_run import Analysis, analyze

__all__ = ["DEFAULT_THRESHOLDS", "Analysis", "Choices", "ManyResult", "MonteCarloResult",
           "ReferenceComparison", "StackResult", "analyze", "analyze_many", "analyze_runs",
           "analyze_stack", "analyze_table", "compare_to_reference", "summary_columns"]
