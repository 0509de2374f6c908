"""The run record: raw readings as the user entered them, and the run file.

A run file is plain CSV (comma, semicolon or tab separated) that a person can
fill in with a spreadsheet or a text editor. Lines starting with ``#`` are
comments and are kept. It has two sections::

    [run]
    quantity,value,unit,uncertainty
    liquid,ethanol,,
    barometric_pressure,99.82,kPa,0.1
    room_temperature,21.4,degC,0.3
    ...
    [readings]
    bath_temperature [degC],reading [mL],pressure [kPa],include,reason
    25.0,2.462,,yes,
    ...

Every number carries a unit; the readings' units sit in brackets in the header.
:class:`Run` keeps the numbers and units exactly as entered (nothing is
converted or rounded), and :meth:`Run.to_si` gives the SI view the core works
on. :func:`write_run` writes a run so that ``read_run`` gives back an equal
``Run``.
"""

from __future__ import annotations

import csv
import dataclasses
import io
import math
import re
from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from .errors import BadValueError, ImpossibleDataError, RunFileError, UnitError
from .units import check_unit, to_si

FORMAT_LINE = "# vpkit run file, format 1"

#: Metadata the run section understands: name -> (kind, required, description).
#: kind is a unit kind of :mod:`vpkit.units`, or "text".
FIELDS: dict[str, tuple[str, bool, str]] = {
    "liquid": ("text", True, "name of the liquid (see vpkit.reference.liquids())"),
    "barometric_pressure": ("pressure", True, "barometric pressure during the run"),
    "room_temperature": ("temperature", True, "room temperature at the weighing"),
    "room_reading": ("volume", False, "graduation reading at room temperature, at the weighing"),
    "mass_before_air": ("mass", False, "tube + liquid before the air was added"),
    "mass_after_air": ("mass", False, "tube + liquid after the air was added"),
    "liquid_density": ("density", False, "liquid density at room temperature, or 'reference'"),
    "injected_air_volume": ("volume", False, "volume of air injected, at room conditions"),
    "scale_offset": ("volume", False, "volume between the closed end and the zero mark, if known"),
    "graduated_from": ("text", False, "'closed end' (default) or 'open end'"),
    "bubble_depth": ("length", False, "depth of the gas-liquid interface below the bath surface"),
    "boiling_point": ("temperature", False, "measured boiling point at the barometric pressure"),
    "reading_uncertainty": ("volume", False, "standard uncertainty of one graduation reading"),
    "temperature_uncertainty": ("temperature", False, "standard uncertainty of one bath reading"),
    "notes": ("text", False, "free text"),
}

#: Default standard uncertainties, in SI, used where the file gives none.
#: All are common practice, no source: half the smallest division of a 0.01 mL
#: graduated tube, a calibrated laboratory thermometer, a laboratory aneroid
#: barometer, an analytical balance (0.1 mg readability, 1 mg with drift and
#: handling), a 1 mL syringe (1 %), a ruler held against a bath, the spread of
#: tabulated densities.
DEFAULT_UNCERTAINTY: dict[str, float] = {
    "reading_uncertainty": 0.005e-6,  # m^3
    "temperature_uncertainty": 0.2,  # K
    "barometric_pressure": 100.0,  # Pa
    "pressure": 100.0,  # Pa, per-point pressure
    "room_temperature": 0.3,  # K
    "mass_before_air": 1e-6,  # kg
    "mass_after_air": 1e-6,  # kg
    "injected_air_volume": 0.01e-6,  # m^3
    "scale_offset": 0.005e-6,  # m^3
    "bubble_depth": 0.003,  # m
    "boiling_point": 0.3,  # K
    "liquid_density_relative": 1e-3,  # relative, for 'reference' or a value without uncertainty
}

_READING_COLUMNS = ("bath_temperature", "reading", "pressure", "include", "reason")
_READING_KINDS = {"bath_temperature": "temperature", "reading": "volume", "pressure": "pressure"}
_TRUE = {"yes", "y", "true", "1", "x", "include", "included", ""}
_FALSE = {"no", "n", "false", "0", "exclude", "excluded"}


@dataclass(frozen=True)
class Entry:
    """One metadata entry as entered: a number or text, its unit, its uncertainty.

    The uncertainty is in the same unit as the value (for a temperature, a
    difference of that size).
    """

    value: float | str
    unit: str = ""
    uncertainty: float | None = None


