"""Array primitives every stage shares: frozen arrays and sums in index order.

A run's numbers must not depend on how much padding its stack has (one run
alone, or padded inside a stack of ten thousand): sums over the points of a
run therefore run strictly in index order (:func:`psum`, :func:`pmatmul`),
never in numpy's pairwise grouping, whose rounding depends on the axis length.
Results are frozen: :func:`readonly` makes an array refuse writes.

References
----------
.. [1] N. J. Higham, "Accuracy and Stability of Numerical Algorithms", 2nd ed.,
   SIAM (2002), section 4.2: the rounding error of a sum depends on the order
   in which its terms are added (recursive versus pairwise summation).
"""

from __future__ import annotations

import numpy as np


def readonly(a, copy: bool = False) -> np.ndarray:
    """``a`` as an array that refuses writes (a copy first with ``copy``): results are frozen."""
    a = np.array(a) if copy else np.asarray(a)
    a.setflags(write=False)
    return a


def psum(x: np.ndarray, axis: int = -1) -> np.ndarray:
    """Sum along ``axis`` in index order, one element after the other.

    numpy's own reductions group the terms by the axis length (unrolled and
    pairwise sums), so trailing zeros of padding would change the rounding; a
    running sum (``cumsum``, strictly sequential) does not. This keeps one
    run's numbers identical whether it is analysed alone or padded inside a
    stack of runs.
    """
    x = np.asarray(x, float)
    n = x.shape[axis]
    if n == 0:
        return np.zeros(np.delete(x.shape, axis % x.ndim))
    if n > 32 or x.size <= 4096:  # small: one call; long axis: no Python loop
        return np.take(np.cumsum(x, axis=axis), -1, axis=axis)
    x = np.moveaxis(x, axis, 0)
    acc = x[0].copy()
    for v in x[1:]:  # the same order as cumsum, without its full-size output
        acc += v
    return acc


def pmatmul(A: np.ndarray, B: np.ndarray) -> np.ndarray:
    """A @ B with the shared axis summed in index order (see :func:`psum`)."""
    acc = A[..., :, 0, None] * B[..., None, 0, :]
    for i in range(1, A.shape[-1]):
        acc += A[..., :, i, None] * B[..., None, i, :]
    return acc


def quad(g: np.ndarray, cov: np.ndarray) -> np.ndarray:
    """Standard uncertainty sqrt(g^T C g) of a linear function with gradient g, batched."""
    return np.sqrt(np.einsum("...i,...ij,...j->...", g, cov, g))
