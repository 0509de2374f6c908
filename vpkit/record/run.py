"""The run record: one trapped-bubble run exactly as the user entered it.

:class:`Run` keeps the numbers, units and text as typed (nothing is converted
or rounded); :mod:`vpkit.record.runfile` reads and writes the run file, and
:func:`vpkit.record.assemble.run_in_si` gives the validated SI view the core
computes with (the one place where input is converted and checked).
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass, field
from pathlib import PurePath
from typing import Any

import numpy as np

from .cells import frame_to_parts
from .fields import Entry


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

    @property
    def name(self) -> str | None:
        """The run's file name without its extension (a workbook's, for a run read from
        one of its sheets): its run id and the name of its outputs; None for a run not
        read from a file."""
        if not self.source:
            return None
        return PurePath(self.source.partition(" [sheet ")[0]).stem

    def first(self, k: int) -> Run:
        """The run as it stood after its first ``k`` readings (metadata, session marks
        and file lines kept): what a check of reading ``k + 1`` compares with."""
        if not 0 <= k <= self.n_points:
            raise ValueError(f"k must be 0 to {self.n_points}, got {k}")
        return dataclasses.replace(
            self, bath_temperature=self.bath_temperature[:k], reading=self.reading[:k],
            pressure=self.pressure[:k], include=self.include[:k], reason=self.reason[:k],
            rows=self.rows[:k])

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
        return cls(**frame_to_parts(df, metadata))

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
