"""Commands on one case: ``check``, ``life``, ``fit``, ``plan`` and ``policy``."""

from __future__ import annotations

import json
from pathlib import Path

from .. import api
from ..interrupts import run_interruptible
from ..report import taxnote, text
from .common import (EXIT_INFEASIBLE, FIT_NAMES, PLAN_NAMES, UsageError, _case, _commit, _near, _output, _seconds,
                     _warn, _warn_block)


def cmd_check(args) -> int:
    from ..checkall import check_everything
    from ..fleet.precheck import forced_over_caps

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
        from ..report.files import dumps

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
        else:
            print(text.life_text(lt, f"Economic life of {lt.type} ({t.class_}), bought {year}, "
                                     f"rate {case.study.discount_rate:.2%}{_rate_note(case)}{note}"))
        if lt.type in rebuilt:
            from ..report.overhauls import rebuild_text

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
    from ..rebuild import rebuild_life

    usage = _usage_arg(usage)
    out = {}
    for t in chosen:
        if usage is not None and t.usage_reference is None:
            raise UsageError(f"--usage {usage:g}: type {t.id!r} has no usage_reference in {case.source}")
        if usage is not None or t.overhaul is not None:
            out[t.id] = rebuild_life(t, case.study.discount_rate, case.study.start_year, year, usage,
                                     tax_rate=case.study.tax_rate)
    return out



def cmd_fit(args) -> int:
    import datetime as _dt

    from ..fit import fit_case, price_level, writers

    output = _output(args.out, "fit", FIT_NAMES)
    case = _case(args.case)
    if args.index and args.inflation is not None:
        raise UsageError("give either --index FILE or --inflation R, not both")
    if args.inflation is not None and not (-0.5 < args.inflation < 1):
        raise UsageError(f"--inflation {args.inflation!r}: must be a rate per year in (-0.5, 1), e.g. 0.025")
    level = price_level(case, index=args.index, inflation=args.inflation)
    result = fit_case(case, args.costs, sales=args.sales, units=args.units, level=level, intervals=args.intervals)
    out = Path(args.out)
    from ..case import read_document

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
    from ..life import life_table

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
    from ..report import documents

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
        documents.write_plan_files(plan, case, tx.staging, run_id=tx.run_id, warnings=warnings,
                                   list_years=args.list_years, by=by, group_by=group, progress=not args.quiet)
        written = _commit(tx, {"case": case.source, "status": plan.status})
    print(text.plan_summary(plan, case, str(args.out), [p.name for p in written]))
    print(f"run id {tx.run_id}")
    return EXIT_INFEASIBLE if plan.status in ("infeasible", "unsolved") else 0



def _by_column(case, by: str | None) -> str | None:
    """``--by COLUMN`` as a kept inventory column (matched like headers), or None."""
    if by is None:
        return None
    from ..tabular import header_key

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
        from ..derived import build_derived_graph

        noref = [t.id for t in case.types_of(args.class_) if t.usage_reference is None]
        if noref:
            raise UsageError(f"--usage {usage:g}: type(s) {', '.join(noref)} of class {args.class_!r} have no "
                             f"usage_reference in {case.source}")
        from .. import chain

        g = build_derived_graph(case, args.class_, usages=(usage,))
        sol = chain.backward(g)
    else:
        sol = api.policy(case, args.class_)
    print(text.policy_text(sol, case, [args.type] if args.type else ids))
    return 0
