"""The bench check: is the reading just typed where the run so far says it should be?

After three or more readings, :func:`check_reading` fits the run so far (the one
analysis path, :func:`vpkit.analyze`), takes the fitted vapor pressure at the new
bath temperature, and finds the graduation reading that the one reduction
(:func:`vpkit.physics.propagate.evaluate`, with the run's own air amount, scale offset,
head and bore) turns into that vapor pressure, by secant steps. No inverse
formula is written out, so the check sees every correction the analysis makes.

Its standard uncertainty combines the new reading's own graduation and
thermometer uncertainties with the fitted curve's uncertainty at that
temperature (its confidence band, which grows as the fit is extrapolated); the
inputs every point shares (barometer, weighing, room temperature) move the
prediction and the reading together and are left out. A reading more than
``threshold`` standard uncertainties away (default :data:`THRESHOLD`) is
suspect. Design rate: for a clean reading, normal errors and a straight
extrapolation give |z| > 4 about once in 16,000 readings; measured on 200
simulated runs it is what ``tests/unit/test_reading_check.py`` states.

References
----------
.. [1] JCGM 100:2008 (GUM), section 5.1: the uncertainty of a prediction from
   the linear propagation of its inputs.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

import numpy as np

from .. import display as D
from ..analysis.choices import resolve
from ..analysis.one_run import analyze
from ..errors import BadValueError
from ..physics.propagate import ReferenceAtAir, build_inputs, evaluate
from ..record.assemble import stack_runs
from ..record.run import Run
from ..units import from_si, to_si

THRESHOLD = 4.0


@dataclass(frozen=True)
class ReadingCheck:
    """The verdict on one new reading (in the run's own units).

    Attributes
    ----------
    temperature, reading : float
        As typed (the run's bath-temperature and reading units).
    expected, u : float
        The reading the run so far predicts there, and its standard uncertainty.
    z : float
        (reading - expected) / u.
    suspect : bool
        |z| above the threshold.
    message : str
    """

    temperature: float
    reading: float
    expected: float
    u: float
    z: float
    suspect: bool
    message: str


def check_reading(run: Run, temperature: float, reading: float, *,
                  threshold: float = THRESHOLD, **choices) -> ReadingCheck:
    """Compare a new reading with what the run so far predicts at its temperature.

    Parameters
    ----------
    run : Run
        The run as typed so far (at least three included readings); the new reading
        is not in it.
    temperature, reading : float
        The new bath temperature and graduation reading, in the run's units.
    threshold : float
        How many standard uncertainties make a reading suspect.
    **choices
        Analysis choices, as for :func:`vpkit.analyze`.
    """
    if int(np.sum(run.include)) < 3:
        raise BadValueError("the bench check needs at least three readings so far",
                            column="reading", hint="type a few more readings first")
    t_unit, r_unit, _ = run.units
    a = analyze(run, warn=False, **choices)
    T = float(to_si(temperature, t_unit, "temperature"))
    f = a.fit
    ln_target = float(f.ln_p(T))
    trial = replace(run, bath_temperature=run.bath_temperature + (float(temperature),),
                    reading=run.reading + (float(reading),), pressure=run.pressure + (None,),
                    include=run.include + (True,), reason=run.reason + ("",),
                    rows=run.rows + (-1,) if run.rows else ())
    stack = stack_runs([trial])
    res = resolve(stack, a.result.choices)
    layout = build_inputs(stack, res.setup, res.density, res.depth)
    n = stack.N - 1
    col = layout.column("reading", n)
    ref = ReferenceAtAir(None, np.zeros(1, bool), np.array([a.p_ref]))

    def ln_p(x):  # ln p_vap of the new point for readings x [m^3]
        U = np.repeat(layout.nominal[:, None, :], len(x), axis=1)
        U[0, :, col] = x
        with np.errstate(all="ignore"):
            return np.log(evaluate(layout, res.setup, U, ref)["p_vap"][0, :, n])

    x0 = float(to_si(reading, r_unit, "volume"))
    x = np.array([x0, x0 * 1.02 + 1e-9])
    y = ln_p(x) - ln_target
    for _ in range(40):  # secant steps on the one reduction
        if not np.all(np.isfinite(y)) or y[1] == y[0]:
            break
        x_new = x[1] - y[1] * (x[1] - x[0]) / (y[1] - y[0])
        x, y = np.array([x[1], x_new]), np.array([y[1], float(ln_p(np.array([x_new]))[0])
                                                   - ln_target])
        if abs(y[1]) < 1e-12:
            break
    expected = float(x[1])
    h = max(abs(expected) * 1e-6, 1e-12)
    dlnp_dx = float(np.diff(ln_p(np.array([expected - h, expected + h])))[0] / (2 * h))
    _, band_hi = f.ln_p_band(np.array([T]), level=0.682689492137)
    u_fit = float(band_hi[0] - f.ln_p(np.array([T]))[0])
    u_T = a.si.u["T"] * float(f.model.df_dT(T, f.params))
    u_read = a.si.u["reading"]
    u = math.sqrt(u_read**2 + (u_fit**2 + u_T**2) / dlnp_dx**2)
    if not (math.isfinite(expected) and math.isfinite(u)):
        raise BadValueError(f"no reading at {temperature:g} {t_unit} fits the run so far "
                            "(the fitted curve is at or above the pressure on the gas there)",
                            column="bath_temperature", hint="check the bath temperature")
    z = (x0 - expected) / u
    e_user = float(from_si(expected, r_unit, "volume"))
    u_user = float(from_si(u, r_unit, "volume", delta=True))
    suspect = abs(z) > threshold
    where = f"at {temperature:g} {D.LABELS.get(t_unit, t_unit)}"  # as typed
    msg = (f"expected {D.value_u(e_user, u_user, r_unit)} {where}; typed {reading:g} is "
           f"{abs(z):.1f} u away")
    msg += (": check it (a swapped digit or a misread graduation?)" if suspect
            else f": consistent (threshold {threshold:g} u)")
    return ReadingCheck(float(temperature), float(reading), e_user, u_user, float(z), suspect,
                        msg)
