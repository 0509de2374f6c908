"""Core speed, measured side by side in one run (a script, not a timed test).

Prints medians over repeated calls for: analyze() of one 8-point run with linear
propagation (target < 5 ms), one GLS fit (target < 0.5 ms), Monte Carlo with
100,000 draws (target < 100 ms), and the self-consistent air amount (target < 20 ms).

Run: python benchmarks/bench_core.py
"""

from __future__ import annotations

import statistics
import sys
import time
from pathlib import Path

import numpy as np

import vpkit
from vpkit.fitting.fit import fit_points
from vpkit.physics.curves import antoine_curve
from vpkit.physics.liquids import liquid_density
from vpkit.physics.simulate import NOISE, simulate_run

sys.path.insert(0, str(Path(__file__).parent))
from scoreboard import record  # noqa: E402


def median_ms(fn, repeat):
    fn()  # warm-up
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return 1e3 * statistics.median(times)


def main():
    curve = antoine_curve("ethanol")
    run = simulate_run(curve.p, np.linspace(298.15, 333.15, 8), liquid="ethanol",
                       density=float(liquid_density("ethanol", 294.15)), noise=NOISE,
                       rng=np.random.default_rng(7))
    a = vpkit.analyze(run, warn=False)
    rows = []
    rows.append(("analyze, 8 points, linear propagation (default choices)",
                 median_ms(lambda: vpkit.analyze(run, warn=False), 200), 5.0))
    rows.append(("analyze, self-consistent air amount (air_from=cold, fit)",
                 median_ms(lambda: vpkit.analyze(run, air_from="cold", warn=False,
                                                 vapor_at_air_reference="fit"), 50), 20.0))
    T, y = a.fit.T, a.fit.y
    cov = a.cov_ln_p
    rows.append(("one GLS fit (Clausius-Clapeyron, 8 points, no leave-one-out)",
                 median_ms(lambda: fit_points(T, y, weighting="gls", cov_y=cov,
                                              influence=False), 500), 0.5))
    rows.append(("one GLS fit with leave-one-out influence",
                 median_ms(lambda: fit_points(T, y, weighting="gls", cov_y=cov), 200), None))
    rows.append(("Monte Carlo, 100,000 draws (default choices)",
                 median_ms(lambda: a.monte_carlo(100_000), 7), 100.0))
    width = max(len(r[0]) for r in rows)
    print(f"{'measurement':<{width}}  median [ms]  target [ms]  ratio to target")
    for name, ms, target in rows:
        t = f"{target:>11.1f}  {ms / target:>15.2f}" if target else f"{'-':>11}  {'-':>15}"
        print(f"{name:<{width}}  {ms:>11.3f}  {t}")
        if target:
            record(name, ms, target, "ms")
    mc = a.monte_carlo(100_000)
    print(f"\nlinear u(ΔH) = {a.enthalpy.std_dev:.1f} J/mol; Monte Carlo sd = {mc.std:.1f} "
          f"J/mol (ratio {mc.std / a.enthalpy.std_dev:.3f}); {mc.failed} failed draws")


if __name__ == "__main__":
    main()
