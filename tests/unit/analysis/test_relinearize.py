"""Re-evaluating a run's fit covariance (vpkit.analysis.relinearize): unchanged inputs
give the fit's own covariance; a curve with a given ΔH_vap has that ΔH_vap. Expected
values: the fit's covariance (GLS, Aitken 1935) and ΔH = -R b (Clausius–Clapeyron) or
R (cT - b) (constant ΔCp), worked by hand."""

import numpy as np
import pytest

import vpkit
from tests.conftest import make_run
from vpkit.analysis.relinearize import parameter_covariance, with_enthalpy
from vpkit.fitting.models import get_model
from vpkit.physics.simulate import NOISE


@pytest.mark.parametrize("weighting", ["gls", "weighted", "ordinary"])
def test_no_change_gives_the_fits_own_covariance(weighting):
    runs = [make_run("ethanol", noise=NOISE, rng=np.random.default_rng(k)) for k in range(4)]
    res = vpkit.analyze_many(runs, weighting=weighting).blocks[0][1]
    cov = parameter_covariance(res, np.arange(res.R))
    # the fit's last effective-variance round and cov(ln p) scale were evaluated one pass
    # before its final parameters: equal to a few parts in 1e5
    np.testing.assert_allclose(cov, res.fit.cov, rtol=1e-4)


@pytest.mark.parametrize("model", ["clausius_clapeyron", "constant_dcp"])
def test_a_curve_with_a_given_enthalpy_keeps_the_point_at_T_m(model):
    m = get_model(model)
    th = np.array([[25.0, -5000.0] + ([-3.0] if model == "constant_dcp" else [])])
    T_m, T, H = np.array([320.0]), np.array([325.0]), np.array([41_000.0])
    new = with_enthalpy(m, th, T_m, T, H)
    assert m.enthalpy(T, new)[0] == pytest.approx(41_000.0, rel=1e-12)
    assert m.f(T_m, new)[0] == pytest.approx(m.f(T_m, th)[0], rel=1e-14)
