"""Results derived from a fit beyond its own parameters, for R runs at once.

* :func:`true_enthalpy`: the true ΔvapH from the apparent one (Clapeyron
  equation, :mod:`vpkit.physics.nonideal`), with the correction's own uncertainty, and
  the published ΔvapH to compare it with.
* :func:`entropy_at_boiling`: ΔS_vap = ΔvapH(T_b)/T_b at the boiling point, the
  quantity of Trouton's rule [1]. The apparent ΔH is carried from where it was
  measured to T_b by the model's own temperature dependence (constant ΔCp,
  Antoine); a Clausius–Clapeyron line has none, so its ΔH is carried by the
  published curve's change of apparent ΔH between T_m and T_b (Kirchhoff's law
  [2] with the curve's ΔCp) or, without a curve, by an assumed apparent ΔCp of
  :data:`DCP_ASSUMED` ± :data:`U_DCP_ASSUMED`. Δz at T_b and P comes from the
  virial correction, or is :data:`DZ_ASSUMED` ± :data:`U_DZ_ASSUMED` for a
  liquid without one.
* :func:`boiling_point_bias`: the part of a boiling-point extrapolation error
  that is the model's, not the data's: the same model fitted, with the same
  weights, to the published curve at the run's own temperatures, minus where
  the curve itself boils; without a curve, for a Clausius–Clapeyron line, the
  assumed-ΔCp curve through the fitted line at T_m.
* :func:`trouton_verdict`: ΔS_vap against the bands :data:`TROUTON_BAND` and
  :data:`TROUTON_HBOND_BAND`.

The assumed values are ours (from memory, marked as such): apparent ΔCp of
common organic liquids and water near room temperature lies between about -80
and -20 J/(mol K); Δz at the normal boiling point between 0.95 and 0.98.

References
----------
.. [1] F. Trouton, Philos. Mag. 18, 54-57 (1884).
.. [2] G. R. Kirchhoff, Ann. Phys. 179, 177-206 (1858).
.. [3] JCGM 100:2008 (GUM), section 5.1: linear propagation of independent
   contributions.
"""

from __future__ import annotations

import numpy as np

from .. import display as D
from ..arrays import quad
from ..constants import P_STANDARD, R
from ..physics.liquids import has_vaporization_enthalpy, per_liquid, vaporization_enthalpy
from ..physics.nonideal import delta_z_runs

#: Apparent ΔCp assumed for a Clausius–Clapeyron fit without a published curve
#: [J/(mol K)], and its standard uncertainty (from memory; see the module docstring).
DCP_ASSUMED = -50.0
U_DCP_ASSUMED = 30.0
#: Δz at the normal boiling point for a liquid without virial data, and its u (from memory).
DZ_ASSUMED = 0.965
U_DZ_ASSUMED = 0.015
#: Relative u of a temperature adjustment or bias taken from a published curve
#: (common practice, no source: the curves' slopes are good to a few percent).
U_FROM_CURVE = 0.10

#: Trouton's rule for liquids without hydrogen bonding [J/(mol K)]: 80-95, and the
#: hydrogen-bonded liquids (water, alcohols) 100-125. Common practice, no source; the
#: bands contain the values of CoolProp's reference equations of state (s'' - s' at
#: 101.325 kPa) and of VDI Heat Atlas PPDS eq. 12 (ΔvapH(T_b)/T_b) for every bundled
#: liquid (tests/reference/test_trouton.py): hexane 84.5, cyclohexane 84.8, heptane
#: 85.5, toluene 86.6, acetone 88.5, ethyl acetate 92.2; methanol 104.5, water 108.9,
#: 1-butanol 111.0, ethanol 111.3, 1-propanol 113.1, 2-propanol 114.5.
TROUTON_BAND = (80.0, 95.0)
TROUTON_HBOND_BAND = (100.0, 125.0)


def true_enthalpy(liquids, T, p, dH_app, u_app) -> dict:
    """True ΔvapH = ΔH_app Δz at T [K] and the fitted p [Pa] (R,), with its u [3], and
    the published ΔvapH at T (NaN where no equation is bundled)."""
    dz, u_dz = delta_z_runs(liquids, T, p)
    dH_app, u_app = np.asarray(dH_app, float), np.asarray(u_app, float)
    return {"value": dH_app * dz, "u": np.hypot(dz * u_app, dH_app * u_dz), "delta_z": dz,
            "u_delta_z": u_dz,
            "reference": per_liquid(liquids, has_vaporization_enthalpy, vaporization_enthalpy,
                                    T)}


