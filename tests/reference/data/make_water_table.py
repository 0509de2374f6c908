"""Write vpkit/physics/data/water_iapws95_psat.csv: saturation pressure of water from IAPWS-95.

Source: W. Wagner, A. Pruss, J. Phys. Chem. Ref. Data 31, 387-535 (2002), evaluated
with the `iapws` package (IAPWS95(T=T, x=0).P) every 0.5 K from the triple point
(273.16 K) to 473.16 K. vpkit interpolates ln p in 1/T by a cubic spline between these
nodes; tests/reference/test_iapws95.py checks the table and the interpolation against
`iapws` directly. Run: python tests/reference/data/make_water_table.py
"""

from pathlib import Path

import iapws
import numpy as np
from iapws import IAPWS95

OUT = Path(__file__).resolve().parents[3] / "vpkit" / "physics" / "data" / "water_iapws95_psat.csv"


def main() -> None:
    T = np.round(273.16 + 0.5 * np.arange(401), 2)
    lines = [
        "# Saturation pressure of water, IAPWS-95 (Wagner & Pruss, J. Phys. Chem. Ref. Data",
        "# 31, 387 (2002)), computed with the iapws package "
        f"{iapws.__version__}: IAPWS95(T=T, x=0).P.",
        "# Written by tests/reference/data/make_water_table.py; do not edit by hand.",
        "T [K],p_sat [Pa]",
    ]
    lines += [f"{t:.2f},{IAPWS95(T=float(t), x=0).P * 1e6:.17g}" for t in T]
    OUT.write_text("\n".join(lines) + "\n", encoding="utf-8")
    print(f"wrote {OUT} ({len(T)} rows)")


if __name__ == "__main__":
    main()
