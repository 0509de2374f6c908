"""From the apparent to the true enthalpy of vaporization: the vapor's second virial
coefficient and the liquid's volume (Clapeyron equation).

A Clausius–Clapeyron slope measures the *apparent* enthalpy
ΔH_app = R T² d ln p/dT, which assumes an ideal vapor and no liquid volume. The
Clapeyron equation [1] gives the true one, ΔvapH = T (V_g - V_l) dp/dT. With the
vapor's molar volume from the virial equation truncated after B [2],
V_g = R T/p + B, and the liquid's molar volume V_l = M/ρ_l:

    ΔvapH = ΔH_app · Δz,    Δz = 1 + p (B - V_l)/(R T).

B(T) comes from the Tsonopoulos correlation [3, 4] with the bundled critical
constants, acentric factor, dipole moment and chemical class
(``vpkit/physics/data/virial_tsonopoulos.csv``); ρ_l from the bundled PPDS density
equation (:func:`vpkit.physics.liquids.liquid_density`).

The standard uncertainty of B is taken as :data:`B_RELATIVE_U_DEFAULT` of |B|. That
figure is ours: it covers the differences between the correlation and the
reference equations of state of CoolProp found in
``tests/reference/test_nonideal.py`` (up to 14 % for toluene at 25 degC, a few
percent for most liquids above 50 degC); for the alcohols it is 30 % (ethanol: 22 %
at 25 degC, methanol 15 %, where the vapor is too dilute for B to be measured well).

Methanol's vapor associates (into chains and rings of hydrogen-bonded molecules)
beyond what B describes: with B alone, z'' at 321 K is 0.979, while its reference
equation of state [5] gives 0.961, so a B-only Δz left the true ΔvapH 1.1 % high at
25 degC and 1.7 % at 48 degC (against CoolProp's h'' - h' and, within 0.16 %, PPDS
equation 12 of the VDI Heat Atlas). For such a liquid Δz = z'' - z' is taken at
saturation from that equation of state, tabulated every 0.5 K
(``vpkit/physics/data/zsat_reference_eos.csv``, linear interpolation, within 2e-6 of
the equation), with standard uncertainty :data:`Z_TABLE_RELATIVE_U` of 1 - z''.
The tabulated z is that of the saturated states at T; a run's own p at T differs from
the saturation pressure only by its errors, so z is not rescaled with it. Outside the
table's range (176 to 505 K) the liquid gets no true value (NaN).

A liquid not in the table has no B: its true ΔvapH is not computed (NaN), and said so.

References
----------
.. [1] B. P. E. Clapeyron, J. Éc. Polytech. 14, 153-190 (1834).
.. [2] H. Kamerlingh Onnes, Commun. Phys. Lab. Leiden 71 (1901): the virial equation.
.. [3] C. Tsonopoulos, "An empirical correlation of second virial coefficients",
   AIChE J. 20, 263-272 (1974).
.. [4] C. Tsonopoulos, J. L. Heidman, "From the virial to the cubic equation of
   state", Fluid Phase Equilib. 57, 261-276 (1990): the polar parameters of water
   and the alcohols; as given in B. E. Poling, J. M. Prausnitz, J. P. O'Connell,
   "The Properties of Gases and Liquids", 5th ed. (2001), section 4-5.
.. [5] K. M. de Reuck, R. J. B. Craven, "Methanol: International Thermodynamic Tables
   of the Fluid State - 12", IUPAC, Blackwell Scientific (1993), as evaluated by
   CoolProp (I. H. Bell et al., Ind. Eng. Chem. Res. 53, 2498-2508 (2014)).
"""

from __future__ import annotations

import functools

import numpy as np
import pandas as pd

from ..constants import R
from .liquids import (
    canonical_name,
    data_file,
    density_table,
    has_reference,
    liquid_density,
    per_liquid,
)

#: Relative standard uncertainty of the correlated B, by class (see the module docstring).
B_RELATIVE_U = {"methanol": 0.30, "alkanol": 0.30}
B_RELATIVE_U_DEFAULT = 0.20
#: Relative standard uncertainty of 1 - z'' taken from a reference equation of state (our
#: choice: three times the 3-6 % of 1 - z'' by which methanol's PPDS equation 12 and its
#: equation of state differ over 298-340 K).
Z_TABLE_RELATIVE_U = 0.10

#: Polar parameters by class: (a, b) as functions of the reduced dipole moment μ_r [3, 4].
_POLAR = {
    "normal": lambda mr: (0.0, 0.0),
    "ketone": lambda mr: (-2.14e-4 * mr - 4.308e-21 * mr**8, 0.0),
    "ester": lambda mr: (-2.14e-4 * mr - 4.308e-21 * mr**8, 0.0),
    "alkanol": lambda mr: (0.0878, 0.00908 + 0.0006957 * mr),
    "methanol": lambda mr: (0.0878, 0.0525),
    "water": lambda mr: (-0.0109, 0.0),
}


@functools.cache
def virial_table() -> pd.DataFrame:
    """The bundled Tsonopoulos inputs (see ``vpkit/physics/data/virial_tsonopoulos.csv``)."""
    with data_file("virial_tsonopoulos.csv") as fh:
        return pd.read_csv(fh, comment="#", dtype={"cas": str})


