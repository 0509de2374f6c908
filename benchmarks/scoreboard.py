"""The end table of `make bench`: every figure next to its target, one row each.

Each benchmark script calls :func:`record` for the figures that have a target.
When the environment variable ``VPKIT_BENCH_RESULTS`` names a file (``make bench``
sets it), the figure is appended there as one JSON line; run as a script, this
module reads that file and prints one table: figure, target, now, ratio (now /
target for an upper limit, target / now for a lower limit, so a ratio <= 1
passes) and pass/fail.

Run: python benchmarks/scoreboard.py FILE
"""

from __future__ import annotations

import json
import os
import sys
from pathlib import Path


def record(figure: str, now: float, target: float, unit: str, *,
           at_least: bool = False) -> None:
    """Keep one figure for the end table (nothing happens unless VPKIT_BENCH_RESULTS
    is set). ``at_least`` marks a target that is a lower limit (a speed-up ratio)."""
    path = os.environ.get("VPKIT_BENCH_RESULTS")
    if not path:
        return
    with open(path, "a", encoding="utf-8") as fh:
        fh.write(json.dumps({"figure": figure, "now": float(now), "target": float(target),
                             "unit": unit, "at_least": at_least}) + "\n")


def table(rows: list[dict]) -> str:
    """The end table as text (figures rounded to three significant digits)."""
    head = ("figure", "target", "now", "ratio", "")
    body = []
    for r in rows:
        ratio = r["target"] / r["now"] if r["at_least"] else r["now"] / r["target"]
        sign = ">=" if r["at_least"] else "<"
        body.append((r["figure"], f"{sign} {r['target']:.3g} {r['unit']}",
                     f"{r['now']:.3g} {r['unit']}", f"{ratio:.2f}",
                     "pass" if ratio <= 1 else "FAIL"))
    widths = [max(len(x[i]) for x in [head, *body]) for i in range(len(head))]
    lines = ["  ".join(c.ljust(w) for c, w in zip(head, widths)).rstrip(),
             "  ".join("-" * w for w in widths)]
    lines += ["  ".join(c.ljust(w) for c, w in zip(x, widths)).rstrip() for x in body]
    n_fail = sum(x[-1] == "FAIL" for x in body)
    lines.append(f"{len(body) - n_fail} of {len(body)} figures within target")
    return "\n".join(lines)


def main(path: str) -> None:
    text = Path(path).read_text(encoding="utf-8") if Path(path).exists() else ""
    rows = [json.loads(line) for line in text.splitlines() if line.strip()]
    print("\nbenchmark figures against their targets (ratio <= 1 passes)")
    print(table(rows) if rows else "no figures recorded")


if __name__ == "__main__":
    main(sys.argv[1])
