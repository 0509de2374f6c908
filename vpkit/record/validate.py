"""The one set of physical checks and the one default-uncertainty rule.

Every run, from a run file or a long table, one or ten thousand, passes
through :func:`check` and :func:`uncertainties` (called by
:func:`vpkit.record.assemble.assemble`), so a run gets the same errors and the same
uncertainties whichever way it arrives. Checks are vectorised over runs; a
failed check gives a located error (file, row, column, how to fix it) for
that run only.

References
----------
.. [1] JCGM 100:2008 (GUM), section 4.3: Type B standard uncertainties (the
   defaults are common practice, no source: :data:`vpkit.record.fields.DEFAULT_UNCERTAINTY`).
"""

from __future__ import annotations

import numpy as np

from ..errors import BadValueError, ImpossibleDataError, InputError, RunFileError
from ..units import from_si, normalize_unit
from .fields import DEFAULT_UNCERTAINTY
from .stack import QUANTITY, Columns, RunStack

#: Hard limits of what an entry can be, in SI (common practice, no source): beyond them
#: the value is a slip, not a measurement, and would only overflow the equations.
LIMITS = {
    "P_bar": (1e3, 1e7, "outside 1 kPa to 10 MPa"),
    "T_room": (150.0, 500.0, "outside 150 to 500 K"),
    "T_boil": (100.0, 1000.0, "outside 100 to 1000 K, far from any liquid's boiling point"),
    "mass_before": (0.0, 10.0, "above 10 kg"), "mass_after": (0.0, 10.0, "above 10 kg"),
    "room_reading": (-1e-3, 1e-3, "more than 1 L"), "V_injected": (0.0, 1e-3, "more than 1 L"),
    "scale_offset": (-1e-3, 1e-3, "more than 1 L"),
    "density": (100.0, 3e4, "outside 100 to 30,000 kg/m^3"),
    "depth": (0.0, 10.0, "more than 10 m"), "room_depth": (0.0, 10.0, "more than 10 m"),
    "bore": (1e-4, 0.1, "outside 0.1 mm to 10 cm"),
    "RH": (0.0, 1.0, "outside 0 to 100 %"),
    "resolution": (1e-12, 1e-5, "outside 1 nL to 10 mL"),
    "capacity": (1e-8, 1e-3, "outside 0.01 mL to 1 L"),
}

#: The same limits for entries of the readings' kind when the readings are bubble lengths
#: in a capillary, in m (common practice, no source).
LENGTH_LIMITS = {
    "room_reading": (-2.0, 2.0, "longer than any capillary (2 m)"),
    "resolution": (1e-7, 0.1, "outside 0.1 µm to 10 cm"),
}

SI_UNIT = {"P_bar": "Pa", "T_room": "K", "T_boil": "K", "mass_before": "kg", "mass_after": "kg",
           "room_reading": "m^3", "V_injected": "m^3", "scale_offset": "m^3",
           "density": "kg/m^3", "depth": "m", "room_depth": "m", "bore": "m", "RH": "",
           "resolution": "m^3", "capacity": "m^3"}

#: Uncertainty keys and the default (SI) that fills each gap.
DEFAULTS = {
    "T": DEFAULT_UNCERTAINTY["temperature_uncertainty"],
    "reading": DEFAULT_UNCERTAINTY["reading_uncertainty"],
    "P_bar": DEFAULT_UNCERTAINTY["barometric_pressure"],
    "T_room": DEFAULT_UNCERTAINTY["room_temperature"],
    "mass_before": DEFAULT_UNCERTAINTY["mass_before_air"],
    "mass_after": DEFAULT_UNCERTAINTY["mass_after_air"],
    "V_injected": DEFAULT_UNCERTAINTY["injected_air_volume"],
    "scale_offset": DEFAULT_UNCERTAINTY["scale_offset"],
    "depth": DEFAULT_UNCERTAINTY["bubble_depth"],
    "T_boil": DEFAULT_UNCERTAINTY["boiling_point"],
    "room_depth": DEFAULT_UNCERTAINTY["room_depth"],
    "bore": DEFAULT_UNCERTAINTY["tube_bore"],
    "RH": DEFAULT_UNCERTAINTY["injected_air_humidity"],
}


