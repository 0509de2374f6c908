"""The run file: reading it into a :class:`~vpkit.record.run.Run` and writing it back.

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
checks happen once, for one run or many, in :mod:`vpkit.record.stack`.
"""

from __future__ import annotations

import csv
import io
from pathlib import Path

from ..errors import InputError, RunFileError
from .cells import build_parts, entry_from_cells, split_header
from .fields import Entry
from .run import Run
from .safewrite import atomic_write_text, inert, locked, remove_stale_temporaries
from .workbook import is_workbook, locate, read_sheets

FORMAT_LINE = "# vpkit run file, format 1"




# ---------------------------------------------------------------------------
# reading
# ---------------------------------------------------------------------------


def read_run(path, *, decimal: str = ".", sheet: str | int | None = None) -> Run:
    """Read one run file: CSV text, or a sheet of a workbook (.xlsx, .xlsm, .ods).

    Parameters
    ----------
    path : str or Path
        The run file (UTF-8, with or without BOM; Latin-1 is accepted too), or a
        workbook with one run per sheet (:mod:`vpkit.record.workbook`).
    decimal : {".", ","}
        Decimal mark of the numbers. With ``","`` the columns must be
        separated by semicolons or tabs.
    sheet : str or int, optional
        The workbook sheet to read (its name or 0-based position; default the first).

    Returns
    -------
    Run

    Raises
    ------
    RunFileError
        The file cannot be read, or names the file, row and column (in a workbook,
        the sheet and cell) of what is wrong and how to fix it.
    """
    path = Path(path)
    if is_workbook(path):
        return run_from_workbook(path, sheet, decimal=decimal)
    try:
        size = path.stat().st_size
        if size > MAX_FILE_BYTES:
            raise RunFileError(
                f"the file is {size / 1e6:,.1f} MB, more than the {MAX_FILE_BYTES / 1e6:g} MB "
                "a run file may have (a run of readings by hand is a few kB)", file=str(path),
                hint="a logger's record is not a run file: pick the readings at the settled "
                "bath temperatures and write them as a run")
        raw = path.read_bytes()
    except OSError as exc:
        raise RunFileError(f"cannot open the run file: {exc.strerror}", file=str(path)) from exc
    return parse_run(raw, source=str(path), decimal=decimal)


def run_from_workbook(path, sheet: str | int | None = None, *, decimal: str = ".",
                      sheets=None) -> Run:
    """The run in one sheet of a workbook (the first unless ``sheet`` names another);
    errors name the sheet and cell."""
    sheets = read_sheets(path) if sheets is None else sheets
    if not sheets:
        raise RunFileError("the workbook has no sheets", file=str(path))
    if sheet is None:
        chosen = sheets[0]
    elif isinstance(sheet, int):
        chosen = sheets[sheet] if -len(sheets) <= sheet < len(sheets) else None
    else:
        chosen = next((s for s in sheets if s.name == sheet), None)
    if chosen is None:
        raise RunFileError(f"no sheet {sheet!r} in the workbook", file=str(path),
                           hint="sheets: " + ", ".join(s.name for s in sheets))
    try:
        return parse_run(chosen.text(), source=chosen.label, decimal=decimal)
    except InputError as exc:
        raise locate(exc, chosen) from exc


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
        cells = _cells(line, delimiter, source, lineno) if stripped else []
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
        entries.append((name, entry_from_cells(name, cells[1:], source, lineno, decimal)))
        entry_rows.append((name, lineno))
    header_row, header = table[0]
    rows = [cells for _, cells in table[1:]]
    linenos = [n for n, _ in table[1:]]
    del header_row
    return Run(**build_parts(entries, header, rows, linenos, tuple(comments), source,
                             decimal=decimal, header_line=table[0][0],
                             entry_rows=tuple(entry_rows)))


#: Largest run file read [bytes]; a larger one is refused before it is read.
MAX_FILE_BYTES = 20_000_000

