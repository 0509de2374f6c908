"""Catalogue of bad inputs: each case asserts the exact error (or warning) type and
that the message names the place (file, row, column) and says how to fix it.
Expectations are ours (common practice, no source): what a careful bench user
needs to find and fix the entry."""

import warnings

import numpy as np
import pytest

import vpkit
from vpkit.errors import (
    BadValueError,
    FitError,
    ImpossibleDataError,
    InputError,
    RunFileError,
    UnitError,
    VpkitError,
    VpkitWarning,
)
from vpkit.record import run_in_si
from vpkit.record.session import SessionError, SessionState, load_session, save_session

# A plausible ethanol run (values rounded from a simulation of the Poling et al.
# Antoine equation; used only as a well-formed base to damage).
BASE = """[run]
quantity,value,unit,uncertainty
liquid,ethanol,,
barometric_pressure,100.2,kPa,0.1
room_temperature,21.0,degC,0.3
room_reading,1.85,mL,
mass_before_air,30.0000,g,0.001
mass_after_air,28.4230,g,0.001
liquid_density,reference,,
injected_air_volume,1.95,mL,
boiling_point,78.3,degC,
[readings]
bath_temperature [degC],reading [mL],include,reason
25.0,1.993,yes,
30.0,2.089,yes,
35.0,2.216,yes,
40.0,2.389,yes,
45.0,2.627,yes,
50.0,2.965,yes,
"""
# line numbers of BASE: 1 [run], 2 header, 3 liquid, 4 barometric_pressure, 5 room_temperature,
# 6 room_reading, 7 mass_before, 8 mass_after, 9 density, 10 injected, 11 boiling point,
# 12 [readings], 13 header, 14..19 readings


def sub(old, new, count=1):
    assert old in BASE, old
    return BASE.replace(old, new, count)


def add_entry(line):
    """BASE with one more [run] entry on line 12 (the readings move down by one)."""
    return sub("boiling_point,78.3,degC,\n", "boiling_point,78.3,degC,\n" + line + "\n")


def load(text):
    return vpkit.parse_run(text, source="bench4.csv")


