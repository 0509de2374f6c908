"""The one analysis path: frozen results, warning classes, one run's trouble kept to itself.

Expectations are behaviour we promise (common practice, no source); numbers are
checked against published curves in tests/reference.
"""

import dataclasses
import warnings

import numpy as np
import pytest

import vpkit
from tests.conftest import make_run
from vpkit import errors as E
from vpkit.analysis.choices import Choices
from vpkit.analysis.engine import analyze_stack
from vpkit.physics.simulate import NOISE
from vpkit.record.assemble import stack_runs


def _arrays(obj, seen, path="", depth=0):
    """Every numpy array reachable from obj's fields and properties (depth-limited)."""
    if id(obj) in seen or depth > 4:
        return
    seen.add(id(obj))
    if isinstance(obj, np.ndarray):
        yield path, obj
        return
    if isinstance(obj, (str, bytes, int, float, type(None))):
        return
    if isinstance(obj, dict) or hasattr(obj, "keys") and hasattr(obj, "__getitem__"):
        for k in list(obj.keys()):
            yield from _arrays(obj[k], seen, f"{path}[{k!r}]", depth + 1)
        return
    if isinstance(obj, (tuple, list)):
        for i, v in enumerate(obj[:5]):
            yield from _arrays(v, seen, f"{path}[{i}]", depth + 1)
        return
    names = [f.name for f in dataclasses.fields(obj)] if dataclasses.is_dataclass(obj) else []
    names += [n for n, v in vars(type(obj)).items() if isinstance(v, property)]
    for name in names:
        if name.startswith("_"):
            continue
        try:
            value = getattr(obj, name)
        except Exception:  # noqa: BLE001 - a property that needs data the run lacks
            continue
        yield from _arrays(value, seen, f"{path}.{name}", depth + 1)


def test_writing_into_any_array_of_a_result_raises():
    a = vpkit.analyze(make_run("ethanol", noise=NOISE, rng=np.random.default_rng(1)),
                      warn=False)
    found = []
    for name, obj in (("analysis", a), ("fit", a.fit), ("comparison", a.comparison),
                      ("inputs", a.inputs), ("setup", a.setup), ("si", a.si),
                      ("result", a.result), ("resolved", a.result.resolved),
                      ("stack", a.result.stack), ("stackfit", a.result.fit)):
        found += list(_arrays(obj, set(), name))
    names = {p for p, _ in found}
    for must in ("analysis.T", "analysis.p_vap", "analysis.cov_ln_p", "fit.params", "fit.cov",
                 "analysis.jacobian", "inputs.sigma"):
        assert must in names, must
    assert len(found) > 40
    for path, arr in found:
        if arr.size == 0:
            continue
        with pytest.raises(ValueError, match="read-only"):
            arr.flat[0] = arr.flat[0]
            pytest.fail(f"{path} is writable")
    with pytest.raises(TypeError):
        a.result.point_flags["p_low"] = None


def test_the_old_loophole_is_closed():
    """Writing a parameter once changed a.fit.p(330) while a.enthalpy kept the old value."""
    a = vpkit.analyze(make_run("ethanol"), warn=False)
    with pytest.raises(ValueError):
        a.fit.params[1] *= 1.01


CASES = [
    ("extrapolation", make_run("water", (25, 30, 35, 40, 45, 50, 55, 60)), {},
     E.ExtrapolationWarning, "beyond the highest point"),
    ("ill-conditioned", make_run("ethanol", (25, 30, 35, 40, 45), noise=NOISE,
                                 rng=np.random.default_rng(5)), {"model": "antoine"},
     E.IllConditionedWarning, "ill-conditioned"),
    ("few points", make_run("ethanol", (30, 40, 50)), {}, E.IllConditionedWarning,
     "only 3 points used"),
    ("no reference", None, {}, E.ReferenceRangeWarning, "no reference equation"),
]


@pytest.mark.parametrize("case", CASES, ids=[c[0] for c in CASES])
def test_warnings_are_classes_users_can_filter(case):
    _, run, options, category, fragment = case
    if run is None:  # a liquid vpkit has no equation for, with a measured density
        base = make_run("ethanol")
        entries = tuple((k, vpkit.Entry("pentan-3-ol") if k == "liquid" else e)
                        for k, e in base.entries)
        run = base.__class__(entries, base.units, base.bath_temperature, base.reading,
                             base.pressure, base.include, base.reason)
    with pytest.warns(category, match=fragment):
        a = vpkit.analyze(run, **options)
    notice = next(w for w in a.warnings if fragment in w)
    assert notice.category is category and issubclass(category, E.VpkitWarning)
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        warnings.simplefilter("ignore", category)
        for other in {w.category for w in a.warnings} - {category}:
            warnings.simplefilter("ignore", other)
        vpkit.analyze(run, **options)


def test_one_runs_trouble_stays_with_that_run():
    good = make_run("ethanol")
    bad = make_run("toluene", (30.0,))
    res = analyze_stack(stack_runs({"good": good, "bad": bad}), Choices())
    assert res.errors[0] is None
    assert isinstance(res.errors[1], vpkit.FitError) and "got 1" in str(res.errors[1])
    assert np.isfinite(res.enthalpy[0]) and np.isnan(res.enthalpy[1])
    alone = analyze_stack(stack_runs({"good": good}), Choices())
    assert res.enthalpy[0] == alone.enthalpy[0]


def test_requested_and_automatic_exclusions_are_kept_apart():
    run = make_run("toluene", (2, 25, 30, 35, 40, 45, 50, 55))
    a = vpkit.analyze(run, air_from="cold", exclude={3: "stirrer stopped"}, warn=False)
    assert not a.include[0] and "cold reference" in a.reasons[0]
    assert not a.include[3] and a.reasons[3] == "stirrer stopped"
    assert a.result.requested_include[0, 0] and not a.result.requested_include[0, 3]


