"""Fit models and the fit result. Expected values come from the model equations
themselves (exact recovery of known parameters) or from textbook formulas
(ordinary least squares, Belsley, Kuh & Welsch 1980 for leverage)."""

import numpy as np
import pytest

from vpkit.constants import R
from vpkit.errors import FitError
from vpkit.fitting.fit import fit_points
from vpkit.fitting.models import MODELS

T = np.linspace(298.15, 343.15, 8)


@pytest.mark.parametrize("name,params", [
    ("clausius_clapeyron", (25.0, -5200.0)),
    ("constant_dcp", (60.0, -7000.0, -5.0)),
    ("antoine", (23.5, 3900.0, -45.0)),
])
def test_exact_recovery(name, params):
    m = MODELS[name]
    y = m.f(T, np.array(params))
    r = fit_points(T, y, model=name, weighting="ordinary")
    np.testing.assert_allclose(r.params, params, rtol=1e-7)
    dH = m.enthalpy(r.T_m, np.array(params))
    assert r.enthalpy.nominal_value == pytest.approx(dH, rel=1e-7)


def test_enthalpy_formulas():
    # CC: ΔH = -R b ; ΔCp: ΔH(T) = R (c T - b); Antoine: R b T^2/(T + C)^2
    assert MODELS["clausius_clapeyron"].enthalpy(300.0, (1.0, -5000.0)) == pytest.approx(5000 * R)
    assert MODELS["constant_dcp"].enthalpy(300.0, (1.0, -7000.0, -5.0)) == pytest.approx(
        R * (-5.0 * 300 + 7000))
    assert MODELS["antoine"].enthalpy(300.0, (1.0, 3900.0, -45.0)) == pytest.approx(
        R * 3900 * 300**2 / 255**2)


def test_weighted_straight_line_by_hand():
    """Weighted least squares with the closed-form formulas (e.g. Bevington &
    Robinson, Data Reduction and Error Analysis, 3rd ed., eq. 6.12)."""
    rng = np.random.default_rng(1)
    x = 1 / T
    sig = np.linspace(0.01, 0.05, len(T))
    y = 20 - 4000 * x + rng.normal(0, sig)
    w = 1 / sig**2
    S, Sx, Sy = w.sum(), (w * x).sum(), (w * y).sum()
    Sxx, Sxy = (w * x * x).sum(), (w * x * y).sum()
    D = S * Sxx - Sx**2
    b = (S * Sxy - Sx * Sy) / D
    a = (Sxx * Sy - Sx * Sxy) / D
    r = fit_points(T, y, weighting="weighted", cov_y=np.diag(sig**2))
    assert r.params[0] == pytest.approx(a, rel=1e-10)
    assert r.params[1] == pytest.approx(b, rel=1e-10)
    if not r.scaled:
        assert np.sqrt(r.cov[1, 1]) == pytest.approx(np.sqrt(S / D), rel=1e-10)


def test_excluded_points_keep_residuals_and_stay_out():
    y = 20 - 4000 / T
    y2 = y.copy()
    y2[3] += 1.0
    inc = np.ones(len(T), bool)
    inc[3] = False
    r = fit_points(T, y2, include=inc, weighting="ordinary")
    assert r.params[1] == pytest.approx(-4000, rel=1e-9)
    assert r.residuals[3] == pytest.approx(1.0, rel=1e-6)
    assert np.isnan(r.leverage[3]) and np.isnan(r.loo_enthalpy[3])


def test_boiling_point_inverts_the_line():
    a, b = 25.0, -5200.0
    r = fit_points(T, a + b / T + np.array([0, 1, -1, 0, 1, -1, 0, 0]) * 1e-3,
                   weighting="ordinary")
    Tb = r.boiling_point(101325.0)
    assert Tb.nominal_value == pytest.approx(r.params[1] / (np.log(101325.0) - r.params[0]))
    assert Tb.std_dev > 0


def test_chi2_scaling_rule():
    sig = 0.01
    rng = np.random.default_rng(3)
    y = 20 - 4000 / T + rng.normal(0, 5 * sig, len(T))  # scatter 5x the stated uncertainty
    r = fit_points(T, y, weighting="weighted", cov_y=np.eye(len(T)) * sig**2)
    assert r.scaled and r.chi2_reduced > 5
    y = 20 - 4000 / T + rng.normal(0, 0.2 * sig, len(T))
    r = fit_points(T, y, weighting="weighted", cov_y=np.eye(len(T)) * sig**2)
    assert not r.scaled


@pytest.mark.parametrize("name,n", [("clausius_clapeyron", 1), ("antoine", 2),
                                    ("constant_dcp", 2)])
def test_too_few_points(name, n):
    with pytest.raises(FitError) as info:
        fit_points(T[:n], -4000 / T[:n], model=name, weighting="ordinary")
    assert info.value.n_points == n


def test_ill_conditioned_antoine_warns():
    """Antoine from 5 noisy points over 35 K cannot fix C."""
    rng = np.random.default_rng(5)
    t = np.linspace(298.15, 333.15, 5)
    y = MODELS["antoine"].f(t, (23.5, 3900.0, -45.0)) + rng.normal(0, 0.01, 5)
    r = fit_points(t, y, model="antoine", weighting="weighted", cov_y=np.eye(5) * 1e-4)
    assert any("ill-conditioned" in w for w in r.warnings)
    r_cc = fit_points(t, y, weighting="weighted", cov_y=np.eye(5) * 1e-4)
    assert not r_cc.warnings