# (id, text, error type, row, column) -- raised by run_in_si(parse_run(...))
FILE_CASES = [
    ("empty file", "", RunFileError, None, None),
    ("only blank lines", "\n\n  \n", RunFileError, None, None),
    ("binary file", "\x00\x01\x02", RunFileError, None, None),
    ("no run section", BASE.split("[readings]")[1], RunFileError, 2, None),
    ("no readings section", BASE.split("[readings]")[0], RunFileError, None, None),
    ("only a header", BASE.split("25.0,1.993")[0], RunFileError, 13, None),
    ("missing required metadata", sub("barometric_pressure,100.2,kPa,0.1\n", ""), RunFileError,
     None, "barometric_pressure"),
    ("missing liquid", sub("liquid,ethanol,,\n", ""), RunFileError, None, "liquid"),
    ("missing reading column", sub("reading [mL]", "volume [mL]"), RunFileError, 13,
     "volume [mL]"),
    ("duplicate column", sub("include,reason", "include,include"), RunFileError, 13, "include"),
    ("unknown quantity (typo)", sub("room_temperature", "room_temprature"), RunFileError, 5,
     "quantity"),
    ("quantity given twice", sub("liquid,ethanol,,\n", "liquid,ethanol,,\nliquid,water,,\n"),
     RunFileError, 4, "quantity"),
    ("unknown unit", sub("100.2,kPa", "100.2,kilopond"), UnitError, 4, "unit"),
    ("missing unit in metadata", sub("100.2,kPa", "100.2,"), UnitError, 4, "unit"),
    ("missing unit in header", sub("[degC],reading", ",reading"), UnitError, 13,
     "bath_temperature"),
    ("pressure in mL", sub("100.2,kPa", "100.2,mL"), UnitError, 4, "unit"),
    ("temperature column in kPa", sub("bath_temperature [degC]", "bath_temperature [kPa]"),
     UnitError, 13, "bath_temperature"),
    ("non-numeric cell", sub("35.0,2.216", "35.0,2.2l6"), BadValueError, 16, "reading"),
    ("decimal comma", sub("35.0,2.216", "35.0,\"2,216\""), BadValueError, 16, "reading"),
    ("NaN value", sub("35.0,2.216", "35.0,nan"), BadValueError, 16, "reading"),
    ("inf value", sub("room_temperature,21.0", "room_temperature,inf"), BadValueError, 5,
     "value"),
    ("metadata value missing", sub("room_reading,1.85,mL", "room_reading,,mL"), BadValueError,
     6, "value"),
    ("reading missing", sub("35.0,2.216", "35.0,"), BadValueError, 16, "reading"),
    ("bad include flag", sub("30.0,2.089,yes", "30.0,2.089,perhaps"), BadValueError, 15,
     "include"),
    ("negative uncertainty", sub("100.2,kPa,0.1", "100.2,kPa,-0.1"), BadValueError, 4,
     "uncertainty"),
    ("too many cells (decimal comma)", sub("35.0,2.216,yes,", "35,0,2,216,yes,"),
     RunFileError, 16, None),
    ("negative reading", sub("35.0,2.216", "35.0,-2.216"), ImpossibleDataError, 16, "reading"),
    ("zero barometric pressure", sub("100.2,kPa", "0,kPa"), ImpossibleDataError, 4,
     "barometric_pressure"),
    ("negative mass", sub("30.0000,g", "-30.0000,g"), ImpossibleDataError, 7,
     "mass_before_air"),
    ("zero injected volume", sub("1.95,mL", "0,mL"), ImpossibleDataError, 10,
     "injected_air_volume"),
    ("below absolute zero", sub("25.0,1.993", "-300.0,1.993"), ImpossibleDataError, 14,
     "bath_temperature"),
    ("celsius labelled kelvin", sub("bath_temperature [degC]", "bath_temperature [K]"),
     ImpossibleDataError, 19, "bath_temperature"),
    ("kelvin labelled celsius", BASE.replace("25.0,", "298.2,").replace("30.0,", "303.2,")
     .replace("35.0,", "308.2,").replace("40.0,", "313.2,").replace("45.0,", "318.2,")
     .replace("50.0,", "323.2,"), ImpossibleDataError, 14, "bath_temperature"),
    ("masses swapped", sub("mass_before_air,30.0000", "mass_before_air,28.0000"),
     ImpossibleDataError, 8, "mass_after_air"),
    ("one mass only", sub("mass_after_air,28.4230,g,0.001\n", ""), ImpossibleDataError, None,
     "mass_after_air"),
    ("bad graduated_from", sub("boiling_point", "graduated_from,sideways,,\nboiling_point"),
     BadValueError, 11, "graduated_from"),
    ("no weighing and no offset",
     sub("mass_before_air,30.0000,g,0.001\nmass_after_air,28.4230,g,0.001\n", ""),
     RunFileError, None, "scale_offset"),
    # the optional quantities (line 12, inserted after the boiling point)
    ("humidity above 100 %", add_entry("injected_air_humidity,150,%,"), ImpossibleDataError,
     12, "injected_air_humidity"),
    ("negative humidity", add_entry("injected_air_humidity,-5,%,"), ImpossibleDataError, 12,
     "injected_air_humidity"),
    ("humidity in mL", add_entry("injected_air_humidity,50,mL,"), UnitError, 12, "unit"),
    ("tube bore of 5 m", add_entry("tube_bore,5,m,"), ImpossibleDataError, 12, "tube_bore"),
    ("tube bore without room reading",
     sub("room_reading,1.85,mL,\n", "").replace("boiling_point,78.3,degC,\n",
                                                   "boiling_point,78.3,degC,\n"
                                                   "scale_offset,0.15,mL,\ntube_bore,5,mm,\n"),
     RunFileError, 12, "tube_bore"),
    ("negative reading resolution", add_entry("reading_resolution,-0.05,mL,"),
     ImpossibleDataError, 12, "reading_resolution"),
    ("reading resolution as text", add_entry("reading_resolution,fine,mL,"), BadValueError, 12,
     "value"),
    ("tube capacity zero", add_entry("tube_capacity,0,mL,"), ImpossibleDataError, 12,
     "tube_capacity"),
    ("room depth of 20 m", add_entry("room_depth,20,m,"), ImpossibleDataError, 12,
     "room_depth"),
    ("room depth in degC", add_entry("room_depth,5,degC,"), UnitError, 12, "unit"),
    ("negative thermometer uncertainty", add_entry("temperature_uncertainty,-0.2,degC,"),
     BadValueError, 12, "temperature_uncertainty"),
    ("negative reading uncertainty", add_entry("reading_uncertainty,-0.005,mL,"),
     BadValueError, 12, "reading_uncertainty"),
    ("readings in litres", sub("reading [mL]", "reading [L]"), ImpossibleDataError, 14,
     "reading"),
    ("bad graduated_from (middle)", add_entry("graduated_from,middle,,"), BadValueError, 12,
     "graduated_from"),
    ("bath far above any bath", sub("50.0,2.965", "750.0,2.965"), ImpossibleDataError, 19,
     "bath_temperature"),
    ("room temperature of 600 K", sub("room_temperature,21.0,degC", "room_temperature,600,K"),
     ImpossibleDataError, 5, "room_temperature"),
    ("barometer of 30 MPa", sub("100.2,kPa", "30,MPa"), ImpossibleDataError, 4,
     "barometric_pressure"),
]


