"""Runs and long tables in workbooks (vpkit.record.workbook): the same numbers as the CSV
they mirror, and errors that name the sheet and cell. The workbooks are written here,
with openpyxl (.xlsx) and odfpy (.ods); the layouts are ours (README)."""

import csv
import io

import numpy as np
import pytest

import vpkit
from tests.conftest import make_run
from vpkit.physics.simulate import NOISE


def _rows_of(run):
    """The run file's cells, numbers as numbers of 10 significant digits (as a person types
    them in a sheet: a workbook keeps at most 15)."""
    rows = list(csv.reader(io.StringIO(vpkit.format_run(run))))
    out = []
    for row in rows:
        if row and row[0].startswith("#"):
            continue
        cells = []
        for c in row:
            try:
                cells.append(float(f"{float(c):.10g}"))
            except ValueError:
                cells.append(c)
        out.append(cells)
    return out


def write_xlsx(path, sheets, merged=None, formula=None):
    openpyxl = pytest.importorskip("openpyxl")
    wb = openpyxl.Workbook()
    wb.remove(wb.active)
    for name, rows in sheets.items():
        ws = wb.create_sheet(name)
        for row in rows:
            ws.append(row)
        if merged and name in merged:
            ws.merge_cells(merged[name])
        if formula and name in formula:
            ws[formula[name][0]] = formula[name][1]
    wb.save(path)
    return path


def write_ods(path, sheets, formula=None, merged=None):
    pytest.importorskip("odf")
    from odf.opendocument import OpenDocumentSpreadsheet
    from odf.table import CoveredTableCell, Table, TableCell, TableRow
    from odf.text import P

    doc = OpenDocumentSpreadsheet()
    for name, rows in sheets.items():
        t = Table(name=name)
        for r, row in enumerate(rows, start=1):
            tr = TableRow()
            for c, v in enumerate(row):
                if merged and merged == (name, r, c):
                    tr.addElement(TableCell(valuetype="string", numbercolumnsspanned=2))
                    tr.addElement(CoveredTableCell())
                    continue
                if formula and formula[:3] == (name, r, c):
                    tc = TableCell(valuetype="float", value=v, formula=formula[3])
                elif isinstance(v, float):
                    tc = TableCell(valuetype="float", value=v)
                else:
                    tc = TableCell(valuetype="string")
                    tc.addElement(P(text=str(v)))
                tr.addElement(tc)
            t.addElement(tr)
        doc.spreadsheet.addElement(t)
    doc.save(str(path))
    return path


def _csv(rows) -> str:
    out = io.StringIO()
    csv.writer(out, lineterminator="\n").writerows(
        [[repr(c) if isinstance(c, float) else c for c in r] for r in rows])
    return out.getvalue()


@pytest.fixture
def run():
    typed = _rows_of(make_run("ethanol", noise=NOISE, rng=np.random.default_rng(12)))
    return vpkit.parse_run(_csv(typed))


@pytest.mark.parametrize("writer,suffix", [(write_xlsx, ".xlsx"), (write_ods, ".ods")])
def test_a_run_in_a_workbook_gives_the_csv_numbers(tmp_path, run, writer, suffix):
    book = writer(tmp_path / f"bench{suffix}", {"Run 1": _rows_of(run)})
    csv_path = vpkit.write_run(run, tmp_path / "bench.csv")
    from_book = vpkit.read_run(book)
    assert from_book == run == vpkit.read_run(csv_path)
    a, b = vpkit.analyze(book, warn=False), vpkit.analyze(csv_path, warn=False)
    assert a.enthalpy.nominal_value == pytest.approx(b.enthalpy.nominal_value, rel=1e-12)
    assert a.enthalpy.std_dev == pytest.approx(b.enthalpy.std_dev, rel=1e-12)


def test_numbers_typed_as_text_read_the_same(tmp_path, run):
    rows = [[str(c) if isinstance(c, float) else c for c in r] for r in _rows_of(run)]
    book = write_xlsx(tmp_path / "text.xlsx", {"Run": rows})
    assert vpkit.read_run(book) == run


def test_a_bad_cell_is_named_by_sheet_and_cell(tmp_path, run):
    rows = _rows_of(run)
    k = next(i for i, r in enumerate(rows) if r and r[0] == "barometric_pressure")
    rows[k][1] = "ninety-nine"
    book = write_xlsx(tmp_path / "bad.xlsx", {"Thursday": rows})
    with pytest.raises(vpkit.BadValueError) as err:
        vpkit.read_run(book)
    assert "sheet 'Thursday'" in err.value.file and f"cell B{k + 1}" in err.value.column
    assert err.value.row == k + 1
    r = next(i for i, x in enumerate(rows) if x and x[0] == "[readings]") + 3
    rows[k][1] = 99.9
    rows[r - 1][1] = "2,4"  # a decimal comma in a reading cell
    book = write_xlsx(tmp_path / "bad2.xlsx", {"Thursday": rows})
    with pytest.raises(vpkit.InputError) as err:
        vpkit.read_run(book)
    assert f"cell B{r}" in err.value.column


def test_merged_cells_and_unsaved_formulas_are_refused_with_their_cell(tmp_path, run):
    rows = _rows_of(run)
    book = write_xlsx(tmp_path / "m.xlsx", {"Run": rows}, merged={"Run": "B3:C3"})
    with pytest.raises(vpkit.RunFileError, match="merged") as err:
        vpkit.read_run(book)
    assert "B3" in err.value.column and "unmerge" in err.value.hint
    book = write_xlsx(tmp_path / "f.xlsx", {"Run": rows}, formula={"Run": ("B4", "=20+1.5")})
    with pytest.raises(vpkit.RunFileError, match="no saved value") as err:
        vpkit.read_run(book)
    assert "B4" in err.value.column
    merged = write_ods(tmp_path / "m.ods", {"Run": rows}, merged=("Run", 3, 1))
    with pytest.raises(vpkit.RunFileError, match="merged"):
        vpkit.read_run(merged)


def test_a_formulas_saved_value_is_read(tmp_path, run):
    rows = _rows_of(run)
    k = next(i for i, r in enumerate(rows) if r and r[0] == "room_temperature")
    book = write_ods(tmp_path / "f.ods", {"Run": rows},
                     formula=("Run", k + 1, 1, "of:=[.Z1]+" + repr(rows[k][1])))
    assert vpkit.read_run(book) == vpkit.read_run(vpkit.write_run(run, tmp_path / "r.csv"))


def test_a_date_where_a_number_belongs_is_named(tmp_path, run):
    import datetime

    rows = _rows_of(run)
    k = next(i for i, r in enumerate(rows) if r and r[0] == "room_temperature")
    rows[k][1] = datetime.date(2026, 12, 4)
    book = write_xlsx(tmp_path / "d.xlsx", {"Run": rows})
    with pytest.raises(vpkit.BadValueError, match="2026-12-04") as err:
        vpkit.read_run(book)
    assert f"cell B{k + 1}" in err.value.column


def test_appending_to_a_workbook_is_refused_with_a_hint(tmp_path, run):
    from vpkit.record.runfile import append_reading

    book = write_xlsx(tmp_path / "a.xlsx", {"Run": _rows_of(run)})
    with pytest.raises(vpkit.RunFileError, match="workbook") as err:
        append_reading(book, 61.0, 2.9)
    assert "add the row in the workbook" in err.value.hint
