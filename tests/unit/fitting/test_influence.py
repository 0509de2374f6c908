"""Influence of each point (vpkit.fitting.influence): leverage and leave-one-out ΔH_vap.

Expected values: refits made by hand without the point (Cook & Weisberg 1982, 2.2)."""

import numpy as np
import pytest

from vpkit.constants import R
from vpkit.fitting.fit import fit_points

T = np.linspace(298.15, 343.15, 8)


def test_leverage_and_leave_one_out():
    y = 20 - 4000 / T + np.array([0, 0.01, -0.01, 0, 0.02, 0, -0.02, 0.05])
    r = fit_points(T, y, weighting="ordinary")
    X = np.stack([np.ones_like(T), 1 / T], 1)
    H = X @ np.linalg.inv(X.T @ X) @ X.T
    np.testing.assert_allclose(r.leverage, np.diag(H), rtol=1e-8)
    keep = np.arange(len(T)) != 7
    b7 = np.polyfit(1 / T[keep], y[keep], 1)[0]
    assert r.loo_enthalpy[7] == pytest.approx(-R * b7, rel=1e-9)
