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


def test_a_file_with_a_200_kB_field_is_listed_and_the_folder_finishes(tmp_path, capsys):
    """Issue "large and hostile inputs": one bad file never sinks a folder (the CSV
    reader's own field limit, 128 KiB, used to escape as a raw csv.Error)."""
    from vpkit.__main__ import main

    for k, liquid in enumerate(["ethanol", "toluene"]):
        vpkit.write_run(make_run(liquid, noise=NOISE, rng=np.random.default_rng(k)),
                        tmp_path / f"{liquid}.csv")
    text = (tmp_path / "ethanol.csv").read_text("utf-8")
    (tmp_path / "noted.csv").write_text(
        text.replace("[readings]", "notes," + "x" * 200_000 + "\n[readings]"), "utf-8")
    load = read_runs(tmp_path)
    assert sorted(load.runs) == ["ethanol", "toluene"]
    [(rid, why)] = load.failed
    assert rid.endswith("noted.csv") and "200,006 characters long" in why and "row " in why
    assert main(["report", str(tmp_path), "--out", str(tmp_path / "out")]) == 0
    out = capsys.readouterr().out
    assert "2 runs analysed" in out and "not analysed: " in out and "noted.csv" in out


def test_a_file_too_large_for_a_run_is_refused_before_it_is_read(tmp_path, monkeypatch):
    import vpkit.record.runfile as rf

    path = vpkit.write_run(make_run("ethanol"), tmp_path / "logger.csv")
    monkeypatch.setattr(rf, "MAX_FILE_BYTES", 100)
    try:
        vpkit.read_run(path)
    except vpkit.RunFileError as exc:
        assert "logger.csv" in str(exc) and "more than the 0.0001 MB" in str(exc)
    else:
        raise AssertionError("a file over the limit was read")


def test_links_out_of_the_folder_are_skipped_and_taken_ids_renamed(tmp_path):
    """Issue "large and hostile inputs": a link to a file elsewhere is not read (it once
    put a system file's first line into a report); run.csv beside run.xlsx both load."""
    import os

    folder, elsewhere = tmp_path / "section", tmp_path / "private"
    folder.mkdir()
    elsewhere.mkdir()
    secret = vpkit.write_run(make_run("toluene"), elsewhere / "secret.csv")
    os.symlink(secret, folder / "linked.csv")
    vpkit.write_run(make_run("ethanol"), folder / "run.csv")
    os.symlink(folder / "run.csv", folder / "inside.csv")  # a link within: read
    write_xlsx(folder / "run.xlsx", {"run": _rows_of(make_run("water"))})
    load = read_runs(folder)
    assert sorted(load.runs) == ["inside", "run", "run.xlsx"]
    assert load.runs["run.xlsx"].liquid == "water" and load.runs["run"].liquid == "ethanol"
    assert any("linked.csv: skipped" in n and "outside the folder" in n for n in load.notes)
    assert any("run id 'run' is taken by run.csv" in n for n in load.notes)
    many = vpkit.analyze_many(folder)
    assert len(many.notes) == 2 and "secret" not in "".join(many.summary["run_id"])
