"""Long tables and folders of run files: loading many runs into one stack.

The long table (our own layout) has one row per reading: a ``run_id`` column,
the run metadata as columns (repeated on every row of a run, as in the run
file's ``[run]`` section, with units in brackets) and the readings columns::

    run_id,liquid,barometric_pressure [kPa],room_temperature [degC],room_reading [mL],
    mass_before_air [g],mass_after_air [g],bath_temperature [degC],reading [mL],include,reason
    bench1,ethanol,100.2,21.0,1.85,30.0000,28.4230,25.0,1.993,yes,
    bench1,ethanol,100.2,21.0,1.85,30.0000,28.4230,30.0,2.089,yes,
    ...

Optional standard uncertainties go in ``u(NAME) [UNIT]`` columns (one value per
run) and a relative density uncertainty in ``u_rel(liquid_density)``.
:func:`stack_table` converts the columns with array code and hands them to
:func:`vpkit.record.assemble.assemble`, the same checks and default rule as for run files.
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np
import pandas as pd

from ..errors import BadValueError, InputError, RunFileError, UnitError
from ..units import check_unit, reading_kind, to_si
from .assemble import assemble, parse_direction, stack_runs
from .cells import INCLUDE_NO, INCLUDE_YES
from .fields import FIELDS, Entry
from .run import Run
from .stack import QUANTITY, U_KEYS, Columns, RunStack

READING_NAMES = ("bath_temperature", "reading", "pressure", "include", "reason")
_POINT = {"bath_temperature": ("T", "temperature"), "reading": ("reading", "reading"),
          "pressure": ("pressure", "pressure")}
_U_OF = {"bath_temperature": "T", "reading": "reading", "pressure": "pressure",
         **{q: k for k, q in QUANTITY.items() if k != "density"}}
# as in a run file, plus what pandas makes of an empty or numeric cell
_TRUE = INCLUDE_YES | {"nan", "1.0"}
_FALSE = INCLUDE_NO | {"0.0"}


def split_header(col) -> tuple[str, str]:
    """'name [unit]' -> ('name', 'unit')."""
    col = str(col).strip()
    if col.endswith("]") and "[" in col:
        name, unit = col[:-1].split("[", 1)
        return name.strip(), unit.strip()
    return col, ""


class _TablePlace(Mapping):
    """Where a run's metadata sits in a long table: its first row, the column label."""

    def __init__(self, row: int, labels: Mapping[str, str]) -> None:
        self.row, self.labels = row, labels

    def __getitem__(self, name):
        return self.row, self.labels.get(name, name)

    def __iter__(self):
        return iter(self.labels)

    def __len__(self):
        return len(self.labels)


def _lines(table: pd.DataFrame) -> np.ndarray:
    """File line of each row: the table's integer index + 2 (header is line 1) when it
    has one (as read_csv gives), else the position + 2."""
    idx = table.index
    if pd.api.types.is_integer_dtype(idx.dtype):
        return idx.to_numpy() + 2
    return np.arange(len(table)) + 2


def stack_table(table: pd.DataFrame, *, source: str | None = None
                ) -> tuple[RunStack, list[tuple[str, InputError]]]:
    """A stack of every run of a long table, and the runs that failed (id, error).

    Errors of the whole table (an unknown column, a missing readings column, a
    bad unit in a header) raise; a bad cell only fails its own run.
    """
    reader = _TableReader(table, source or table.attrs.get("source", "<table>"))
    stack, bad = assemble(reader.columns())
    failures = dict(bad)
    failures.update(reader.fail)  # a bad cell is the more precise reason
    if reader.fail:
        bad_ids = {str(reader.run_ids[r]) for r in reader.fail}
        stack = stack.take(np.array([i for i, rid in enumerate(stack.run_ids)
                                     if rid not in bad_ids], int))
    return stack, [(str(reader.run_ids[r]), failures[r]) for r in sorted(failures)]


