"""Many runs at once: a long table of readings -> one summary row per run.

The hot path is array code over a padded layout (runs x points): unit
conversion per column, the reduction, the Jacobian of every ln p_vap by central
differences, the Clausius-Clapeyron fit (ordinary, weighted, or generalized
least squares with the shared-error covariance and thermometer errors by
effective variance), boiling points, the reference comparison and the flags.
There is no Python loop over runs on that path; a few small loops run over
liquids or over the columns of the layout. The same numbers as
:func:`vpkit.analyze` come out (the tests check 1e-9 relative), because both use
:mod:`vpkit.reduce` and the same propagation and fitting rules.

The long table (our own layout) has one row per reading: a ``run_id`` column,
the run metadata as columns (repeated on every row of a run, as in the run
file's ``[run]`` section, with units in brackets) and the readings columns::

    run_id,liquid,barometric_pressure [kPa],room_temperature [degC],room_reading [mL],
    mass_before_air [g],mass_after_air [g],bath_temperature [degC],reading [mL],include,reason
    bench1,ethanol,100.2,21.0,1.85,30.0000,28.4230,25.0,1.993,yes,
    bench1,ethanol,100.2,21.0,1.85,30.0000,28.4230,30.0,2.089,yes,
    ...

Optional standard uncertainties go in ``u(NAME) [UNIT]`` columns.
Functions take and return pandas DataFrames partitioned by run, so the same
code runs per partition under Dask (``map_partitions``).

References
----------
Equations: see :mod:`vpkit.reduce`, :mod:`vpkit.fit`, :mod:`vpkit.reference`.
"""

from __future__ import annotations

import warnings
from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd
from scipy import stats

from . import reduce as rd
from . import reference as refmod
from .constants import P_STANDARD, T_ZERO_C, R
from .errors import BadValueError, RunFileError, VpkitError
from .fit import TROUTON_BAND, TROUTON_HBOND_BAND
from .run import DEFAULT_UNCERTAINTY, FIELDS, Run, read_run
from .units import to_si

#: Flag thresholds (documented defaults; all common practice, no source).
DEFAULT_THRESHOLDS: dict[str, float] = {
    "min_points": 4,  # included points
    "min_range_K": 20.0,  # span of included bath temperatures
    "max_deviation_u": 3.0,  # |ΔH - reference| in standard uncertainties
    "max_boiling_gap_K": 2.0,  # |measured - predicted boiling point| at the run's pressure
    "max_influence_u": 2.0,  # one point moves ΔH by more than this many u when left out
    "scatter_percentile": 0.99,  # χ² above this percentile of its distribution
}

_READING_NAMES = ("bath_temperature", "reading", "pressure", "include", "reason")
_U_NAMES = {"bath_temperature": "T", "reading": "reading", "pressure": "pressure",
            "barometric_pressure": "P_bar", "room_temperature": "T_room",
            "mass_before_air": "mass_before", "mass_after_air": "mass_after",
            "injected_air_volume": "V_injected", "scale_offset": "scale_offset",
            "bubble_depth": "depth", "room_reading": "room_reading",
            "boiling_point": "T_boil"}
_TRUE = {"yes", "y", "true", "1", "x", "include", "included", "", "nan"}
_FALSE = {"no", "n", "false", "0", "exclude", "excluded"}


# ---------------------------------------------------------------------------
# loading
# ---------------------------------------------------------------------------


@dataclass(frozen=True)
class LoadResult:
    """What a folder or table load gave: the long table, and what failed and why."""

    table: pd.DataFrame
    failed: tuple[tuple[str, str], ...] = ()
    runs: Mapping[str, Run] = field(default_factory=dict)
    notes: tuple[str, ...] = ()
    paths: Mapping[str, Path] = field(default_factory=dict)

    @property
    def run_ids(self) -> list[str]:
        return list(dict.fromkeys(self.table["run_id"]))


def runs_to_table(runs: Mapping[str, Run]) -> pd.DataFrame:
    """Long table (SI units) of several runs; the run's own entries are kept as numbers."""
    frames = []
    for run_id, run in runs.items():
        si = run.to_si()
        n = run.n_points
        meta = {
            "run_id": [run_id] * n, "liquid": [si.liquid] * n,
            "barometric_pressure [Pa]": si.P_bar, "room_temperature [K]": si.T_room,
            "room_reading [m**3]": np.nan if si.room_reading is None else si.room_reading,
            "mass_before_air [kg]": np.nan if si.mass_before is None else si.mass_before,
            "mass_after_air [kg]": np.nan if si.mass_after is None else si.mass_after,
            "liquid_density [kg/m**3]": np.nan if si.density is None else si.density,
            "injected_air_volume [m**3]": np.nan if si.V_injected is None else si.V_injected,
            "scale_offset [m**3]": np.nan if si.scale_offset is None else si.scale_offset,
            "graduated_from": ["closed end" if si.direction == 1 else "open end"] * n,
            "bubble_depth [m]": np.nan if si.depth is None else si.depth,
            "boiling_point [K]": np.nan if si.T_boil is None else si.T_boil,
            "bath_temperature [K]": si.T, "reading [m**3]": si.reading,
            "pressure [Pa]": si.pressure, "include": si.include, "reason": list(si.reason),
            "u(bath_temperature) [K]": si.u["T"], "u(reading) [m**3]": si.u["reading"],
            "u(pressure) [Pa]": si.u["pressure"], "u(barometric_pressure) [Pa]": si.u["P_bar"],
            "u(room_temperature) [K]": si.u["T_room"],
            "u(room_reading) [m**3]": si.u["room_reading"],
            "u(mass_before_air) [kg]": si.u["mass_before"],
            "u(mass_after_air) [kg]": si.u["mass_after"],
            "u(injected_air_volume) [m**3]": si.u["V_injected"],
            "u(scale_offset) [m**3]": si.u["scale_offset"],
            "u(bubble_depth) [m]": si.u["depth"], "u(boiling_point) [K]": si.u["T_boil"],
            "u_rel(liquid_density)": si.u["density_relative"],
        }
        frames.append(pd.DataFrame(meta))
    if not frames:
        return pd.DataFrame(columns=["run_id"])
    return pd.concat(frames, ignore_index=True)


