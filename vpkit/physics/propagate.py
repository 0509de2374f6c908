"""Uncertainty propagation through the reduction, on a stack of runs.

Every uncertain input of R runs is a column of an (R, m) input matrix
(:class:`InputLayout`): the N bath temperatures, the N readings, the N own
pressures, then the per-run inputs (barometer, room temperature, room
reading, masses, scale offset, density, injected volume, depths, tube bore,
humidity of the injected air). Inputs a run
does not use have zero uncertainty. :func:`jacobian` differentiates ln p_vap
of every point with respect to every input by central differences of the one
reduction (:func:`vpkit.physics.reduce.reduce_chain`), evaluated once on a batch of
perturbed copies. Because a point's own readings enter only that point's
result (except the cold reference's, which fix the air amount), the columns
of one kind are perturbed together and separated exactly afterwards (column
grouping of a sparse Jacobian [3]); the result equals the column-by-column
differences bit for bit. Shared inputs make the points' errors correlated:
the covariance J Σ J^T keeps that [1].

References
----------
.. [1] JCGM 100:2008, "Evaluation of measurement data - Guide to the
   expression of uncertainty in measurement" (GUM), section 5: law of
   propagation of uncertainty, including correlated quantities.
.. [2] JCGM 101:2008, "Propagation of distributions using a Monte Carlo
   method" (GUM Supplement 1).
.. [3] A. R. Curtis, M. J. D. Powell, J. K. Reid, "On the estimation of sparse
   Jacobian matrices", J. Inst. Math. Appl. 13, 117-119 (1974).
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from ..record.stack import RunStack
from .reduce import ReductionSetup, air_reference_temperature, reduce_chain

POINT_INPUTS = ("T", "reading", "P")
SCALAR_INPUTS = ("P_bar", "T_room", "room_reading", "mass_before", "mass_after",
                 "scale_offset", "density", "V_injected", "depth", "room_depth", "bore", "RH",
                 "ref_rel")
_STACK_SCALAR = {k: k for k in SCALAR_INPUTS if k not in ("density", "ref_rel")}


@dataclass(frozen=True)
class InputLayout:
    """The uncertain inputs of R runs as columns of an (R, m) matrix.

    Columns: ``T[i]``, ``reading[i]``, ``P[i]`` for i < N, then
    :data:`SCALAR_INPUTS`. ``nominal`` and ``sigma`` are in SI; ``sigma`` is 0
    for inputs a run does not use (and for padding).
    """

    N: int
    nominal: np.ndarray
    sigma: np.ndarray

    @property
    def names(self) -> tuple[str, ...]:
        return tuple(f"{k}[{i}]" for k in POINT_INPUTS for i in range(self.N)) + SCALAR_INPUTS

    def column(self, name: str, i: int | None = None) -> int:
        if name in POINT_INPUTS:
            return POINT_INPUTS.index(name) * self.N + int(i)
        return 3 * self.N + SCALAR_INPUTS.index(name)

    def to_mapping(self, U: np.ndarray) -> dict[str, np.ndarray]:
        """Inputs (..., m) -> the reduction's mapping: per point (..., N), per run (...)."""
        N = self.N
        out = {k: U[..., j * N:(j + 1) * N] for j, k in enumerate(POINT_INPUTS)}
        for j, k in enumerate(SCALAR_INPUTS):
            out[k] = U[..., 3 * N + j]
        return out


