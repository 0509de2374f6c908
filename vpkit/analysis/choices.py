"""Analysis choices, and the one resolver that gives each of them a single meaning.

:class:`Choices` validates what a user (or a panel, the command line, a
report) asks for; :func:`resolve` turns it into per-run settings for a stack:
which density, which published curve, how p_vap at the air reference is
taken, which reading is the cold reference, whether the head applies. Every
entry point calls these two, so ``"auto"`` means the same everywhere:

- ``air_from="auto"``: each run's air amount by the first method its record
  supports, in the order of :data:`AUTO_AIR_ORDER`: the weighing (a room
  reading, with the masses or a scale offset), the injected volume, the cold
  reading (the coldest point, set aside from the fit);
- ``vapor_at_air_reference="auto"``: the published equation when the liquid
  has one, else self-consistent with the fit (``"fit"``);
- ``reference="auto"``: IAPWS-95 for water, the bundled PPDS equation for
  2-propanol and 1-butanol, the Antoine set for the other liquids
  (:func:`vpkit.physics.curves.reference_curve`).

References
----------
See :mod:`vpkit.physics.reduce` (air-amount methods, METHOD 2.3) and
:mod:`vpkit.physics.liquids` (equations and their sources).
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Mapping
from dataclasses import dataclass, field

import numpy as np

from ..arrays import readonly
from ..errors import BadValueError, InputError, Notice, ReferenceRangeWarning
from ..fitting.fit import WEIGHTINGS
from ..fitting.models import MODELS, get_model
from ..physics.curves import REFERENCE_SOURCES, CurveSet, has_source, reference_curve
from ..physics.liquids import canonical_name, has_reference, liquid_density
from ..physics.reduce import AIR_METHODS, VAPOR_AT_AIR_REFERENCE, ReductionSetup
from ..record.stack import RunStack

#: Thresholds of the checks (documented defaults; all common practice, no source).
DEFAULT_THRESHOLDS: dict[str, float] = {
    "min_points": 4,  # included points
    "min_range_K": 20.0,  # span of included bath temperatures
    "max_deviation_u": 3.0,  # |ΔH - reference| in standard uncertainties
    "max_boiling_gap_K": 2.0,  # |measured - predicted boiling point| at the run's pressure
    "max_influence_u": 2.0,  # one point moves ΔH by more than this many u when left out
    "scatter_percentile": 0.99,  # χ² above this percentile of its distribution
    "suspect_u": 5.0,  # distance from a robust line, in the point's own standard uncertainties
    "extrapolation_K": 10.0,  # T_b this far beyond the data (and beyond the span) is flagged
    # plausibility of what was entered (a unit slip?)
    "barometric_min_kPa": 50.0, "barometric_max_kPa": 110.0,  # sea level to ~5,500 m
    "room_min_degC": 5.0, "room_max_degC": 40.0,
    "enthalpy_rel_to_reference": 0.3,  # |ΔH/ΔH_ref - 1| above this is implausible
    "enthalpy_min_kJ": 10.0, "enthalpy_max_kJ": 80.0,  # without a reference
    # conditioning of the method itself
    "max_amplification": 25.0,  # P_total/p_vap at a point: p_vap that much less certain than V
    "max_vapor_fraction": 0.8,  # p_vap/P_total at a point: the bubble runs away near boiling
}

AIR_REFERENCE_REASON = "used for the air amount (cold reference)"

#: air_from="auto": the methods in order of preference (our choice: the weighing calibrates
#: the volume itself; an injected volume assumes the syringe's air at room conditions; a
#: cold reading spends a point and needs p_vap there).
AUTO_AIR_ORDER = ("weighed", "injected", "cold")
AIR_CHOICES = ("auto",) + AIR_METHODS


@dataclass(frozen=True)
class Choices:
    """What to do with the runs (validated on construction).

    Attributes
    ----------
    model : {"clausius_clapeyron", "constant_dcp", "antoine"}
    weighting : {"gls", "weighted", "ordinary"}
    air_from : {"auto", "weighed", "cold", "injected"}
        "auto" (default): each run by the first method its record supports
        (:data:`AUTO_AIR_ORDER`).
    vapor_at_air_reference : {"auto", "reference", "fit", "neglect"}
    cold_index : int or None
        Point used as the cold reference (default: the coldest).
    use_head, gas_mass, temperature_errors : bool
    reference : {"auto", "antoine", "ppds", "iapws95"} or None
        Reference equation for the comparison (None: no comparison).
    reference_liquid : str or None
        Compare with another liquid's equation (default: the run's liquid).
    bubble_depth : float or None
        Bubble depth [m] to use instead of the runs' own (a what-if).
    water_layer : bool
        The liquid floats on water, which touches the bubble too (a common variant
        of the method): the gas then holds both vapors, and the water's (IAPWS-95)
        is subtracted with the air's, at every point and at the air reference.
    thresholds : mapping
        Overrides of :data:`DEFAULT_THRESHOLDS`.
    """

    model: str = "clausius_clapeyron"
    weighting: str = "gls"
    air_from: str = "auto"
    vapor_at_air_reference: str = "auto"
    cold_index: int | None = None
    use_head: bool = True
    gas_mass: bool = True
    reference: str | None = "auto"
    reference_liquid: str | None = None
    bubble_depth: float | None = None
    temperature_errors: bool = True
    water_layer: bool = False
    thresholds: Mapping[str, float] = field(default_factory=dict)

    def __post_init__(self) -> None:
        get_model(self.model)
        bad = lambda name, allowed, got: BadValueError(  # noqa: E731
            f"{name} must be one of {', '.join(map(str, allowed))}, got {got!r}", column=name)
        if self.weighting not in WEIGHTINGS:
            raise bad("weighting", WEIGHTINGS, self.weighting)
        if self.air_from not in AIR_CHOICES:
            raise bad("air_from", AIR_CHOICES, self.air_from)
        if self.vapor_at_air_reference not in ("auto",) + VAPOR_AT_AIR_REFERENCE:
            raise bad("vapor_at_air_reference", ("auto",) + VAPOR_AT_AIR_REFERENCE,
                      self.vapor_at_air_reference)
        if self.reference is not None and self.reference not in REFERENCE_SOURCES:
            raise bad("reference", REFERENCE_SOURCES + (None,), self.reference)
        if self.bubble_depth is not None and not (isinstance(self.bubble_depth, (int, float))
                                                  and math.isfinite(self.bubble_depth)):
            raise BadValueError(f"bubble_depth must be a finite length in m, got "
                                f"{self.bubble_depth!r}", column="bubble_depth")
        unknown = set(self.thresholds) - set(DEFAULT_THRESHOLDS)
        if unknown:
            raise BadValueError(f"unknown threshold(s) {', '.join(sorted(unknown))}",
                                column="thresholds",
                                hint="known: " + ", ".join(DEFAULT_THRESHOLDS))

    @property
    def limits(self) -> dict[str, float]:
        return dict(DEFAULT_THRESHOLDS, **dict(self.thresholds))

    def as_options(self) -> dict:
        """The choices as keyword arguments of :func:`vpkit.analyze`."""
        return {k: getattr(self, k) for k in self.__dataclass_fields__}


#: The options every entry point accepts (keyword arguments of Choices).
OPTION_NAMES = tuple(Choices.__dataclass_fields__)
MODEL_NAMES = tuple(MODELS)


@dataclass(frozen=True)
class Resolved:
    """Per-run settings of a stack under some choices (see :func:`resolve`).

    Attributes
    ----------
    density, depth : ndarray (R,)
        Liquid density used [kg/m^3] (the run's, or the reference value at
        the room temperature) and bubble depth [m] (NaN: none).
    own_curve, compare_curve : CurveSet
        Per run, a ReferenceCurve or None (indexable).
        The liquid's own published curve (p_vap at the air reference, where
        used) and the curve compared with.
    vapor_mode : ndarray of str (R,)
        "reference", "fit", "neglect", or "none" (injected air).
    setup : ReductionSetup
    errors : tuple of InputError or None
        Why a run cannot be analysed with these choices.
    notices : tuple of tuple of Notice
    layout : InputLayout or None
        The input matrix (set by the engine once the setup is known).
    """

    density: np.ndarray
    depth: np.ndarray
    own_curve: CurveSet
    compare_curve: CurveSet
    vapor_mode: np.ndarray
    setup: ReductionSetup
    errors: tuple
    notices: tuple
    layout: object = None


class _Failures:
    """The first error of each run (a run fails once, on its first problem)."""

    def __init__(self, R: int) -> None:
        self.errors: list[InputError | None] = [None] * R

    def __call__(self, r: int, exc: InputError) -> None:
        if self.errors[r] is None:
            self.errors[r] = exc


def resolve(stack: RunStack, choices: Choices) -> Resolved:
    """Give every choice its meaning for each run of ``stack`` (see the module docstring)."""
    R = stack.R
    fail = _Failures(R)
    notices: list[list[Notice]] = [[] for _ in range(R)]
    curves, own_code, compare_code = _curves(stack, choices, fail, notices)
    depth = (np.full(R, float(choices.bubble_depth)) if choices.bubble_depth is not None
             else np.array(stack.scalar["depth"], float))
    sc = stack.scalar
    needs_density = (~np.isnan(sc["mass_before"])
                     | (bool(choices.use_head) & (~np.isnan(depth) | ~np.isnan(sc["room_depth"]))))
    density = _density(stack, fail, needs_density)
    air = air_methods(stack, choices, fail)
    mode = _vapor_mode(stack, choices, air, own_code >= 0, fail)
    takes = {x: _takes_up_water(x) for x in set(stack.liquid)}
    cold = _cold_index(stack, choices, fail)
    if choices.water_layer:
        for r in range(R):
            if has_reference(stack.liquid[r]) and canonical_name(
                    stack.liquid[r]) == "water":
                fail(r, BadValueError("water_layer means a liquid floating on water; this run's "
                                      "liquid is water itself", column="water_layer",
                                      hint="analyse water runs without water_layer"))
    setup = ReductionSetup(air_from=readonly(air), gas_mass=bool(choices.gas_mass),
                           direction=readonly(stack.direction),
                           offset_from_weighing=readonly(~np.isnan(stack.scalar["mass_before"])),
                           cold_index=readonly(cold.astype(int)),
                           use_head=readonly(np.full(R, bool(choices.use_head))
                                             & ~np.isnan(depth)),
                           room_head=readonly(np.full(R, bool(choices.use_head))),
                           moisture_dissolves=readonly(np.array(
                               [takes[x] for x in stack.liquid], bool)),
                           water_layer=bool(choices.water_layer),
                           length_readings=readonly(stack.length_readings))
    return Resolved(readonly(density), readonly(depth),
                    CurveSet.from_codes(curves, own_code),
                    CurveSet.from_codes(curves, compare_code), readonly(mode), setup,
                    tuple(fail.errors), tuple(tuple(n) for n in notices))


def _curves(stack, choices, fail, notices):
    """Each run's own published curve and the curve it is compared with (one decision per
    liquid): the distinct curves and each run's index into them (-1: none)."""
    R = stack.R
    liquids = np.asarray(stack.liquid, dtype=object)
    has = {liq: has_reference(liq) for liq in set(stack.liquid)}
    is_water = lambda liq: canonical_name(liq) == "water"  # noqa: E731
    source = choices.reference or "auto"
    curves: dict = {}
    own_code, compare_code = np.full(R, -1), np.full(R, -1)
    code = lambda c: -1 if c is None else curves.setdefault(c, len(curves))  # noqa: E731
    for liquid in has:
        rows = np.flatnonzero(liquids == liquid)
        mine = None if not has[liquid] else reference_curve(
            liquid, source if has_source(liquid, source) else "auto")
        target = choices.reference_liquid or liquid
        curve, note, error = None, None, None
        if choices.reference is None:
            pass
        elif not has_reference(target):
            note = Notice(f"no reference equation for {target!r}: no comparison made",
                          ReferenceRangeWarning)
        elif source == "iapws95" and not is_water(target):
            error = BadValueError(f"IAPWS-95 describes water, not {target!r}",
                                  column="reference", hint="use reference='auto'")
        elif not has_source(target, source):
            error = BadValueError(f"no bundled {source} equation for {target!r}",
                                  column="reference", hint="use reference='auto' or 'antoine'")
        else:
            curve = reference_curve(target, source)
            if choices.reference_liquid and (not has[liquid] or canonical_name(
                    target) != canonical_name(liquid)):
                note = Notice(f"compared with {curve.liquid}, not with the run's liquid "
                              f"{liquid!r}", ReferenceRangeWarning)
        own_code[rows], compare_code[rows] = code(mine), code(curve)
        for r in rows if (note is not None or error is not None) else ():
            if note is not None:
                notices[r].append(note)
            if error is not None:
                fail(r, error)
    return tuple(curves), own_code, compare_code


