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
   J. Phys. Chem. Ref. Data 31, 387-535 (2002) (IAPWS-95): saturation pressures
   computed with the package ``iapws`` (J. J. Romera) every 0.5 K from
   273.16 K to 473.16 K and bundled as ``vpkit/data/water_iapws95_psat.csv``;
   ln p is interpolated in 1/T by a cubic spline (error below 1e-10, checked
   against ``iapws`` in tests/reference/test_iapws95.py).
.. [5] VDI Heat Atlas, 2nd ed., Springer (2010), chapter D3.1: PPDS equation 3
   for the saturation pressure, ln(p/P_c) = (T_c/T)(A τ + B τ^1.5 + C τ^2.5 + D τ^5),
   τ = 1 - T/T_c (the form of W. Wagner, Cryogenics 13, 470-482 (1973)); and
   PPDS equation 12 for the enthalpy of vaporization,
   ΔvapH = R T_c (A τ^(1/3) + B τ^(2/3) + C τ + D τ² + E τ⁶), a correlation of
   calorimetric and other measured values.
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
from .lsq import psum
from .units import to_si

LN10 = math.log(10.0)

#: Relative standard uncertainty of a curve's vapor pressure, by kind, used where a curve
#: supplies p_vap at the air reference. IAPWS-95: 0.025 % (from memory of Wagner & Pruss
#: 2002, conservative as a standard uncertainty). Antoine and PPDS sets state none: 1 %
#: (common practice, no source; the bundled sets agree with CoolProp within 1.5 % and
#: with Perry's DIPPR-101 within 3.5 %, tests/reference/test_antoine_table.py).
CURVE_U_REL = {"iapws95": 2.5e-4, "antoine": 0.01, "ppds": 0.01}


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


@functools.cache
def ppds_table() -> pd.DataFrame:
    """The bundled PPDS vapor-pressure table (see ``vpkit/data/psat_vdi_ppds.csv``)."""
    with resources.files("vpkit.data").joinpath("psat_vdi_ppds.csv").open("r") as fh:
        return pd.read_csv(fh, comment="#", dtype={"cas": str})


@functools.cache
def hvap_table() -> pd.DataFrame:
    """The bundled PPDS enthalpy-of-vaporization table (``vpkit/data/hvap_vdi_ppds.csv``)."""
    with resources.files("vpkit.data").joinpath("hvap_vdi_ppds.csv").open("r") as fh:
        return pd.read_csv(fh, comment="#", dtype={"cas": str})


HVAP_SOURCE = "VDI Heat Atlas 2010 D3.1 (PPDS eq. 12)"


def has_vaporization_enthalpy(liquid: str) -> bool:
    """Whether a published ΔvapH(T) equation is bundled for ``liquid``."""
    return has_reference(liquid) and canonical_name(liquid) in set(hvap_table()["liquid"])


def vaporization_enthalpy(liquid: str, T):
    """The true ΔvapH(T) [J/mol] of a bundled liquid from PPDS equation 12 [5]."""
    t = hvap_table()
    r = t[t["liquid"] == canonical_name(liquid)].iloc[0]
    T_c = float(r["T_c"])
    with np.errstate(invalid="ignore"):
        tau = np.where(np.asarray(T, float) < T_c, 1.0 - np.asarray(T, float) / T_c, np.nan)
        return R * T_c * (r["A"] * np.cbrt(tau) + r["B"] * np.cbrt(tau) ** 2 + r["C"] * tau
                          + r["D"] * tau**2 + r["E"] * tau**6)


@functools.cache
def melting_point(liquid: str) -> float:
    """Melting point [K] of a bundled liquid (CRC Handbook, ``vpkit/data/melting_points.csv``),
    NaN for a liquid without one."""
    if not has_reference(liquid):
        return math.nan
    with resources.files("vpkit.data").joinpath("melting_points.csv").open("r") as fh:
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


def _row(liquid: str) -> pd.Series:
    table = antoine_table()
    i = _name_index().get(_key(liquid))
    if i is not None:
        return table.loc[i]
    raise BadValueError(f"no reference data for liquid {liquid!r}", column="liquid",
                     hint="use one of " + ", ".join(table["liquid"]) + ", or reference=None")


@functools.cache
def canonical_name(liquid: str) -> str:
    """The table's name for ``liquid`` (aliases and CAS numbers accepted)."""
    return str(_row(liquid)["liquid"])


