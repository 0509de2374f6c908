"""Run-explorer speed, measured side by side in one run (a script, not a timed test).

Prints medians for a 10-point run: toggle -> updated readouts (target < 5 ms);
redraw with in-place artist updates and blitting, in-place updates with a full
Agg draw, and a rebuilt figure (targets: in-place >= 2.5x faster than rebuilding,
and < 50 ms). With --browser, also serves the quick-start notebook with Voila on
127.0.0.1, clicks in headless Chromium and reports click -> repainted canvas
(target < 100 ms); see benchmarks/browser.py.

Run: python benchmarks/bench_panel.py [--browser]
"""

from __future__ import annotations

import statistics
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
from matplotlib.backends.backend_agg import FigureCanvasAgg

import vpkit
from vpkit.output.figures import run_figure
from vpkit.panels import explore
from vpkit.panels.live_figure import LiveFigure
from vpkit.physics.curves import antoine_curve
from vpkit.physics.liquids import liquid_density
from vpkit.physics.simulate import NOISE, simulate_run

sys.path.insert(0, str(Path(__file__).parent))
from scoreboard import record  # noqa: E402


def ten_point_run():
    curve = antoine_curve("ethanol")
    return simulate_run(curve.p, np.linspace(293.15, 338.15, 10), liquid="ethanol",
                        density=float(liquid_density("ethanol", 294.15)), noise=NOISE,
                        rng=np.random.default_rng(3))


def median_ms(fn, repeat=30):
    fn()
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return 1e3 * statistics.median(times)


def main(browser: bool) -> None:
    run = ten_point_run()
    with tempfile.TemporaryDirectory() as tmp:
        path = vpkit.write_run(run, Path(tmp) / "bench10.csv")
        panel = explore(path, canvas="static")
        readout_ms = []
        for k in range(60):
            panel.toggle(k % 10)
            readout_ms.append(1e3 * (panel.timings["analyze"] + panel.timings["readouts"]))
    a = vpkit.analyze(run)
    b = vpkit.analyze(run, exclude=[4])
    blit = LiveFigure(canvas="agg", blit=True)
    full = LiveFigure(canvas="agg", blit=False)
    for fig in (blit, full):
        fig.update(a)
        fig.update(b)
        fig.update(a)
    flip = [0]

    def inplace(fig):
        def go():
            flip[0] += 1
            fig.update(a if flip[0] % 2 else b)
        return go

    def rebuild():
        FigureCanvasAgg(run_figure(a if flip[0] % 2 else b, width_mm=160)).draw()
        flip[0] += 1

    t_blit = median_ms(inplace(blit))
    t_full = median_ms(inplace(full))
    t_rebuild = median_ms(rebuild)
    assert blit.last_redraw == "blit"
    print("run explorer, 10-point run, medians")
    print(f"  toggle -> updated readouts (analyze + readouts): "
          f"{statistics.median(readout_ms):7.2f} ms   target < 5 ms")
    print(f"  redraw, in place + blitting:                      {t_blit:7.2f} ms   target < 50 ms")
    print(f"  redraw, in place + full Agg draw:                 {t_full:7.2f} ms")
    print(f"  redraw, figure rebuilt:                           {t_rebuild:7.2f} ms")
    print(f"  ratio rebuilt / in place with blitting:           {t_rebuild / t_blit:7.1f} x  "
          "target >= 2.5 x")
    print(f"  ratio rebuilt / in place, full draw:              {t_rebuild / t_full:7.1f} x")
    record("panel toggle -> updated readouts", statistics.median(readout_ms), 5.0, "ms")
    record("redraw in place with blitting", t_blit, 50.0, "ms")
    record("rebuilt / in-place redraw", t_rebuild / t_blit, 2.5, "x", at_least=True)
    if browser:
        from browser import measure_click_to_repaint

        text, repaint = measure_click_to_repaint(Path(tempfile.mkdtemp()) / "browser")
        print(f"  browser (Voila + headless Chromium): {text}")
        if repaint is not None:
            record("browser click -> repainted canvas (median of 9)", repaint, 100.0, "ms")


if __name__ == "__main__":
    main("--browser" in sys.argv)