def _density(stack, fail, needed) -> np.ndarray:
    """The run's own liquid density, or the reference value at the room temperature.

    A run that neither weighs its gas nor adds a hydrostatic head does not use the
    density: without one (an unnamed liquid, say) it gets 0, which enters nothing."""
    sc = stack.scalar
    density = np.array(sc["density"], float)
    liquids = np.asarray(stack.liquid, dtype=object)
    unknown = [x for x in set(stack.liquid) if not has_reference(x)]  # one call per liquid
    unused = np.isnan(density) & ~needed & np.isin(liquids, unknown)
    density[unused] = 0.0
    for liquid in set(stack.liquid):
        sel = np.flatnonzero(np.isnan(density) & (liquids == liquid))
        if not sel.size:
            continue
        if not has_reference(liquid):
            for r in sel:
                fail(r, InputError(f"liquid_density is 'reference' but {liquid!r} has no "
                                   "bundled density", **stack.place(r, "liquid_density"),
                                   hint="enter the measured density"))
            continue
        try:
            density[sel] = liquid_density(liquid, sc["T_room"][sel])
        except InputError as exc:
            for r in sel:
                fail(r, InputError(exc.message, **stack.place(r, "liquid_density"),
                                   hint=exc.hint))
    return density


def air_supported(stack: RunStack) -> dict[str, np.ndarray]:
    """Which air methods each run's record supports (bools (R,) per method)."""
    sc = stack.scalar
    return {"weighed": ~np.isnan(sc["room_reading"]), "injected": ~np.isnan(sc["V_injected"]),
            "cold": stack.n_points >= 1}


