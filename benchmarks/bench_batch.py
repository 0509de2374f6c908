"""Many-run speed, measured side by side in one run (a script, not a timed test).

For 10,000 invented runs of 6-8 points, end to end (a long table already in
memory -> the summary with flags), prints the median time of the many-run path
(`vpkit.analysis.many_runs.analyze_table`), the time the single-run path (`vpkit.analyze` in a
loop) would take (measured on a sample and scaled), and their ratio; the same
for the constant-ΔCp model; the dense GLS floor (below) in the same process and the
many-run path's ratio to it; then peak memory and time for 100,000 runs (done in
blocks) and how time grows from 1,000 to 100,000 runs.

The floor is what any batched GLS fit of the same size must do at least: 10,000 runs
x 8 points, given ln p and its dense covariance, one Cholesky whitening, the normal
equations, the parameter covariance and χ² (plain numpy, no reduction, no checks).
It is a yardstick only, not a second implementation used anywhere.

Targets: Clausius-Clapeyron under 0.1 s, at most 6 x the floor and at least 200 x
the loop; constant ΔCp under 0.5 s; 100,000 runs under 500 MiB.

Run: python benchmarks/bench_batch.py [--skip-100k] [--profile]
"""

from __future__ import annotations

import cProfile
import pstats
import sys
import time
import tracemalloc
from pathlib import Path

import numpy as np
import pandas as pd

import vpkit
from vpkit.analysis.many_runs import analyze_table
from vpkit.constants import T_ZERO_C
from vpkit.physics.curves import antoine_curve
from vpkit.physics.liquids import liquid_density
from vpkit.physics.simulate import NOISE, forward_readings
from vpkit.record.longtable import table_to_runs

sys.path.insert(0, str(Path(__file__).parent))
from scoreboard import record  # noqa: E402

LIQUIDS = ["ethanol", "water", "toluene", "2-propanol"]


def simulated_table(n_runs: int, seed: int = 0) -> pd.DataFrame:
    """A long table of n_runs noisy runs of 6-8 points (invented), from the forward model.

    Uses vpkit.physics.simulate.forward_readings on arrays (the same forward model as
    simulate_run), so that building 100,000 runs takes seconds.
    """
    rng = np.random.default_rng(seed)
    liquid = np.array(LIQUIDS)[rng.integers(0, len(LIQUIDS), n_runs)]
    n_pts = rng.integers(6, 9, n_runs)
    N = 8
    T = np.sort(rng.uniform(298.0, 333.0, (n_runs, N)), axis=1)
    P_bar = rng.normal(100e3, 1.5e3, n_runs)
    T_room = rng.normal(294.0, 1.0, n_runs)
    V_room = rng.uniform(1.5e-6, 3.0e-6, n_runs)
    rho = np.empty(n_runs)
    p_T = np.empty((n_runs, N))
    p_room = np.empty(n_runs)
    for name in LIQUIDS:  # a loop over liquids, not runs
        sel = liquid == name
        c = antoine_curve(name)
        rho[sel] = liquid_density(name, T_room[sel])
        p_T[sel] = c.p(T[sel])
        p_room[sel] = c.p(T_room[sel])
    true = forward_readings(p_T, p_room, T, P_bar=P_bar, T_room=T_room, V_room=V_room,
                            offset=0.12e-6, density=rho)
    reading = true["reading"] + rng.normal(0, NOISE["reading"], T.shape)
    T_rec = T + rng.normal(0, NOISE["T"], T.shape)
    keep = np.arange(N)[None, :] < n_pts[:, None]
    r = np.nonzero(keep)[0]
    rep = lambda a: np.asarray(a)[r]  # noqa: E731
    return pd.DataFrame({
        "run_id": rep(np.array([f"run{i:06d}" for i in range(n_runs)])),
        "liquid": rep(liquid),
        "barometric_pressure [kPa]": rep((P_bar + rng.normal(0, NOISE["P_bar"], n_runs)) / 1e3),
        "room_temperature [degC]": rep(T_room - T_ZERO_C),
        "room_reading [mL]": rep(true["room_reading"] * 1e6),
        "mass_before_air [g]": rep(np.full(n_runs, 30.0)),
        "mass_after_air [g]": rep(true["mass_after"] * 1e3),
        "bath_temperature [degC]": T_rec[keep] - T_ZERO_C,
        "reading [mL]": reading[keep] * 1e6,
        "include": np.full(len(r), "yes"),
    })


def floor_inputs(n_runs: int = 10_000, n_points: int = 8, seed: int = 1):
    """Invented inputs of the dense GLS floor: 1/T, ln p and a dense covariance per run
    (a point's own variance plus a shared term, the shape the real covariance has)."""
    rng = np.random.default_rng(seed)
    T = np.sort(rng.uniform(298.0, 333.0, (n_runs, n_points)), axis=1)
    y = 25.0 - 4800.0 / T + rng.normal(0, 0.01, T.shape)
    g = rng.normal(0, 0.01, (n_runs, n_points, 1)) * (300.0 / T)[..., None]
    cov = g @ g.transpose(0, 2, 1) + np.einsum("ri,ij->rij", rng.uniform(1e-5, 1e-4, T.shape),
                                               np.eye(n_points))
    return T, y, cov