def build_inputs(stack: RunStack, setup: ReductionSetup, density: np.ndarray,
                 depth: np.ndarray, ref_u_rel=None) -> InputLayout:
    """The input matrix of a stack for a setup: values and standard uncertainties.

    ``density`` (R,) is the liquid density used at the room temperature [kg/m^3]
    (the run's own, or the reference value); ``depth`` (R,) the bubble depth
    used [m] (NaN: none); ``ref_u_rel`` (R,) the relative standard uncertainty of
    a published p_vap at the air reference (0 or NaN where none is taken from a
    curve): the input ``ref_rel``, nominal 0, scales that p_vap by (1 + ref_rel).
    """
    R, N = stack.T.shape
    mask, u, s = stack.mask, stack.u, stack.scalar
    own = mask & ~np.isnan(stack.pressure)
    col = lambda v: np.broadcast_to(np.asarray(v, float)[:, None], (R, N))  # noqa: E731
    nominal = [stack.T, stack.reading, stack.pressure]
    sigma = [np.where(mask, col(u["T"]), 0.0), np.where(mask, col(u["reading"]), 0.0),
             np.where(own, col(u["pressure"]), 0.0)]
    weighing = np.broadcast_to(np.asarray(setup.offset_from_weighing, bool), (R,))
    injected = np.broadcast_to(setup.uses("injected"), (R,))
    use_head = np.broadcast_to(np.asarray(setup.use_head, bool), (R,))
    used = {
        "P_bar": np.ones(R, bool), "T_room": np.ones(R, bool),
        "room_reading": ~np.isnan(s["room_reading"]), "mass_before": weighing,
        "mass_after": weighing, "scale_offset": ~weighing & ~np.isnan(s["scale_offset"]),
        "density": np.ones(R, bool),
        "V_injected": injected,
        "depth": use_head & ~np.isnan(depth),
        "room_depth": np.broadcast_to(setup.uses("weighed"), (R,))
        & np.broadcast_to(np.asarray(setup.room_head, bool), (R,)) & ~np.isnan(s["room_depth"]),
        "bore": ((use_head & ~np.isnan(depth)) | stack.length_readings) & ~np.isnan(s["bore"]),
        "RH": injected
        & np.broadcast_to(np.asarray(setup.moisture_dissolves, bool), (R,)) & ~np.isnan(s["RH"]),
    }
    unc = {k: u[k] for k in _STACK_SCALAR}
    unc["density"] = density * u["density_relative"]
    unc["ref_rel"] = np.zeros(R) if ref_u_rel is None else np.asarray(ref_u_rel, float)
    used["ref_rel"] = np.isfinite(unc["ref_rel"])
    for k in SCALAR_INPUTS:
        value = {"density": density, "depth": depth, "ref_rel": np.zeros(R)}.get(k)
        value = s[_STACK_SCALAR[k]] if value is None else value
        nominal.append(np.asarray(value, float)[:, None])
        sigma.append(np.where(used[k], unc[k], 0.0)[:, None])
    sig = np.concatenate(sigma, axis=1)
    nom = np.concatenate(nominal, axis=1)
    sig = np.where(np.isfinite(sig), sig, 0.0)
    nom.setflags(write=False)
    sig.setflags(write=False)
    return InputLayout(N, nom, sig)


def step_sizes(layout: InputLayout) -> np.ndarray:
    """Finite-difference steps: small against both the value and its uncertainty."""
    scale = np.maximum(np.abs(np.nan_to_num(layout.nominal)) * 1e-7, layout.sigma * 1e-4)
    return np.where(scale > 0, scale, 1e-12)


@dataclass(frozen=True)
class ReferenceAtAir:
    """How p_vap at the air-reference temperature is set, per run.

    ``curve(T_ref)`` gives the published value for runs where ``from_curve``
    is True (it then follows perturbed temperatures); the other runs use
    ``fixed`` [Pa] (0 when neglected, the self-consistent value otherwise).
    """

    curve: Callable[[np.ndarray], np.ndarray] | None
    from_curve: np.ndarray
    fixed: np.ndarray

    def values(self, T_ref: np.ndarray, extra: np.ndarray | float = 0.0) -> np.ndarray:
        fixed = self.fixed.reshape(self.fixed.shape + (1,) * (T_ref.ndim - 1))
        if self.curve is None or not self.from_curve.any():
            return fixed + extra
        use = self.from_curve.reshape(fixed.shape)
        return np.where(use, self.curve(T_ref), fixed) + extra


def evaluate(layout: InputLayout, setup: ReductionSetup, U: np.ndarray, p_ref: ReferenceAtAir,
             p_shift=0.0) -> dict:
    """Run the reduction on inputs U (R, K, m) (or (R, m)); adds ``T`` and ``T_ref``."""
    x = layout.to_mapping(U)
    T_ref = air_reference_temperature(x, setup)
    out = reduce_chain(x, setup, p_ref.values(T_ref, p_shift) * (1.0 + x["ref_rel"]))
    out["T"] = x["T"]
    out["T_ref"] = T_ref
    return out