@pytest.mark.parametrize("case", FILE_CASES, ids=[c[0] for c in FILE_CASES])
def test_bad_file(case):
    _, text, error, row, column = case
    with pytest.raises(VpkitError) as info:
        run_in_si(load(text))
    err = info.value
    assert type(err) is error, f"{type(err).__name__}: {err}"
    assert isinstance(err, ValueError)
    assert err.file == "bench4.csv" and "bench4.csv" in str(err)
    assert err.row == row
    if column is not None:
        assert err.column == column
    assert err.hint or err.message  # says what was found and how to fix it


# (id, text, analyze options, error type, message fragment)
ANALYSIS_CASES = [
    ("fewer than two included points",
     BASE.replace(",yes,", ",no,off,").replace("25.0,1.993,no,off", "25.0,1.993,yes,")
     .replace("30.0,2.089,no,off", "30.0,2.089,yes,"), {"exclude": [0]}, FitError,
     "at least 2"),
    ("fewer than three for Antoine", BASE, {"model": "antoine", "exclude": [0, 1, 2, 3]},
     FitError, "at least 3"),
    ("every point excluded", BASE.replace(",yes,", ",no,bad batch,"), {}, FitError,
     "every point is excluded"),
    ("unknown model", BASE, {"model": "magic"}, FitError, "unknown fit model"),
    ("unknown air method", BASE, {"air_from": "guess"}, BadValueError, "air_from"),
    ("exclude out of range", BASE, {"exclude": [12]}, BadValueError, "points 0 to 5"),
    ("injected without volume", sub("injected_air_volume,1.95,mL,\n", ""),
     {"air_from": "injected"}, InputError, "injected_air_volume"),
    ("density from reference, unknown liquid", sub("liquid,ethanol", "liquid,unobtainium"),
     {"reference": None}, InputError, "liquid_density"),
    ("PPDS asked for a liquid without one", BASE, {"reference": "ppds"}, BadValueError,
     "no bundled ppds equation for 'ethanol'"),
    ("IAPWS-95 asked for ethanol", BASE, {"reference": "iapws95"}, BadValueError,
     "IAPWS-95 describes water"),
    ("water layer under water", sub("liquid,ethanol", "liquid,water"), {"water_layer": True},
     BadValueError, "liquid is water itself"),
    ("unknown threshold", BASE, {"thresholds": {"max_amplificaton": 10}}, BadValueError,
     "unknown threshold"),
    ("unknown weighting", BASE, {"weighting": "heavy"}, BadValueError, "weighting must be"),
    ("unknown p_vap choice", BASE, {"vapor_at_air_reference": "guess"}, BadValueError,
     "vapor_at_air_reference must be"),
    ("cold reference out of range", BASE, {"air_from": "cold", "cold_index": 9},
     BadValueError, "cold_index 9 is not a point"),
    ("non-finite what-if depth", BASE, {"bubble_depth": float("nan")}, BadValueError,
     "finite length"),
]


