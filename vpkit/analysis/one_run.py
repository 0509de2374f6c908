"""The whole job for one run: :func:`analyze` -> :class:`Analysis`.

:func:`analyze` stacks the run (a stack of one), calls the one analysis path
(:func:`vpkit.analysis.engine.analyze_stack`) and wraps the result. :class:`Analysis`
is a frozen view of one run of a :class:`~vpkit.analysis.engine.StackResult`, so an
analysis taken from a many-run result (a report, the overview panel) is the
same object with the same numbers. Tables, the summary text and the figure
are renderings of it.

References
----------
See :mod:`vpkit.analysis.engine` and the modules it names for the equations and their
sources; Monte Carlo: JCGM 101:2008 (GUM Supplement 1).
"""

from __future__ import annotations

import functools
import warnings
from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd
import uncertainties

from ..constants import P_STANDARD
from ..errors import BadValueError, FitError, InputError, Notice
from ..fitting.results import FitResult
from ..physics.propagate import InputLayout
from ..physics.reduce import AIR_METHODS, FLAG_TEXT, VAPOR_AT_AIR_REFERENCE
from ..record.assemble import stack_runs
from ..record.run import Run
from ..record.runfile import read_run
from ..record.stack import RunSI
from .choices import Choices, setup_rows
from .comparison import ReferenceComparison, comparison_of
from .engine import StackResult, analyze_stack
from .monte_carlo import MonteCarloResult, monte_carlo