def uncertainties(c: Columns) -> dict[str, np.ndarray]:
    """The one default rule: a stated uncertainty wins, else the documented default.

    Per-point pressures default to the barometer's stated uncertainty (they are
    read on it), the room reading to the graduation reading's, and a density
    given without an uncertainty (or taken from the reference) to 0.1 %. A
    graduation reading without a stated uncertainty but with a stated
    ``reading_resolution`` gets resolution/√12 (a rectangular distribution over
    one graduation step, GUM 4.3.7).
    """
    g = c.given_u
    u = {k: np.where(np.isnan(g[k]), d, g[k]) for k, d in DEFAULTS.items()}
    res = c.scalar["resolution"]
    u["reading"] = np.where(np.isnan(g["reading"]) & c.length_readings,
                            DEFAULT_UNCERTAINTY["reading_uncertainty_length"], u["reading"])
    u["reading"] = np.where(np.isnan(g["reading"]) & np.isfinite(res), res / np.sqrt(12.0),
                            u["reading"])
    u["pressure"] = np.where(np.isnan(g["pressure"]),
                             np.where(np.isnan(g["P_bar"]), DEFAULT_UNCERTAINTY["pressure"],
                                      g["P_bar"]), g["pressure"])
    u["room_reading"] = np.where(np.isnan(g["room_reading"]), u["reading"], g["room_reading"])
    rho = c.scalar["density"]
    with np.errstate(invalid="ignore", divide="ignore"):
        rel = g["density"] / rho
    rel = np.where(np.isfinite(g.get("density_relative", np.nan)),
                   g.get("density_relative", np.nan), rel)
    u["density_relative"] = np.where(np.isfinite(rel),
                                     rel, DEFAULT_UNCERTAINTY["liquid_density_relative"])
    return u


def check(s: RunStack, c: Columns) -> list[tuple[int, InputError]]:
    """Physical checks of every run at once; the first failed check of each run."""
    ch = _Checker(s)
    with np.errstate(invalid="ignore"):
        for key, name in (("T", "temperature_uncertainty"), ("reading", "reading_uncertainty")):
            ch.fail(c.given_u[key] < 0, lambda r, n=name: BadValueError(
                f"{n} is negative", **s.place(r, n), hint="give a standard uncertainty >= 0"))
        _reading_checks(ch, s, c)
        _check_temperature_unit(s, c, ch.out)
        _run_checks(ch, s)
    return sorted(ch.out.items())


class _Checker:
    """Collects the first located error of each run."""

    def __init__(self, s: RunStack) -> None:
        self.s = s
        self.out: dict[int, InputError] = {}

    def fail(self, bad, make) -> None:
        for r in np.flatnonzero(bad):
            if int(r) not in self.out:
                self.out[int(r)] = make(int(r))

    def point_rule(self, cond, column, kind, text, hint, unit_of) -> None:
        """A rule on readings: the run's first offending point, its value as typed."""
        s = self.s
        bad = s.mask & cond
        for r in np.flatnonzero(bad.any(axis=1)):
            if int(r) in self.out:
                continue
            i = int(np.argmax(bad[r]))
            value = getattr(s, {"bath_temperature": "T", "reading": "reading",
                                "pressure": "pressure"}[column])[r, i]
            shown = (f"{from_si(value, unit_of[r], kind):g} {unit_of[r]}" if unit_of[r]
                     else f"{value:g}")
            self.out[int(r)] = ImpossibleDataError(text.format(shown), **s.place(r, column, i),
                                                   hint=hint)


