"""Write vpkit/physics/data/virial_tsonopoulos.csv, hvap_vdi_ppds.csv and melting_points.csv.

virial_tsonopoulos.csv: what the Tsonopoulos correlation of the second virial
coefficient needs for each bundled liquid: critical temperature and pressure and
acentric factor (the `chemicals` package's default selection, whose source is
written in each row: HEOS = the constants of the fluid's reference equation of
state as used by CoolProp, IUPAC = the IUPAC critical-data series of Ambrose,
Young et al., J. Chem. Eng. Data 1995-2015, PSRK = Horstmann et al., Fluid Phase
Equilib. 227, 157-164 (2005)); the dipole moment, also chemicals' default
(CCCBDB = the experimental values of the NIST Computational Chemistry Comparison and
Benchmark Database; used only by the ketone, ester and alkanol classes); and the
chemical class that selects the polar parameters (Tsonopoulos, AIChE J. 20,
263-272 (1974); Tsonopoulos & Heidman, Fluid Phase Equilib. 57, 261-276 (1990)).

hvap_vdi_ppds.csv: the PPDS equation 12 for the enthalpy of vaporization, VDI
Heat Atlas, 2nd ed., Springer (2010), chapter D3.1, as tabulated in chemicals
(phase_change_data_VDI_PPDS_4).

Run: python tests/reference/data/make_virial_table.py
"""

from pathlib import Path

import chemicals
from chemicals.phase_change import phase_change_data_VDI_PPDS_4

from vpkit.physics.liquids import antoine_table

DATA = Path(__file__).resolve().parents[3] / "vpkit" / "physics" / "data"
def g(x) -> str:
    """The shortest text that reads back as the same float."""
    return repr(float(x))


CLASS = {"water": "water", "methanol": "methanol", "ethanol": "alkanol",
         "1-propanol": "alkanol", "2-propanol": "alkanol", "1-butanol": "alkanol",
         "acetone": "ketone", "ethyl acetate": "ester", "cyclohexane": "normal",
         "hexane": "normal", "heptane": "normal", "toluene": "normal"}


def main() -> None:
    rows = list(antoine_table().itertuples())
    head = [
        "# Inputs of the Tsonopoulos second-virial correlation for the bundled liquids.",
        "# Written by tests/reference/data/make_virial_table.py from the chemicals package "
        f"{chemicals.__version__}; do not edit by hand.",
        "# T_c [K], P_c [Pa], omega: chemicals' default selection, source in constants_from;",
        "# dipole [debye]: chemicals' default selection (CCCBDB = NIST Computational Chemistry",
        "# Comparison and Benchmark Database, experimental values; MULLER = Muller et al.);",
        "# class selects the polar parameters a, b (Tsonopoulos 1974; Tsonopoulos & Heidman 1990).",
        "liquid,cas,class,T_c,P_c,omega,dipole,constants_from",
    ]
    out = []
    for r in rows:
        cas = r.cas
        mu = chemicals.dipole_moment(cas)
        src = "/".join(dict.fromkeys([chemicals.Tc_methods(cas)[0], chemicals.Pc_methods(cas)[0],
                                      chemicals.omega_methods(cas)[0],
                                      chemicals.dipole_moment_methods(cas)[0]]))
        out.append(f"{r.liquid},{cas},{CLASS[r.liquid]},{g(chemicals.Tc(cas))},"
                   f"{g(chemicals.Pc(cas))},{g(chemicals.omega(cas))},{g(mu)},{src}")
    (DATA / "virial_tsonopoulos.csv").write_text("\n".join(head + out) + "\n", encoding="utf-8")
    head = [
        "# Enthalpy of vaporization, PPDS equation 12:",
        "#   dH_vap = R*T_c*(A*tau**(1/3) + B*tau**(2/3) + C*tau + D*tau**2 + E*tau**6), "
        "tau = 1 - T/T_c, J/mol.",
        "# Source of every row: VDI Heat Atlas, 2nd ed., Springer (2010), chapter D3.1, as "
        "tabulated in chemicals",
        f"# {chemicals.__version__} (phase_change_data_VDI_PPDS_4). Written by "
        "tests/reference/data/make_virial_table.py.",
        "liquid,cas,T_c,A,B,C,D,E",
    ]
    out = []
    for r in rows:
        d = phase_change_data_VDI_PPDS_4.loc[r.cas]
        out.append(f"{r.liquid},{r.cas},{g(d.Tc)},{g(d.A)},{g(d.B)},{g(d.C)},"
                   f"{g(d.D)},{g(d.E)}")
    (DATA / "hvap_vdi_ppds.csv").write_text("\n".join(head + out) + "\n", encoding="utf-8")
    head = [
        "# Melting points [K]: CRC Handbook of Chemistry and Physics (organic and inorganic",
        f"# tables), as tabulated in chemicals {chemicals.__version__} (chemicals.Tm, methods "
        "CRC_ORG / CRC_INORG).",
        "# Written by tests/reference/data/make_virial_table.py; used to warn of a bath below "
        "the freezing point.",
        "liquid,cas,T_melt",
    ]
    out = []
    for r in rows:
        method = "CRC_INORG" if r.liquid == "water" else "CRC_ORG"
        out.append(f"{r.liquid},{r.cas},{g(chemicals.Tm(r.cas, method=method))}")
    (DATA / "melting_points.csv").write_text("\n".join(head + out) + "\n", encoding="utf-8")
    print(f"wrote {DATA / 'virial_tsonopoulos.csv'}, {DATA / 'hvap_vdi_ppds.csv'} and "
          f"{DATA / 'melting_points.csv'}")


if __name__ == "__main__":
    main()
