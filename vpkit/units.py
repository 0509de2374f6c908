"""The one pint registry of vpkit: conversion to SI happens here only.

Readers, panels and reports call :func:`to_si` / :func:`from_si`; the core
never sees a unit other than K, Pa, m^3, kg, mol and J/mol.

References
----------
.. [1] pint, "Physical quantities module", unit definitions file
   (default_en.txt): definitions of mmHg, torr, inHg, atm, bar.
"""

from __future__ import annotations

import functools

import pint

from .errors import UnitError

ureg = pint.UnitRegistry(autoconvert_offset_to_baseunit=True)

#: What each kind of quantity is, and its SI unit.
SI_UNITS: dict[str, str] = {
    "temperature": "K",
    "pressure": "Pa",
    "volume": "m**3",
    "mass": "kg",
    "density": "kg/m**3",
    "length": "m",
    "fraction": "dimensionless",
}

_DIMENSIONS = {
    "temperature": "[temperature]",
    "pressure": "[mass] / [length] / [time] ** 2",
    "volume": "[length] ** 3",
    "mass": "[mass]",
    "density": "[mass] / [length] ** 3",
    "length": "[length]",
    "fraction": "",
}

_EXAMPLES = {
    "temperature": "degC, K, degF",
    "pressure": "kPa, Pa, hPa, mbar, bar, atm, mmHg, Torr, inHg",
    "volume": "mL, uL, cm3, L",
    "mass": "g, mg, kg",
    "density": "g/mL, g/cm3, kg/m3",
    "length": "cm, mm, m",
    "fraction": "%, or no unit for a fraction (0.45)",
}

# Spellings people type that pint does not know as such.
_ALIASES = {
    "°c": "degC", "ºc": "degC", "c": "degC", "degc": "degC", "celsius": "degC",
    "°f": "degF", "f": "degF", "degf": "degF", "fahrenheit": "degF",
    "k": "K", "kelvin": "K",
    "ml": "mL", "µl": "uL", "μl": "uL", "ul": "uL", "cm3": "cm**3", "cm³": "cm**3",
    "cc": "cm**3", "l": "L", "m3": "m**3", "mm3": "mm**3",
    "torr": "torr", "mmhg": "mmHg", "inhg": "inHg", "kpa": "kPa", "hpa": "hPa",
    "°celsius": "degC", "degcelsius": "degC", "ºf": "degF", "milliliter": "mL",
    "millilitre": "mL", "milliliters": "mL", "millilitres": "mL", "gram": "g", "grams": "g",
    "mbar": "mbar", "pa": "Pa", "bar": "bar", "atm": "atm", "psi": "psi",
    "g/ml": "g/mL", "g/cm3": "g/cm**3", "kg/m3": "kg/m**3", "kg/l": "kg/L",
    "g/l": "g/L",
    "%": "percent", "%rh": "percent", "rh": "percent", "percent": "percent",
}


def normalize_unit(text: str) -> str:
    """Return the pint spelling of a unit as people type it (``°C``, ``deg C``, ``mm Hg``)."""
    key = text.strip()
    squeezed = key.lower().replace(" ", "").replace("℃", "°c").replace("℉", "°f")
    for prefix in ("degrees", "degree"):
        if squeezed.startswith(prefix) and squeezed[len(prefix):] in ("c", "f", "celsius",
                                                                    "fahrenheit"):
            squeezed = "deg" + squeezed[len(prefix)]
    return _ALIASES.get(squeezed, _ALIASES.get(key.lower(), key))


#: A graduation reading is a volume (a graduated tube) or, for a capillary of known bore,
#: the bubble's length: the "reading" kind accepts either, and :func:`reading_kind` says which.
READING_KINDS = ("volume", "length")


@functools.lru_cache(maxsize=256)
def reading_kind(unit: str) -> str:
    """``"volume"`` or ``"length"``: what a reading in ``unit`` is.

    Raises
    ------
    UnitError
        The unit is neither (with a hint naming both).
    """
    for kind in READING_KINDS:
        try:
            _factor(unit, kind, False)
            return kind
        except UnitError:
            continue
    raise UnitError(f"unit {unit!r} is neither a volume nor a length",
                    hint="a graduation reading is a volume (mL, uL, cm3); a capillary's "
                    "bubble length is a length (mm, cm) read with tube_bore")


@functools.lru_cache(maxsize=256)
def _factor(unit: str, kind: str, delta: bool) -> tuple[float, float]:
    """Return (scale, offset) such that SI = scale*value + offset."""
    if kind == "reading":
        return _factor(unit, reading_kind(unit), delta)
    if kind not in _DIMENSIONS:
        raise KeyError(kind)
    name = normalize_unit(unit)
    if not name and kind == "fraction":
        return 1.0, 0.0  # a plain number is a fraction
    if not name:
        raise UnitError(
            f"no unit given for a {kind}",
            hint=f"write the unit, e.g. one of {_EXAMPLES[kind]}",
        )
    try:
        u = ureg.Unit(name)
    except Exception as exc:  # pint raises several types for bad text
        raise UnitError(
            f"unknown unit {unit!r} for a {kind}",
            hint=f"use one of {_EXAMPLES[kind]}",
        ) from exc
    if u.dimensionality != ureg.Unit(SI_UNITS[kind]).dimensionality:
        raise UnitError(
            f"unit {unit!r} is not a unit of {kind}",
            hint=f"use one of {_EXAMPLES[kind]}",
        )
    si = SI_UNITS[kind]
    if kind == "temperature":
        # a temperature difference (an uncertainty) has the size of one degree of the
        # unit and no offset, whichever spelling of the unit was typed
        zero = ureg.Quantity(0.0, name).to(si).magnitude
        one = ureg.Quantity(1.0, name).to(si).magnitude
        return float(one - zero), 0.0 if delta else float(zero)
    scale = ureg.Quantity(1.0, name).to(si).magnitude
    return float(scale), 0.0


def to_si(value, unit: str, kind: str, *, delta: bool = False):
    """Convert a number (or numpy array) in ``unit`` to the SI unit of ``kind``.

    Parameters
    ----------
    value : float or array_like
        The number as entered.
    unit : str
        The unit as entered (``kPa``, ``°C``, ``mL`` ...).
    kind : str
        One of ``temperature``, ``pressure``, ``volume``, ``mass``,
        ``density``, ``length``, ``fraction``, or ``reading`` (a volume or a
        length, see :func:`reading_kind`).
    delta : bool
        Treat a temperature as a difference (for uncertainties).

    Returns
    -------
    float or ndarray
        The value in K, Pa, m^3, kg, kg/m^3, m or 1.

    Raises
    ------
    UnitError
        The unit is empty, unknown, or of the wrong dimension.
    """
    scale, offset = _factor(unit, kind, delta)
    return value * scale + offset


def from_si(value, unit: str, kind: str, *, delta: bool = False):
    """Inverse of :func:`to_si`."""
    scale, offset = _factor(unit, kind, delta)
    return (value - offset) / scale


def check_unit(unit: str, kind: str) -> None:
    """Raise :class:`UnitError` unless ``unit`` is a valid unit of ``kind``."""
    _factor(unit, kind, False)
