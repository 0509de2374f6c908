"""Run files (vpkit.record.runfile): reading, writing, units, errors that name the place.

Unit factors are checked in test_units.py (SI Brochure, NIST SP 811); here the
expectations are the file format's own rules (common practice, no source)."""

import numpy as np
import pytest

import vpkit
from tests.conftest import make_run
from vpkit.errors import BadValueError, ImpossibleDataError, RunFileError, UnitError
from vpkit.record import run_in_si

GOOD = """# a comment kept on round trip
[run]
quantity,value,unit,uncertainty
liquid,ethanol,,
barometric_pressure,100.2,kPa,0.1
room_temperature,21.0,degC,
room_reading,2.0,mL,
mass_before_air,30.0,g,
mass_after_air,28.4,g,
liquid_density,reference,,
[readings]
bath_temperature [degC],reading [mL],include,reason
25.0,2.1,yes,
30.0,2.2,no,bath not settled
"""


def test_read_write_round_trip(tmp_path):
    run = vpkit.parse_run(GOOD, source="x.csv")
    assert run.include == (True, False) and run.reason[1] == "bath not settled"
    assert run.entry("barometric_pressure") == vpkit.Entry(100.2, "kPa", 0.1)
    path = vpkit.write_run(run, tmp_path / "r.csv")
    again = vpkit.read_run(path)
    assert again == run
    assert vpkit.format_run(again) == vpkit.format_run(run)


def test_simulated_run_round_trip_exact(tmp_path):
    run = make_run("ethanol", depth=0.05)
    assert vpkit.read_run(vpkit.write_run(run, tmp_path / "s.csv")) == run


def test_three_unit_sets_give_identical_results():
    """The same physical run written in three unit sets analyses the same (1e-10)."""
    sets = [
        {"T": "degC", "V": "mL", "P": "kPa", "m": "g", "rho": "g/mL", "L": "cm"},
        {"T": "K", "V": "uL", "P": "mmHg", "m": "mg", "rho": "kg/m3", "L": "mm"},
        {"T": "degF", "V": "cm3", "P": "inHg", "m": "kg", "rho": "g/cm3", "L": "m"},
    ]
    results = [vpkit.analyze(make_run("toluene", depth=0.04, units=u)) for u in sets]
    ref = results[0]
    for r in results[1:]:
        assert r.enthalpy.nominal_value == pytest.approx(ref.enthalpy.nominal_value, rel=1e-10)
        assert r.enthalpy.std_dev == pytest.approx(ref.enthalpy.std_dev, rel=1e-6)
        np.testing.assert_allclose(r.p_vap, ref.p_vap, rtol=1e-10)


@pytest.mark.parametrize("text,error,where", [
    ("", RunFileError, None),
    (GOOD.replace("100.2,kPa", "100.2,mL"), UnitError, (5, "unit")),
    (GOOD.replace("100.2,kPa", "100.2,"), UnitError, (5, "unit")),
    (GOOD.replace("25.0,2.1", "25.0,abc"), BadValueError, (13, "reading")),
    (GOOD.replace("25.0,2.1", "25.0,nan"), BadValueError, (13, "reading")),
    (GOOD.replace("[degC]", ""), UnitError, (12, "bath_temperature")),
    (GOOD.replace("liquid,ethanol,,\n", ""), RunFileError, (None, "liquid")),
    (GOOD.replace("yes,", "maybe,"), BadValueError, (13, "include")),
    (GOOD.replace("room_temperature", "room_temprature"), RunFileError, (6, "quantity")),
])
def test_errors_name_the_place(text, error, where):
    with pytest.raises(error) as info:
        run_in_si(vpkit.parse_run(text, source="bench.csv"))
    assert "bench.csv" in str(info.value)
    if where:
        row, column = where
        assert info.value.row == row
        assert info.value.column == column
        assert info.value.hint


def test_plausibility_celsius_labelled_kelvin():
    with pytest.raises(ImpossibleDataError, match="degC"):
        run_in_si(vpkit.parse_run(GOOD.replace("[degC]", "[K]")))


def test_masses_swapped():
    bad = GOOD.replace("30.0,g", "28.0,g")
    with pytest.raises(ImpossibleDataError) as info:
        run_in_si(vpkit.parse_run(bad))
    assert info.value.column == "mass_after_air"


def test_bom_and_latin1(tmp_path):
    p = tmp_path / "bom.csv"
    p.write_bytes(b"\xef\xbb\xbf" + GOOD.encode())
    assert vpkit.read_run(p).liquid == "ethanol"
    p.write_bytes(GOOD.replace("bath not settled", "bath at 30 °C").encode("latin-1"))
    assert vpkit.read_run(p).reason[1] == "bath at 30 °C"


def test_append_reading_keeps_the_file_and_its_dialect(tmp_path):
    """Appending keeps every byte already written, in the file's delimiter, decimal mark,
    line ending and encoding (common practice, no source: what a spreadsheet exported)."""
    from vpkit.record.runfile import append_reading

    text = ("# vpkit run file, format 1\r\n[run]\r\nquantity;value;unit;uncertainty\r\n"
            "liquid;ethanol;;\r\nbarometric_pressure;100,1;kPa;\r\n"
            "room_temperature;21,0;degC;\r\nscale_offset;0,15;mL;\r\n[readings]\r\n"
            "bath_temperature [degC];reading [mL];include;reason\r\n"
            "30,0;2,05;yes;\r\n40,0;2,2;yes;\r\n")
    for codec in ("utf-8", "utf-16"):
        path = tmp_path / f"semi-{codec}.csv"
        path.write_bytes(text.encode(codec))
        run = append_reading(path, 50.0, 2.45, decimal=",")
        new = path.read_bytes().decode(codec)
        assert new.startswith(text) and new[len(text):] == "50,0;2,45;yes;\r\n"
        assert run.reading == (2.05, 2.2, 2.45) and run.bath_temperature[-1] == 50.0
