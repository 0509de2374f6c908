"""Published vapor-pressure equations and liquid densities, and comparisons.

The coefficient tables are data files in ``vpkit/data/`` named after their
source; each row carries its units, validity range and citation.

References
----------
.. [1] C. Antoine, "Tensions des vapeurs; nouvelle relation entre les tensions
   et les températures", C. R. Acad. Sci. 107, 681-684 (1888).
.. [2] B. E. Poling, J. M. Prausnitz, J. P. O'Connell, "The Properties of Gases
   and Liquids", 5th ed., McGraw-Hill (2001), Appendix A (Antoine table).
.. [3] VDI Heat Atlas, 2nd ed., Springer (2010), chapter D3.1: PPDS equation for
   saturated-liquid density.
.. [4] W. Wagner, A. Pruss, "The IAPWS formulation 1995 for the thermodynamic
   properties of ordinary water substance for general and scientific use",
   J. Phys. Chem. Ref. Data 31, 387-535 (2002) (IAPWS-95), via the package
   ``iapws`` (J. J. Romera) when installed.
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass
from importlib import resources

import numpy as np
import pandas as pd

from .constants import P_STANDARD, R
from .errors import BadValueError, InputError
from .units import to_si

LN10 = math.log(10.0)


@functools.cache
def antoine_table() -> pd.DataFrame:
    """The bundled Antoine table (see ``vpkit/data/antoine_poling.csv``)."""
    with resources.files("vpkit.data").joinpath("antoine_poling.csv").open("r") as fh:
        return pd.read_csv(fh, comment="#", dtype={"aliases": str}, keep_default_na=False)


@functools.cache
def density_table() -> pd.DataFrame:
    """The bundled PPDS density table (see ``vpkit/data/density_vdi_ppds.csv``)."""
    with resources.files("vpkit.data").joinpath("density_vdi_ppds.csv").open("r") as fh:
        return pd.read_csv(fh, comment="#", dtype={"cas": str})


def liquids() -> list[str]:
    """Names of the liquids with a bundled reference equation."""
    return list(antoine_table()["liquid"])


@functools.cache
def _name_index() -> dict[str, int]:
    index = {}
    for i, row in antoine_table().iterrows():
        for name in [row["liquid"], row["cas"], *row["aliases"].split(";")]:
            if name.strip():
                index[name.strip().lower()] = i
    return index


def _row(liquid: str) -> pd.Series:
    table = antoine_table()
    i = _name_index().get(liquid.strip().lower())
    if i is not None:
        return table.loc[i]
    raise BadValueError(f"no reference data for liquid {liquid!r}", column="liquid",
                     hint="use one of " + ", ".join(table["liquid"]) + ", or reference=None")


def canonical_name(liquid: str) -> str:
    """The table's name for ``liquid`` (aliases and CAS numbers accepted)."""
    return str(_row(liquid)["liquid"])


def has_reference(liquid: str) -> bool:
    """Whether the bundled table has ``liquid`` (aliases and CAS numbers accepted)."""
    return liquid.strip().lower() in _name_index()


@dataclass(frozen=True)
class ReferenceCurve:
    """A published vapor-pressure equation in SI, with its validity range.

    Attributes
    ----------
    liquid, label, source : str
    T_min, T_max : float
        Validity range [K].
    """

    liquid: str
    label: str
    source: str
    T_min: float
    T_max: float
    _kind: str
    _coef: tuple[float, ...]

    def ln_p(self, T):
        """ln(p / Pa) at T [K]."""
        T = np.asarray(T, float)
        if self._kind == "antoine":
            a, b, c = self._coef  # ln p = a - b / (T + c), SI
            return a - b / (T + c)
        return np.log(_iapws_psat(T))

    def p(self, T):
        """Vapor pressure [Pa] at T [K]."""
        return np.exp(self.ln_p(T))

    def dlnp_dT(self, T):
        """d ln p / dT [1/K]."""
        T = np.asarray(T, float)
        if self._kind == "antoine":
            _, b, c = self._coef
            return b / (T + c) ** 2
        h = 1e-3
        return (self.ln_p(T + h) - self.ln_p(T - h)) / (2 * h)

    def apparent_enthalpy(self, T):
        """Apparent enthalpy of vaporization R T^2 d ln p/dT [J/mol].

        This is what a Clausius-Clapeyron slope measures (ideal vapor, liquid
        volume neglected), so it compares like with like.
        """
        T = np.asarray(T, float)
        return R * T**2 * self.dlnp_dT(T)

    def boiling_point(self, P: float = P_STANDARD) -> float:
        """Temperature [K] where the curve reaches P [Pa]."""
        from scipy.optimize import brentq

        target = math.log(P)
        lo, hi = 150.0, 700.0
        if self._kind == "antoine":
            _, b, c = self._coef
            lo = max(lo, -c + 1.0)
        else:
            lo, hi = self.T_min + 0.01, self.T_max - 0.01
        return float(brentq(lambda t: float(self.ln_p(t)) - target, lo, hi, xtol=1e-10))


