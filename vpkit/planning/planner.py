"""The experiment planner: what a run will give before it is made, and a better plan.

A plan (liquid, bubble size, bath temperatures, instrument uncertainties, tube)
is turned into the noise-free run it would record, by the forward model
(:func:`vpkit.physics.simulate.simulate_run`, the published curve as the truth), with
the plan's instrument uncertainties stated. That run goes through the one
analysis path (:func:`vpkit.analysis.engine.analyze_stack`): the predicted u(ΔH_vap),
u(T_b), extrapolation bias and warnings are the ones an analysis of the real
run would report if the readings fell exactly on the curve. Nothing here is a
second version of the physics. Many candidate plans are analysed as one stack,
so a search over bubble sizes, temperature ranges and numbers of points costs
one batched analysis.

References
----------
Forward model: :mod:`vpkit.physics.simulate`; propagation and fit: :mod:`vpkit.analysis.engine`;
published curves: :mod:`vpkit.physics.liquids`. Margins (common practice, no source):
the hottest point at least :data:`BOIL_MARGIN_K` below the boiling point at the
barometric pressure, the coldest at least :data:`FREEZE_MARGIN_K` above the
melting point.
"""

from __future__ import annotations

import itertools
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field, replace

import numpy as np
import pandas as pd

from ..analysis.choices import Choices
from ..analysis.engine import StackResult, analyze_stack
from ..constants import T_ZERO_C
from ..errors import BadValueError
from ..physics.curves import reference_curve
from ..physics.liquids import has_reference, liquid_density, liquids, melting_point
from ..physics.simulate import simulate_run
from ..record.assemble import stack_runs
from ..record.fields import DEFAULT_UNCERTAINTY, Entry

BOIL_MARGIN_K = 10.0
FREEZE_MARGIN_K = 2.0

#: Instrument standard uncertainties of a plan (SI) when none are given: the defaults
#: of vpkit.record.fields.DEFAULT_UNCERTAINTY (common practice, no source).
INSTRUMENTS = {"reading": DEFAULT_UNCERTAINTY["reading_uncertainty"],
               "T": DEFAULT_UNCERTAINTY["temperature_uncertainty"],
               "P_bar": DEFAULT_UNCERTAINTY["barometric_pressure"],
               "T_room": DEFAULT_UNCERTAINTY["room_temperature"],
               "mass": DEFAULT_UNCERTAINTY["mass_before_air"]}


@dataclass(frozen=True)
class Plan:
    """One planned run (SI units).

    Attributes
    ----------
    liquid : str
    bubble_volume : float
        Gas volume at the room reading [m^3].
    temperatures : tuple of float
        Bath temperatures [K].
    P_bar, T_room : float
        Expected barometric pressure [Pa] and room temperature [K].
    instruments : mapping
        Standard uncertainties: ``reading`` [m^3], ``T``, ``T_room`` [K], ``P_bar``
        [Pa], ``mass`` [kg] (missing keys: :data:`INSTRUMENTS`).
    capacity : float or None
        Largest gas volume the tube holds [m^3].
    offset : float
        Volume below the zero mark [m^3].
    """

    liquid: str
    bubble_volume: float
    temperatures: tuple[float, ...]
    P_bar: float = 100_000.0
    T_room: float = 294.15
    instruments: Mapping[str, float] = field(default_factory=dict)
    capacity: float | None = None
    offset: float = 0.15e-6

    def __post_init__(self):
        if not has_reference(self.liquid):
            raise BadValueError(
                f"cannot plan a run of {self.liquid!r}: a plan is predicted from a published "
                "vapor-pressure curve, and vpkit bundles none for this liquid",
                hint="plan one of " + ", ".join(liquids()) + " (a run of any other liquid "
                "can still be analysed, without the comparison)")

    def run(self):
        """The noise-free run this plan records (the forward model), uncertainties stated."""
        curve = reference_curve(self.liquid)
        stated = {**INSTRUMENTS, **dict(self.instruments)}
        run = simulate_run(curve.p, np.asarray(self.temperatures, float), liquid=self.liquid,
                           P_bar=self.P_bar, T_room=self.T_room, V_room=self.bubble_volume,
                           offset=self.offset,
                           density=float(liquid_density(self.liquid, self.T_room)),
                           stated=stated)
        if self.capacity is not None:
            run = replace(run, entries=run.entries + (
                ("tube_capacity", Entry(self.capacity * 1e6, "mL")),))
        return run