def _reading_checks(ch: _Checker, s: RunStack, c: Columns) -> None:
    for column, arr in (("bath_temperature", s.T), ("reading", s.reading)):
        nonfinite = s.mask & ~np.isfinite(arr)
        ch.fail(nonfinite.any(axis=1), lambda r, col=column, a=nonfinite: BadValueError(
            f"missing or non-finite {col}", **s.place(r, col, int(np.argmax(a[r]))),
            hint="enter the measured value, or delete the row"))
    own = ~np.isnan(s.pressure)
    inf_p = own & ~np.isfinite(s.pressure)
    ch.fail(inf_p.any(axis=1), lambda r: BadValueError(
        "pressure is not a finite number", **s.place(r, "pressure", int(np.argmax(inf_p[r]))),
        hint="enter the absolute pressure, or leave the cell empty"))
    volume_units = c.reading_unit or [""] * s.R
    length = s.length_readings[:, None]
    ch.point_rule(s.T <= 0, "bath_temperature", "temperature",
                  "bath temperature {} is at or below absolute zero",
                  "check the unit in the column header", c.T_unit)
    # plausibility (common practice, no source): no liquid bath runs above 700 K,
    # and no graduated tube holds a litre of gas
    ch.point_rule(s.T > 700.0, "bath_temperature", "temperature",
                  "bath temperature {} is far above any liquid bath",
                  "check the value and the unit in the column header", c.T_unit)
    ch.point_rule(~length & (s.reading > 1e-3), "reading", "reading",
                  "graduation reading {} is larger than any graduated tube",
                  "check the value and the unit in the column header", volume_units)
    ch.point_rule(length & (s.reading > 2.0), "reading", "reading",
                  "bubble length {} is longer than any capillary",
                  "check the value and the unit in the column header", volume_units)
    ch.point_rule(s.reading < 0, "reading", "reading", "graduation reading {} is negative",
                  "readings count up from the zero mark; check the sign", volume_units)
    ch.point_rule(own & (s.pressure <= 0), "pressure", "pressure", "pressure {} is not positive",
                  "enter the absolute pressure", c.pressure_unit or [""] * s.R)


def _run_checks(ch: _Checker, s: RunStack) -> None:
    sc, fail = s.scalar, ch.fail
    for key in ("P_bar", "T_room"):
        name = QUANTITY[key]
        fail(np.isnan(sc[key]), lambda r, n=name: RunFileError(
            f"required entry {n!r} is missing", **s.place(r, n), hint=f"give {n} with its unit"))
    for key, name in QUANTITY.items():
        fail(np.isinf(sc[key]), lambda r, n=name: BadValueError(
            f"{n} is not a finite number", **s.place(r, n), hint="enter the measured value"))
    for key, (lo, hi, what) in LIMITS.items():
        name = QUANTITY[key]
        value = np.abs(sc[key]) if key == "depth" else sc[key]
        if key in LENGTH_LIMITS:  # entries of the readings' kind: a length in a capillary
            llo, lhi, lwhat = LENGTH_LIMITS[key]
            length = s.length_readings
            bad = np.where(length, (value < llo) | (value > lhi), (value < lo) | (value > hi))
            fail(bad, lambda r, n=name, k=key, w=what, lw=lwhat: ImpossibleDataError(
                f"{n} = {sc[k][r]:g} {'m' if s.length_readings[r] else SI_UNIT[k]} is "
                f"{lw if s.length_readings[r] else w}", **s.place(r, n),
                hint="check the value and its unit"))
            continue
        fail((value < lo) | (value > hi), lambda r, n=name, k=key, w=what: ImpossibleDataError(
            f"{n} = {sc[k][r]:g} {SI_UNIT[k]} is {w}", **s.place(r, n),
            hint="check the value and its unit"))
    fail(sc["P_bar"] <= 0, lambda r: ImpossibleDataError(
        "barometric_pressure: must be positive", **s.place(r, "barometric_pressure"),
        hint="enter the absolute barometric pressure"))
    fail(sc["T_room"] <= 0, lambda r: ImpossibleDataError(
        "room_temperature: is at or below absolute zero", **s.place(r, "room_temperature"),
        hint="check its unit"))
    for key in ("mass_before", "mass_after", "V_injected"):
        name = QUANTITY[key]
        fail(sc[key] <= 0, lambda r, n=name: ImpossibleDataError(
            f"{n}: must be positive", **s.place(r, n), hint="enter the measured value"))
    one = np.isnan(sc["mass_before"]) != np.isnan(sc["mass_after"])
    fail(one, lambda r: ImpossibleDataError(
        "both masses are needed for the weighing",
        **s.place(r, "mass_before_air" if np.isnan(sc["mass_before"][r]) else "mass_after_air"),
        hint="enter both masses, or neither"))
    fail(sc["mass_after"] >= sc["mass_before"], lambda r: ImpossibleDataError(
        "mass_after_air: is not lower than the mass before the air was added; the air "
        "displaces liquid, so the mass must drop", **s.place(r, "mass_after_air"),
        hint="check that the two masses are not swapped"))
    fail(sc["density"] <= 0, lambda r: ImpossibleDataError(
        "liquid_density: must be positive", **s.place(r, "liquid_density"),
        hint="enter the density or 'reference'"))
    fail(s.direction == 0, lambda r: BadValueError(
        "graduated_from: not 'closed end' or 'open end'", **s.place(r, "graduated_from"),
        hint="write 'closed end' when the zero mark is near the closed end"))
    fail(s.length_readings & np.isnan(sc["bore"]), lambda r: RunFileError(
        "the readings are lengths: bubble lengths in a capillary need its bore",
        **s.place(r, "tube_bore"),
        hint="add tube_bore (the capillary's inner diameter), or give the readings in mL"))
    fail(~s.length_readings & np.isfinite(sc["bore"]) & np.isnan(sc["room_reading"]),
         lambda r: RunFileError(
        "tube_bore needs the room reading: the depths follow from the volume moved since then",
        **s.place(r, "tube_bore"), hint="add room_reading, or remove tube_bore"))
    no_scale = ~s.length_readings & np.isnan(sc["scale_offset"]) & (
        np.isnan(sc["room_reading"]) | np.isnan(sc["mass_before"]))
    fail(no_scale, lambda r: RunFileError(
        "the scale offset can be neither calibrated nor read: give room_reading with "
        "mass_before_air and mass_after_air, or scale_offset", **s.place(r, "scale_offset"),
        hint="add the weighing rows, or a measured scale_offset"))