@dataclass(frozen=True)
class RunSI:
    """The SI view of a run that the core computes with (all arrays length n).

    Temperatures in K, pressures in Pa, volumes in m^3, masses in kg, densities
    in kg/m^3, lengths in m. ``u`` maps an input name to its standard
    uncertainty in SI. ``pressure`` is NaN where a point has no own pressure.
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


@dataclass(frozen=True)
class Run:
    """One trapped-bubble run, exactly as entered.

    Attributes
    ----------
    entries : tuple of (name, Entry)
        Metadata in the order entered.
    units : tuple of str
        Units of bath temperature, reading and per-point pressure (the last
        may be empty when no pressures are given).
    bath_temperature, reading : tuple of float
        The readings, in ``units``.
    pressure : tuple of float or None
        Per-point pressure, None where not given.
    include : tuple of bool
    reason : tuple of str
        Why a point is excluded (free text; may be given for included points).
    comments : tuple of str
        Comment lines of the file, kept for round trips.
    source : str or None
        Where the run was read from (not compared).
    rows : tuple of int
        File line of each reading (not compared), for messages.
    """

    entries: tuple[tuple[str, Entry], ...]
    units: tuple[str, str, str]
    bath_temperature: tuple[float, ...]
    reading: tuple[float, ...]
    pressure: tuple[float | None, ...]
    include: tuple[bool, ...]
    reason: tuple[str, ...]
    comments: tuple[str, ...] = ()
    source: str | None = field(default=None, compare=False)
    rows: tuple[int, ...] = field(default=(), compare=False)

    # -- access -----------------------------------------------------------
    def entry(self, name: str) -> Entry | None:
        """The metadata entry called ``name``, or None."""
        for key, value in self.entries:
            if key == name:
                return value
        return None

    @property
    def liquid(self) -> str:
        e = self.entry("liquid")
        return "" if e is None else str(e.value)

    @property
    def n_points(self) -> int:
        return len(self.bath_temperature)

    def row_of(self, i: int) -> int | None:
        """File line of reading ``i`` (None for runs not read from a file)."""
        return self.rows[i] if i < len(self.rows) else None

    def with_include(self, include, reason=None) -> Run:
        """A copy with new include flags (and reasons); the original is unchanged."""
        include = tuple(bool(v) for v in include)
        reason = self.reason if reason is None else tuple(str(r) for r in reason)
        if len(include) != self.n_points or len(reason) != self.n_points:
            raise ValueError("include and reason must have one entry per reading")
        return dataclasses.replace(self, include=include, reason=reason)

    # -- construction -----------------------------------------------------
    @classmethod
    def from_frame(cls, df, **metadata: Any) -> Run:
        """Build a run from a DataFrame of readings and keyword metadata.

        Parameters
        ----------
        df : pandas.DataFrame
            Columns ``bath_temperature [UNIT]`` and ``reading [UNIT]``;
            optional ``pressure [UNIT]``, ``include`` and ``reason``.
        **metadata
            Each a number-with-unit string (``"99.8 kPa"``), a tuple
            ``(value, unit)`` or ``(value, unit, uncertainty)``, an
            :class:`Entry`, or plain text for text fields.

        Examples
        --------
        >>> import pandas as pd
        >>> df = pd.DataFrame({"bath_temperature [degC]": [30.0, 40.0],
        ...                    "reading [mL]": [2.1, 2.3]})
        >>> run = Run.from_frame(df, liquid="water", barometric_pressure="100.1 kPa",
        ...                      room_temperature=(21.0, "degC"), scale_offset="0.1 mL")
        >>> run.units
        ('degC', 'mL', '')
        """
        entries = []
        for name, value in metadata.items():
            entries.append((name, _entry_from_python(name, value)))
        header = [str(c) for c in df.columns]
        rows = [["" if _is_missing(v) else _cell_text(v) for v in rec]
                for rec in df.itertuples(False)]
        return _build(entries, header, rows, list(range(2, len(rows) + 2)), (), "<DataFrame>")

    def to_frame(self):
        """The readings as a DataFrame with units in the column names."""
        import pandas as pd

        tu, ru, pu = self.units
        data = {f"bath_temperature [{tu}]": list(self.bath_temperature),
                f"reading [{ru}]": list(self.reading)}
        if pu:
            data[f"pressure [{pu}]"] = [np.nan if p is None else p for p in self.pressure]
        data["include"] = list(self.include)
        data["reason"] = list(self.reason)
        return pd.DataFrame(data)

    def to_si(self) -> RunSI:
        """Convert to SI and validate (see :class:`RunSI`).

        Raises
        ------
        UnitError, ImpossibleDataError, RunFileError
            With the file, row and column of the offending entry.
        """
        return _to_si(self)


# ---------------------------------------------------------------------------
# reading
# ---------------------------------------------------------------------------


def read_run(path, *, decimal: str = ".") -> Run:
    """Read one run file.

    Parameters
    ----------
    path : str or Path
        The run file (UTF-8, with or without BOM; Latin-1 is accepted too).
    decimal : {".", ","}
        Decimal mark of the numbers. With ``","`` the columns must be
        separated by semicolons or tabs.

    Returns
    -------
    Run

    Raises
    ------
    RunFileError
        The file cannot be read, or names the file, row and column of what is
        wrong and how to fix it.
    """
    path = Path(path)
    try:
        raw = path.read_bytes()
    except OSError as exc:
        raise RunFileError(f"cannot open the run file: {exc.strerror}", file=str(path)) from exc
    return parse_run(raw, source=str(path), decimal=decimal)


def parse_run(data: bytes | str, *, source: str = "<text>", decimal: str = ".") -> Run:
    """Parse the text of a run file (see :func:`read_run`)."""
    if decimal not in (".", ","):
        raise RunFileError(f"decimal must be '.' or ',', got {decimal!r}", file=source)
    text = _decode(data, source)
    lines = text.splitlines()
    if not any(line.strip() for line in lines):
        raise RunFileError("the file is empty", file=source,
                           hint="start from a run file written by vpkit.write_run")
    delimiter = _sniff_delimiter(lines)
    if decimal == "," and delimiter == ",":
        raise RunFileError("a decimal comma needs ';' or tab between columns", file=source,
                           hint="save the file with ';' as the separator")
    comments: list[str] = []
    section = None
    meta_rows: list[tuple[int, list[str]]] = []
    table: list[tuple[int, list[str]]] = []
    for lineno, line in enumerate(lines, start=1):
        stripped = line.strip()
        if stripped.startswith("#"):
            if stripped != FORMAT_LINE:
                comments.append(stripped)
            continue
        cells = next(csv.reader([line], delimiter=delimiter)) if stripped else []
        cells = [c.strip() for c in cells]
        while cells and cells[-1] == "":
            cells.pop()
        if not cells:
            continue
        head = cells[0].lower()
        if head in ("[run]", "[readings]") and len(cells) == 1:
            section = head
            continue
        if section is None:
            raise RunFileError(f"found {cells[0]!r} before any section", file=source, row=lineno,
                               hint="begin the file with a line '[run]'")
        (meta_rows if section == "[run]" else table).append((lineno, cells))
    if not meta_rows:
        raise RunFileError("no [run] section with metadata", file=source,
                           hint="add a '[run]' line, then 'quantity,value,unit,uncertainty' rows")
    if not table:
        raise RunFileError("no [readings] section", file=source,
                           hint="add a '[readings]' line, a header row and one row per reading")

    entries: list[tuple[str, Entry]] = []
    seen: set[str] = set()
    for lineno, cells in meta_rows:
        name = cells[0].strip().lower()
        if name == "quantity":  # the header row
            continue
        if name in seen:
            raise RunFileError(f"{name!r} is given twice", file=source, row=lineno,
                               column="quantity", hint="keep one of the two rows")
        seen.add(name)
        entries.append((name, _entry_from_cells(name, cells[1:], source, lineno, decimal)))
    header_row, header = table[0]
    rows = [cells for _, cells in table[1:]]
    linenos = [n for n, _ in table[1:]]
    del header_row
    return _build(entries, header, rows, linenos, tuple(comments), source, decimal=decimal,
                  header_line=table[0][0])


def _decode(data: bytes | str, source: str) -> str:
    if isinstance(data, str):
        data = data.encode("utf-8", "surrogatepass")
    if data.startswith(b"\xef\xbb\xbf"):
        data = data[3:]
    if b"\x00" in data:
        raise RunFileError("this is not a text file (it contains NUL bytes)", file=source,
                           hint="export the sheet as CSV text")
    try:
        return data.decode("utf-8")
    except UnicodeDecodeError:
        return data.decode("latin-1")


def _sniff_delimiter(lines: list[str]) -> str:
    for line in lines:
        s = line.strip()
        if not s or s.startswith("#") or s.lower() in ("[run]", "[readings]"):
            continue
        for d in ("\t", ";", ","):
            if d in s:
                return d
    return ","


_NUMBER = re.compile(r"^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$")


def _parse_number(text: str, source, row, column, decimal=".") -> float:
    t = text.strip()
    if decimal == ",":
        t = t.replace(",", ".")
    elif re.fullmatch(r"[+-]?\d+,\d+", t):
        raise BadValueError(f"{text!r} looks like a number with a decimal comma", file=source,
                           row=row, column=column,
                           hint="use a decimal point, or read with decimal=',' and ';' separators")
    if t.lower() in ("nan", "inf", "+inf", "-inf", "infinity", "-infinity"):
        raise BadValueError(f"{text!r} is not a finite number", file=source, row=row, column=column,
                           hint="enter the measured value, or remove the row")
    if not _NUMBER.match(t):
        raise BadValueError(f"{text!r} is not a number", file=source, row=row, column=column,
                           hint="enter a plain number such as 21.5; put the unit in its own column")
    return float(t)


def _entry_from_cells(name, cells, source, row, decimal) -> Entry:
    value = cells[0] if len(cells) > 0 else ""
    unit = cells[1] if len(cells) > 1 else ""
    unc = cells[2] if len(cells) > 2 else ""
    if name not in FIELDS:
        raise RunFileError(f"unknown quantity {name!r}", file=source, row=row, column="quantity",
                           hint="known quantities are " + ", ".join(FIELDS))
    kind = FIELDS[name][0]
    if name == "liquid_density" and value.strip().lower() == "reference":
        return Entry("reference", "", None)
    if kind == "text":
        return Entry(value, unit, None)
    if value == "":
        raise BadValueError(f"{name} has no value", file=source, row=row, column="value",
                           hint="enter the value or delete the row")
    number = _parse_number(value, source, row, "value", decimal)
    if not unit:
        raise UnitError(f"{name} has no unit", file=source, row=row, column="unit",
                        hint="write the unit in the third column, e.g. kPa, degC, mL, g")
    try:
        check_unit(unit, kind)
    except UnitError as exc:
        raise UnitError(f"{name}: {exc.message}", file=source, row=row, column="unit",
                        hint=exc.hint) from exc
    u = None
    if unc != "":
        u = _parse_number(unc, source, row, "uncertainty", decimal)
        if u < 0:
            raise BadValueError(f"{name}: uncertainty {unc} is negative", file=source, row=row,
                               column="uncertainty", hint="give a standard uncertainty >= 0")
    return Entry(number, unit, u)


def _entry_from_python(name: str, value: Any) -> Entry:
    if name not in FIELDS:
        raise RunFileError(f"unknown quantity {name!r}", column=name,
                           hint="known quantities are " + ", ".join(FIELDS))
    if isinstance(value, Entry):
        return value
    kind = FIELDS[name][0]
    if name == "liquid_density" and isinstance(value, str) and value.strip() == "reference":
        return Entry("reference")
    if kind == "text":
        return Entry(str(value))
    if isinstance(value, str):
        parts = value.strip().split(None, 1)
        if len(parts) != 2:
            raise UnitError(f"{name}={value!r} needs a number and a unit",
                            column=name, hint="write e.g. '99.8 kPa'")
        value = (parts[0], parts[1])
    if isinstance(value, (tuple, list)) and len(value) in (2, 3):
        number = _parse_number(str(value[0]), "<keyword>", None, name)
        unit = str(value[1])
        try:
            check_unit(unit, kind)
        except UnitError as exc:
            raise UnitError(f"{name}: {exc.message}", column=name, hint=exc.hint) from exc
        u = None if len(value) == 2 or value[2] is None else float(value[2])
        return Entry(number, unit, u)
    raise UnitError(f"{name}={value!r}: a {kind} needs a unit", column=name,
                    hint="pass e.g. (99.8, 'kPa') or '99.8 kPa'")


def _split_header(cell: str) -> tuple[str, str]:
    m = re.fullmatch(r"\s*([^\[\]]+?)\s*(?:\[(.*)\])?\s*", cell)
    if not m:
        return cell.strip().lower(), ""
    return m.group(1).strip().lower(), (m.group(2) or "").strip()


def _build(entries, header, rows, linenos, comments, source, decimal=".", header_line=1) -> Run:
    names = [_split_header(h) for h in header]
    index: dict[str, int] = {}
    units: dict[str, str] = {}
    for j, (name, unit) in enumerate(names):
        if name not in _READING_COLUMNS:
            raise RunFileError(f"unknown readings column {header[j]!r}", file=source,
                               row=header_line, column=header[j],
                               hint="columns are " + ", ".join(_READING_COLUMNS)
                               + " (units in brackets, e.g. 'bath_temperature [degC]')")
        if name in index:
            raise RunFileError(f"column {name!r} appears twice", file=source, row=header_line,
                               column=header[j], hint="keep one of them")
        index[name] = j
        units[name] = unit
    for required in ("bath_temperature", "reading"):
        if required not in index:
            raise RunFileError(f"the readings have no {required!r} column", file=source,
                               row=header_line, column=required,
                               hint=f"add a column '{required} [UNIT]'")
    for name, kind in _READING_KINDS.items():
        if name in index:
            if not units[name]:
                raise UnitError(f"column {name!r} has no unit", file=source, row=header_line,
                                column=name, hint=f"write it as '{name} [UNIT]'")
            try:
                check_unit(units[name], kind)
            except UnitError as exc:
                raise UnitError(f"column {name!r}: {exc.message}", file=source,
                                row=header_line, column=name, hint=exc.hint) from exc
    if not rows:
        raise RunFileError("the readings table has a header but no rows", file=source,
                           row=header_line, hint="add one row per bath temperature")
    T, V, P, inc, why = [], [], [], [], []

    def cell(cells, name):
        j = index.get(name)
        return cells[j] if j is not None and j < len(cells) else ""

    for cells, lineno in zip(rows, linenos):
        if len(cells) > len(header):
            raise RunFileError(f"row has {len(cells)} cells but the header has {len(header)}",
                               file=source, row=lineno,
                               hint="a decimal comma splits a number in two; use a decimal point")
        for name in ("bath_temperature", "reading"):
            if cell(cells, name) == "":
                raise BadValueError(f"missing {name}", file=source, row=lineno, column=name,
                                   hint="enter the value or delete the row")
        T.append(_parse_number(cell(cells, "bath_temperature"), source, lineno,
                               "bath_temperature", decimal))
        V.append(_parse_number(cell(cells, "reading"), source, lineno, "reading", decimal))
        p = cell(cells, "pressure")
        P.append(None if p == "" else _parse_number(p, source, lineno, "pressure", decimal))
        flag = cell(cells, "include").strip().lower()
        if flag in _TRUE:
            inc.append(True)
        elif flag in _FALSE:
            inc.append(False)
        else:
            raise BadValueError(f"include flag {cell(cells, 'include')!r} is not yes or no",
                               file=source, row=lineno, column="include",
                               hint="write yes or no (empty means yes)")
        why.append(cell(cells, "reason"))
    run_units = (units["bath_temperature"], units["reading"], units.get("pressure", ""))
    present = {name for name, _ in entries}
    for name, (_, required, _) in FIELDS.items():
        if required and name not in present:
            raise RunFileError(f"required entry {name!r} is missing", file=source,
                               column=name, hint=f"add a row '{name},VALUE,UNIT' to [run]")
    return Run(tuple(entries), run_units, tuple(T), tuple(V), tuple(P), tuple(inc), tuple(why),
               tuple(comments), source, tuple(linenos))


def _is_missing(v) -> bool:
    return v is None or (isinstance(v, float) and math.isnan(v))


def _cell_text(v) -> str:
    if isinstance(v, (bool, np.bool_)):
        return "yes" if v else "no"
    if isinstance(v, (float, np.floating)):
        return repr(float(v))
    return str(v)


# ---------------------------------------------------------------------------
# writing
# ---------------------------------------------------------------------------


def format_run(run: Run) -> str:
    """The text of a run file for ``run`` (see :func:`write_run`)."""
    out = io.StringIO()
    w = csv.writer(out, lineterminator="\n")
    out.write(FORMAT_LINE + "\n")
    for c in run.comments:
        out.write(c + "\n")
    out.write("[run]\n")
    w.writerow(["quantity", "value", "unit", "uncertainty"])
    for name, e in run.entries:
        value = repr(e.value) if isinstance(e.value, float) else e.value
        w.writerow([name, value, e.unit, "" if e.uncertainty is None else repr(e.uncertainty)])
    out.write("[readings]\n")
    tu, ru, pu = run.units
    head = [f"bath_temperature [{tu}]", f"reading [{ru}]"]
    if pu:
        head.append(f"pressure [{pu}]")
    head += ["include", "reason"]
    w.writerow(head)
    for i in range(run.n_points):
        row = [repr(run.bath_temperature[i]), repr(run.reading[i])]
        if pu:
            p = run.pressure[i]
            row.append("" if p is None else repr(p))
        row += ["yes" if run.include[i] else "no", run.reason[i]]
        w.writerow(row)
    return out.getvalue()


def write_run(run: Run, path) -> Path:
    """Write ``run`` to ``path``; ``read_run(path) == run`` afterwards."""
    path = Path(path)
    path.write_text(format_run(run), encoding="utf-8")
    return path


# ---------------------------------------------------------------------------
# SI view and checks
# ---------------------------------------------------------------------------


def _to_si(run: Run) -> RunSI:
    src = run.source

    def q(name):
        e = run.entry(name)
        if e is None or isinstance(e.value, str):
            return None, None
        kind = FIELDS[name][0]
        value = to_si(e.value, e.unit, kind)
        u = None if e.uncertainty is None else to_si(e.uncertainty, e.unit, kind, delta=True)
        return value, u

    def fail(name, msg, hint):
        raise ImpossibleDataError(f"{name}: {msg}", file=src, column=name, hint=hint)

    tu, ru, pu = run.units
    T = to_si(np.asarray(run.bath_temperature, float), tu, "temperature")
    reading = to_si(np.asarray(run.reading, float), ru, "volume")
    pressure = np.array([np.nan if p is None else p for p in run.pressure], float)
    if pu:
        pressure = to_si(pressure, pu, "pressure")
    for i in range(run.n_points):
        if T[i] <= 0:
            raise ImpossibleDataError(f"bath temperature {run.bath_temperature[i]} {tu} is at or "
                                      "below absolute zero", file=src, row=run.row_of(i),
                                      column="bath_temperature",
                                      hint="check the unit in the column header")
        if run.reading[i] < 0:
            raise ImpossibleDataError(f"graduation reading {run.reading[i]} {ru} is negative",
                                      file=src, row=run.row_of(i), column="reading",
                                      hint="readings count up from the zero mark; check the sign")
        if not np.isnan(pressure[i]) and pressure[i] <= 0:
            raise ImpossibleDataError(f"pressure {run.pressure[i]} {pu} is not positive", file=src,
                                      row=run.row_of(i), column="pressure",
                                      hint="enter the absolute pressure")
    _check_temperature_unit(run, T)

    u: dict[str, float] = {}
    P_bar, u_P = q("barometric_pressure")
    if P_bar <= 0:
        fail("barometric_pressure", "must be positive", "enter the absolute barometric pressure")
    T_room, u_Troom = q("room_temperature")
    if T_room <= 0:
        fail("room_temperature", "is at or below absolute zero", "check its unit")
    room_reading, u_rr = q("room_reading")
    m_before, u_mb = q("mass_before_air")
    m_after, u_ma = q("mass_after_air")
    V_inj, u_inj = q("injected_air_volume")
    offset, u_off = q("scale_offset")
    depth, u_depth = q("bubble_depth")
    T_boil, u_boil = q("boiling_point")
    for name, value in (("mass_before_air", m_before), ("mass_after_air", m_after),
                        ("injected_air_volume", V_inj)):
        if value is not None and value <= 0:
            fail(name, "must be positive", "enter the measured value")
    if (m_before is None) != (m_after is None):
        fail("mass_before_air" if m_before is None else "mass_after_air",
             "both masses are needed for the weighing", "enter both masses, or neither")
    if m_before is not None and m_after >= m_before:
        fail("mass_after_air", "is not lower than the mass before the air was added; the air "
             "displaces liquid, so the mass must drop", "check that the two masses are not swapped")
    de = run.entry("liquid_density")
    density, u_rho, from_ref = None, None, False
    if de is None or de.value == "reference":
        from_ref = True
    else:
        density, u_rho = q("liquid_density")
        if density <= 0:
            fail("liquid_density", "must be positive", "enter the density or 'reference'")
    ge = run.entry("graduated_from")
    direction = 1
    if ge is not None and str(ge.value).strip():
        g = str(ge.value).strip().lower().replace("-", " ").replace("_", " ")
        if g in ("closed end", "closed"):
            direction = 1
        elif g in ("open end", "open"):
            direction = -1
        else:
            raise BadValueError(f"graduated_from: {ge.value!r} is not 'closed end' or 'open end'",
                                file=src, column="graduated_from",
                                hint="write 'closed end' when the zero mark is near the closed end")
    if offset is None and (room_reading is None or m_before is None):
        raise RunFileError("the scale offset can be neither calibrated nor read: give "
                           "room_reading with mass_before_air and mass_after_air, or scale_offset",
                           file=src, column="scale_offset",
                           hint="add the weighing rows, or a measured scale_offset")
    D = DEFAULT_UNCERTAINTY
    ru_e, ru_u = q("reading_uncertainty")
    tu_e = run.entry("temperature_uncertainty")
    u["reading"] = D["reading_uncertainty"] if ru_e is None else ru_e
    u["T"] = (D["temperature_uncertainty"] if tu_e is None
              else to_si(tu_e.value, tu_e.unit, "temperature", delta=True))
    u["pressure"] = D["pressure"] if u_P is None else u_P
    u["P_bar"] = D["barometric_pressure"] if u_P is None else u_P
    u["T_room"] = D["room_temperature"] if u_Troom is None else u_Troom
    u["room_reading"] = u["reading"] if u_rr is None else u_rr
    u["mass_before"] = D["mass_before_air"] if u_mb is None else u_mb
    u["mass_after"] = D["mass_after_air"] if u_ma is None else u_ma
    u["V_injected"] = D["injected_air_volume"] if u_inj is None else u_inj
    u["scale_offset"] = D["scale_offset"] if u_off is None else u_off
    u["depth"] = D["bubble_depth"] if u_depth is None else u_depth
    u["T_boil"] = D["boiling_point"] if u_boil is None else u_boil
    u["density_relative"] = (D["liquid_density_relative"] if u_rho is None or density is None
                             else u_rho / density)
    return RunSI(
        liquid=run.liquid, T=T, reading=reading, pressure=pressure,
        include=np.asarray(run.include, bool), reason=run.reason, P_bar=P_bar, T_room=T_room,
        room_reading=room_reading, mass_before=m_before, mass_after=m_after, density=density,
        density_from_reference=from_ref, V_injected=V_inj, scale_offset=offset,
        direction=direction, depth=depth, T_boil=T_boil, u=u,
    )


def _check_temperature_unit(run: Run, T: np.ndarray) -> None:
    """Catch Celsius values labelled as kelvin and the reverse (plausibility)."""
    tu = run.units[0]
    raw = np.asarray(run.bath_temperature, float)
    from .units import normalize_unit

    unit = normalize_unit(tu)
    if unit == "K" and raw.max() < 150:
        raise ImpossibleDataError(
            f"bath temperatures up to {raw.max():g} K are far below any liquid bath",
            file=run.source, row=run.row_of(int(raw.argmax())), column="bath_temperature",
            hint="these look like degC values: write 'bath_temperature [degC]'")
    if unit == "degC" and raw.min() > 200:
        raise ImpossibleDataError(
            f"bath temperatures from {raw.min():g} degC are above any liquid bath",
            file=run.source, row=run.row_of(int(raw.argmin())), column="bath_temperature",
            hint="these look like kelvin values: write 'bath_temperature [K]'")
