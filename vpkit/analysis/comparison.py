"""Comparison of measured vapor pressures and fits with a published curve.

Per point, the deviation from the curve in %; per run, the curve's own apparent
ΔH_vap at the fit's T_m and its least-squares chord over the same temperatures
(like compared with like), where it boils, and which points lie outside its
validity range.

References
----------
.. [1] The curves and their sources: :mod:`vpkit.physics.curves`.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .. import display as D
from ..arrays import psum
from ..constants import P_STANDARD, R
from ..physics.curves import CurveSet, ReferenceCurve


def compare_stack(curves: CurveSet, T, p, include, T_m) -> dict:
    """Compare R runs with their curves (a :class:`CurveSet`).

    Returns arrays: ``deviation_percent`` (R, N) = 100 (p / p_ref - 1);
    ``enthalpy`` (R,) the curve's apparent ΔH_vap at T_m [J/mol]; ``chord``
    (R,) -R times the least-squares slope of the curve's ln p against 1/T over
    the included temperatures [J/mol]; ``boiling`` (R,) where the curve
    reaches 101.325 kPa [K]; ``outside`` (R, N) points outside the validity
    range. NaN (False) for runs without a curve.
    """
    T = np.asarray(T, float)
    include = np.asarray(include, bool)
    if not isinstance(curves, CurveSet):
        curves = CurveSet(curves)
    has = curves.has
    lo, hi = curves.bound("T_min"), curves.bound("T_max")
    ln_ref = curves.ln_p(T)
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        dev = 100.0 * (np.asarray(p, float) / np.exp(ln_ref) - 1.0)
        x = np.where(include, 1.0 / T, 0.0)
        n = include.sum(axis=1)
        xm = psum(x) / n
        ym = psum(np.where(include, ln_ref, 0.0)) / n
        dx = np.where(include, 1.0 / T - xm[:, None], 0.0)
        slope = psum(dx * np.where(include, ln_ref - ym[:, None], 0.0)) / psum(dx * dx)
        outside = has[:, None] & np.isfinite(T) & ((T < lo[:, None]) | (T > hi[:, None]))
    boiling = curves.boiling_point(P_STANDARD)
    return {"deviation_percent": dev, "enthalpy": curves.apparent_enthalpy(T_m),
            "chord": np.where(n >= 2, -R * slope, np.nan), "boiling": boiling,
            "outside": outside}


@dataclass(frozen=True)
class ReferenceComparison:
    """How one run's vapor pressures and fit compare with a reference curve.

    Attributes
    ----------
    curve : ReferenceCurve
    deviation_percent : ndarray
        100 (p_measured / p_reference - 1) per point.
    T_m : float
        Temperature the enthalpies refer to [K].
    enthalpy : float
        Reference apparent enthalpy R T^2 dln p/dT at T_m [J/mol].
    enthalpy_chord : float
        Reference Clausius-Clapeyron slope over the included temperatures,
        -R d ln p / d(1/T) by least squares on the reference curve [J/mol].
    normal_boiling_point : float
        Where the reference reaches 101.325 kPa [K].
    outside : tuple of int
        Indices of points outside the validity range.
    warnings : tuple of str
    """

    curve: ReferenceCurve
    deviation_percent: np.ndarray
    T_m: float
    enthalpy: float
    enthalpy_chord: float
    normal_boiling_point: float
    outside: tuple[int, ...]
    warnings: tuple[str, ...]


def outside_range_text(curve: ReferenceCurve, count: int) -> str:
    return (f"{D.count(count, 'point')} outside the {curve.label} validity range "
            f"{curve.T_min - 273.15:.1f} to {curve.T_max - 273.15:.1f} °C: the reference is "
            "extrapolated there")


def comparison_of(curve: ReferenceCurve, cmp: dict, r: int, n: int, T_m: float
                  ) -> ReferenceComparison:
    """Run ``r`` of :func:`compare_stack` (its first ``n`` points) as a ReferenceComparison."""
    dev = np.array(cmp["deviation_percent"][r, :n])
    dev.setflags(write=False)
    outside = tuple(int(i) for i in np.flatnonzero(cmp["outside"][r, :n]))
    warn = (outside_range_text(curve, len(outside)),) if outside else ()
    return ReferenceComparison(curve, dev, float(T_m), float(cmp["enthalpy"][r]),
                               float(cmp["chord"][r]), float(cmp["boiling"][r]), outside, warn)


def compare_to_reference(curve: ReferenceCurve, T, p, include, T_m: float) -> ReferenceComparison:
    """Compare vapor pressures ``p`` [Pa] at ``T`` [K] with ``curve``.

    ``include`` marks the points of the fit; the chord enthalpy uses those
    (all points when none is included).
    """
    T = np.atleast_1d(np.asarray(T, float))
    include = np.asarray(include, bool)
    if not include.any():
        include = np.ones(T.shape, bool)
    cmp = compare_stack([curve], T[None], np.asarray(p, float)[None], include[None],
                        np.array([T_m], float))
    return comparison_of(curve, cmp, 0, len(T), T_m)