def has_reference(liquid: str) -> bool:
    """Whether the bundled table has ``liquid`` (aliases and CAS numbers accepted)."""
    return _key(liquid) in _name_index()


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

    @property
    def u_rel(self) -> float:
        """Relative standard uncertainty of the curve's p (:data:`CURVE_U_REL`)."""
        return CURVE_U_REL[self._kind]

    def ln_p(self, T):
        """ln(p / Pa) at T [K] (any array shape)."""
        T = np.asarray(T, float)
        if self._kind == "antoine":
            a, b, c = self._coef  # ln p = a - b / (T + c), SI
            with np.errstate(divide="ignore", invalid="ignore"):
                return a - b / (T + c)
        if self._kind == "ppds":
            return _ppds_ln_p(T, self._coef)
        return _water_ln_p(T)

    def p(self, T):
        """Vapor pressure [Pa] at T [K]."""
        return np.exp(self.ln_p(T))

    def dlnp_dT(self, T):
        """d ln p / dT [1/K]."""
        T = np.asarray(T, float)
        if self._kind == "antoine":
            _, b, c = self._coef
            return b / (T + c) ** 2
        if self._kind == "ppds":
            return _ppds_ln_p(T, self._coef, derivative=True)
        return _water_ln_p(T, derivative=True)

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
        elif self._kind == "ppds":
            lo, hi = self.T_min, self._coef[0] * (1.0 - 1e-9)
        else:
            lo, hi = self.T_min, self.T_max
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


def _ppds_ln_p(T, coef, derivative: bool = False):
    """PPDS equation 3 [5] (or its T derivative); NaN at and above T_c."""
    T_c, P_c, A, B, C, D = coef
    T = np.asarray(T, float)
    with np.errstate(invalid="ignore", divide="ignore"):
        tau = np.where(T < T_c, 1.0 - T / T_c, np.nan)
        f = A * tau + B * tau**1.5 + C * tau**2.5 + D * tau**5
        if not derivative:
            return math.log(P_c) + f * T_c / T
        df = A + 1.5 * B * tau**0.5 + 2.5 * C * tau**1.5 + 5.0 * D * tau**4
        return -(df / T + f * T_c / T**2)  # d/dT of (T_c/T) f(1 - T/T_c)


@functools.cache
def ppds_curve(liquid: str) -> ReferenceCurve:
    """The bundled PPDS vapor-pressure equation [5] for ``liquid``."""
    name = canonical_name(liquid)
    hit = ppds_table()[ppds_table()["liquid"] == name]
    if hit.empty:
        raise BadValueError(f"no bundled PPDS vapor-pressure equation for {liquid!r}",
                            column="reference", hint="PPDS sets are bundled for "
                            + ", ".join(ppds_table()["liquid"]) + "; use reference='auto'")
    r = hit.iloc[0]
    coef = tuple(float(r[k]) for k in ("T_c", "P_c", "A", "B", "C", "D"))
    return ReferenceCurve(name, f"PPDS ({r['source']})", str(r["source"]), float(r["T_min"]),
                          float(r["T_max"]), "ppds", coef)


@functools.cache
def _water_spline():
    from scipy.interpolate import CubicSpline

    with resources.files("vpkit.data").joinpath("water_iapws95_psat.csv").open("r") as fh:
        t = pd.read_csv(fh, comment="#")
    T = t["T [K]"].to_numpy(float)
    return CubicSpline(-1.0 / T, np.log(t["p_sat [Pa]"].to_numpy(float))), T[0], T[-1]


def _water_ln_p(T, derivative: bool = False):
    """IAPWS-95 ln p_sat (or its T derivative) from the bundled table [4].

    Beyond the table (below the triple point or above 473.16 K) ln p is
    continued as a straight line in 1/T from the end node; the comparison and
    the checks say when a point lies outside the stated range.
    """
    cs, lo, hi = _water_spline()
    x = -1.0 / np.asarray(T, float)
    xl, xh = -1.0 / lo, -1.0 / hi
    xc = np.clip(x, xl, xh)
    with np.errstate(invalid="ignore"):
        d1 = cs(xc, 1)
        if derivative:
            return d1 * x**2  # d/dT = d/dx * dx/dT, dx/dT = 1/T^2 = x^2
        return cs(xc) + d1 * (x - xc)


@functools.cache
def iapws95_curve() -> ReferenceCurve:
    """Saturation pressure of water from IAPWS-95 (bundled table, see [4])."""
    return ReferenceCurve("water", "IAPWS-95", "Wagner & Pruss 2002 (IAPWS-95)", 273.16,
                          473.16, "iapws95", ())


REFERENCE_SOURCES = ("auto", "antoine", "ppds", "iapws95")


