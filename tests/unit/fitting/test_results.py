"""One data set's fit: uncertain numbers built from the same values and gradients as
the many-set arrays. Expected values: the many-set arrays of
the same fit (they must agree) and the uncertainties package's own propagation."""

import numpy as np
import pytest
import uncertainties

from vpkit.fitting.fit import fit_points

T = np.linspace(298.15, 343.15, 8)
y = 20 - 4000 / T + np.array([0, 1, -1, 0, 2, -1, 0, 1]) * 1e-3


def test_uncertain_numbers_equal_the_stack_arrays():
    r = fit_points(T, y, weighting="ordinary")
    v, u, _ = r.stack.enthalpy()
    assert r.enthalpy.nominal_value == v[0] and r.enthalpy.std_dev == pytest.approx(u[0],
                                                                                   rel=1e-12)
    Tb, uTb, _, _ = r.stack.boiling_point(101325.0)
    b = r.boiling_point(101325.0)
    assert b.nominal_value == pytest.approx(Tb[0], rel=1e-14)
    assert b.std_dev == pytest.approx(uTb[0], rel=1e-12)


def test_enthalpy_correlates_with_the_parameters():
    r = fit_points(T, y, weighting="ordinary")
    a, b = r.uparams()
    direct = -8.314462618 * b  # ΔH = -R b, propagated by the uncertainties package
    assert r.enthalpy.std_dev == pytest.approx(direct.std_dev, rel=1e-12)
    assert uncertainties.covariance_matrix([r.enthalpy, b])[0][1] < 0


def test_an_uncertain_pressure_adds_to_the_boiling_point():
    r = fit_points(T, y, weighting="ordinary")
    plain = r.boiling_point(101325.0)
    with_p = r.boiling_point(uncertainties.ufloat(101325.0, 500.0))
    assert with_p.std_dev > plain.std_dev
