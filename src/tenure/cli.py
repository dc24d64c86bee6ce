"""Command line: ``tenure check | life | fit | plan | policy | compare | sweep | hedge``.

Exit codes: 0 done; 2 bad input or an output that cannot be written (every problem printed, no traceback);
3 no plan fits the caps (the shortfall is printed and written); 130 / 143 interrupted by SIGINT / SIGTERM
(nothing written, earlier outputs unchanged).

Commands that write files write them as one transaction (``report.transaction``): the output folder is
checked and locked before any work, and always holds one complete set of one run.
"""

from __future__ import annotations

import os
import signal
import sys


def _early_exit(signum, frame):  # pragma: no cover - exercised by tests/test_faults.py
    os.write(2, f"tenure: interrupted by {signal.Signals(signum).name}; stopped, nothing written\n".encode())
    os._exit(128 + signum)


if os.path.basename(sys.argv[0] if sys.argv else "") in ("tenure", "cli.py"):
    # run as the command: a signal during the imports below ends the run with one line, not a traceback
    signal.signal(signal.SIGINT, _early_exit)
    signal.signal(signal.SIGTERM, _early_exit)

import argparse  # noqa: E402
import contextlib  # noqa: E402
import json  # noqa: E402
import math  # noqa: E402
import re  # noqa: E402
import warnings  # noqa: E402
from pathlib import Path  # noqa: E402

from . import __version__, api, interrupts  # noqa: E402
from .case import CaseError  # noqa: E402
from .interrupts import Interrupted, run_interruptible, signals_deferred  # noqa: E402
from .plan import NoPlanError  # noqa: E402
from .report import taxnote, text  # noqa: E402
from .report.files import OutputError, describe_os_error  # noqa: E402
from .textutil import did_you_mean  # noqa: E402

EXIT_BAD_INPUT = 2
EXIT_INFEASIBLE = 3
PLAN_NAMES = ("plan.json", "units.csv", "years.csv", "buy-list.csv", "report.html", "plan.xlsx")
COMPARE_NAMES = ("compare.json", "compare.csv", "report.html")
SWEEP_NAMES = ("sweep.json", "sweep.csv", "sensitivity.csv")
HEDGE_NAMES = ("hedge.json", "hedge.csv", "report.html")
FIT_NAMES = ("fitted.toml", "fit.json", "fit.html")


class UsageError(Exception):
    """A command-line value that is not allowed; printed as one line, exit 2."""


def _case(path: str):
    return api.load_case(Path(path))


def _near(value: str, allowed: list[str]) -> str:
    return did_you_mean(value, allowed)


def _warn_block(case) -> list:
    from .plausibility import case_warnings

    found = case_warnings(case)
    if found:
        print()
        for w in found:
            print(f"warning: {w}")
    return found


def _warn(case) -> list:
    """Print the plausibility warnings of a case (stdout: they are findings, not failures); returns them."""
    from .plausibility import case_warnings

    found = case_warnings(case)
    for w in found:
        print(f"warning: {w}")
    return found


def _seconds(value: float) -> float:
    if not (math.isfinite(value) and 0 < value <= 1e6):
        raise UsageError(f"--time-limit {value!r}: must be a number of seconds in (0, 1e6], e.g. 120")
    return value


_CLUSTER = re.compile(r"^(?:(?:tcp|tls|inproc|ucx|ws|wss)://)?[A-Za-z0-9_.\-\[\]:]+:\d{1,5}$")


def _cluster(address: str | None) -> str | None:
    if address is not None and not _CLUSTER.match(address):
        raise UsageError(f"--cluster {address!r}: not a scheduler address; give e.g. tcp://scheduler-host:8786")
    return address


def _output(out: str | None, command: str, names: tuple[str, ...]):
    """The output transaction of ``--out`` (checked and locked now), or a no-op when nothing is written."""
    if out is None:
        return contextlib.nullcontext(None)
    from .report.transaction import OutputFolder, check_out

    check_out(Path(out), names)
    return OutputFolder(Path(out), command, names)


_COMMITTED: list = []  # output sets switched in by this process (an interrupt after that says so)


def _commit(tx, meta: dict) -> list[Path]:
    with signals_deferred():
        paths = tx.commit(meta)
        _COMMITTED.append(tx.run_id)
        return paths


