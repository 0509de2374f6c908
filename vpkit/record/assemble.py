"""Building the stack: the one conversion to SI, the one set of checks, the one default rule.

Run records (:func:`stack_runs`) and long tables
(:func:`vpkit.record.longtable.stack_table`) both hand their SI columns to
:func:`assemble`, which runs :func:`vpkit.record.validate.check` and
:func:`vpkit.record.validate.uncertainties` and pads the runs into a
:class:`~vpkit.record.stack.RunStack`, so a run gets the same numbers and the
same errors whichever way it arrives.

References
----------
.. [1] JCGM 100:2008 (GUM), section 4.3: Type B standard uncertainties (the
   defaults are common practice, no source: :data:`vpkit.record.run.DEFAULT_UNCERTAINTY`).
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping, Sequence
from types import MappingProxyType

import numpy as np

from ..arrays import readonly
from ..errors import BadValueError, InputError, UnitError
from ..units import reading_kind, to_si
from .fields import FIELDS
from .run import Run
from .stack import QUANTITY, SCALARS, U_KEYS, Columns, RunSI, RunStack, frozen_map
from .validate import check, uncertainties

#: Most readings analysed in one run; a run with more is refused with its place, before
#: any array of its size is made. At 1,000 readings one analysis takes about 1.6 s on a
#: 2-core machine, at 2,000 about ten times that (dense covariance, leave-one-out).
MAX_READINGS = 1_000


def assemble(c: Columns) -> tuple[RunStack, list[tuple[int, InputError]]]:
    """Check the columns, fill default uncertainties and pad into a :class:`RunStack`.

    Returns the stack of the runs that pass and, for each run that does not,
    its index in ``c`` and the located error (the first check it fails).
    """
    R = len(c.run_ids)
    counts = np.bincount(c.run, minlength=R)
    too_long = counts > MAX_READINGS
    N = int(counts[~too_long].max()) if (~too_long).any() else 0
    first = np.concatenate([[0], np.cumsum(counts)[:-1]]).astype(int)
    pos = np.arange(len(c.run)) - first[c.run]
    kept = ~too_long[c.run]  # a run over the limit is refused, never padded

    def pad(values, fill, dtype):
        out = np.full((R, N), fill, dtype=dtype)
        out[c.run[kept], pos[kept]] = np.asarray(values)[kept]
        return out

    T = pad(c.T, np.nan, float)
    reading = pad(c.reading, np.nan, float)
    pressure = pad(c.pressure, np.nan, float)
    mask = pad(np.ones(len(c.run), bool), False, bool)
    rows = pad(c.rows, -1, int)
    stack = RunStack(
        tuple(c.run_ids), tuple(c.liquid), tuple(c.sources), readonly(T), readonly(reading),
        readonly(pressure), readonly(mask), readonly(pad(c.include, False, bool)),
        readonly(pad(c.reason, "", object)), readonly(rows),
        MappingProxyType({k: readonly(np.asarray(c.scalar[k], float)) for k in SCALARS}),
        readonly(np.asarray(c.direction, int)), frozen_map(uncertainties(c)),
        tuple(c.places), readonly(c.length_readings))
    failures = dict(check(stack, c))
    for r in np.flatnonzero(too_long):
        row = int(c.rows[first[r] + MAX_READINGS])
        failures[int(r)] = BadValueError(
            f"the run has {counts[r]:,} readings, more than the {MAX_READINGS:,} vpkit "
            "analyses in one run (its covariance is dense: time grows steeply with the number)",
            file=c.sources[r], row=row if row > 0 else None, column="reading",
            hint="keep the settled readings, one or a few per bath temperature (a bath "
            "logger's record is not a run file)")
    failures = sorted(failures.items())
    if failures:
        bad = np.zeros(R, bool)
        bad[[r for r, _ in failures]] = True
        stack = stack.take(~bad)
    return stack, failures


def parse_direction(text) -> int:
    """+1 for 'closed end' (or empty), -1 for 'open end', 0 for anything else."""
    g = str(text).strip().lower().replace("-", " ").replace("_", " ")
    if g in ("", "nan", "closed end", "closed"):
        return 1
    if g in ("open end", "open"):
        return -1
    return 0


def name_runs(runs: Iterable[Run]) -> dict[str, Run]:
    """Runs keyed by run id: each run's file name without its extension (the name the
    many-run report uses) when every run has a file and the names differ, else
    ``run1``, ``run2``, ... in order."""
    runs = list(runs)
    names = [r.name for r in runs]
    if None not in names and len(set(names)) == len(names):
        return dict(zip(names, runs))
    return {f"run{i + 1}": r for i, r in enumerate(runs)}


def stack_runs(runs: Mapping[str, Run] | Iterable[Run], *, strict: bool = True
               ) -> RunStack | tuple[RunStack, list[tuple[str, InputError]]]:
    """Stack run records (a mapping run_id -> Run, or a sequence).

    Parameters
    ----------
    runs : mapping or iterable of Run
    strict : bool
        Raise the first run's error (default); with False, return
        ``(stack, failures)`` where failures lists ``(run_id, error)`` for the
        runs left out.
    """
    if not isinstance(runs, Mapping):
        runs = name_runs(runs)
    ids: list[str] = []
    parts: list[dict] = []
    failures: list[tuple[str, InputError]] = []
    for run_id, run in runs.items():
        try:
            parts.append(_run_columns(run))
            ids.append(str(run_id))
        except InputError as exc:
            if strict:
                raise
            failures.append((str(run_id), exc))
    c = _join(ids, parts)
    stack, bad = assemble(c)
    if strict and bad:
        raise bad[0][1]
    failures += [(ids[r], exc) for r, exc in bad]
    return stack if strict else (stack, failures)


def _run_columns(run: Run) -> dict:
    """One run's SI columns (unit conversion of what the user typed)."""
    src = run.source
    places = {name: (run.row_of_entry(name), name) for name in FIELDS}
    scalar, given = {}, {}
    for key, name in QUANTITY.items():
        e = run.entry(name)
        if e is None or isinstance(e.value, str):
            scalar[key], given[key] = np.nan, np.nan
            continue
        kind = FIELDS[name][0]
        try:
            scalar[key] = float(to_si(e.value, e.unit, kind))
            given[key] = (np.nan if e.uncertainty is None
                          else float(to_si(e.uncertainty, e.unit, kind, delta=True)))
        except UnitError as exc:
            raise UnitError(f"{name}: {exc.message}", file=src, row=run.row_of_entry(name),
                            column="unit", hint=exc.hint) from exc
    tu, ru, pu = run.units
    for key, name, kind in (("reading", "reading_uncertainty", "reading"),
                            ("T", "temperature_uncertainty", "temperature")):
        e = run.entry(name)
        given[key] = (np.nan if e is None or isinstance(e.value, str)
                      else float(to_si(e.value, e.unit, kind, delta=kind == "temperature")))
    given["pressure"] = np.nan
    _same_kind_as_readings(run, ru)
    n = run.n_points
    T = to_si(np.asarray(run.bath_temperature, float), tu, "temperature")
    reading = to_si(np.asarray(run.reading, float), ru, "reading")
    pressure = np.array([np.nan if p is None else p for p in run.pressure], float)
    if pu:
        pressure = to_si(pressure, pu, "pressure")
    ge = run.entry("graduated_from")
    rows = np.array([run.row_of(i) or -1 for i in range(n)], int)
    return {"liquid": run.liquid, "source": src, "T": T, "reading": reading,
            "pressure": pressure, "include": np.asarray(run.include, bool),
            "reason": np.array(run.reason, dtype=object).reshape(n), "rows": rows,
            "scalar": scalar, "given": given,
            "direction": parse_direction("" if ge is None else ge.value),
            "T_unit": tu, "reading_unit": ru, "pressure_unit": pu, "places": places}


