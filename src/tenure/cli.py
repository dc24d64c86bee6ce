"""Command line: ``tenure check | life | plan | policy | compare | sweep | hedge``.

Exit codes: 0 done; 2 bad input (every problem printed, no traceback);
3 no plan fits the caps (the shortfall is printed and written).
"""

from __future__ import annotations

import argparse
import json
import math
import sys
from pathlib import Path

from . import __version__
from .case import CaseError, load_case
from .plan import NoPlanError
from .report import text

EXIT_BAD_INPUT = 2
EXIT_INFEASIBLE = 3


class UsageError(Exception):
    """A command-line value that is not allowed; printed as one line, exit 2."""


def _case(path: str):
    return load_case(Path(path))


# ---------------------------------------------------------------------------
def cmd_check(args) -> int:
    case = _case(args.case)
    print(text.case_summary(case))
    print("\ncase is valid.")
    return 0


def cmd_life(args) -> int:
    from .life import life_table

    case = _case(args.case)
    ids = [t.id for t in case.types]
    if args.type is not None and args.type not in ids:
        import difflib

        near = difflib.get_close_matches(args.type, ids, n=1)
        hint = f"; did you mean '{near[0]}'?" if near else ""
        raise UsageError(f"--type {args.type!r}: no such asset type in {case.source}{hint} (types: {', '.join(ids)})")
    if not (0 <= args.tolerance < 1):
        raise UsageError(f"--tolerance {args.tolerance!r}: must be a fraction in [0, 1), e.g. 0.02")
    year = case.study.start_year if args.year is None else args.year
    if not (1900 <= year <= 2300):
        raise UsageError(f"--year {year}: must be a calendar year")
    chosen = [case.type(args.type)] if args.type else [t for t in case.types if t.buyable(year)] or list(case.types)
    tables = [life_table(t, case.study.discount_rate, case.study.start_year, year, args.tolerance) for t in chosen]
    if args.json:
        payload = tables[0].to_dict() if len(tables) == 1 else [lt.to_dict() for lt in tables]
        print(json.dumps(payload, indent=2))
        return 0
    for j, lt in enumerate(tables):
        t = case.type(lt.type)
        note = "" if t.buyable(year) else "  (not buyable that year)"
        if j:
            print()
        print(text.life_text(lt, f"Economic life of {lt.type} ({t.class_}), bought {year}, "
                                 f"rate {case.study.discount_rate:.2%}{note}"))
    return 0


def _near(value: str, allowed: list[str]) -> str:
    import difflib

    near = difflib.get_close_matches(value, allowed, n=1)
    return f"; did you mean '{near[0]}'?" if near else ""


def cmd_plan(args) -> int:
    from .report.tables import write_plan
    from .solve import solve

    case = _case(args.case)
    if args.time_limit <= 0:
        raise UsageError(f"--time-limit {args.time_limit!r}: must be a number of seconds > 0")
    if not (0 <= args.gap < 1):
        raise UsageError(f"--gap {args.gap!r}: must be a fraction in [0, 1), e.g. 0.005")
    plan = solve(case, solver=args.solver, time_limit=args.time_limit, gap=args.gap, progress=not args.quiet)
    out = Path(args.out)
    written = [p.name for p in write_plan(plan, out)]
    written += _extra_writers(plan, case, out, progress=not args.quiet)
    print(text.plan_summary(plan, case, str(out), written))
    return EXIT_INFEASIBLE if plan.status in ("infeasible", "unsolved") else 0


def _extra_writers(plan, case, out: Path, progress: bool = True) -> list[str]:
    """Human-facing files (report, spreadsheet); returns their names."""
    from .report import documents

    paths = documents.write_all(plan, case, out, progress=progress) or []
    return [Path(p).name for p in paths]


def cmd_policy(args) -> int:
    from . import chain

    case = _case(args.case)
    classes = [c for c in case.classes]
    if args.class_ not in classes:
        raise UsageError(f"--class {args.class_!r}: no such class in {case.source}{_near(args.class_, classes)} "
                         f"(classes: {', '.join(classes)})")
    ids = [t.id for t in case.types_of(args.class_)]
    if args.type is not None and args.type not in ids:
        raise UsageError(f"--type {args.type!r}: not a type of class {args.class_!r}{_near(args.type, ids)} "
                         f"(types: {', '.join(ids)})")
    g = chain.build_class_graph(case, args.class_)
    sol = chain.backward(g)
    print(text.policy_text(sol, case, [args.type] if args.type else ids))
    return 0


