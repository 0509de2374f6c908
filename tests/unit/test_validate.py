"""The one set of checks, on several runs at once: every run gets its own located
error, the others pass untouched. The rules are ours (common practice, no source);
the bad-input catalogue (test_bad_input.py) covers each rule's message and place."""

import numpy as np

import vpkit
from tests.conftest import make_run
from vpkit.stack import stack_runs


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
