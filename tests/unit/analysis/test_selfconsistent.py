"""The self-consistent p_vap at the air reference: the root finder on functions with
known roots, convergence on the bundled runs (to 1e-8 relative, the stated
tolerance), and exactness on noise-free data from a curve the model can represent
(the Antoine form of the chemicals package's Poling set, see tests/reference)."""

import shutil
import warnings
from pathlib import Path

import numpy as np
import pytest

import vpkit
from tests.conftest import make_run
from vpkit.analysis.selfconsistent import SELF_CONSISTENT_TOL, solve_fixed_point
from vpkit.errors import ConvergenceWarning

ROOT = Path(__file__).resolve().parents[3]


def test_root_finder_secant_and_bracket():
    target = np.array([1234.5, 30000.0, 7.0])
    G = lambda p: np.sqrt(target * p) - p  # noqa: E731  root at p = target
    p, ok = solve_fixed_point(G, np.array([100.0, 100.0, 100.0]), np.full(3, 1e5))
    assert ok.all()
    np.testing.assert_allclose(p, target, rtol=1e-10)
    # NaN below 5 kPa (an impossible point there): found by the scan and bisection
    H = lambda p: np.where(p < 5000.0, np.nan, 8000.0 - p)  # noqa: E731
    p2, ok2 = solve_fixed_point(H, np.array([100.0]), np.array([1e5]))
    assert ok2[0] and p2[0] == pytest.approx(8000.0, rel=1e-10)


def test_converges_on_the_bundled_runs(tmp_path):
    folder = tmp_path / "demo"
    shutil.copytree(ROOT / "data" / "demo", folder,
                    ignore=shutil.ignore_patterns("*.json", "*-report", "*.py"))
    for path in sorted(folder.glob("*.csv")):
        a = vpkit.analyze(path, vapor_at_air_reference="fit", warn=False)
        assert a.vapor_mode == "fit"
        rounds = int(a.result.self_consistent_rounds[0])
        err = float(a.result.self_consistent_error[0])
        assert 1 <= rounds < 30 and err <= SELF_CONSISTENT_TOL, (path.name, rounds, err)
        g = float(np.exp(a.fit.ln_p(a.result.T_ref[0])))
        assert g == pytest.approx(a.p_ref, rel=1e-8)


def test_noise_free_run_is_reproduced():
    curve = vpkit.reference_curve("toluene", "antoine")
    run = make_run("toluene", (25, 30, 35, 40, 45, 50, 55, 60), curve=curve)
    a = vpkit.analyze(run, vapor_at_air_reference="fit", model="antoine", warn=False)
    assert a.p_ref == pytest.approx(float(curve.p(a.si.T_room)), rel=1e-8)


def test_rounds_that_run_out_are_a_warning_with_the_mismatch(monkeypatch):
    import vpkit.analysis.selfconsistent as sc

    monkeypatch.setattr(sc, "SELF_CONSISTENT_ROUNDS", 1)
    run = make_run("ethanol", noise=vpkit.physics.simulate.NOISE, rng=np.random.default_rng(4))
    with warnings.catch_warnings(record=True) as seen:
        warnings.simplefilter("always")
        a = vpkit.analyze(run, vapor_at_air_reference="fit")
    hits = [w for w in seen if issubclass(w.category, ConvergenceWarning)]
    assert hits and "relative mismatch" in str(hits[0].message) and "after 1 rounds" in str(
        hits[0].message)
    assert "not self-consistent" in a.results()["flags"].iloc[0]
