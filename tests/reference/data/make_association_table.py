"""Write vpkit/physics/data/zsat_reference_eos.csv: the compressibility factors of the
saturated vapor and liquid, z'' and z', of liquids whose vapor associates beyond what a
second virial coefficient describes (methanol), from the fluid's reference equation of
state.

Methanol: K. M. de Reuck, R. J. B. Craven, "Methanol: International Thermodynamic
Tables of the Fluid State - 12", IUPAC, Blackwell Scientific (1993), evaluated with
CoolProp (Bell et al., Ind. Eng. Chem. Res. 53, 2498 (2014)): PropsSI("Z", "T", T,
"Q", 1 or 0, "Methanol"), every 0.5 K from 176 K (just above the triple point, 175.61 K)
to 505 K. Linear interpolation in T between the rows reproduces the equation of state
to better than 2e-6 in z'' (checked by tests/reference/test_nonideal.py).

Run: python tests/reference/data/make_association_table.py
"""

from pathlib import Path

import CoolProp
import numpy as np
from CoolProp.CoolProp import PropsSI

DATA = Path(__file__).resolve().parents[3] / "vpkit" / "physics" / "data"
FLUIDS = {"methanol": ("Methanol", 176.0, 505.0,
                       "deReuck1993")}


def main() -> None:
    head = [
        "# Compressibility factors of the saturated vapor (z_vapor = p v''/(R T)) and liquid",
        "# (z_liquid = p v'/(R T)) from each fluid's reference equation of state, evaluated with",
        f"# CoolProp {CoolProp.__version__}; source per row. Written by "
        "tests/reference/data/make_association_table.py;",
        "# do not edit by hand. Used for liquids whose vapor associates beyond B (vpkit.physics."
        "nonideal).",
        "# Sources: deReuck1993 = K. M. de Reuck, R. J. B. Craven, Methanol: International "
        "Thermodynamic Tables",
        "# of the Fluid State - 12, IUPAC, Blackwell Scientific (1993).",
        "liquid,T [K],z_vapor,z_liquid,source",
    ]
    out = []
    for liquid, (name, t0, t1, source) in FLUIDS.items():
        for T in np.arange(t0, t1 + 0.25, 0.5):
            zv = PropsSI("Z", "T", float(T), "Q", 1, name)
            zl = PropsSI("Z", "T", float(T), "Q", 0, name)
            out.append(f"{liquid},{T:.1f},{zv!r},{zl!r},{source}")
    path = DATA / "zsat_reference_eos.csv"
    path.write_text("\n".join(head + out) + "\n", encoding="utf-8")
    print(f"wrote {path} ({len(out)} rows)")


if __name__ == "__main__":
    main()