def enthalpy_at(fit, curves, T) -> dict:
    """The apparent ΔH_vap of each fit carried to T [K] (R,): by the model itself where it
    has a curvature (constant ΔCp, Antoine), else from T_m by the published curve's change
    of apparent ΔH or, without a curve, the assumed ΔCp (see the module docstring).

    Returns ``value`` [J/mol], ``grad`` (dΔH/dθ, R × p), ``u_adj`` (the carrying's own u,
    independent of θ), ``dH_dT`` [J/(mol K)] and ``carried_by`` ("model",
    "published curve" or "assumed ΔCp")."""
    m, th = fit.model, fit.params
    T = np.broadcast_to(np.asarray(T, float), fit.T_m.shape)
    R_ = len(T)
    with np.errstate(all="ignore"):
        if m.curvature_index is not None:
            return {"value": m.enthalpy(T, th), "grad": m.enthalpy_grad(T, th),
                    "u_adj": np.zeros(R_), "dH_dT": m.enthalpy_dT(T, th),
                    "carried_by": np.full(R_, "model", dtype=object)}
        T_m = fit.T_m
        has = curves.has
        ref_t, ref_m = curves.apparent_enthalpy(T), curves.apparent_enthalpy(T_m)
        h = 0.01
        ref_slope = (curves.apparent_enthalpy(T + h) - curves.apparent_enthalpy(T - h)) / (2 * h)
        adj = np.where(has, ref_t - ref_m, DCP_ASSUMED * (T - T_m))
        u_adj = np.where(has, U_FROM_CURVE * np.abs(adj), U_DCP_ASSUMED * np.abs(T - T_m))
        return {"value": m.enthalpy(T_m, th) + adj, "grad": m.enthalpy_grad(T_m, th),
                "u_adj": u_adj, "dH_dT": np.where(has, ref_slope, DCP_ASSUMED),
                "carried_by": np.where(has, "published curve", "assumed ΔCp").astype(object)}


def entropy_at_boiling(fit, liquids, curves, P=P_STANDARD, bias=None) -> dict:
    """ΔS_vap at the boiling point for P (R,) with its u, and how ΔH reached T_b.

    Parameters
    ----------
    fit : StackFit
    liquids : sequence of str (R,)
    curves : CurveSet
        Each run's own published curve (None where there is none).
    bias : ndarray (R,), optional
        The model's extrapolation bias of T_b at P (:func:`boiling_point_bias`):
        where finite, ΔS is evaluated at the corrected T_b - bias, the best estimate
        of where the liquid boils.

    Returns
    -------
    dict with ``value``, ``u`` [J/(mol K)], ``T_b`` [K] (corrected where ``bias`` is
    given), ``enthalpy`` (true ΔvapH at T_b [J/mol]) and ``carried_by`` (R,) of
    "model", "published curve" or "assumed ΔCp".
    """
    cov = fit.cov
    Tb, _, gT, _ = fit.boiling_point(P)
    if bias is not None:
        Tb = np.where(np.isfinite(bias), Tb - np.asarray(bias, float), Tb)
    with np.errstate(all="ignore"):
        carried = enthalpy_at(fit, curves, Tb)
        H, gH0, u_adj = carried["value"], carried["grad"], carried["u_adj"]
        dHdT, how = carried["dH_dT"], carried["carried_by"]
        dz, u_dz = delta_z_runs(liquids, Tb, np.broadcast_to(np.asarray(P, float), Tb.shape))
        dz, u_dz = np.where(np.isfinite(dz), dz, DZ_ASSUMED), np.where(
            np.isfinite(dz), u_dz, U_DZ_ASSUMED)
        gH = gH0 + dHdT[:, None] * gT
        S = H * dz / Tb
        g = (dz / Tb)[:, None] * gH - (S / Tb)[:, None] * gT
        u = np.sqrt(quad(g, cov) ** 2 + (dz * u_adj / Tb) ** 2 + (H * u_dz / Tb) ** 2)
    return {"value": S, "u": u, "T_b": Tb, "enthalpy": H * dz, "carried_by": how}


