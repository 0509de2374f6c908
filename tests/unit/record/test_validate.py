"""The one set of checks, on several runs at once: every run gets its own located
error, the others pass untouched. The rules are ours (common practice, no source);
the bad-input catalogue (test_bad_input.py) covers each rule's message and place."""

import numpy as np
import pytest

import vpkit
from tests.conftest import make_run
from vpkit.record.assemble import run_in_si, stack_runs


def _with(run, **entries):
    new = tuple((k, entries.get(k, e)) for k, e in run.entries)
    return run.__class__(new, run.units, run.bath_temperature, run.reading, run.pressure,
                         run.include, run.reason)


def test_each_run_fails_on_its_own():
    good = make_run("ethanol")
    runs = {
        "good": good,
        "swapped": _with(good, mass_after_air=vpkit.Entry(31.0, "g")),
        "zero_p": _with(good, barometric_pressure=vpkit.Entry(0.0, "kPa")),
        "kelvin": good.__class__(good.entries, ("K", "mL", ""), good.bath_temperature,
                                 good.reading, good.pressure, good.include, good.reason),
    }
    stack, failures = stack_runs(runs, strict=False)
    assert stack.run_ids == ("good",)
    found = dict(failures)
    assert found["swapped"].column == "mass_after_air" and "swapped" in found["swapped"].hint
    assert found["zero_p"].column == "barometric_pressure"
    assert "degC values" in found["kelvin"].hint and found["kelvin"].column == "bath_temperature"
    assert all(isinstance(e, vpkit.ImpossibleDataError) for e in found.values())
    np.testing.assert_array_equal(stack.T[0], stack_runs({"good": good}).T[0])


def test_reading_resolution_sets_the_reading_uncertainty():
    """u = resolution/sqrt(12) (rectangular distribution, GUM 4.3.7) where no reading
    uncertainty is stated; a stated one wins."""
    import math

    from vpkit.record.fields import Entry

    good = make_run("ethanol")
    plain = good.__class__(good.entries + (("reading_resolution", Entry(0.05, "mL")),),
                           good.units, good.bath_temperature, good.reading, good.pressure,
                           good.include, good.reason)
    s = stack_runs({"a": plain})
    assert s.u["reading"][0] == pytest.approx(0.05e-6 / math.sqrt(12), rel=1e-12)
    assert s.u["room_reading"][0] == s.u["reading"][0]
    stated = plain.__class__(plain.entries + (("reading_uncertainty", Entry(0.004, "mL")),),
                             plain.units, plain.bath_temperature, plain.reading, plain.pressure,
                             plain.include, plain.reason)
    assert stack_runs({"b": stated}).u["reading"][0] == pytest.approx(0.004e-6)


def test_new_quantities_are_checked_with_their_place():
    from vpkit.record.fields import Entry

    good = make_run("ethanol")
    wet = good.__class__(good.entries + (("injected_air_humidity", Entry(150.0, "%")),),
                         good.units, good.bath_temperature, good.reading, good.pressure,
                         good.include, good.reason)
    _, failures = stack_runs({"wet": wet}, strict=False)
    assert failures and failures[0][1].column == "injected_air_humidity"
    assert "outside 0 to 100 %" in str(failures[0][1])
    no_room = tuple((k, e) for k, e in good.entries if k != "room_reading")
    bored = good.__class__(no_room + (("scale_offset", Entry(0.15, "mL")),
                                      ("tube_bore", Entry(5.0, "mm"))),
                           good.units, good.bath_temperature, good.reading, good.pressure,
                           good.include, good.reason)
    _, failures = stack_runs({"bored": bored}, strict=False)
    assert failures and failures[0][1].column == "tube_bore"
    assert "room_reading" in failures[0][1].hint


def test_bubble_lengths_need_the_capillary_bore():
    from tests.conftest import cold_record

    run = cold_record("ethanol", 4.0, source="cap.csv")
    assert run_in_si(run).length_readings
    no_bore = vpkit.parse_run(vpkit.format_run(run).replace("tube_bore,1.2,mm,0.02\n", ""),
                              source="cap.csv")
    with pytest.raises(vpkit.RunFileError, match="bubble lengths in a capillary need its bore"):
        run_in_si(no_bore)


def test_a_room_reading_in_another_kind_than_the_readings_is_refused():
    from tests.conftest import cold_record

    text = vpkit.format_run(cold_record("ethanol", 4.0)).replace(
        "tube_bore,1.2,mm,0.02\n", "tube_bore,1.2,mm,0.02\nroom_reading,0.5,mL,\n")
    with pytest.raises(vpkit.UnitError, match="room_reading is a volume") as err:
        run_in_si(vpkit.parse_run(text, source="cap.csv"))
    assert err.value.row is not None and "mm" in err.value.hint


def test_a_length_reading_beyond_any_capillary_is_named():
    from tests.conftest import cold_record

    text = vpkit.format_run(cold_record("ethanol", 4.0)).replace(
        "reading [mm]", "reading [m]")
    with pytest.raises(vpkit.ImpossibleDataError, match="longer than any capillary"):
        run_in_si(vpkit.parse_run(text))
