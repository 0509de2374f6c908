"""The checks a careful analyst makes of every run, with the number that triggered each.

:func:`run_checks` evaluates every check on all runs of a
:class:`~vpkit.analysis.engine.StackResult` at once and returns, per run, the
:class:`Finding` objects that fired. The single-run warnings
(``Analysis.warnings``) and the many-run flags (``flags`` and ``flag reasons``
of the summary) are the same findings. Thresholds are
:data:`vpkit.analysis.choices.DEFAULT_THRESHOLDS` (all common practice, no source).

References
----------
.. [1] R. T. Birge, Phys. Rev. 40, 207-227 (1932): χ² against its distribution.
.. [2] D. A. Belsley, E. Kuh, R. E. Welsch, "Regression Diagnostics", Wiley
   (1980): influence of single points.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .. import display as D
from ..constants import T_ZERO_C
from ..errors import (
    ChoiceWarning,
    ConvergenceWarning,
    ExtrapolationWarning,
    IllConditionedWarning,
    ImplausibleValueWarning,
    ImpossiblePointWarning,
    Notice,
    ReferenceDeviationWarning,
    ReferenceRangeWarning,
    ScatterWarning,
    SuspectPointWarning,
    VpkitWarning,
)
from ..fitting.fit import chi2_limits
from ..physics.liquids import melting_point
from ..physics.reduce import FLAG_TEXT
from .comparison import outside_range_text
from .selfconsistent import LINE, SELF_CONSISTENT_TOL

_IMPOSSIBLE = ("volume", "p_low", "p_high")


@dataclass(frozen=True)
class Finding:
    """One check that fired for one run.

    Attributes
    ----------
    flag : str
        Short name for tables ("few points", "off reference", ...).
    category : type
        The :class:`vpkit.VpkitWarning` subclass it belongs to.
    message : str
        What was found, with the number that triggered it.
    """

    flag: str
    category: type[VpkitWarning]
    message: str

    def notice(self) -> Notice:
        return Notice(self.message, self.category)


def _t(T) -> str:
    return f"{T - T_ZERO_C:.2f} °C"


def run_checks(res) -> tuple[tuple[Finding, ...], ...]:
    """Every finding of every run of ``res`` (a StackResult), in a stable order: what was
    entered (plausibility) first, then the data, the points, the reference, the fit and
    the method, so a root cause comes before its symptoms."""
    out: list[list[Finding]] = [[] for _ in range(res.R)]

    def add(hits, flag, category, text):
        for r in np.flatnonzero(np.asarray(hits, bool) & res.ok):
            out[int(r)].append(Finding(flag, category, text(int(r))))

    with np.errstate(invalid="ignore", divide="ignore"):
        _plausibility_checks(res, add)  # a slip in what was entered first: the root cause
        span = _data_checks(res, add, out)
        _point_checks(res, out)
        _reference_checks(res, add, out, span)
        _fit_checks(res, add)
        _method_checks(res, add)
    return tuple(tuple(x) for x in out)


def _method_checks(res, add) -> None:
    """Where the trapped-bubble method itself is ill-conditioned (METHOD 2.5; thresholds
    common practice, no source): near room temperature p_vap is the small difference of
    two large pressures, its relative error about P_total/p_vap times the volume's; near
    boiling the bubble grows without bound."""
    lim, inc = res.choices.limits, res.include
    T = res.stack.T
    amp = np.where(inc & (res.p_vap > 0), res.P_total / res.p_vap, 0.0)
    i_amp = np.argmax(amp, axis=1)
    rows = np.arange(res.R)
    worst = amp[rows, i_amp]
    add(worst > lim["max_amplification"], "amplified error", IllConditionedWarning, lambda r: (
        f"at {_t(T[r, i_amp[r]])} p_vap is {100 / worst[r]:.1f} % of the pressure on the gas: "
        f"its relative error is about {worst[r]:.0f} times the volume reading's (start the "
        "run warmer, or use a larger bubble)"))
    frac = np.where(inc, res.p_vap / res.P_total, 0.0)
    i_fr = np.argmax(frac, axis=1)
    top = frac[rows, i_fr]
    growth = res.V[rows, i_fr] / np.min(np.where(inc, res.V, np.inf), axis=1)
    add(top > lim["max_vapor_fraction"], "near boiling", IllConditionedWarning, lambda r: (
        f"at {_t(T[r, i_fr[r]])} p_vap is {100 * top[r]:.0f} % of the pressure on the gas and "
        f"the bubble has grown {growth[r]:.1f} times: close to boiling, the volume runs away "
        "(check that it stayed in the tube)"))
    T_melt = np.array([melting_point(x) for x in res.stack.liquid], float)
    frozen = res.stack.mask & (T < T_melt[:, None])
    i_cold = np.argmin(np.where(frozen, T, np.inf), axis=1)
    add(frozen.any(axis=1), "below melting point", ImpossiblePointWarning, lambda r: (
        f"{D.count(int(frozen[r].sum()), 'point')} below the melting point of "
        f"{res.stack.liquid[r]} ({_t(T_melt[r])}), the coldest at {_t(T[r, i_cold[r]])}: "
        "the liquid freezes there, so no bubble reading there can be trusted"))
    cap = res.stack.scalar["capacity"]
    over = res.stack.mask & (res.V > cap[:, None])
    i_over = np.argmax(np.where(over, res.V, -np.inf), axis=1)
    add(over.any(axis=1), "beyond tube capacity", ImpossiblePointWarning, lambda r: (
        f"{D.count(int(over[r].sum()), 'point')} beyond the tube's capacity of "
        f"{D.number(cap[r] * 1e6, 'mL')}, the largest at {_t(T[r, i_over[r]])} with "
        f"{D.number(res.V[r, i_over[r]] * 1e6, 'mL')}: gas "
        "escaped from the open end there, so those volumes are not the trapped gas's "
        "(exclude them, or use a larger tube or less air)"))


def _plausibility_checks(res, add) -> None:
    """Entries and results that are possible but unlikely (ranges: common practice, no
    source): a barometer outside 50-110 kPa (sea level to about 5,500 m), a room outside
    5-40 degC, ΔH_vap more than 30 % from the reference, or outside 10-80 kJ/mol where
    there is none; a point excluded in the record without a reason."""
    lim, sc = res.choices.limits, res.stack.scalar
    P = sc["P_bar"] / 1e3
    add((P < lim["barometric_min_kPa"]) | (P > lim["barometric_max_kPa"]), "barometer?",
        ImplausibleValueWarning, lambda r: (
            f"barometric pressure {P[r]:.4g} kPa is outside {lim['barometric_min_kPa']:g}-"
            f"{lim['barometric_max_kPa']:g} kPa: is the unit right (kPa, hPa, mbar, mmHg)?"))
    t = sc["T_room"] - 273.15
    add((t < lim["room_min_degC"]) | (t > lim["room_max_degC"]), "room temperature?",
        ImplausibleValueWarning, lambda r: (
            f"room temperature {t[r]:.4g} °C is outside {lim['room_min_degC']:g}-"
            f"{lim['room_max_degC']:g} °C: is the unit right (degC, K, degF)?"))
    ref = res.comparison["enthalpy"]
    kJ = res.enthalpy / 1e3
    rel = kJ * 1e3 / ref - 1
    far = np.where(np.isfinite(ref), np.abs(rel) > lim["enthalpy_rel_to_reference"],
                   (kJ < lim["enthalpy_min_kJ"]) | (kJ > lim["enthalpy_max_kJ"]))
    add(far, "implausible ΔH_vap", ImplausibleValueWarning, lambda r: (
        f"ΔH_vap = {kJ[r]:.4g} kJ/mol is "
        + (f"{100 * rel[r]:+.0f} % from the reference" if np.isfinite(ref[r]) else
           f"outside {lim['enthalpy_min_kJ']:g}-{lim['enthalpy_max_kJ']:g} kJ/mol")
        + ": check the units of the entries and the air amount"))
    bare = ~res.requested_include & (np.char.strip(res.requested_reasons.astype(str)) == "")
    bare &= res.stack.mask
    add(bare.any(axis=1), "exclusion without reason", ChoiceWarning, lambda r: (
        f"{D.count(int(bare[r].sum()), 'point')} "
        f"({', '.join(str(i) for i in np.flatnonzero(bare[r]))}) "
        f"{'is' if bare[r].sum() == 1 else 'are'} excluded without a reason: write one in "
        "the run's reason column, so the report can say why"))


def _data_checks(res, add, out) -> np.ndarray:
    """Conditioning, number and span of points, duplicated temperatures."""
    lim, f, T, inc = res.choices.limits, res.fit, res.stack.T, res.include
    N = T.shape[1]
    add(f.ill_conditioned, "ill-conditioned", IllConditionedWarning, lambda r: (
        f"{f.model.label} is ill-conditioned for {int(f.n[r])} points over "
        f"{_span(T[r], inc[r]):.0f} K ({f.curvature_text(r)}): the data do not fix the "
        "curvature, so extrapolations (boiling points) are unsafe; prefer "
        "Clausius–Clapeyron, or widen the range"))
    span = np.max(np.where(inc, T, -np.inf), 1) - np.min(np.where(inc, T, np.inf), 1)
    add(f.n < lim["min_points"], "few points", IllConditionedWarning, lambda r: (
        f"only {int(f.n[r])} points used (fewer than {lim['min_points']:g})"))
    add(span < lim["min_range_K"], "narrow range", IllConditionedWarning, lambda r: (
        f"temperature range of the points used is {span[r]:.1f} K (below "
        f"{lim['min_range_K']:g} K): the slope is poorly fixed"))
    rounded = np.round(np.where(res.stack.mask, T, np.nan), 2)
    dup = (rounded[:, :, None] == rounded[:, None, :]) & np.tri(N, k=-1, dtype=bool).T[None]
    for r, i, j in zip(*np.nonzero(dup & res.ok[:, None, None])):
        if dup[r, :i, j].any():
            continue  # only the first earlier twin is named
        out[r].append(Finding("duplicate temperature", SuspectPointWarning, (
            f"points {i} and {j} have the same bath temperature ({_t(T[r, j])}): fine for "
            "repeated readings, but check for a copied row")))
    return span


def _point_checks(res, out) -> None:
    """Impossible or suspect points (shown, never dropped silently) and robust outliers."""
    T, inc, pf = res.stack.T, res.include, res.point_flags
    any_flag = np.zeros(T.shape, bool)
    for k in FLAG_TEXT:
        any_flag |= pf[k]
    for r, i in zip(*np.nonzero(any_flag & res.ok[:, None])):
        texts = [_flag_text(res, k, r, i) for k in FLAG_TEXT if pf[k][r, i]]
        impossible = any(pf[k][r, i] for k in _IMPOSSIBLE)
        state = "excluded" if not inc[r, i] else "still included"
        flag = "impossible" if impossible else ("volume not growing" if pf["shrinks"][r, i]
                                                else "above boiling point")
        out[r].append(Finding(flag, ImpossiblePointWarning if impossible else
                              SuspectPointWarning,
                              f"point {i} ({_t(T[r, i])}), {state}: " + "; ".join(texts)))
    _fahrenheit_slips(res, out)
    suspect = np.abs(res.robust_z) > res.choices.limits["suspect_u"]
    for r, i in zip(*np.nonzero(suspect & res.ok[:, None])):
        out[r].append(Finding("suspect point", SuspectPointWarning, (
            f"point {i} ({_t(T[r, i])}) lies {abs(res.robust_z[r, i]):.1f} of its own standard "
            "uncertainties off a robust line through the other points: suspect (not excluded)")))


def _fahrenheit_slips(res, out) -> None:
    """A single bath reading written in degF among degC ones (common practice, no source:
    it stands more than 20 K above every other point, and read as degF it falls inside
    the others' range, 5 K margin). Vectorised over runs; texts only for the hits."""
    mask = res.stack.mask
    t = np.where(mask, res.stack.T - T_ZERO_C, -np.inf)
    n = mask.sum(axis=1)
    if not t.size:
        return
    i = np.argmax(t, axis=1)
    rows = np.arange(len(t))
    top = t[rows, i]
    rest = t.copy()
    rest[rows, i] = -np.inf
    hi = rest.max(axis=1)
    lo = np.where(mask, res.stack.T - T_ZERO_C, np.inf)
    lo[rows, i] = np.inf
    lo = lo.min(axis=1)
    as_c = (top - 32.0) * 5.0 / 9.0
    hit = res.ok & (n >= 4) & (top > hi + 20.0) & (lo - 5.0 <= as_c) & (as_c <= hi + 5.0)
    for r in np.flatnonzero(hit):
        out[r].append(Finding("degF?", SuspectPointWarning, (
            f"point {i[r]} ({top[r]:.2f} °C) stands {top[r] - hi[r]:.0f} K above the "
            f"next hottest point; read as degF it is {as_c[r]:.1f} °C, inside the run's "
            "range: was it read on a Fahrenheit scale? (correct it in the run file)")))


def _reference_checks(res, add, out, span) -> None:
    """The reference's range, the choices' notes, deviation, boiling-point gap, extrapolation."""
    lim, cmp, ok = res.choices.limits, res.comparison, res.ok
    n_out = cmp["outside"].sum(axis=1)
    for r in np.flatnonzero(ok & (n_out > 0)):
        out[r].append(Finding("outside reference range", ReferenceRangeWarning,
                              outside_range_text(res.resolved.compare_curve[r], int(n_out[r]))))
    own = res.resolved.own_curve
    lo, hi = own.bound("T_min"), own.bound("T_max")
    T_ref = res.T_ref
    add((res.resolved.vapor_mode == "reference") & ((T_ref < lo) | (T_ref > hi)),
        "air reference outside range", ReferenceRangeWarning, lambda r: (
            f"p_vap at the air reference ({_t(T_ref[r])}, {res.p_ref[r]:.4g} Pa) comes from "
            f"{own[r].label} outside its range {_t(lo[r])} to {_t(hi[r])}: extrapolated (use "
            "vapor_at_air_reference='fit', or another reference)"))
    for r in np.flatnonzero(ok):
        for note in res.resolved.notices[r]:
            out[r].append(Finding("", note.category, str(note)))
    dev_u = (res.enthalpy - cmp["enthalpy"]) / res.u_enthalpy
    dev_pct = 100 * (res.enthalpy / cmp["enthalpy"] - 1)
    gap = res.stack.scalar["T_boil"] - res.T_b_run
    beyond = res.T_b_normal - np.max(np.where(res.include, res.stack.T, -np.inf), axis=1)
    add(np.abs(dev_u) > lim["max_deviation_u"], "off reference", ReferenceDeviationWarning,
        lambda r: (f"ΔH_vap differs from the reference ({res.resolved.compare_curve[r].label}) "
                   f"by {dev_u[r]:+.1f} u ({dev_pct[r]:+.1f} %), more than "
                   f"{lim['max_deviation_u']:g} u"))
    # plain lists: most runs of a section get the extrapolation text, built per run
    bias, u_bias = res.bias_T_b_normal.tolist(), res.u_bias_T_b_normal.tolist()
    bias_run, bias_from = res.bias_T_b_run.tolist(), res.bias_from.tolist()
    T_b, u_T_b = res.T_b_normal.tolist(), res.u_T_b_normal.tolist()

    def bias_note(b, r):
        return (f"; the model's own extrapolation bias there is {b[r]:+.2f} K (from the "
                f"{bias_from[r]})" if np.isfinite(b[r]) else "")

    add(np.abs(gap) > lim["max_boiling_gap_K"], "boiling point gap", ReferenceDeviationWarning,
        lambda r: (f"measured boiling point differs from the predicted one by {gap[r]:+.2f} K "
                   f"(more than {lim['max_boiling_gap_K']:g} K)" + bias_note(bias_run, r)))
    far = beyond > np.maximum(lim["extrapolation_K"], span)
    biased = np.abs(res.bias_T_b_normal) > res.u_T_b_normal
    beyond_ = beyond.tolist()
    add(far | biased, "extrapolated T_b", ExtrapolationWarning, lambda r: (
        f"the normal boiling point ({_t(T_b[r])}) lies {beyond_[r]:.1f} K beyond "
        "the highest point: an extrapolation"
        + (f"; the model's own bias there, {D.value_u(bias[r], u_bias[r], 'K')} (from the "
           f"{bias_from[r]}), exceeds u(T_b) = {D.uncertainty(u_T_b[r], 'K')}"
           if biased[r] else bias_note(bias, r))))


def _fit_checks(res, add) -> None:
    """Influential points, scatter against χ², the self-consistent solve."""
    lim, f = res.choices.limits, res.fit
    shift = np.nanmax(np.abs(f.loo_enthalpy - res.enthalpy[:, None]), axis=1,
                      initial=0.0, where=np.isfinite(f.loo_enthalpy))
    add(shift > lim["max_influence_u"] * res.u_enthalpy, "influential point",
        SuspectPointWarning, lambda r: (
            f"leaving point {int(np.nanargmax(np.abs(f.loo_enthalpy[r] - res.enthalpy[r])))} out "
            f"moves ΔH_vap by {shift[r] / res.u_enthalpy[r]:.1f} u (more than "
            f"{lim['max_influence_u']:g} u)"))
    dof = np.asarray(f.dof)
    chi_lim = chi2_limits(np.maximum(dof, 0), lim["scatter_percentile"])
    add((dof > 0) & (f.chi2 > chi_lim), "scatter", ScatterWarning, lambda r: (
        f"χ² = {f.chi2[r]:.1f} for {int(dof[r])} degrees of freedom is above its "
        f"{100 * lim['scatter_percentile']:g}th percentile ({chi_lim[r]:.1f}): scatter larger "
        "than the stated uncertainties"))
    _air_reference_checks(res, add)
    Tw = f.T_m_weights if f.T_m_weights is not None else f.T_m
    with np.errstate(invalid="ignore"):
        moved = np.abs(Tw - f.T_m) > 1e-9 * f.T_m
    used = np.where(res.include, res.stack.T, np.nan)
    add(moved, "T_m at the data's end", ChoiceWarning, lambda r: (
        f"the fit's weights put ΔH_vap's reference temperature at {D.number(Tw[r], 'K')}, "
        f"outside the points used ({D.number(np.nanmin(used[r]), 'K')} to "
        f"{D.number(np.nanmax(used[r]), 'K')}: correlated GLS weights of mixed sign); "
        f"ΔH_vap is stated at {D.number(f.T_m[r], 'K')}, the nearest end of the data"))
    not_sc = ((res.self_consistent_rounds > 0) & ~(res.self_consistent_error <= SELF_CONSISTENT_TOL)
              & (res.air_reference["fallback"] == ""))  # a fallback says so itself
    add(not_sc, "not self-consistent", ConvergenceWarning, lambda r: (
        "the self-consistent p_vap at the air reference did not converge: relative mismatch "
        f"{res.self_consistent_error[r]:.1e} after {int(res.self_consistent_rounds[r])} rounds"))


def _air_reference_checks(res, add) -> None:
    """A self-consistent p_ref that came from the line, or that does not exist."""
    how, model = res.air_reference, res.fit.model
    closest = lambda r: (  # noqa: E731
        f"closest attempt: g(p) - p = {D.number(how['best_G'][r] / 1e3, 'kPa')} at "
        f"p = {D.number(how['best_p'][r] / 1e3, 'kPa')}")
    add((how["model"] == LINE) & (model.name != LINE), "air reference from the line",
        ChoiceWarning, lambda r: (
            f"the {model.label} curve gives no stable self-consistent p_vap at the air "
            f"reference (its curvature absorbs the air amount; {closest(r)}); p_vap there = "
            f"{D.number(res.p_ref[r] / 1e3, 'kPa')} from the Clausius–Clapeyron line through "
            "the same points"))
    fell = how["fallback"] != ""
    add(fell, "no self-consistent air reference", ConvergenceWarning, lambda r: (
        f"no self-consistent p_vap at the air reference was found ({closest(r)}); "
        + ("taken from the published equation instead" if how["fallback"][r] == "reference"
           else "neglected instead (biased: ΔH_vap reads high)")
        + f"; ΔH_vap is {D.signed((res.enthalpy[r] - how['best_enthalpy'][r]) / 1e3, 'kJ/mol', 2)}"
        " from the closest attempt"))


def _span(T, inc) -> float:
    t = T[inc]
    return float(t.max() - t.min()) if t.size else 0.0


def _flag_text(res, key: str, r: int, i: int) -> str:
    """The point flag's text with the value that triggered it."""
    text = FLAG_TEXT[key]
    if key == "volume":
        return text + f" (V = {res.V[r, i] * 1e6:.4g} mL)"
    if key == "p_low":
        return text + f" (p_vap = {res.p_vap[r, i]:.4g} Pa)"
    if key == "p_high":
        return text + (f" (p_vap = {res.p_vap[r, i] / 1e3:.4g} kPa, total "
                       f"{res.P_total[r, i] / 1e3:.4g} kPa)")
    if key == "above_boiling":
        return text + f" ({_t(res.stack.T[r, i])} > {_t(res.stack.scalar['T_boil'][r])})"
    return text


def flags_of(findings) -> tuple[str, str]:
    """(comma-separated flags, '; '-separated messages) of one run's findings."""
    flags = list(dict.fromkeys(x.flag for x in findings if x.flag))
    return ", ".join(flags), "; ".join(x.message for x in findings if x.flag)


def flag_columns(findings, idx) -> tuple[np.ndarray, np.ndarray]:
    """The ``flags`` and ``flag reasons`` columns of the runs ``idx`` (object arrays, ''
    where a run has no flag): texts are joined only for runs that have findings."""
    flags = np.full(len(idx), "", dtype=object)
    reasons = np.full(len(idx), "", dtype=object)
    for k, i in enumerate(np.asarray(idx).tolist()):
        if findings[i]:
            flags[k], reasons[k] = flags_of(findings[i])
    return flags, reasons
