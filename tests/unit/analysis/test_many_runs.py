"""Many runs at once: the single-run and many-run answers are the same answer.

Every case where the two paths once differed is here, compared to 1e-12: liquids
without a reference, a table with u(barometric_pressure) but no u(pressure), bad
readings refused alike, the three models, every air method including the
self-consistent one, per-point pressures, and a bad run among good ones. The
physics itself is checked against IAPWS-95, chemicals and NIST StRD in
tests/reference; flag thresholds are common practice, no source.
"""

import numpy as np
import pandas as pd
import pytest

import vpkit
from tests.conftest import make_run
from vpkit.analysis.many_runs import analyze_many, analyze_runs, analyze_table
from vpkit.physics.simulate import NOISE
from vpkit.record.longtable import runs_to_table, stack_table
from vpkit.record.sources import read_runs

LIQUIDS = ["ethanol", "water", "toluene", "2-propanol", "acetone", "heptane"]
NUMERIC = ["ΔH_vap [kJ/mol]", "u(ΔH_vap) [kJ/mol]", "T_b at run pressure [degC]",
           "u(T_b at run pressure) [K]", "T_b at 101.325 kPa [degC]",
           "u(T_b at 101.325 kPa) [K]", "ΔS_vap at T_b [J/(mol K)]", "u(ΔS_vap) [J/(mol K)]",
           "reduced chi2", "n_air [mmol]", "p_vap at air reference [Pa]",
           "reference ΔH_vap at T_m [kJ/mol]", "T_m [K]", "true ΔvapH at T_m [kJ/mol]",
           "u(true ΔvapH) [kJ/mol]", "T_b bias at run pressure [K]",
           "T_b bias at 101.325 kPa [K]", "u(T_b bias) [K]", "T_b beyond data [K]"]


def random_runs(count, seed, t_lo=20.0, t_hi=52.0, cold=False):
    rng = np.random.default_rng(seed)
    runs = {}
    for k in range(count):
        liquid = LIQUIDS[k % len(LIQUIDS)]
        n = int(rng.integers(4, 10))
        t = np.sort(rng.uniform(t_lo, t_hi, n)).round(1)
        if len(set(t)) < n:
            t = np.linspace(t_lo, t_hi, n).round(1)
        if cold:
            t = np.r_[2.0, t]
        runs[f"run{k:03d}"] = make_run(
            liquid, tuple(t), noise=NOISE, rng=rng, depth=0.05 if k % 3 == 0 else None,
            direction=-1 if k % 4 == 1 else 1, offset=9e-6 if k % 4 == 1 else 0.15e-6,
            boiling_point=350.0)
    return runs


def assert_same(summary, runs, **options):
    """Every run's row equals vpkit.analyze of that run alone, to 1e-12."""
    rows = summary.set_index("run_id")
    checked = 0
    for rid, run in runs.items():
        row = rows.loc[rid]
        try:
            single = vpkit.analyze(run, warn=False, **options).results().iloc[0]
        except vpkit.VpkitError as exc:
            assert row["status"] and str(exc).split(": ")[-1] in row["status"], (rid, exc)
            continue
        assert row["status"] == ""
        for key in NUMERIC:
            # a bias is the difference of two boiling points (about 350 K): 1e-9 K absolute
            tol = 1e-9 if "bias" in key else 1e-300
            assert row[key] == pytest.approx(single[key], rel=1e-12, abs=tol,
                                             nan_ok=True), (rid, key)
        assert row["points used"] == single["points used"]
        assert row["flags"] == single["flags"]
        checked += 1
    return checked


@pytest.mark.parametrize("weighting", ["gls", "weighted", "ordinary"])
@pytest.mark.parametrize("air_from", ["weighed", "cold", "injected"])
def test_many_equals_single_for_every_weighting_and_air_method(weighting, air_from):
    runs = random_runs(12, seed=hash((weighting, air_from)) % 2**32, cold=air_from == "cold")
    summary = analyze_runs(runs, weighting=weighting, air_from=air_from)
    assert list(summary["run_id"]) == list(runs)
    assert assert_same(summary, runs, weighting=weighting, air_from=air_from) >= 10