@dataclass(frozen=True)
class Prediction:
    """What a plan is expected to give (SI; a view of one row of ``result``).

    Attributes
    ----------
    plan : Plan
    u_enthalpy, u_T_b, bias_T_b : float
        Standard uncertainty of ΔH_vap [J/mol] and of the normal boiling point [K],
        and the model's extrapolation bias of T_b [K].
    points : DataFrame
        Per temperature: expected graduation reading and gas volume [mL], p_vap
        [kPa] and the amplification P_total/p_vap of a reading error.
    warnings : tuple of str
        The findings an analysis of this run would give, and the plan's own checks
        (freezing, boiling).
    flags : tuple of str
        Their short names (as in the results' ``flags``).
    """

    plan: Plan
    u_enthalpy: float
    u_T_b: float
    bias_T_b: float
    points: pd.DataFrame = field(repr=False)
    warnings: tuple[str, ...]
    flags: tuple[str, ...] = ()
    result: StackResult | None = field(default=None, repr=False)
    index: int = 0

    def budget(self) -> pd.DataFrame:
        """The predicted uncertainty budget (:func:`vpkit.analysis.budget.budget_table`)."""
        from ..analysis.budget import budget_table

        return budget_table(self.result, self.index)

    #: Flags that make a plan unworkable.
    UNWORKABLE = ("freezes", "too close to boiling", "below melting point",
                  "beyond tube capacity", "near boiling", "not analysable")

    @property
    def feasible(self) -> bool:
        """No finding that makes the run unworkable (freezing, boiling, overflowing)."""
        return not set(self.flags) & set(self.UNWORKABLE)


def predict(plans: Sequence[Plan], choices: Choices | None = None) -> list[Prediction]:
    """Predictions for many plans at once (one batched analysis)."""
    plans = list(plans)
    if not plans:
        return []
    runs = {f"plan{k}": p.run() for k, p in enumerate(plans)}
    res = analyze_stack(stack_runs(runs), choices or Choices())
    return [_prediction(p, res, k) for k, p in enumerate(plans)]


def _prediction(plan: Plan, res: StackResult, r: int) -> Prediction:
    n = int(res.stack.mask[r].sum())
    T = res.stack.T[r, :n]
    V = res.V[r, :n]
    p = res.p_vap[r, :n]
    points = pd.DataFrame({
        "t [degC]": T - T_ZERO_C,
        "expected reading [mL]": res.stack.reading[r, :n] * 1e6,
        "gas volume [mL]": V * 1e6,
        "p_vap [kPa]": p / 1e3,
        "amplification P_total/p_vap": res.P_total[r, :n] / p,
    })
    warns = [f.message for f in res.findings[r]]
    flags = [f.flag for f in res.findings[r] if f.flag]
    if res.errors[r] is not None:
        warns.append(str(res.errors[r]))
        flags.append("not analysable")
    curve = reference_curve(plan.liquid)
    T_boil = curve.boiling_point(plan.P_bar)
    T_melt = melting_point(plan.liquid)
    if np.max(T) > T_boil - BOIL_MARGIN_K:
        warns.append(f"the hottest point ({np.max(T) - T_ZERO_C:.1f} °C) is within "
                     f"{BOIL_MARGIN_K:g} K of the boiling point at "
                     f"{plan.P_bar / 1e3:.1f} kPa ({T_boil - T_ZERO_C:.1f} °C)")
        flags.append("too close to boiling")
    if np.isfinite(T_melt) and np.min(T) < T_melt + FREEZE_MARGIN_K:
        warns.append(f"the coldest point ({np.min(T) - T_ZERO_C:.1f} °C) is within "
                     f"{FREEZE_MARGIN_K:g} K of the melting point ({T_melt - T_ZERO_C:.1f} "
                     "°C): the liquid freezes")
        flags.append("freezes")
    return Prediction(plan, float(res.u_enthalpy[r]), float(res.u_T_b_normal[r]),
                      float(res.bias_T_b_normal[r]), points, tuple(dict.fromkeys(warns)),
                      tuple(dict.fromkeys(flags)), res, r)


