"""Building a stack (vpkit.record.assemble): the one default-uncertainty rule and per-run failures.

Expected values: the defaults stated in vpkit.record.fields (common practice, no source)."""

import pytest

import vpkit
from tests.conftest import make_run
from vpkit.record.assemble import stack_runs


def test_default_rule():
    run = make_run("ethanol")  # no stated reading or thermometer uncertainty
    bare = run.__class__(tuple((k, vpkit.Entry(e.value, e.unit, None)) for k, e in run.entries),
                         run.units, run.bath_temperature, run.reading, run.pressure,
                         run.include, run.reason)
    u = stack_runs([bare]).u
    assert u["reading"][0] == pytest.approx(0.005e-6)
    assert u["room_reading"][0] == u["reading"][0]  # read on the same graduations
    assert u["P_bar"][0] == pytest.approx(100.0) and u["pressure"][0] == pytest.approx(100.0)
    assert u["density_relative"][0] == pytest.approx(1e-3)
    stated = bare.__class__(tuple((k, vpkit.Entry(e.value, e.unit, 0.25)
                                   if k == "barometric_pressure" else e)
                                  for k, e in bare.entries), bare.units, bare.bath_temperature,
                            bare.reading, bare.pressure, bare.include, bare.reason)
    u2 = stack_runs([stated]).u
    # a stated barometer uncertainty of 0.25 kPa also applies to per-point pressures
    assert u2["P_bar"][0] == pytest.approx(250.0) and u2["pressure"][0] == pytest.approx(250.0)


def test_failures_are_returned_per_run():
    good = make_run("ethanol")
    r = list(good.reading)
    r[2] = -r[2]
    bad = good.__class__(good.entries, good.units, good.bath_temperature, tuple(r),
                         good.pressure, good.include, good.reason)
    stack, failures = stack_runs({"good": good, "bad": bad}, strict=False)
    assert stack.run_ids == ("good",)
    (rid, exc), = failures
    assert rid == "bad" and isinstance(exc, vpkit.ImpossibleDataError) and exc.column == "reading"
    with pytest.raises(vpkit.ImpossibleDataError):
        stack_runs({"good": good, "bad": bad})
