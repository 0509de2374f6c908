"""Runs and long tables kept in spreadsheet workbooks (.xlsx, .xlsm, .ods).

A workbook is read as the CSV layouts it mirrors, so a run gives the same numbers
from a workbook as from a CSV file:

* **runs**: each sheet holds one run in the run-file layout (a ``[run]`` section of
  quantity, value, unit, uncertainty rows; a ``[readings]`` section with its header
  row), one cell per CSV field;
* **a long table**: the first sheet holds it (a header row with ``run_id``; one row
  per reading).

Cells are read as typed: a number typed as a number or as text; a formula by its
saved (cached) value; TRUE/FALSE as yes/no; a date or time as ISO text (refused by
the number parser where a number belongs, with its cell). A merged cell, or a formula
whose value was never saved, is refused with the file, sheet and cell (``B7``) and a
hint. Rows keep their sheet numbers: an error in a run names the sheet's row.

References
----------
.. [1] ECMA-376 (Office Open XML), Part 1, 18.3 (worksheets; merged cells) — read with
   ``openpyxl``; OASIS OpenDocument 1.2, Part 1, 9.1 (tables; spanned and covered
   cells, repeated rows and columns) — read with ``odfpy``.
"""

from __future__ import annotations

import csv
import datetime as _dt
import io
from dataclasses import dataclass
from pathlib import Path

from ..errors import InputError, RunFileError

SUFFIXES = (".xlsx", ".xlsm", ".ods")
#: The run-file layout's fixed columns in a [run] section.
RUN_COLUMNS = {"quantity": 0, "value": 1, "unit": 2, "uncertainty": 3}
#: Cells read from one sheet at the most (a run or a long table, not a data dump).
MAX_CELLS = 5_000_000


def is_workbook(path) -> bool:
    return Path(path).suffix.lower() in SUFFIXES


@dataclass(frozen=True)
class Sheet:
    """One sheet as text cells, row by row (row k of ``rows`` is sheet row k + 1)."""

    name: str
    rows: tuple[tuple[str, ...], ...]
    source: str

    @property
    def label(self) -> str:
        return f"{self.source} [sheet {self.name!r}]"

    def text(self) -> str:
        """The sheet as CSV text, one line per sheet row (line numbers are row numbers)."""
        out = io.StringIO()
        w = csv.writer(out, lineterminator="\n")
        for row in self.rows:
            w.writerow(row)
        return out.getvalue()

    def is_long_table(self) -> bool:
        first = next((r for r in self.rows if any(c.strip() for c in r)), ())
        return any(c.strip().lower() == "run_id" for c in first)


def cell_ref(row: int, col: int) -> str:
    """'B7' for row 7 (1-based) and column index 1 (0-based)."""
    letters = ""
    col += 1
    while col:
        col, rem = divmod(col - 1, 26)
        letters = chr(65 + rem) + letters
    return f"{letters}{row}"


def read_sheets(path) -> list[Sheet]:
    """Every sheet of a workbook as text cells (see the module docstring).

    Raises
    ------
    RunFileError
        The file cannot be opened as a workbook, a cell is merged, or a formula has
        no saved value: with the file, sheet and cell.
    """
    path = Path(path)
    suffix = path.suffix.lower()
    try:
        return _read_ods(path) if suffix == ".ods" else _read_xlsx(path)
    except InputError:
        raise
    except Exception as exc:  # the readers raise many types for a damaged file
        raise RunFileError(f"cannot read the workbook: {exc}", file=str(path),
                           hint="save it again from the spreadsheet program, as .xlsx or "
                           ".ods (or export the sheet as CSV)") from exc


def _text(value) -> str:
    if value is None:
        return ""
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, int):
        return str(value)
    if isinstance(value, float):
        return repr(value)
    if isinstance(value, (_dt.datetime, _dt.date, _dt.time)):
        return value.isoformat()
    return str(value)


def _read_xlsx(path: Path) -> list[Sheet]:
    import openpyxl

    values = openpyxl.load_workbook(path, data_only=True)
    formulas = openpyxl.load_workbook(path, data_only=False)
    sheets = []
    for ws in values.worksheets:
        wf = formulas[ws.title]
        if ws.max_row * ws.max_column > MAX_CELLS:
            raise RunFileError(f"sheet {ws.title!r} has {ws.max_row * ws.max_column:,} cells, "
                               f"more than {MAX_CELLS:,}", file=str(path),
                               hint="keep one run per sheet, or a long table")
        for rng in ws.merged_cells.ranges:
            raise RunFileError(f"sheet {ws.title!r}: cells {rng.coord} are merged",
                               file=str(path), row=rng.min_row,
                               column=f"cell {cell_ref(rng.min_row, rng.min_col - 1)}",
                               hint="unmerge them and write the value in each cell")
        rows = []
        for r, row in enumerate(ws.iter_rows(), start=1):
            cells = []
            for c, cell in enumerate(row):
                f = wf.cell(row=r, column=c + 1).value
                if cell.value is None and isinstance(f, str) and f.startswith("="):
                    raise RunFileError(
                        f"sheet {ws.title!r}: the formula {f!r} has no saved value",
                        file=str(path), row=r, column=f"cell {cell_ref(r, c)}",
                        hint="open the workbook in a spreadsheet program and save it (the "
                        "value is saved with the formula), or type the value")
                cells.append(_text(cell.value))
            rows.append(tuple(cells))
        sheets.append(Sheet(ws.title, _trim(rows), str(path)))
    return sheets