@dataclass(frozen=True)
class Analysis:
    """Everything found for one run (frozen; arrays read-only; SI units).

    Attributes
    ----------
    run : Run
        The run as entered (never modified).
    result : StackResult
        The stack result this is a view of; ``index`` the run's row in it.
    options : dict
        The choices as asked for (see :func:`analyze`).
    """

    run: Run
    result: StackResult = field(repr=False)
    index: int = 0
    options: Mapping[str, object] = field(default_factory=dict)

    # -- per point (the run's own points) ------------------------------------------
    @property
    def n(self) -> int:
        return int(self.result.stack.n_points[self.index])

    def _pt(self, name):
        return getattr(self.result, name)[self.index, :self.n]

    T = property(lambda self: self.result.stack.T[self.index, :self.n])
    V = property(lambda self: self._pt("V"))
    P_total = property(lambda self: self._pt("P_total"))
    p_air = property(lambda self: self._pt("p_air"))
    p_vap = property(lambda self: self._pt("p_vap"))
    u_p_vap = property(lambda self: self._pt("u_p_vap"))
    include = property(lambda self: self._pt("include"))

    @property
    def cov_ln_p(self) -> np.ndarray:
        return self.result.cov_ln_p[self.index, :self.n, :self.n]

    @property
    def reasons(self) -> tuple[str, ...]:
        return tuple(str(x) for x in self.result.reasons[self.index, :self.n])

    @property
    def flags(self) -> tuple[tuple[str, ...], ...]:
        pf = self.result.point_flags
        return tuple(tuple(FLAG_TEXT[k] for k in FLAG_TEXT if pf[k][self.index, i])
                     for i in range(self.n))

    # -- per run ---------------------------------------------------------------------
    n_air = property(lambda self: float(self.result.n_air[self.index]))
    p_ref = property(lambda self: float(self.result.p_ref[self.index]))

    @property
    def air_method(self) -> str:
        """How the air amount was found: weighed, injected or cold (under air_from="auto",
        the first method the run's record supports)."""
        return str(np.broadcast_to(np.asarray(self.result.resolved.setup.air_from,
                                              dtype=object), (self.result.stack.R,))[self.index])

    @property
    def vapor_mode(self) -> str:
        """How p_vap at the air reference was taken: reference, fit, neglect or none."""
        return str(self.result.resolved.vapor_mode[self.index])

    @functools.cached_property
    def fit(self) -> FitResult:
        return FitResult(self.result.fit, self.index, self.n)

    @functools.cached_property
    def comparison(self) -> ReferenceComparison | None:
        curve = self.result.resolved.compare_curve[self.index]
        if curve is None:
            return None
        return comparison_of(curve, self.result.comparison, self.index, self.n, self.T_m)

    @property
    def warnings(self) -> tuple[Notice, ...]:
        return tuple(f.notice() for f in self.result.findings[self.index])

    @property
    def si(self) -> RunSI:
        return self.result.stack.row(self.index)

    @property
    def inputs(self) -> InputLayout:
        lay = self.result.layout
        return InputLayout(lay.N, lay.nominal[self.index], lay.sigma[self.index])

    @property
    def jacobian(self) -> np.ndarray:
        return self.result.jacobian[self.index, :self.n]

    @property
    def setup(self):
        return setup_rows(self.result.resolved.setup, [self.index])

    # -- headline numbers --------------------------------------------------------------
    @property
    def enthalpy(self):
        """ΔH_vap at T_m with uncertainty [J/mol]."""
        return self.fit.enthalpy

    @property
    def T_m(self) -> float:
        return self.fit.T_m

    def boiling_point(self, pressure=P_STANDARD):
        """Predicted boiling point [K] at ``pressure`` [Pa] with uncertainty."""
        return self.fit.boiling_point(pressure)

    @property
    def measured_boiling_point(self):
        si = self.si
        if si.T_boil is None:
            return None
        with warnings.catch_warnings():  # a stated uncertainty of 0 is the user's choice
            warnings.simplefilter("ignore", UserWarning)
            return uncertainties.ufloat(si.T_boil, si.u["T_boil"])

    def p_vap_correlated(self):
        """Vapor pressures as correlated ``uncertainties`` numbers [Pa]."""
        cov = self.cov_ln_p * np.outer(self.p_vap, self.p_vap)
        return uncertainties.correlated_values(list(self.p_vap), cov)

    def point_only_uncertainty(self) -> np.ndarray:
        """Standard uncertainty of each point's residual from its own inputs only.

        Counts the point's reading, bath temperature and own pressure, not the
        inputs every point shares (barometer, weighing, air amount), which move
        all points together and so cannot make one point stand out.
        """
        return self.result.point_only_u[self.index, :self.n]

    def robust_outliers(self, threshold: float | None = None) -> dict[int, float]:
        """Included points far from a robust (Theil-Sen) line through ln p vs 1/T.

        Returns index -> distance from the robust line in units of the point's
        own standard uncertainty (:meth:`point_only_uncertainty`), for points
        beyond ``threshold`` (default ``suspect_u`` = 5, our choice from
        simulation: 0.3 % of 1,200 clean simulated 8-point runs raise it, while a
        0.1 mL misread at 45 degC in an ethanol run scores 8). A diagnostic only:
        it never changes which points are fitted.
        """
        thr = self.result.choices.limits["suspect_u"] if threshold is None else threshold
        z = self.result.robust_z[self.index, :self.n]
        return {int(i): float(z[i]) for i in np.flatnonzero(np.abs(np.nan_to_num(z)) > thr)}

    # -- views ---------------------------------------------------------------------
    def points(self):
        """Per-point table (pandas), units in the column names."""
        from .result_tables import points_table

        return points_table(self)

    def results(self):
        """One-row results table (pandas), units in the column names."""
        from .result_tables import results_table

        return results_table(self.result, rows=[self.index])

    def summary(self, shifts: bool = True) -> str:
        """Markdown summary of the run's results (see
        :func:`vpkit.output.run_summary.summary_markdown`)."""
        from ..output.run_summary import summary_markdown

        return summary_markdown(self, shifts=self.choice_shifts() if shifts else None)

    def figure(self, width_mm: float = 85.0, **kwargs):
        """Report figure (matplotlib Figure); see :func:`vpkit.output.figures.run_figure`."""
        from ..output.figures import run_figure

        return run_figure(self, width_mm=width_mm, **kwargs)

    def with_choices(self, **changes) -> Analysis:
        """Analyse the same run again with some choices changed."""
        return analyze(self.run, **{**self.options, **changes})

    def monte_carlo(self, draws: int = 100_000, seed: int = 0,
                    inputs: Iterable[str] | None = None) -> MonteCarloResult:
        """Propagate the input distributions by Monte Carlo (GUM Supplement 1).

        Every uncertain input is drawn from its normal distribution; each draw
        is reduced (solving the self-consistent air amount per draw where that
        choice was made) and fitted with the weights of the nominal fit. ΔH_vap
        is taken at the nominal T_m. ``inputs`` limits the draws to some inputs
        (names as in ``inputs.names``, e.g. ``"T_room"``, or budget groups such
        as ``"bath thermometer"``); the others stay at their values.
        """
        return monte_carlo(self, draws, seed, inputs)

    def budget(self) -> pd.DataFrame:
        """The uncertainty budget (:func:`vpkit.analysis.budget.budget_table`): each input group's
        contribution to u(ΔH_vap), u(T_b) and u(true ΔvapH), its share, and u if halved."""
        from .budget import budget_table

        return budget_table(self.result, self.index)

    def choice_shifts(self) -> dict[str, float]:
        """How far other workable choices move ΔH_vap [J/mol] (nominal fits).

        Keys name the changed choice: each other air-amount method (the cold
        reference only when the run has a reading below room temperature), the
        hydrostatic head off (when the run gives a depth) and the gas mass in
        the weighing off. Values are ΔH_vap(other) - ΔH_vap(this analysis).
        Computed once per analysis.
        """
        return dict(self._shifts)

    @functools.cached_property
    def _shifts(self) -> dict[str, float]:
        c = self.result.choices
        si = self.si
        base = self.enthalpy.nominal_value
        here = (self.air_method, self.vapor_mode)
        trials = {}
        has_cold = bool(np.min(si.T) < si.T_room)
        for air in AIR_METHODS:
            if (air == "cold" and not has_cold) or (air == "injected" and si.V_injected is None):
                continue
            for vap in (VAPOR_AT_AIR_REFERENCE if air != "injected" else ("neglect",)):
                if (air, vap) != here and not (air == "injected" and here[0] == "injected"):
                    trials[f"air from {air}, p_vap at air reference: {vap}"] = dict(
                        air_from=air, vapor_at_air_reference=vap)
        if si.depth is not None and c.use_head:
            trials["hydrostatic head off"] = dict(use_head=False)
        if c.gas_mass and si.mass_before is not None:
            trials["gas mass in the weighing off"] = dict(gas_mass=False)
        r = [self.index]
        stack = self.result.stack.take(r)
        n = self.n
        out = {}
        for label, change in trials.items():
            try:
                other = analyze_stack(stack, Choices(**{**c.as_options(), **change}),
                                      include=self.result.requested_include[r, :n],
                                      reasons=self.result.requested_reasons[r, :n])
            except (InputError, FitError):
                continue
            if other.errors[0] is None:
                out[label] = float(other.enthalpy[0]) - base
        return out