def read_runs(source, *, pattern: str = "*.csv", sessions: bool = True) -> LoadResult:
    """Read a folder of run files, or one long table (a CSV with a ``run_id`` column).

    A bad run is reported in ``failed`` (its file or run id, and the error
    naming row and column); the others still load. Nothing is skipped silently.
    With ``sessions``, a run file's session (exclusions made in the explorer) is
    applied; a session that does not match its run is reported in ``notes`` and
    the run is used as its file says.
    """
    from .session import SessionError, load_session, session_path

    source = Path(source)
    if source.is_dir():
        runs: dict[str, Run] = {}
        paths: dict[str, Path] = {}
        failed, notes = [], []
        for path in sorted(source.glob(pattern)):
            try:
                run = read_run(path)
                run.to_si()
            except VpkitError as exc:
                failed.append((str(path), str(exc)))
                continue
            sp = session_path(path)
            if sessions and sp.exists():
                try:
                    run = load_session(sp, run).apply(run)
                except SessionError as exc:
                    notes.append(f"{path.name}: session not applied: {exc}")
            runs[path.stem] = run
            paths[path.stem] = path
        return LoadResult(runs_to_table(runs), tuple(failed), runs, tuple(notes), paths)
    try:
        table = pd.read_csv(source, comment="#", dtype={"run_id": str, "reason": str,
                                                        "include": str},
                            keep_default_na=True, skipinitialspace=True)
    except (OSError, ValueError) as exc:
        raise RunFileError(f"cannot read the table: {exc}", file=str(source)) from exc
    if "run_id" not in table.columns:
        raise RunFileError("the table has no run_id column", file=str(source), column="run_id",
                           hint="add a run_id column naming the run of each reading")
    table.attrs["source"] = str(source)
    good, failed = split_valid(table)
    return LoadResult(good, failed)


def table_to_runs(table: pd.DataFrame) -> dict[str, Run]:
    """Run objects from a long table (for per-run figures and the explorer).

    Values and units are taken as the table gives them.
    """
    from .run import Entry

    out: dict[str, Run] = {}
    cols = {(_split(c)[0]): c for c in table.columns}
    reading_cols = [cols[n] for n in _READING_NAMES if n in cols]
    for run_id, part in table.groupby("run_id", sort=False):
        first = part.iloc[0]
        meta = {}
        for name, (kind, _, _) in FIELDS.items():
            col = cols.get(name)
            if col is None or pd.isna(first[col]) or str(first[col]).strip() in ("", "nan"):
                continue
            if kind == "text" or (name == "liquid_density" and
                                  str(first[col]).strip().lower() == "reference"):
                meta[name] = Entry(str(first[col]).strip() if kind == "text" else "reference")
                continue
            ucol = cols.get(f"u({name})")
            u = None
            if ucol is not None and pd.notna(first[ucol]):
                u = float(to_si(float(first[ucol]), _split(ucol)[1], kind, delta=True)
                          / to_si(1.0, _split(col)[1], kind, delta=True))
            meta[name] = Entry(float(first[col]), _split(col)[1], u)
        for name, key in (("reading", "reading_uncertainty"),
                          ("bath_temperature", "temperature_uncertainty")):
            ucol = cols.get(f"u({name})")
            if ucol is not None and pd.notna(first[ucol]):
                meta[key] = Entry(float(first[ucol]), _split(ucol)[1])
        df = part[reading_cols].copy()
        if "include" in df.columns:
            df["include"] = ~df["include"].astype(str).str.strip().str.lower().isin(list(_FALSE))
        if "pressure" in cols and part[cols["pressure"]].isna().all():
            df = df.drop(columns=[cols["pressure"]])
        out[str(run_id)] = Run.from_frame(df.reset_index(drop=True), **meta)
    return out


def split_valid(table: pd.DataFrame) -> tuple[pd.DataFrame, tuple[tuple[str, str], ...]]:
    """Drop (and report) runs whose rows cannot be converted; keep the rest.

    The whole table is checked at once; only when that fails is each run checked
    alone, to name the bad ones.
    """
    try:
        prepare(table)
        return table.reset_index(drop=True), ()
    except VpkitError:
        pass
    failed = []
    ok = np.ones(len(table), bool)
    ids = table["run_id"].astype(str).to_numpy()
    for run_id in pd.unique(ids):
        rows = np.flatnonzero(ids == run_id)
        try:
            prepare(table.iloc[rows])
        except VpkitError as exc:
            failed.append((str(run_id), str(exc)))
            ok[rows] = False
    return table[ok].reset_index(drop=True), tuple(failed)


# ---------------------------------------------------------------------------
# padded layout
# ---------------------------------------------------------------------------


def _split(col: str) -> tuple[str, str]:
    col = str(col).strip()
    if col.endswith("]") and "[" in col:
        name, unit = col[:-1].split("[", 1)
        return name.strip(), unit.strip()
    return col, ""


