"""Shared test helpers: simulated runs built from published curves."""

from __future__ import annotations

import numpy as np
import pytest

from vpkit.physics.curves import reference_curve
from vpkit.physics.liquids import liquid_density
from vpkit.physics.simulate import simulate_run


@pytest.fixture(autouse=True)
def _headless_matplotlib(monkeypatch, tmp_path):
    monkeypatch.setenv("MPLBACKEND", "Agg")
    monkeypatch.setenv("MPLCONFIGDIR", str(tmp_path / "mpl"))


def make_run(liquid="2-propanol", t_c=(25, 30, 35, 40, 45, 50, 55, 60), curve=None, **kw):
    """A noise-free simulated run of ``liquid`` from a published curve."""
    curve = curve or reference_curve(liquid)
    T_room = kw.pop("T_room", 294.15)
    kw.setdefault("density", float(liquid_density(liquid, T_room)))
    return simulate_run(curve.p, np.asarray(t_c, float) + 273.15, liquid=liquid,
                        T_room=T_room, **kw)


def cold_record(liquid="ethanol", t_cold=4.0, t_c=(25.0, 35.0, 45.0, 55.0), *, capillary=True,
                name=None, bore_mm=1.2, size=22.0, P=99.6e3, t_room=22.0, curve=None,
                noise=0.0, rng=None, source="<text>"):
    """A run recorded without a weighing, as labs often take them (simulated, invented):
    the air amount is fixed at a cold reading; a capillary read as bubble lengths [mm]
    (``size`` the length at the cold reading) or a graduated tube read in mL from the
    closed end with a known scale offset of 0 (``size`` the volume [mL] there). The
    readings follow the published curve exactly unless ``noise`` (in the reading unit)."""
    from vpkit import parse_run
    from vpkit.constants import R

    curve = curve or reference_curve(liquid)
    rng = rng or np.random.default_rng(0)
    Tc = t_cold + 273.15
    scale = np.pi * (bore_mm * 1e-3) ** 2 / 4 * 1e-3 if capillary else 1e-6  # unit -> m^3
    n_air = (P - float(curve.p(Tc))) * size * scale / (R * Tc)
    rows = [(t_cold, size)]
    for t in t_c:
        T = t + 273.15
        V = n_air * R * T / (P - float(curve.p(T)))
        rows.append((t, V / scale + (rng.normal(0.0, noise) if noise else 0.0)))
    unit = "mm" if capillary else "mL"
    meta = [f"liquid,{name or liquid},,", f"barometric_pressure,{P / 1e3!r},kPa,0.1",
            f"room_temperature,{t_room},degC,0.5"]
    meta += [f"tube_bore,{bore_mm},mm,0.02"] if capillary else ["scale_offset,0,mL,0.02"]
    text = "\n".join(["[run]", "quantity,value,unit,uncertainty", *meta, "[readings]",
                      f"bath_temperature [degC],reading [{unit}],include,reason"]
                     + [f"{float(t)!r},{float(v)!r},yes," for t, v in rows]) + "\n"
    return parse_run(text, source=source)
