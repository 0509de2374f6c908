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

from ..constants import G_N, M_AIR, R

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
    """Pressure on the trapped gas: P + rho g h, h below the bath surface [Pa].

    No head (h = 0) adds nothing, whatever the density (a run that states none)."""
    if isinstance(depth, np.ndarray) or isinstance(rho_liquid, np.ndarray):
        return P + np.where(np.asarray(depth) == 0, 0.0, rho_liquid * G_N * depth)
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
# the whole chain, on a stack of runs
# ---------------------------------------------------------------------------


@dataclass(frozen=True)
class ReductionSetup:
    """The choices of a reduction (no numbers that carry uncertainty).

    Per-run fields are scalars (the same for every run) or arrays of shape
    (R,) that broadcast over the runs of the batch.

    Attributes
    ----------
    air_from : {"weighed", "cold", "injected"} or ndarray of them (R,)
        How the air amount is found (METHOD 2.3 c, b, a): one method for every run,
        or each run's own.
    gas_mass : bool
        Count the trapped gas's own mass in the weighing.
    direction : int or ndarray (R,)
        +1 graduated from the closed end, -1 from the open end.
    offset_from_weighing : bool or ndarray (R,)
        Calibrate the scale offset from the weighing (else ``scale_offset``).
    cold_index : int or ndarray (R,)
        Reading used as the cold reference for ``air_from="cold"``.
    use_head : bool or ndarray (R,)
        Add the hydrostatic head rho g h of the bubble depth.
    room_head : bool or ndarray (R,)
        Add the head at the room reading (``room_depth``, or with a tube bore the
        bubble depth) to the pressure of the weighed air amount.
    moisture_dissolves : bool or ndarray (R,)
        The water vapor of the injected air leaves the gas (the liquid is water
        or takes water up), so the air amount counts dry air only.
    water_layer : bool
        The liquid floats on water that also touches the gas: water's saturation
        pressure (IAPWS-95) is subtracted as well, at every point and at the air
        reference (Dalton's law with three components) [1].
    length_readings : bool or ndarray (R,)
        The readings (and the room reading) are bubble lengths in a capillary of
        inner diameter ``bore``: a volume is length x π bore²/4, and the scale
        offset is 0 unless a ``scale_offset`` is given (the length is measured from
        the closed end).
    """

    air_from: str | np.ndarray = "weighed"
    gas_mass: bool = True
    direction: int | np.ndarray = 1
    offset_from_weighing: bool | np.ndarray = True
    cold_index: int | np.ndarray = 0
    use_head: bool | np.ndarray = True
    room_head: bool | np.ndarray = False
    moisture_dissolves: bool | np.ndarray = False
    water_layer: bool = False
    length_readings: bool | np.ndarray = False

    def uses(self, method: str) -> np.ndarray:
        """Which runs find their air amount by ``method`` (a bool, or bools (R,))."""
        return np.asarray(self.air_from) == method


def _b(value, like):
    """A per-run setting shaped to broadcast against a batch array ``like``."""
    v = np.asarray(value)
    if v.ndim == 0:
        return v
    return v.reshape(v.shape + (1,) * (np.ndim(like) - v.ndim))