@dataclass
class Layout:
    """Runs x points arrays in SI (NaN where a run has fewer points)."""

    run_ids: np.ndarray
    liquid: np.ndarray
    mask: np.ndarray  # (R, N) real points
    include: np.ndarray  # (R, N)
    reasons: np.ndarray  # (R, N) object
    point: dict[str, np.ndarray]  # T, reading, P (own pressure, NaN if none)
    scalar: dict[str, np.ndarray]  # P_bar, T_room, ...
    u: dict[str, np.ndarray]  # uncertainties, per point (R, N) or per run (R,)
    direction: np.ndarray
    rows: np.ndarray  # (R, N) row number in the table (for messages)
    source: str


def _lines(table: pd.DataFrame) -> np.ndarray:
    """File line of each row: the table's own integer index + 2 (header is line 1)
    when it has one (as read_csv gives), else the position + 2."""
    idx = table.index
    if pd.api.types.is_integer_dtype(idx.dtype):
        return idx.to_numpy() + 2
    return np.arange(len(table)) + 2


def _column(table, name, kind, source, lines=None):
    """Find ``name [unit]`` and convert it to SI; returns (values or None, column label)."""
    for col in table.columns:
        n, unit = _split(col)
        if n == name:
            values = pd.to_numeric(table[col], errors="coerce").to_numpy(float)
            bad = table[col].notna().to_numpy() & np.isnan(values)
            if name == "liquid_density":
                text = table[col].astype(str).str.strip().str.lower()
                bad &= ~text.isin(["reference", "nan", ""]).to_numpy()
            if bad.any():
                i = int(np.flatnonzero(bad)[0])
                raise BadValueError(f"{table[col].iloc[i]!r} is not a number", file=source,
                                    row=int(lines[i]) if lines is not None else i + 2,
                                    column=str(col), hint="enter a plain number")
            if kind is None:
                return values, col
            if not unit:
                raise BadValueError(f"column {col!r} has no unit", file=source, row=1,
                                    column=str(col), hint=f"write it as '{name} [UNIT]'")
            delta = name.startswith("u(")
            return to_si(values, unit, kind, delta=delta), col
    return None, None


def prepare(table: pd.DataFrame) -> Layout:
    """Convert a long table (all rows of complete runs) into the padded SI layout."""
    source = table.attrs.get("source", "<table>")
    lines = _lines(table)
    t = table.reset_index(drop=True)
    known = set(FIELDS) | set(_READING_NAMES) | {"run_id"}
    for col in t.columns:
        name, _ = _split(col)
        base = name[2:-1] if name.startswith("u(") and name.endswith(")") else name
        if name == "u_rel(liquid_density)":
            continue
        if base not in known:
            raise RunFileError(f"unknown column {col!r}", file=source, row=1, column=str(col),
                               hint="columns are run_id, the run-file quantities and the "
                               "readings columns, with units in brackets")
    ids = t["run_id"].astype(str).to_numpy()
    codes, run_ids = pd.factorize(ids)  # runs in order of first appearance
    run_ids = np.asarray(run_ids, dtype=object)
    order = np.argsort(codes, kind="stable")
    _, first, counts = np.unique(codes[order], return_index=True, return_counts=True)
    Rn, N = len(run_ids), int(counts.max()) if len(counts) else 0
    pos = np.arange(len(t)) - np.repeat(first, counts)  # position within its run
    rix = np.repeat(np.arange(Rn), counts)
    rowno = lines[order]  # file line of each sorted row

    def pad(values, fill=np.nan, dtype=float):
        out = np.full((Rn, N), fill, dtype=dtype)
        out[rix, pos] = np.asarray(values)[order]
        return out

    def per_run(values, label):
        v = np.asarray(values)[order]
        firsts = v[first]
        rep = np.repeat(firsts, counts)
        same = (v == rep) | (pd.isna(v) & pd.isna(rep))
        if not np.all(same):
            i = int(np.flatnonzero(~same)[0])
            raise BadValueError(f"{label} differs within run {ids[order][i]!r}", file=source,
                                row=int(rowno[i]), column=label,
                                hint="metadata must be the same on every row of a run")
        return firsts

    point, scalar, u = {}, {}, {}
    for name, key, kind in (("bath_temperature", "T", "temperature"),
                            ("reading", "reading", "volume"), ("pressure", "P", "pressure")):
        v, col = _column(t, name, kind, source, lines)
        if v is None and name != "pressure":
            raise RunFileError(f"the table has no {name!r} column", file=source, row=1,
                               column=name, hint=f"add '{name} [UNIT]'")
        point[key] = pad(v if v is not None else np.full(len(t), np.nan))
        miss = np.isnan(v).any() if name != "pressure" else False
        if miss:
            i = int(np.flatnonzero(np.isnan(v))[0])
            raise BadValueError(f"missing {name}", file=source, row=int(lines[i]),
                                column=str(col),
                                hint="enter the value or delete the row")
    for name, kind in (("barometric_pressure", "pressure"), ("room_temperature", "temperature"),
                       ("room_reading", "volume"), ("mass_before_air", "mass"),
                       ("mass_after_air", "mass"), ("liquid_density", "density"),
                       ("injected_air_volume", "volume"), ("scale_offset", "volume"),
                       ("bubble_depth", "length"), ("boiling_point", "temperature")):
        v, col = _column(t, name, kind, source, lines)
        scalar[name] = (per_run(v, str(col)) if v is not None else np.full(Rn, np.nan))
    for name in ("barometric_pressure", "room_temperature"):
        if np.isnan(scalar[name]).any():
            i = int(np.flatnonzero(np.isnan(scalar[name]))[0])
            raise RunFileError(f"run {run_ids[i]!r} has no {name}", file=source, column=name,
                               hint="fill the column on every row")
    D = DEFAULT_UNCERTAINTY
    defaults = {"T": D["temperature_uncertainty"], "reading": D["reading_uncertainty"],
                "pressure": D["pressure"], "P_bar": D["barometric_pressure"],
                "T_room": D["room_temperature"], "mass_before": D["mass_before_air"],
                "mass_after": D["mass_after_air"], "V_injected": D["injected_air_volume"],
                "scale_offset": D["scale_offset"], "depth": D["bubble_depth"],
                "T_boil": D["boiling_point"], "room_reading": None}
    kinds = {"bath_temperature": "temperature", "reading": "volume", "pressure": "pressure",
             "barometric_pressure": "pressure", "room_temperature": "temperature",
             "mass_before_air": "mass", "mass_after_air": "mass",
             "injected_air_volume": "volume", "scale_offset": "volume", "bubble_depth": "length",
             "room_reading": "volume", "boiling_point": "temperature"}
    for name, key in _U_NAMES.items():
        v, col = _column(t, f"u({name})", kinds[name], source, lines)
        # one uncertainty per run, as in the run-file model
        base = per_run(v, str(col)) if v is not None else np.full(Rn, np.nan)
        default = defaults[key]
        if default is None:  # the room reading defaults to the reading uncertainty
            continue
        u[key] = np.where(np.isnan(base), default, base)
    v, col = _column(t, "u(room_reading)", "volume", source, lines)
    base = per_run(v, str(col)) if v is not None else np.full(Rn, np.nan)
    u["room_reading"] = np.where(np.isnan(base), u["reading"], base)
    rel, col = _column(t, "u_rel(liquid_density)", None, source, lines)
    rel = per_run(rel, str(col)) if rel is not None else np.full(Rn, np.nan)
    u["density_relative"] = np.where(np.isnan(rel), D["liquid_density_relative"], rel)
    liquid = per_run(t["liquid"].astype(str).str.strip().to_numpy(), "liquid")
    grad = (per_run(t["graduated_from"].astype(str).str.strip().str.lower().to_numpy(),
                    "graduated_from") if "graduated_from" in t.columns else
            np.full(Rn, "closed end"))
    direction = np.where(np.char.startswith(grad.astype(str), "open"), -1, 1)
    inc_text = (t["include"].astype(str).str.strip().str.lower().to_numpy()
                if "include" in t.columns else np.full(len(t), "yes"))
    bad = ~np.isin(inc_text, list(_TRUE | _FALSE))
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        raise BadValueError(f"include flag {inc_text[i]!r} is not yes or no", file=source,
                            row=int(lines[i]), column="include", hint="write yes or no")
    include = pad(np.isin(inc_text, list(_TRUE)), False, bool)
    reasons = pad(t["reason"].fillna("").astype(str).to_numpy() if "reason" in t.columns
                  else np.full(len(t), ""), "", object)
    mask = pad(np.ones(len(t), bool), False, bool)
    if (scalar["mass_after_air"] >= scalar["mass_before_air"]).any():
        i = int(np.flatnonzero(scalar["mass_after_air"] >= scalar["mass_before_air"])[0])
        raise BadValueError(f"run {run_ids[i]!r}: mass after the air is not lower than before",
                            file=source, column="mass_after_air",
                            hint="check that the two masses are not swapped")
    T = point["T"]
    if (T[mask] <= 0).any():
        raise BadValueError("a bath temperature is at or below absolute zero", file=source,
                            column="bath_temperature", hint="check the unit in the header")
    return Layout(run_ids, liquid, mask, include & mask, reasons, point, scalar, u, direction,
                  pad(rowno, -1, int), source)