@pytest.mark.parametrize("case", ANALYSIS_CASES, ids=[c[0] for c in ANALYSIS_CASES])
def test_bad_analysis_request(case):
    _, text, options, error, fragment = case
    with pytest.raises(VpkitError) as info:
        vpkit.analyze(load(text), **options)
    assert type(info.value) is error
    assert fragment in str(info.value)


# computable but suspect: flagged, shown, never silently dropped
WARN_CASES = [
    ("duplicate temperatures", sub("35.0,2.216", "30.0,2.216"), "same bath temperature", None),
    ("volume shrinks as temperature rises", sub("35.0,2.216", "35.0,2.050"),
     "smaller than at a lower temperature", 2),
    ("bubble below the air-only volume", sub("25.0,1.993", "25.0,1.700"),
     "vapor pressure ≤ 0", 0),
    ("bath above measured boiling point", sub("boiling_point,78.3", "boiling_point,48.0"),
     "above the measured boiling point", 5),
]


# computable but suspect, with the choices that expose it: (id, text, options, flag, fragment)
WARN_OPTION_CASES = [
    ("room temperature typed in degF as degC",
     sub("room_temperature,21.0,degC", "room_temperature,70.3,degC"), {}, "room temperature?",
     "room temperature 70.3 °C is outside 5-40 °C"),
    ("barometer in mbar meant hPa*10", sub("100.2,kPa", "100.8,mbar"), {}, "barometer?",
     "barometric pressure 10.08 kPa is outside 50-110 kPa"),
    ("a bath reading in degF", sub("40.0,2.389", "104.0,2.389"), {}, "degF?",
     "read as degF it is 40.0 °C"),
    ("a bath below the melting point", sub("25.0,1.993", "-120.0,1.993"), {},
     "below melting point", "below the melting point of ethanol"),
    ("bubble beyond the tube", add_entry("tube_capacity,2.5,mL,"), {}, "beyond tube capacity",
     "beyond the tube's capacity of 2.500 mL"),
    ("air reference outside the equation's range",
     sub("room_temperature,21.0,degC", "room_temperature,2.0,degC"),
     {"reference": "antoine", "vapor_at_air_reference": "reference"},
     "air reference outside range", "outside its range 3.35 °C"),
    ("amplified reading error", BASE, {"thresholds": {"max_amplification": 5}},
     "amplified error", "times the volume reading's"),
    ("close to boiling", BASE, {"thresholds": {"max_vapor_fraction": 0.2}}, "near boiling",
     "close to boiling"),
    ("extrapolated boiling point", BASE, {}, "extrapolated T_b",
     "beyond the highest point: an extrapolation"),
    ("implausible enthalpy", sub("room_temperature,21.0,degC", "room_temperature,70.3,degC"),
     {}, "implausible ΔH_vap", "% from the reference"),
]


@pytest.mark.parametrize("case", WARN_OPTION_CASES, ids=[c[0] for c in WARN_OPTION_CASES])
def test_suspect_with_its_number(case):
    """Each finding names the value that triggered it, and it is a flag in the summary."""
    _, text, options, flag, fragment = case
    a = vpkit.analyze(load(text), warn=False, **options)
    assert any(fragment in w for w in a.warnings), a.warnings
    assert flag in a.results()["flags"][0].split(", ")
    assert len(a.T) == 6  # nothing dropped


@pytest.mark.parametrize("case", WARN_CASES, ids=[c[0] for c in WARN_CASES])
def test_suspect_but_computable(case):
    _, text, fragment, point = case
    with pytest.warns(VpkitWarning, match=fragment.replace("(", r"\(")):
        a = vpkit.analyze(load(text))
    assert len(a.T) == 6  # nothing dropped
    if point is not None:
        assert any(fragment in f for f in a.flags[point])
        assert fragment in "".join(a.points()["flags"])


