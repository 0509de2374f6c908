"""The run record: one trapped-bubble run exactly as the user entered it.

:class:`Run` keeps the numbers, units and text as typed (nothing is converted
or rounded); :mod:`vpkit.runfile` reads and writes the run file, and
:meth:`Run.to_si` gives the validated SI view the core computes with (built by
:mod:`vpkit.stack`, the one place where input is converted and checked).
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

import numpy as np

if TYPE_CHECKING:
    from .stack import RunSI

#: Metadata the run section understands: name -> (kind, required, description).
#: kind is a unit kind of :mod:`vpkit.units`, or "text".
FIELDS: dict[str, tuple[str, bool, str]] = {
    "liquid": ("text", True, "name of the liquid (see vpkit.reference.liquids())"),
    "barometric_pressure": ("pressure", True, "barometric pressure during the run"),
    "room_temperature": ("temperature", True, "room temperature at the weighing"),
    "room_reading": ("volume", False, "graduation reading at room temperature, at the weighing"),
    "mass_before_air": ("mass", False, "tube + liquid before the air was added"),
    "mass_after_air": ("mass", False, "tube + liquid after the air was added"),
    "liquid_density": ("density", False, "liquid density at room temperature, or 'reference'"),
    "injected_air_volume": ("volume", False, "volume of air injected, at room conditions"),
    "scale_offset": ("volume", False, "volume between the closed end and the zero mark, if known"),
    "graduated_from": ("text", False, "'closed end' (default) or 'open end'"),
    "bubble_depth": ("length", False, "depth of the gas-liquid interface below the bath surface "
                     "(with tube_bore: at the room reading)"),
    "room_depth": ("length", False, "depth of the interface below the liquid surface at the "
                   "room reading (the weighing); default: no head there"),
    "tube_bore": ("length", False, "inner diameter of the tube: the interface then moves down "
                  "by (V - V_room)/(pi bore^2/4) as the bubble grows"),
    "injected_air_humidity": ("fraction", False, "relative humidity of the injected air "
                              "(%, for the injected air amount)"),
    "reading_resolution": ("volume", False, "smallest graduation step; without "
                           "reading_uncertainty, u(reading) = resolution/sqrt(12)"),
    "tube_capacity": ("volume", False, "largest gas volume the tube holds (its full scale)"),
    "boiling_point": ("temperature", False, "measured boiling point at the barometric pressure"),
    "reading_uncertainty": ("volume", False, "standard uncertainty of one graduation reading"),
    "temperature_uncertainty": ("temperature", False, "standard uncertainty of one bath reading"),
    "notes": ("text", False, "free text"),
}

#: Default standard uncertainties, in SI, used where the file gives none.
#: All are common practice, no source: half the smallest division of a 0.01 mL
#: graduated tube, a calibrated laboratory thermometer, a laboratory aneroid
#: barometer, an analytical balance (0.1 mg readability, 1 mg with drift and
#: handling), a 1 mL syringe (1 %), a ruler held against a bath, the spread of
#: tabulated densities.
DEFAULT_UNCERTAINTY: dict[str, float] = {
    "reading_uncertainty": 0.005e-6,  # m^3
    "temperature_uncertainty": 0.2,  # K
    "barometric_pressure": 100.0,  # Pa
    "pressure": 100.0,  # Pa, per-point pressure
    "room_temperature": 0.3,  # K
    "mass_before_air": 1e-6,  # kg
    "mass_after_air": 1e-6,  # kg
    "injected_air_volume": 0.01e-6,  # m^3
    "scale_offset": 0.005e-6,  # m^3
    "bubble_depth": 0.003,  # m
    "room_depth": 0.003,  # m
    "tube_bore": 1e-4,  # m (a caliper or the maker's figure)
    "injected_air_humidity": 0.05,  # fraction (a room hygrometer, 5 % RH)
    "boiling_point": 0.3,  # K
    "liquid_density_relative": 1e-3,  # relative, for 'reference' or a value without uncertainty
}


@dataclass(frozen=True)
class Entry:
    """One metadata entry as entered: a number or text, its unit, its uncertainty.

    The uncertainty is in the same unit as the value (for a temperature, a
    difference of that size).
    """

    value: float | str
    unit: str = ""
    uncertainty: float | None = None


@dataclass(frozen=True)
class Run:
    """One trapped-bubble run, exactly as entered.

    Attributes
    ----------
    entries : tuple of (name, Entry)
        Metadata in the order entered.
    units : tuple of str
        Units of bath temperature, reading and per-point pressure (the last
        may be empty when no pressures are given).
    bath_temperature, reading : tuple of float
        The readings, in ``units``.
    pressure : tuple of float or None
        Per-point pressure, None where not given.
    include : tuple of bool
    reason : tuple of str
        Why a point is excluded (free text; may be given for included points).
    comments : tuple of str
        Comment lines of the file, kept for round trips.
    source : str or None
        Where the run was read from (not compared).
    rows : tuple of int
        File line of each reading (not compared), for messages.
    entry_rows : tuple of (name, int)
        File line of each metadata entry (not compared), for messages.
    """

    entries: tuple[tuple[str, Entry], ...]
    units: tuple[str, str, str]
    bath_temperature: tuple[float, ...]
    reading: tuple[float, ...]
    pressure: tuple[float | None, ...]
    include: tuple[bool, ...]
    reason: tuple[str, ...]
    comments: tuple[str, ...] = ()
    source: str | None = field(default=None, compare=False)
    rows: tuple[int, ...] = field(default=(), compare=False)
    entry_rows: tuple[tuple[str, int], ...] = field(default=(), compare=False)

    # -- access -----------------------------------------------------------
    def entry(self, name: str) -> Entry | None:
        """The metadata entry called ``name``, or None."""
        for key, value in self.entries:
            if key == name:
                return value
        return None

    @property
    def liquid(self) -> str:
        e = self.entry("liquid")
        return "" if e is None else str(e.value)

    @property
    def n_points(self) -> int:
        return len(self.bath_temperature)

    def row_of(self, i: int) -> int | None:
        """File line of reading ``i`` (None for runs not read from a file)."""
        return self.rows[i] if i < len(self.rows) else None

    def row_of_entry(self, name: str) -> int | None:
        """File line of the metadata entry ``name`` (None if unknown)."""
        return dict(self.entry_rows).get(name)

    def with_include(self, include, reason=None) -> Run:
        """A copy with new include flags (and reasons); the original is unchanged."""
        include = tuple(bool(v) for v in include)
        reason = self.reason if reason is None else tuple(str(r) for r in reason)
        if len(include) != self.n_points or len(reason) != self.n_points:
            raise ValueError("include and reason must have one entry per reading")
        return dataclasses.replace(self, include=include, reason=reason)

    # -- construction -----------------------------------------------------
    @classmethod
    def from_frame(cls, df, **metadata: Any) -> Run:
        """Build a run from a DataFrame of readings and keyword metadata.

        Parameters
        ----------
        df : pandas.DataFrame
            Columns ``bath_temperature [UNIT]`` and ``reading [UNIT]``;
            optional ``pressure [UNIT]``, ``include`` and ``reason``.
        **metadata
            Each a number-with-unit string (``"99.8 kPa"``), a tuple
            ``(value, unit)`` or ``(value, unit, uncertainty)``, an
            :class:`Entry`, or plain text for text fields.

        Examples
        --------
        >>> import pandas as pd
        >>> df = pd.DataFrame({"bath_temperature [degC]": [30.0, 40.0],
        ...                    "reading [mL]": [2.1, 2.3]})
        >>> run = Run.from_frame(df, liquid="water", barometric_pressure="100.1 kPa",
        ...                      room_temperature=(21.0, "degC"), scale_offset="0.1 mL")
        >>> run.units
        ('degC', 'mL', '')
        """
        from .runfile import run_from_frame

        return run_from_frame(df, metadata)

    def to_frame(self):
        """The readings as a DataFrame with units in the column names."""
        import pandas as pd

        tu, ru, pu = self.units
        data = {f"bath_temperature [{tu}]": list(self.bath_temperature),
                f"reading [{ru}]": list(self.reading)}
        if pu:
            data[f"pressure [{pu}]"] = [np.nan if p is None else p for p in self.pressure]
        data["include"] = list(self.include)
        data["reason"] = list(self.reason)
        return pd.DataFrame(data)

    def to_si(self) -> RunSI:
        """Convert to SI and validate (see :class:`vpkit.stack.RunSI`).

        The same conversion, validation and default uncertainties as for many
        runs: this is :func:`vpkit.stack.stack_runs` of this one run.

        Raises
        ------
        UnitError, ImpossibleDataError, RunFileError, BadValueError
            With the file, row and column of the offending entry.
        """
        from .stack import stack_runs

        return stack_runs([self]).row(0)
