"""The parameter solve shared by every fit: exact recovery for every model with a
shared or per-set whitening, and sets that cannot be solved are reported. Expected
values are the parameters the data were made from (the model formula itself)."""

import numpy as np
import pytest

from vpkit.fitting.models import MODELS
from vpkit.fitting.solve import solve_stack

PARAMS = {"clausius_clapeyron": (25.0, -5200.0), "constant_dcp": (60.0, -7000.0, -5.0),
          "antoine": (23.5, 3900.0, -45.0)}


@pytest.mark.parametrize("name", MODELS)
def test_exact_recovery_with_shared_and_own_weights(name):
    m = MODELS[name]
    T = np.tile(np.linspace(290.0, 360.0, 9), (4, 1))
    th = np.array(PARAMS[name])
    y = m.f(T, th)
    L = np.linalg.cholesky(np.diag(np.linspace(1, 2, 9)) * 1e-4)
    mask = np.ones(T.shape, bool)
    for chol in (L, np.broadcast_to(L, (4, 9, 9))):
        got, ok = solve_stack(m, T, y, mask, chol)
        assert ok.all()
        np.testing.assert_allclose(got, np.broadcast_to(th, got.shape), rtol=1e-7)


def test_sets_that_cannot_be_solved_are_flagged_not_guessed():
    m = MODELS["clausius_clapeyron"]
    T = np.tile(np.linspace(290.0, 330.0, 5), (3, 1))
    y = m.f(T, np.array(PARAMS["clausius_clapeyron"]))
    mask = np.ones(T.shape, bool)
    mask[1, 1:] = False  # one point left
    y[2, 2] = np.nan  # an included point without ln p
    th, ok = solve_stack(m, T, y, mask, np.eye(5))
    assert list(ok) == [True, False, False]
    assert np.isnan(th[1:]).all()
