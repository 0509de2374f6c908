"""The one rounding rule for numbers shown to a user: a standard uncertainty with two
significant digits and its value rounded to match (JCGM 100:2008, GUM, 7.2.6)."""

import pytest

from vpkit import display as D


@pytest.mark.parametrize("v,u,expected", [
    (42.4312, 0.9197, "42.43 ± 0.92 kJ/mol"),
    (42.4312, 1.2345, "42.4 ± 1.2 kJ/mol"),
    (4235.6, 12.3, "4236 ± 12 kJ/mol"),
    (4235.6, 123.0, "4240 ± 120 kJ/mol"),
    (0.000123456, 0.0000023, "0.0001235 ± 0.0000023 kJ/mol"),
])
def test_value_with_uncertainty(v, u, expected):
    assert D.value_u(v, u, "kJ/mol") == expected


def test_no_negative_zero_and_missing_values():
    assert D.signed(-0.0004, "%") == "+0.0 %"
    assert D.number(float("nan")) == "—" and D.value_u(float("nan"), 1.0) == "—"
    assert D.number(29.600000000000023) == "29.60"  # no float noise; four digits kept


def test_numbers_without_u_keep_four_significant_digits():
    """81, 99.25, -0.9329 and 0.9701 side by side read as unequal precision; the rule keeps
    the significant zeros."""
    assert [D.number(v) for v in (81, 99.25, -0.93294, 0.97012)] == [
        "81.00", "99.25", "-0.9329", "0.9701"]
    assert D.number(123456.7) == "123500" and D.count(1, "run") == "1 run"
    assert D.count(3, "run") == "3 runs" and D.count(0, "point") == "0 points"


def test_an_uncertainty_alone_keeps_two_significant_digits():
    """GUM 7.2.6 (JCGM 100:2008): two significant digits for an uncertainty; a budget cell
    of 0.1 kJ/mol reads 0.10, like the same u beside its value."""
    assert D.uncertainty(0.1, "kJ/mol") == "0.10 kJ/mol"
    assert D.uncertainty(0.0924, "K") == "0.092 K"
    assert D.value_u(-0.9249, 0.0924, "K").endswith("± 0.092 K")


def test_units_converted_at_the_edge():
    assert D.quantity(373.124, 0.012, "degC", "temperature") == "99.974 ± 0.012 °C"
    assert D.quantity(101325.0, None, "kPa", "pressure") == "101.3 kPa"
