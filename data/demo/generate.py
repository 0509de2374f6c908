"""Regenerate the invented demo runs in this folder (deterministic, seeded).

INVENTED DATA. Scenario (our own): a solvent-recovery group checks that
2-propanol recovered by distillation behaves like fresh solvent, and checks
the tube with a water run first. The readings are simulated from the bundled
published equations (``reference_curve``: IAPWS-95 for water, the VDI Heat Atlas
PPDS equation for 2-propanol) through vpkit's forward model with realistic
reading noise; they are not measurements.

Run: python data/demo/generate.py
"""

from pathlib import Path

import numpy as np

from vpkit.physics.curves import reference_curve
from vpkit.physics.liquids import liquid_density
from vpkit.physics.simulate import NOISE, simulate_run
from vpkit.record.runfile import write_run

HERE = Path(__file__).parent
NOTE = ("# INVENTED DEMO DATA: simulated from a published vapor-pressure equation with "
        "reading noise; not a measurement.",)


def make(name, liquid, T_c, seed, **kw):
    curve = reference_curve(liquid)
    T_room = kw.pop("T_room", 294.35)
    run = simulate_run(curve.p, np.asarray(T_c) + 273.15, liquid=liquid, T_room=T_room,
                       density=float(liquid_density(liquid, T_room)), noise=NOISE,
                       rng=np.random.default_rng(seed), comments=NOTE, **kw)
    # round to what a person writes down
    run = type(run)(
        entries=tuple((k, type(e)(round(e.value, 4) if isinstance(e.value, float) else e.value,
                                  e.unit,
                                  None if e.uncertainty is None else float(f"{e.uncertainty:.6g}")))
                 for k, e in run.entries),
        units=run.units,
        bath_temperature=tuple(round(t, 1) for t in run.bath_temperature),
        reading=tuple(round(r, 3) for r in run.reading),
        pressure=run.pressure, include=run.include, reason=run.reason, comments=run.comments)
    return run


water = make("tube_check_water", "water", [25.0, 30.1, 35.0, 40.2, 45.0, 50.1, 55.0, 60.0],
             seed=11, P_bar=100_480.0, V_room=2.6e-6, offset=0.12e-6, boiling_point=372.95,
             notes="tube 3 check run with deionised water (invented)")
fresh = make("fresh_2-propanol", "2-propanol", [24.8, 30.0, 35.2, 40.0, 45.1, 50.0, 55.1, 60.2],
             seed=12, P_bar=100_480.0, V_room=1.9e-6, offset=0.12e-6, boiling_point=355.25,
             notes="fresh solvent, lot A (invented)")
recovered = make("recovered_2-propanol", "2-propanol",
                 [25.1, 30.2, 34.9, 40.1, 45.0, 50.2, 55.0, 59.9], seed=13, P_bar=99_870.0,
                 V_room=2.1e-6, offset=0.12e-6, depth=0.045, boiling_point=355.0,
                 notes="solvent recovered by distillation, batch 7 (invented)")
# the recovered run's 50 degC reading was taken just after a small bubble escaped: invented fault
r = list(recovered.reading)
r[5] = round(r[5] - 0.09, 3)
recovered = type(recovered)(recovered.entries, recovered.units, recovered.bath_temperature,
                            tuple(r), recovered.pressure,
                            (True, True, True, True, True, False, True, True),
                            ("", "", "", "", "", "small bubble escaped before reading", "", ""),
                            recovered.comments)
for name, run in (("tube_check_water", water), ("fresh_2-propanol", fresh),
                  ("recovered_2-propanol", recovered)):
    write_run(run, HERE / f"{name}.csv")
    print("wrote", HERE / f"{name}.csv")
