"""A liquid floating on water (the bubble holds both vapors): noise-free runs simulated
from the published curves of both liquids (IAPWS-95 for water, through iapws; Poling et
al. 2001 App. A Antoine sets for the organic liquid) reduce back to the organic liquid's
curve to 1e-9 when the water's vapor is subtracted (Dalton's law with three partial
pressures). Measured when written: ignoring the water layer raises ΔH_vap by 4.4 (hexane)
to 8.0 kJ/mol (toluene) and puts T_b 7 to 27 K low over 25-60 degC."""

import numpy as np
import pytest

import vpkit
from vpkit.physics.curves import reference_curve
from vpkit.physics.liquids import liquid_density
from vpkit.physics.simulate import simulate_run

iapws = pytest.importorskip("iapws")


def _water_p(T):
    return np.array([iapws.IAPWS95(T=float(t), x=0).P * 1e6 for t in np.atleast_1d(T)])


@pytest.mark.parametrize("liquid", ["cyclohexane", "hexane", "heptane", "toluene"])
def test_layer_run_reduces_back_to_the_organic_curve(liquid):
    c = reference_curve(liquid)
    T = np.linspace(25.0, min(60.0, c.boiling_point() - 273.15 - 15.0), 7) + 273.15
    run = simulate_run(lambda t: c.p(t) + _water_p(t), T, liquid=liquid,
                       density=float(liquid_density(liquid, 294.15)))
    a = vpkit.analyze(run, water_layer=True, warn=False)
    np.testing.assert_allclose(a.p_vap, c.p(a.T), rtol=1e-9)
    ignored = vpkit.analyze(run, warn=False)
    assert ignored.enthalpy.nominal_value - a.enthalpy.nominal_value > 2e3
    assert ignored.result.T_b_normal[0] < a.result.T_b_normal[0] - 5.0


def test_water_layer_refused_for_water_itself():
    from tests.conftest import make_run

    with pytest.raises(vpkit.InputError, match="liquid is water itself"):
        vpkit.analyze(make_run("water"), water_layer=True, warn=False)
