"""The one resolver: each choice means the same thing for one run or many.
Expectations are the documented meanings in vpkit.analysis.choices (ours, no source)."""

import numpy as np
import pytest

import vpkit
from tests.conftest import make_run
from vpkit.analysis.choices import Choices, resolve
from vpkit.record.assemble import stack_runs


def _unknown_liquid():
    base = make_run("ethanol")
    entries = tuple((k, vpkit.Entry("pentan-3-ol") if k == "liquid" else e)
                    for k, e in base.entries)
    return base.__class__(entries, base.units, base.bath_temperature, base.reading,
                          base.pressure, base.include, base.reason)


def test_auto_means_reference_where_there_is_one_else_self_consistent():
    s = stack_runs({"w": make_run("water"), "e": make_run("ethanol"), "x": _unknown_liquid()})
    r = resolve(s, Choices())
    assert list(r.vapor_mode) == ["reference", "reference", "fit"]
    assert r.compare_curve[0].label == "IAPWS-95"
    assert r.compare_curve[1].label.startswith("Antoine")
    assert r.compare_curve[2] is None and "no reference equation" in str(r.notices[2][0])
    assert list(resolve(s, Choices(air_from="injected")).vapor_mode) == ["none"] * 3


def test_choices_that_cannot_apply_fail_their_run_only():
    s = stack_runs({"e": make_run("ethanol"), "x": _unknown_liquid()})
    r = resolve(s, Choices(vapor_at_air_reference="reference"))
    assert r.errors[0] is None and "needs a reference equation" in str(r.errors[1])
    r2 = resolve(s, Choices(reference="iapws95"))
    assert "IAPWS-95 describes water" in str(r2.errors[0])


@pytest.mark.parametrize("bad", [dict(weighting="robust"), dict(air_from="guess"),
                                 dict(reference="crc"), dict(bubble_depth=float("nan")),
                                 dict(thresholds={"min_pointz": 3})])
def test_invalid_choices_name_the_option(bad):
    with pytest.raises(vpkit.BadValueError) as info:
        Choices(**bad)
    assert info.value.column == next(iter(bad))


def test_density_from_reference_and_the_cold_reading():
    run = make_run("toluene", (2, 25, 30, 35))
    s = stack_runs([run])
    r = resolve(s, Choices(air_from="cold"))
    assert r.setup.cold_index[0] == 0
    assert r.density[0] == pytest.approx(float(s.scalar["density"][0]))
    assert np.isfinite(r.density).all()


def test_auto_air_method_is_the_first_the_record_supports():
    """Order stated in vpkit.analysis.choices.AUTO_AIR_ORDER: weighing, injected, cold."""
    import dataclasses

    from tests.conftest import cold_record

    full = make_run("ethanol")
    drop = ("room_reading", "mass_before_air", "mass_after_air")
    injected = dataclasses.replace(full, entries=tuple(
        e for e in full.entries if e[0] not in drop) + (("scale_offset",
                                                         vpkit.Entry(0.15, "mL")),))
    capillary = cold_record("ethanol", 4.0)
    s = stack_runs({"full": full, "injected": injected, "capillary": capillary})
    setup = resolve(s, Choices()).setup
    assert list(setup.air_from) == ["weighed", "injected", "cold"]
    many = vpkit.analyze_many([full, injected, capillary])
    assert list(many.summary["air amount from"]) == ["weighed", "injected", "cold"]
    assert (many.summary["status"] == "").all()


@pytest.mark.parametrize("method,supported", [("weighed", "cold"), ("injected", "cold")])
def test_an_explicit_method_the_record_cannot_serve_names_the_one_it_can(method, supported):
    from tests.conftest import cold_record

    with pytest.raises(vpkit.InputError, match=f"air_from='{method}' needs") as err:
        vpkit.analyze(cold_record("ethanol", 4.0, source="capillary.csv"), air_from=method)
    assert f"air_from='{supported}'" in err.value.hint and err.value.file == "capillary.csv"