# ---------------------------------------------------------------------------
def cmd_check(args) -> int:
    from .checkall import check_everything
    from .fleet.precheck import forced_over_caps

    case = _case(args.case)
    check_everything(case)
    print(text.case_summary(case))
    found = _warn_block(case)
    over = forced_over_caps(case)
    if over:
        print("\ncase is valid as input, but no plan can fit its caps and limits (exit 3):")
        print("\n".join("  " + f.describe() for f in over))
        return 3
    print("\ncase is valid (the warnings above do not stop a run)." if found else "\ncase is valid.")
    return 0


def cmd_life(args) -> int:
    case = _case(args.case)
    ids = [t.id for t in case.types]
    if args.type is not None and args.type not in ids:
        raise UsageError(f"--type {args.type!r}: no such asset type in {case.source}{_near(args.type, ids)} "
                         f"(types: {', '.join(ids)})")
    if not (0 <= args.tolerance < 1):
        raise UsageError(f"--tolerance {args.tolerance!r}: must be a fraction in [0, 1), e.g. 0.02")
    year = case.study.start_year if args.year is None else args.year
    if not (1900 <= year <= 2300):
        raise UsageError(f"--year {year}: must be a calendar year")
    if args.compare_tax:
        chosen = [case.type(args.type)] if args.type else [t for t in case.types if t.buyable(year)] or list(case.types)
        return _life_compare_tax(case, chosen, year, args)
    tax_rate = case.study.tax_rate
    tables = api.life_tables(case, args.type, year, args.tolerance)
    chosen = [case.type(lt.type) for lt in tables]
    rebuilt = _rebuild_lives(case, chosen, year, args.usage)
    if args.json:
        dicts = [dict(lt.to_dict(), **({"usage_overhaul": rebuilt[lt.type].to_dict()} if lt.type in rebuilt else {}))
                 for lt in tables]
        payload = dicts[0] if len(dicts) == 1 else dicts
        from .report.files import dumps

        print(dumps(payload))
        return 0
    for j, lt in enumerate(tables):
        t = case.type(lt.type)
        note = "" if t.buyable(year) else "  (not buyable that year)"
        if j:
            print()
        if tax_rate is not None:
            print(taxnote.life_text_after_tax(lt, f"After-tax economic life of {lt.type} ({t.class_}), bought "
                                                  f"{year}, rate {case.study.discount_rate:.2%}, tax "
                                                  f"{tax_rate:.1%}, {taxnote.depreciation_label(t)}{note}"))
            continue
        print(text.life_text(lt, f"Economic life of {lt.type} ({t.class_}), bought {year}, "
                                 f"rate {case.study.discount_rate:.2%}{_rate_note(case)}{note}"))
        if lt.type in rebuilt:
            from .report.overhauls import rebuild_text

            print(rebuild_text(rebuilt[lt.type]))
    return 0


def _rate_note(case) -> str:
    """How a real rate was derived from a nominal one (Fisher relation), for printing."""
    s = case.study
    if s.rate_basis != "nominal":
        return ""
    return f" real = (1 + {s.nominal_rate:.2%} nominal)/(1 + {s.inflation:.2%} inflation) − 1"


def _usage_arg(value) -> float | None:
    if value is not None and not (value > 0):
        raise UsageError(f"--usage {value!r}: must be a yearly usage > 0 (km, hours, … per year)")
    return value


def _rebuild_lives(case, chosen, year: int, usage) -> dict:
    """EAC with and without the overhaul at ``usage`` (``--usage``) for the types that use either."""
    from .rebuild import rebuild_life

    usage = _usage_arg(usage)
    out = {}
    for t in chosen:
        if usage is not None and t.usage_reference is None:
            raise UsageError(f"--usage {usage:g}: type {t.id!r} has no usage_reference in {case.source}")
        if usage is not None or t.overhaul is not None:
            out[t.id] = rebuild_life(t, case.study.discount_rate, case.study.start_year, year, usage)
    return out




def cmd_fit(args) -> int:
    import datetime as _dt

    from .fit import fit_case, price_level, writers

    output = _output(args.out, "fit", FIT_NAMES)
    case = _case(args.case)
    if args.index and args.inflation is not None:
        raise UsageError("give either --index FILE or --inflation R, not both")
    if args.inflation is not None and not (-0.5 < args.inflation < 1):
        raise UsageError(f"--inflation {args.inflation!r}: must be a rate per year in (-0.5, 1), e.g. 0.025")
    level = price_level(case, index=args.index, inflation=args.inflation)
    result = fit_case(case, args.costs, sales=args.sales, units=args.units, level=level, intervals=args.intervals)
    out = Path(args.out)
    from .case import read_document

    doc = read_document(case.source)
    try:
        toml = writers.fitted_toml(Path(case.source).read_text(encoding="utf-8"), doc, result, case, out,
                                   args.uncertain)
    except writers.PlacementError as exc:
        raise UsageError(f"{case.source}: cannot write fitted.toml: {exc}") from None
    stamp = _dt.datetime.now(_dt.timezone.utc).strftime("%Y-%m-%d %H:%M UTC")
    files = {"fitted.toml": toml.encode(), "fit.json": writers.fit_json(result).encode(),
             "fit.html": writers.fit_html(result, case, stamp).encode()}
    with output as tx:
        for name, data in files.items():
            (tx.staging / name).write_bytes(data)
        _commit(tx, {"case": case.source})
    print(writers.summary(result, str(out), list(files)))
    return 0