# ---------------------------------------------------------------------------
def run_options(solver: str, time_limit: float, gap: float, workers: int) -> dict:
    """Checked solver options of ``compare``/``sweep``; ValueError with a one-line message otherwise."""
    if not (time_limit > 0):
        raise ValueError(f"--time-limit {time_limit!r}: must be a number of seconds > 0")
    if not (0 <= gap < 1):
        raise ValueError(f"--gap {gap!r}: must be a fraction in [0, 1), e.g. 0.005")
    if workers < 1:
        raise ValueError(f"--workers {workers!r}: must be a whole number ≥ 1")
    return {"solver": solver, "time_limit": float(time_limit), "gap": float(gap)}


VARY_SYNTAX = "PATH=LOW:HIGH:STEPS, e.g. asset_type.rt-bev.price_change=-0.07:-0.02:6"


def parse_vary(text: str):
    """``PATH=LOW:HIGH:STEPS`` → :class:`tenure.scenarios.Axis`; ValueError with a one-line message otherwise."""
    from .scenarios import Axis

    path, eq, rng = text.partition("=")
    parts = rng.split(":")
    if not eq or not path.strip() or len(parts) != 3:
        raise ValueError(f"--vary {text!r}: expected {VARY_SYNTAX}")
    try:
        low, high = float(parts[0]), float(parts[1])
    except ValueError:
        raise ValueError(f"--vary {text!r}: LOW and HIGH must be numbers ({VARY_SYNTAX})") from None
    try:
        steps = int(parts[2])
    except ValueError:
        raise ValueError(f"--vary {text!r}: STEPS must be a whole number ≥ 2 ({VARY_SYNTAX})") from None
    if not (math.isfinite(low) and math.isfinite(high)):
        raise ValueError(f"--vary {text!r}: LOW and HIGH must be finite numbers")
    if steps < 2 and low != high:
        raise ValueError(f"--vary {text!r}: STEPS must be a whole number ≥ 2 ({VARY_SYNTAX})")
    if low > high:
        raise ValueError(f"--vary {text!r}: LOW must not be above HIGH")
    return Axis(path.strip(), low, high, max(steps, 1))



def cmd_compare(args) -> int:
    from . import scenarios as sc
    from .parallel import ClusterError
    from .report import compare as report_compare

    case = _case(args.case)
    extra = sc.read_scenario_file(args.scenarios, case)[0] if args.scenarios else []
    wanted = [w.strip() for item in (args.scenario or []) for w in item.split(",") if w.strip()]
    try:
        options = run_options(args.solver, args.time_limit, args.gap, args.workers)
        chosen = sc.select_scenarios(case, wanted, extra)
    except ValueError as exc:
        raise UsageError(str(exc)) from None
    if not chosen:
        raise UsageError(f"nothing to compare: {case.source} has no [[scenario]] blocks (add some or give "
                         "--scenarios FILE)" if not wanted else "nothing to compare: name a scenario other than base")
    if args.commit_years is not None and not (1 <= args.commit_years <= case.study.horizon):
        raise UsageError(f"--commit-years {args.commit_years}: must be a whole number in "
                         f"[1, {case.study.horizon}] (the horizon)")
    try:
        doc = sc.compare(case, chosen, options=options, workers=args.workers, cluster=args.cluster,
                         progress=not args.quiet, commit_years=args.commit_years)
    except ClusterError as exc:
        raise UsageError(f"--cluster {args.cluster}: {exc}") from None
    print(report_compare.compare_text(doc))
    if args.out:
        paths = report_compare.write_compare(doc, case, args.out)
        print(f"\nwritten to {args.out}/: " + ", ".join(Path(p).name for p in paths))
    print(text.CAUTION)
    return EXIT_INFEASIBLE if doc.base.status == "infeasible" else 0


