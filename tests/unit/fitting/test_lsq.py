"""Batched least-squares algebra against numpy.linalg (LAPACK) and explicit refits.

Expected values are computed independently in each test: numpy.linalg's
Cholesky, solve and lstsq, and leave-one-out fits redone from scratch with the
marginal covariance of the remaining points (Cook & Weisberg 1982, section 2.2).
"""

import numpy as np

from vpkit.fitting import lsq

rng = np.random.default_rng(3)


def spd(B, N):
    A = rng.normal(size=(B, N, N))
    return A @ np.swapaxes(A, -1, -2) + N * np.eye(N)


def test_cholesky_matches_lapack_and_flags_failures():
    C = spd(50, 7)
    L, ok = lsq.cholesky(C)
    np.testing.assert_allclose(L, np.linalg.cholesky(C), rtol=1e-12, atol=1e-12)
    assert ok.all()
    bad = C.copy()
    bad[3] = -np.eye(7)
    bad[5, 0, 0] = np.nan
    L2, ok2 = lsq.cholesky(bad)
    assert list(np.flatnonzero(~ok2)) == [3, 5]
    np.testing.assert_array_equal(L2[3], np.eye(7))


def test_forward_solve_per_problem_and_shared():
    C = spd(20, 6)
    L = np.linalg.cholesky(C)
    B = rng.normal(size=(20, 6, 3))
    np.testing.assert_allclose(lsq.forward_solve(L, B), np.linalg.solve(L, B), rtol=1e-10)
    np.testing.assert_allclose(lsq.forward_solve(L[0], B), np.linalg.solve(L[0], B),
                               rtol=1e-10)


def test_least_squares_matches_lapack():
    X = rng.normal(size=(30, 9, 3))
    y = rng.normal(size=(30, 9))
    out = lsq.lstsq(X, y)
    for b in range(30):
        np.testing.assert_allclose(out["theta"][b], np.linalg.lstsq(X[b], y[b], rcond=None)[0],
                                   rtol=1e-10)
    np.testing.assert_allclose(out["Q"] @ out["R"], X, atol=1e-12)
    np.testing.assert_allclose(np.swapaxes(out["Q"], 1, 2) @ out["Q"],
                               np.broadcast_to(np.eye(3), (30, 3, 3)), atol=1e-12)
    X[0, :, 2] = X[0, :, 1]  # dependent columns are reported, not solved
    assert not lsq.lstsq(X, y)["rank_ok"][0]


def test_damped_step_tends_to_least_squares():
    J = rng.normal(size=(5, 8, 3))
    r = rng.normal(size=(5, 8))
    step, pred = lsq.damped_step(J, r, np.full(5, 1e-14), np.ones((5, 3)))
    np.testing.assert_allclose(step, lsq.lstsq(J, r)["theta"], rtol=1e-8)
    assert np.all(pred > 0)
    big, _ = lsq.damped_step(J, r, np.full(5, 1e8), np.ones((5, 3)))
    assert np.all(np.abs(big) < 1e-6 * np.abs(step).max())


def test_leave_one_out_equals_refits_with_the_marginal_covariance():
    N, p = 7, 2
    x = np.linspace(0, 1, N)
    X = np.stack([np.ones(N), x], 1)[None]
    y = (1.0 + 2.0 * x + rng.normal(0, 0.1, N))[None]
    C = spd(1, N) * 0.01
    L = np.linalg.cholesky(C)
    W = np.linalg.inv(L)
    fit = lsq.lstsq(W @ X, (W @ y[..., None])[..., 0])
    rw = (W[0] @ (y[0] - X[0] @ fit["theta"][0]))[None]
    mask = np.ones((1, N), bool)
    dth = lsq.leave_one_out(fit["Q"], fit["R"], W, rw, mask)
    for k in range(N):
        keep = np.arange(N) != k
        Ck = C[0][np.ix_(keep, keep)]
        Pk = np.linalg.inv(Ck)
        Xk, yk = X[0][keep], y[0][keep]
        th = np.linalg.solve(Xk.T @ Pk @ Xk, Xk.T @ Pk @ yk)
        np.testing.assert_allclose(fit["theta"][0] + dth[0, k], th, rtol=1e-9)
    assert dth.shape == (1, N, p)




def test_qr_factors_a_stack_and_each_problem_alone_alike():
    """Thin QR by modified Gram-Schmidt: Q R = A, QᵀQ = I (checked against numpy's
    LAPACK QR up to column signs), a zero column gives a zero R diagonal, and one
    problem's factors are bit for bit the same alone or inside a stack of 500."""
    rng = np.random.default_rng(5)
    A = rng.normal(size=(500, 8, 3))
    Q, R = lsq.qr_mgs(A)
    assert np.allclose(Q @ R, A, atol=1e-12)
    assert np.allclose(np.swapaxes(Q, -1, -2) @ Q, np.eye(3), atol=1e-12)
    R_ref = np.linalg.qr(A)[1]
    assert np.allclose(np.abs(R), np.abs(R_ref), atol=1e-10)
    Q1, R1 = lsq.qr_mgs(A[17:18])
    assert np.array_equal(Q1[0], Q[17]) and np.array_equal(R1[0], R[17])
    Z = A[:2].copy()
    Z[0, :, 1] = 0.0
    Qz, Rz = lsq.qr_mgs(Z)
    assert Rz[0, 1, 1] == 0.0 and np.all(Qz[0, :, 1] == 0.0)
