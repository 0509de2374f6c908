"""The vocabulary of a run record: the quantities a run can give, their defaults, an entry.

References
----------
.. [1] JCGM 100:2008 (GUM), section 4.3: Type B standard uncertainties from
   stated instrument uncertainties (the defaults below are common practice, no source).
"""

from __future__ import annotations

from dataclasses import dataclass

#: Metadata the run section understands: name -> (kind, required, description).
#: kind is a unit kind of :mod:`vpkit.units`, or "text"; "reading" is the kind of the
#: readings themselves (a volume, or a bubble length in a capillary).
FIELDS: dict[str, tuple[str, bool, str]] = {
    "liquid": ("text", True, "name of the liquid (see vpkit.liquids())"),
    "barometric_pressure": ("pressure", True, "barometric pressure during the run"),
    "room_temperature": ("temperature", True, "room temperature at the weighing"),
    "room_reading": ("reading", False, "graduation reading at room temperature, at the weighing"),
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
                  "by (V - V_room)/(pi bore^2/4) as the bubble grows; with readings in a "
                  "length unit (a capillary) the readings are bubble lengths of that bore"),
    "injected_air_humidity": ("fraction", False, "relative humidity of the injected air "
                              "(%, for the injected air amount)"),
    "reading_resolution": ("reading", False, "smallest graduation step; without "
                           "reading_uncertainty, u(reading) = resolution/sqrt(12)"),
    "tube_capacity": ("volume", False, "largest gas volume the tube holds (its full scale)"),
    "boiling_point": ("temperature", False, "measured boiling point at the barometric pressure"),
    "reading_uncertainty": ("reading", False, "standard uncertainty of one graduation reading"),
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
    "reading_uncertainty_length": 0.5e-3,  # m, a bubble length read against a mm scale
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
