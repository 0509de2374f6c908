"""Many-run speed, measured side by side in one run (a script, not a timed test).

Prints: batch analysis of 10,000 simulated runs of 6 points end to end (long
table -> summary table; target < 1 s), the single-run path in a loop over a
sample of the same runs scaled to 10,000 (target: batch >= 30x faster), peak
memory of the batch call, and how time grows from 1,000 to 100,000 runs.

Run: python benchmarks/bench_batch.py [--skip-100k]
"""

from __future__ import annotations

import sys
import time
import tracemalloc

import numpy as np
import pandas as pd

import vpkit
from vpkit.batch import analyze_table
from vpkit.constants import T_ZERO_C, R
from vpkit.reference import antoine_curve, liquid_density
from vpkit.simulate import NOISE

LIQUIDS = ["ethanol", "water", "toluene", "2-propanol"]


def simulated_table(n_runs: int, seed: int = 0) -> pd.DataFrame:
    """A long table of n_runs noisy 6-point runs (invented), built with array code.

    The same forward-model formulas as vpkit.simulate.simulate_run, vectorised
    over runs, so that building 100,000 runs takes seconds.
    """
    rng = np.random.default_rng(seed)
    liquid = np.array(LIQUIDS)[rng.integers(0, len(LIQUIDS), n_runs)]
    T = np.sort(rng.uniform(298.0, 333.0, (n_runs, 6)), axis=1)
    P_bar = rng.normal(100e3, 1.5e3, n_runs)
    T_room = rng.normal(294.0, 1.0, n_runs)
    V_room = rng.uniform(1.5e-6, 3.0e-6, n_runs)
    offset = 0.12e-6
    rho = np.empty(n_runs)
    p_T = np.empty((n_runs, 6))
    p_room = np.empty(n_runs)
    for name in LIQUIDS:  # a loop over liquids, not runs
        sel = liquid == name
        c = antoine_curve(name)
        rho[sel] = liquid_density(name, T_room[sel])
        p_T[sel] = c.p(T[sel])
        p_room[sel] = c.p(T_room[sel])
    n_air = (P_bar - p_room) * V_room / (R * T_room)
    rho_gas = P_bar * 28.96546e-3 / (R * T_room)
    m_before = 0.030
    m_after = m_before - V_room * (rho - rho_gas)
    V = n_air[:, None] * R * T / (P_bar[:, None] - p_T)
    reading = V - offset + rng.normal(0, NOISE["reading"], V.shape)
    T_rec = T + rng.normal(0, NOISE["T"], T.shape)
    rows = n_runs * 6
    rep = lambda a: np.repeat(a, 6)  # noqa: E731
    return pd.DataFrame({
        "run_id": rep(np.array([f"run{i:06d}" for i in range(n_runs)])),
        "liquid": rep(liquid),
        "barometric_pressure [kPa]": rep((P_bar + rng.normal(0, NOISE["P_bar"], n_runs)) / 1e3),
        "room_temperature [degC]": rep(T_room - T_ZERO_C),
        "room_reading [mL]": rep((V_room - offset) * 1e6),
        "mass_before_air [g]": rep(np.full(n_runs, m_before * 1e3)),
        "mass_after_air [g]": rep(m_after * 1e3),
        "bath_temperature [degC]": T_rec.ravel() - T_ZERO_C,
        "reading [mL]": reading.ravel() * 1e6,
        "include": np.full(rows, "yes"),
    })


def main(skip_100k: bool) -> None:
    table = simulated_table(10_000)
    analyze_table(simulated_table(50, seed=9))  # warm-up
    times = []
    for _ in range(5):
        t0 = time.perf_counter()
        summary = analyze_table(table)
        times.append(time.perf_counter() - t0)
    t_batch = float(np.median(times))
    tracemalloc.start()
    analyze_table(table)
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    # single-run path on a sample of the same runs, scaled to 10,000
    sample_ids = summary["run_id"].iloc[:100]
    t_loop = 0.0
    for rid in sample_ids:
        part = table[table["run_id"] == rid]
        df = part[["bath_temperature [degC]", "reading [mL]", "include"]]
        first = part.iloc[0]
        run = vpkit.Run.from_frame(
            df, liquid=first["liquid"],
            barometric_pressure=(first["barometric_pressure [kPa]"], "kPa"),
            room_temperature=(first["room_temperature [degC]"], "degC"),
            room_reading=(first["room_reading [mL]"], "mL"),
            mass_before_air=(first["mass_before_air [g]"], "g"),
            mass_after_air=(first["mass_after_air [g]"], "g"))
        t = time.perf_counter()
        vpkit.analyze(run, reference="antoine", warn=False)
        t_loop += time.perf_counter() - t
    t_loop_10k = t_loop / len(sample_ids) * 10_000
    print("batch analysis, runs of 6 points (Clausius-Clapeyron, GLS, linear propagation)")
    print(f"  10,000 runs end to end (table -> summary): {t_batch:8.3f} s   target < 1 s "
          f"(median of 5; min {min(times):.3f}, max {max(times):.3f})")
    print(f"  single-run path in a loop, same runs:       {t_loop_10k:8.3f} s   "
          f"(measured on {len(sample_ids)}, scaled)")
    print(f"  ratio loop / batch:                         {t_loop_10k / t_batch:8.1f} x   "
          "target >= 30 x")
    print(f"  peak memory of the batch call (tracemalloc): {peak / 2**20:7.1f} MiB")
    sizes = [1_000, 10_000] + ([] if skip_100k else [100_000])
    prev = None
    for n in sizes:
        tab = simulated_table(n, seed=n)
        t = time.perf_counter()
        analyze_table(tab)
        dt = time.perf_counter() - t
        growth = "" if prev is None else f"   x{dt / prev[1]:.1f} time for x{n / prev[0]:.0f} runs"
        print(f"  {n:>7,} runs: {dt:7.3f} s ({1e6 * dt / n:6.1f} µs/run){growth}")
        prev = (n, dt)


if __name__ == "__main__":
    main("--skip-100k" in sys.argv)
