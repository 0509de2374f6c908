"""Typed cells (vpkit.record.cells): numbers as people type them, refused with a hint when
ambiguous."""

import pytest

import vpkit
from tests.unit.record.test_runfile import GOOD
from vpkit.errors import BadValueError, RunFileError
from vpkit.record.cells import build_parts, parse_number


def test_decimal_comma_is_refused_with_a_hint_or_read_on_request():
    text = GOOD.replace(",", ";").replace("25.0;2.1", "25,0;2,1")
    with pytest.raises(BadValueError, match="decimal comma"):
        vpkit.parse_run(text)
    run = vpkit.parse_run(text.replace("100.2", "100,2"), decimal=",")
    assert run.bath_temperature[0] == 25.0 and run.reading[0] == 2.1


@pytest.mark.parametrize("typed,hint", [("80,5", "decimal comma"), ("nan", "not a finite"),
                                        ("21.5 degC", "not a number"), ("", "not a number")])
def test_numbers_people_type_are_refused_with_the_reason(typed, hint):
    with pytest.raises(BadValueError, match=hint):
        parse_number(typed)


def test_plain_numbers_are_read_as_typed():
    assert parse_number(" 21.50 ") == 21.5
    assert parse_number("-1e-3") == -0.001
    assert parse_number("80,5", decimal=",") == 80.5


def test_an_unknown_readings_column_is_named_with_its_line():
    with pytest.raises(RunFileError, match="unknown readings column 'temp'") as err:
        build_parts([], ["temp", "reading [mL]"], [["25", "2.0"]], [7], (), "bench.csv",
                    header_line=6)
    assert err.value.row == 6 and err.value.file == "bench.csv"
