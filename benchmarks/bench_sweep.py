"""Benchmark: a Monte Carlo sweep of the demo case with 1 and with 2 local worker processes.

    python benchmarks/bench_sweep.py                       # capped demo, 200 draws, 3 runs each
    python benchmarks/bench_sweep.py --case cases/uncapped-demo.toml
    python benchmarks/bench_sweep.py --draws 50 --runs 1 --gap 0.005

The demo case has no ``[[uncertain]]`` blocks, so the inputs below are used (those whose
paths exist in the case): the battery truck's and bus's price trend, the battery truck's
first year on sale, and the discount rate.  Every run checks that the sweep document is
identical whatever the number of workers.  Prints a markdown table (machine, date, median
wall time of the runs).  If the fleet integer program is not installed the uncapped demo is
used instead, and the table says so.
"""

from __future__ import annotations

import argparse
import contextlib
import datetime as dt
import os
import platform
import statistics
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT / "src"))

from benchinfo import cpu_model
from tenure import scenarios as sc  # noqa: E402
from tenure.case import load_case  # noqa: E402
from tenure.model import Uncertain  # noqa: E402

INPUTS = (
    Uncertain("asset_type.rt-bev.price_change", "triangular", -0.07, -0.02, mode=-0.045),
    Uncertain("asset_type.bus-bev.price_change", "triangular", -0.06, -0.01, mode=-0.035),
    Uncertain("asset_type.rt-bev.buy_from", "uniform", 2029, 2036),
    Uncertain("study.discount_rate", "normal", 0.03, 0.07, mean=0.05, sd=0.01),
)


def machine(load: float | None = None) -> str:
    cpu = cpu_model()
    extra = "" if load is None else f" — 1-minute load average {load:.1f} when the benchmark started"
    return f"{cpu}, {os.cpu_count()} logical CPUs, Python {platform.python_version()}, {platform.system()}{extra}"


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--case", default=str(ROOT / "cases" / "quillmere-fleet.toml"))
    ap.add_argument("--draws", type=int, default=200)
    ap.add_argument("--runs", type=int, default=3)
    ap.add_argument("--workers", type=int, nargs="+", default=[1, 2])
    ap.add_argument("--seed", type=int, default=2027)
    ap.add_argument("--gap", type=float, default=0.02,
                    help="gap of the capped solves (0.02: the first integer plan is usually enough)")
    ap.add_argument("--time-limit", type=float, default=120.0)
    args = ap.parse_args(argv)
    load = None
    with contextlib.suppress(OSError, AttributeError):
        load = os.getloadavg()[0]
    started = dt.datetime.now().astimezone()

    note = ""
    case_path = Path(args.case)
    try:
        import tenure.fleet  # noqa: F401
    except ImportError:
        case_path = ROOT / "cases" / "uncapped-demo.toml"
        note = " (tenure.fleet is not installed: the uncapped demo is used)"
    case = load_case(case_path)
    valid = set(sc.valid_paths(case.raw))
    unc = list(case.uncertain) or [u for u in INPUTS if u.path in valid]
    options = {"gap": args.gap, "time_limit": args.time_limit}
    solves = 1 + args.draws + 2 * len(unc)

    times: dict[int, list[float]] = {}
    reference = None
    for w in args.workers:
        times[w] = []
        for _ in range(args.runs):
            t0 = time.perf_counter()
            doc = sc.sweep(case, samples=args.draws, seed=args.seed, uncertain=unc, options=options, workers=w)
            times[w].append(time.perf_counter() - t0)
            if reference is None:
                reference = doc
            elif doc != reference:
                print(f"RESULTS DIFFER with {w} workers", file=sys.stderr)
                return 1
    base = statistics.median(times[args.workers[0]])
    kind = "capped, gap %g" % args.gap if case.capped else "uncapped (recursion)"
    print(f"### Sweep benchmark — {case_path.name}{note}")
    print()
    print(f"- machine: {machine(load)}")
    print(f"- date: {started.strftime('%Y-%m-%d %H:%M %Z')}")
    print(f"- sweep: {args.draws} Monte Carlo draws, seed {args.seed}, {len(unc)} uncertain inputs, "
          f"{solves} solves per run ({kind}); median of {args.runs} run(s)")
    print(f"- results identical for every worker count: yes (P50 {reference.present_cost.quantiles['50']:,.0f})")
    print()
    print("| workers | median wall time [s] | fastest [s] | solves per second | speed-up |")
    print("|---:|---:|---:|---:|---:|")
    for w in args.workers:
        med = statistics.median(times[w])
        print(f"| {w} | {med:.1f} | {min(times[w]):.1f} | {solves / med:.1f} | {base / med:.2f}× |")
    return 0


if __name__ == "__main__":
    sys.exit(main())
