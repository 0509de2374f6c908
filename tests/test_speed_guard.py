"""A CI-safe guard against gross speed regressions of the many-run path.

No absolute time is asserted (machines here are shared and noisy). In one process,
alternating, the many-run path analyses 2,000 invented runs and the dense GLS floor of
benchmarks/bench_batch.py fits 2,000 x 8 points; the guard fails only when the ratio of
their medians exceeds GROSS_RATIO. The speed targets themselves are checked by
`make bench` (benchmarks/scoreboard.py prints them).
"""

from __future__ import annotations

import statistics
import sys
import time
from pathlib import Path

BENCH = Path(__file__).resolve().parents[1] / "benchmarks"

#: Many-run path / dense floor on 2,000 runs. Measured 48-58 x at the time of writing
#: (issue 19 aims at <= 6 x for 10,000 runs); about three times that is a gross
#: regression (a per-point Python loop or an n^3 step would cost 10 x or more).
GROSS_RATIO = 150.0


def test_many_run_path_within_a_gross_ratio_of_the_dense_floor():
    sys.path.insert(0, str(BENCH))
    try:
        from bench_batch import dense_gls_floor, floor_inputs, simulated_table
    finally:
        sys.path.remove(str(BENCH))
    from vpkit.analysis.many_runs import analyze_table

    table = simulated_table(2_000, seed=3)
    floor_in = floor_inputs(2_000)
    analyze_table(simulated_table(20, seed=4))  # warm-up: caches, imports
    dense_gls_floor(*floor_in)
    many, floor = [], []
    for _ in range(3):
        t0 = time.perf_counter()
        summary = analyze_table(table)
        many.append(time.perf_counter() - t0)
        t0 = time.perf_counter()
        for _ in range(5):
            dense_gls_floor(*floor_in)
        floor.append((time.perf_counter() - t0) / 5)
    assert (summary["status"] == "").sum() > 1_900  # the guard timed real analyses
    ratio = statistics.median(many) / statistics.median(floor)
    assert ratio < GROSS_RATIO, (
        f"the many-run path took {ratio:.0f} x the dense GLS floor on 2,000 runs (limit "
        f"{GROSS_RATIO:g} x): a gross speed regression; profile with "
        "`python benchmarks/bench_batch.py --profile`")
