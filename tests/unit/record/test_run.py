"""The Run record: kept exactly as entered, copies never change the original.
Expectations are the record's documented behaviour (ours, no source)."""

import pandas as pd
import pytest

import vpkit
from tests.conftest import make_run
from tests.unit.record.test_runfile import GOOD
from vpkit.record import run_in_si


def test_values_and_places_as_entered():
    run = vpkit.parse_run(GOOD, source="bench.csv")
    assert run.entry("barometric_pressure") == vpkit.Entry(100.2, "kPa", 0.1)
    assert run.row_of_entry("mass_after_air") == 9 and run.row_of(1) == 14
    assert run.liquid == "ethanol" and run.n_points == 2


def test_with_include_is_a_copy():
    run = make_run("ethanol")
    other = run.with_include([False] + [True] * 7, ["bubble lost"] + [""] * 7)
    assert run.include[0] and not other.include[0] and other.reason[0] == "bubble lost"
    with pytest.raises(ValueError):
        run.with_include([True])


def test_to_si_is_a_stack_of_one():
    run = make_run("ethanol", depth=0.05)
    si = run_in_si(run)
    stack = vpkit.stack_runs([run])
    assert si.P_bar == stack.scalar["P_bar"][0] and si.depth == pytest.approx(0.05)
    assert not si.T.flags.writeable


def test_from_frame_and_to_frame():
    df = pd.DataFrame({"bath_temperature [degC]": [30.0, 40.0], "reading [mL]": [2.1, 2.3]})
    run = vpkit.Run.from_frame(df, liquid="water", barometric_pressure="100.1 kPa",
                               room_temperature=(21.0, "degC"), scale_offset="0.1 mL")
    assert run.bath_temperature == (30.0, 40.0)
    assert list(run.to_frame()["reading [mL]"]) == [2.1, 2.3]
    si = run_in_si(run)
    assert si.P_bar == pytest.approx(100100.0)
    assert si.scale_offset == pytest.approx(1e-7)


def test_name_is_the_file_name_and_runs_are_keyed_by_it():
    run = vpkit.parse_run(GOOD, source="data/bench 3.csv")
    assert run.name == "bench 3"
    sheet = vpkit.parse_run(GOOD, source="book.xlsx [sheet 'Tube 2.a']")
    assert sheet.name == "book"
    assert make_run("ethanol").name is None
    from vpkit.record.assemble import name_runs

    assert list(name_runs([run, sheet])) == ["bench 3", "book"]
    # names missing or repeated: numbered in order instead
    assert list(name_runs([run, run])) == ["run1", "run2"]


def test_first_k_readings_is_the_run_so_far():
    run = vpkit.parse_run(GOOD, source="bench.csv")
    one = run.first(1)
    assert one.n_points == 1 and one.reading == run.reading[:1]
    assert one.row_of(0) == run.row_of(0) and one.entries == run.entries
    assert run.first(run.n_points) == run and run.n_points == 2
    with pytest.raises(ValueError, match="k must be 0 to 2"):
        run.first(3)
