"""The run as entered, and everything that reads, checks, stacks or writes it.

- :mod:`.fields`, :mod:`.run`: the quantities a run can give; :class:`Run`, kept as typed.
- :mod:`.cells`: typed cells to entries and readings (one parser for every format).
- :mod:`.runfile`: the run file (read, write, append a reading); :mod:`.longtable`:
  many runs in one table or a folder; :mod:`.session`: exclusions and choices
  saved beside a run file; :mod:`.safewrite`: the one way a file is replaced.
- :mod:`.stack`, :mod:`.validate`, :mod:`.assemble`: runs as padded SI arrays, with
  the one set of input checks and the one default-uncertainty rule.

This stage imports nothing above :mod:`vpkit.errors`, :mod:`vpkit.units`,
:mod:`vpkit.constants` and :mod:`vpkit.arrays`.
"""

from .assemble import run_in_si, stack_runs
from .fields import DEFAULT_UNCERTAINTY, FIELDS, Entry
from .longtable import runs_to_table, stack_table, table_to_runs
from .run import Run
from .runfile import append_reading, format_run, parse_run, read_run, write_run
from .sources import LoadResult, read_runs
from .stack import RunSI, RunStack

__all__ = ["DEFAULT_UNCERTAINTY", "FIELDS", "Entry", "LoadResult", "Run", "RunSI", "RunStack",
           "append_reading", "format_run", "parse_run", "read_run", "read_runs", "run_in_si",
           "runs_to_table", "stack_runs", "stack_table", "table_to_runs", "write_run"]