def test_encodings_are_read(tmp_path):
    p = tmp_path / "bom.csv"
    p.write_bytes(b"\xef\xbb\xbf" + BASE.encode())
    assert vpkit.read_run(p).n_points == 6
    p.write_bytes(sub("liquid,ethanol,,", "notes,Bürette 3 (°C),,\nliquid,ethanol,,")
                  .encode("latin-1"))
    assert vpkit.read_run(p).entry("notes").value == "Bürette 3 (°C)"


@pytest.mark.parametrize("kind", ["another run", "truncated", "hand-edited"])
def test_bad_session_files(tmp_path, kind):
    run = load(BASE)
    path = tmp_path / "s.json"
    save_session(SessionState.from_run(run), path)
    if kind == "another run":
        run = load(sub("35.0,2.216", "35.0,2.217"))
    elif kind == "truncated":
        path.write_text(path.read_text()[:40])
    else:
        path.write_text(path.read_text().replace('"include": [', '"include": ["yes", '))
    with pytest.raises(SessionError) as info:
        load_session(path, run)
    assert info.value.file == str(path)


def test_no_code_from_data():
    """No eval/exec and no pickle anywhere in the package (run files are data)."""
    import pathlib

    src = pathlib.Path(vpkit.__file__).parent
    for f in src.rglob("*.py"):
        text = f.read_text()
        for banned in ("eval(", "exec(", "pickle", "yaml.load("):
            assert banned not in text, f"{banned} in {f}"


def test_catalogue_size():
    """The catalogue holds at least 100 cases (issue "ship it")."""
    cases = (FILE_CASES + ANALYSIS_CASES + WARN_CASES + WARN_OPTION_CASES + SLIP_CASES)
    assert len(cases) + 3 + 7 + 4 >= 100  # + session kinds, spellings, edge values


def test_warnings_can_be_silenced():
    with warnings.catch_warnings():
        warnings.simplefilter("error", VpkitWarning)
        vpkit.analyze(load(BASE), warn=False)


def test_uncertainty_in_any_spelling_of_a_temperature_unit():
    """An uncertainty is a temperature difference: 0.3 in degC, K or 'degree_Celsius'
    is 0.3 K, 0.3 degF is 0.3 x 5/9 K (ITS-90 degree sizes; common practice)."""
    for unit, expected in (("degC", 0.3), ("degree_Celsius", 0.3), ("K", 0.3),
                           ("degF", 0.3 * 5 / 9)):
        text = sub("room_temperature,21.0,degC,0.3",
                   f"room_temperature,{21.0 if unit != 'K' else 294.15},{unit},0.3")
        if unit == "degF":
            text = sub("room_temperature,21.0,degC,0.3", "room_temperature,69.8,degF,0.3")
        run = load(text)
        assert run_in_si(run).u["T_room"] == pytest.approx(expected, rel=1e-12), unit


def test_a_run_that_cannot_be_fitted_shows_no_invented_numbers(tmp_path):
    """The two-run table of the README: the one-point run keeps its row, its reason and
    blank results (no '-0' enthalpy, no boiling point at -273 degC)."""
    table = tmp_path / "two.csv"
    table.write_text(
        "run_id,liquid,barometric_pressure [kPa],room_temperature [degC],room_reading [mL],"
        "mass_before_air [g],mass_after_air [g],bath_temperature [degC],reading [mL],include,"
        "reason\n"
        "pair1,ethanol,100.2,21.0,1.85,30.0000,28.4230,25.0,1.993,yes,\n"
        "pair1,ethanol,100.2,21.0,1.85,30.0000,28.4230,30.0,2.089,yes,\n"
        "pair2,toluene,100.2,21.5,2.05,31.2000,29.4310,25.0,2.160,yes,\n")
    from vpkit.analysis.many_runs import analyze_many

    with warnings.catch_warnings():
        warnings.simplefilter("error", RuntimeWarning)
        s = analyze_many(table).summary.set_index("run_id")
    assert "got 1" in s.loc["pair2", "status"]
    for col in ("ΔH_vap [kJ/mol]", "T_b at 101.325 kPa [degC]", "deviation from reference [u]",
                "n_air [mmol]"):
        assert np.isnan(s.loc["pair2", col]), col