def jacobian(layout: InputLayout, setup: ReductionSetup, p_ref: ReferenceAtAir,
             mask: np.ndarray) -> tuple[dict, np.ndarray, np.ndarray]:
    """Nominal reduction, d ln p/d inputs (R, N, m) and d ln p/d p_ref (R, N).

    Central differences of the reduction, all runs and inputs in one batch
    (columns of one kind grouped, see the module docstring).
    """
    R, m = layout.nominal.shape
    N = layout.N
    h = step_sizes(layout)
    dirs = []  # (R, m) perturbation of each direction
    cold = np.broadcast_to(setup.uses("cold"), (R,))
    c = np.broadcast_to(np.asarray(setup.cold_index, int), (R,))
    cr = np.flatnonzero(cold)  # runs with a cold reference: its readings move every point
    for k in range(len(POINT_INPUTS)):
        cols = slice(k * N, (k + 1) * N)
        if not layout.sigma[:, cols].any():
            continue
        d = np.zeros((R, m))
        d[:, cols] = h[:, cols] * mask
        d[cr, k * N + c[cr]] = 0.0
        dirs.append(("group", k, d))
        if cr.size:  # after the group: its column of the cold point overwrites the group's
            e = np.zeros((R, m))
            e[cr, k * N + c[cr]] = h[cr, k * N + c[cr]] * mask[cr, c[cr]]
            dirs.append(("cold", k, e))
    for j in range(3 * N, m):
        if layout.sigma[:, j].any():
            d = np.zeros((R, m))
            d[:, j] = h[:, j]
            dirs.append(("scalar", j, d))
    K = 2 * len(dirs) + 1
    U = np.empty((R, K, m))
    U[...] = layout.nominal[:, None, :]
    for q, (_, _, d) in enumerate(dirs):
        U[:, 2 * q] += d
        U[:, 2 * q + 1] -= d
    out = evaluate(layout, setup, U, p_ref)
    with np.errstate(invalid="ignore", divide="ignore"):
        lnp = np.log(out["p_vap"])
    J = np.zeros((R, N, m))
    with np.errstate(invalid="ignore", divide="ignore"):
        for q, (kind, k, _) in enumerate(dirs):
            diff = lnp[:, 2 * q] - lnp[:, 2 * q + 1]
            if kind == "group":
                cols = np.arange(k * N, (k + 1) * N)
                J[:, np.arange(N), cols] = diff / (2 * h[:, cols])
            elif kind == "cold":
                j = k * N + c[cr]
                J[cr, :, j] = diff[cr] / (2 * h[cr, j])[:, None]
            else:
                J[:, :, k] = diff / (2 * h[:, k])[:, None]
    J = np.where((layout.sigma[:, None, :] > 0) & mask[:, :, None], J, 0.0)
    nominal = {key: v[:, -1] for key, v in out.items()}
    # derivative in p_ref (for the self-consistent air amount)
    hp = np.maximum(np.abs(p_ref.values(nominal["T_ref"])) * 1e-6, 1e-3)
    U2 = np.empty((R, 2, m))
    U2[...] = layout.nominal[:, None, :]
    two = evaluate(layout, setup, U2, p_ref, np.stack([hp, -hp], axis=1))
    with np.errstate(invalid="ignore", divide="ignore"):
        lp = np.log(two["p_vap"])
        J_pref = (lp[:, 0] - lp[:, 1]) / (2 * hp)[:, None]
    return nominal, J, np.where(mask, J_pref, 0.0)


def covariances(layout: InputLayout, J: np.ndarray, temperature_errors: bool = True,
                cold_index=None, J_pref=None, dp_du=None):
    """cov(ln p), cov(ln p, T), cov(T), each (R, N, N), from J (R, N, m) and Σ.

    J Σ J^T computed by structure: a point's own readings give the diagonal;
    the shared inputs (and, for a cold reference, that point's readings) give
    dense columns D and the term D D^T. A self-consistent p_ref adds
    J_pref ⊗ dp_ref/du to J (``J_pref`` (R, N), ``dp_du`` (R, m)), entered here
    as its rank-one terms. Sums run over fixed-length axes in index order, so
    padding a run inside a stack does not change its numbers.
    """
    from ..arrays import pmatmul, psum

    N = layout.N
    R = J.shape[0]
    sig = layout.sigma
    i = np.arange(N)
    rows = np.arange(R)
    dense = [J[:, :, 3 * N:] * sig[:, None, 3 * N:]]
    weights = [(sig * (0.0 if dp_du is None else dp_du))[:, 3 * N:]]
    diag = np.zeros((R, N))
    cross = np.zeros((R, N))  # J Σ dp/du, the own-reading part
    for k in range(3):
        cols = k * N + i
        own = J[:, i, cols] * sig[:, cols]
        if cold_index is not None:  # -1: the run has no cold reference
            ci = np.asarray(cold_index, int)
            has, c = ci >= 0, np.maximum(ci, 0)
            col = np.where(has[:, None], J[rows, :, k * N + c] * sig[rows, k * N + c][:, None],
                           0.0)
            dense.append(col[:, :, None])
            if dp_du is not None:
                weights.append(np.where(has, sig[rows, k * N + c] * dp_du[rows, k * N + c],
                                        0.0)[:, None])
            else:
                weights.append(np.zeros((R, 1)))
            own = own.copy()
            own[rows[has], c[has]] = 0.0
        diag = diag + own * own
        if dp_du is not None:
            cross = cross + own * sig[:, cols] * dp_du[:, cols]
    D = np.concatenate(dense, axis=-1)
    cov_y = pmatmul(D, np.swapaxes(D, -1, -2)) + diag[:, :, None] * np.eye(N)
    if dp_du is not None and np.any(dp_du):
        a = cross + psum(D * np.concatenate(weights, axis=-1)[:, None, :], axis=-1)
        v = psum((sig * dp_du) ** 2)
        cov_y = (cov_y + a[:, :, None] * J_pref[:, None, :] + J_pref[:, :, None] * a[:, None, :]
                 + v[:, None, None] * J_pref[:, :, None] * J_pref[:, None, :])
    J_T = J[:, :, :N] if dp_du is None else J[:, :, :N] + J_pref[:, :, None] * dp_du[:, None, :N]
    if not temperature_errors:
        return cov_y, None, None
    sT2 = sig[:, :N] ** 2
    cov_yT = J_T * sT2[:, None, :]
    cov_T = sT2[:, :, None] * np.eye(N)
    return cov_y, cov_yT, cov_T