class _TableReader:
    """Column-wise conversion of a long table, rows sorted by run (array code)."""

    def __init__(self, table: pd.DataFrame, source: str) -> None:
        self.source = source
        lines = _lines(table)
        self.t = t = table.reset_index(drop=True)
        if "run_id" not in t.columns:
            raise RunFileError("the table has no run_id column", file=source, column="run_id",
                               hint="add a run_id column naming the run of each reading, or "
                               "give a single run file")
        self.cols = self._known_columns()
        ids = t["run_id"].astype(str)
        codes, self.run_ids = pd.factorize(ids.where(~ids.str.startswith("'"),
                                                     ids.str[1:]).to_numpy())
        self.order = np.argsort(codes, kind="stable")
        self.R = len(self.run_ids)
        self.run = codes[self.order]
        self.counts = np.bincount(codes, minlength=self.R)
        self.first = np.concatenate([[0], np.cumsum(self.counts)[:-1]]).astype(int)
        self.row_of = lines[self.order]
        self.fail: dict[int, InputError] = {}

    def _known_columns(self) -> dict[str, str]:
        cols: dict[str, str] = {}
        known = set(FIELDS) | set(READING_NAMES) | {"run_id"}
        for col in self.t.columns:
            name, _ = split_header(col)
            base = name[2:-1] if name.startswith("u(") and name.endswith(")") else name
            if name != "u_rel(liquid_density)" and base not in known:
                raise RunFileError(f"unknown column {col!r}", file=self.source, row=1,
                                   column=str(col), hint="columns are run_id, the run-file "
                                   "quantities and the readings columns, with units in brackets")
            if name in cols:
                raise RunFileError(f"column {name!r} appears twice", file=self.source, row=1,
                                   column=str(col), hint="keep one of them")
            cols[name] = col
        for name in ("bath_temperature", "reading"):
            if name not in cols:
                raise RunFileError(f"the table has no {name!r} column", file=self.source,
                                   row=1, column=name, hint=f"add '{name} [UNIT]'")
        return cols

    def bad_cells(self, bad, col, text, hint) -> None:
        for k in np.flatnonzero(bad):
            r = int(self.run[k])
            if r not in self.fail:
                self.fail[r] = BadValueError(text(k), file=self.source, row=int(self.row_of[k]),
                                             column=str(col), hint=hint)

    def numeric(self, col, kind, delta=False, allow_text=()) -> np.ndarray:
        """A column as SI numbers (NaN where empty); a bad cell fails its run."""
        raw = self.t[col].to_numpy()[self.order]
        if raw.dtype.kind in "fiu":
            values = raw.astype(float)
        else:
            values = pd.to_numeric(pd.Series(raw), errors="coerce").to_numpy(float)
            text = pd.Series(raw).astype(str).str.strip().str.lower().to_numpy()
            bad = pd.notna(raw) & np.isnan(values) & ~np.isin(text, ("", "nan") + allow_text)
            self.bad_cells(bad, col, lambda k: f"{raw[k]!r} is not a number",
                           "enter a plain number; put the unit in the column header")
        if kind is None:
            return values
        name, unit = split_header(col)
        if not unit and kind != "fraction":  # a fraction may be a plain number
            raise UnitError(f"column {col!r} has no unit", file=self.source, row=1,
                            column=str(col), hint=f"write it as '{name} [UNIT]'")
        try:
            check_unit(unit, kind)
        except UnitError as exc:
            raise UnitError(f"column {col!r}: {exc.message}", file=self.source, row=1,
                            column=str(col), hint=exc.hint) from exc
        return to_si(values, unit, kind, delta=delta)

    def per_run(self, values, col) -> np.ndarray:
        """One value per run; a run whose rows disagree fails."""
        v = np.asarray(values)[self.first] if self.R else np.asarray(values)[:0]
        rep = np.repeat(v, self.counts)
        same = (np.asarray(values) == rep) | (pd.isna(values) & pd.isna(rep))
        self.bad_cells(~same, col, lambda k: f"{col} differs within run "
                       f"{self.run_ids[self.run[k]]!r}",
                       "metadata must be the same on every row of a run")
        return v

    def text(self, name, default) -> np.ndarray:
        if name not in self.cols:
            return np.full(len(self.t), default, dtype=object)
        col = self.t[self.cols[name]].fillna("").astype(str).str.strip()
        quoted = col.str.startswith("'")  # written inert by vpkit (safewrite.inert)
        return col.where(~quoted, col.str[1:]).to_numpy()[self.order]

    def _per_run_column(self, name, kind, delta=False, allow=()) -> np.ndarray:
        col = self.cols.get(name)
        if col is None:
            return np.full(self.R, np.nan)
        return self.per_run(self.numeric(col, kind, delta=delta, allow_text=allow), col)

    def columns(self) -> Columns:
        cols, R = self.cols, self.R
        point = {key: (self.numeric(cols[name], kind) if name in cols
                       else np.full(len(self.t), np.nan)) for name, (key, kind) in _POINT.items()}
        for name in ("bath_temperature", "reading"):
            self.bad_cells(np.isnan(point[_POINT[name][0]]), cols[name],
                           lambda k, n=name: f"missing {n}", "enter the value or delete the row")
        scalar = {key: self._per_run_column(name, FIELDS[name][0], allow=(
            ("reference",) if name == "liquid_density" else ())) for key, name in QUANTITY.items()}
        given = {key: self._per_run_column(f"u({name})", _POINT[name][1] if name in _POINT
                                           else FIELDS[name][0], delta=True)
                 for name, key in _U_OF.items()}
        given["density"] = self._per_run_column("u(liquid_density)", "density", delta=True)
        given["density_relative"] = self._per_run_column("u_rel(liquid_density)", None)
        liquid = self.per_run(self.text("liquid", ""), "liquid")
        grad = self.per_run(self.text("graduated_from", ""), "graduated_from")
        flag_text = np.char.lower(self.text("include", "yes").astype(str))
        self.bad_cells(~np.isin(flag_text, list(_TRUE | _FALSE)), cols.get("include", "include"),
                       lambda k: f"include flag {flag_text[k]!r} is not yes or no",
                       "write yes or no (empty means yes)")
        labels = {name: str(col) for name, col in cols.items()}
        unit = lambda name: split_header(cols[name])[1] if name in cols else ""  # noqa: E731
        kind = reading_kind(unit("reading"))
        for name in ("room_reading", "reading_resolution", "u(reading)", "u(room_reading)"):
            if name in cols and reading_kind(unit(name)) != kind:
                raise UnitError(f"column {cols[name]!r} is a {reading_kind(unit(name))} but "
                                f"the readings are {kind}s", file=self.source, row=1,
                                column=str(cols[name]),
                                hint=f"give it in the readings' unit, {unit('reading')}")
        return Columns(
            run_ids=[str(x) for x in self.run_ids], liquid=[str(x) for x in liquid],
            sources=[self.source] * R, run=self.run.astype(int), T=point["T"],
            reading=point["reading"], pressure=point["pressure"],
            include=np.isin(flag_text, list(_TRUE)), reason=self.text("reason", "").astype(object),
            rows=self.row_of.astype(int), scalar=scalar,
            direction=np.array([parse_direction(g) for g in grad], int),
            given_u={k: given.get(k, np.full(R, np.nan)) for k in U_KEYS
                     if k != "density_relative"} | {"density": given["density"],
                                                    "density_relative": given["density_relative"]},
            T_unit=[unit("bath_temperature")] * R,
            places=[_TablePlace(int(self.row_of[f]), labels) for f in self.first],
            reading_unit=[unit("reading")] * R, pressure_unit=[unit("pressure")] * R)