def _life_compare_tax(case, chosen, year, args) -> int:
    """``tenure life --compare-tax``: before- and after-tax EAC tables side by side."""
    from .life import life_table

    s = case.study
    if s.tax_rate is None:
        raise UsageError(f"--compare-tax: {case.source} has no [study] tax_rate, so there is no after-tax "
                         "analysis to compare (add tax_rate and a depreciation method per type)")
    pairs = [(life_table(t, s.discount_rate, s.start_year, year, args.tolerance, carbon_price=s.carbon_price),
              life_table(t, s.discount_rate, s.start_year, year, args.tolerance, tax_rate=s.tax_rate,
                         carbon_price=s.carbon_price))
             for t in chosen]
    if args.json:
        print(json.dumps([{"before_tax": b.to_dict(), "after_tax": a.to_dict()} for b, a in pairs], indent=2))
        return 0
    for j, (b, a) in enumerate(pairs):
        t = case.type(a.type)
        if j:
            print()
        print(taxnote.life_compare_text(b, a, f"Economic life of {a.type} ({t.class_}), bought {year}, rate "
                                              f"{s.discount_rate:.2%}: before tax and after tax at "
                                              f"{s.tax_rate:.1%} ({taxnote.depreciation_label(t)})"))
    return 0


def cmd_plan(args) -> int:
    from .report import documents
    from .report.tables import write_plan

    _seconds(args.time_limit)
    if not (0 <= args.gap < 1):
        raise UsageError(f"--gap {args.gap!r}: must be a fraction in [0, 1), e.g. 0.005")
    if args.list_years < 1:
        raise UsageError(f"--list-years {args.list_years!r}: must be a whole number of planning years ≥ 1")
    output = _output(args.out, "plan", PLAN_NAMES)
    case = _case(args.case)
    by = _by_column(case, args.by)
    group = by if by is not None else case.group_by
    warnings = _warn(case)
    with output as tx:
        plan = run_interruptible(api.solve, case, solver=args.solver, time_limit=args.time_limit, gap=args.gap,
                                 progress=not args.quiet)
        write_plan(plan, tx.staging, run_id=tx.run_id, list_years=args.list_years, group_by=group)
        documents.write_all(plan, case, tx.staging, run_id=tx.run_id, warnings=warnings, list_years=args.list_years,
                            by=by, progress=not args.quiet)
        written = _commit(tx, {"case": case.source, "status": plan.status})
    print(text.plan_summary(plan, case, str(args.out), [p.name for p in written]))
    print(f"run id {tx.run_id}")
    return EXIT_INFEASIBLE if plan.status in ("infeasible", "unsolved") else 0


def _by_column(case, by: str | None) -> str | None:
    """``--by COLUMN`` as a kept inventory column (matched like headers), or None."""
    if by is None:
        return None
    from .tabular import header_key

    kept = list(case.attribute_names)
    if header_key(by) not in kept:
        raise UsageError(f"--by {by!r}: not a kept column of the inventory{_near(header_key(by), kept)} "
                         f"(kept columns: {', '.join(kept) if kept else 'none'})")
    return header_key(by)


def cmd_policy(args) -> int:
    case = _case(args.case)
    classes = list(case.classes)
    if args.class_ not in classes:
        raise UsageError(f"--class {args.class_!r}: no such class in {case.source}{_near(args.class_, classes)} "
                         f"(classes: {', '.join(classes)})")
    ids = [t.id for t in case.types_of(args.class_)]
    if args.type is not None and args.type not in ids:
        raise UsageError(f"--type {args.type!r}: not a type of class {args.class_!r}{_near(args.type, ids)} "
                         f"(types: {', '.join(ids)})")
    usage = _usage_arg(args.usage)
    if usage is not None:
        from .derived import build_derived_graph

        noref = [t.id for t in case.types_of(args.class_) if t.usage_reference is None]
        if noref:
            raise UsageError(f"--usage {usage:g}: type(s) {', '.join(noref)} of class {args.class_!r} have no "
                             f"usage_reference in {case.source}")
        from . import chain

        g = build_derived_graph(case, args.class_, usages=(usage,))
        sol = chain.backward(g)
    else:
        sol = api.policy(case, args.class_)
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


