"""Command line: ``python -m vpkit analyze RUN_FILE --out DIR`` and ``... report SOURCE``.

Both commands take the same analysis options, with the same meanings
(:mod:`vpkit.analysis.choices`), and both apply a run file's saved session (its
exclusions) unless ``--ignore-session`` is given; each says which session and
which reference equation it used.
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

from . import display as D
from .errors import VpkitError


def _options(p: argparse.ArgumentParser) -> None:
    p.add_argument("--model", default="clausius_clapeyron",
                   choices=["clausius_clapeyron", "constant_dcp", "antoine"],
                   help="fit model: Clausius-Clapeyron (constant ΔH_vap), constant ΔCp "
                   "(Kirchhoff) or Antoine (default: %(default)s)")
    p.add_argument("--weighting", default="gls", choices=["gls", "weighted", "ordinary"],
                   help="gls: full covariance of ln p (shared barometer and air amount); "
                   "weighted: diagonal only; ordinary: unweighted (default: %(default)s)")
    p.add_argument("--air-from", default="auto",
                   choices=["auto", "weighed", "cold", "injected"],
                   help="air amount from the weighing at room temperature, the coldest "
                   "reading, or the injected volume; auto: each run by the first of these "
                   "(weighed, injected, cold) its record supports (default: %(default)s)")
    p.add_argument("--vapor-at-air-reference", default="auto",
                   choices=["auto", "reference", "fit", "neglect"],
                   help="p_vap at the air-reference temperature from the published equation, "
                   "self-consistently from the fit, or neglected; auto: the published equation "
                   "where the liquid has one, else fit (default: %(default)s)")
    p.add_argument("--reference", default="auto",
                   choices=["auto", "antoine", "ppds", "iapws95", "none"],
                   help="reference equation for the comparison (auto: IAPWS-95 for water, "
                   "the PPDS equation for 2-propanol and 1-butanol, the Antoine set otherwise)")
    p.add_argument("--no-head", action="store_true", help="ignore the hydrostatic head")
    p.add_argument("--water-layer", action="store_true",
                   help="the liquid floats on water that touches the bubble: subtract the "
                   "water's vapor pressure (IAPWS-95) too")
    p.add_argument("--ignore-session", action="store_true",
                   help="analyse the run files as written, without their saved exclusions")


def _choices(args) -> dict:
    return dict(model=args.model, weighting=args.weighting, air_from=args.air_from,
                vapor_at_air_reference=args.vapor_at_air_reference,
                reference=None if args.reference == "none" else args.reference,
                use_head=not args.no_head, water_layer=args.water_layer)


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(prog="python -m vpkit",
                                     description="Trapped-bubble vapor-pressure analysis")
    sub = parser.add_subparsers(dest="command", required=True)
    p = sub.add_parser("analyze", help="analyse run files and write figure, tables, summary")
    p.add_argument("runs", nargs="+", type=Path,
                   help="run file(s): CSV, or a workbook (.xlsx, .ods) with the run on its "
                   "first sheet; each run's outputs are named after its file")
    p.add_argument("--out", type=Path, default=Path("vpkit-out"),
                   help="output folder, created if missing (default: ./%(default)s)")
    p.add_argument("--width-mm", type=float, default=85.0,
                   help="figure width [mm]: 85 for one journal column, 175 for two "
                   "(default: %(default)s)")
    _options(p)
    q = sub.add_parser("report", help="summary, flags and a self-contained report for many runs")
    q.add_argument("source", type=Path, help="a folder of run files, a long-table CSV, or a "
                   "single run file")
    q.add_argument("--out", type=Path, default=Path("vpkit-report"),
                   help="output folder, created if missing (default: ./%(default)s)")
    _options(q)
    _plan_options(sub.add_parser(
        "plan", help="predict what a planned run will give, and search for a better plan"))
    args = parser.parse_args(argv)
    if args.command == "report":
        return _report(args)
    if args.command == "plan":
        return _plan(args)
    return _analyze(args)


def _floats(text: str) -> list[float]:
    return [float(x) for x in text.replace(";", ",").split(",") if x.strip()]


def _plan_options(p) -> None:
    p.add_argument("liquid", nargs="?",
                   help="a liquid with a bundled published curve (--list-liquids shows them)")
    p.add_argument("--list-liquids", action="store_true",
                   help="list the liquids a run can be planned for, with the range of their "
                   "published curve, and stop")
    p.add_argument("--bubble", type=float, default=2.0, help="gas volume at the room "
                   "reading [mL] (default: %(default)s)")
    p.add_argument("--from", dest="t_from", type=float, default=25.0,
                   help="first bath temperature [°C] (default: %(default)s)")
    p.add_argument("--to", dest="t_to", type=float, default=60.0,
                   help="last bath temperature [°C] (default: %(default)s)")
    p.add_argument("--points", type=int, default=8, help="number of bath temperatures, "
                   "evenly spaced from --from to --to (default: %(default)s)")
    p.add_argument("--barometer", type=float, default=100.0,
                   help="expected barometric pressure [kPa] (default: %(default)s)")
    p.add_argument("--room", type=float, default=21.0,
                   help="room temperature [°C] (default: %(default)s)")
    p.add_argument("--reading-u", type=float, default=0.005,
                   help="standard uncertainty of one graduation reading [mL] "
                   "(default: %(default)s)")
    p.add_argument("--thermometer-u", type=float, default=0.2,
                   help="standard uncertainty of the bath thermometer [K] "
                   "(default: %(default)s)")
    p.add_argument("--capacity", type=float, default=None,
                   help="tube capacity [mL] (default: not checked)")
    p.add_argument("--search", action="store_true", help="look for a better plan")
    p.add_argument("--bubbles", type=_floats, default=None,
                   help="bubble sizes available for the search [mL], e.g. 1,2,3")
    p.add_argument("--bath", type=_floats, default=None,
                   help="bath range for the search [°C], e.g. 20,90")
    p.add_argument("--max-points", type=int, default=None,
                   help="most bath temperatures the search may use")


def _plan(args) -> int:
    import numpy as np

    from .constants import T_ZERO_C
    from .output.run_summary import SAFETY_NOTE
    from .planning.planner import Plan, predict, search

    if args.list_liquids:
        return _list_liquids()
    if args.liquid is None:
        print("error: name the liquid to plan (python -m vpkit plan --list-liquids shows "
              "them)", file=sys.stderr)
        return 2
    try:
        plan = Plan(args.liquid, args.bubble * 1e-6,
                    tuple(np.linspace(args.t_from, args.t_to, args.points) + T_ZERO_C),
                    P_bar=args.barometer * 1e3, T_room=args.room + T_ZERO_C,
                    instruments={"reading": args.reading_u * 1e-6, "T": args.thermometer_u},
                    capacity=None if args.capacity is None else args.capacity * 1e-6)
        if args.search:
            bath = None if args.bath is None else (args.bath[0] + T_ZERO_C,
                                                   args.bath[1] + T_ZERO_C)
            found = search(plan, bubble_volumes=None if args.bubbles is None
                           else [v * 1e-6 for v in args.bubbles], bath=bath,
                           max_points=args.max_points)
            given, best = found.given, found.best
        else:
            [given] = predict([plan])
            best = None
    except VpkitError as exc:
        print(f"error: {exc}", file=sys.stderr)
        return 2
    _print_prediction("planned run", given, D)
    if best is not None:
        if best is given:
            print(f"search: no better workable plan among {found.candidates} tried")
        else:
            _print_prediction(f"best of {found.candidates} plans tried", best, D)
            print(f"gain: u(ΔH_vap) {found.gain:.1f} times smaller")
    print(SAFETY_NOTE)
    return 0


def _list_liquids() -> int:
    from .constants import T_ZERO_C
    from .physics.liquids import antoine_table, melting_point

    print("liquids with a bundled published curve (range of the curve; melting point):")
    for _, row in antoine_table().iterrows():
        lo, hi = row["T_min"] - T_ZERO_C, row["T_max"] - T_ZERO_C
        print(f"  {row['liquid']:<14} {D.number(lo, 'degC')} to {D.number(hi, 'degC')}; "
              f"melts at {D.number(melting_point(row['liquid']) - T_ZERO_C, 'degC')}")
    return 0


def _print_prediction(title, p, D) -> None:
    pl = p.plan
    t = p.points["t [degC]"]
    print(f"{title}: {pl.liquid}, {D.number(pl.bubble_volume * 1e6, 'mL')} bubble, "
          f"{len(t)} points from {D.number(t.min(), 'degC')} to "
          f"{D.number(t.max(), 'degC')}")
    print("  t [degC]  expected reading [mL]  gas volume [mL]  p_vap [kPa]  amplification")
    for _, row in p.points.iterrows():
        print(f"  {row['t [degC]']:8.1f}  {row['expected reading [mL]']:21.3f}  "
              f"{row['gas volume [mL]']:15.3f}  {row['p_vap [kPa]']:11.3f}  "
              f"{row['amplification P_total/p_vap']:13.1f}")
    print(f"  expected u(ΔH_vap) = {D.uncertainty(p.u_enthalpy / 1e3, 'kJ/mol')}; "
          f"u(T_b at 101.325 kPa) = {D.uncertainty(p.u_T_b, 'K')}; extrapolation bias of "
          f"T_b = {D.signed(p.bias_T_b, 'K', 2)}")
    b = p.budget().drop(index="total").sort_values(("ΔH_vap", "share"), ascending=False)
    top = [f"{g} {D.uncertainty(100 * row[('ΔH_vap', 'share')], '%')}"
           for g, row in b.head(3).iterrows()]
    print(f"  largest shares of u(ΔH_vap)²: {', '.join(top)}")
    for w in p.warnings:
        print(f"  warning: {w}")


def _analyze(args) -> int:
    from .analysis.one_run import analyze
    from .output.run_summary import SAFETY_NOTE, write_outputs
    from .record.runfile import read_run
    from .record.safewrite import file_names, output_folder
    from .record.session import SessionError, load_session, session_path

    try:
        output_folder(args.out)  # a bad --out is said once, before any run is analysed
    except VpkitError as exc:
        print(f"error: {exc}", file=sys.stderr)
        return 2
    status = 0
    stems = file_names(Path(p).stem for p in args.runs)
    for path, stem in zip(args.runs, stems):
        if stem != Path(path).stem:
            print(f"note: {path}: another run file has the same name; its outputs are "
                  f"named {stem}")
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
            paths = write_outputs(a, args.out, width_mm=args.width_mm, stem=stem)
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
    from .analysis.many_runs import analyze_many
    from .output.run_summary import SAFETY_NOTE
    from .output.section_report import write_batch_report

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
    print(f"{D.count(int(analysed.sum()), 'run')} analysed, {len(flagged)} flagged, "
          f"{int((~analysed).sum())} not analysed (could not be read or fitted)")
    if many.sessions:
        print(f"  sessions applied: {', '.join(sorted(many.sessions.values()))}")
    for note in many.notes:
        print(f"  note: {note}")
    refs = sorted(set(x for x in summary["reference"].dropna() if x))
    print(f"  reference equations: {'; '.join(refs) if refs else 'none'}")
    for _, r in flagged.iterrows():
        print(f"  {r['run_id']}: {r['flag reasons']}")
    for _, r in summary[~analysed].iterrows():
        print(f"  not analysed: {r['run_id']}: {r['status']}")
    print(f"wrote {res['html']}, {res['markdown']}, {res['summary_csv']}, "
          f"{res['consensus_csv']}")
    print(SAFETY_NOTE)
    return 0


if __name__ == "__main__":
    sys.exit(main())
