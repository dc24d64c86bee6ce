"""Commands that solve a case many times: ``compare``, ``sweep`` and ``hedge``."""

from __future__ import annotations


from ..interrupts import run_interruptible
from ..report import text
from .common import (COMPARE_NAMES, EXIT_INFEASIBLE, HEDGE_NAMES, SWEEP_NAMES, UsageError, _case, _cluster, _commit,
                     _output, _seconds, parse_vary, run_options)


def cmd_compare(args) -> int:
    from .. import scenarios as sc
    from ..parallel import ClusterError
    from ..report import compare as report_compare

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
    from .. import scenarios as sc
    from ..parallel import ClusterError
    from ..report import sweep as report_sweep

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
    from .. import scenarios as sc
    from ..hedge import hedge
    from ..parallel import ClusterError
    from ..report import hedge as report_hedge

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
        report_hedge.write_hedge(h, case, tx.staging)
        paths = _commit(tx, {"case": case.source})
    print(report_hedge.hedge_text(h))
    print(f"\nwritten to {args.out}/: " + ", ".join(p.name for p in paths) + f" (run id {tx.run_id})")
    print(text.CAUTION)
    return 0