def dense_gls_floor(T, y, cov):
    """One batched dense GLS straight-line fit of ln p on 1/T (the yardstick)."""
    L = np.linalg.cholesky(cov)
    X = np.stack([np.ones_like(T), 1.0 / T], axis=-1)
    Xw = np.linalg.solve(L, X)
    yw = np.linalg.solve(L, y[..., None])[..., 0]
    A = Xw.transpose(0, 2, 1) @ Xw
    cov_theta = np.linalg.inv(A)
    theta = np.einsum("rij,rj->ri", cov_theta, np.einsum("rni,rn->ri", Xw, yw))
    chi2 = ((yw - np.einsum("rni,ri->rn", Xw, theta)) ** 2).sum(axis=1)
    return theta, cov_theta, chi2


def median_time(fn, repeat=5):
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        out = fn()
        times.append(time.perf_counter() - t0)
    return float(np.median(times)), min(times), max(times), out


def loop_time(table, n_sample, **options):
    """The single-run path on the first n_sample runs of the table, per run [s]."""
    ids = list(dict.fromkeys(table["run_id"]))[:n_sample]
    runs = table_to_runs(table[table["run_id"].isin(ids)])
    t0 = time.perf_counter()
    for run in runs.values():
        vpkit.analyze(run, warn=False, **options)
    return (time.perf_counter() - t0) / len(runs)


def main(skip_100k: bool, profile: bool) -> None:
    table = simulated_table(10_000)
    analyze_table(simulated_table(50, seed=9))  # warm-up (caches, imports)
    print("many-run analysis, 10,000 invented runs of 6-8 points, GLS, linear propagation")
    print("(end to end: long table in memory -> summary table with flags)")
    floor_in = floor_inputs()
    for label, options, target, sample in (("Clausius-Clapeyron", {}, 0.1, 200),
                                           ("constant ΔCp", {"model": "constant_dcp"}, 0.5, 100)):
        t, lo, hi, summary = median_time(lambda o=options: analyze_table(table, **o))
        t_floor = median_time(lambda: dense_gls_floor(*floor_in), repeat=7)[0]
        per_run = loop_time(table, sample, **options)
        loop = per_run * 10_000
        print(f"  {label}:")
        print(f"    many-run path:            {t:8.3f} s  (median of 5; min {lo:.3f}, max "
              f"{hi:.3f})   target < {target} s")
        print(f"    single-run loop, scaled:  {loop:8.2f} s  ({1e3 * per_run:.2f} ms per run, "
              f"measured on {sample})")
        print(f"    ratio loop / many-run:    {loop / t:8.1f} x" + (
            "   target >= 200 x" if label == "Clausius-Clapeyron" else ""))
        print(f"    dense GLS floor:          {t_floor:8.3f} s  (10,000 x 8 points, same "
              "process)")
        print(f"    ratio many-run / floor:   {t / t_floor:8.1f} x" + (
            "   target <= 6 x" if label == "Clausius-Clapeyron" else ""))
        print(f"    runs analysed: {(summary['status'] == '').sum()} of {len(summary)}")
        record(f"10,000 runs, {label}", t, target, "s")
        if label == "Clausius-Clapeyron":
            record("10,000 runs CC, many-run path / dense GLS floor", t / t_floor, 6.0, "x")
            record("10,000 runs CC, single-run loop / many-run path", loop / t, 200.0, "x",
                   at_least=True)
    if profile:
        cProfile.runctx("analyze_table(table)", globals(), {"table": table}, "/tmp/vpkit.prof")
        pstats.Stats("/tmp/vpkit.prof").sort_stats("cumulative").print_stats(25)
    sizes = [1_000, 10_000] + ([] if skip_100k else [100_000])
    prev = None
    print("  scaling (Clausius-Clapeyron; time measured untraced, then peak memory traced):")
    for n in sizes:
        tab = simulated_table(n, seed=n)
        t0 = time.perf_counter()
        analyze_table(tab)
        dt = time.perf_counter() - t0
        tracemalloc.start()
        analyze_table(tab)
        _, peak = tracemalloc.get_traced_memory()
        tracemalloc.stop()
        growth = "" if prev is None else f"   x{dt / prev[1]:.1f} time for x{n / prev[0]:.0f} runs"
        print(f"  {n:>9,} runs: {dt:7.3f} s ({1e6 * dt / n:6.1f} µs/run), peak memory "
              f"{peak / 2**20:6.1f} MiB{growth}")
        prev = (n, dt)
    print("  memory target for 100,000 runs: < 500 MiB (blocks of 2,048 runs)")
    if n == 100_000:
        record("100,000 runs, peak memory", peak / 2**20, 500.0, "MiB")


if __name__ == "__main__":
    main("--skip-100k" in sys.argv, "--profile" in sys.argv)