def cmd_sweep(args) -> int:
    from . import scenarios as sc
    from .parallel import ClusterError
    from .report import sweep as report_sweep

    case = _case(args.case)
    try:
        options = run_options(args.solver, args.time_limit, args.gap, args.workers)
    except ValueError as exc:
        raise UsageError(str(exc)) from None
    if args.vary and args.samples is not None:
        raise UsageError("give either --vary (a grid) or --samples (Monte Carlo), not both")
    if not args.vary and args.samples is None:
        raise UsageError("nothing to sweep: give --vary PATH=LOW:HIGH:STEPS or --samples N")
    if args.samples is not None and args.samples < 1:
        raise UsageError(f"--samples {args.samples}: must be a whole number ≥ 1")
    uncertain = list(case.uncertain)
    if args.scenarios:
        uncertain += sc.read_scenario_file(args.scenarios, case)[1]
    try:
        axes = [parse_vary(v) for v in args.vary or []]
        doc = sc.sweep(case, axes=axes, samples=args.samples, seed=args.seed, uncertain=uncertain,
                       options=options, workers=args.workers, cluster=args.cluster, progress=not args.quiet)
    except ValueError as exc:
        raise UsageError(str(exc)) from None
    except ClusterError as exc:
        raise UsageError(f"--cluster {args.cluster}: {exc}") from None
    print(report_sweep.sweep_text(doc))
    if args.out:
        paths = report_sweep.write_sweep(doc, args.out)
        print(f"\nwritten to {args.out}/: " + ", ".join(Path(p).name for p in paths))
    print(text.CAUTION)
    return 0


def cmd_hedge(args) -> int:
    from . import scenarios as sc
    from .hedge import hedge
    from .parallel import ClusterError
    from .report import hedge as report_hedge

    case = _case(args.case)
    if not args.out:
        raise UsageError("--out DIR is required: the folder for hedge.json, hedge.csv and report.html")
    wanted = [w.strip() for item in (args.scenario or []) for w in item.split(",") if w.strip()]
    try:
        options = run_options(args.solver, args.time_limit, args.gap, args.workers)
        chosen = sc.select_scenarios(case, wanted)
        h = hedge(case, chosen, commit_years=args.commit_years, objective=args.objective, method=args.method,
                  options=options, workers=args.workers, cluster=args.cluster)
    except ValueError as exc:
        raise UsageError(str(exc)) from None
    except ClusterError as exc:
        raise UsageError(f"--cluster {args.cluster}: {exc}") from None
    print(report_hedge.hedge_text(h))
    paths = report_hedge.write_hedge(h, case, args.out)
    print(f"\nwritten to {args.out}/: " + ", ".join(Path(p).name for p in paths))
    print(text.CAUTION)
    return 0


