"""Batched, masked least-squares algebra: whitening, QR, damped steps, leave-one-out.

Every function works on a stack of B small problems at once (no Python loop
over problems; loops run over the few columns or points). Points left out of
a problem are handled by masks: their rows of the design are zero, and their
covariance block is replaced by the identity with no cross terms, so that the
whitened problem of the other points is exactly their marginal one.

References
----------
.. [1] A. Björck, "Solving linear least squares problems by Gram-Schmidt
   orthogonalization", BIT 7, 1-21 (1967); Å. Björck, C. C. Paige, SIAM J.
   Matrix Anal. Appl. 13, 176-190 (1992): modified Gram-Schmidt applied to the
   augmented matrix [A | b] gives a backward-stable least-squares solution.
.. [2] A. C. Aitken, Proc. R. Soc. Edinburgh 55, 42-48 (1935): generalized
   least squares by whitening with the Cholesky factor of the covariance.
.. [3] R. D. Cook, S. Weisberg, "Residuals and Influence in Regression",
   Chapman & Hall (1982), section 2.2: deleting a case equals fitting a
   mean-shift parameter for it, which gives all leave-one-out fits in closed
   form (here in the whitened frame, so it holds for correlated errors).
.. [4] J. J. Moré, "The Levenberg-Marquardt algorithm: implementation and
   theory", Lecture Notes in Mathematics 630, 105-116 (1978): damped steps
   with diagonal scaling by the column norms of the Jacobian.
"""

from __future__ import annotations

import numpy as np

from ..arrays import pmatmul, psum


def masked_cov(C: np.ndarray, mask: np.ndarray) -> np.ndarray:
    """C with the rows and columns of points not in ``mask`` replaced by identity."""
    pair = mask[..., :, None] & mask[..., None, :]
    eye = np.eye(C.shape[-1], dtype=bool)
    return np.where(pair, C, np.where(eye, 1.0, 0.0))