# ---------------------------------------------------------------------------
# vectorised reduction and fit
# ---------------------------------------------------------------------------


def _densities(L: Layout) -> np.ndarray:
    rho = L.scalar["liquid_density"].copy()
    need = np.isnan(rho)
    for liquid in np.unique(L.liquid[need]):
        sel = need & (L.liquid == liquid)
        if not refmod.has_reference(liquid):
            raise BadValueError(f"liquid_density is 'reference' but {liquid!r} has no bundled "
                                "density", file=L.source, column="liquid_density",
                                hint="enter the measured density")
        rho[sel] = refmod.liquid_density(liquid, L.scalar["room_temperature"][sel])
    return rho


def _reference_p(L: Layout, T_ref: np.ndarray, reference: str) -> np.ndarray:
    """p of each run's own reference curve at T_ref (any trailing shape)."""
    out = np.full(T_ref.shape, np.nan)
    for liquid in np.unique(L.liquid):
        sel = L.liquid == liquid
        if refmod.has_reference(liquid):
            out[sel] = refmod.reference_curve(liquid, reference).p(T_ref[sel])
    return out


def _chain(L: Layout, V: dict, air_from: str, use_head: bool, gas_mass: bool, p_ref):
    """Reduction over (R, B, ...) arrays; V maps field -> array with batch axis 1."""
    d = L.direction[:, None]
    weighing = ~np.isnan(L.scalar["mass_before_air"])[:, None]
    rho_gas = rd.gas_density(V["P_bar"], V["T_room"]) if gas_mass else 0.0
    with np.errstate(invalid="ignore", divide="ignore"):
        V_room_w = rd.room_gas_volume(V["mass_before"], V["mass_after"], V["density"], rho_gas)
        offset = np.where(weighing, rd.scale_offset(V_room_w, V["room_reading"], d),
                          V["scale_offset"])
        V_room = np.where(weighing, V_room_w, rd.bubble_volume(V["room_reading"], offset, d))
        Vol = rd.bubble_volume(V["reading"], offset[..., None], d[..., None])
        P = np.where(np.isnan(V["P"]), V["P_bar"][..., None], V["P"])
        depth = np.nan_to_num(V["depth"]) if use_head else 0.0 * V["depth"]
        P_total = rd.total_pressure(P, np.nan_to_num(depth)[..., None], V["density"][..., None])
        if air_from == "injected":
            n_air = rd.air_amount(V["P_bar"], 0.0, V["V_injected"], V["T_room"])
        elif air_from == "weighed":
            n_air = rd.air_amount(V["P_bar"], p_ref, V_room, V["T_room"])
        else:
            c = L.cold[:, None, None]
            take = lambda a: np.take_along_axis(a, c, axis=-1)[..., 0]  # noqa: E731
            n_air = rd.air_amount(take(P_total), p_ref, take(Vol), take(V["T"]))
        p_air = rd.air_partial_pressure(n_air[..., None], Vol, V["T"])
    return {"V": Vol, "P_total": P_total, "p_vap": rd.vapor_pressure(P_total, p_air),
            "p_air": p_air, "n_air": n_air}