def parse_vary(text: str):
    """``--vary PATH=LOW:HIGH:STEPS`` → :class:`tenure.scenarios.Axis`; ValueError naming the option otherwise."""
    from .scenarios import axis_from_text

    try:
        return axis_from_text(text)
    except ValueError as exc:
        raise ValueError(f"--vary {exc}") from None



def cmd_compare(args) -> int:
    from . import scenarios as sc
    from .parallel import ClusterError
    from .report import compare as report_compare

    _seconds(args.time_limit)
    _cluster(args.cluster)
    output = _output(args.out, "compare", COMPARE_NAMES)
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
    with output as tx:
        try:
            doc = run_interruptible(sc.compare, case, chosen, options=options, workers=args.workers,
                                    cluster=args.cluster, progress=not args.quiet, commit_years=args.commit_years)
        except ClusterError as exc:
            raise UsageError(f"--cluster {args.cluster}: {exc}") from None
        if tx is not None:
            report_compare.write_compare(doc, case, tx.staging, run_id=tx.run_id)
            paths = _commit(tx, {"case": case.source})
    print(report_compare.compare_text(doc))
    if tx is not None:
        print(f"\nwritten to {args.out}/: " + ", ".join(p.name for p in paths) + f" (run id {tx.run_id})")
    print(text.CAUTION)
    return EXIT_INFEASIBLE if doc.base.status == "infeasible" else 0


def cmd_sweep(args) -> int:
    from . import scenarios as sc
    from .parallel import ClusterError
    from .report import sweep as report_sweep

    _seconds(args.time_limit)
    _cluster(args.cluster)
    output = _output(args.out, "sweep", SWEEP_NAMES)
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
    with output as tx:
        try:
            axes = [parse_vary(v) for v in args.vary or []]
            doc = run_interruptible(sc.sweep, case, axes=axes, samples=args.samples, seed=args.seed,
                                    uncertain=uncertain, options=options, workers=args.workers,
                                    cluster=args.cluster, progress=not args.quiet)
        except ValueError as exc:
            raise UsageError(str(exc)) from None
        except ClusterError as exc:
            raise UsageError(f"--cluster {args.cluster}: {exc}") from None
        if tx is not None:
            report_sweep.write_sweep(doc, tx.staging, run_id=tx.run_id)
            paths = _commit(tx, {"case": case.source})
    print(report_sweep.sweep_text(doc))
    if tx is not None:
        print(f"\nwritten to {args.out}/: " + ", ".join(p.name for p in paths) + f" (run id {tx.run_id})")
    print(text.CAUTION)
    return 0