def cholesky(C: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Lower Cholesky factors of a stack (B, N, N), and which were positive definite.

    Column by column (Cholesky-Crout), vectorised over the stack; each dot
    product runs over the leading columns only, so a run's factor does not
    depend on padding. Where a matrix is not positive definite (or not finite)
    its factor is the identity and ``ok`` is False: no exception, no loop.
    """
    C = np.asarray(C, float)
    B, N, _ = C.shape
    ok = np.all(np.isfinite(C), axis=(-2, -1))
    C = np.where(ok[:, None, None], C, np.eye(N))
    L = np.zeros_like(C)
    for j in range(N):
        s = C[:, j, j] - np.einsum("bk,bk->b", L[:, j, :j], L[:, j, :j])
        good = s > 0
        ok &= good
        d = np.sqrt(np.where(good, s, 1.0))
        L[:, j, j] = d
        if j + 1 < N:
            L[:, j + 1:, j] = (C[:, j + 1:, j] - np.einsum("bik,bk->bi", L[:, j + 1:, :j],
                                                             L[:, j, :j])) / d[:, None]
    L = np.where(ok[:, None, None], L, np.eye(N))
    return L, ok


def forward_solve(L: np.ndarray, B: np.ndarray) -> np.ndarray:
    """L^-1 B for lower-triangular L and B (..., N, k), by forward substitution.

    ``L`` is (B, N, N), one factor per problem, or (N, N), shared by all; a
    shared factor is inverted once and applied as one broadcast matrix product (every
    problem has the same N then, so no padding is summed over).
    """
    if L.ndim == 2:
        W = forward_solve(L[None], np.eye(L.shape[0])[None])[0]
        return W @ B
    X = np.empty(np.broadcast_shapes(L.shape[:-1], B.shape[:-1]) + B.shape[-1:])
    for i in range(L.shape[-1]):
        acc = B[..., i, :] - np.einsum("bj,bjk->bk", L[..., i, :i], X[..., :i, :])
        X[..., i, :] = acc / L[..., i, i, None]
    return X


def qr_mgs(A: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Thin QR of a stack (B, N, k) by modified Gram-Schmidt [1].

    Zero columns (rank deficiency) give a zero diagonal in R and a zero column
    in Q rather than a division by zero. Works on a copy laid out (k, N, B), so
    that every column operation runs over contiguous vectors of the B problems;
    sums over the points still run in index order (:func:`vpkit.arrays.psum`).
    """
    Q = np.array(np.transpose(A, (2, 1, 0)), float, order="C")  # (k, N, B)
    Rm = _mgs_columns(Q)
    return Q.transpose(2, 1, 0), Rm.transpose(2, 0, 1)


def _mgs_columns(Q: np.ndarray) -> np.ndarray:
    """Modified Gram-Schmidt in place on columns laid out (k, N, B); returns R (k, k, B)."""
    k = Q.shape[0]
    Rm = np.zeros((k, k, Q.shape[2]))
    for j in range(k):
        norm = np.sqrt(psum(Q[j] * Q[j], axis=0))
        Rm[j, j] = norm
        pos = norm > 0
        np.divide(Q[j], np.where(pos, norm, 1.0), out=Q[j])
        if not pos.all():
            Q[j][:, ~pos] = 0.0
        if j + 1 < k:
            r = psum(Q[j] * Q[j + 1:], axis=1)  # (k - j - 1, B)
            Rm[j, j + 1:] = r
            Q[j + 1:] -= Q[j] * r[:, None]
    return Rm


def back_solve(Rm: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Rm^-1 b for upper-triangular Rm (B, p, p) and b (B, p), or (B, p, k) for k
    right-hand sides at once (each column as it would be alone)."""
    p = Rm.shape[-1]
    x = np.zeros(b.shape)
    with np.errstate(divide="ignore", invalid="ignore"):
        if b.ndim == Rm.ndim:  # several right-hand sides: one pass over the p rows
            for i in range(p - 1, -1, -1):
                x[..., i, :] = (b[..., i, :] - np.einsum("bj,bjk->bk", Rm[..., i, i + 1:],
                                                         x[..., i + 1:, :])) / Rm[..., i, i, None]
            return x
        for i in range(p - 1, -1, -1):
            x[..., i] = (b[..., i] - np.einsum("bj,bj->b", Rm[..., i, i + 1:], x[..., i + 1:])
                         ) / Rm[..., i, i]
    return x


def upper_inverse(Rm: np.ndarray) -> np.ndarray:
    """Inverse of upper-triangular matrices (B, p, p)."""
    return back_solve(Rm, np.broadcast_to(np.eye(Rm.shape[-1]), Rm.shape))


def lstsq(X: np.ndarray, y: np.ndarray) -> dict:
    """Least squares of a stack: min |X θ - y|, X (B, N, p), y (B, N).

    Columns are scaled to unit norm, then the augmented matrix [X | y] is
    factorised by modified Gram-Schmidt [1].

    Returns
    -------
    dict
        ``theta`` (B, p); ``Q`` (B, N, p) and ``R`` (B, p, p) with X = Q R;
        ``rss`` (B,); ``rank_ok`` (B,) False where a column is (numerically)
        dependent on the others.
    """
    s = np.sqrt(psum(X * X, axis=-2))
    s = np.where(s > 0, s, 1.0)
    B, N, p = X.shape
    Qw = np.empty((p + 1, N, B))  # [X / s | y], laid out for the column operations
    Qw[:p] = np.transpose(X, (2, 1, 0))
    Qw[:p] /= s.T[:, None, :]
    Qw[p] = y.T
    Ra = _mgs_columns(Qw).transpose(2, 0, 1)
    Q = Qw.transpose(2, 1, 0)
    Rs = Ra[:, :p, :p]
    qty = Ra[:, :p, p]
    diag = np.abs(np.einsum("bii->bi", Rs))
    rank_ok = diag.min(axis=1) > 1e-13 * np.maximum(diag.max(axis=1), 1e-300)
    theta = back_solve(np.where(rank_ok[:, None, None], Rs, np.eye(p)), qty) / s
    return {"theta": theta, "Q": Q[..., :p], "R": Rs * s[:, None, :], "rss": Ra[:, p, p] ** 2,
            "rank_ok": rank_ok}


def damped_step(J: np.ndarray, r: np.ndarray, lam: np.ndarray, D: np.ndarray) -> tuple:
    """Levenberg-Marquardt step [4]: min |J δ - r|^2 + λ |D δ|^2, batched.

    Returns the step δ (B, p) and the predicted decrease |r|^2 - |r - J δ|^2.
    """
    aug = np.concatenate([J, np.sqrt(lam)[:, None, None] * (D[:, None, :] * np.eye(
        J.shape[-1]))], axis=1)
    rhs = np.concatenate([r, np.zeros(D.shape)], axis=1)
    step = lstsq(aug, rhs)["theta"]
    res = r - np.einsum("bnp,bp->bn", J, step)
    return step, psum(r * r) - psum(res * res)


def leave_one_out(Q: np.ndarray, Rm: np.ndarray, W: np.ndarray, rw: np.ndarray,
                  mask: np.ndarray) -> np.ndarray:
    """Parameter changes θ_(-k) - θ for every point k left out, in closed form [3].

    Parameters
    ----------
    Q, Rm : ndarray (B, N, p), (B, p, p)
        QR factors of the whitened design W X.
    W : ndarray (B, N, N)
        Whitening matrix (inverse Cholesky factor of the masked covariance).
    rw : ndarray (B, N)
        Whitened residuals W r.
    mask : ndarray of bool (B, N)
        Points in the fit; the others get NaN.

    Returns
    -------
    ndarray (B, N, p)
    """
    G = pmatmul(np.swapaxes(Q, -1, -2), W)  # Q^T W, column k is Q^T w_k
    num = psum(W * rw[..., :, None], axis=-2)  # w_k^T (W r)
    ww = psum(W * W, axis=-2)
    den = ww - psum(G * G, axis=-2)
    with np.errstate(divide="ignore", invalid="ignore"):
        delta = num / den
        ok = mask & (den > 1e-12 * ww)
        shift = np.swapaxes(back_solve(Rm, G), -1, -2)
    return np.where(ok[..., None], -shift * delta[..., None], np.nan)