@pytest.mark.parametrize("air_from", ["weighed", "injected"])
def test_many_equals_single_with_the_optional_quantities(air_from):
    """Room head, tube bore, humidity of the injected air, resolution and capacity mean
    the same in a long table as in a run file."""
    import dataclasses

    runs = random_runs(12, seed=3)
    extra = [("room_depth", vpkit.Entry(4.0, "cm")), ("tube_bore", vpkit.Entry(6.0, "mm", 0.2)),
             ("injected_air_humidity", vpkit.Entry(45.0, "%")),
             ("reading_resolution", vpkit.Entry(0.02, "mL")),
             ("tube_capacity", vpkit.Entry(2.6, "mL"))]
    for k, rid in enumerate(runs):
        run = runs[rid]
        keep = tuple(e for e in run.entries if e[0] != "reading_uncertainty" or k % 2)
        runs[rid] = dataclasses.replace(run, entries=keep + tuple(extra[: 1 + k % 5]))
    summary = analyze_runs(runs, air_from=air_from)
    assert assert_same(summary, runs, air_from=air_from) >= 10
    assert summary["flags"].str.contains("beyond tube capacity").any()


@pytest.mark.parametrize("model", ["constant_dcp", "antoine"])
def test_many_equals_single_for_three_parameter_models(model):
    runs = random_runs(8, seed=11, t_lo=20.0, t_hi=70.0)
    summary = analyze_runs(runs, model=model)
    assert assert_same(summary, runs, model=model) >= 4


@pytest.mark.parametrize("air_from", ["weighed", "cold"])
def test_many_equals_single_self_consistent(air_from):
    runs = random_runs(6, seed=5, t_lo=30.0, t_hi=65.0, cold=air_from == "cold")
    summary = analyze_runs(runs, air_from=air_from, vapor_at_air_reference="fit")
    assert assert_same(summary, runs, air_from=air_from, vapor_at_air_reference="fit") >= 5
    analysed = summary["status"] == ""
    assert (summary.loc[analysed, "self-consistent rounds"] > 0).all()


def test_liquid_without_reference_means_the_same_everywhere():
    """Once 'auto' meant self-consistent for one run and 'neglect' for many."""
    base = make_run("ethanol", noise=NOISE, rng=np.random.default_rng(3))
    entries = tuple((k, vpkit.Entry("pentan-3-ol") if k == "liquid" else
                     vpkit.Entry(0.789, "g/mL") if k == "liquid_density" else e)
                    for k, e in base.entries)
    run = base.__class__(entries, base.units, base.bath_temperature, base.reading,
                         base.pressure, base.include, base.reason)
    single = vpkit.analyze(run, warn=False)
    assert single.vapor_mode == "fit" and single.comparison is None
    for summary in (analyze_runs({"x": run}), analyze_table(runs_to_table({"x": run}))):
        row = summary.iloc[0]
        assert row["p_vap at air reference"] == "fit"
        assert row["ΔH_vap [kJ/mol]"] == pytest.approx(single.enthalpy.nominal_value / 1e3,
                                                       rel=1e-12)


def test_table_pressure_uncertainty_follows_the_barometer():
    """A table with u(barometric_pressure) and per-point pressures but no u(pressure):
    the per-point pressures are read on the barometer, in both paths."""
    runs = random_runs(3, seed=8)
    rows = []
    for rid, run in runs.items():
        P = tuple(99.5 + 0.1 * i for i in range(run.n_points))
        run = run.__class__(run.entries, (run.units[0], run.units[1], "kPa"),
                            run.bath_temperature, run.reading, P, run.include, run.reason)
        runs[rid] = run
        df = run.to_frame()
        for name, e in run.entries:
            if name in ("notes", "reading_uncertainty", "temperature_uncertainty"):
                continue
            col = f"{name} [{e.unit}]" if e.unit else name
            df[col] = e.value
            if name == "barometric_pressure":
                df[f"u(barometric_pressure) [{e.unit}]"] = 0.4
        df["run_id"] = rid
        rows.append(df)
    table = pd.concat(rows, ignore_index=True)
    many = analyze_table(table).set_index("run_id")
    for rid, run in vpkit.record.table_to_runs(table).items():
        single = vpkit.analyze(run, warn=False).results().iloc[0]
        assert many.loc[rid, "u(ΔH_vap) [kJ/mol]"] == pytest.approx(
            single["u(ΔH_vap) [kJ/mol]"], rel=1e-12)