def has_source(liquid: str, source: str) -> bool:
    """Whether ``source`` has an equation for ``liquid`` ("auto" and "antoine": any
    bundled liquid)."""
    if not has_reference(liquid):
        return False
    name = canonical_name(liquid)
    if source == "iapws95":
        return name == "water"
    if source == "ppds":
        return name in set(ppds_table()["liquid"])
    return True


@functools.cache
def reference_curve(liquid: str, source: str = "auto") -> ReferenceCurve:
    """The reference equation for ``liquid``.

    Parameters
    ----------
    source : {"auto", "antoine", "ppds", "iapws95"}
        "auto" takes IAPWS-95 for water, the bundled PPDS equation [5] where
        there is one (2-propanol, 1-butanol) and the Antoine set otherwise.
    """
    if source not in REFERENCE_SOURCES:
        raise BadValueError(f"reference must be one of {', '.join(REFERENCE_SOURCES)} or None, "
                            f"got {source!r}", column="reference")
    if source == "iapws95" and canonical_name(liquid) != "water":
        raise BadValueError(f"IAPWS-95 describes water, not {liquid!r}", column="reference",
                            hint="use reference='auto' or 'antoine'")
    if source in ("iapws95", "auto") and canonical_name(liquid) == "water":
        return iapws95_curve()
    if source == "ppds" or (source == "auto" and has_source(liquid, "ppds")):
        return ppds_curve(liquid)
    return antoine_curve(liquid)


class CurveSet:
    """One published curve (or None) per run, stored as codes into the distinct curves.

    Evaluation loops over the distinct curves, not over runs. Indexing gives a
    run's curve (or None); :meth:`take` the curves of some runs.
    """

    def __init__(self, curves) -> None:
        distinct: dict = {}
        code = []
        for c in curves:
            if c is None:
                code.append(-1)
            else:
                code.append(distinct.setdefault(c, len(distinct)))
        self.curves = tuple(distinct)
        self.code = np.array(code, int)
        self.code.setflags(write=False)

    @classmethod
    def _of(cls, curves, code) -> CurveSet:
        out = cls.__new__(cls)
        out.curves, out.code = tuple(curves), np.asarray(code, int)
        out.code.setflags(write=False)
        return out

    @classmethod
    def from_codes(cls, curves, code) -> CurveSet:
        """From the distinct curves and each run's index into them (-1: none)."""
        return cls._of(curves, np.array(code, int))

    def __len__(self) -> int:
        return len(self.code)

    def __getitem__(self, r: int) -> ReferenceCurve | None:
        k = self.code[r]
        return None if k < 0 else self.curves[k]

    def __iter__(self):
        return (self[r] for r in range(len(self)))

    def take(self, idx) -> CurveSet:
        return CurveSet._of(self.curves, self.code[np.asarray(idx)])

    @property
    def has(self) -> np.ndarray:
        out = self.code >= 0
        out.setflags(write=False)
        return out

    def _apply(self, name: str, T) -> np.ndarray:
        T = np.asarray(T, float)
        out = np.full(T.shape, np.nan)
        for k, c in enumerate(self.curves):
            sel = self.code == k
            if sel.any():
                out[sel] = getattr(c, name)(T[sel])
        return out

    def ln_p(self, T):
        """ln p of each run's curve at T (R, ...); NaN for runs without one."""
        return self._apply("ln_p", T)

    def p(self, T):
        return np.exp(self.ln_p(T))

    def apparent_enthalpy(self, T):
        return self._apply("apparent_enthalpy", T)

    def bound(self, which: str) -> np.ndarray:
        values = np.array([getattr(c, which) for c in self.curves] + [np.nan])
        return values[self.code]

    def boiling_point(self, P: float = P_STANDARD) -> np.ndarray:
        values = np.array([c.boiling_point(P) for c in self.curves] + [np.nan])
        return values[self.code]

    def solve_T(self, ln_P, T_guess) -> np.ndarray:
        """Where each run's curve reaches ln P (R,), by Newton steps from ``T_guess``
        (NaN for runs without a curve or where the steps do not settle)."""
        T = np.array(T_guess, float)
        ln_P = np.broadcast_to(np.asarray(ln_P, float), T.shape)
        done = ~np.isfinite(T)
        with np.errstate(all="ignore"):
            for _ in range(50):  # a converged entry is left alone (batch-independent)
                step = (self.ln_p(T) - ln_P) / self._apply("dlnp_dT", T)
                new = np.where(done, T, T - np.clip(step, -50.0, 50.0))
                done |= (np.abs(new - T) <= 1e-12 * np.abs(T)) | ~np.isfinite(new)
                T = new
                if done.all():
                    break
            ok = np.abs(self.ln_p(T) - ln_P) < 1e-9
        return np.where(ok, T, np.nan)


