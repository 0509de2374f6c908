"""Many runs at once: a long table, a folder or Run records -> one summary row per run.

This is the one analysis path (:func:`vpkit.analysis.engine.analyze_stack`) called on
all runs at once, in blocks of runs with similar numbers of points so that
memory and time grow linearly. A run that cannot be read or analysed keeps
its row, with the reason in ``status``; nothing is skipped silently. The same
numbers as :func:`vpkit.analyze` come out, because it is the same code.

Functions take and return pandas DataFrames partitioned by run, so the same
code runs per partition under Dask (``map_partitions``). The long-table layout
is described in :mod:`vpkit.record.longtable`.

References
----------
Equations: see :mod:`vpkit.analysis.engine` and the modules it names.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from .. import display as D
from ..record.assemble import name_runs, stack_runs
from ..record.longtable import stack_table, table_to_runs
from ..record.run import Run
from ..record.sources import LoadResult, read_runs
from ..record.stack import RunStack
from .choices import Choices
from .engine import StackResult, analyze_stack
from .one_run import Analysis
from .result_tables import RESULT_COLUMNS, results_table
from .section import CONSENSUS_COLUMNS, section_tables


@dataclass(frozen=True)
class ManyResult:
    """The analysis of many runs: block results, the summary, and what failed.

    Attributes
    ----------
    summary : DataFrame
        One row per run, in input order (see :func:`vpkit.analysis.result_tables.results_table`),
        including runs that could not be read or analysed (reason in ``status``).
    choices : Choices
    blocks : tuple of (ndarray, StackResult)
        Positions in the input stack and the result of each block (empty when
        the results were not kept).
    failed : tuple of (str, str)
        Runs that could not be read: file or run id, and why.
    runs : mapping run_id -> Run
    sessions : mapping run_id -> str
        Session files applied (folders of run files).
    paths : mapping run_id -> Path
        The run file of each run (folders of run files).
    consensus : DataFrame
        One row per liquid with at least two analysed runs: the section's consensus of
        ΔH_vap (at the runs' mean T_m) and of T_b at 101.325 kPa, every estimator
        beside it, and the joint fit (:mod:`vpkit.analysis.section`). The summary then
        has each run's z, ζ and signal; both need the results kept (``keep=True``).
    notes : tuple of str
        What reading the folder noted without failing a run (a session not applied, a
        run id taken by another file).
    """

    summary: pd.DataFrame
    choices: Choices
    blocks: tuple = field(repr=False, default=())
    failed: tuple = ()
    runs: Mapping[str, Run] = field(default_factory=dict, repr=False)
    sessions: Mapping[str, str] = field(default_factory=dict, repr=False)
    paths: Mapping[str, object] = field(default_factory=dict, repr=False)
    consensus: pd.DataFrame = field(default_factory=lambda: pd.DataFrame(
        columns=CONSENSUS_COLUMNS), repr=False)
    notes: tuple[str, ...] = ()

    def _where(self, run_id: str) -> tuple[StackResult, int]:
        for _, res in self.blocks:
            if run_id in res.stack.run_ids:
                return res, res.stack.run_ids.index(run_id)
        raise KeyError(run_id)

    def analysis(self, run_id: str) -> Analysis:
        """The single-run view of ``run_id`` (the same numbers as the summary row)."""
        res, r = self._where(run_id)
        if res.errors[r] is not None:
            raise res.errors[r]
        run = self.runs.get(run_id)
        if run is None:
            raise KeyError(f"no run record kept for {run_id!r}")
        return Analysis(run, res, r, self.choices.as_options())

    def analyses(self) -> dict[str, Analysis]:
        """Every run that was analysed, by id."""
        out = {}
        for _, res in self.blocks:
            for r, rid in enumerate(res.stack.run_ids):
                if res.errors[r] is None and rid in self.runs:
                    out[rid] = Analysis(self.runs[rid], res, r, self.choices.as_options())
        return out


def analyze_stack_in_blocks(stack: RunStack, choices: Choices, *, chunk_runs: int = 2048,
                            keep: bool = True) -> tuple[pd.DataFrame, tuple]:
    """Analyse a stack block by block; the summary in stack order, and the blocks kept."""
    order = np.argsort(stack.n_points, kind="stable")
    tables, blocks = [], []
    for start in range(0, stack.R, chunk_runs):
        idx = np.sort(order[start:start + chunk_runs])
        res = analyze_stack(stack.take(idx), choices)
        tab = results_table(res)
        tab.index = idx
        tables.append(tab)
        if keep:
            blocks.append((idx, res))
    if not tables:
        return results_table_empty(), ()
    return pd.concat(tables).sort_index().reset_index(drop=True), tuple(blocks)


def results_table_empty() -> pd.DataFrame:
    return pd.DataFrame(columns=summary_columns())


def summary_columns() -> list[str]:
    """Columns of the summary table (the results table's, in order)."""
    return list(RESULT_COLUMNS)


def _with_failures(summary: pd.DataFrame, failed, order_ids=None) -> pd.DataFrame:
    if not failed:
        return summary
    rows = pd.DataFrame({"run_id": [rid for rid, _ in failed],
                         "status": [f"not read: {msg}" for _, msg in failed]})
    out = pd.concat([summary, rows], ignore_index=True) if len(summary) else rows.reindex(
        columns=summary_columns())
    if order_ids is not None:
        pos = {rid: k for k, rid in enumerate(order_ids)}
        out = out.iloc[np.argsort([pos.get(r, len(pos)) for r in out["run_id"]],
                                  kind="stable")].reset_index(drop=True)
    return out


def analyze_many(source, *, chunk_runs: int = 2048, keep: bool = True, sessions: bool = True,
                 **options) -> ManyResult:
    """Analyse a folder of run files, a long-table CSV or DataFrame, or Run records.

    ``options`` are those of :func:`vpkit.analyze` (model, weighting, air_from,
    ..., thresholds); they mean the same here (:mod:`vpkit.analysis.choices`).
    """
    choices = Choices(**options)
    runs: Mapping[str, Run] = {}
    failed: tuple = ()
    order = None
    applied: Mapping[str, str] = {}
    paths: Mapping[str, object] = {}
    notes: tuple[str, ...] = ()
    if isinstance(source, pd.DataFrame):
        stack, bad = stack_table(source)
        failed = tuple((rid, str(e)) for rid, e in bad)
        order = (list(pd.unique(source["run_id"].astype(str).to_numpy())) if failed
                 else None)
        if keep and stack.R <= 2000:
            runs = table_to_runs(source, stack.run_ids)
    elif isinstance(source, Mapping) or (isinstance(source, Iterable)
                                          and not isinstance(source, (str, bytes))
                                          and not hasattr(source, "is_dir")):
        runs = dict(source) if isinstance(source, Mapping) else name_runs(source)
        stack, bad = stack_runs(runs, strict=False)
        failed = tuple((rid, str(e)) for rid, e in bad)
        order = list(runs)
    else:
        load: LoadResult = read_runs(source, sessions=sessions)
        stack, failed, runs, applied = load.stack, load.failed, dict(load.runs), load.sessions
        paths, notes = dict(load.paths), tuple(load.notes)
    summary, blocks = analyze_stack_in_blocks(stack, choices, chunk_runs=chunk_runs, keep=keep)
    summary = _with_failures(summary, failed, order)
    cons = pd.DataFrame(columns=CONSENSUS_COLUMNS)
    if keep and len(summary):
        cons, score = section_tables(summary, blocks)
        summary = with_signals(summary, score)
    return ManyResult(summary, choices, blocks, failed, runs, applied, paths, cons, notes)


def with_signals(summary: pd.DataFrame, score: pd.DataFrame) -> pd.DataFrame:
    """The summary with the section's score columns, and each signal added to the run's
    flags and flag reasons with the score that triggered it (ISO 13528)."""
    out = pd.concat([summary, score], axis=1)
    flags, reasons = out["flags"].fillna("").astype(str), out["flag reasons"].fillna("")
    for i in np.flatnonzero(out["signal"].to_numpy() != ""):
        kind = out["signal"].iat[i]
        zH, zT = out["ζ vs consensus"].iat[i], out["ζ vs consensus (T_b)"].iat[i]
        worst = ("ΔH_vap", zH) if not abs(zT) > abs(zH) else ("T_b at 101.325 kPa", zT)
        text = (f"{worst[0]}: ζ = {D.signed(worst[1], '', 1)} against the section consensus ("
                + ("|ζ| ≥ 3, an action signal: check this run)" if kind == "action"
                   else "2 < |ζ| < 3, a warning signal)"))
        flag = f"section {kind} signal"
        flags.iat[i] = f"{flags.iat[i]}, {flag}" if flags.iat[i] else flag
        reasons.iat[i] = f"{reasons.iat[i]}; {text}" if reasons.iat[i] else text
    out["flags"], out["flag reasons"] = flags, reasons
    return out


def analyze_table(table: pd.DataFrame, *, chunk_runs: int = 2048, **options) -> pd.DataFrame:
    """Analyse every run of a long table: one summary row per run (input order).

    Parameters
    ----------
    table : DataFrame
        Long table (see :mod:`vpkit.record.longtable`); all rows of each run present.
    chunk_runs : int
        Runs per block of array work (memory about 40 kB per run of 8 points).
    **options
        As for :func:`vpkit.analyze` (model, weighting, air_from,
        vapor_at_air_reference, use_head, gas_mass, reference, thresholds, ...).

    Returns
    -------
    DataFrame
        See :func:`vpkit.analysis.result_tables.results_table`; ``flags`` and ``flag reasons``
        hold the findings of :mod:`vpkit.analysis.findings`, ``status`` why a run was not
        analysed.
    """
    return analyze_many(table, chunk_runs=chunk_runs, keep=False, **options).summary


def analyze_runs(runs: Mapping[str, Run] | Iterable[Run], **options) -> pd.DataFrame:
    """:func:`analyze_table` for Run records (dict run_id -> Run, or a list)."""
    return analyze_many(runs, keep=False, **options).summary