@dataclass(frozen=True)
class Search:
    """The best plan found within limits, and how much it gains.

    Attributes
    ----------
    given, best : Prediction
    candidates : int
        Plans tried (all analysed in one batch).
    gain : float
        u(ΔH_vap) of the given plan over that of the best (1 when nothing better).
    """

    given: Prediction
    best: Prediction
    candidates: int

    @property
    def gain(self) -> float:
        return self.given.u_enthalpy / self.best.u_enthalpy


def search(plan: Plan, *, bubble_volumes: Sequence[float] | None = None,
           bath: tuple[float, float] | None = None, max_points: int | None = None,
           min_points: int = 5, min_span: float = 20.0) -> Search:
    """Search for a plan with the smallest u(ΔH_vap) within the user's limits.

    Candidates: every bubble volume of ``bubble_volumes`` (default the plan's),
    ranges whose ends lie on whole multiples of 5 degC inside ``bath`` (K; default the plan's own
    range widened to what the liquid allows), spans of at least ``min_span`` K, and
    ``min_points`` to ``max_points`` evenly spaced points (default the plan's
    number). Plans that freeze, boil, overflow the tube or come close to boiling are
    never recommended. The given plan is always among the candidates.
    """
    vols = list(bubble_volumes) if bubble_volumes else [plan.bubble_volume]
    T_boil = reference_curve(plan.liquid).boiling_point(plan.P_bar)
    T_melt = melting_point(plan.liquid)
    lo_lim = bath[0] if bath else min(plan.temperatures)
    hi_lim = bath[1] if bath else T_boil - BOIL_MARGIN_K
    lo_lim = max(lo_lim, (T_melt + FREEZE_MARGIN_K) if np.isfinite(T_melt) else lo_lim)
    hi_lim = min(hi_lim, T_boil - BOIL_MARGIN_K)
    if hi_lim - lo_lim < min_span:
        raise BadValueError(f"the bath limits leave {hi_lim - lo_lim:.1f} K for the liquid, "
                            f"less than the {min_span:g} K span asked for", column="bath",
                            hint="widen the bath range or lower min_span")
    n_max = max_points or len(plan.temperatures)
    grid = T_ZERO_C + np.arange(np.ceil((lo_lim - T_ZERO_C) / 5.0 - 1e-9) * 5.0,
                                hi_lim - T_ZERO_C + 1e-9, 5.0)  # whole multiples of 5 degC
    candidates = [plan]
    for V, (a, b), n in itertools.product(vols, itertools.combinations(grid, 2),
                                          range(min_points, n_max + 1)):
        if b - a >= min_span:
            candidates.append(replace(plan, bubble_volume=float(V),
                                      temperatures=tuple(np.linspace(a, b, n))))
    preds = predict(candidates)
    ok = [p for p in preds[1:] if p.feasible and np.isfinite(p.u_enthalpy)]
    best = min(ok, key=lambda p: p.u_enthalpy) if ok else preds[0]
    if preds[0].feasible and best.u_enthalpy >= preds[0].u_enthalpy:
        best = preds[0]
    return Search(preds[0], best, len(candidates))


def plan(liquid: str, bubble_volume: float = 2e-6, temperatures: Sequence[float] | None = None,
         *, P_bar: float = 100_000.0, T_room: float = 294.15,
         instruments: Mapping[str, float] | None = None, capacity: float | None = None,
         find_better: bool = False, bubble_volumes: Sequence[float] | None = None,
         bath: tuple[float, float] | None = None, max_points: int | None = None
         ) -> Prediction | Search:
    """Predict a planned run (SI: m^3, K, Pa); with ``find_better``, also search.

    ``temperatures`` defaults to 8 points from 25 degC to 12 K below the boiling
    point (at most 60 degC). Returns a :class:`Prediction`, or a :class:`Search`
    (``.given``, ``.best``, ``.gain``) when ``find_better`` is set.
    """
    if temperatures is None:
        top = min(60.0 + T_ZERO_C, reference_curve(liquid).boiling_point(P_bar) - 12.0)
        temperatures = tuple(np.linspace(25.0 + T_ZERO_C, top, 8))
    p = Plan(liquid, float(bubble_volume), tuple(float(t) for t in temperatures), P_bar, T_room,
             dict(instruments or {}), capacity)
    if find_better:
        return search(p, bubble_volumes=bubble_volumes, bath=bath, max_points=max_points)
    return predict([p])[0]