def reduce_chain(x: Mapping[str, np.ndarray], setup: ReductionSetup, p_ref) -> dict:
    """Reduce readings to vapor pressures for any batch of runs.

    Parameters
    ----------
    x : mapping
        Per point, shape (..., n): ``T`` [K], ``reading`` [m^3] and ``P`` (own
        pressure [Pa], NaN where the point sees the barometric pressure).
        Per run, shape (...): ``P_bar`` [Pa], ``T_room`` [K], ``room_reading``
        [m^3], ``mass_before``, ``mass_after`` [kg], ``density`` [kg/m^3],
        ``V_injected``, ``scale_offset`` [m^3], ``depth``, ``room_depth``,
        ``bore`` (inner diameter) [m], ``RH`` (relative humidity of the injected
        air, a fraction). Entries the setup does not use may be absent or NaN.
        With a bore, each reading's depth is ``depth + (V - V_room)/(π bore²/4)``
        (the interface moves down as the bubble grows; ``depth`` is then the
        depth at the room reading).
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
    P_bar, T_room = x["P_bar"], x["T_room"]
    d = _b(setup.direction, P_bar)
    nan = np.full(np.shape(P_bar), np.nan)
    get = lambda k: x[k] if k in x else nan  # noqa: E731
    T = x["T"]
    with np.errstate(invalid="ignore", divide="ignore"):
        rho_gas = gas_density(P_bar, T_room) if setup.gas_mass else 0.0
        V_room_w = room_gas_volume(get("mass_before"), get("mass_after"), get("density"),
                                   rho_gas)
        weighing = _b(setup.offset_from_weighing, P_bar)
        bore = get("bore")
        length = _b(setup.length_readings, P_bar)
        area = np.where(length, np.pi * bore**2 / 4.0, 1.0)  # a capillary: length -> volume
        room = get("room_reading") * area
        given = get("scale_offset")
        offset = np.where(weighing, scale_offset(V_room_w, room, d),
                          np.where(length & np.isnan(given), 0.0, given))
        V_room = np.where(weighing, V_room_w, bubble_volume(room, offset, d))
        V = bubble_volume(x["reading"] * area[..., None], offset[..., None], d[..., None])
        P_point = x.get("P")
        P = (np.broadcast_to(P_bar[..., None], np.shape(T)) if P_point is None
             else np.where(np.isnan(P_point), P_bar[..., None], P_point))
        head = _b(setup.use_head, P_bar) & np.isfinite(get("depth"))
        depth = np.where(head, get("depth"), 0.0)
        moves = head & np.isfinite(bore) & np.isfinite(V_room)
        travel = np.where(moves[..., None], (V - V_room[..., None])
                          / (np.pi * np.where(moves, bore, 1.0)[..., None] ** 2 / 4.0), 0.0)
        rho = get("density")[..., None]
        P_total = total_pressure(P, depth[..., None] + travel, rho)
        # over a water layer the water's vapor is one more partial pressure (Dalton)
        water = (lambda t: _water_vapor_pressure(t)) if setup.water_layer else (
            lambda t: 0.0)
        methods = np.asarray(setup.air_from)
        which = {m: methods == m for m in AIR_METHODS}
        if not np.logical_or.reduce([w for w in which.values()], axis=0).all():
            raise ValueError(f"air_from must be one of {AIR_METHODS}, got {setup.air_from!r}")
        n_air = None
        for method in (m for m in AIR_METHODS if which[m].any()):
            n_m = _air_amount_by(method, x, setup, get, P_total, V, T, V_room, depth, moves,
                                 p_ref, water)
            n_air = n_m if n_air is None else np.where(_b(which[method], P_bar), n_m, n_air)
        p_air = air_partial_pressure(n_air[..., None], V, T)
        p_vap = vapor_pressure(P_total, p_air) - water(T)
    return {"V": V, "P_total": P_total, "p_air": p_air, "p_vap": p_vap, "n_air": n_air,
            "V_room": V_room}


def _air_amount_by(method, x, setup, get, P_total, V, T, V_room, depth, moves, p_ref, water):
    """The air amount of every run of the batch by one method (METHOD 2.3)."""
    P_bar, T_room = x["P_bar"], x["T_room"]
    if method == "injected":
        dry = np.where(_b(setup.moisture_dissolves, P_bar) & np.isfinite(get("RH")),
                       get("RH") * _water_vapor_pressure(T_room), 0.0)
        return air_amount(P_bar, dry, get("V_injected"), T_room)
    if method == "weighed":
        h_room = np.where(np.isfinite(get("room_depth")), get("room_depth"),
                          np.where(moves, depth, np.nan))
        h_room = np.where(_b(setup.room_head, P_bar) & np.isfinite(h_room), h_room, 0.0)
        P_room = total_pressure(P_bar, h_room, get("density"))
        return air_amount(P_room, p_ref + water(T_room), V_room, T_room)
    c = np.broadcast_to(_b(setup.cold_index, P_bar), np.shape(P_bar)).astype(int)
    take = lambda a: np.take_along_axis(  # noqa: E731
        a, np.broadcast_to(c[..., None], np.shape(a)[:-1] + (1,)), axis=-1)[..., 0]
    return air_amount(take(P_total), p_ref + water(take(T)), take(V), take(T))


def _water_vapor_pressure(T):
    """Saturation pressure of water [Pa] (IAPWS-95, :func:`vpkit.physics.curves.iapws95_curve`):
    the most the injected air's moisture can be, at relative humidity 1."""
    from .curves import iapws95_curve

    return iapws95_curve().p(T)


