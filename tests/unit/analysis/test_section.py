"""A section of runs (vpkit.analysis.section): grouping by liquid, one row per liquid,
the joint fit. Expected values: generalized least squares of independent runs (Aitken
1935) worked by hand: k identical runs give the same parameters and 1/k of the
covariance."""

import dataclasses

import numpy as np
import pytest

import vpkit
from tests.conftest import make_run
from vpkit.analysis.section import joint_fit, liquid_key
from vpkit.physics.simulate import NOISE


def _renamed(run, liquid):
    return dataclasses.replace(run, entries=tuple(
        (k, vpkit.Entry(liquid) if k == "liquid" else e) for k, e in run.entries))


def test_runs_group_by_liquid_as_people_type_it():
    assert liquid_key("Ethanol") == liquid_key("EtOH ") == "ethanol"
    assert liquid_key("Sample  B") == liquid_key("sample b")


def test_identical_runs_give_the_runs_fit_and_a_kth_of_its_covariance():
    run = make_run("ethanol")  # noise-free: no χ² scaling of the run or of the joint fit
    many = vpkit.analyze_many({f"r{k}": run for k in range(3)})
    res = many.blocks[0][1]
    assert not res.fit.scaled[0]
    joint = joint_fit(many.blocks, ["r0", "r1", "r2"], passes=0)
    np.testing.assert_allclose(joint["params"], res.fit.params[0], rtol=1e-10)
    np.testing.assert_allclose(joint["cov"], res.fit.cov[0] / 3, rtol=1e-8)


def test_one_row_per_liquid_with_two_runs_and_scores_for_its_runs():
    rng = np.random.default_rng(8)
    runs = {f"e{k}": make_run("ethanol", noise=NOISE, rng=rng) for k in range(4)}
    runs["w0"] = make_run("water", noise=NOISE, rng=rng)  # alone: no section
    runs["b0"] = _renamed(make_run("2-propanol", noise=NOISE, rng=rng), "Sample B")
    runs["b1"] = _renamed(make_run("2-propanol", noise=NOISE, rng=rng), "sample b")
    many = vpkit.analyze_many(runs)
    assert list(many.consensus["liquid"]) == ["ethanol", "sample b"]
    s = many.summary.set_index("run_id")
    assert np.isnan(s.loc["w0", "ζ vs consensus"]) and s.loc["w0", "signal"] == ""
    assert np.isfinite(s.loc[["e0", "e1", "e2", "e3", "b0", "b1"], "ζ vs consensus"]).all()
    row = many.consensus.set_index("liquid").loc["ethanol"]
    assert row["runs"] == 4 and row["T_m [K]"] == pytest.approx(
        s.loc[["e0", "e1", "e2", "e3"], "T_m [K]"].mean())


def test_a_planted_gross_error_is_flagged_with_its_score():
    rng = np.random.default_rng(9)
    runs = {f"e{k:02d}": make_run("ethanol", noise=NOISE, rng=rng) for k in range(12)}
    bad = runs["e05"]  # a thermometer read 4 K high above 40 degC: the slope is wrong
    runs["e05"] = dataclasses.replace(bad, bath_temperature=tuple(
        t + (4.0 if t > 40 else 0.0) for t in bad.bath_temperature))
    many = vpkit.analyze_many(runs)
    row = many.summary.set_index("run_id").loc["e05"]
    worst = max(abs(row["ζ vs consensus"]), abs(row["ζ vs consensus (T_b)"]))
    assert row["signal"] == "action" and worst >= 3
    assert "section action signal" in row["flags"] and "ζ = " in row["flag reasons"]
    others = many.summary.set_index("run_id").drop(index="e05")
    assert (others["signal"] != "action").all()