# ---------------------------------------------------------------------------
# runs <-> long table
# ---------------------------------------------------------------------------


def runs_to_table(runs: Mapping[str, Run]) -> pd.DataFrame:
    """Long table (SI units) of several runs, with their uncertainties after the default rule."""
    stack = stack_runs(runs)
    return stack_to_table(stack)


def stack_to_table(stack: RunStack) -> pd.DataFrame:
    """The long table (SI units) of a stack: one row per reading."""
    m = stack.mask
    r = np.nonzero(m)[0]
    rep = lambda a: np.asarray(a)[r]  # noqa: E731
    sc, u = stack.scalar, stack.u
    data = {
        "run_id": rep(stack.run_ids), "liquid": rep(stack.liquid),
        "barometric_pressure [Pa]": rep(sc["P_bar"]), "room_temperature [K]": rep(sc["T_room"]),
        "room_reading [m**3]": rep(sc["room_reading"]),
        "mass_before_air [kg]": rep(sc["mass_before"]),
        "mass_after_air [kg]": rep(sc["mass_after"]),
        "liquid_density [kg/m**3]": rep(sc["density"]),
        "injected_air_volume [m**3]": rep(sc["V_injected"]),
        "scale_offset [m**3]": rep(sc["scale_offset"]),
        "graduated_from": rep(np.where(stack.direction == 1, "closed end", "open end")),
        "bubble_depth [m]": rep(sc["depth"]), "boiling_point [K]": rep(sc["T_boil"]),
        "bath_temperature [K]": stack.T[m], "reading [m**3]": stack.reading[m],
        "pressure [Pa]": stack.pressure[m], "include": stack.include[m],
        "reason": stack.reason[m].astype(str),
        "u(bath_temperature) [K]": rep(u["T"]), "u(reading) [m**3]": rep(u["reading"]),
        "u(pressure) [Pa]": rep(u["pressure"]), "u(barometric_pressure) [Pa]": rep(u["P_bar"]),
        "u(room_temperature) [K]": rep(u["T_room"]),
        "u(room_reading) [m**3]": rep(u["room_reading"]),
        "u(mass_before_air) [kg]": rep(u["mass_before"]),
        "u(mass_after_air) [kg]": rep(u["mass_after"]),
        "u(injected_air_volume) [m**3]": rep(u["V_injected"]),
        "u(scale_offset) [m**3]": rep(u["scale_offset"]),
        "u(bubble_depth) [m]": rep(u["depth"]), "u(boiling_point) [K]": rep(u["T_boil"]),
        "u_rel(liquid_density)": rep(u["density_relative"]),
    }
    optional = (("room_depth [m]", "room_depth", "u(room_depth) [m]"),
                ("tube_bore [m]", "bore", "u(tube_bore) [m]"),
                ("injected_air_humidity", "RH", "u(injected_air_humidity)"),
                ("reading_resolution [m**3]", "resolution", None),
                ("tube_capacity [m**3]", "capacity", None))
    for col, key, ucol in optional:  # only where some run gives them
        if np.isfinite(sc[key]).any():
            data[col] = rep(sc[key])
            if ucol:
                data[ucol] = rep(np.where(np.isfinite(sc[key]), u[key], np.nan))
    return pd.DataFrame(data)


