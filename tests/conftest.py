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