def _exclusions(exclude, n) -> dict[int, str]:
    if exclude is None:
        return {}
    items = exclude.items() if isinstance(exclude, Mapping) else (
        (i, "excluded by the user") for i in exclude)
    out = {}
    for i, why in items:
        i = int(i)
        if not 0 <= i < n:
            raise BadValueError(f"cannot exclude point {i}: the run has points 0 to {n - 1}",
                                column="exclude", hint="count points from 0 in file order")
        out[i] = str(why) if why else "excluded by the user"
    return out


def analyze(
    run: Run | str | Path,
    *,
    model: str = "clausius_clapeyron",
    weighting: str = "gls",
    air_from: str = "auto",
    vapor_at_air_reference: str = "auto",
    cold_index: int | None = None,
    use_head: bool = True,
    gas_mass: bool = True,
    exclude: Mapping[int, str] | Iterable[int] | None = None,
    reference: str | None = "auto",
    reference_liquid: str | None = None,
    bubble_depth: float | None = None,
    temperature_errors: bool = True,
    water_layer: bool = False,
    thresholds: Mapping[str, float] | None = None,
    warn: bool = True,
) -> Analysis:
    """Reduce, propagate, fit and compare one run (the many-run path with R = 1).

    Parameters
    ----------
    run : Run or path
    model : {"clausius_clapeyron", "constant_dcp", "antoine"}
    weighting : {"gls", "weighted", "ordinary"}
    air_from : {"auto", "weighed", "cold", "injected"}
        Air amount from the weighed room-temperature volume, from the cold
        reference reading (the coldest point unless ``cold_index``), or from
        the injected volume (METHOD 2.3). "auto" (default) takes the first of
        weighed, injected, cold that the run's record supports
        (:data:`vpkit.analysis.choices.AUTO_AIR_ORDER`); ``Analysis.air_method``
        says which.
    vapor_at_air_reference : {"auto", "reference", "fit", "neglect"}
        p_vap at the air-reference temperature: from the published equation,
        self-consistent with the fitted curve, or neglected. "auto" takes the
        published equation when the liquid has one, else "fit" (see
        :mod:`vpkit.analysis.choices`). The self-consistent choice extrapolates the
        fitted model to the air reference temperature; near room temperature
        that amplifies both noise and any model error (for 25-60 degC data and
        a room-temperature weighing, about a factor 100), so it is the
        fallback, not the default.
    use_head : bool
        Add the hydrostatic head of ``bubble_depth`` when the run gives one.
    gas_mass : bool
        Count the trapped gas's mass in the weighing.
    exclude : mapping index -> reason, or iterable of indices
        Points to leave out of the fit, on top of the run's own flags.
    reference : {"auto", "antoine", "ppds", "iapws95"} or None
        Reference equation for the comparison (None: no comparison).
    reference_liquid : str, optional
        Compare with another liquid's equation (default: the run's liquid).
    bubble_depth : float, optional
        Bubble depth [m] to use instead of the run's own (a what-if; the run is
        not changed).
    temperature_errors : bool
        Fold the thermometer's uncertainty into the fit (effective variance).
    water_layer : bool
        The liquid floats on water that touches the bubble too: subtract water's
        vapor pressure (IAPWS-95) as well (see :class:`vpkit.analysis.choices.Choices`).
    thresholds : mapping, optional
        Overrides of :data:`vpkit.analysis.choices.DEFAULT_THRESHOLDS` for the checks.
    warn : bool
        Also emit each warning as a :class:`vpkit.VpkitWarning` subclass (they
        are always in ``Analysis.warnings``).

    Returns
    -------
    Analysis

    Raises
    ------
    InputError, FitError
        The run cannot be read or analysed with these choices (located).
    """
    if not isinstance(run, Run):
        run = read_run(run)
    choices = Choices(model=model, weighting=weighting, air_from=air_from,
                      vapor_at_air_reference=vapor_at_air_reference, cold_index=cold_index,
                      use_head=use_head, gas_mass=gas_mass, reference=reference,
                      reference_liquid=reference_liquid, bubble_depth=bubble_depth,
                      temperature_errors=temperature_errors, water_layer=water_layer,
                      thresholds=dict(thresholds or {}))
    stack = stack_runs([run])
    n = run.n_points
    include = np.array(run.include, bool)
    reasons = np.array(run.reason, dtype=object).reshape(n)
    for i, why in _exclusions(exclude, n).items():
        include[i], reasons[i] = False, why
    result = analyze_stack(stack, choices, include=include[None], reasons=reasons[None])
    if result.errors[0] is not None:
        raise result.errors[0]
    options = {**choices.as_options(), "exclude": None if exclude is None else
               _exclusions(exclude, n)}
    if not thresholds:
        options.pop("thresholds")
    a = Analysis(run, result, 0, options)
    if warn:
        for notice in a.warnings:
            warnings.warn(str(notice), notice.category, stacklevel=2)
    return a
