"""Result tables: one row per run with units in the column names, runs that could not
be analysed kept with their reason, and points with their file rows. Expected values
come from the analysis objects themselves converted by hand (kJ/mol, degC)."""

import numpy as np
import pytest

import vpkit
from tests.conftest import make_run
from vpkit.analysis.choices import Choices
from vpkit.analysis.engine import analyze_stack
from vpkit.analysis.result_tables import RESULT_COLUMNS, results_table
from vpkit.record.assemble import stack_runs


def test_one_row_per_run_in_order_with_reasons():
    res = analyze_stack(stack_runs({"a": make_run("ethanol"), "b": make_run("water", (30.0,))}),
                        Choices())
    t = results_table(res)
    assert list(t.columns) == list(RESULT_COLUMNS)
    assert list(t["run_id"]) == ["a", "b"]
    assert t.loc[0, "status"] == "" and "got 1" in t.loc[1, "status"]
    assert t.loc[0, "ΔH_vap [kJ/mol]"] == pytest.approx(res.enthalpy[0] / 1e3)
    assert np.isnan(t.loc[1, "ΔH_vap [kJ/mol]"])


def test_points_table_units_and_rows(tmp_path):
    path = vpkit.write_run(make_run("ethanol"), tmp_path / "r.csv")
    a = vpkit.analyze(path, warn=False)
    p = a.points()
    assert p.loc[0, "t [degC]"] == pytest.approx(a.T[0] - 273.15)
    assert p.loc[0, "p_vap [kPa]"] == pytest.approx(a.p_vap[0] / 1e3)
    assert p.loc[0, "file row"] == a.run.row_of(0) and p.loc[0, "file row"] > 5
    assert "residual [Δln p]" in p.columns