def boiling_point_bias(fit, curves, P, on_curve) -> dict:
    """The model's own extrapolation error of T_b at P (R,): ``bias`` [K] (fitted minus
    true, to be subtracted), its ``u`` and ``from`` ("published curve", "assumed ΔCp",
    or "" where not estimated: a curved model without a curve).

    ``on_curve`` is the same model fitted with the same weights to each run's published
    curve at the run's temperatures (a StackFit; None when no run has a curve).
    """
    from ..fitting.models import ConstantDeltaCp

    Tb, _, _, _ = fit.boiling_point(P)
    ln_P = np.log(np.broadcast_to(np.asarray(P, float), Tb.shape))
    R_ = len(Tb)
    bias, u = np.full(R_, np.nan), np.full(R_, np.nan)
    how = np.full(R_, "", dtype=object)
    has = curves.has
    with np.errstate(all="ignore"):
        if on_curve is not None and has.any():
            Tb_fit, _, _, _ = on_curve.boiling_point(P)
            Tb_true = curves.solve_T(ln_P, np.where(np.isfinite(Tb_fit), Tb_fit, Tb))
            b = Tb_fit - Tb_true
            bias = np.where(has, b, bias)
            u = np.where(has, U_FROM_CURVE * np.abs(b), u)
            how = np.where(has & np.isfinite(b), "published curve", how).astype(object)
        if fit.model.curvature_index is None:
            # the curve with apparent ΔCp assumed, through the fitted line at T_m
            T_m = fit.T_m
            c = DCP_ASSUMED / R
            a0, b0 = fit.params[:, 0], fit.params[:, 1]
            th = np.stack([a0 - c * (1.0 + np.log(T_m)), b0 + c * T_m, np.full(R_, c)], -1)
            Tb_assumed = ConstantDeltaCp().solve_T(ln_P, th, Tb)
            b = Tb - Tb_assumed
            bias = np.where(has, bias, b)
            u = np.where(has, u, np.abs(b) * U_DCP_ASSUMED / abs(DCP_ASSUMED))
            how = np.where(has, how, np.where(np.isfinite(b), "assumed ΔCp", "")).astype(object)
    return {"bias": bias, "u": u, "from": how}


def trouton_verdict(v, u):
    """Compare ΔS_vap = v ± u [J/(mol K)] at the normal boiling point with Trouton's rule.

    The rule: a band is consistent with the value when it lies within 2u of it (the
    value's 95 % interval reaches the band); the text says whether the value itself is
    inside, or consistent only within its uncertainty. Batched: arrays ``v`` and ``u``
    give an object array of texts (the few distinct verdicts are built once each; only
    the value itself is formatted per run); scalars give one text. '' where v or u is
    not finite.
    """
    scalar = np.ndim(v) == 0 and np.ndim(u) == 0
    v, u = np.broadcast_arrays(np.asarray(v, float), np.asarray(u, float))
    lo, hi = TROUTON_BAND
    hlo, hhi = TROUTON_HBOND_BAND
    with np.errstate(invalid="ignore"):
        normal = (lo - 2 * u <= v) & (v <= hi + 2 * u)
        hbond = (hlo - 2 * u <= v) & (v <= hhi + 2 * u)
        inside_n = (lo <= v) & (v <= hi)
        inside_h = (hlo <= v) & (v <= hhi)
    within, near = "within", "consistent, within 2u, with"
    tails = (
        f"too uncertain to tell Trouton's rule ({lo:g}–{hi:g} J/(mol K)) from the "
        f"hydrogen-bonded range ({hlo:g}–{hhi:g}); a band counts when the value lies "
        "within 2u of it",
        f"{within} Trouton's rule ({lo:g}–{hi:g} J/(mol K)), as for a liquid without "
        "hydrogen bonding",
        f"{near} Trouton's rule ({lo:g}–{hi:g} J/(mol K)), as for a liquid without "
        "hydrogen bonding",
        f"above Trouton's rule and {within} the hydrogen-bonded range ({hlo:g}–{hhi:g} "
        "J/(mol K)), as for water and alcohols",
        f"above Trouton's rule and {near} the hydrogen-bonded range ({hlo:g}–{hhi:g} "
        "J/(mol K)), as for water and alcohols",
        f"more than 2u outside Trouton's rule ({lo:g}–{hi:g} J/(mol K)) and the "
        f"hydrogen-bonded range ({hlo:g}–{hhi:g}); check the data")
    case = np.select([normal & hbond, normal & inside_n, normal, hbond & inside_h, hbond],
                     [0, 1, 2, 3, 4], 5)
    finite = np.isfinite(v) & np.isfinite(u)
    out = np.full(v.shape, "", dtype=object)
    for idx, vi, ui, k in zip(np.flatnonzero(finite.ravel()), v[finite].tolist(),
                              u[finite].tolist(), case[finite].tolist()):
        out.flat[idx] = f"ΔS_vap = {D.value_u(vi, ui, 'J/(mol K)')} at T_b: {tails[k]}"
    return str(out[()]) if scalar else out
