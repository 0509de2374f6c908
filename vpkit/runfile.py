"""The run file: reading it into a :class:`~vpkit.run.Run` and writing it back.

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
:func:`write_run` writes a run so that :func:`read_run` gives back an equal
``Run``. This module checks the text (numbers, units, layout); the physical
checks happen once, for one run or many, in :mod:`vpkit.stack`.
"""

from __future__ import annotations

import csv
import io
import math
import re
from pathlib import Path
from typing import Any

import numpy as np

from .errors import BadValueError, RunFileError, UnitError
from .run import FIELDS, Entry, Run
from .units import check_unit

FORMAT_LINE = "# vpkit run file, format 1"

_READING_COLUMNS = ("bath_temperature", "reading", "pressure", "include", "reason")
_READING_KINDS = {"bath_temperature": "temperature", "reading": "volume", "pressure": "pressure"}
_TRUE = {"yes", "y", "true", "1", "x", "include", "included", ""}
_FALSE = {"no", "n", "false", "0", "exclude", "excluded"}



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
    entry_rows: list[tuple[str, int]] = []
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
        entry_rows.append((name, lineno))
    header_row, header = table[0]
    rows = [cells for _, cells in table[1:]]
    linenos = [n for n, _ in table[1:]]
    del header_row
    return _build(entries, header, rows, linenos, tuple(comments), source, decimal=decimal,
                  header_line=table[0][0], entry_rows=tuple(entry_rows))


def _decode(data: bytes | str, source: str) -> str:
    if isinstance(data, str):
        data = data.encode("utf-8", "surrogatepass")
    if data.startswith((b"\xff\xfe", b"\xfe\xff")):  # UTF-16 text (spreadsheet export)
        try:
            return data.decode("utf-16")
        except UnicodeDecodeError as exc:
            raise RunFileError("the file looks like UTF-16 text but cannot be decoded",
                               file=source, hint="save it again as CSV (UTF-8)") from exc
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


def parse_number(text: str, *, column: str = "value", decimal: str = ".") -> float:
    """A number as a person types it, refused with a hint when it is ambiguous (a
    decimal comma such as '80,5' without ``decimal=','``, a unit typed into the box)."""
    return _parse_number(str(text), None, None, column, decimal)


def _entry_from_cells(name, cells, source, row, decimal) -> Entry:
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


def run_from_frame(df, metadata: dict[str, Any]) -> Run:
    """A run from a DataFrame of readings and keyword metadata (see :meth:`Run.from_frame`)."""
    entries = [(name, _entry_from_python(name, value)) for name, value in metadata.items()]
    header = [str(c) for c in df.columns]
    rows = [["" if _is_missing(v) else _cell_text(v) for v in rec]
            for rec in df.itertuples(False)]
    return _build(entries, header, rows, list(range(2, len(rows) + 2)), (), "<DataFrame>")


def _build(entries, header, rows, linenos, comments, source, decimal=".", header_line=1,
           entry_rows=()) -> Run:
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
        why.append(cell(cells, "reason"))
    run_units = (units["bath_temperature"], units["reading"], units.get("pressure", ""))
    present = {name for name, _ in entries}
    for name, (_, required, _) in FIELDS.items():
        if required and name not in present:
            raise RunFileError(f"required entry {name!r} is missing", file=source,
                               column=name, hint=f"add a row '{name},VALUE,UNIT' to [run]")
    return Run(tuple(entries), run_units, tuple(T), tuple(V), tuple(P), tuple(inc), tuple(why),
               tuple(comments), source, tuple(linenos), tuple(entry_rows))


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


def append_reading(path, temperature: float, reading: float, *, include: bool = True,
                   reason: str = "", decimal: str = ".") -> Run:
    """Add one reading at the end of a run file, safely; returns the run as now written.

    The line is appended in the file's own delimiter, decimal mark, column order and
    encoding, so nothing already in the file changes. The new text is read back
    before it replaces the file (a temporary file in the same folder, flushed to
    disk, then renamed over the original), so a crash leaves either the old file
    or the new one, never a half-written one; the run read back must equal the old
    run plus the new reading, or nothing is written.
    """
    path = Path(path)
    data = path.read_bytes()
    old = parse_run(data, source=str(path), decimal=decimal)
    text = _decode(data, str(path))
    lines = text.splitlines()
    delim = _sniff_delimiter(lines)
    try:
        start = next(i for i, ln in enumerate(lines) if ln.strip().lower() == "[readings]")
    except StopIteration as exc:  # parse_run would have refused it already
        raise RunFileError("no [readings] section", file=str(path)) from exc
    header = next(ln for ln in lines[start + 1:] if ln.strip() and not ln.startswith("#"))
    names = [_split_header(c)[0].strip().lower()
             for c in next(csv.reader([header], delimiter=delim))]

    def num(x: float) -> str:
        return repr(float(x)).replace(".", decimal)

    values = {"bath_temperature": num(temperature), "reading": num(reading), "pressure": "",
              "include": "yes" if include else "no", "reason": reason}
    eol = "\r\n" if "\r\n" in text else "\n"
    out = io.StringIO()
    csv.writer(out, delimiter=delim, lineterminator=eol).writerow(
        [values.get(n, "") for n in names])
    new_text = text + ("" if text.endswith(("\n", "\r")) else eol) + out.getvalue()
    new = parse_run(new_text, source=str(path), decimal=decimal)
    expected = (old.bath_temperature + (float(temperature),), old.reading + (float(reading),),
                old.include + (bool(include),), old.entries)
    if (new.bath_temperature, new.reading, new.include, new.entries) != expected:
        raise RunFileError("the reading could not be appended without changing the file's "
                           "other content; nothing was written", file=str(path),
                           hint="add the line by hand")
    codec = "utf-16" if data.startswith((b"\xff\xfe", b"\xfe\xff")) else (
        "utf-8-sig" if data.startswith(b"\xef\xbb\xbf") else "utf-8")
    atomic_write_text(path, new_text, encoding=codec)
    return read_run(path, decimal=decimal)


def atomic_write_text(path, text: str, *, encoding: str = "utf-8") -> Path:
    """Write ``text`` to ``path`` so that a crash leaves the old file or the new one:
    a temporary file in the same folder, flushed to disk, then renamed over ``path``."""
    import os
    import tempfile

    path = Path(path)
    fd, tmp = tempfile.mkstemp(prefix=path.name + ".", suffix=".tmp", dir=path.parent)
    try:
        with os.fdopen(fd, "w", encoding=encoding, newline="") as fh:
            fh.write(text)
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(tmp, path)
    except BaseException:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        raise
    return path
