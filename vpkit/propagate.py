"""Uncertainty propagation through the reduction: linear (Jacobian) and Monte Carlo.

The reduction (:func:`vpkit.reduce.reduce_chain`) is evaluated once on a batch
of perturbed input vectors; central differences give the Jacobian of every
ln p_vap and T with respect to every uncertain input. Shared inputs (the
barometric pressure, the masses, the density, the room temperature) make the
points' errors correlated; the covariance J Σ J^T keeps that, and
:func:`uncertainties.correlated_values` turns it into numbers a user can carry
on with. Monte Carlo draws the same inputs from their normal distributions.

References
----------
.. [1] JCGM 100:2008, "Evaluation of measurement data - Guide to the
   expression of uncertainty in measurement" (GUM), section 5: law of
   propagation of uncertainty, including correlated quantities.
.. [2] JCGM 101:2008, "Propagation of distributions using a Monte Carlo
   method" (GUM Supplement 1).
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from .reduce import ReductionSetup, air_reference_temperature, reduce_chain
from .run import RunSI


@dataclass(frozen=True)
class InputVector:
    """The uncertain inputs of one run, flattened.

    Attributes
    ----------
    names : tuple of str
        A label per entry, e.g. ``"T[3]"``, ``"P_bar"``.
    fields : tuple of (str, int or None)
        Where each entry goes: field of the input mapping and point index.
    nominal, sigma : ndarray
        Values and standard uncertainties in SI.
    n_points : int
    """

    names: tuple[str, ...]
    fields: tuple[tuple[str, int | None], ...]
    nominal: np.ndarray
    sigma: np.ndarray
    n_points: int

    def to_mapping(self, U: np.ndarray) -> dict[str, np.ndarray]:
        """Rows of U (B, m) -> the reduction's input mapping with batch shape (B,)."""
        B = U.shape[0]
        out: dict[str, np.ndarray] = {}
        for j, (name, i) in enumerate(self.fields):
            if i is None:
                out[name] = U[:, j]
            else:
                out.setdefault(name, np.empty((B, self.n_points)))[:, i] = U[:, j]
        return out


def build_inputs(si: RunSI, setup: ReductionSetup, density: float) -> InputVector:
    """The input vector of a run for a given setup (only inputs the setup uses)."""
    n = len(si.T)
    names, fields, nom, sig = [], [], [], []

    def add(label, field, index, value, sigma):
        names.append(label)
        fields.append((field, index))
        nom.append(float(value))
        sig.append(float(sigma))

    for i in range(n):
        add(f"T[{i}]", "T", i, si.T[i], si.u["T"])
    for i in range(n):
        add(f"reading[{i}]", "reading", i, si.reading[i], si.u["reading"])
    for i in range(n):
        if np.isnan(si.pressure[i]):
            # the point sees the barometric pressure: tie it to P_bar below
            continue
        add(f"P[{i}]", "P", i, si.pressure[i], si.u["pressure"])
    add("P_bar", "P_bar", None, si.P_bar, si.u["P_bar"])
    add("T_room", "T_room", None, si.T_room, si.u["T_room"])
    if si.room_reading is not None:
        add("room_reading", "room_reading", None, si.room_reading, si.u["room_reading"])
    if setup.offset_from_weighing:
        add("mass_before", "mass_before", None, si.mass_before, si.u["mass_before"])
        add("mass_after", "mass_after", None, si.mass_after, si.u["mass_after"])
    else:
        add("scale_offset", "scale_offset", None, si.scale_offset, si.u["scale_offset"])
    add("density", "density", None, density, density * si.u["density_relative"])
    if setup.air_from == "injected":
        add("V_injected", "V_injected", None, si.V_injected, si.u["V_injected"])
    if setup.use_head and si.depth is not None:
        add("depth", "depth", None, si.depth, si.u["depth"])
    return InputVector(tuple(names), tuple(fields), np.array(nom), np.array(sig), n)


def complete_mapping(x: dict[str, np.ndarray], si: RunSI) -> dict[str, np.ndarray]:
    """Fill per-point pressures that follow the barometric pressure."""
    B = x["P_bar"].shape[0]
    n = len(si.T)
    P = x.get("P")
    own = ~np.isnan(si.pressure)
    full = np.empty((B, n))
    full[:, ~own] = x["P_bar"][:, None]
    if own.any():
        full[:, own] = P[:, own]
    x = dict(x)
    x["P"] = full
    return x


def evaluate(iv: InputVector, si: RunSI, setup: ReductionSetup, U: np.ndarray, p_ref) -> dict:
    """Run the reduction on every row of U (B, m) with p_ref (B,) or a callable of T_ref."""
    x = complete_mapping(iv.to_mapping(U), si)
    if callable(p_ref):
        p_ref = p_ref(air_reference_temperature(x, setup))
    out = reduce_chain(x, setup, p_ref)
    out["T"] = x["T"]
    out["T_ref"] = air_reference_temperature(x, setup)
    return out


def central_jacobian(func: Callable[[np.ndarray], np.ndarray], x0: np.ndarray,
                     steps: np.ndarray) -> np.ndarray:
    """Jacobian of a batched function by central differences.

    ``func`` maps (B, m) -> (B, k); returns (k, m).
    """
    m = len(x0)
    U = np.repeat(x0[None, :], 2 * m, axis=0)
    idx = np.arange(m)
    U[2 * idx, idx] += steps
    U[2 * idx + 1, idx] -= steps
    F = func(U)
    with np.errstate(invalid="ignore"):  # impossible points give NaN rows, flagged elsewhere
        return ((F[0::2] - F[1::2]) / (2 * steps[:, None])).T


def step_sizes(iv: InputVector) -> np.ndarray:
    """Finite-difference steps: small against both the value and its uncertainty."""
    scale = np.maximum(np.abs(iv.nominal) * 1e-7, iv.sigma * 1e-4)
    return np.where(scale > 0, scale, 1e-12)