def _read_ods(path: Path) -> list[Sheet]:
    from odf import opendocument, table, text
    from odf.namespaces import OFFICENS, TABLENS

    doc = opendocument.load(str(path))
    sheets = []
    for tab in doc.spreadsheet.getElementsByType(table.Table):
        name = tab.getAttrNS(TABLENS, "name")
        rows: list[tuple[str, ...]] = []
        for tr in tab.getElementsByType(table.TableRow):
            repeat = int(tr.getAttrNS(TABLENS, "number-rows-repeated") or 1)
            cells: list[str] = []
            for node in tr.childNodes:
                kind = node.qname[1]
                if kind not in ("table-cell", "covered-table-cell"):
                    continue
                n = int(node.getAttrNS(TABLENS, "number-columns-repeated") or 1)
                r = len(rows) + 1
                if kind == "covered-table-cell" or int(
                        node.getAttrNS(TABLENS, "number-columns-spanned") or 1) > 1 or int(
                        node.getAttrNS(TABLENS, "number-rows-spanned") or 1) > 1:
                    raise RunFileError(f"sheet {name!r}: cell {cell_ref(r, len(cells))} is "
                                       "merged", file=str(path), row=r,
                                       column=f"cell {cell_ref(r, len(cells))}",
                                       hint="unmerge it and write the value in each cell")
                vtype = node.getAttrNS(OFFICENS, "value-type")
                if vtype in ("float", "percentage", "currency"):
                    value = _text(float(node.getAttrNS(OFFICENS, "value")))
                elif vtype == "boolean":
                    value = _text(node.getAttrNS(OFFICENS, "boolean-value") == "true")
                elif vtype == "date":
                    value = node.getAttrNS(OFFICENS, "date-value")
                elif vtype == "time":
                    value = node.getAttrNS(OFFICENS, "time-value")
                else:
                    value = "\n".join(str(p) for p in node.getElementsByType(text.P))
                if n > 1000 and not value:  # a sheet's trailing empty columns
                    n = 0
                cells.extend([value] * n)
            if repeat > 1000 and not any(cells):  # the trailing empty rows of a sheet
                break
            rows.extend([tuple(cells)] * repeat)
            if len(rows) * max(len(cells), 1) > MAX_CELLS:
                raise RunFileError(f"sheet {name!r} has more than {MAX_CELLS:,} cells",
                                   file=str(path), hint="keep one run per sheet, or a long "
                                   "table")
        sheets.append(Sheet(name, _trim(rows), str(path)))
    return sheets


def _trim(rows) -> tuple[tuple[str, ...], ...]:
    """Trailing empty cells and rows off (as a CSV export would leave them)."""
    out = [tuple(_strip_end(r)) for r in rows]
    while out and not any(out[-1]):
        out.pop()
    return tuple(out)


def _strip_end(row):
    row = list(row)
    while row and row[-1] == "":
        row.pop()
    return row


def locate(exc: InputError, sheet: Sheet) -> InputError:
    """The same error with its cell (``B7``) where the row and column name one."""
    col = exc.column
    if exc.row is None or col is None or not 1 <= exc.row <= len(sheet.rows):
        return exc
    index = _column_index(sheet, exc.row, str(col))
    if index is None:
        return exc
    return type(exc)(exc.message, file=exc.file, row=exc.row,
                     column=f"{col} (cell {cell_ref(exc.row, index)})", hint=exc.hint)


def _column_index(sheet: Sheet, row: int, col: str) -> int | None:
    """Where column ``col`` of sheet row ``row`` is: the [run] section's fixed columns,
    or the index of ``col`` in the readings header above that row."""
    name = col.split(" [")[0].strip().lower()
    if name in RUN_COLUMNS:
        return RUN_COLUMNS[name]
    header = None
    for r in range(row - 1, -1, -1):
        cells = [c.strip().lower() for c in sheet.rows[r]]
        if cells[:1] == ["[readings]"]:
            header = [c.split("[")[0].strip() for c in sheet.rows[r + 1]] if r + 1 < len(
                sheet.rows) else None
            break
    if header and name in header:
        return header.index(name)
    return None


def sheet_frame(sheet: Sheet):
    """A long table's sheet as a DataFrame of text cells (the header row as columns)."""
    import pandas as pd

    rows = [r for r in sheet.rows]
    start = next(i for i, r in enumerate(rows) if any(c.strip() for c in r))
    head = list(rows[start])
    body = [list(r) + [""] * (len(head) - len(r)) for r in rows[start + 1:]]
    frame = pd.DataFrame([r[:len(head)] for r in body], columns=head)
    frame = frame.replace("", None)
    frame.attrs["source"] = sheet.label
    return frame
