"""Organic liquids: readings simulated from published Antoine equations evaluated by
the `chemicals` package (chemicals.vapor_pressure.Antoine with the coefficients of its
'Antoine Collection Poling' table: Poling et al. 2001, App. A) and reduced back."""

import numpy as np
import pytest

import vpkit
from tests.conftest import make_run

chemicals = pytest.importorskip("chemicals")
from chemicals.vapor_pressure import Antoine, Psat_data_AntoinePoling  # noqa: E402

T_C = (25, 30, 35, 40, 45, 50, 55, 60)


class ChemicalsCurve:
    def __init__(self, cas):
        row = Psat_data_AntoinePoling.loc[cas]
        self.A, self.B, self.C = float(row.A), float(row.B), float(row.C)

    def p(self, T):
        return np.array([Antoine(float(t), self.A, self.B, self.C) for t in np.ravel(T)]
                        ).reshape(np.shape(T))


CASES = {"ethanol": "64-17-5", "toluene": "108-88-3"}
METHODS = [("injected", "neglect", "clausius_clapeyron"),
           ("weighed", "reference", "clausius_clapeyron"),
           ("cold", "reference", "clausius_clapeyron"),
           ("weighed", "fit", "antoine"),
           ("cold", "fit", "antoine")]


@pytest.mark.parametrize("liquid", sorted(CASES))
@pytest.mark.parametrize("air_from,vap,model", METHODS)
@pytest.mark.parametrize("depth", [None, 0.06])
def test_round_trip_exact(liquid, air_from, vap, model, depth):
    """Equal to 1e-9 relative; the self-consistent ('fit') choice is exact when the
    model can represent the true curve, hence the Antoine model there."""
    truth = ChemicalsCurve(CASES[liquid])
    t = (15.0,) + T_C if air_from == "cold" else T_C
    run = make_run(liquid, t, curve=truth, depth=depth, direction=-1 if depth else 1,
                   offset=8.0e-6 if depth else 0.15e-6)
    a = vpkit.analyze(run, air_from=air_from, vapor_at_air_reference=vap, model=model)
    ok = a.include
    assert ok.sum() == len(T_C)
    np.testing.assert_allclose(a.p_vap[ok], truth.p(a.T[ok]), rtol=1e-9)
