"""Hedge benchmark: the 1,000-unit benchmark fleet over 5 scenarios, 2 committed years.

The fleet is ``capped_case(invented_fleet(1000, 20, seed=7))`` (as in bench_fleet.py), with four
invented scenarios beside the base case: new types two years early, a higher and a lower real
discount rate, and a tighter cap.  For each method (the extensive form and the Lagrangian
decomposition) the script reports the stacked program's size, the wall time of the whole
``hedge()`` call (own optima, commitment, re-plans), the proven gap and the expected cost.  A
smaller fleet (``--sizes``) shows where the extensive form stops being the faster method.

    python benchmarks/bench_hedge.py [--sizes 200,1000] [--time-limit 300] [--no-write]
"""

from __future__ import annotations

import argparse
import datetime as _dt
import os
import sys
import time
from pathlib import Path

REPO = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(Path(__file__).resolve().parent))

from benchinfo import cpu_model  # noqa: E402
from fleetgen import capped_case, invented_fleet  # noqa: E402

from tenure.case import build_case  # noqa: E402
from tenure.fleet.program import build_program  # noqa: E402
from tenure.hedge import hedge  # noqa: E402
from tenure.hedge.stage import stages  # noqa: E402

CLASSES = {200: 5, 1000: 20}


def scenario_doc(units: int) -> dict:
    doc = capped_case(invented_fleet(units, CLASSES.get(units, max(units // 50, 1)), seed=7))
    new = [t for t in doc["asset_type"] if "buy_from" in t]
    cap = doc["budget"]["cap"]
    doc["scenario"] = [
        {"id": "new-early", "note": "new types two years early",
         "set": {f"asset_type.{t['id']}.buy_from": t["buy_from"] - 2 for t in new}},
        {"id": "high-rate", "note": "real rate 8 %", "set": {"study.discount_rate": 0.08}},
        {"id": "low-rate", "note": "real rate 3 %", "set": {"study.discount_rate": 0.03}},
        {"id": "tight-cap", "note": "cap 10 % higher", "set": {"budget.cap": round(cap * 1.1, -3)}},
    ]
    return doc


def run(units: int, method: str, time_limit: float, gap: float, max_iter: int) -> dict:
    case = build_case(scenario_doc(units))
    cols = sum(build_program(st.case).n_cols for st in stages(case, list(case.scenarios)))
    t0 = time.perf_counter()
    h = hedge(case, list(case.scenarios), commit_years=2, method=method,
              options={"time_limit": time_limit, "gap": gap}, max_iter=max_iter)
    return {"units": units, "method": h.method, "columns": cols, "seconds": time.perf_counter() - t0,
            "gap": h.gap, "expected": h.expected_cost, "evpi": h.evpi, "vss": h.vss, "buys": len(h.buys)}


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--sizes", default="200,1000")
    ap.add_argument("--time-limit", type=float, default=300.0, help="seconds per solve (300)")
    ap.add_argument("--gap", type=float, default=0.005)
    ap.add_argument("--methods", default="extensive,lagrangian")
    ap.add_argument("--max-iter", type=int, default=20, help="Lagrangian iterations at most (20)")
    ap.add_argument("--no-write", action="store_true")
    ap.add_argument("--out", default=str(REPO / "docs" / "benchmarks-hedge.md"))
    args = ap.parse_args(argv)
    rows = []
    for n in [int(s) for s in args.sizes.split(",")]:
        for method in args.methods.split(","):
            print(f"== {n} units, {method}", file=sys.stderr, flush=True)
            rows.append(run(n, method, args.time_limit, args.gap, args.max_iter))
            print(f"   {rows[-1]}", file=sys.stderr, flush=True)
    cores = len(os.sched_getaffinity(0))
    head = (f"Machine: {cpu_model()}, {cores} cores (shared with other jobs); {_dt.date.today().isoformat()}; "
            f"`python benchmarks/bench_hedge.py --sizes {args.sizes} --methods {args.methods} "
            f"--time-limit {args.time_limit:g} --gap {args.gap:g} --max-iter {args.max_iter}`\n\n")
    table = ("| units | method | stacked columns | seconds | gap | expected cost | EVPI | VSS | buys committed |\n"
             "| ---: | --- | ---: | ---: | ---: | ---: | ---: | ---: | ---: |\n")
    for r in rows:
        vss = "—" if r["vss"] is None else f"{r['vss']:,.0f}"
        table += (f"| {r['units']:,} | {r['method']} | {r['columns']:,} | {r['seconds']:.1f} | {r['gap']:.3%} | "
                  f"{r['expected']:,.0f} | {r['evpi']:,.0f} | {vss} | {r['buys']} |\n")
    print(head + table)
    if not args.no_write:
        Path(args.out).write_text("# Hedge benchmark\n\n" + __doc__.split("\n\n", 1)[1].rsplit("\n\n", 1)[0]
                                  + "\n\n## Results\n\n" + head + table, encoding="utf-8")
    return 0


if __name__ == "__main__":
    sys.exit(main())
