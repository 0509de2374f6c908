"""The bundled liquids: names, aliases, densities, melting points, published ΔvapH.

Every table is a data file in ``vpkit/physics/data/`` named after its source;
each row carries its units, validity range and citation. A liquid is found by
its name, an alias or its CAS number (case, spaces, '_' and '-' ignored).

References
----------
.. [1] B. E. Poling, J. M. Prausnitz, J. P. O'Connell, "The Properties of Gases
   and Liquids", 5th ed., McGraw-Hill (2001), Appendix A (the liquids, their
   CAS numbers and Antoine sets).
.. [2] VDI Heat Atlas, 2nd ed., Springer (2010), chapter D3.1: PPDS equation for
   saturated-liquid density.
.. [3] VDI Heat Atlas, 2nd ed., Springer (2010), chapter D3.1: PPDS equation 12
   for the enthalpy of vaporization,
   ΔvapH = R T_c (A τ^(1/3) + B τ^(2/3) + C τ + D τ² + E τ⁶), τ = 1 - T/T_c, a
   correlation of calorimetric and other measured values.
.. [4] W. M. Haynes (ed.), "CRC Handbook of Chemistry and Physics", 97th ed.,
   CRC Press (2016): melting points (``melting_points.csv``).
"""

from __future__ import annotations

import functools
import math
from importlib import resources

import numpy as np
import pandas as pd

from ..constants import R
from ..errors import BadValueError, InputError

DATA = "vpkit.physics.data"


def data_file(name: str):
    """An open text handle on the bundled data file ``name``."""
    return resources.files(DATA).joinpath(name).open("r")


@functools.cache
def antoine_table() -> pd.DataFrame:
    """The bundled Antoine table (see ``vpkit/physics/data/antoine_poling.csv``)."""
    with data_file("antoine_poling.csv") as fh:
        return pd.read_csv(fh, comment="#", dtype={"aliases": str}, keep_default_na=False)


@functools.cache
def density_table() -> pd.DataFrame:
    """The bundled PPDS density table (see ``vpkit/physics/data/density_vdi_ppds.csv``)."""
    with data_file("density_vdi_ppds.csv") as fh:
        return pd.read_csv(fh, comment="#", dtype={"cas": str})


@functools.cache
def ppds_table() -> pd.DataFrame:
    """The bundled PPDS vapor-pressure table (see ``vpkit/physics/data/psat_vdi_ppds.csv``)."""
    with data_file("psat_vdi_ppds.csv") as fh:
        return pd.read_csv(fh, comment="#", dtype={"cas": str})


@functools.cache
def hvap_table() -> pd.DataFrame:
    """The bundled PPDS enthalpy-of-vaporization table (``data/hvap_vdi_ppds.csv``)."""
    with data_file("hvap_vdi_ppds.csv") as fh:
        return pd.read_csv(fh, comment="#", dtype={"cas": str})


HVAP_SOURCE = "VDI Heat Atlas 2010 D3.1 (PPDS eq. 12)"


@functools.cache
def has_vaporization_enthalpy(liquid: str) -> bool:
    """Whether a published ΔvapH(T) equation is bundled for ``liquid``."""
    return has_reference(liquid) and canonical_name(liquid) in set(hvap_table()["liquid"])


@functools.cache
def _hvap_coefficients(liquid: str) -> tuple[float, ...]:
    t = hvap_table()
    r = t[t["liquid"] == canonical_name(liquid)].iloc[0]
    return tuple(float(r[k]) for k in ("T_c", "A", "B", "C", "D", "E"))


def vaporization_enthalpy(liquid: str, T):
    """The true ΔvapH(T) [J/mol] of a bundled liquid from PPDS equation 12 [3]."""
    T_c, A, B, C, D, E = _hvap_coefficients(liquid)
    T = np.asarray(T, float)
    with np.errstate(invalid="ignore"):
        tau = np.where(T < T_c, 1.0 - T / T_c, np.nan)
        c = np.cbrt(tau)
        return R * T_c * (A * c + B * c * c + C * tau + D * tau**2 + E * tau**6)


@functools.cache
def melting_point(liquid: str) -> float:
    """Melting point [K] of a bundled liquid (CRC Handbook, ``data/melting_points.csv``), NaN
    for a liquid without one."""
    if not has_reference(liquid):
        return math.nan
    with data_file("melting_points.csv") as fh:
        t = pd.read_csv(fh, comment="#")
    hit = t[t["liquid"] == canonical_name(liquid)]
    return float(hit.iloc[0]["T_melt"]) if len(hit) else math.nan


def per_liquid(liquids, has, fn, *arrays) -> np.ndarray:
    """``fn(liquid, *rows)`` for the rows of each distinct liquid (NaN where ``has`` is
    False): one call per liquid, not per run."""
    arrays = [np.asarray(a, float) for a in arrays]
    out = np.full(arrays[0].shape, np.nan)
    names = np.asarray(liquids, dtype=object)
    for liq in set(names):
        if has(liq):
            sel = names == liq
            out[sel] = fn(liq, *(a[sel] for a in arrays))
    return out


def liquids() -> list[str]:
    """Names of the liquids with a bundled reference equation."""
    return list(antoine_table()["liquid"])


def _key(name: str) -> str:
    """A liquid's name for matching: case, spaces, '_' and '-' ignored (ethyl_acetate)."""
    return "".join(ch for ch in str(name).lower() if ch not in " _-\t")


@functools.cache
def _name_index() -> dict[str, int]:
    index = {}
    for i, row in antoine_table().iterrows():
        for name in [row["liquid"], row["cas"], *row["aliases"].split(";")]:
            if name.strip():
                index[_key(name)] = i
    return index


def liquid_row(liquid: str) -> pd.Series:
    table = antoine_table()
    i = _name_index().get(_key(liquid))
    if i is not None:
        return table.loc[i]
    raise BadValueError(f"no reference data for liquid {liquid!r}", column="liquid",
                     hint="use one of " + ", ".join(table["liquid"]) + "; a liquid not listed is "
                     "analysed without a reference comparison (reference=None in Python, "
                     "--reference none on the command line)")


@functools.cache
def canonical_name(liquid: str) -> str:
    """The table's name for ``liquid`` (aliases and CAS numbers accepted)."""
    return str(liquid_row(liquid)["liquid"])


@functools.cache
def has_reference(liquid: str) -> bool:
    """Whether the bundled table has ``liquid`` (aliases and CAS numbers accepted)."""
    return _key(liquid) in _name_index()


@functools.cache
def _density_coefficients(liquid: str) -> tuple[float, ...]:
    cas = liquid_row(liquid)["cas"]
    table = density_table()
    hit = table[table["cas"] == cas]
    if hit.empty:
        raise InputError(f"no bundled density for {liquid!r}", column="liquid_density",
                         hint="enter the measured liquid_density")
    r = hit.iloc[0]
    return tuple(float(r[k]) for k in ("T_c", "rho_c", "A", "B", "C", "D"))


def liquid_density(liquid: str, T):
    """Saturated-liquid density [kg/m^3] at T [K], PPDS equation [2]."""
    T_c, rho_c, A, B, C, D = _density_coefficients(liquid)
    tau = 1.0 - np.asarray(T, float) / T_c
    return rho_c + A * tau**0.35 + B * tau ** (2 / 3) + C * tau + D * tau ** (4 / 3)
