"""Fit models: each formula's derivatives against finite differences of the formula
itself, the inverse (boiling point) against the forward formula, and the Antoine
start on exact data. The formulas are those of Clausius-Clapeyron, Kirchhoff and
Antoine as written in vpkit.fitting.models (sources there)."""

import numpy as np
import pytest

from vpkit.constants import R
from vpkit.fitting.models import MODELS, get_model

PARAMS = {"clausius_clapeyron": (25.0, -5200.0), "constant_dcp": (60.0, -7000.0, -5.0),
          "antoine": (23.5, 3900.0, -45.0)}
T = np.linspace(290.0, 350.0, 7)


@pytest.mark.parametrize("name", MODELS)
def test_derivatives_match_finite_differences(name):
    m, th = MODELS[name], np.array(PARAMS[name])
    h = 1e-4
    np.testing.assert_allclose(m.df_dT(T, th), (m.f(T + h, th) - m.f(T - h, th)) / (2 * h),
                               rtol=1e-7)
    np.testing.assert_allclose(m.d2f_dT2(T, th),
                               (m.df_dT(T + h, th) - m.df_dT(T - h, th)) / (2 * h), rtol=1e-6)
    for k in range(m.n_params):
        e = np.zeros(m.n_params)
        e[k] = 1e-6 * max(abs(th[k]), 1.0)
        num = (m.f(T, th + e) - m.f(T, th - e)) / (2 * e[k])
        np.testing.assert_allclose(m.jac(T, th)[:, k], num, rtol=1e-6, atol=1e-12)
        num_dT = (m.df_dT(T, th + e) - m.df_dT(T, th - e)) / (2 * e[k])
        np.testing.assert_allclose(m.jac_dT(T, th)[:, k], num_dT, rtol=1e-6, atol=1e-15)
    # ΔH = R T^2 df/dT and its T derivative
    np.testing.assert_allclose(m.enthalpy(T, th), R * T**2 * m.df_dT(T, th))
    np.testing.assert_allclose(m.enthalpy_dT(T, th),
                               (m.enthalpy(T + h, th) - m.enthalpy(T - h, th)) / (2 * h),
                               rtol=1e-6, atol=1e-3)  # J/(mol K); exactly 0 for Clausius-Clapeyron


@pytest.mark.parametrize("name", MODELS)
def test_boiling_point_inverts_the_curve_for_a_stack(name):
    m = MODELS[name]
    th = np.array([PARAMS[name], PARAMS[name]])
    th[1, 0] += 0.1
    ln_P = np.array([np.log(101325.0), np.log(50000.0)])
    Tb = m.solve_T(ln_P, th, np.array([320.0, 320.0]))
    np.testing.assert_allclose(m.f(Tb, th), ln_P, rtol=1e-12)


def test_broadcasting_rules():
    m = MODELS["constant_dcp"]
    th = np.array([PARAMS["constant_dcp"]] * 3)
    assert m.f(np.ones((3, 5)) * 300.0, th).shape == (3, 5)
    assert m.f(np.full(3, 300.0), th).shape == (3,)
    assert m.jac(np.ones((3, 5)) * 300.0, th).shape == (3, 5, 3)


def test_antoine_start_recovers_exact_data():
    m = MODELS["antoine"]
    th = np.array(PARAMS["antoine"])
    y = m.f(T, th)
    start = m.start(T[None], y[None], np.ones((1, len(T)), bool))[0]
    assert start[2] == pytest.approx(th[2], abs=0.5)  # golden-section on the profile over C


def test_unknown_model_is_named():
    with pytest.raises(Exception, match="unknown fit model 'cubic'"):
        get_model("cubic")
