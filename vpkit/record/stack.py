"""The stacked run record: one run or ten thousand as padded SI arrays, checked once.

Every analysis works on a :class:`RunStack`: per-run quantities as arrays of
shape (R,), readings as arrays of shape (R, N) padded with NaN (``mask`` marks
the real points). One run is a stack of one. This module holds the data
types only; :mod:`vpkit.record.assemble` builds a stack from
:class:`~vpkit.record.run.Run` records or long tables, with **the one** set of
physical checks and **the one** default-uncertainty rule.

Units: K, Pa, m^3, kg, kg/m^3, m. Uncertainties are standard uncertainties in
the same units (``density_relative`` is relative).

References
----------
.. [1] JCGM 100:2008 (GUM), section 4.3: Type B standard uncertainties from
   stated instrument uncertainties (the defaults are common practice, no
   source: see :data:`vpkit.record.run.DEFAULT_UNCERTAINTY`).
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from types import MappingProxyType

import numpy as np

from ..arrays import readonly
from ..units import reading_kind

#: Per-run quantities (keys of ``RunStack.scalar``) and their run-file names.
QUANTITY: dict[str, str] = {
    "P_bar": "barometric_pressure", "T_room": "room_temperature",
    "room_reading": "room_reading", "mass_before": "mass_before_air",
    "mass_after": "mass_after_air", "density": "liquid_density",
    "V_injected": "injected_air_volume", "scale_offset": "scale_offset",
    "depth": "bubble_depth", "T_boil": "boiling_point", "room_depth": "room_depth",
    "bore": "tube_bore", "RH": "injected_air_humidity", "resolution": "reading_resolution",
    "capacity": "tube_capacity",
}

SCALARS = tuple(QUANTITY)
U_KEYS = ("T", "reading", "pressure", "P_bar", "T_room", "room_reading", "mass_before",
          "mass_after", "V_injected", "scale_offset", "depth", "T_boil", "room_depth", "bore",
          "RH", "density_relative")


@dataclass(frozen=True)
class RunSI:
    """The SI view of one run of a stack (arrays of length n, read-only).

    ``pressure`` is NaN where a point has no own pressure; per-run quantities
    are floats, or None where the run does not give them. ``u`` maps an input
    to its standard uncertainty (after the default rule).
    """

    liquid: str
    T: np.ndarray
    reading: np.ndarray
    pressure: np.ndarray
    include: np.ndarray
    reason: tuple[str, ...]
    P_bar: float
    T_room: float
    room_reading: float | None
    mass_before: float | None
    mass_after: float | None
    density: float | None
    density_from_reference: bool
    V_injected: float | None
    scale_offset: float | None
    direction: int
    depth: float | None
    T_boil: float | None
    u: Mapping[str, float]
    room_depth: float | None = None
    bore: float | None = None
    RH: float | None = None
    resolution: float | None = None
    capacity: float | None = None
    length_readings: bool = False


@dataclass(frozen=True)
class RunStack:
    """R runs as padded SI arrays (see the module docstring). All arrays are read-only.

    Attributes
    ----------
    run_ids, liquid, sources : tuple of str
        Per run: its id, the liquid as entered, the file it came from (or None).
    T, reading, pressure : ndarray, shape (R, N)
        Bath temperature [K], graduation reading [m^3], own pressure [Pa] (NaN
        where the point sees the barometric pressure). NaN padding.
    mask, include : ndarray of bool, shape (R, N)
        Real points; points the user includes.
    reason : ndarray of str, shape (R, N)
    rows : ndarray of int, shape (R, N)
        File line of each reading (-1 where unknown).
    scalar : mapping of str -> ndarray (R,)
        Per-run quantities (keys :data:`SCALARS`), NaN where not given;
        ``density`` is NaN where the run asks for the reference density.
    direction : ndarray of int, shape (R,)
        +1 graduated from the closed end, -1 from the open end.
    u : mapping of str -> ndarray (R,)
        Standard uncertainties (keys :data:`U_KEYS`).
    places : tuple of mapping
        Per run, quantity -> (row, column label) for messages.
    length_readings : ndarray of bool, shape (R,)
        The readings (and ``room_reading``) are bubble lengths in a capillary of bore
        ``tube_bore`` [m], not volumes [m^3].
    """

    run_ids: tuple[str, ...]
    liquid: tuple[str, ...]
    sources: tuple[str | None, ...]
    T: np.ndarray
    reading: np.ndarray
    pressure: np.ndarray
    mask: np.ndarray
    include: np.ndarray
    reason: np.ndarray
    rows: np.ndarray
    scalar: Mapping[str, np.ndarray]
    direction: np.ndarray
    u: Mapping[str, np.ndarray]
    places: tuple[Mapping[str, tuple[int | None, str]], ...] = field(repr=False)
    length_readings: np.ndarray = field(default=None, repr=False)

    def __post_init__(self) -> None:
        if self.length_readings is None:
            object.__setattr__(self, "length_readings", readonly(np.zeros(len(self.run_ids),
                                                                          bool)))

    @property
    def R(self) -> int:
        return len(self.run_ids)

    @property
    def N(self) -> int:
        return self.T.shape[1]

    @property
    def n_points(self) -> np.ndarray:
        return readonly(self.mask.sum(axis=1))

    def take(self, index) -> RunStack:
        """The runs at ``index`` (an integer array or boolean mask) as a new stack."""
        idx = np.flatnonzero(index) if np.asarray(index).dtype == bool else np.asarray(index)
        n = int(self.mask[idx].sum(axis=1).max()) if len(idx) else 0
        pick = lambda a: readonly(a[idx][:, :n])  # noqa: E731
        return RunStack(
            tuple(self.run_ids[i] for i in idx), tuple(self.liquid[i] for i in idx),
            tuple(self.sources[i] for i in idx), pick(self.T), pick(self.reading),
            pick(self.pressure), pick(self.mask), pick(self.include), pick(self.reason),
            pick(self.rows), frozen_map({k: v[idx] for k, v in self.scalar.items()}),
            readonly(self.direction[idx]), frozen_map({k: v[idx] for k, v in self.u.items()}),
            tuple(self.places[i] for i in idx), readonly(self.length_readings[idx]))

    def row(self, r: int) -> RunSI:
        """The SI view of run ``r`` (trimmed to its own points)."""
        n = int(self.mask[r].sum())
        s = {k: float(v[r]) for k, v in self.scalar.items()}
        opt = {k: (None if np.isnan(v) else v) for k, v in s.items()}
        return RunSI(
            liquid=self.liquid[r], T=self.T[r, :n], reading=self.reading[r, :n],
            pressure=self.pressure[r, :n], include=self.include[r, :n],
            reason=tuple(str(x) for x in self.reason[r, :n]), P_bar=s["P_bar"],
            T_room=s["T_room"], room_reading=opt["room_reading"],
            mass_before=opt["mass_before"], mass_after=opt["mass_after"],
            density=opt["density"], density_from_reference=opt["density"] is None,
            V_injected=opt["V_injected"], scale_offset=opt["scale_offset"],
            direction=int(self.direction[r]), depth=opt["depth"], T_boil=opt["T_boil"],
            u={k: float(v[r]) for k, v in self.u.items()}, room_depth=opt["room_depth"],
            bore=opt["bore"], RH=opt["RH"], resolution=opt["resolution"],
            capacity=opt["capacity"], length_readings=bool(self.length_readings[r]))

    def place(self, r: int, name: str, point: int | None = None) -> dict:
        """``file``, ``row`` and ``column`` of a quantity (or of point ``point``)."""
        if point is not None:
            row = int(self.rows[r, point])
            return {"file": self.sources[r], "row": None if row < 0 else row, "column": name}
        row, label = self.places[r].get(name, (None, name))
        return {"file": self.sources[r], "row": row, "column": label}


@dataclass
class Columns:
    """SI columns of R runs as the builders hand them to :func:`assemble`.

    Flat per-point arrays (length M, ``run`` gives each point's run index, in
    order) and per-run arrays (length R). Absent values are NaN; ``given_u``
    holds uncertainties the input states (NaN where it states none; the
    optional key ``density_relative`` a relative one).
    """

    run_ids: list[str]
    liquid: list[str]
    sources: list[str | None]
    run: np.ndarray
    T: np.ndarray
    reading: np.ndarray
    pressure: np.ndarray
    include: np.ndarray
    reason: np.ndarray
    rows: np.ndarray
    scalar: dict[str, np.ndarray]
    direction: np.ndarray
    given_u: dict[str, np.ndarray]
    T_unit: list[str]
    places: list[dict[str, tuple[int | None, str]]]
    reading_unit: list[str] = field(default_factory=list)
    pressure_unit: list[str] = field(default_factory=list)

    @property
    def length_readings(self) -> np.ndarray:
        """Per run: the readings are bubble lengths (their unit is a length)."""
        return np.array([bool(u) and reading_kind(u) == "length" for u in self.reading_unit]
                        if self.reading_unit else [False] * len(self.run_ids), bool)


def frozen_map(d: dict[str, np.ndarray]) -> Mapping[str, np.ndarray]:
    return MappingProxyType({k: readonly(np.asarray(v, float)) for k, v in d.items()})