BAD_ROWS = [("negative reading", "reading [m**3]", -1e-6, "ImpossibleDataError", "negative"),
            ("celsius labelled kelvin", "bath_temperature [K]", None, "ImpossibleDataError",
             "far below any liquid bath")]


@pytest.mark.parametrize("case", BAD_ROWS, ids=[c[0] for c in BAD_ROWS])
def test_bad_readings_refused_alike(case):
    _, column, value, error, fragment = case
    runs = random_runs(3, seed=2)
    table = runs_to_table(runs)
    sel = table["run_id"] == "run001"
    if value is None:  # the whole run's temperatures in degC under a K header
        table.loc[sel, column] = table.loc[sel, column] - 273.15
    else:
        table.loc[sel & (table.index == table.index[sel][2]), column] = value
    stack, failures = stack_table(table)
    assert stack.run_ids == ("run000", "run002")
    (rid, exc), = failures
    assert rid == "run001" and type(exc).__name__ == error and fragment in str(exc)
    run = vpkit.record.table_to_runs(table)["run001"]
    with pytest.raises(vpkit.ImpossibleDataError, match=fragment):
        vpkit.analyze(run)
    summary = analyze_table(table).set_index("run_id")
    assert fragment in summary.loc["run001", "status"]
    assert summary.loc["run000", "status"] == ""


def test_one_bad_row_does_not_change_the_others():
    runs = random_runs(4, seed=4)
    table = runs_to_table(runs)
    clean = analyze_table(table).set_index("run_id")
    table["bath_temperature [K]"] = table["bath_temperature [K]"].astype(object)
    table.loc[table.index[table["run_id"] == "run001"][1], "bath_temperature [K]"] = "warm"
    damaged = analyze_table(table).set_index("run_id")
    assert "'warm' is not a number" in damaged.loc["run001", "status"]
    good = ["run000", "run002", "run003"]
    pd.testing.assert_frame_equal(damaged.loc[good], clean.loc[good], rtol=1e-12,
                                  check_dtype=False)


def test_runs_that_cannot_be_fitted_keep_a_row_with_the_reason():
    """The README's two-run table: one run has a single point."""
    runs = {"pair1": make_run("ethanol"), "pair2": make_run("toluene", (25.0,))}
    summary = analyze_runs(runs).set_index("run_id")
    assert summary.loc["pair1", "status"] == ""
    assert "needs at least 2 included points, got 1" in summary.loc["pair2", "status"]
    assert np.isnan(summary.loc["pair2", "ΔH_vap [kJ/mol]"])
    assert np.isnan(summary.loc["pair2", "T_b at 101.325 kPa [degC]"])


