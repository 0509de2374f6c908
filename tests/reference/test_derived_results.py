"""ΔS_vap at the normal boiling point, Trouton's verdict and the T_b extrapolation
bias, on noise-free runs, against published sources:

- CoolProp's reference equations of state (Bell et al., Ind. Eng. Chem. Res. 53, 2498
  (2014), and the papers it cites per fluid): s'' - s' and T at 101.325 kPa; the runs
  of those liquids are simulated from CoolProp's own saturation curve, so the bundled
  reference equation that vpkit uses for the bias is an independent source;
- VDI Heat Atlas (2010) PPDS equation 12, ΔvapH(T_b)/T_b, for the liquids CoolProp
  does not have, with runs simulated from their bundled reference equations.

Criteria (issue "scientific truth"): the verdict classifies hexane, heptane,
cyclohexane, toluene, acetone and ethyl acetate as without hydrogen bonding and water
and the alcohols as hydrogen-bonded; ΔS_vap within 2 J/(mol K) of the source; the true
T_b within the reported T_b ± (|bias| + 2u).
"""

import numpy as np
import pytest

import vpkit
from tests.conftest import make_run
from vpkit.physics.curves import reference_curve
from vpkit.physics.liquids import liquids, vaporization_enthalpy

CP = pytest.importorskip("CoolProp.CoolProp")
COOLPROP = {"water": "Water", "methanol": "Methanol", "ethanol": "Ethanol",
            "acetone": "Acetone", "cyclohexane": "CycloHexane", "hexane": "n-Hexane",
            "heptane": "n-Heptane", "toluene": "Toluene"}
HBOND = {"water", "methanol", "ethanol", "1-propanol", "2-propanol", "1-butanol"}


def _truth(liquid):
    """(p(T) callable, T_b [K], ΔS_vap at T_b [J/(mol K)]) of the source."""
    if liquid in COOLPROP:
        name = COOLPROP[liquid]
        M = CP.PropsSI("molar_mass", name)
        p = np.vectorize(lambda T: CP.PropsSI("P", "T", float(T), "Q", 0, name))
        Tb = CP.PropsSI("T", "P", 101325.0, "Q", 0, name)
        dS = (CP.PropsSI("S", "P", 101325.0, "Q", 1, name)
              - CP.PropsSI("S", "P", 101325.0, "Q", 0, name)) * M
        return p, Tb, dS
    curve = reference_curve(liquid)
    Tb = curve.boiling_point(101325.0)
    return curve.p, Tb, float(vaporization_enthalpy(liquid, Tb)) / Tb


class _Curve:
    def __init__(self, p):
        self.p = p


def _analyze(liquid, model="clausius_clapeyron"):
    """A 35 K run from 25 degC (from 45 degC for liquids boiling above 105 degC, whose
    p_vap at 25 degC is under 1 kPa), ending at least 12 K below T_b."""
    p, Tb, dS = _truth(liquid)
    t_lo = 45.0 if Tb > 378.15 else 25.0
    t_hi = min(t_lo + 35.0, Tb - 273.15 - 12.0)
    run = make_run(liquid, tuple(np.linspace(t_lo, t_hi, 8)), curve=_Curve(p))
    return vpkit.analyze(run, model=model, warn=False), Tb, dS


@pytest.mark.parametrize("liquid", liquids())
def test_trouton_verdict_and_entropy_at_the_boiling_point(liquid):
    """Measured when written: within 1.1 J/(mol K) for every liquid (methanol with Δz from
    its reference equation of state, vpkit.physics.nonideal); the check is 2 J/(mol K)."""
    a, _, dS = _analyze(liquid)
    r = a.results().iloc[0]
    tol = 2.0
    assert r["ΔS_vap at T_b [J/(mol K)]"] == pytest.approx(dS, abs=tol)
    word = "the hydrogen-bonded range" if liquid in HBOND else "without hydrogen bonding"
    assert word in r["Trouton"], r["Trouton"]


@pytest.mark.parametrize("liquid", liquids())
def test_true_boiling_point_within_bias_and_two_u(liquid):
    a, Tb_true, _ = _analyze(liquid)
    r = a.results().iloc[0]
    Tb = r["T_b at 101.325 kPa [degC]"] + 273.15
    bias, u = r["T_b bias at 101.325 kPa [K]"], r["u(T_b at 101.325 kPa) [K]"]
    assert r["T_b bias from"] == "published curve" and r["T_b beyond data [K]"] > 10
    assert abs(Tb - Tb_true) <= abs(bias) + 2 * u
    # and the bias explains the miss: corrected, T_b is within 2u + u(bias)
    assert abs(Tb - bias - Tb_true) <= 2 * u + r["u(T_b bias) [K]"]


@pytest.mark.parametrize("liquid", ["water", "ethanol", "toluene"])
def test_constant_dcp_fit_carries_its_own_enthalpy_to_the_boiling_point(liquid):
    a, _, dS = _analyze(liquid, model="constant_dcp")
    r = a.results().iloc[0]
    assert r["ΔH carried to T_b by"] == "model"
    assert r["ΔS_vap at T_b [J/(mol K)]"] == pytest.approx(dS, abs=2.0)