def _entries(run, drop=(), **new):
    kept = tuple((k, e) for k, e in run.entries if k not in drop and k not in new)
    return dataclasses.replace(run, entries=kept + tuple(new.items()))


def test_room_head_and_tube_bore_recover_the_curve_and_are_propagated():
    """Water runs simulated with a 5 cm head at the room reading and a 5 mm bore
    reduce back to IAPWS-95 exactly; ignoring the quantities biases ΔH_vap (METHOD 2.2);
    their uncertainties widen u(ΔH_vap)."""
    curve = vpkit.reference_curve("water")
    run = make_run("water", depth=0.05, bore=0.005)
    a = vpkit.analyze(run, warn=False)
    np.testing.assert_allclose(a.p_vap, curve.p(a.T), rtol=1e-12)
    lost = vpkit.analyze(_entries(run, drop=("tube_bore",)), warn=False)
    shift = (lost.enthalpy.nominal_value - a.enthalpy.nominal_value) / 1e3
    assert -2.5 < shift < -1.5  # the head at the room reading dominates (about -1.8 kJ/mol)
    cols = a.inputs.names
    assert a.inputs.sigma[cols.index("bore")] > 0
    assert a.inputs.sigma[cols.index("room_depth")] == 0  # taken from bubble_depth
    wide = vpkit.analyze(_entries(run, tube_bore=vpkit.Entry(5.0, "mm", 1.0)), warn=False)
    assert wide.enthalpy.std_dev > a.enthalpy.std_dev


def test_humidity_of_injected_air_for_water_and_for_hexane():
    """Injected air at 60 % RH: its moisture joins the water vapor (dry air counted);
    over hexane it stays in the gas and counts as air (no change)."""
    iapws = pytest.importorskip("iapws")
    run = make_run("water")
    e = dict(run.entries)
    T_room = 294.15
    p_w = iapws.IAPWS95(T=T_room, x=0).P * 1e6
    V_dry = e["injected_air_volume"].value  # mL of dry air at P_bar (simulated)
    P_bar = e["barometric_pressure"].value * 1e3
    V_wet = V_dry * P_bar / (P_bar - 0.6 * p_w)  # the same dry air, injected at 60 % RH
    wet = _entries(run, injected_air_volume=vpkit.Entry(V_wet, "mL"),
                   injected_air_humidity=vpkit.Entry(60.0, "%"))
    a = vpkit.analyze(wet, air_from="injected", warn=False)
    dry = vpkit.analyze(run, air_from="injected", warn=False)
    assert a.n_air == pytest.approx(dry.n_air, rel=1e-12)
    np.testing.assert_allclose(a.p_vap, dry.p_vap, rtol=1e-12)
    assert a.enthalpy.std_dev > dry.enthalpy.std_dev  # u(RH) = 5 % RH is propagated
    ignored = vpkit.analyze(_entries(wet, drop=("injected_air_humidity",)), air_from="injected",
                            warn=False)
    assert (ignored.enthalpy.nominal_value - a.enthalpy.nominal_value) / 1e3 > 1.0
    hexane = make_run("hexane", t_c=(20, 25, 30, 35, 40, 45, 50))
    h0 = vpkit.analyze(hexane, air_from="injected", warn=False)
    h1 = vpkit.analyze(_entries(hexane, injected_air_humidity=vpkit.Entry(60.0, "%")),
                       air_from="injected", warn=False)
    assert h1.enthalpy.nominal_value == h0.enthalpy.nominal_value


def test_a_bubble_beyond_the_tube_capacity_is_named():
    run = make_run("ethanol")
    a = vpkit.analyze(_entries(run, tube_capacity=vpkit.Entry(2.5, "mL")), warn=False)
    hit = [w for w in a.warnings if "capacity" in w]
    assert hit and "2.500 mL" in hit[0] and "60.00 °C" in hit[0]
    assert "beyond tube capacity" in a.results()["flags"][0]
    roomy = vpkit.analyze(_entries(run, tube_capacity=vpkit.Entry(10.0, "mL")), warn=False)
    assert not [w for w in roomy.warnings if "capacity" in w]


@pytest.mark.parametrize("weighting", ["gls", "weighted", "ordinary"])
@pytest.mark.parametrize("air_from,vap", [("weighed", "reference"), ("weighed", "fit"),
                                          ("cold", "fit"), ("cold", "reference"),
                                          ("injected", "auto")])
def test_T_m_lies_inside_the_points_used(weighting, air_from, vap):
    """ΔH_vap refers to a temperature inside the data (issue "newcomer"): a 6-point
    cyclohexane run over 20-60 degC with p_vap at the air reference solved with the fit
    once stated T_m = 336 K. Where the weights alone would put it outside, the warning
    says so with the number."""
    import numpy as np

    import vpkit
    from vpkit.physics.simulate import NOISE

    rng = np.random.default_rng(17)
    for k in range(6):
        t = (2.0,) if air_from == "cold" else ()
        run = make_run("cyclohexane", t + (20, 28, 36, 44, 52, 60), noise=NOISE, rng=rng)
        a = vpkit.analyze(run, weighting=weighting, air_from=air_from,
                          vapor_at_air_reference=vap, warn=False)
        used = a.T[a.include]
        assert used.min() - 1e-9 <= a.T_m <= used.max() + 1e-9, (k, a.T_m, used)
        Tw = a.result.fit.T_m_weights[0]
        if not used.min() <= Tw <= used.max():
            assert any("outside the points used" in w for w in a.warnings)