def _check_temperature_unit(s: RunStack, c: Columns, out: dict) -> None:
    """Catch Celsius values labelled as kelvin and the reverse (plausibility).

    Rule (common practice, no source): a liquid bath runs between about -20
    and 200 degC, so bath values all below 150 labelled K, or all above 200
    labelled degC, are the other unit.
    """
    raw_units = np.asarray(c.T_unit, dtype=object)
    units = np.empty(len(raw_units), dtype=object)
    for u in set(raw_units.tolist()):  # a loop over the few distinct unit texts
        units[raw_units == u] = normalize_unit(u)
    for unit, limit in (("K", 150.0), ("degC", 200.0)):
        rows = np.flatnonzero((units == unit) & s.mask.any(axis=1))
        if not rows.size:
            continue
        raw = np.where(s.mask[rows], s.T[rows] - (273.15 if unit == "degC" else 0.0), np.nan)
        with np.errstate(invalid="ignore"):
            if unit == "K":
                bad = np.max(np.where(np.isnan(raw), -np.inf, raw), axis=1) < limit
            else:
                bad = np.min(np.where(np.isnan(raw), np.inf, raw), axis=1) > limit
        for k in np.flatnonzero(bad):
            r = int(rows[k])
            if r in out:
                continue
            if unit == "K":
                i = int(np.nanargmax(raw[k]))
                out[r] = ImpossibleDataError(
                    f"bath temperatures up to {raw[k, i]:g} K are far below any liquid bath",
                    **s.place(r, "bath_temperature", i),
                    hint="these look like degC values: write 'bath_temperature [degC]'")
            else:
                i = int(np.nanargmin(raw[k]))
                out[r] = ImpossibleDataError(
                    f"bath temperatures from {raw[k, i]:g} °C are above any liquid bath",
                    **s.place(r, "bath_temperature", i),
                    hint="these look like kelvin values: write 'bath_temperature [K]'")
