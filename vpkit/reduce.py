"""From readings to vapor pressures: pure functions in SI units.

Each function is one step of the reduction and works elementwise on floats or
numpy arrays (broadcasting over any leading batch axes, which is how the
uncertainty propagation and many-run analyses evaluate them). They also accept
``uncertainties`` numbers, since they use arithmetic only.

Symbols: T temperature [K], P pressure [Pa], V volume [m^3], n amount [mol],
rho density [kg/m^3], m mass [kg], h depth [m].

References
----------
.. [1] J. Dalton, "On the expansion of elastic fluids by heat", Memoirs of the
   Literary and Philosophical Society of Manchester 5, 595-602 (1802): law of
   partial pressures.
.. [2] B. P. E. Clapeyron (1834) and the ideal-gas law, as in P. Atkins,
   J. de Paula, "Physical Chemistry", 9th ed., Oxford (2010), section 1A.
.. [3] Archimedes' principle and hydrostatic pressure P = rho g h, as in any
   physics text, e.g. D. Halliday, R. Resnick, J. Walker, "Fundamentals of
   Physics", 10th ed., Wiley (2014), ch. 14.
.. [4] Constants: see :mod:`vpkit.constants` (CODATA 2018, CIPM-2007).
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np

from .constants import G_N, M_AIR, R

AIR_METHODS = ("weighed", "cold", "injected")
VAPOR_AT_AIR_REFERENCE = ("fit", "reference", "neglect")


def gas_density(P, T):
    """Density of dry air, ideal gas: rho = P M_air / (R T)  [kg/m^3]."""
    return P * M_AIR / (R * T)


def room_gas_volume(mass_before, mass_after, rho_liquid, rho_gas=0.0):
    """Gas volume at room temperature calibrated by the weighing [m^3].

    The air displaces liquid, so the tube loses the liquid's mass and gains the
    gas's: ``m_before - m_after = V (rho_liquid - rho_gas)``.

    Parameters
    ----------
    mass_before, mass_after : float
        Tube + liquid before and after the air was added [kg].
    rho_liquid : float
        Liquid density at room temperature [kg/m^3].
    rho_gas : float
        Density of the trapped gas [kg/m^3]; 0 ignores the gas's own mass.
    """
    return (mass_before - mass_after) / (rho_liquid - rho_gas)


def scale_offset(V_room, room_reading, direction=1):
    """Offset such that ``V = offset + direction * reading`` [m^3].

    ``direction`` is +1 for a tube graduated from the closed end and -1 for a
    tube graduated from the open end (the reading then falls as the bubble
    grows).
    """
    return V_room - direction * room_reading


def bubble_volume(reading, offset, direction=1):
    """True gas volume from a graduation reading [m^3]."""
    return offset + direction * reading


def total_pressure(P, depth=0.0, rho_liquid=0.0):
    """Pressure on the trapped gas: P + rho g h, h below the bath surface [Pa]."""
    return P + rho_liquid * G_N * depth


def air_amount(P_total, p_vapor, V, T):
    """Amount of air in a gas volume V at T: n = (P - p_vap) V / (R T)  [mol].

    Covers the three ways of METHOD section 2.3: the injected volume at room
    conditions (``p_vapor = 0``, ``P_total`` the barometric pressure), a cold
    reference reading, and the weighed room-temperature volume.
    """
    return (P_total - p_vapor) * V / (R * T)


def air_partial_pressure(n_air, V, T):
    """Partial pressure of the trapped air, ideal gas: p = n R T / V  [Pa]."""
    return n_air * R * T / V


def vapor_pressure(P_total, p_air):
    """Dalton's law: the vapor supplies what the air does not [Pa]."""
    return P_total - p_air


# ---------------------------------------------------------------------------
# the whole chain, vectorised
# ---------------------------------------------------------------------------


@dataclass(frozen=True)
class ReductionSetup:
    """The choices of a reduction (no numbers that carry uncertainty).

    Attributes
    ----------
    air_from : {"weighed", "cold", "injected"}
        How the air amount is found (METHOD 2.3 c, b, a).
    vapor_at_air_reference : {"fit", "reference", "neglect"}
        How p_vap at the air-reference temperature is taken (for "weighed"
        and "cold"): self-consistently from the fitted curve, from a published
        equation, or neglected.
    cold_index : int
        Reading used as the cold reference for ``air_from="cold"``.
    offset_from_weighing : bool
        Calibrate the scale offset from the weighing (else ``scale_offset``).
    direction : int
        +1 graduated from the closed end, -1 from the open end.
    use_head : bool
        Add the hydrostatic head rho g h of the bubble depth.
    gas_mass : bool
        Count the trapped gas's own mass in the weighing.
    """

    air_from: str = "weighed"
    vapor_at_air_reference: str = "fit"
    cold_index: int = 0
    offset_from_weighing: bool = True
    direction: int = 1
    use_head: bool = True
    gas_mass: bool = True