@functools.cache
def antoine_curve(liquid: str) -> ReferenceCurve:
    """The bundled published Antoine equation for ``liquid``."""
    row = _row(liquid)
    base = float(row["log_base"]) if str(row["log_base"]) != "e" else math.e
    k = math.log(base)
    # log_base(p/p_unit) = A - B/(T/T_unit + C)  ->  ln(p/Pa) = a - b/(T + c) in K
    p_scale = to_si(1.0, row["p_unit"], "pressure")
    t_scale = to_si(1.0, row["T_unit"], "temperature", delta=True)
    t_zero = to_si(0.0, row["T_unit"], "temperature")
    A, B, C = float(row["A"]), float(row["B"]), float(row["C"])
    c = C * t_scale - t_zero
    a = k * A + math.log(p_scale)
    b = k * B * t_scale
    T_min = float(to_si(float(row["T_min"]), row["T_unit"], "temperature"))
    T_max = float(to_si(float(row["T_max"]), row["T_unit"], "temperature"))
    return ReferenceCurve(str(row["liquid"]), f"Antoine ({row['source']})", str(row["source"]),
                          T_min, T_max, "antoine", (a, b, c))


def iapws95_available() -> bool:
    try:
        import iapws  # noqa: F401
    except ImportError:
        return False
    return True


def iapws95_curve() -> ReferenceCurve:
    """Saturation pressure of water from IAPWS-95 (needs the ``iapws`` package)."""
    if not iapws95_available():
        raise InputError("IAPWS-95 needs the 'iapws' package",
                         hint="pip install 'vpkit[reference]' or use reference='antoine'")
    return ReferenceCurve("water", "IAPWS-95", "Wagner & Pruss 2002 (IAPWS-95)", 273.16,
                          647.096, "iapws95", ())


@functools.lru_cache(maxsize=4096)
def _iapws_psat_scalar(T: float) -> float:
    from iapws import IAPWS95

    return IAPWS95(T=T, x=0).P * 1e6


def _iapws_psat(T):
    T = np.asarray(T, float)
    return np.vectorize(lambda t: _iapws_psat_scalar(float(t)), otypes=[float])(T)


@functools.cache
def reference_curve(liquid: str, source: str = "auto") -> ReferenceCurve:
    """The reference equation for ``liquid``.

    Parameters
    ----------
    source : {"auto", "antoine", "iapws95"}
        "auto" takes IAPWS-95 for water when ``iapws`` is installed, else the
        bundled Antoine set.
    """
    if source == "iapws95" or (source == "auto" and canonical_name(liquid) == "water"
                               and iapws95_available()):
        return iapws95_curve()
    return antoine_curve(liquid)


def liquid_density(liquid: str, T):
    """Saturated-liquid density [kg/m^3] at T [K], PPDS equation [3]."""
    cas = _row(liquid)["cas"]
    table = density_table()
    hit = table[table["cas"] == cas]
    if hit.empty:
        raise InputError(f"no bundled density for {liquid!r}", column="liquid_density",
                         hint="enter the measured liquid_density")
    r = hit.iloc[0]
    tau = 1.0 - np.asarray(T, float) / r["T_c"]
    return (r["rho_c"] + r["A"] * tau**0.35 + r["B"] * tau ** (2 / 3) + r["C"] * tau
            + r["D"] * tau ** (4 / 3))


@dataclass(frozen=True)
class ReferenceComparison:
    """How measured vapor pressures and a fit compare with a reference curve.

    Attributes
    ----------
    curve : ReferenceCurve
    deviation_percent : ndarray
        100 (p_measured / p_reference - 1) per point.
    T_m : float
        Temperature the enthalpies refer to [K].
    enthalpy : float
        Reference apparent enthalpy R T^2 dln p/dT at T_m [J/mol].
    enthalpy_chord : float
        Reference Clausius-Clapeyron slope over the included temperatures,
        -R d ln p / d(1/T) by least squares on the reference curve [J/mol].
    normal_boiling_point : float
        Where the reference reaches 101.325 kPa [K].
    outside : tuple of int
        Indices of points outside the validity range.
    warnings : tuple of str
    """

    curve: ReferenceCurve
    deviation_percent: np.ndarray
    T_m: float
    enthalpy: float
    enthalpy_chord: float
    normal_boiling_point: float
    outside: tuple[int, ...]
    warnings: tuple[str, ...]


def compare_to_reference(curve: ReferenceCurve, T, p, include, T_m: float) -> ReferenceComparison:
    """Compare vapor pressures ``p`` [Pa] at ``T`` [K] with ``curve``.

    ``include`` marks the points of the fit; the chord enthalpy uses those.
    """
    T = np.asarray(T, float)
    p = np.asarray(p, float)
    include = np.asarray(include, bool)
    with np.errstate(invalid="ignore", divide="ignore"):
        dev = 100.0 * (p / curve.p(T) - 1.0)
    outside = tuple(int(i) for i in np.flatnonzero((T < curve.T_min) | (T > curve.T_max)))
    warnings = []
    if outside:
        warnings.append(
            f"{len(outside)} point(s) outside the {curve.label} validity range "
            f"{curve.T_min - 273.15:.1f} to {curve.T_max - 273.15:.1f} degC: the reference is "
            "extrapolated there")
    Ti = T[include] if include.any() else T
    x = 1.0 / Ti
    slope = np.polyfit(x, curve.ln_p(Ti), 1)[0] if len(Ti) >= 2 else np.nan
    return ReferenceComparison(curve, dev, float(T_m), float(curve.apparent_enthalpy(T_m)),
                               float(-R * slope), curve.boiling_point(P_STANDARD), outside,
                               tuple(warnings))