def air_reference_temperature(x: Mapping[str, np.ndarray], setup: ReductionSetup):
    """Temperature at which the air amount is fixed (room or cold reading) [K]."""
    cold = setup.uses("cold")
    if not cold.any():
        return x["T_room"]
    c = np.broadcast_to(_b(setup.cold_index, x["T_room"]), np.shape(x["T_room"]))
    idx = np.broadcast_to(c.astype(int)[..., None], np.shape(x["T"])[:-1] + (1,))
    T_cold = np.take_along_axis(x["T"], idx, axis=-1)[..., 0]
    return T_cold if cold.ndim == 0 else np.where(_b(cold, x["T_room"]), T_cold, x["T_room"])


#: Point flags: key -> plain-language text (the value that triggered it is added).
FLAG_TEXT = {
    "volume": "gas volume is not positive: check the scale offset and direction",
    "p_low": "vapor pressure ≤ 0: the bubble is smaller than the air alone would fill "
             "(check the reading or the air amount)",
    "p_high": "vapor pressure ≥ total pressure: impossible below boiling",
    "above_boiling": "bath above the measured boiling point: the bubble cannot be stable",
    "shrinks": "gas volume smaller than at a lower temperature",
}


def point_flag_arrays(T, V, P_total, p_vap, T_boil=None, mask=None, skip=None) -> dict:
    """Which points are physically impossible or suspect, for a batch (..., n).

    ``mask`` marks real points; ``skip`` points exempt from the pressure flags
    (the cold reference, where p_vap equals the value taken there by
    construction). Returns key -> boolean array (keys of :data:`FLAG_TEXT`).
    Flags never remove a point; the caller shows them.
    """
    T = np.asarray(T, float)
    V = np.asarray(V, float)
    mask = np.isfinite(T) if mask is None else np.asarray(mask, bool)
    skip = np.zeros(T.shape, bool) if skip is None else np.asarray(skip, bool)
    with np.errstate(invalid="ignore"):
        out = {
            "volume": mask & (V <= 0),
            "p_low": mask & ~skip & ~(V <= 0) & (np.asarray(p_vap) <= 0),
            "p_high": mask & ~skip & (np.asarray(p_vap) >= np.asarray(P_total)),
            "above_boiling": mask & (np.zeros(T.shape, bool) if T_boil is None
                                     else T > np.asarray(T_boil, float)[..., None]),
        }
        Ts = np.where(mask, T, np.inf)
        order = np.argsort(Ts, axis=-1, kind="stable")
        Tsorted = np.take_along_axis(Ts, order, axis=-1)
        Vsorted = np.take_along_axis(np.where(mask, V, np.nan), order, axis=-1)
        hit = (np.diff(Tsorted, axis=-1) > 0) & (np.diff(Vsorted, axis=-1) < 0)
        shrink = np.zeros(T.shape, bool)
        np.put_along_axis(shrink, order[..., 1:], hit, axis=-1)
    out["shrinks"] = shrink & mask
    return out


def point_flags(T, V, P_total, p_vap, T_boil=None) -> list[tuple[str, ...]]:
    """Plain-language flags of one run's points (one tuple of texts per point)."""
    flags = point_flag_arrays(T, V, P_total, p_vap, T_boil)
    return [tuple(FLAG_TEXT[k] for k in FLAG_TEXT if flags[k][i]) for i in range(len(T))]