_SCALARS = ("P_bar", "T_room", "room_reading", "mass_before", "mass_after", "density",
            "V_injected", "scale_offset", "depth")


def _inputs(L: Layout, rho: np.ndarray, air_from: str, use_head: bool):
    """Nominal values, uncertainties and steps of every input, (R, m) each.

    Mirrors :func:`vpkit.propagate.build_inputs`: an input a run does not use
    gets zero uncertainty (and contributes nothing)."""
    Rn, N = L.mask.shape
    s = L.scalar
    weighing = ~np.isnan(s["mass_before_air"])
    nominal = {"P_bar": s["barometric_pressure"], "T_room": s["room_temperature"],
               "room_reading": s["room_reading"], "mass_before": s["mass_before_air"],
               "mass_after": s["mass_after_air"], "density": rho,
               "V_injected": s["injected_air_volume"], "scale_offset": s["scale_offset"],
               "depth": s["bubble_depth"]}
    used = {"P_bar": np.ones(Rn, bool), "T_room": np.ones(Rn, bool),
            "room_reading": ~np.isnan(s["room_reading"]), "mass_before": weighing,
            "mass_after": weighing, "density": np.ones(Rn, bool),
            "V_injected": np.full(Rn, air_from == "injected"),
            "scale_offset": ~weighing, "depth": (~np.isnan(s["bubble_depth"])) & use_head}
    sig = {"P_bar": L.u["P_bar"], "T_room": L.u["T_room"], "room_reading": L.u["room_reading"],
           "mass_before": L.u["mass_before"], "mass_after": L.u["mass_after"],
           "density": rho * L.u["density_relative"], "V_injected": L.u["V_injected"],
           "scale_offset": L.u["scale_offset"], "depth": L.u["depth"]}
    own_P = ~np.isnan(L.point["P"]) & L.mask
    cols_nom = [L.point["T"], L.point["reading"], L.point["P"]]
    cols_sig = [np.where(L.mask, L.u["T"][:, None], 0.0),
                np.where(L.mask, L.u["reading"][:, None], 0.0),
                np.where(own_P, L.u["pressure"][:, None], 0.0)]
    nom = np.concatenate(cols_nom + [np.stack([nominal[k] for k in _SCALARS], 1)], axis=1)
    sigma = np.concatenate(cols_sig + [np.stack([np.where(used[k], sig[k], 0.0)
                                                 for k in _SCALARS], 1)], axis=1)
    usedm = np.concatenate([L.mask, L.mask, own_P,
                            np.stack([used[k] for k in _SCALARS], 1)], axis=1)
    sigma = np.where(usedm, np.nan_to_num(sigma), 0.0)
    step = np.maximum(np.abs(np.nan_to_num(nom)) * 1e-7, sigma * 1e-4)
    step = np.where(step > 0, step, 1e-12)
    return nom, sigma, step


def _unpack(U: np.ndarray, N: int) -> dict:
    out = {"T": U[..., 0:N], "reading": U[..., N:2 * N], "P": U[..., 2 * N:3 * N]}
    for j, k in enumerate(_SCALARS):
        out[k] = U[..., 3 * N + j]
    return out


