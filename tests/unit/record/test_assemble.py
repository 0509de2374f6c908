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


def test_a_run_over_the_reading_limit_is_refused_alone_and_never_padded(monkeypatch):
    """Issue "large and hostile inputs": a million-reading run once tried to allocate
    22 TiB. Over the limit, that run fails with its place; the others are stacked at
    their own size."""
    import numpy as np

    import vpkit.record.assemble as asm

    monkeypatch.setattr(asm, "MAX_READINGS", 12)
    from vpkit.record.runfile import format_run

    text = format_run(make_run("ethanol", t_c=tuple(np.linspace(25, 60, 13))))
    long_run = vpkit.parse_run(text, source="logger.csv")
    stack, failed = asm.stack_runs({"long": long_run, "ok": make_run("water")}, strict=False)
    assert stack.run_ids == ("ok",) and stack.T.shape == (1, 8)
    [(rid, err)] = failed
    assert rid == "long" and err.file == "logger.csv" and err.row == long_run.row_of(12)
    assert "13 readings, more than the 12" in str(err) and "settled readings" in str(err)