def test_flags_trip_on_built_runs_and_not_on_clean_ones():
    """Runs built to trip each flag raise it; clean simulated runs never raise the
    deterministic flags, and the statistical ones at about their design rates
    (measured on 800 clean runs: off reference 0.5 %, influential point 1 %,
    scatter at the 99th percentile about 1 %)."""
    rng = np.random.default_rng(8)
    clean = {f"clean{k}": make_run(LIQUIDS[k % 4], noise=NOISE, rng=rng) for k in range(200)}
    base = make_run("ethanol", noise=NOISE, rng=rng)
    r = list(base.reading)
    bad = {
        "few": make_run("ethanol", (30, 40, 50), noise=NOISE, rng=rng),
        "narrow": make_run("ethanol", (30, 32, 34, 36, 38), noise=NOISE, rng=rng),
        "shrinks": _with(base, reading=tuple(r[:3] + [r[2] - 0.05] + r[4:])),
        "impossible": _with(base, reading=tuple([r[0] - 0.5] + r[1:])),
        "boilgap": make_run("ethanol", noise=NOISE, rng=rng, boiling_point=345.0),
        "offref": make_run("ethanol", noise=NOISE, rng=rng, curve=_Steeper()),
        # four close points and one far away: the result hinges on the lone point
        "influence": make_run("ethanol", (25, 28, 31, 34, 60), noise=NOISE, rng=rng),
    }
    summary = analyze_runs({**clean, **bad}).set_index("run_id")
    flags = summary.loc[list(clean), "flags"].str.split(", ").explode()
    deterministic = {"impossible", "few points", "narrow range", "volume not growing",
                     "boiling point gap"}
    assert not deterministic & set(flags)
    rates = flags.value_counts() / len(clean)
    assert rates.get("off reference", 0) <= 0.02
    assert rates.get("influential point", 0) <= 0.04
    assert rates.get("scatter", 0) <= 0.04
    expect = {"few": "few points", "narrow": "narrow range", "shrinks": "volume not growing",
              "impossible": "impossible", "boilgap": "boiling point gap",
              "offref": "off reference", "influence": "influential point"}
    for rid, flag in expect.items():
        assert flag in summary.loc[rid, "flags"], (rid, summary.loc[rid, "flags"])
        assert summary.loc[rid, "flag reasons"]


def _with(run, **changes):
    entries = tuple((k, changes.pop(k, e)) for k, e in run.entries)
    return run.__class__(entries, run.units, changes.get("T", run.bath_temperature),
                         changes.get("reading", run.reading), run.pressure, run.include,
                         run.reason)


class _Steeper:
    """A vapor-pressure curve 12 % steeper than ethanol's, equal to it at 21 degC."""

    def p(self, T):
        eth = vpkit.reference_curve("ethanol", "antoine")
        return eth.p(T) ** 1.12 * eth.p(294.15) ** -0.12


def test_folder_with_a_corrupt_file_loads_the_rest(tmp_path):
    runs = random_runs(4, seed=3)
    for rid, run in runs.items():
        vpkit.write_run(run, tmp_path / f"{rid}.csv")
    (tmp_path / "broken.csv").write_text("[run]\nliquid,water,,\nbarometric_pressure,abc,kPa,\n"
                                         "[readings]\nbath_temperature [degC],reading [mL]\n"
                                         "25,2.0\n")
    load = read_runs(tmp_path)
    assert sorted(load.run_ids) == sorted(runs)
    assert len(load.failed) == 1 and "broken.csv" in load.failed[0][0]
    assert "row 3" in load.failed[0][1]


def test_long_table_file_and_a_bad_run(tmp_path):
    table = runs_to_table(random_runs(3, seed=4))
    table["bath_temperature [K]"] = table["bath_temperature [K]"].astype(object)
    table.loc[table["run_id"] == "run001", "bath_temperature [K]"] = "warm"
    path = tmp_path / "section.csv"
    table.to_csv(path, index=False)
    load = read_runs(path)
    assert load.run_ids == ["run000", "run002"]
    assert load.failed[0][0] == "run001" and "warm" in load.failed[0][1]
    first_bad_line = int(np.flatnonzero(table["run_id"] == "run001")[0]) + 2
    assert f"row {first_bad_line}," in load.failed[0][1]


def test_metadata_must_be_constant_within_a_run():
    table = runs_to_table(random_runs(2, seed=5))
    table.loc[2, "barometric_pressure [Pa]"] += 100
    summary = analyze_table(table).set_index("run_id")
    assert "differs within run" in summary.loc["run000", "status"]
    assert summary.loc["run001", "status"] == ""


