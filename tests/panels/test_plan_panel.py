"""Headless test of the planner panel: every readout equals vpkit.planning.planner.predict for the
plan the sliders describe (the panel does no physics; common practice, no source)."""

import numpy as np
import pytest

pytest.importorskip("ipywidgets")
from vpkit import display as D
from vpkit.panels import plan_panel
from vpkit.planning.planner import predict


def test_sliders_drive_the_prediction():
    p = plan_panel("water")
    p.w_bubble.value = 0.5
    p.w_range.value = (40.0, 80.0)
    p.w_points.value = 9
    [expected] = predict([p.plan()])
    assert p.prediction.u_enthalpy == expected.u_enthalpy
    assert D.number(expected.u_enthalpy / 1e3, "kJ/mol", 2) in p.w_out.value
    assert len(p.prediction.points) == 9
    assert np.isclose(p.prediction.points["t [degC]"].iloc[-1], 80.0)
    assert p.timings["predict"] > 0


def test_overflowing_tube_is_not_workable():
    p = plan_panel("ethanol")
    p.w_capacity.value = 2.5
    p.w_range.value = (30.0, 65.0)
    assert not p.prediction.feasible and "not workable" in p.w_out.value