#: Longest line a run file may have [characters] (a note of a few pages fits; a line
#: longer than this is a damaged or foreign file, refused with its place).
MAX_LINE = 100_000


def _cells(line: str, delimiter: str, source: str, lineno: int) -> list[str]:
    """One line split into cells; a line the CSV reader cannot take is refused, located."""
    if len(line) > MAX_LINE:
        raise RunFileError(f"line is {len(line):,} characters long, more than the "
                           f"{MAX_LINE:,} a run file line may have", file=source, row=lineno,
                           hint="shorten the text on that line (a long note belongs in a "
                           "separate file) or check that this is a run file")
    try:
        return next(csv.reader([line], delimiter=delimiter))
    except csv.Error as exc:
        raise RunFileError(f"line cannot be read as CSV ({exc})", file=source, row=lineno,
                           hint="check the quotes on that line") from exc


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


# ---------------------------------------------------------------------------
# writing
# ---------------------------------------------------------------------------


def format_run(run: Run) -> str:
    """The text of a run file for ``run`` (see :func:`write_run`). Text a spreadsheet
    would run as a formula (=, +, -, @ ...) is written with a leading quote, which
    reading removes (:func:`vpkit.record.safewrite.inert`)."""
    out = io.StringIO()
    w = csv.writer(out, lineterminator="\n")
    out.write(FORMAT_LINE + "\n")
    for c in run.comments:
        out.write(c + "\n")
    out.write("[run]\n")
    w.writerow(["quantity", "value", "unit", "uncertainty"])
    for name, e in run.entries:
        value = repr(e.value) if isinstance(e.value, float) else inert(e.value)
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
        row += ["yes" if run.include[i] else "no", inert(run.reason[i])]
        w.writerow(row)
    return out.getvalue()


def write_run(run: Run, path) -> Path:
    """Write ``run`` to ``path`` (atomically, under the file's lock, keeping its permission
    bits); ``read_run(path) == run`` afterwards."""
    path = Path(path)
    with locked(path):
        remove_stale_temporaries(path, older_than=0.0)  # under the lock: all are stale
        return atomic_write_text(path, format_run(run))


def append_reading(path, temperature: float, reading: float, *, include: bool = True,
                   reason: str = "", decimal: str = ".") -> Run:
    """Add one reading at the end of a run file, safely; returns the run as now written.

    The line is appended in the file's own delimiter, decimal mark, column order and
    encoding, so nothing already in the file changes. The new text is read back
    before it replaces the file (a temporary file in the same folder, flushed to
    disk, then renamed over the original), so a crash leaves either the old file
    or the new one, never a half-written one; the run read back must equal the old
    run plus the new reading, or nothing is written. The read and the write happen
    under the file's lock, so a second writer appending at the same moment waits and
    then appends after this reading: nothing accepted is lost.
    """
    path = Path(path)
    if is_workbook(path):
        raise RunFileError("a reading cannot be appended to a workbook from here",
                           file=str(path), hint="add the row in the workbook, or keep the "
                           "run as a CSV run file")
    with locked(path):  # a second writer waits, then appends to what this one wrote
        remove_stale_temporaries(path, older_than=0.0)
        return _append(path, temperature, reading, include, reason, decimal)


def _codec_of(data: bytes) -> str:
    """The encoding a run file was written in, as :func:`_decode` read it."""
    if data.startswith((b"\xff\xfe", b"\xfe\xff")):
        return "utf-16"
    if data.startswith(b"\xef\xbb\xbf"):
        return "utf-8-sig"
    try:
        data.decode("utf-8")
    except UnicodeDecodeError:
        return "latin-1"
    return "utf-8"


def _append(path: Path, temperature, reading, include, reason, decimal) -> Run:
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
    names = [split_header(c)[0].strip().lower()
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
    atomic_write_text(path, new_text, encoding=_codec_of(data))
    return read_run(path, decimal=decimal)