def test_many_result_gives_the_same_analysis_as_analyze(tmp_path):
    runs = random_runs(3, seed=9)
    for rid, run in runs.items():
        vpkit.write_run(run, tmp_path / f"{rid}.csv")
    many = analyze_many(tmp_path)
    for rid in runs:
        a = many.analysis(rid)
        b = vpkit.analyze(tmp_path / f"{rid}.csv", warn=False)
        assert a.enthalpy.nominal_value == pytest.approx(b.enthalpy.nominal_value, rel=1e-12)
        np.testing.assert_allclose(a.p_vap, b.p_vap, rtol=1e-12)
        assert a.warnings == b.warnings


def test_dask_partitions_give_identical_results():
    dd = pytest.importorskip("dask.dataframe")
    runs = random_runs(120, seed=6)
    table = runs_to_table(runs)
    expected = analyze_table(table)
    ddf = dd.from_pandas(table.set_index("run_id", drop=False), npartitions=7, sort=True)
    meta = expected.iloc[:0]
    got = ddf.map_partitions(lambda part: analyze_table(part.reset_index(drop=True)),
                             meta=meta).compute(scheduler="synchronous")
    got = got.set_index("run_id").loc[expected["run_id"]].reset_index()
    pd.testing.assert_frame_equal(got, expected, check_exact=False, rtol=1e-12)


def test_blocks_give_the_same_summary():
    table = runs_to_table(random_runs(25, seed=12))
    whole = analyze_table(table)
    blocks = analyze_table(table, chunk_runs=7)
    pd.testing.assert_frame_equal(whole, blocks, rtol=1e-12)


def _mixed_section(rng):
    """An invented section as it arrives: weighed runs, runs with only an injected volume,
    capillary and graduated-tube runs whose air amount comes from a cold reading, of named
    and unnamed liquids."""
    import dataclasses

    from tests.conftest import cold_record

    runs = dict(random_runs(4, seed=21))
    drop = ("room_reading", "mass_before_air", "mass_after_air")
    for rid in list(runs)[:2]:
        run = runs[rid]
        runs[rid + "_injected"] = dataclasses.replace(run, entries=tuple(
            e for e in run.entries if e[0] not in drop) + (("scale_offset",
                                                             vpkit.Entry(0.15, "mL")),))
    for k, (liquid, t_cold, name, cap) in enumerate([
            ("ethanol", 4.0, None, True), ("ethanol", 12.0, None, True),
            ("2-propanol", 8.0, "sample B", True), ("acetone", 15.0, "sample C", True),
            ("water", 4.5, None, False)]):
        t = tuple(np.linspace(25.0, 45.0 if liquid == "acetone" else 60.0, 4 + k % 3))
        runs[f"cold{k}"] = cold_record(liquid, t_cold, t, capillary=cap, name=name,
                                       noise=0.2 if cap else 0.02, rng=rng)
    return runs


def test_a_mixed_section_is_analysed_with_no_options(tmp_path):
    """No run is refused for its air method: each uses what its record supports."""
    from vpkit.record.runfile import write_run

    runs = _mixed_section(np.random.default_rng(5))
    for rid, run in runs.items():
        write_run(run, tmp_path / f"{rid}.csv")
    many = analyze_many(tmp_path)
    s = many.summary.set_index("run_id")
    assert (s["status"] == "").all(), s.loc[s["status"] != "", "status"].to_dict()
    method = s["air amount from"]
    assert set(method[[r for r in s.index if r.startswith("cold")]]) == {"cold"}
    assert set(method[[r for r in s.index if r.endswith("_injected")]]) == {"injected"}
    assert (method[[r for r in s.index if r.startswith("run") and "_" not in r]]
            == "weighed").all()


def test_many_equals_single_for_a_mixed_section():
    runs = _mixed_section(np.random.default_rng(6))
    summary = analyze_runs(runs)
    assert assert_same(summary, runs) == len(runs)
    summary_fit = analyze_runs(runs, vapor_at_air_reference="fit")
    assert assert_same(summary_fit, runs, vapor_at_air_reference="fit") == len(runs)
