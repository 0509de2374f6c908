"""Command line: ``python -m vpkit analyze RUN_FILE --out DIR``."""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

from .errors import VpkitError


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(prog="python -m vpkit",
                                     description="Trapped-bubble vapor-pressure analysis")
    sub = parser.add_subparsers(dest="command", required=True)
    p = sub.add_parser("analyze", help="analyse run files and write figure, tables, summary")
    p.add_argument("runs", nargs="+", type=Path, help="run file(s)")
    p.add_argument("--out", type=Path, default=Path("vpkit-out"), help="output folder")
    p.add_argument("--model", default="clausius_clapeyron",
                   choices=["clausius_clapeyron", "constant_dcp", "antoine"])
    p.add_argument("--weighting", default="gls", choices=["gls", "weighted", "ordinary"])
    p.add_argument("--air-from", default="weighed", choices=["weighed", "cold", "injected"])
    p.add_argument("--vapor-at-air-reference", default="auto",
                   choices=["auto", "reference", "fit", "neglect"])
    p.add_argument("--no-head", action="store_true", help="ignore the hydrostatic head")
    p.add_argument("--width-mm", type=float, default=85.0, help="figure width (85 or 175)")
    q = sub.add_parser("report", help="summary, flags and a self-contained report for many runs")
    q.add_argument("source", type=Path, help="a folder of run files or a long-table CSV")
    q.add_argument("--out", type=Path, default=Path("vpkit-report"), help="output folder")
    q.add_argument("--weighting", default="gls", choices=["gls", "weighted", "ordinary"])
    q.add_argument("--air-from", default="weighed", choices=["weighed", "cold", "injected"])
    q.add_argument("--vapor-at-air-reference", default="auto",
                   choices=["auto", "reference", "neglect"])
    q.add_argument("--no-head", action="store_true", help="ignore the hydrostatic head")
    args = parser.parse_args(argv)
    if args.command == "report":
        return _report(args)

    from .analysis import analyze
    from .report import SAFETY_NOTE, write_outputs

    status = 0
    for path in args.runs:
        try:
            a = analyze(path, model=args.model, weighting=args.weighting,
                        air_from=args.air_from,
                        vapor_at_air_reference=args.vapor_at_air_reference,
                        use_head=not args.no_head, warn=False)  # printed below
            paths = write_outputs(a, args.out, width_mm=args.width_mm)
        except VpkitError as exc:
            print(f"error: {exc}", file=sys.stderr)
            status = 2
            continue
        r = a.results().iloc[0]
        print(f"{path}: {a.si.liquid}, {int(a.include.sum())}/{len(a.T)} points")
        print(f"  ΔH_vap = {r['ΔH_vap [kJ/mol]']:.2f} ± {r['u(ΔH_vap) [kJ/mol]']:.2f} kJ/mol "
              f"at T_m = {r['T_m [K]']:.1f} K")
        print(f"  T_b(101.325 kPa) = {r['T_b at 101.325 kPa [degC]']:.2f} ± "
              f"{r['u(T_b at 101.325 kPa) [K]']:.2f} degC")
        if "reference ΔH_vap at T_m [kJ/mol]" in r:
            print(f"  reference ({r['reference']}): ΔH_vap = "
                  f"{r['reference ΔH_vap at T_m [kJ/mol]']:.2f} kJ/mol, deviation "
                  f"{r['deviation from reference [%]']:+.1f} % "
                  f"({r['deviation from reference [u]']:+.1f} u)")
        for w in a.warnings:
            print(f"  warning: {w}")
        print(f"  wrote {', '.join(str(p) for p in paths.values())}")
    print(SAFETY_NOTE)
    return status


def _report(args) -> int:
    from .report import SAFETY_NOTE, write_batch_report

    try:
        res = write_batch_report(args.source, args.out, weighting=args.weighting,
                                 air_from=args.air_from,
                                 vapor_at_air_reference=args.vapor_at_air_reference,
                                 use_head=not args.no_head)
    except VpkitError as exc:
        print(f"error: {exc}", file=sys.stderr)
        return 2
    summary = res["summary"]
    flagged = summary[summary["flags"] != ""]
    print(f"{len(summary)} run(s) analysed, {len(flagged)} flagged, "
          f"{len(res['failed'])} could not be read")
    for _, r in flagged.iterrows():
        print(f"  {r['run_id']}: {r['flag reasons']}")
    for src, msg in res["failed"]:
        print(f"  not read: {src}: {msg}")
    print(f"wrote {res['html']}, {res['markdown']}, {res['summary_csv']}")
    print(SAFETY_NOTE)
    return 0


if __name__ == "__main__":
    sys.exit(main())
