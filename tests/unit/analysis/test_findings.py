"""The checks: every finding says the number that triggered it, and one finding feeds
both the single-run warning and the many-run flag. Thresholds are the documented
defaults (common practice, no source)."""

import numpy as np

import vpkit
from tests.conftest import make_run
from vpkit.analysis.findings import flags_of
from vpkit.analysis.many_runs import analyze_runs


def test_findings_carry_their_numbers():
    a = vpkit.analyze(make_run("ethanol", (30, 32, 34)), warn=False)
    texts = " | ".join(a.warnings)
    assert "only 3 points used (fewer than 4)" in texts
    assert "temperature range of the points used is 4.0 K (below 20 K)" in texts
    flags, reasons = flags_of(a.result.findings[0])
    assert "few points" in flags and "narrow range" in flags and "only 3 points" in reasons


def test_the_same_finding_in_both_paths():
    run = make_run("ethanol", boiling_point=340.0)
    single = vpkit.analyze(run, warn=False)
    row = analyze_runs({"r": run}).iloc[0]
    gap = [w for w in single.warnings if "measured boiling point differs" in w]
    assert gap and gap[0] in row["flag reasons"] and "boiling point gap" in row["flags"]
    assert "K (more than 2 K)" in gap[0]


def test_thresholds_are_choices():
    run = make_run("ethanol", (25, 30, 35, 40, 45))
    assert any("few points" in f.flag for f in vpkit.analyze(
        run, thresholds={"min_points": 6}, warn=False).result.findings[0])
    assert not any("few points" in f.flag for f in vpkit.analyze(
        run, warn=False).result.findings[0])


def test_impossible_points_name_the_value():
    run = make_run("ethanol")
    r = list(run.reading)
    r[0] -= 0.3
    bad = run.__class__(run.entries, run.units, run.bath_temperature, tuple(r), run.pressure,
                        run.include, run.reason)
    a = vpkit.analyze(bad, warn=False)
    w = next(x for x in a.warnings if x.startswith("point 0"))
    assert "excluded" in w and "p_vap = -" in w and "Pa)" in w
    assert np.isfinite(a.enthalpy.nominal_value)


def _entry(run, name, entry):
    return run.__class__(tuple((k, entry if k == name else e) for k, e in run.entries),
                         run.units, run.bath_temperature, run.reading, run.pressure,
                         run.include, run.reason)


def test_unit_slips_are_named_with_their_number():
    """A barometer typed in mbar as if kPa, a room temperature in degF labelled degC
    (ranges: common practice, no source; stated in vpkit.analysis.findings)."""
    run = make_run("ethanol")
    slip = _entry(run, "barometric_pressure", vpkit.Entry(1000.8, "kPa"))
    with np.errstate(all="ignore"):
        try:
            texts = " | ".join(vpkit.analyze(slip, warn=False).warnings)
        except vpkit.VpkitError as exc:  # may also be impossible outright
            texts = str(exc)
    assert "1001 kPa is outside 50-110 kPa" in texts or "impossible" in texts
    warm = _entry(run, "room_temperature", vpkit.Entry(70.3, "degC"))
    a = vpkit.analyze(warm, warn=False)
    w = [x for x in a.warnings if "room temperature" in x]
    assert w and "70.3 °C is outside 5-40 °C" in w[0] and w[0].category is \
        vpkit.errors.ImplausibleValueWarning
    assert "room temperature?" in a.results()["flags"].iloc[0]
    assert "implausible ΔH_vap" in a.results()["flags"].iloc[0]


def test_where_the_method_is_ill_conditioned():
    """Water at 15 degC: p_vap (1.7 kPa, IAPWS-95) is under 2 % of the gas pressure, so its
    relative error is about 60 times the volume's; acetone near 50 degC (p_vap about
    82 kPa, Poling et al. 2001) is close to boiling. Thresholds: common practice, no source."""
    cold = vpkit.analyze(make_run("water", (15, 25, 35, 45, 55)), warn=False)
    amp = [w for w in cold.warnings if "times the volume reading's" in w]
    assert amp and "at 15.00 °C" in amp[0] and "amplified error" in cold.results()["flags"][0]
    hot = vpkit.analyze(make_run("acetone", (25, 30, 35, 40, 45, 50)), warn=False)
    near = [w for w in hot.warnings if "close to boiling" in w]
    assert near and "at 50.00 °C" in near[0] and "grown" in near[0]
    calm = vpkit.analyze(make_run("ethanol", (35, 40, 45, 50, 55, 60)), warn=False)
    assert not [w for w in calm.warnings if "times the volume" in w or "close to boiling" in w]


def test_air_reference_outside_the_equation_range_is_named():
    """The Poling et al. (2001) Antoine set for 1-butanol holds from 310.18 K (37.03 degC);
    a weighed air amount at a 21 degC room takes p_vap there by extrapolation."""
    run = make_run("1-butanol", (40, 45, 50, 55, 60, 65), T_room=294.15)
    a = vpkit.analyze(run, reference="antoine", vapor_at_air_reference="reference", warn=False)
    hit = [w for w in a.warnings if "air reference" in w and "outside its range" in w]
    assert hit and "21.00 °C" in hit[0] and "37.03 °C" in hit[0]
    assert "air reference outside range" in a.results()["flags"][0]
    ok = vpkit.analyze(run, vapor_at_air_reference="reference", warn=False)  # PPDS: wide range
    assert not [w for w in ok.warnings if "outside its range" in w]


def test_a_slip_in_what_was_entered_is_listed_before_its_symptoms():
    """A barometer read as 1011 kPa (hPa meant): its warning comes first (issue
    "newcomer": it was 6th of 8, after its symptoms)."""
    import dataclasses

    run = make_run("ethanol")
    run = dataclasses.replace(run, entries=tuple(
        (k, vpkit.Entry(1011.0, "kPa", 0.1) if k == "barometric_pressure" else e)
        for k, e in run.entries))
    a = vpkit.analyze(run, warn=False)
    assert len(a.warnings) >= 2 and "1011 kPa" in a.warnings[0]


def test_an_exclusion_in_the_record_without_a_reason_is_named():
    run = make_run("ethanol").with_include([True, False, True, False] + [True] * 4,
                                           ["", "", "", "bubble lost"] + [""] * 4)
    a = vpkit.analyze(run, warn=False)
    [w] = [w for w in a.warnings if "without a reason" in w]
    assert w.startswith("1 point (1) is excluded without a reason")
    ok = vpkit.analyze(run.with_include(run.include, ["thermometer"] * 8), warn=False)
    assert not any("without a reason" in w for w in ok.warnings)


def test_flag_columns_join_only_the_runs_with_findings():
    from vpkit.analysis.findings import flag_columns

    res = vpkit.analyze(make_run("ethanol", (30, 32, 34)), warn=False).result
    findings = (res.findings[0], (), res.findings[0])
    flags, reasons = flag_columns(findings, [2, 1, 0])
    assert list(flags) == [flags_of(res.findings[0])[0], "", flags_of(res.findings[0])[0]]
    assert reasons[1] == "" and "only 3 points" in reasons[0]
