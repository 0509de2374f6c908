"""Where runs come from: a folder, a run file, a long table, or a workbook.

:func:`read_runs` reads any of them into one stack (:class:`LoadResult`), keeping every
run that cannot be read as a failure with its place and reason; sessions saved beside
run files are applied. The formats themselves are read by :mod:`.runfile`,
:mod:`.longtable` and :mod:`.workbook`.
"""

from __future__ import annotations

import os
from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path

import pandas as pd

from ..errors import RunFileError, VpkitError
from .assemble import stack_runs
from .longtable import stack_table, stack_to_table, table_to_runs
from .run import Run
from .runfile import read_run, run_from_workbook
from .session import SessionError, load_session, session_path
from .stack import RunStack
from .workbook import is_workbook, read_sheets, sheet_frame


@dataclass(frozen=True)
class LoadResult:
    """What a load gave: the stack, what failed and why, and notes.

    Attributes
    ----------
    stack : RunStack
    failed : tuple of (str, str)
        File or run id, and the error (naming file, row and column).
    runs : mapping run_id -> Run
        The run records (folders of run files; rebuilt from the table otherwise).
    notes : tuple of str
    paths : mapping run_id -> Path
    sessions : mapping run_id -> str
        Which session file was applied to which run.
    """

    stack: RunStack
    failed: tuple[tuple[str, str], ...] = ()
    runs: Mapping[str, Run] = field(default_factory=dict)
    notes: tuple[str, ...] = ()
    paths: Mapping[str, Path] = field(default_factory=dict)
    sessions: Mapping[str, str] = field(default_factory=dict)

    @property
    def run_ids(self) -> list[str]:
        return list(self.stack.run_ids)

    @property
    def table(self) -> pd.DataFrame:
        """The long table (SI) of the runs that loaded."""
        return stack_to_table(self.stack)


def _hidden(rel: Path) -> bool:
    """Files a folder scan skips: hidden parts (.ipynb_checkpoints, .git) and notebook
    checkpoint copies (*-checkpoint.csv)."""
    return any(part.startswith(".") for part in rel.parts) or rel.name.endswith(
        "-checkpoint.csv")


def _points_outside(path: Path, folder: Path) -> bool:
    """A symbolic link whose target lies outside ``folder`` (a folder report never reads
    files it was not given)."""
    if not path.is_symlink():
        return False
    target = Path(os.path.realpath(path))
    return not target.is_relative_to(Path(os.path.realpath(folder)))


def read_runs(source, *, pattern: str = "*.csv", sessions: bool = True) -> LoadResult:
    """Read a folder of run files, a long table, one run file, or a workbook.

    A folder yields every run file matching ``pattern`` and every workbook
    (:data:`vpkit.record.workbook.SUFFIXES`) in it; a workbook yields one run per sheet
    (id ``STEM`` for a single sheet, ``STEM:SHEET`` otherwise), or the long table of its
    first sheet. A bad run is reported in ``failed`` (its file or run id, and the error
    naming row and column, or sheet and cell); the others still load. Nothing is
    skipped silently: a symbolic link to a file outside the folder is skipped with a
    note, and a run id already taken (``run.csv`` beside ``run.xlsx``) becomes the file's
    full name, with a note. With ``sessions``, a run file's session (exclusions made in the
    explorer) is applied and named in ``sessions``; a session that does not match its
    run is reported in ``notes`` and the run is used as its file says.
    """
    source = Path(source)
    if is_workbook(source):
        return _from_workbook(source)
    if not (source.is_dir() or _is_run_file(source)):
        return _from_table_file(source)
    out = _Collect()
    if source.is_dir():
        files = sorted(f for f in source.iterdir() if not _hidden(f.relative_to(source))
                       and (f.match(pattern) or is_workbook(f)))
    else:
        files = [source]
    for path in files:
        if source.is_dir() and _points_outside(path, source):
            out.notes.append(f"{path.name}: skipped, a link to {os.path.realpath(path)} "
                             "outside the folder (copy the file in to include it)")
            continue
        if is_workbook(path):
            out.add_workbook(path)
        else:
            out.add_file(path, sessions)
    return out.result()


