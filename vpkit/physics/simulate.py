"""The forward model: raw readings a run would give for a known vapor-pressure curve.

Used to make the invented demo runs, the round-trip tests and the coverage
study. It inverts :mod:`vpkit.physics.reduce` step by step, so a noise-free simulated
run reduces back to the curve it came from.

References
----------
Same physics as :mod:`vpkit.physics.reduce` (ideal gas, Dalton's law, hydrostatics).
"""

from __future__ import annotations

from collections.abc import Callable, Mapping

import numpy as np

from ..constants import G_N, R
from ..record.fields import Entry
from ..record.run import Run
from ..units import from_si
from .reduce import air_amount, gas_density, total_pressure

SI_UNITS = {"T": "K", "V": "m**3", "P": "Pa", "m": "kg", "rho": "kg/m**3", "L": "m"}
BENCH_UNITS = {"T": "degC", "V": "mL", "P": "kPa", "m": "g", "rho": "g/mL", "L": "cm"}

#: Standard uncertainties assumed when noise is added (SI); common practice, no source
#: (the same defaults as vpkit.record.fields.DEFAULT_UNCERTAINTY).
NOISE = {"reading": 0.005e-6, "T": 0.2, "P_bar": 100.0, "T_room": 0.3, "mass": 1e-6,
         "V_injected": 0.01e-6, "depth": 0.003}


def forward_readings(p_T, p_room, T, *, P_bar, T_room, V_room, offset, direction=1,
                     density, depth=None, gas_mass: bool = True, mass_before=0.030,
                     room_depth=None, bore=None) -> dict:
    """Noise-free readings of runs whose true vapor pressure is known (any batch shape).

    The inverse of :func:`vpkit.physics.reduce.reduce_chain`, step by step: the weighed
    air amount at room temperature, the mass drop of the weighing, the room
    reading, then at each bath temperature the gas volume that holds that air
    at the total pressure minus the vapor pressure, and its graduation reading.

    Parameters
    ----------
    p_T : array_like (..., n)
        True vapor pressure at the bath temperatures T (..., n) [Pa].
    p_room : array_like (...)
        True vapor pressure at the room temperature [Pa].
    P_bar, T_room, V_room, offset, direction, density, depth, mass_before : array_like (...)
        Barometric pressure [Pa], room temperature [K], gas volume at the
        weighing [m^3], volume below the zero mark [m^3], +1/-1, liquid density
        [kg/m^3], bubble depth [m] (None: no head), mass before the air [kg].
    room_depth, bore : array_like (...), optional
        Depth of the interface at the room reading [m] and the tube's inner
        diameter [m]: with a bore the interface moves down by (V - V_room)/A as
        the bubble grows, A = π bore²/4, so each volume solves the quadratic
        n R T / V = P_bar + ρ g (depth + (V - V_room)/A) - p_vap; ``depth`` is
        then the depth at the room reading, and the room head defaults to it.

    Returns
    -------
    dict
        ``reading`` (..., n) [m^3]; ``mass_after`` [kg], ``room_reading`` and
        ``V_injected`` [m^3] (...).
    """
    P_bar, T_room = np.asarray(P_bar, float), np.asarray(T_room, float)
    h_room = room_depth if room_depth is not None else (depth if bore is not None else None)
    P_room = total_pressure(P_bar, 0.0 if h_room is None else np.asarray(h_room, float),
                            np.asarray(density, float))
    n_air = air_amount(P_room, p_room, V_room, T_room)
    rho_gas = gas_density(P_bar, T_room) if gas_mass else 0.0
    col = lambda v: np.asarray(v, float)[..., None]  # noqa: E731
    P_tot = total_pressure(col(P_bar), 0.0 if depth is None else col(depth), col(density))
    nRT = n_air[..., None] * R * np.asarray(T, float)
    if bore is None:
        V = nRT / (P_tot - np.asarray(p_T, float))
    else:  # a V^2 + b V - n R T = 0, positive root
        a = col(density) * G_N / (np.pi * col(bore) ** 2 / 4.0)
        b = P_tot - a * col(V_room) - np.asarray(p_T, float)
        V = 2.0 * nRT / (b + np.sqrt(b * b + 4.0 * a * nRT))
    return {"reading": (V - col(offset)) / col(direction),
            "mass_after": mass_before - V_room * (density - rho_gas),
            "room_reading": (V_room - offset) / direction,
            "V_injected": n_air * R * T_room / P_bar}


