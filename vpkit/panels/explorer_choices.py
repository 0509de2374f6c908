"""The explorer's choices: fit model, air amount, head, reference liquid, display units.

The controls only read and show the panel's choices (a dict with the keys of
:data:`DEFAULT_CHOICES`); the analysis options among them are passed to
:func:`vpkit.analyze` unchanged.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

import ipywidgets as W

from ..physics.liquids import liquids

MODELS = [("Clausius–Clapeyron, full covariance (GLS)", ("clausius_clapeyron", "gls")),
          ("Clausius–Clapeyron, weighted", ("clausius_clapeyron", "weighted")),
          ("Clausius–Clapeyron, unweighted", ("clausius_clapeyron", "ordinary")),
          ("constant ΔCp (Kirchhoff), GLS", ("constant_dcp", "gls")),
          ("Antoine, GLS", ("antoine", "gls"))]
AIR = [("automatic (what the run records)", "auto"),
       ("weighed room-temperature volume", "weighed"), ("cold reference reading", "cold"),
       ("injected volume", "injected")]
VAPOR = [("automatic", "auto"), ("published equation", "reference"),
         ("self-consistent with the fit", "fit"), ("neglected (biased)", "neglect")]
PRESSURE_UNITS = ["kPa", "Pa", "hPa", "mbar", "bar", "atm", "mmHg", "Torr", "inHg"]
TEMPERATURE_UNITS = [("°C", "degC"), ("K", "K"), ("°F", "degF")]
DEFAULT_CHOICES: dict[str, Any] = {
    "model": "clausius_clapeyron", "weighting": "gls", "air_from": "auto",
    "vapor_at_air_reference": "auto", "use_head": True, "gas_mass": True,
    "bubble_depth": None, "reference_liquid": None, "pressure_unit": "kPa",
    "temperature_unit": "degC", "water_layer": False,
}
ANALYSIS_KEYS = ("model", "weighting", "air_from", "vapor_at_air_reference", "use_head",
                 "gas_mass", "bubble_depth", "reference_liquid", "water_layer")


class ChoiceControls:
    """Dropdowns and boxes for the choices; ``on_change`` is called with each change."""

    def __init__(self, c: dict, own_depth: float | None, style: dict, lay,
                 on_change: Callable) -> None:
        self.model = W.Dropdown(options=MODELS, value=(c["model"], c["weighting"]),
                                description="fit model", style=style, layout=lay)
        self.air = W.Dropdown(options=AIR, value=c["air_from"], description="air amount from",
                              style=style, layout=lay)
        self.vapor = W.Dropdown(options=VAPOR, value=c["vapor_at_air_reference"],
                                description="p_vap at air reference", style=style, layout=lay)
        self.head = W.Checkbox(value=c["use_head"], description="hydrostatic head",
                               indent=False)
        depth0 = c["bubble_depth"] if c["bubble_depth"] is not None else (own_depth or 0.0)
        self.depth = W.BoundedFloatText(value=round(depth0 * 100, 3), min=-100, max=100,
                                        step=0.1, description="bubble depth [cm]",
                                        style=style, layout=lay)
        self.gas = W.Checkbox(value=c["gas_mass"], description="gas mass in weighing",
                              indent=False)
        self.layer = W.Checkbox(value=c["water_layer"], indent=False,
                                description="liquid floats on water (subtract its vapor)")
        names = liquids()
        self.ref = W.Dropdown(options=[("none", None)] + [(x, x) for x in names],
                              value=c["reference_liquid"] if c["reference_liquid"] in names
                              else None, description="reference liquid", style=style,
                              layout=lay)
        self.punit = W.Dropdown(options=PRESSURE_UNITS, value=c["pressure_unit"],
                                description="pressure unit", style=style, layout=lay)
        self.tunit = W.Dropdown(options=TEMPERATURE_UNITS, value=c["temperature_unit"],
                                description="temperature unit", style=style, layout=lay)
        self.widgets = (self.model, self.air, self.vapor, self.head, self.depth, self.gas,
                        self.layer, self.ref, self.punit, self.tunit)
        for w in self.widgets:
            w.observe(on_change, names="value")

    def read(self, own_depth: float | None) -> dict[str, Any]:
        """The choices as the controls show them. The depth box gives ``bubble_depth``
        only where it differs from the run's own depth (None: the run's own)."""
        model, weighting = self.model.value
        depth_cm = self.depth.value
        if (own_depth is None and depth_cm == 0.0) or (
                own_depth is not None and abs(own_depth - depth_cm / 100) < 1e-9):
            depth = None
        else:
            depth = depth_cm / 100.0
        return dict(model=model, weighting=weighting, air_from=self.air.value,
                    vapor_at_air_reference=self.vapor.value, use_head=bool(self.head.value),
                    gas_mass=bool(self.gas.value), reference_liquid=self.ref.value,
                    pressure_unit=self.punit.value, temperature_unit=self.tunit.value,
                    water_layer=bool(self.layer.value), bubble_depth=depth)

    def sync(self, c: dict) -> None:
        """Show the choices ``c`` (the caller keeps its handlers quiet meanwhile)."""
        self.model.value = (c["model"], c["weighting"])
        self.air.value = c["air_from"]
        self.vapor.value = c["vapor_at_air_reference"]
        self.head.value = c["use_head"]
        self.gas.value = c["gas_mass"]
        self.layer.value = c["water_layer"]
        if c["bubble_depth"] is not None:
            self.depth.value = round(c["bubble_depth"] * 100, 3)
        self.ref.value = c["reference_liquid"] if c["reference_liquid"] in liquids() else None
        self.punit.value = c["pressure_unit"]
        self.tunit.value = c["temperature_unit"]
