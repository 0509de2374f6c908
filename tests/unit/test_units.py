"""Unit conversion. Expected factors: exact definitions of the units (BIPM SI
Brochure, 9th ed.; 1 atm = 101325 Pa, 1 Torr = 101325/760 Pa, 1 inHg = 3386.389 Pa
(NIST SP 811, Appendix B.9); 1 degF = 5/9 K)."""

import pytest

from vpkit.errors import UnitError
from vpkit.units import from_si, to_si


@pytest.mark.parametrize("value,unit,kind,si", [
    (25.0, "°C", "temperature", 298.15), (25.0, "degC", "temperature", 298.15),
    (77.0, "degF", "temperature", 298.15), (300.0, "K", "temperature", 300.0),
    (1.0, "atm", "pressure", 101325.0), (760.0, "Torr", "pressure", 101325.0),
    (1.0, "inHg", "pressure", 3386.389), (1013.25, "hPa", "pressure", 101325.0),
    (1013.25, "mbar", "pressure", 101325.0), (1.01325, "bar", "pressure", 101325.0),
    (2.5, "mL", "volume", 2.5e-6), (250.0, "µL", "volume", 2.5e-7), (1.0, "cm3", "volume", 1e-6),
    (12.5, "g", "mass", 0.0125), (3.0, "mg", "mass", 3e-6), (0.789, "g/mL", "density", 789.0),
    (5.0, "cm", "length", 0.05), (45.0, "%", "fraction", 0.45), (45.0, "% RH", "fraction", 0.45),
    (0.45, "", "fraction", 0.45),
])
def test_to_si(value, unit, kind, si):
    assert to_si(value, unit, kind) == pytest.approx(si, rel=1e-6)
    assert from_si(to_si(value, unit, kind), unit, kind) == pytest.approx(value, rel=1e-12)


def test_temperature_differences():
    assert to_si(0.2, "degC", "temperature", delta=True) == pytest.approx(0.2)
    assert to_si(0.9, "degF", "temperature", delta=True) == pytest.approx(0.5)


@pytest.mark.parametrize("unit,kind", [("mL", "pressure"), ("", "volume"), ("furlongs/s", "mass"),
                                       ("kPa", "temperature")])
def test_bad_units_raise_unit_error(unit, kind):
    with pytest.raises(UnitError):
        to_si(1.0, unit, kind)
