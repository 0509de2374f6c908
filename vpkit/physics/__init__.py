"""From readings to vapor pressures, and the published curves they are compared with.

- :mod:`.reduce`: bubble volume, total pressure (with the hydrostatic head), air
  amount, Dalton's law; the per-point flags of impossible values.
- :mod:`.propagate`: the inputs of a run as one vector, the Jacobian of ln p_vap,
  and the covariance it gives.
- :mod:`.nonideal`: second virial coefficient and liquid volume (Clapeyron's Δz).
- :mod:`.simulate`: the forward model (readings from a known curve).
- :mod:`.liquids`, :mod:`.curves`: the bundled liquids (names, densities, melting
  points, published ΔvapH) and their vapor-pressure equations (Antoine, PPDS,
  IAPWS-95); the tables sit in ``data/``.

Imports only :mod:`vpkit.record` and the shared base modules.
"""

from .curves import CurveSet, ReferenceCurve, reference_curve
from .liquids import canonical_name, has_reference, liquid_density, liquids
from .simulate import forward_readings, simulate_run

__all__ = ["CurveSet", "ReferenceCurve", "canonical_name", "forward_readings", "has_reference",
           "liquid_density", "liquids", "reference_curve", "simulate_run"]
