"""Where runs come from (vpkit.record.sources): a folder mixing run files and workbooks,
a workbook of several runs, a long table in a workbook; failures keep their place.
Expectations are the documented behaviour (README; ours, no source)."""

import numpy as np

import vpkit
from tests.conftest import make_run
from tests.unit.record.test_workbook import _rows_of, write_ods, write_xlsx
from vpkit.physics.simulate import NOISE
from vpkit.record.longtable import runs_to_table
from vpkit.record.sources import read_runs


def test_a_folder_reads_run_files_and_workbooks_and_skips_lock_files(tmp_path):
    rng = np.random.default_rng(3)
    a, b, c = (make_run(x, noise=NOISE, rng=rng) for x in ("ethanol", "water", "toluene"))
    vpkit.write_run(a, tmp_path / "bench1.csv")  # leaves a hidden lock file beside it
    write_xlsx(tmp_path / "groups.xlsx", {"G2": _rows_of(b), "G3": _rows_of(c)})
    write_ods(tmp_path / "single.ods", {"Only": _rows_of(a)})
    bad = _rows_of(c)
    bad[3][1] = "n/a"
    write_xlsx(tmp_path / "broken.xlsx", {"B": bad})
    load = read_runs(tmp_path)
    assert sorted(load.runs) == ["bench1", "groups:G2", "groups:G3", "single"]
    assert len(load.failed) == 1 and "broken.xlsx [sheet 'B']" in load.failed[0][0]
    assert "cell B4" in load.failed[0][1]
    assert any(p.name.endswith(".vpkit-lock") for p in tmp_path.iterdir())


def test_a_long_table_in_a_workbooks_first_sheet(tmp_path):
    rng = np.random.default_rng(4)
    runs = {f"r{k}": make_run("ethanol", noise=NOISE, rng=rng) for k in range(3)}
    import pandas as pd

    table = runs_to_table(runs)
    typed = lambda v: v if isinstance(v, str) else float(f"{float(v):.10g}")  # noqa: E731
    rows = [list(table.columns)] + [[typed(v) for v in r] for r in table.itertuples(index=False)]
    table = pd.DataFrame(rows[1:], columns=rows[0])  # the numbers as typed into the sheet
    book = write_xlsx(tmp_path / "table.xlsx", {"Readings": rows})
    from_book = vpkit.analyze_many(book).summary.set_index("run_id")
    from_csv = vpkit.analyze_many(table).summary.set_index("run_id")
    assert list(from_book.index) == ["r0", "r1", "r2"]
    np.testing.assert_allclose(from_book["ΔH_vap [kJ/mol]"], from_csv["ΔH_vap [kJ/mol]"],
                               rtol=1e-12)
