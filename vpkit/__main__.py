"""Command line: ``python -m vpkit analyze RUN_FILE --out DIR`` and ``... report SOURCE``.

Both commands take the same analysis options, with the same meanings
(:mod:`vpkit.choices`), and both apply a run file's saved session (its
exclusions) unless ``--ignore-session`` is given; each says which session and
which reference equation it used.
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

from .errors import VpkitError


def _options(p: argparse.ArgumentParser) -> None:
    p.add_argument("--model", default="clausius_clapeyron",
                   choices=["clausius_clapeyron", "constant_dcp", "antoine"])
    p.add_argument("--weighting", default="gls", choices=["gls", "weighted", "ordinary"])
    p.add_argument("--air-from", default="weighed", choices=["weighed", "cold", "injected"])
    p.add_argument("--vapor-at-air-reference", default="auto",
                   choices=["auto", "reference", "fit", "neglect"])
    p.add_argument("--reference", default="auto",
                   choices=["auto", "antoine", "ppds", "iapws95", "none"],
                   help="reference equation for the comparison (auto: IAPWS-95 for water, "
                   "the PPDS equation for 2-propanol and 1-butanol, the Antoine set otherwise)")
    p.add_argument("--no-head", action="store_true", help="ignore the hydrostatic head")
    p.add_argument("--ignore-session", action="store_true",
                   help="analyse the run files as written, without their saved exclusions")


def _choices(args) -> dict:
    return dict(model=args.model, weighting=args.weighting, air_from=args.air_from,
                vapor_at_air_reference=args.vapor_at_air_reference,
                reference=None if args.reference == "none" else args.reference,
                use_head=not args.no_head)


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(prog="python -m vpkit",
                                     description="Trapped-bubble vapor-pressure analysis")
    sub = parser.add_subparsers(dest="command", required=True)
    p = sub.add_parser("analyze", help="analyse run files and write figure, tables, summary")
    p.add_argument("runs", nargs="+", type=Path, help="run file(s)")
    p.add_argument("--out", type=Path, default=Path("vpkit-out"), help="output folder")
    p.add_argument("--width-mm", type=float, default=85.0, help="figure width (85 or 175)")
    _options(p)
    q = sub.add_parser("report", help="summary, flags and a self-contained report for many runs")
    q.add_argument("source", type=Path, help="a folder of run files, a long-table CSV, or a "
                   "single run file")
    q.add_argument("--out", type=Path, default=Path("vpkit-report"), help="output folder")
    _options(q)
    args = parser.parse_args(argv)
    if args.command == "report":
        return _report(args)
    return _analyze(args)


def _analyze(args) -> int:
    from . import display as D
    from .analysis import analyze
    from .report import SAFETY_NOTE, write_outputs
    from .runfile import read_run
    from .session import SessionError, load_session, session_path

    status = 0
    for path in args.runs:
        try:
            run = read_run(path)
            note = "none (run file as written)"
            sp = session_path(path)
            if sp.exists() and not args.ignore_session:
                try:
                    run = load_session(sp, run).apply(run)
                    note = f"{sp.name} applied"
                except SessionError as exc:
                    note = f"{sp.name} not applied: {exc}"
            elif sp.exists():
                note = f"{sp.name} ignored (--ignore-session)"
            a = analyze(run, **_choices(args), warn=False)  # warnings printed below
            paths = write_outputs(a, args.out, width_mm=args.width_mm)
        except VpkitError as exc:
            print(f"error: {exc}", file=sys.stderr)
            status = 2
            continue
        r = a.results().iloc[0]
        print(f"{path}: {a.si.liquid}, {int(a.include.sum())}/{len(a.T)} points; session: {note}")
        dH = D.value_u(r["ΔH_vap [kJ/mol]"], r["u(ΔH_vap) [kJ/mol]"], "kJ/mol")
        print(f"  ΔH_vap = {dH} at T_m = {D.number(a.T_m, 'K')}")
        Tb = D.value_u(r["T_b at 101.325 kPa [degC]"], r["u(T_b at 101.325 kPa) [K]"], "degC")
        print(f"  T_b(101.325 kPa) = {Tb}")
        c = a.comparison
        if c is not None:
            print(f"  reference ({c.curve.label}): ΔH_vap = "
                  f"{D.number(c.enthalpy / 1e3, 'kJ/mol')}, deviation "
                  f"{D.signed(r['deviation from reference [%]'], '%')} "
                  f"({D.signed(r['deviation from reference [u]'], 'u')})")
        for w in a.warnings:
            print(f"  warning: {w}")
        print(f"  wrote {', '.join(str(p) for p in paths.values())}")
    print(SAFETY_NOTE)
    return status


def _report(args) -> int:
    from .batch import analyze_many
    from .batch_report import write_batch_report
    from .report import SAFETY_NOTE

    try:
        many = analyze_many(args.source, sessions=not args.ignore_session, **_choices(args))
        res = write_batch_report(many, args.out, title=f"Vapor-pressure runs: "
                                 f"{args.source.name}")
    except VpkitError as exc:
        print(f"error: {exc}", file=sys.stderr)
        return 2
    summary = res["summary"]
    analysed = summary["status"].fillna("") == ""
    flagged = summary[analysed & (summary["flags"] != "")]
    print(f"{int(analysed.sum())} run(s) analysed, {len(flagged)} flagged, "
          f"{int((~analysed).sum())} not analysed (could not be read or fitted)")
    if many.sessions:
        print(f"  sessions applied: {', '.join(sorted(many.sessions.values()))}")
    refs = sorted(set(x for x in summary["reference"].dropna() if x))
    print(f"  reference equations: {'; '.join(refs) if refs else 'none'}")
    for _, r in flagged.iterrows():
        print(f"  {r['run_id']}: {r['flag reasons']}")
    for _, r in summary[~analysed].iterrows():
        print(f"  not analysed: {r['run_id']}: {r['status']}")
    print(f"wrote {res['html']}, {res['markdown']}, {res['summary_csv']}")
    print(SAFETY_NOTE)
    return 0


if __name__ == "__main__":
    sys.exit(main())