SLIP_CASES = [
    ("decimal comma in a reading", sub("40.0,2.389,yes,", "40.0,2,389,yes,"), RunFileError, 17,
     "include", "decimal comma"),
    ("decimal comma in an entry", sub("mass_after_air,28.4230,g", "mass_after_air,28,4230,g"),
     RunFileError, 8, "value", "decimal comma in '28,4230'"),
]


@pytest.mark.parametrize("case", SLIP_CASES, ids=[c[0] for c in SLIP_CASES])
def test_slips_are_blamed_on_the_right_place(case):
    _, text, error, row, column, fragment = case
    with pytest.raises(error) as info:
        load(text)
    assert info.value.row == row and info.value.column == column
    assert fragment in str(info.value) and "decimal point" in info.value.hint


@pytest.mark.parametrize("spelling", ["deg C", "C", "celsius", "°c", "degree Celsius", "℃",
                                      " degC "])
def test_spellings_people_type_are_accepted(spelling):
    run = load(sub("room_temperature,21.0,degC", f"room_temperature,21.0,{spelling}"))
    assert run_in_si(run).T_room == pytest.approx(294.15)


def test_mm_hg_torr_and_utf16(tmp_path):
    run = load(sub("barometric_pressure,100.2,kPa,0.1", "barometric_pressure,751.6,mm Hg,1"))
    assert run_in_si(run).P_bar == pytest.approx(751.6 * 133.322387415, rel=1e-9)
    p = tmp_path / "export.csv"
    p.write_text(BASE, encoding="utf-16")
    assert vpkit.read_run(p).n_points == 6


@pytest.mark.parametrize("entry,value,unit", [("boiling_point", "1e308", "degC"),
                                              ("room_temperature", "1e-5", "K"),
                                              ("barometric_pressure", "3.7e5", "bar"),
                                              ("mass_before_air", "1e300", "g")])
def test_values_no_measurement_can_have_are_refused_at_the_edge(entry, value, unit):
    """Hard limits (common practice, no source; vpkit.record.validate.LIMITS): such values are
    slips, and would only overflow the equations."""
    import re

    line = next(x for x in BASE.splitlines() if x.startswith(entry + ","))
    text = BASE.replace(line, re.sub(r",[^,]*,[^,]*,", f",{value},{unit},", line, count=1))
    with pytest.raises(ImpossibleDataError) as info:
        run_in_si(load(text))
    assert info.value.column == entry and info.value.row is not None
    assert "check the value and its unit" in info.value.hint


def test_hardening_regressions_from_the_fuzz_pass():
    """Each class of failure a 12,000-input fuzz pass found (issue 'hardening') is now a
    located vpkit error or a flagged result. Ranges: common practice, no source."""
    water = load(sub("liquid,ethanol", "liquid,water").replace("liquid_density,reference",
                                                               "liquid_density,0.998,g/mL"))
    # water with the room at the freezing point: IAPWS-95 below its range, no library error
    cold = load(sub("liquid,ethanol", "liquid,water").replace(
        "room_temperature,21.0,degC,0.3", "room_temperature,1e-5,degC,0.3"))
    a = vpkit.analyze(cold, warn=False)
    assert "room temperature?" in a.results()["flags"].iloc[0]
    # a barometer of 3.7 bar: possible, but the unit is probably wrong -> flagged
    high = load(sub("barometric_pressure,100.2,kPa,0.1", "barometric_pressure,3.737,bar,0.001"))
    try:
        flags = vpkit.analyze(high, warn=False).results()["flags"].iloc[0]
    except VpkitError as exc:  # or refused outright, with its place
        flags = str(exc)
    assert "barometer?" in flags or "row" in flags
    # all points at one temperature: a singular fit is a FitError, not a LinAlgError
    flat = load(BASE.replace("30.0,2.089", "25.0,2.089").replace("35.0,2.216", "25.0,2.216")
                .replace("40.0,2.389", "25.0,2.389").replace("45.0,2.627", "25.0,2.627")
                .replace("50.0,2.965", "25.0,2.965"))
    with pytest.raises(FitError, match="singular"):
        vpkit.analyze(flat, warn=False)
    assert water.n_points == 6
