"""From typed cells to a run record: numbers, units, entries and the readings table.

Every way a run arrives (a run file, a DataFrame, a long table) hands its cells
to these functions, so a number, a unit or an include flag is read, and refused
with a located error, the same way everywhere. Physical checks come later, once,
in :mod:`vpkit.record.validate`.
"""

from __future__ import annotations

import math
import re
from typing import Any

import numpy as np

from ..errors import BadValueError, RunFileError, UnitError
from ..units import check_unit
from .fields import FIELDS, Entry
from .safewrite import restore

_READING_COLUMNS = ("bath_temperature", "reading", "pressure", "include", "reason")
_READING_KINDS = {"bath_temperature": "temperature", "reading": "reading", "pressure": "pressure"}
#: Accepted ``include`` cells (case ignored); an empty cell includes the point.
INCLUDE_YES = frozenset({"yes", "y", "true", "1", "x", "include", "included", ""})
INCLUDE_NO = frozenset({"no", "n", "false", "0", "exclude", "excluded"})


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


def parse_number(text: str, *, column: str = "value", decimal: str = ".") -> float:
    """A number as a person types it, refused with a hint when it is ambiguous (a
    decimal comma such as '80,5' without ``decimal=','``, a unit typed into the box)."""
    return _parse_number(str(text), None, None, column, decimal)


def entry_from_cells(name, cells, source, row, decimal) -> Entry:
    value = cells[0] if len(cells) > 0 else ""
    unit = cells[1] if len(cells) > 1 else ""
    unc = cells[2] if len(cells) > 2 else ""
    if (decimal == "." and len(cells) >= 3 and _NUMBER.match(value.strip())
            and _NUMBER.match(unit.strip()) and name in FIELDS and FIELDS[name][0] != "text"):
        raise RunFileError(f"{name}: {len(cells) + 1} cells where the header has 4 and a number "
                           f"({unit!r}) where the unit belongs: a decimal comma in "
                           f"'{value},{unit}'?", file=source, row=row, column="value",
                           hint="use a decimal point, or read the file with decimal=',' and "
                           "';' between the columns")
    if name not in FIELDS:
        raise RunFileError(f"unknown quantity {name!r}", file=source, row=row, column="quantity",
                           hint="known quantities are " + ", ".join(FIELDS))
    kind = FIELDS[name][0]
    if name == "liquid_density" and value.strip().lower() == "reference":
        return Entry("reference", "", None)
    if kind == "text":
        return Entry(restore(value), unit, None)
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


def split_header(cell: str) -> tuple[str, str]:
    m = re.fullmatch(r"\s*([^\[\]]+?)\s*(?:\[(.*)\])?\s*", cell)
    if not m:
        return cell.strip().lower(), ""
    return m.group(1).strip().lower(), (m.group(2) or "").strip()


def frame_to_parts(df, metadata: dict[str, Any]) -> dict:
    """A run's fields from a DataFrame of readings and keyword metadata (see
    :meth:`vpkit.record.run.Run.from_frame`)."""
    entries = [(name, _entry_from_python(name, value)) for name, value in metadata.items()]
    header = [str(c) for c in df.columns]
    rows = [["" if _is_missing(v) else _cell_text(v) for v in rec]
            for rec in df.itertuples(False)]
    return build_parts(entries, header, rows, list(range(2, len(rows) + 2)), (), "<DataFrame>")


def build_parts(entries, header, rows, linenos, comments, source, decimal=".", header_line=1,
                entry_rows=()) -> dict:
    """Check a readings table and metadata entries; the fields of a :class:`Run` (keywords)."""
    names = [split_header(h) for h in header]
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
        if flag in INCLUDE_YES:
            inc.append(True)
        elif flag in INCLUDE_NO:
            inc.append(False)
        else:
            text = cell(cells, "include")
            if _NUMBER.match(text.strip()):  # a number in the flag's place: a split decimal
                raise RunFileError(
                    f"include flag {text!r} is a number: a decimal comma seems to split a "
                    f"value of this row in two ({','.join(cells)})", file=source, row=lineno,
                    column="include", hint="use a decimal point, or read the file with "
                    "decimal=',' and ';' between the columns")
            raise BadValueError(f"include flag {text!r} is not yes or no",
                               file=source, row=lineno, column="include",
                               hint="write yes or no (empty means yes)")
        why.append(restore(cell(cells, "reason")))
    run_units = (units["bath_temperature"], units["reading"], units.get("pressure", ""))
    present = {name for name, _ in entries}
    for name, (_, required, _) in FIELDS.items():
        if required and name not in present:
            raise RunFileError(f"required entry {name!r} is missing", file=source,
                               column=name, hint=f"add a row '{name},VALUE,UNIT' to [run]")
    return {"entries": tuple(entries), "units": run_units, "bath_temperature": tuple(T),
            "reading": tuple(V), "pressure": tuple(P), "include": tuple(inc), "reason": tuple(why),
            "comments": tuple(comments), "source": source, "rows": tuple(linenos),
            "entry_rows": tuple(entry_rows)}


def _is_missing(v) -> bool:
    return v is None or (isinstance(v, float) and math.isnan(v))


def _cell_text(v) -> str:
    if isinstance(v, (bool, np.bool_)):
        return "yes" if v else "no"
    if isinstance(v, (float, np.floating)):
        return repr(float(v))
    return str(v)