def analyze_table(table: pd.DataFrame, *, weighting: str = "gls", air_from: str = "weighed",
                  vapor_at_air_reference: str = "auto", use_head: bool = True,
                  gas_mass: bool = True, reference: str = "antoine",
                  temperature_errors: bool = True,
                  thresholds: Mapping[str, float] | None = None,
                  chunk_runs: int = 4096) -> pd.DataFrame:
    """Clausius-Clapeyron analysis of every run of a long table, vectorised.

    Parameters
    ----------
    table : DataFrame
        Long table (see the module docstring); all rows of each run present.
    weighting : {"gls", "weighted", "ordinary"}
    air_from : {"weighed", "cold", "injected"}
    vapor_at_air_reference : {"auto", "reference", "neglect"}
        As in :func:`vpkit.analyze`; the self-consistent choice ("fit") is a
        per-run root search and is only offered by the single-run path.
    reference : {"antoine", "auto", "iapws95"}
        Reference equation ("antoine" by default here: IAPWS-95 is evaluated
        point by point and is slow for thousands of runs).
    thresholds : mapping, optional
        Overrides of :data:`DEFAULT_THRESHOLDS`.
    chunk_runs : int
        Runs per block of array work: larger tables are processed block by
        block so that memory (about 35 kB per run) and time grow linearly.

    Returns
    -------
    DataFrame
        One row per run (see :func:`summary_columns`), with plain-language flags.
    """
    codes = pd.factorize(table["run_id"].astype(str))[0]
    if len(codes) and codes.max() >= chunk_runs:
        opts = dict(weighting=weighting, air_from=air_from,
                    vapor_at_air_reference=vapor_at_air_reference, use_head=use_head,
                    gas_mass=gas_mass, reference=reference,
                    temperature_errors=temperature_errors, thresholds=thresholds,
                    chunk_runs=chunk_runs)
        block = codes // chunk_runs
        parts = [table[block == b] for b in range(int(block.max()) + 1)]
        for part in parts:
            part.attrs.update(table.attrs)
        return pd.concat([analyze_table(part, **opts) for part in parts], ignore_index=True)
    th = dict(DEFAULT_THRESHOLDS, **(thresholds or {}))
    if vapor_at_air_reference == "fit":
        raise BadValueError("the batch path does not solve the self-consistent air amount; "
                            "use vpkit.analyze per run, or 'reference' / 'neglect'",
                            column="vapor_at_air_reference")
    L = prepare(table)
    Rn, N = L.mask.shape
    if Rn == 0:
        return pd.DataFrame(columns=summary_columns())
    rho = _densities(L)
    L.cold = np.argmin(np.where(L.mask, L.point["T"], np.inf), axis=1)
    has_ref = np.array([refmod.has_reference(x) for x in L.liquid])
    mode = np.where(has_ref, "reference", "neglect") if vapor_at_air_reference == "auto" \
        else np.full(Rn, vapor_at_air_reference)
    if vapor_at_air_reference == "reference" and not has_ref.all():
        i = int(np.flatnonzero(~has_ref)[0])
        raise BadValueError(f"run {L.run_ids[i]!r}: no reference equation for {L.liquid[i]!r}",
                            file=L.source, column="liquid",
                            hint="use vapor_at_air_reference='neglect', or analyse it alone")
    if air_from == "injected":
        mode[:] = "none"
    L.neglected = (mode == "neglect") & (vapor_at_air_reference == "auto")
    if air_from == "injected" and np.isnan(L.scalar["injected_air_volume"]).any():
        i = int(np.flatnonzero(np.isnan(L.scalar["injected_air_volume"]))[0])
        raise BadValueError(f"run {L.run_ids[i]!r} has no injected_air_volume",
                            file=L.source, column="injected_air_volume")
    nom, sigma, step = _inputs(L, rho, air_from, use_head)
    m = nom.shape[1]
    # batch of 2m perturbed copies per run, plus the nominal
    U = np.repeat(nom[:, None, :], 2 * m + 1, axis=1)
    k = np.arange(m)
    U[:, 2 * k, k] += step
    U[:, 2 * k + 1, k] -= step
    V = _unpack(U, N)
    T_ref = V["T_room"] if air_from != "cold" else np.take_along_axis(
        V["T"], L.cold[:, None, None], axis=-1)[..., 0]
    p_ref = np.where((mode == "reference")[:, None], _reference_p(L, T_ref, reference), 0.0)
    out = _chain(L, V, air_from, use_head, gas_mass, p_ref)
    with np.errstate(invalid="ignore", divide="ignore"):
        lnp = np.log(out["p_vap"])
        J = (lnp[:, 0:2 * m:2] - lnp[:, 1:2 * m:2]) / (2 * step[:, :, None])  # (R, m, N)
    J = np.transpose(J, (0, 2, 1))  # (R, N, m): d ln p_i / d u_j
    y = lnp[:, -1]
    T = L.point["T"]
    Sig = sigma**2
    Jy0 = np.nan_to_num(J)
    A = Jy0 * Sig[:, None, :]
    cov_y = A @ Jy0.transpose(0, 2, 1)
    # T_i depends on its own input only (the first N columns): J_T is a selector
    cov_yT = A[:, :, :N].copy() if temperature_errors else 0 * cov_y
    cov_T = Sig[:, :N, None] * np.eye(N) if temperature_errors else 0 * cov_y
    # which points are fitted
    inc = L.include.copy()
    if air_from == "cold":
        inc[np.arange(Rn), L.cold] = False
    finite = np.isfinite(y)
    impossible = L.mask & ~finite
    fit_inc = inc & finite
    fit = _fit_cc(T, y, cov_y, cov_yT, cov_T, fit_inc, weighting)
    # flags of points (same rules as vpkit.reduce.point_flags)
    V_nom, Ptot, pv = out["V"][:, -1], out["P_total"][:, -1], out["p_vap"][:, -1]
    shrink = _volume_shrinks(T, V_nom, L.mask)
    return _summary(L, fit, fit_inc, impossible, shrink, Ptot, pv, reference, th)


def _volume_shrinks(T, V, mask) -> np.ndarray:
    """Runs where a gas volume is smaller than at a lower temperature."""
    Ts = np.where(mask, T, np.inf)
    order = np.argsort(Ts, axis=1)
    Vs = np.take_along_axis(np.where(mask, V, np.nan), order, axis=1)
    Tsorted = np.take_along_axis(Ts, order, axis=1)
    with np.errstate(invalid="ignore"):  # padding: inf - inf
        dT, dV = np.diff(Tsorted, axis=1), np.diff(Vs, axis=1)
        return np.any((dT > 0) & (dV < 0) & np.isfinite(dV), axis=1)