class _Collect:
    """Runs gathered from files, with their places, sessions, failures and notes."""

    def __init__(self) -> None:
        self.runs: dict[str, Run] = {}
        self.paths: dict[str, Path] = {}
        self.applied: dict[str, str] = {}
        self.failed: list[tuple[str, str]] = []
        self.notes: list[str] = []

    def add_file(self, path: Path, sessions: bool) -> None:
        try:
            run = read_run(path)
        except VpkitError as exc:
            self.failed.append((str(path), str(exc)))
            return
        rid = self.free_id(path.stem, path)
        sp = session_path(path)
        if sessions and sp.exists():
            try:
                run = load_session(sp, run).apply(run)
                self.applied[rid] = sp.name
            except SessionError as exc:
                self.notes.append(f"{path.name}: session not applied: {exc}")
        self.runs[rid] = run
        self.paths[rid] = path

    def free_id(self, rid: str, path: Path) -> str:
        """``rid``, or the file's full name when another file already has that id
        (``run.csv`` and ``run.xlsx`` side by side; then ``_2``, ``_3``, ... if that is
        taken too); said in ``notes``."""
        if rid not in self.runs:
            return rid
        new, k = path.name, 1
        while new in self.runs:
            k += 1
            new = f"{path.name}_{k}"
        self.notes.append(f"{path.name}: run id {rid!r} is taken by "
                          f"{self.paths[rid].name}; this run is {new!r}")
        return new

    def add_workbook(self, path: Path) -> None:
        try:
            sheets = read_sheets(path)
        except VpkitError as exc:
            self.failed.append((str(path), str(exc)))
            return
        if sheets and sheets[0].is_long_table():
            frame = sheet_frame(sheets[0])
            stack, bad = stack_table(frame)
            self.failed += [(rid, str(exc)) for rid, exc in bad]
            for rid, run in table_to_runs(frame, set(stack.run_ids)).items():
                self.runs[rid] = run
                self.paths[rid] = path
            return
        for k, sheet in enumerate(sheets):
            rid = self.free_id(path.stem if len(sheets) == 1 else f"{path.stem}:{sheet.name}",
                               path)
            try:
                self.runs[rid] = run_from_workbook(path, k, sheets=sheets)
                self.paths[rid] = path
            except VpkitError as exc:
                self.failed.append((sheet.label, str(exc)))

    def result(self) -> LoadResult:
        stack, bad = stack_runs(self.runs, strict=False)
        for rid, exc in bad:
            self.failed.append((str(self.paths[rid]), str(exc)))
            self.runs.pop(rid)
        return LoadResult(stack, tuple(self.failed), self.runs, tuple(self.notes), self.paths,
                          self.applied)


def _from_table_file(source: Path) -> LoadResult:
    try:
        table = pd.read_csv(source, comment="#", dtype={"run_id": str, "reason": str,
                                                        "include": str},
                            keep_default_na=True, skipinitialspace=True)
    except (OSError, ValueError) as exc:
        raise RunFileError(f"cannot read the table: {exc}", file=str(source)) from exc
    table.attrs["source"] = str(source)
    return _from_frame(table)


def _from_frame(table) -> LoadResult:
    stack, bad = stack_table(table)
    ok = set(stack.run_ids)
    runs = table_to_runs(table, ok) if len(ok) <= 2000 else {}
    return LoadResult(stack, tuple((rid, str(exc)) for rid, exc in bad), runs)


def _from_workbook(source: Path) -> LoadResult:
    sheets = read_sheets(source)
    if sheets and sheets[0].is_long_table():
        return _from_frame(sheet_frame(sheets[0]))
    out = _Collect()
    out.add_workbook(source)
    return out.result()


def _is_run_file(path: Path) -> bool:
    """A single run file (a '[run]' section) rather than a long table."""
    try:
        head = path.read_bytes()[:4096].decode("utf-8", "replace").lower()
    except OSError:
        return False
    return "[run]" in head