#: What each method needs from the record, for the messages.
AIR_NEEDS = {"weighed": ("room_reading", "the reading taken at the weighing"),
             "injected": ("injected_air_volume", "the volume of air injected"),
             "cold": ("bath_temperature", "a reading")}


def air_methods(stack: RunStack, choices: Choices, fail) -> np.ndarray:
    """Each run's air method: the one asked for, or under "auto" the first its record
    supports; a run that lacks what an explicit method needs fails with a hint naming
    the method its record does support."""
    can = air_supported(stack)
    if choices.air_from == "auto":
        out = np.full(stack.R, AUTO_AIR_ORDER[-1], dtype=object)
        for method in reversed(AUTO_AIR_ORDER):
            out = np.where(can[method], method, out)
        return out
    method = choices.air_from
    name, what = AIR_NEEDS[method]
    for r in np.flatnonzero(~can[method]):
        other = next(m for m in AUTO_AIR_ORDER if can[m][r])
        fail(r, InputError(f"air_from={method!r} needs {name} ({what}), and this run has none",
                           **stack.place(r, name),
                           hint=f"add {name}, or use air_from={other!r} (what this run's "
                           "record supports) or 'auto'"))
    return np.full(stack.R, method, dtype=object)


def _vapor_mode(stack, choices, air, with_curve, fail) -> np.ndarray:
    """How p_vap at the air reference is taken per run ("none" for injected air)."""
    vap = choices.vapor_at_air_reference
    mode = (np.where(with_curve, "reference", "fit").astype(object) if vap == "auto"
            else np.full(stack.R, vap, dtype=object))
    if vap == "reference":
        for r in np.flatnonzero(~with_curve & (air != "injected")):
            fail(r, InputError("vapor_at_air_reference='reference' needs a reference "
                               f"equation, and {stack.liquid[r]!r} has none",
                               **stack.place(r, "liquid"), hint="use 'fit' or 'neglect'"))
    return np.where(air == "injected", "none", mode).astype(object)