def _fit_cc(T, y, cov_y, cov_yT, cov_T, inc, weighting) -> dict:
    """Clausius-Clapeyron fits of many runs (ln p = a + b/T) with masks.

    Same rules as :func:`vpkit.fit.fit_points`: effective variance iterated four
    times, covariance scaled by χ²/dof only above its 95th percentile
    (ordinary: always s^2). Works in x - x̄ for conditioning.
    """
    Rn, N = T.shape
    w = inc.astype(float)
    n = inc.sum(1)
    x = np.where(inc, 1.0 / T, 0.0)
    xbar = np.where(n > 0, x.sum(1) / np.maximum(n, 1), 0.0)
    xc = np.where(inc, 1.0 / T - xbar[:, None], 0.0)
    yv = np.where(inc, y, 0.0)
    X = np.stack([w, xc], axis=-1)  # (R, N, 2); zero rows for points not fitted
    eye = np.eye(N)[None]
    pair = inc[:, :, None] & inc[:, None, :]

    def solve(Cinv):
        A = X.transpose(0, 2, 1) @ Cinv @ X
        bvec = X.transpose(0, 2, 1) @ Cinv @ yv[..., None]
        A = np.where(n[:, None, None] >= 2, A, np.eye(2))
        return np.linalg.solve(A, bvec)[..., 0], A

    # start: ordinary least squares (as fit_points does)
    theta, A = solve(np.broadcast_to(eye, (Rn, N, N)))
    C = None
    if weighting != "ordinary":
        for _ in range(4):
            b = theta[:, 1]
            dfdT = np.where(inc, -b[:, None] / T**2, 0.0)
            D = dfdT[:, :, None] * eye
            Cr = cov_y - cov_yT @ D - D @ cov_yT.transpose(0, 2, 1) + D @ cov_T @ D
            Cr = 0.5 * (Cr + Cr.transpose(0, 2, 1))
            if weighting == "weighted":
                Cr = Cr * eye
            C = np.where(pair, Cr, eye)
            Cinv = np.linalg.inv(C)
            theta, A = solve(Cinv)
        Cinv_final = Cinv
    else:
        Cinv_final = np.broadcast_to(eye, (Rn, N, N))
    r = np.where(inc, yv - (X @ theta[..., None])[..., 0], 0.0)
    chi2 = np.einsum("ri,rij,rj->r", r, Cinv_final, r)
    dof = n - 2
    with np.errstate(invalid="ignore", divide="ignore"):
        chi2_red = np.where(dof > 0, chi2 / dof, np.nan)
        cov0 = np.linalg.inv(A)
        limit = stats.chi2.ppf(0.95, np.maximum(dof, 1))
        if weighting == "ordinary":
            scale, scaled = chi2_red, np.ones(Rn, bool)
        else:
            scaled = (dof > 0) & (chi2 > limit)
            scale = np.where(scaled, chi2_red, 1.0)
    covc = cov0 * scale[:, None, None]
    # back from (a', b) with a = a' - b x̄
    a = theta[:, 0] - theta[:, 1] * xbar
    b = theta[:, 1]
    Jt = np.zeros((Rn, 2, 2))
    Jt[:, 0, 0] = 1.0
    Jt[:, 0, 1] = -xbar
    Jt[:, 1, 1] = 1.0
    cov = Jt @ covc @ Jt.transpose(0, 2, 1)
    # leave-one-out ΔH (Schur complement of the precision matrix, as fit_points)
    Xf = np.stack([w, np.where(inc, 1.0 / T, 0.0)], axis=-1)
    P = np.where(pair, Cinv_final, 0.0)
    Af = Xf.transpose(0, 2, 1) @ P @ Xf
    bf = (Xf.transpose(0, 2, 1) @ P @ yv[..., None])[..., 0]
    aa = Xf.transpose(0, 2, 1) @ P  # (R, 2, N)
    Py = (P @ yv[..., None])[..., 0]
    d = np.where(inc, np.einsum("rii->ri", P), 1.0)
    Ak = Af[:, None] - np.einsum("rpk,rqk->rkpq", aa, aa) / d[:, :, None, None]
    bk = bf[:, None] - (aa * (Py / d)[:, None, :]).transpose(0, 2, 1)
    ok = inc & (n[:, None] >= 3)
    Ak = np.where(ok[..., None, None], Ak, np.eye(2))
    with np.errstate(invalid="ignore", divide="ignore"):
        thk = np.linalg.solve(Ak, bk[..., None])[..., 0]
    loo = np.where(ok, -R * thk[..., 1], np.nan)
    with np.errstate(invalid="ignore", divide="ignore"):
        T_m = np.where(n > 0, 1.0 / np.where(n > 0, x.sum(1) / np.maximum(n, 1), 1.0), np.nan)
    return {"a": a, "b": b, "cov": cov, "chi2": chi2, "dof": dof, "chi2_red": chi2_red,
            "scaled": scaled, "n": n, "T_m": T_m, "loo": loo}


def _boiling(fit, P):
    """T_b [K] where ln p = ln P, and its standard uncertainty, per run."""
    a, b, cov = fit["a"], fit["b"], fit["cov"]
    with np.errstate(invalid="ignore", divide="ignore"):
        Tb = b / (np.log(P) - a)
        dfdT = -b / Tb**2
        g = -np.stack([np.ones_like(Tb), 1.0 / Tb], axis=-1) / dfdT[:, None]
        u = np.sqrt(np.einsum("ri,rij,rj->r", g, cov, g))
    return Tb, u


def summary_columns() -> list[str]:
    return ["run_id", "liquid", "points used", "points total", "T_min [degC]", "T_max [degC]",
            "T_m [K]", "ΔH_vap [kJ/mol]", "u(ΔH_vap) [kJ/mol]", "reference ΔH_vap [kJ/mol]",
            "deviation [u]", "deviation [%]", "T_b at run pressure [degC]",
            "u(T_b at run pressure) [K]", "T_b at 101.325 kPa [degC]",
            "u(T_b at 101.325 kPa) [K]", "measured T_b [degC]", "measured - predicted T_b [K]",
            "ΔS_vap [J/(mol K)]", "u(ΔS_vap) [J/(mol K)]", "Trouton", "reduced chi2",
            "flags", "flag reasons"]


