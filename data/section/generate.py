"""Regenerate the invented teaching-section runs in this folder (deterministic, seeded).

INVENTED DATA. Scenario (our own): fourteen bench groups of one afternoon lab measure
ethanol, each the way its bench is equipped: most weigh a graduated tube, two only
know the volume of air they injected, two read a capillary's bubble length against a
millimetre scale and fix the air amount in ice water, one uses an inverted graduated
cylinder read from its base. Group 06's thermometer reads 3 K high above 45 degC (an
invented fault). The readings are simulated from the bundled published equation
(``reference_curve``: the Antoine set of Poling et al. 2001) with realistic noise; they
are not measurements and are never used as check values.

Run: python data/section/generate.py
"""

import dataclasses
from pathlib import Path

import numpy as np

from vpkit.constants import R
from vpkit.physics.curves import reference_curve
from vpkit.physics.liquids import liquid_density
from vpkit.physics.simulate import NOISE, simulate_run
from vpkit.record.fields import Entry
from vpkit.record.runfile import parse_run, write_run

HERE = Path(__file__).parent
NOTE = ("# INVENTED DEMO DATA: simulated from a published vapor-pressure equation with "
        "reading noise; not a measurement.",)
CURVE = reference_curve("ethanol")
rng = np.random.default_rng(7)


def tidy(run):
    """Numbers as a person writes them down."""
    return dataclasses.replace(
        run, entries=tuple((k, Entry(round(e.value, 4) if isinstance(e.value, float) else e.value,
                                     e.unit, None if e.uncertainty is None
                                     else float(f"{e.uncertainty:.3g}"))) for k, e in run.entries),
        bath_temperature=tuple(round(t, 1) for t in run.bath_temperature),
        reading=tuple(round(r, 3) for r in run.reading))


def weighed(k, t, V_room, drop=()):
    T_room = 294.15 + rng.uniform(-1.0, 1.5)
    run = simulate_run(CURVE.p, np.asarray(t) + 273.15, liquid="ethanol", T_room=T_room,
                       P_bar=100_350.0, V_room=V_room, offset=0.11e-6,
                       density=float(liquid_density("ethanol", T_room)), noise=NOISE, rng=rng,
                       comments=NOTE, notes=f"bench group {k} (invented)")
    keep = tuple(e for e in run.entries if e[0] not in drop)
    if drop:
        keep += (("scale_offset", Entry(0.11, "mL", 0.01)),)
    return tidy(dataclasses.replace(run, entries=keep))


def cold(k, t_cold, t, *, capillary, size, bore_mm=1.0, noise):
    Tc = t_cold + 273.15
    scale = np.pi * (bore_mm * 1e-3) ** 2 / 4 * 1e-3 if capillary else 1e-6
    P = 100_350.0
    n_air = (P - float(CURVE.p(Tc))) * size * scale / (R * Tc)
    rows = [(t_cold, size)]
    for tt in t:
        T = tt + 273.15
        V = n_air * R * T / (P - float(CURVE.p(T)))
        rows.append((tt + rng.normal(0, 0.2), V / scale + rng.normal(0, noise)))
    unit = "mm" if capillary else "mL"
    meta = ["liquid,ethanol,,", "barometric_pressure,100.35,kPa,0.1",
            "room_temperature,21.5,degC,0.5"]
    meta += ([f"tube_bore,{bore_mm},mm,0.02", "reading_uncertainty,0.5,mm,"] if capillary
             else ["scale_offset,0,mL,0.05", "reading_resolution,0.1,mL,"])
    meta += [f"notes,bench group {k} (invented),,"]
    text = "\n".join([*NOTE, "[run]", "quantity,value,unit,uncertainty", *meta, "[readings]",
                      f"bath_temperature [degC],reading [{unit}],include,reason"]
                     + [f"{tt:.1f},{v:.{1 if capillary else 2}f},yes," for tt, v in rows])
    return parse_run(text + "\n")


runs = {}
plan = [25.0, 30.0, 35.0, 40.0, 45.0, 50.0, 55.0, 60.0]
for k in range(1, 10):
    t = [round(x + rng.uniform(-0.6, 0.6), 1) for x in plan[: 6 + k % 3]]
    runs[f"group_{k:02d}"] = weighed(k, t, rng.uniform(1.7e-6, 2.6e-6))
for k in (10, 11):
    runs[f"group_{k:02d}"] = weighed(k, plan[:7], rng.uniform(1.8e-6, 2.4e-6),
                                     drop=("room_reading", "mass_before_air", "mass_after_air"))
runs["group_12"] = cold(12, 3.5, [25.0, 35.0, 45.0, 55.0], capillary=True, size=40.0,
                        noise=0.4)
runs["group_13"] = cold(13, 4.0, [30.0, 40.0, 50.0, 60.0], capillary=True, size=35.0,
                        noise=0.4)
runs["group_14"] = cold(14, 4.5, [30.0, 40.0, 50.0, 60.0, 65.0], capillary=False, size=4.2,
                        noise=0.03)
slip = runs["group_06"]  # invented fault: the thermometer reads 3 K high above 45 degC
runs["group_06"] = dataclasses.replace(slip, bath_temperature=tuple(
    round(x + (3.0 if x > 45 else 0.0), 1) for x in slip.bath_temperature))
for name, run in runs.items():
    write_run(run, HERE / f"{name}.csv")
    print("wrote", HERE / f"{name}.csv")