@functools.cache
def _density_coefficients(liquid: str) -> tuple[float, ...]:
    cas = _row(liquid)["cas"]
    table = density_table()
    hit = table[table["cas"] == cas]
    if hit.empty:
        raise InputError(f"no bundled density for {liquid!r}", column="liquid_density",
                         hint="enter the measured liquid_density")
    r = hit.iloc[0]
    return tuple(float(r[k]) for k in ("T_c", "rho_c", "A", "B", "C", "D"))


def liquid_density(liquid: str, T):
    """Saturated-liquid density [kg/m^3] at T [K], PPDS equation [3]."""
    T_c, rho_c, A, B, C, D = _density_coefficients(liquid)
    tau = 1.0 - np.asarray(T, float) / T_c
    return rho_c + A * tau**0.35 + B * tau ** (2 / 3) + C * tau + D * tau ** (4 / 3)


def compare_stack(curves: CurveSet, T, p, include, T_m) -> dict:
    """Compare R runs with their curves (a :class:`CurveSet`).

    Returns arrays: ``deviation_percent`` (R, N) = 100 (p / p_ref - 1);
    ``enthalpy`` (R,) the curve's apparent ΔH_vap at T_m [J/mol]; ``chord``
    (R,) -R times the least-squares slope of the curve's ln p against 1/T over
    the included temperatures [J/mol]; ``boiling`` (R,) where the curve
    reaches 101.325 kPa [K]; ``outside`` (R, N) points outside the validity
    range. NaN (False) for runs without a curve.
    """
    T = np.asarray(T, float)
    include = np.asarray(include, bool)
    if not isinstance(curves, CurveSet):
        curves = CurveSet(curves)
    has = curves.has
    lo, hi = curves.bound("T_min"), curves.bound("T_max")
    ln_ref = curves.ln_p(T)
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        dev = 100.0 * (np.asarray(p, float) / np.exp(ln_ref) - 1.0)
        x = np.where(include, 1.0 / T, 0.0)
        n = include.sum(axis=1)
        xm = psum(x) / n
        ym = psum(np.where(include, ln_ref, 0.0)) / n
        dx = np.where(include, 1.0 / T - xm[:, None], 0.0)
        slope = psum(dx * np.where(include, ln_ref - ym[:, None], 0.0)) / psum(dx * dx)
        outside = has[:, None] & np.isfinite(T) & ((T < lo[:, None]) | (T > hi[:, None]))
    boiling = curves.boiling_point(P_STANDARD)
    return {"deviation_percent": dev, "enthalpy": curves.apparent_enthalpy(T_m),
            "chord": np.where(n >= 2, -R * slope, np.nan), "boiling": boiling,
            "outside": outside}


@dataclass(frozen=True)
class ReferenceComparison:
    """How one run's vapor pressures and fit compare with a reference curve.

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


def outside_range_text(curve: ReferenceCurve, count: int) -> str:
    return (f"{count} point(s) outside the {curve.label} validity range "
            f"{curve.T_min - 273.15:.1f} to {curve.T_max - 273.15:.1f} degC: the reference is "
            "extrapolated there")


def comparison_of(curve: ReferenceCurve, cmp: dict, r: int, n: int, T_m: float
                  ) -> ReferenceComparison:
    """Run ``r`` of :func:`compare_stack` (its first ``n`` points) as a ReferenceComparison."""
    dev = np.array(cmp["deviation_percent"][r, :n])
    dev.setflags(write=False)
    outside = tuple(int(i) for i in np.flatnonzero(cmp["outside"][r, :n]))
    warn = (outside_range_text(curve, len(outside)),) if outside else ()
    return ReferenceComparison(curve, dev, float(T_m), float(cmp["enthalpy"][r]),
                               float(cmp["chord"][r]), float(cmp["boiling"][r]), outside, warn)


def compare_to_reference(curve: ReferenceCurve, T, p, include, T_m: float) -> ReferenceComparison:
    """Compare vapor pressures ``p`` [Pa] at ``T`` [K] with ``curve``.

    ``include`` marks the points of the fit; the chord enthalpy uses those
    (all points when none is included).
    """
    T = np.atleast_1d(np.asarray(T, float))
    include = np.asarray(include, bool)
    if not include.any():
        include = np.ones(T.shape, bool)
    cmp = compare_stack([curve], T[None], np.asarray(p, float)[None], include[None],
                        np.array([T_m], float))
    return comparison_of(curve, cmp, 0, len(T), T_m)
