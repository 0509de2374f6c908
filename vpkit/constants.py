"""Physical constants used by the core, in SI units.

References
----------
.. [1] E. Tiesinga et al., "CODATA recommended values of the fundamental
   physical constants: 2018", Rev. Mod. Phys. 93, 025010 (2021). The molar gas
   constant is exact in the 2019 SI.
.. [2] BIPM, The International System of Units (SI), 9th ed. (2019), and
   3rd CGPM (1901): standard acceleration of gravity.
.. [3] A. Picard, R. S. Davis, M. Glaeser, K. Fujii, "Revised formula for the
   density of moist air (CIPM-2007)", Metrologia 45, 149-155 (2008): molar mass
   of dry air with a CO2 mole fraction of 0.0004.
"""

R = 8.314462618  # J/(mol K), molar gas constant [1]
G_N = 9.80665  # m/s^2, standard acceleration of gravity [2]
M_AIR = 28.96546e-3  # kg/mol, molar mass of dry air [3]
P_STANDARD = 101325.0  # Pa, standard atmosphere (defines the normal boiling point) [2]
T_ZERO_C = 273.15  # K, 0 degC [2]
