"""Array primitives (vpkit.arrays): sums in index order, so padding never changes a run's numbers.

Expected values: Python's own left-to-right float sums and numpy's matmul."""

import numpy as np
import pytest

from vpkit.arrays import pmatmul, psum

rng = np.random.default_rng(3)


def test_running_sum_ignores_trailing_padding():
    x = rng.normal(size=(4, 7)) * 10.0 ** rng.integers(-8, 8, (4, 7))
    padded = np.concatenate([x, np.zeros((4, 9))], axis=1)
    np.testing.assert_array_equal(psum(x), psum(padded))
    expected = np.array([sum(float(v) for v in row) for row in x])  # left to right
    np.testing.assert_array_equal(psum(x), expected)


@pytest.mark.parametrize("shape", [(3, 4, 2), (2, 5, 3)])
def test_ordered_matmul(shape):
    A = rng.normal(size=shape)
    B = rng.normal(size=(shape[0], shape[2], 4))
    np.testing.assert_allclose(pmatmul(A, B), A @ B, rtol=1e-12)
