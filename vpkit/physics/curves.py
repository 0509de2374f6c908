"""Published vapor-pressure equations: Antoine, PPDS and IAPWS-95, one curve per run.

The coefficient tables are data files in ``vpkit/physics/data/`` named after
their source; each row carries its units, validity range and citation.

References
----------
.. [1] C. Antoine, "Tensions des vapeurs; nouvelle relation entre les tensions
   et les températures", C. R. Acad. Sci. 107, 681-684 (1888).
.. [2] B. E. Poling, J. M. Prausnitz, J. P. O'Connell, "The Properties of Gases
   and Liquids", 5th ed., McGraw-Hill (2001), Appendix A (Antoine table).
.. [3] W. Wagner, A. Pruss, "The IAPWS formulation 1995 for the thermodynamic
   properties of ordinary water substance for general and scientific use",
   J. Phys. Chem. Ref. Data 31, 387-535 (2002) (IAPWS-95): saturation pressures
   computed with the package ``iapws`` (J. J. Romera) every 0.5 K from
   273.16 K to 473.16 K and bundled as ``vpkit/physics/data/water_iapws95_psat.csv``;
   ln p is interpolated in 1/T by a cubic spline (error below 1e-10, checked
   against ``iapws`` in tests/reference/test_iapws95.py).
.. [4] VDI Heat Atlas, 2nd ed., Springer (2010), chapter D3.1: PPDS equation 3
   for the saturation pressure, ln(p/P_c) = (T_c/T)(A τ + B τ^1.5 + C τ^2.5 + D τ^5),
   τ = 1 - T/T_c (the form of W. Wagner, Cryogenics 13, 470-482 (1973)).
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass

import numpy as np
import pandas as pd

from ..constants import P_STANDARD, R
from ..errors import BadValueError
from ..units import to_si
from .liquids import canonical_name, data_file, has_reference, liquid_row, ppds_table

LN10 = math.log(10.0)

#: Relative standard uncertainty of a curve's vapor pressure, by kind, used where a curve
#: supplies p_vap at the air reference. IAPWS-95: 0.025 % (from memory of Wagner & Pruss
#: 2002, conservative as a standard uncertainty). Antoine and PPDS sets state none: 1 %
#: (common practice, no source; the bundled sets agree with CoolProp within 1.5 % and
#: with Perry's DIPPR-101 within 3.5 %, tests/reference/test_antoine_table.py).
CURVE_U_REL = {"iapws95": 2.5e-4, "antoine": 0.01, "ppds": 0.01}


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
    row = liquid_row(liquid)
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
    """PPDS equation 3 [4] (or its T derivative); NaN at and above T_c."""
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
    """The bundled PPDS vapor-pressure equation [4] for ``liquid``."""
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

    with data_file("water_iapws95_psat.csv") as fh:
        t = pd.read_csv(fh, comment="#")
    T = t["T [K]"].to_numpy(float)
    return CubicSpline(-1.0 / T, np.log(t["p_sat [Pa]"].to_numpy(float))), T[0], T[-1]


def _water_ln_p(T, derivative: bool = False):
    """IAPWS-95 ln p_sat (or its T derivative) from the bundled table [3].

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
    """Saturation pressure of water from IAPWS-95 (bundled table, see [3])."""
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
        "auto" takes IAPWS-95 for water, the bundled PPDS equation [4] where
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

    def labels(self) -> np.ndarray:
        """Each run's curve label ('' without a curve), an object array."""
        return np.array([c.label for c in self.curves] + [""], dtype=object)[self.code]

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