@functools.cache
def has_virial(liquid: str) -> bool:
    """Whether the bundled table has the Tsonopoulos inputs for ``liquid``."""
    return has_reference(liquid) and canonical_name(liquid) in set(virial_table()["liquid"])


@functools.cache
def saturation_z_table() -> pd.DataFrame:
    """z'' and z' at saturation from reference equations of state, for liquids whose vapor
    associates beyond B (see ``vpkit/physics/data/zsat_reference_eos.csv``)."""
    with data_file("zsat_reference_eos.csv") as fh:
        return pd.read_csv(fh, comment="#")


@functools.cache
def _saturation_z(liquid: str) -> tuple[np.ndarray, np.ndarray, np.ndarray] | None:
    """(T, z'', z') rows of a bundled liquid in the saturation table, or None."""
    if not has_reference(liquid):
        return None
    tab = saturation_z_table()
    rows = tab[tab["liquid"] == canonical_name(liquid)]
    if rows.empty:
        return None
    return (rows["T [K]"].to_numpy(float), rows["z_vapor"].to_numpy(float),
            rows["z_liquid"].to_numpy(float))


def tsonopoulos_B(T, T_c: float, P_c: float, omega: float, a: float = 0.0, b: float = 0.0):
    """Second virial coefficient B [m³/mol] from the Tsonopoulos correlation [3].

    B P_c/(R T_c) = f0 + ω f1 + a/T_r⁶ - b/T_r⁸, T_r = T/T_c, with
    f0 = 0.1445 - 0.330/T_r - 0.1385/T_r² - 0.0121/T_r³ - 0.000607/T_r⁸ and
    f1 = 0.0637 + 0.331/T_r² - 0.423/T_r³ - 0.008/T_r⁸.
    """
    Tr = np.asarray(T, float) / T_c
    f0 = 0.1445 - 0.330 / Tr - 0.1385 / Tr**2 - 0.0121 / Tr**3 - 0.000607 / Tr**8
    f1 = 0.0637 + 0.331 / Tr**2 - 0.423 / Tr**3 - 0.008 / Tr**8
    return R * T_c / P_c * (f0 + omega * f1 + a / Tr**6 - b / Tr**8)


def polar_parameters(kind: str, dipole: float, T_c: float, P_c: float) -> tuple[float, float]:
    """Tsonopoulos's (a, b) for a chemical class [3, 4]; μ_r = 10⁵ μ² (P_c/atm)/(T_c/K)²
    with μ in debye."""
    mr = 1e5 * dipole**2 * (P_c / 101325.0) / T_c**2
    return _POLAR[kind](mr)


@functools.cache
def _inputs(liquid: str) -> tuple[float, float, float, float, float, float, float]:
    """(T_c, P_c, ω, a, b, M [kg/mol], relative u(B)) of a bundled liquid."""
    name = canonical_name(liquid)
    row = virial_table()[virial_table()["liquid"] == name].iloc[0]
    a, b = polar_parameters(str(row["class"]), float(row["dipole"]), float(row["T_c"]),
                            float(row["P_c"]))
    dens = density_table()
    M = float(dens[dens["cas"] == row["cas"]].iloc[0]["M_g_per_mol"]) / 1000.0
    u_rel = B_RELATIVE_U.get(str(row["class"]), B_RELATIVE_U_DEFAULT)
    return float(row["T_c"]), float(row["P_c"]), float(row["omega"]), a, b, M, u_rel


def second_virial(liquid: str, T):
    """B(T) [m³/mol] of a bundled liquid's vapor [3, 4]."""
    T_c, P_c, omega, a, b, _, _ = _inputs(liquid)
    return tsonopoulos_B(T, T_c, P_c, omega, a, b)


def liquid_molar_volume(liquid: str, T):
    """V_l = M/ρ_l [m³/mol] of a bundled liquid (PPDS density)."""
    return _inputs(liquid)[5] / liquid_density(liquid, T)


def delta_z(liquid: str, T, p):
    """Δz and its standard uncertainty [1]: 1 + p (B - V_l)/(R T) with u from u(B), or,
    for a liquid whose vapor associates beyond B, z'' - z' at saturation from its
    reference equation of state [5] with u = :data:`Z_TABLE_RELATIVE_U` (1 - z'')."""
    T = np.asarray(T, float)
    p = np.asarray(p, float)
    sat = _saturation_z(liquid)
    if sat is not None:
        Ts, zv, zl = sat
        z_v = np.interp(T, Ts, zv, left=np.nan, right=np.nan)
        z_l = np.interp(T, Ts, zl, left=np.nan, right=np.nan)
        dz = np.broadcast_to(z_v - z_l, np.broadcast(T, p).shape)
        return dz, Z_TABLE_RELATIVE_U * (1.0 - np.broadcast_to(z_v, dz.shape))
    B = second_virial(liquid, T)
    dz = 1.0 + p * (B - liquid_molar_volume(liquid, T)) / (R * T)
    return dz, p * _inputs(liquid)[6] * np.abs(B) / (R * T)


def delta_z_runs(liquids, T, p) -> tuple[np.ndarray, np.ndarray]:
    """:func:`delta_z` for R runs, each its own liquid (NaN where none is bundled)."""
    dz = per_liquid(liquids, has_virial, lambda liq, t, q: delta_z(liq, t, q)[0], T, p)
    u = per_liquid(liquids, has_virial, lambda liq, t, q: delta_z(liq, t, q)[1], T, p)
    return dz, u
