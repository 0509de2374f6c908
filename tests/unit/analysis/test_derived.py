"""Derived results: ΔS_vap at T_b, the T_b extrapolation bias and Trouton's bands,
checked by hand against Kirchhoff's integrated equation (ln p with constant ΔCp) and
the bands stated in vpkit.analysis.derived (common practice, no source). Checks against
reference equations of state are in tests/reference/test_derived_results.py."""

import math

import numpy as np
import pytest
from scipy.optimize import brentq

from vpkit.analysis.derived import (
    DCP_ASSUMED,
    DZ_ASSUMED,
    boiling_point_bias,
    entropy_at_boiling,
    trouton_verdict,
)
from vpkit.constants import R
from vpkit.fitting.fit import fit_stack
from vpkit.physics.curves import CurveSet

T = np.linspace(298.15, 333.15, 8)
dH, Tb_line = 32000.0, 350.0
b = -dH / R
a = math.log(101325.0) - b / Tb_line


def _cc_fit():
    y = a + b / T
    return fit_stack("clausius_clapeyron", T[None], y[None], weighting="ordinary",
                     cov_y=np.eye(8)[None] * 1e-6)


def test_entropy_of_a_line_without_curve_uses_the_assumed_dcp_and_dz():
    fit = _cc_fit()
    out = entropy_at_boiling(fit, ["unobtainium"], CurveSet([None]))
    T_m = fit.T_m[0]
    H = dH + DCP_ASSUMED * (Tb_line - T_m)  # Kirchhoff: ΔH(T_b) = ΔH(T_m) + ΔCp (T_b - T_m)
    assert out["T_b"][0] == pytest.approx(Tb_line, rel=1e-9)
    assert out["value"][0] == pytest.approx(H * DZ_ASSUMED / Tb_line, rel=1e-9)
    assert out["carried_by"][0] == "assumed ΔCp"
    assert out["u"][0] > 30.0 * (Tb_line - T_m) * DZ_ASSUMED / Tb_line  # carries u(ΔCp)


def test_bias_of_a_line_against_the_assumed_dcp_curve():
    """The curve through the line at T_m with ΔCp = DCP_ASSUMED, written out as
    Kirchhoff's integrated equation and solved by brentq."""
    fit = _cc_fit()
    T_m = fit.T_m[0]
    c = DCP_ASSUMED / R
    ln_m = a + b / T_m

    def curve(t):
        return ln_m - dH / R * (1 / t - 1 / T_m) + c * (math.log(t / T_m) + T_m / t - 1)

    Tb_true = brentq(lambda t: curve(t) - math.log(101325.0), 300, 450)
    out = boiling_point_bias(fit, CurveSet([None]), 101325.0, None)
    assert out["bias"][0] == pytest.approx(Tb_line - Tb_true, abs=1e-6)
    assert out["bias"][0] < 0 and out["from"][0] == "assumed ΔCp"
    assert out["u"][0] == pytest.approx(abs(out["bias"][0]) * 30 / 50, rel=1e-9)


def test_curved_model_without_curve_has_no_bias_estimate():
    y = a + b / T + 0.5 * np.log(T)
    fit = fit_stack("constant_dcp", T[None], y[None], weighting="ordinary",
                    cov_y=np.eye(8)[None] * 1e-6)
    out = boiling_point_bias(fit, CurveSet([None]), 101325.0, None)
    assert math.isnan(out["bias"][0]) and out["from"][0] == ""
    ent = entropy_at_boiling(fit, ["unobtainium"], CurveSet([None]))
    Tb = ent["T_b"][0]
    assert ent["carried_by"][0] == "model"
    assert ent["value"][0] == pytest.approx(
        float(fit.model.enthalpy(Tb, fit.params[0])) * DZ_ASSUMED / Tb, rel=1e-9)


@pytest.mark.parametrize("v,u,word", [(86.0, 1.0, "within Trouton"),
                                      (92.2, 0.5, "within Trouton"),
                                      (110.0, 2.0, "within the hydrogen-bonded range"),
                                      (97.5, 0.5, "outside"), (70.0, 1.0, "outside"),
                                      (97.0, 3.0, "too uncertain"),
                                      (72.7, 5.9, "consistent, within 2u, with Trouton")])
def test_trouton_bands(v, u, word):
    """The text says whether the value is inside a band or only within 2u of it (issue
    "newcomer": 72.7 ± 5.9 once read "within Trouton's rule (80-95)")."""
    assert word in trouton_verdict(v, u)
    assert trouton_verdict(float("nan"), 1.0) == ""
    assert "within Trouton" not in trouton_verdict(72.7, 5.9)


def test_trouton_verdict_batched_equals_one_at_a_time():
    """The table's column is the same function on arrays: equal, value by value, to the
    scalar calls (bands as stated in vpkit.analysis.derived; common practice, no source)."""
    v = np.array([86.0, 92.2, 110.0, 97.5, 70.0, 97.0, 72.7, np.nan, 101.0])
    u = np.array([1.0, 0.5, 2.0, 0.5, 1.0, 3.0, 5.9, 1.0, np.nan])
    many = trouton_verdict(v, u)
    assert many.shape == v.shape and many.dtype == object
    assert list(many) == [trouton_verdict(float(x), float(y)) for x, y in zip(v, u)]
    assert many[7] == "" and many[8] == "" and "within Trouton" in many[0]
