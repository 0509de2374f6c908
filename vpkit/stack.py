"""The stacked run record: one run or ten thousand as padded SI arrays, checked once.

Every analysis works on a :class:`RunStack`: per-run quantities as arrays of
shape (R,), readings as arrays of shape (R, N) padded with NaN (``mask`` marks
the real points). One run is a stack of one. The stack is built from
:class:`~vpkit.run.Run` records (:func:`stack_runs`) or from a long table
(:func:`vpkit.table.stack_table`); both hand their SI columns to
:func:`assemble`, which holds **the one** set of physical checks and **the
one** default-uncertainty rule, so a run gets the same numbers and the same
errors whichever way it arrives.

Units: K, Pa, m^3, kg, kg/m^3, m. Uncertainties are standard uncertainties in
the same units (``density_relative`` is relative).

References
----------
.. [1] JCGM 100:2008 (GUM), section 4.3: Type B standard uncertainties from
   stated instrument uncertainties (the defaults are common practice, no
   source: see :data:`vpkit.run.DEFAULT_UNCERTAINTY`).
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, field
from types import MappingProxyType

import numpy as np

from .errors import InputError, UnitError
from .lsq import readonly
from .run import FIELDS, Run
from .units import to_si
from .validate import QUANTITY, check, uncertainties

SCALARS = tuple(QUANTITY)
U_KEYS = ("T", "reading", "pressure", "P_bar", "T_room", "room_reading", "mass_before",
          "mass_after", "V_injected", "scale_offset", "depth", "T_boil", "room_depth", "bore",
          "RH", "density_relative")


@dataclass(frozen=True)
class RunSI:
    """The SI view of one run of a stack (arrays of length n, read-only).

    ``pressure`` is NaN where a point has no own pressure; per-run quantities
    are floats, or None where the run does not give them. ``u`` maps an input
    to its standard uncertainty (after the default rule).
    """

    liquid: str
    T: np.ndarray
    reading: np.ndarray
    pressure: np.ndarray
    include: np.ndarray
    reason: tuple[str, ...]
    P_bar: float
    T_room: float
    room_reading: float | None
    mass_before: float | None
    mass_after: float | None
    density: float | None
    density_from_reference: bool
    V_injected: float | None
    scale_offset: float | None
    direction: int
    depth: float | None
    T_boil: float | None
    u: Mapping[str, float]
    room_depth: float | None = None
    bore: float | None = None
    RH: float | None = None
    resolution: float | None = None
    capacity: float | None = None


@dataclass(frozen=True)
class RunStack:
    """R runs as padded SI arrays (see the module docstring). All arrays are read-only.

    Attributes
    ----------
    run_ids, liquid, sources : tuple of str
        Per run: its id, the liquid as entered, the file it came from (or None).
    T, reading, pressure : ndarray, shape (R, N)
        Bath temperature [K], graduation reading [m^3], own pressure [Pa] (NaN
        where the point sees the barometric pressure). NaN padding.
    mask, include : ndarray of bool, shape (R, N)
        Real points; points the user includes.
    reason : ndarray of str, shape (R, N)
    rows : ndarray of int, shape (R, N)
        File line of each reading (-1 where unknown).
    scalar : mapping of str -> ndarray (R,)
        Per-run quantities (keys :data:`SCALARS`), NaN where not given;
        ``density`` is NaN where the run asks for the reference density.
    direction : ndarray of int, shape (R,)
        +1 graduated from the closed end, -1 from the open end.
    u : mapping of str -> ndarray (R,)
        Standard uncertainties (keys :data:`U_KEYS`).
    places : tuple of mapping
        Per run, quantity -> (row, column label) for messages.
    """

    run_ids: tuple[str, ...]
    liquid: tuple[str, ...]
    sources: tuple[str | None, ...]
    T: np.ndarray
    reading: np.ndarray
    pressure: np.ndarray
    mask: np.ndarray
    include: np.ndarray
    reason: np.ndarray
    rows: np.ndarray
    scalar: Mapping[str, np.ndarray]
    direction: np.ndarray
    u: Mapping[str, np.ndarray]
    places: tuple[Mapping[str, tuple[int | None, str]], ...] = field(repr=False)

    @property
    def R(self) -> int:
        return len(self.run_ids)

    @property
    def N(self) -> int:
        return self.T.shape[1]

    @property
    def n_points(self) -> np.ndarray:
        return readonly(self.mask.sum(axis=1))

    def take(self, index) -> RunStack:
        """The runs at ``index`` (an integer array or boolean mask) as a new stack."""
        idx = np.flatnonzero(index) if np.asarray(index).dtype == bool else np.asarray(index)
        n = int(self.mask[idx].sum(axis=1).max()) if len(idx) else 0
        pick = lambda a: readonly(a[idx][:, :n])  # noqa: E731
        return RunStack(
            tuple(self.run_ids[i] for i in idx), tuple(self.liquid[i] for i in idx),
            tuple(self.sources[i] for i in idx), pick(self.T), pick(self.reading),
            pick(self.pressure), pick(self.mask), pick(self.include), pick(self.reason),
            pick(self.rows), _frozen_map({k: v[idx] for k, v in self.scalar.items()}),
            readonly(self.direction[idx]), _frozen_map({k: v[idx] for k, v in self.u.items()}),
            tuple(self.places[i] for i in idx))

    def row(self, r: int) -> RunSI:
        """The SI view of run ``r`` (trimmed to its own points)."""
        n = int(self.mask[r].sum())
        s = {k: float(v[r]) for k, v in self.scalar.items()}
        opt = {k: (None if np.isnan(v) else v) for k, v in s.items()}
        return RunSI(
            liquid=self.liquid[r], T=self.T[r, :n], reading=self.reading[r, :n],
            pressure=self.pressure[r, :n], include=self.include[r, :n],
            reason=tuple(str(x) for x in self.reason[r, :n]), P_bar=s["P_bar"],
            T_room=s["T_room"], room_reading=opt["room_reading"],
            mass_before=opt["mass_before"], mass_after=opt["mass_after"],
            density=opt["density"], density_from_reference=opt["density"] is None,
            V_injected=opt["V_injected"], scale_offset=opt["scale_offset"],
            direction=int(self.direction[r]), depth=opt["depth"], T_boil=opt["T_boil"],
            u={k: float(v[r]) for k, v in self.u.items()}, room_depth=opt["room_depth"],
            bore=opt["bore"], RH=opt["RH"], resolution=opt["resolution"],
            capacity=opt["capacity"])

    def place(self, r: int, name: str, point: int | None = None) -> dict:
        """``file``, ``row`` and ``column`` of a quantity (or of point ``point``)."""
        if point is not None:
            row = int(self.rows[r, point])
            return {"file": self.sources[r], "row": None if row < 0 else row, "column": name}
        row, label = self.places[r].get(name, (None, name))
        return {"file": self.sources[r], "row": row, "column": label}


# ---------------------------------------------------------------------------
# the one set of checks and the one default rule
# ---------------------------------------------------------------------------


@dataclass
class Columns:
    """SI columns of R runs as the builders hand them to :func:`assemble`.

    Flat per-point arrays (length M, ``run`` gives each point's run index, in
    order) and per-run arrays (length R). Absent values are NaN; ``given_u``
    holds uncertainties the input states (NaN where it states none; the
    optional key ``density_relative`` a relative one).
    """

    run_ids: list[str]
    liquid: list[str]
    sources: list[str | None]
    run: np.ndarray
    T: np.ndarray
    reading: np.ndarray
    pressure: np.ndarray
    include: np.ndarray
    reason: np.ndarray
    rows: np.ndarray
    scalar: dict[str, np.ndarray]
    direction: np.ndarray
    given_u: dict[str, np.ndarray]
    T_unit: list[str]
    places: list[dict[str, tuple[int | None, str]]]
    reading_unit: list[str] = field(default_factory=list)
    pressure_unit: list[str] = field(default_factory=list)


def assemble(c: Columns) -> tuple[RunStack, list[tuple[int, InputError]]]:
    """Check the columns, fill default uncertainties and pad into a :class:`RunStack`.

    Returns the stack of the runs that pass and, for each run that does not,
    its index in ``c`` and the located error (the first check it fails).
    """
    R = len(c.run_ids)
    counts = np.bincount(c.run, minlength=R)
    N = int(counts.max()) if R else 0
    first = np.concatenate([[0], np.cumsum(counts)[:-1]]).astype(int)
    pos = np.arange(len(c.run)) - first[c.run]

    def pad(values, fill, dtype):
        out = np.full((R, N), fill, dtype=dtype)
        out[c.run, pos] = values
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
        readonly(np.asarray(c.direction, int)), _frozen_map(uncertainties(c)),
        tuple(c.places))
    failures = check(stack, c)
    if failures:
        bad = np.zeros(R, bool)
        bad[[r for r, _ in failures]] = True
        stack = stack.take(~bad)
    return stack, failures


def _frozen_map(d: dict[str, np.ndarray]) -> Mapping[str, np.ndarray]:
    return MappingProxyType({k: readonly(np.asarray(v, float)) for k, v in d.items()})


# ---------------------------------------------------------------------------
# from Run records
# ---------------------------------------------------------------------------


def parse_direction(text) -> int:
    """+1 for 'closed end' (or empty), -1 for 'open end', 0 for anything else."""
    g = str(text).strip().lower().replace("-", " ").replace("_", " ")
    if g in ("", "nan", "closed end", "closed"):
        return 1
    if g in ("open end", "open"):
        return -1
    return 0


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
        runs = {f"run{i + 1}": r for i, r in enumerate(runs)}
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
    for key, name, kind in (("reading", "reading_uncertainty", "volume"),
                            ("T", "temperature_uncertainty", "temperature")):
        e = run.entry(name)
        given[key] = (np.nan if e is None or isinstance(e.value, str)
                      else float(to_si(e.value, e.unit, kind, delta=kind == "temperature")))
    given["pressure"] = np.nan
    tu, ru, pu = run.units
    n = run.n_points
    T = to_si(np.asarray(run.bath_temperature, float), tu, "temperature")
    reading = to_si(np.asarray(run.reading, float), ru, "volume")
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