def _cold_index(stack, choices, fail) -> np.ndarray:
    """The cold reference reading of each run: the one asked for, or the coldest."""
    R = stack.R
    if choices.cold_index is None:
        if not stack.N:
            return np.zeros(R, int)
        return np.argmin(np.where(stack.mask, stack.T, np.inf), axis=1)
    n = stack.n_points
    for r in np.flatnonzero((choices.cold_index < 0) | (choices.cold_index >= n)):
        fail(r, BadValueError(f"cold_index {choices.cold_index} is not a point of the run "
                              f"(0 to {n[r] - 1})", column="cold_index"))
    return np.clip(np.full(R, int(choices.cold_index)), 0, max(stack.N - 1, 0))


def setup_rows(setup: ReductionSetup, idx) -> ReductionSetup:
    """The setup of the runs at ``idx`` (per-run arrays indexed)."""
    pick = lambda v: readonly(np.asarray(v)[idx]) if np.ndim(v) else v  # noqa: E731
    return dataclasses.replace(
        setup, air_from=pick(setup.air_from), direction=pick(setup.direction),
        offset_from_weighing=pick(setup.offset_from_weighing), cold_index=pick(setup.cold_index),
        use_head=pick(setup.use_head), room_head=pick(setup.room_head),
        moisture_dissolves=pick(setup.moisture_dissolves),
        length_readings=pick(setup.length_readings))


#: Liquids that take up the water vapor of injected air (water itself, and liquids
#: miscible with water or dissolving much of it); in the others (alkanes, cyclohexane,
#: toluene, ethyl acetate, unknown liquids) the moisture stays in the gas and counts
#: with the air. Common practice, no source.
TAKES_UP_WATER = frozenset({"water", "methanol", "ethanol", "1-propanol", "2-propanol",
                            "1-butanol", "acetone"})


def _takes_up_water(liquid: str) -> bool:
    return has_reference(liquid) and canonical_name(liquid) in TAKES_UP_WATER