# ---------------------------------------------------------------------------
def build_parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(prog="tenure", description="Fleet and asset renewal planning: economic life, "
                                "replacement chains under changing challengers, capital-capped fleet plans.")
    p.add_argument("--version", action="version", version=f"tenure {__version__}")
    sub = p.add_subparsers(dest="command", metavar="COMMAND")

    c = sub.add_parser("check", help="validate a case and print a one-screen summary")
    c.add_argument("case", help="case file (TOML)")
    c.set_defaults(func=cmd_check)

    c = sub.add_parser("life", help="EAC by holding period and the economic life of each type")
    c.add_argument("case")
    c.add_argument("--type", help="asset type id (default: every type buyable in YEAR)")
    c.add_argument("--year", type=int, help="purchase year (default: the study's start year)")
    c.add_argument("--tolerance", type=float, default=0.02, help="relative width of the near-optimal band (0.02)")
    c.add_argument("--json", action="store_true", help="print JSON instead of a table")
    c.set_defaults(func=cmd_life)

    c = sub.add_parser("plan", help="least-cost renewal plan of the whole fleet (capped when the case has a budget)")
    c.add_argument("case")
    c.add_argument("--out", required=True, help="folder for plan.json, units.csv, years.csv and the report")
    c.add_argument("--solver", choices=("highs", "cbc"), default="highs", help="integer-program solver (highs)")
    c.add_argument("--time-limit", type=float, default=120.0, help="seconds for a capped solve (120)")
    c.add_argument("--gap", type=float, default=0.005, help="relative optimality gap to stop at (0.005)")
    c.add_argument("--quiet", action="store_true", help="no progress line")
    c.set_defaults(func=cmd_plan)

    c = sub.add_parser("policy", help="optimal keep/replace action by year and age for one class (uncapped)")
    c.add_argument("case")
    c.add_argument("--class", dest="class_", required=True, help="class name")
    c.add_argument("--type", help="held type (default: every type of the class)")
    c.set_defaults(func=cmd_policy)

    def solve_options(c):
        c.add_argument("--out", help="folder for the JSON and CSV results (default: print only)")
        c.add_argument("--workers", type=int, default=1,
                       help="worker processes: local processes, or those of the cluster --cluster local starts (1)")
        c.add_argument("--cluster", metavar="ADDRESS",
                       help="'local' to start a Dask cluster of --workers processes here, or the address of a "
                            "running Dask scheduler, e.g. tcp://scheduler-host:8786")
        c.add_argument("--solver", choices=("highs", "cbc"), default="highs", help="integer-program solver (highs)")
        c.add_argument("--time-limit", type=float, default=120.0, help="seconds per capped solve (120)")
        c.add_argument("--gap", type=float, default=0.005, help="relative optimality gap to stop at (0.005)")
        c.add_argument("--quiet", action="store_true", help="no progress bar")

    c = sub.add_parser("compare", help="solve the base case and each scenario; regret and what is safe to commit now")
    c.add_argument("case")
    c.add_argument("--scenario", action="append", metavar="ID",
                   help="scenario id to compare (repeat, or a,b; default: every scenario)")
    c.add_argument("--scenarios", metavar="FILE", help="TOML file of extra [[scenario]] blocks")
    c.add_argument("--commit-years", type=int, metavar="N",
                   help="also the regret of committing each plan's first N years, then re-planning")
    solve_options(c)
    c.set_defaults(func=cmd_compare)

    c = sub.add_parser("sweep", help="present cost and first-year decisions over a grid or Monte Carlo draws")
    c.add_argument("case")
    c.add_argument("--vary", action="append", metavar="PATH=LOW:HIGH:STEPS",
                   help="grid over one input (repeat for a multi-way grid)")
    c.add_argument("--samples", type=int, metavar="N", help="Monte Carlo draws of the [[uncertain]] inputs")
    c.add_argument("--seed", type=int, default=0, help="seed of the draws (0)")
    c.add_argument("--scenarios", metavar="FILE", help="TOML file of extra [[uncertain]] blocks")
    solve_options(c)
    c.set_defaults(func=cmd_sweep)

    c = sub.add_parser("hedge", help="one commitment of the first years, best across the scenarios re-planned later")
    c.add_argument("case")
    c.add_argument("--commit-years", type=int, required=True, metavar="N", help="planning years committed now")
    c.add_argument("--objective", choices=("expected", "regret"), default="expected",
                   help="least expected present cost, or least largest regret (expected)")
    c.add_argument("--method", choices=("auto", "extensive", "lagrangian"), default="auto",
                   help="extensive form, Lagrangian decomposition, or chosen by size (auto)")
    c.add_argument("--scenario", action="append", metavar="ID",
                   help="scenario id to hedge over besides the base case (repeat, or a,b; default: every scenario)")
    solve_options(c)
    c.set_defaults(func=cmd_hedge)
    return p


def main(argv: list[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    if not getattr(args, "func", None):
        parser.print_help()
        return EXIT_BAD_INPUT
    try:
        return int(args.func(args) or 0)
    except CaseError as exc:
        print(f"tenure {args.command}: the case has {len(exc.problems)} problem(s):", file=sys.stderr)
        for prob in exc.problems:
            print(f"  {prob}", file=sys.stderr)
        return EXIT_BAD_INPUT
    except UsageError as exc:
        print(f"tenure {args.command}: {exc}", file=sys.stderr)
        return EXIT_BAD_INPUT
    except NoPlanError as exc:
        print(f"tenure {args.command}: {exc}", file=sys.stderr)
        return EXIT_INFEASIBLE
    except BrokenPipeError:  # e.g. piped into `head`
        return 0


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