def simulate_run(
    p_true: Callable[[np.ndarray], np.ndarray],
    T,
    *,
    liquid: str,
    P_bar: float = 100_000.0,
    T_room: float = 294.15,
    V_room: float = 2.0e-6,
    offset: float = 0.15e-6,
    direction: int = 1,
    density: float = 1000.0,
    depth: float | None = None,
    gas_mass: bool = True,
    mass_before: float = 0.030,
    boiling_point: float | None = None,
    room_depth: float | None = None,
    bore: float | None = None,
    units: Mapping[str, str] = BENCH_UNITS,
    noise: Mapping[str, float] | None = None,
    rng: np.random.Generator | None = None,
    comments: tuple[str, ...] = (),
    notes: str = "",
    stated: Mapping[str, float] | None = None,
) -> Run:
    """Simulate the raw record of one run.

    Parameters
    ----------
    p_true : callable
        True vapor pressure [Pa] as a function of T [K].
    T : array_like
        True bath temperatures [K].
    P_bar, T_room, V_room, offset, density, depth, mass_before :
        True barometric pressure [Pa], room temperature [K], gas volume at the
        weighing [m^3], volume below the zero mark [m^3], liquid density
        [kg/m^3], bubble depth [m], mass before the air [kg].
    room_depth, bore : float, optional
        Depth at the room reading and tube bore [m] (see :func:`forward_readings`).
    direction : int
        +1 graduated from the closed end, -1 from the open end (the scale is
        then read downwards from ``offset``).
    units : mapping
        Units to write: keys T, V, P, m, rho, L.
    noise : mapping, optional
        Standard deviations (SI) of reading noise per kind (see :data:`NOISE`);
        None for exact readings.
    rng : numpy Generator, optional
    stated : mapping, optional
        Standard uncertainties to write into the run (same keys; default: the
        ``noise``), e.g. exact readings that state the instruments' uncertainty.

    Returns
    -------
    Run
        With metadata for all three air-amount methods (weighing, injected
        volume; the coldest point can serve as the cold reference).
    """
    T = np.asarray(T, float)
    rng = rng or np.random.default_rng(0)
    true = forward_readings(p_true(T), float(p_true(np.array([T_room]))[0]), T, P_bar=P_bar,
                            T_room=T_room, V_room=V_room, offset=offset, direction=direction,
                            density=density, depth=depth, gas_mass=gas_mass,
                            mass_before=mass_before, room_depth=room_depth, bore=bore)
    mass_after, room_reading = true["mass_after"], true["room_reading"]
    reading, V_inj = true["reading"], true["V_injected"]
    def noisy(value, key):
        if noise is None or not noise.get(key):
            return value
        return value + rng.normal(0.0, noise[key], np.shape(value))

    T_rec = noisy(T, "T")
    reading_rec = noisy(reading, "reading")
    u = units

    def val(x, unit, kind):
        return float(from_si(x, unit, kind))

    said = noise if stated is None else stated

    def unc(key, unit, kind):
        if said is None or not said.get(key):
            return None
        return float(from_si(said[key], unit, kind, delta=True))

    entries = [
        ("liquid", Entry(liquid)),
        ("barometric_pressure", Entry(val(noisy(P_bar, "P_bar"), u["P"], "pressure"), u["P"],
                                      unc("P_bar", u["P"], "pressure"))),
        ("room_temperature", Entry(val(noisy(T_room, "T_room"), u["T"], "temperature"), u["T"],
                                   unc("T_room", u["T"], "temperature"))),
        ("room_reading", Entry(val(noisy(room_reading, "reading"), u["V"], "volume"), u["V"],
                               unc("reading", u["V"], "volume"))),
        ("mass_before_air", Entry(val(noisy(mass_before, "mass"), u["m"], "mass"), u["m"],
                                  unc("mass", u["m"], "mass"))),
        ("mass_after_air", Entry(val(noisy(mass_after, "mass"), u["m"], "mass"), u["m"],
                                 unc("mass", u["m"], "mass"))),
        ("liquid_density", Entry(val(density, u["rho"], "density"), u["rho"])),
        ("injected_air_volume", Entry(val(noisy(V_inj, "V_injected"), u["V"], "volume"), u["V"],
                                      unc("V_injected", u["V"], "volume"))),
        ("graduated_from", Entry("closed end" if direction == 1 else "open end")),
    ]
    if depth is not None:
        entries.append(("bubble_depth", Entry(val(noisy(depth, "depth"), u["L"], "length"),
                                              u["L"], unc("depth", u["L"], "length"))))
    for name, value in (("room_depth", room_depth), ("tube_bore", bore)):
        if value is not None:
            entries.append((name, Entry(val(value, u["L"], "length"), u["L"])))
    if boiling_point is not None:
        entries.append(("boiling_point", Entry(val(boiling_point, u["T"], "temperature"),
                                               u["T"])))
    if said is not None:
        if said.get("reading"):
            entries.append(("reading_uncertainty", Entry(val(said["reading"], u["V"], "volume"),
                                                         u["V"])))
        if said.get("T"):
            entries.append(("temperature_uncertainty",
                            Entry(float(from_si(said["T"], u["T"], "temperature", delta=True)),
                                  u["T"])))
    if notes:
        entries.append(("notes", Entry(notes)))
    n = len(T)
    return Run(
        entries=tuple(entries),
        units=(u["T"], u["V"], ""),
        bath_temperature=tuple(val(t, u["T"], "temperature") for t in T_rec),
        reading=tuple(val(r, u["V"], "volume") for r in reading_rec),
        pressure=(None,) * n,
        include=(True,) * n,
        reason=("",) * n,
        comments=tuple(comments),
    )