def _summary(L, fit, inc, impossible, shrink, Ptot, pv, reference, th) -> pd.DataFrame:
    Rn = len(L.run_ids)
    dH = -R * fit["b"]
    u_dH = R * np.sqrt(fit["cov"][:, 1, 1])
    T = L.point["T"]
    Tin = np.where(inc, T, np.nan)
    with np.errstate(invalid="ignore"), warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)  # runs with no included point
        t_min, t_max = np.nanmin(Tin, 1), np.nanmax(Tin, 1)
    Tb_run, u_run = _boiling(fit, L.scalar["barometric_pressure"])
    Tb_n, u_n = _boiling(fit, np.full(Rn, P_STANDARD))
    dS = dH / Tb_n
    u_dS = R * np.sqrt(fit["cov"][:, 0, 0])  # ΔS = -R (ln P - a) for a straight line
    ref_dH = np.full(Rn, np.nan)
    for liquid in np.unique(L.liquid):
        sel = L.liquid == liquid
        if refmod.has_reference(liquid):
            ref_dH[sel] = refmod.reference_curve(liquid, reference).apparent_enthalpy(
                fit["T_m"][sel])
    dev_u = (dH - ref_dH) / u_dH
    dev_pct = 100 * (dH / ref_dH - 1)
    Tb_meas = L.scalar["boiling_point"]
    gap = Tb_meas - Tb_run
    loo_shift = np.nanmax(np.abs(fit["loo"] - dH[:, None]), axis=1, initial=0.0)
    trouton = np.where((dS >= TROUTON_BAND[0] - 2 * R * np.sqrt(fit["cov"][:, 0, 0]))
                       & (dS <= TROUTON_BAND[1] + 2 * u_dS), "within Trouton's rule",
                       np.where((dS >= TROUTON_HBOND_BAND[0] - 2 * u_dS)
                                & (dS <= TROUTON_HBOND_BAND[1] + 2 * u_dS),
                                "hydrogen-bonded range", "outside both ranges"))
    lim = stats.chi2.ppf(th["scatter_percentile"], np.maximum(fit["dof"], 1))
    conditions = [
        ("impossible", impossible.any(1) | ((pv >= Ptot) & L.mask).any(1),
         "impossible vapor pressure at some point (bubble smaller than the air alone, or "
         "p_vap above the total pressure): check readings and the air amount"),
        ("few points", fit["n"] < th["min_points"],
         f"fewer than {th['min_points']:g} points used"),
        ("narrow range", (t_max - t_min) < th["min_range_K"],
         f"temperature range below {th['min_range_K']:g} K: the slope is poorly fixed"),
        ("volume not growing", shrink,
         "a gas volume is smaller than at a lower temperature (misread or escaped bubble?)"),
        ("off reference", np.abs(dev_u) > th["max_deviation_u"],
         f"ΔH_vap more than {th['max_deviation_u']:g} u from the reference"),
        ("boiling point gap", np.abs(gap) > th["max_boiling_gap_K"],
         f"measured boiling point more than {th['max_boiling_gap_K']:g} K from the "
         "predicted one"),
        ("influential point", loo_shift > th["max_influence_u"] * u_dH,
         f"leaving one point out moves ΔH_vap by more than {th['max_influence_u']:g} u"),
        ("scatter", (fit["dof"] > 0) & (fit["chi2"] > lim),
         "scatter larger than the stated uncertainties (χ² above its "
         f"{100 * th['scatter_percentile']:g}th percentile)"),
    ]
    conditions.append(
        ("p_vap at air reference neglected", getattr(L, "neglected", np.zeros(Rn, bool)),
         "no reference equation for this liquid, so p_vap at the air reference was neglected "
         "(biased); analyse the run alone with vapor_at_air_reference='fit'"))
    flags = [[] for _ in range(Rn)]
    reasons = [[] for _ in range(Rn)]
    for name, hit, text in conditions:
        for i in np.flatnonzero(np.nan_to_num(hit, nan=0).astype(bool)):
            flags[i].append(name)
            reasons[i].append(text)
    return pd.DataFrame({
        "run_id": L.run_ids, "liquid": L.liquid, "points used": fit["n"],
        "points total": L.mask.sum(1), "T_min [degC]": t_min - T_ZERO_C,
        "T_max [degC]": t_max - T_ZERO_C, "T_m [K]": fit["T_m"],
        "ΔH_vap [kJ/mol]": dH / 1000, "u(ΔH_vap) [kJ/mol]": u_dH / 1000,
        "reference ΔH_vap [kJ/mol]": ref_dH / 1000, "deviation [u]": dev_u,
        "deviation [%]": dev_pct, "T_b at run pressure [degC]": Tb_run - T_ZERO_C,
        "u(T_b at run pressure) [K]": u_run, "T_b at 101.325 kPa [degC]": Tb_n - T_ZERO_C,
        "u(T_b at 101.325 kPa) [K]": u_n, "measured T_b [degC]": Tb_meas - T_ZERO_C,
        "measured - predicted T_b [K]": gap, "ΔS_vap [J/(mol K)]": dS,
        "u(ΔS_vap) [J/(mol K)]": u_dS, "Trouton": trouton, "reduced chi2": fit["chi2_red"],
        "flags": [", ".join(f) for f in flags], "flag reasons": ["; ".join(r) for r in reasons],
    })


def analyze_runs(runs: Mapping[str, Run] | Iterable[Run], **options) -> pd.DataFrame:
    """:func:`analyze_table` for Run objects (dict run_id -> Run, or a list)."""
    if not isinstance(runs, Mapping):
        runs = {f"run{i + 1}": r for i, r in enumerate(runs)}
    return analyze_table(runs_to_table(runs), **options)