def reduce_chain(x: Mapping[str, np.ndarray], setup: ReductionSetup, p_ref) -> dict:
    """Reduce readings to vapor pressures (any leading batch shape).

    Parameters
    ----------
    x : mapping
        ``T``, ``reading``, ``P`` (per-point pressure before the head) with
        shape (..., n); scalars per run with shape (...): ``P_bar``,
        ``T_room``, ``room_reading``, ``mass_before``, ``mass_after``,
        ``density``, ``V_injected``, ``scale_offset``, ``depth``. Entries the
        setup does not use may be absent.
    setup : ReductionSetup
    p_ref : array_like, shape (...)
        Vapor pressure at the air-reference temperature [Pa] (ignored for
        ``air_from="injected"``).

    Returns
    -------
    dict
        ``V``, ``P_total``, ``p_air``, ``p_vap`` (..., n); ``n_air``,
        ``V_room`` (...).
    """
    d = setup.direction
    T = x["T"]
    if setup.offset_from_weighing:
        rho_gas = gas_density(x["P_bar"], x["T_room"]) if setup.gas_mass else 0.0
        V_room = room_gas_volume(x["mass_before"], x["mass_after"], x["density"], rho_gas)
        offset = scale_offset(V_room, x["room_reading"], d)
    else:
        offset = x["scale_offset"]
        V_room = (bubble_volume(x["room_reading"], offset, d)
                  if "room_reading" in x else np.nan * offset)
    V = bubble_volume(x["reading"], offset[..., None], d)
    if setup.use_head and "depth" in x:
        P_total = total_pressure(x["P"], x["depth"][..., None], x["density"][..., None])
    else:
        P_total = x["P"]
    if setup.air_from == "injected":
        n_air = air_amount(x["P_bar"], 0.0, x["V_injected"], x["T_room"])
    elif setup.air_from == "weighed":
        n_air = air_amount(x["P_bar"], p_ref, V_room, x["T_room"])
    elif setup.air_from == "cold":
        c = setup.cold_index
        n_air = air_amount(P_total[..., c], p_ref, V[..., c], T[..., c])
    else:
        raise ValueError(f"air_from must be one of {AIR_METHODS}, got {setup.air_from!r}")
    p_air = air_partial_pressure(n_air[..., None], V, T)
    return {
        "V": V,
        "P_total": P_total,
        "p_air": p_air,
        "p_vap": vapor_pressure(P_total, p_air),
        "n_air": n_air,
        "V_room": V_room,
    }


def air_reference_temperature(x: Mapping[str, np.ndarray], setup: ReductionSetup):
    """Temperature at which the air amount is fixed (room or cold reading) [K]."""
    if setup.air_from == "cold":
        return x["T"][..., setup.cold_index]
    return x["T_room"]


def point_flags(T, V, P_total, p_vap, T_boil=None) -> list[tuple[str, ...]]:
    """Plain-language flags for physically impossible or suspect points.

    Flags never remove a point; the caller shows them.

    Returns
    -------
    list of tuple of str
        One tuple of flags per point (empty when nothing is wrong).
    """
    T = np.asarray(T, float)
    V = np.asarray(V, float)
    flags: list[list[str]] = [[] for _ in T]
    for i in range(len(T)):
        if V[i] <= 0:
            flags[i].append("gas volume is not positive: check the scale offset and direction")
        if p_vap[i] <= 0:
            flags[i].append("vapor pressure <= 0: the bubble is smaller than the air alone "
                            "would fill (check the reading or the air amount)")
        elif p_vap[i] >= P_total[i]:
            flags[i].append("vapor pressure >= total pressure: impossible below boiling")
        if T_boil is not None and T[i] > T_boil:
            flags[i].append("bath above the measured boiling point: the bubble cannot be stable")
    order = np.argsort(T)
    for a, b in zip(order[:-1], order[1:]):
        if T[b] > T[a] and V[b] < V[a]:
            flags[b].append("gas volume smaller than at a lower temperature")
    return [tuple(f) for f in flags]