def table_to_runs(table: pd.DataFrame, run_ids=None) -> dict[str, Run]:
    """Run records from a long table (values and units as the table gives them).

    ``run_ids`` limits it to those runs (e.g. the ones that passed the checks).
    """
    out: dict[str, Run] = {}
    if run_ids is not None:
        table = table[table["run_id"].astype(str).isin(set(run_ids))]
    cols = {split_header(c)[0]: c for c in table.columns}
    reading_cols = [cols[n] for n in READING_NAMES if n in cols]
    for run_id, part in table.groupby("run_id", sort=False):
        first = part.iloc[0]
        meta = {}
        for name, (kind, _, _) in FIELDS.items():
            col = cols.get(name)
            if col is None or pd.isna(first[col]) or str(first[col]).strip() in ("", "nan"):
                continue
            if kind == "text" or (name == "liquid_density"
                                  and str(first[col]).strip().lower() == "reference"):
                meta[name] = Entry(str(first[col]).strip() if kind == "text" else "reference")
                continue
            ucol = cols.get(f"u({name})")
            u = None
            if ucol is not None and pd.notna(first[ucol]):
                u = float(to_si(float(first[ucol]), split_header(ucol)[1], kind, delta=True)
                          / to_si(1.0, split_header(col)[1], kind, delta=True))
            meta[name] = Entry(float(first[col]), split_header(col)[1], u)
        for name, key in (("reading", "reading_uncertainty"),
                          ("bath_temperature", "temperature_uncertainty")):
            ucol = cols.get(f"u({name})")
            if ucol is not None and pd.notna(first[ucol]):
                meta[key] = Entry(float(first[ucol]), split_header(ucol)[1])
        df = part[reading_cols].copy()
        if "include" in df.columns:
            df["include"] = ~df["include"].astype(str).str.strip().str.lower().isin(list(_FALSE))
        if "pressure" in cols and part[cols["pressure"]].isna().all():
            df = df.drop(columns=[cols["pressure"]])
        out[str(run_id)] = Run.from_frame(df.reset_index(drop=True), **meta)
    return out