def _same_kind_as_readings(run: Run, reading_unit: str) -> None:
    """Entries of the readings' kind (room reading, reading uncertainty, resolution) must be
    volumes when the readings are volumes and lengths when they are bubble lengths."""
    want = reading_kind(reading_unit)
    for name, (kind, _, _) in FIELDS.items():
        e = run.entry(name)
        if kind != "reading" or e is None or isinstance(e.value, str):
            continue
        if reading_kind(e.unit) != want:
            raise UnitError(f"{name} is a {reading_kind(e.unit)} ({e.unit}) but the readings "
                            f"are {want}s ({reading_unit})", file=run.source,
                            row=run.row_of_entry(name), column="unit",
                            hint=f"give {name} in the readings' unit, {reading_unit}")


def _join(ids: Sequence[str], parts: Sequence[dict]) -> Columns:
    cat = lambda key, dtype=float: (np.concatenate([p[key] for p in parts]).astype(dtype)  # noqa: E731
                                    if parts else np.zeros(0, dtype))
    return Columns(
        run_ids=list(ids), liquid=[p["liquid"] for p in parts],
        sources=[p["source"] for p in parts],
        run=np.repeat(np.arange(len(parts)), [len(p["T"]) for p in parts]).astype(int),
        T=cat("T"), reading=cat("reading"), pressure=cat("pressure"),
        include=cat("include", bool), reason=cat("reason", object), rows=cat("rows", int),
        scalar={k: np.array([p["scalar"][k] for p in parts], float) for k in SCALARS},
        direction=np.array([p["direction"] for p in parts], int),
        given_u={k: np.array([p["given"].get(k, np.nan) for p in parts], float)
                 for k in U_KEYS if k != "density_relative"} | {
            "density": np.array([p["given"].get("density", np.nan) for p in parts], float)},
        T_unit=[p["T_unit"] for p in parts], places=[p["places"] for p in parts],
        reading_unit=[p["reading_unit"] for p in parts],
        pressure_unit=[p["pressure_unit"] for p in parts])


def run_in_si(run: Run) -> RunSI:
    """One run converted to SI and validated (see :class:`vpkit.record.stack.RunSI`).

    The same conversion, validation and default uncertainties as for many
    runs: this is :func:`stack_runs` of this one run.

    Raises
    ------
    UnitError, ImpossibleDataError, RunFileError, BadValueError
        With the file, row and column of the offending entry.
    """
    return stack_runs([run]).row(0)
