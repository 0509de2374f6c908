"""vpkit: vapor pressures, enthalpy of vaporization and boiling points from
trapped-bubble readings.

Typical use::

    import vpkit
    run = vpkit.read_run("data/demo/fresh_2-propanol.csv")
    result = vpkit.analyze(run)
    print(result.summary())
    result.figure().savefig("run.png", dpi=300)
"""

from . import display
from .analysis import (
    Analysis,
    ManyResult,
    analyze,
    analyze_many,
    analyze_table,
    compare_to_reference,
)
from .errors import (
    BadValueError,
    FitError,
    ImpossibleDataError,
    InputError,
    RunFileError,
    UnitError,
    VpkitError,
    VpkitWarning,
)
from .fitting import FitResult, fit_points
from .physics import liquids, reference_curve
from .planning import check_reading, plan
from .record import Entry, Run, RunStack, format_run, parse_run, read_run, stack_runs, write_run

__version__ = "0.2.0"


def explore(run_or_path, **kwargs):
    """Open the interactive run explorer (needs ``pip install 'vpkit[notebook]'``).

    See :func:`vpkit.panels.explore`; imported lazily so that ``import vpkit``
    never loads the widget libraries.
    """
    from .panels import explore as _explore

    return _explore(run_or_path, **kwargs)


def plan_panel(liquid, **kwargs):
    """Open the planner panel (needs ``pip install 'vpkit[notebook]'``).

    See :func:`vpkit.panels.plan_panel`.
    """
    from .panels import plan_panel as _plan_panel

    return _plan_panel(liquid, **kwargs)


def overview(source, **options):
    """Open the many-run overview panel (needs ``pip install 'vpkit[notebook]'``).

    See :func:`vpkit.panels.overview`.
    """
    from .panels import overview as _overview

    return _overview(source, **options)

__all__ = [
    "Analysis", "BadValueError", "Entry", "FitError", "FitResult", "ImpossibleDataError",
    "InputError", "Run", "RunStack", "check_reading", "stack_runs",
    "RunFileError", "UnitError", "VpkitError", "VpkitWarning", "analyze", "compare_to_reference",
    "explore", "fit_points", "overview", "format_run", "liquids", "parse_run", "plan",
    "plan_panel", "read_run", "reference_curve", "write_run", "display", "ManyResult",
    "analyze_many", "analyze_table",
]