def cmd_hedge(args) -> int:
    from . import scenarios as sc
    from .hedge import hedge
    from .parallel import ClusterError
    from .report import hedge as report_hedge

    _seconds(args.time_limit)
    _cluster(args.cluster)
    if not args.out:
        raise UsageError("--out DIR is required: the folder for hedge.json, hedge.csv and report.html")
    output = _output(args.out, "hedge", HEDGE_NAMES)
    case = _case(args.case)
    wanted = [w.strip() for item in (args.scenario or []) for w in item.split(",") if w.strip()]
    with output as tx:
        try:
            options = run_options(args.solver, args.time_limit, args.gap, args.workers)
            chosen = sc.select_scenarios(case, wanted)
            h = run_interruptible(hedge, case, chosen, commit_years=args.commit_years, objective=args.objective,
                                  method=args.method, options=options, workers=args.workers, cluster=args.cluster)
        except ValueError as exc:
            raise UsageError(str(exc)) from None
        except ClusterError as exc:
            raise UsageError(f"--cluster {args.cluster}: {exc}") from None
        report_hedge.write_hedge(h, case, tx.staging, run_id=tx.run_id)
        paths = _commit(tx, {"case": case.source})
    print(report_hedge.hedge_text(h))
    print(f"\nwritten to {args.out}/: " + ", ".join(p.name for p in paths) + f" (run id {tx.run_id})")
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
    c.add_argument("--compare-tax", action="store_true",
                   help="show the after-tax EAC beside the before-tax one (a case with [study] tax_rate)")
    c.add_argument("--usage", type=float, help="yearly usage of the job (km, hours, …): EAC with and without overhaul")
    c.set_defaults(func=cmd_life)

    c = sub.add_parser("fit", help="fit O&M and market-value curves from work-order, fuel and sale records")
    c.add_argument("case")
    c.add_argument("--costs", action="append", required=True, metavar="FILE",
                   help="cost records unit,date|year,amount[,kind] (CSV or .xlsx; repeat for several files)")
    c.add_argument("--sales", metavar="FILE", help="sale records type|unit,date|year,price[,age]")
    c.add_argument("--units", metavar="FILE", help="units id,type,in_service[,out_of_service] (e.g. units sold)")
    c.add_argument("--index", metavar="FILE", help="price index year,index: amounts to constant start-year money")
    c.add_argument("--inflation", type=float, metavar="R", help="constant inflation rate per year instead of --index")
    c.add_argument("--intervals", choices=("ols", "bootstrap"), default="ols",
                   help="standard errors and 90 %% intervals: OLS formulae, or a bootstrap over units (ols)")
    c.add_argument("--uncertain", action="store_true", help="add [[uncertain]] blocks of the fitted intervals")
    c.add_argument("--out", required=True, help="folder for fitted.toml, fit.json and fit.html")
    c.set_defaults(func=cmd_fit)

    c = sub.add_parser("plan", help="least-cost renewal plan of the whole fleet (capped when the case has a budget)")
    c.add_argument("case")
    c.add_argument("--out", required=True, help="folder for plan.json, units.csv, years.csv and the report")
    c.add_argument("--solver", choices=("highs", "cbc"), default="highs", help="integer-program solver (highs)")
    c.add_argument("--time-limit", type=float, default=120.0, help="seconds for a capped solve (120)")
    c.add_argument("--gap", type=float, default=1e-4, help="relative optimality gap to stop at; optimal means proven within it (0.0001)")
    c.add_argument("--quiet", action="store_true", help="no progress line")
    c.add_argument("--list-years", type=int, default=2, metavar="N",
                   help="planning years covered by buy-list.csv and the spreadsheet's buy list (2)")
    c.add_argument("--by", metavar="COLUMN",
                   help="kept inventory column (e.g. department) to group the buy list and summaries by "
                        "(default: [fleet] group_by)")
    c.set_defaults(func=cmd_plan)

    c = sub.add_parser("policy", help="optimal keep/replace action by year and age for one class (uncapped)")
    c.add_argument("case")
    c.add_argument("--class", dest="class_", required=True, help="class name")
    c.add_argument("--type", help="held type (default: every type of the class)")
    c.add_argument("--usage", type=float, help="yearly usage of the job (km, hours, …; default: the reference)")
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
        c.add_argument("--gap", type=float, default=1e-4, help="relative optimality gap to stop at; optimal means proven within it (0.0001)")
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
    saved = {s: signal.getsignal(s) for s in (signal.SIGINT, signal.SIGTERM)}
    _COMMITTED.clear()
    interrupts.install()
    try:
        with warnings.catch_warnings():
            # the numeric limits keep every figure finite; a floating-point notice is never the user's business
            warnings.filterwarnings("ignore", category=RuntimeWarning, message=".*(overflow|invalid value|divide)")
            return _run(args)
    finally:
        with contextlib.suppress(ValueError):  # not the main thread: nothing was installed
            for s, handler in saved.items():
                signal.signal(s, handler)


def _run(args) -> int:
    """Run the command; every failure becomes one message and an exit code, never a traceback."""
    try:
        return int(args.func(args) or 0)
    except (Interrupted, KeyboardInterrupt) as exc:
        code = exc.code if isinstance(exc, Interrupted) else 128 + signal.SIGINT
        name = signal.Signals(code - 128).name
        done = (f"the outputs of run {_COMMITTED[-1]} had already been written whole" if _COMMITTED
                else "nothing written (the output folder keeps its earlier set)")
        print(f"tenure {args.command}: interrupted by {name}; stopped, {done}", file=sys.stderr)
        if interrupts.busy():
            interrupts.hard_exit(code)
        return code
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
    except OutputError as exc:
        print(f"tenure {args.command}: cannot write the outputs: {exc}", file=sys.stderr)
        return EXIT_BAD_INPUT
    except OSError as exc:
        print(f"tenure {args.command}: {describe_os_error(exc)}", file=sys.stderr)
        return EXIT_BAD_INPUT
    except MemoryError:
        print(f"tenure {args.command}: out of memory; the case is too large for this machine "
              "(see the size limits in docs/case-format.md)", file=sys.stderr)
        return EXIT_BAD_INPUT


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
