"""Long tables: the same stack as from run records, located errors, one bad run kept
to itself. Expected values: the run records' own conversion (vpkit.record.assemble.stack_runs),
which the unit tests of units.py check against the SI Brochure."""

import numpy as np
import pandas as pd
import pytest

from tests.conftest import make_run
from vpkit.errors import RunFileError
from vpkit.record.assemble import stack_runs
from vpkit.record.longtable import runs_to_table, stack_table, table_to_runs


def test_table_and_runs_give_the_same_stack():
    runs = {"a": make_run("ethanol", depth=0.04), "b": make_run("toluene", direction=-1,
                                                                offset=9e-6)}
    table = runs_to_table(runs)
    s1 = stack_runs(runs)
    s2, failures = stack_table(table)
    assert not failures
    for name in ("T", "reading", "mask", "include"):
        np.testing.assert_array_equal(getattr(s1, name), getattr(s2, name))
    for key in s1.scalar:
        np.testing.assert_array_equal(s1.scalar[key], s2.scalar[key])
    for key in s1.u:
        np.testing.assert_allclose(s1.u[key], s2.u[key], rtol=1e-15)
    back = table_to_runs(table)
    assert set(back) == {"a", "b"}


def test_whole_table_errors_name_the_column():
    table = runs_to_table({"a": make_run("ethanol")}).rename(columns={"reading [m**3]": "vol"})
    with pytest.raises(RunFileError, match="unknown column 'vol'"):
        stack_table(table)
    with pytest.raises(RunFileError, match="run_id"):
        stack_table(pd.DataFrame({"x": [1]}))


def test_a_bad_cell_fails_only_its_run_and_names_the_row():
    table = runs_to_table({"a": make_run("ethanol"), "b": make_run("water")})
    table["bath_temperature [K]"] = table["bath_temperature [K]"].astype(object)
    table.loc[9, "bath_temperature [K]"] = "hot"
    stack, failures = stack_table(table)
    assert stack.run_ids == ("a",)
    (rid, exc), = failures
    assert rid == "b" and exc.row == 11 and "'hot' is not a number" in str(exc)


def test_folder_scan_skips_notebook_checkpoints(tmp_path):
    """A notebook's .ipynb_checkpoints copies are not runs (common practice, no source)."""
    from vpkit.record.runfile import write_run
    from vpkit.record.sources import read_runs

    write_run(make_run("ethanol"), tmp_path / "a.csv")
    (tmp_path / ".ipynb_checkpoints").mkdir()
    write_run(make_run("water"), tmp_path / ".ipynb_checkpoints" / "a-checkpoint.csv")
    write_run(make_run("water"), tmp_path / "b-checkpoint.csv")
    loaded = read_runs(tmp_path, pattern="**/*.csv")
    assert list(loaded.runs) == ["a"]
