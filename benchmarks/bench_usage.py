"""Benchmark of usage levels and the mid-life overhaul (tenure.derived).

Run:  python benchmarks/bench_usage.py [--repeat 50] [--no-write]

Prints (and writes to docs/benchmarks-usage.md) a markdown table of:

(a) the chain of ``bench_chain.py`` (one class, 30 years × max age 25 × 4 types), with and
    without an overhaul option on every type allowed at exactly one age (so every type gains one
    overhauled row: the state count doubles): the median time of ``chain.build_class_graph`` and of
    ``chain.backward``;
(b) the 1,000-unit capped fleet of ``bench_fleet.py`` (20 classes, seed 7, cap at the uncapped
    plan's average yearly capital) with ``usage_reference``/``usage_max`` on every type and every
    unit doing one of 5 usage levels of its class (seeded): time, status and proven gap of
    ``tenure.fleet.solve_capped`` with a 60 s limit and a 0.5 % stopping gap.

Targets: the recursion under 5 ms per chain with the overhaul on; the 1,000-unit fleet with 5 usage
levels per class within a proven 0.5 % gap in 60 s. Seeds are fixed.
"""

from __future__ import annotations

import os

for _v in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_v, "1")

import argparse
import copy
import datetime as _dt
import platform
import statistics
import sys
import time
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))

from bench_chain import single_chain_case  # noqa: E402
from benchinfo import cpu_model  # noqa: E402
from fleetgen import capped_case, invented_fleet  # noqa: E402
from tenure import chain  # noqa: E402
from tenure.case import build_case  # noqa: E402
from tenure.fleet import solve_capped  # noqa: E402

REPO = HERE.parent
LEVELS = (0.6, 0.8, 1.0, 1.3, 1.6)  # usage levels as fractions of the reference


def _median_ms(f, repeat: int) -> float:
    ts = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        f()
        ts.append(time.perf_counter() - t0)
    return statistics.median(ts) * 1e3


def chain_rows(repeat: int) -> list[dict]:
    base = single_chain_case()
    doc = copy.deepcopy(dict(base.raw))
    for t in doc["asset_type"]:
        a = max(2, t["max_age"] // 2)
        t["overhaul"] = {"cost": round(t["price"] * 0.3, -2), "ages": [a, a], "om_age_after": 2, "adds_years": 3}
    with_ov = build_case(doc)
    rows = []
    for name, case in (("overhaul off", base), ("overhaul on", with_ov)):
        g = chain.build_class_graph(case, "c")
        states = int(g.valid.sum())
        rows.append({"name": name, "rows": len(g.types), "states": states * (g.horizon + 1),
                     "build": _median_ms(lambda: chain.build_class_graph(case, "c"), max(5, repeat // 5)),
                     "backward": _median_ms(lambda: chain.backward(g), repeat)})
    return rows


def usage_fleet(seed: int = 7) -> dict:
    """The 1,000-unit capped fleet with usage on every type and one of 5 usage levels per unit."""
    doc = invented_fleet(1000, 20, seed=seed)
    rng = np.random.default_rng(seed + 100)
    umax = {}
    for t in doc["asset_type"]:
        t["usage_reference"] = 20000
        t["usage_max"] = umax[t["id"]] = 20000 * t["max_age"] * 1.3  # binds at the two highest levels
    for u in doc["unit"]:
        u["usage"] = 20000 * LEVELS[int(rng.integers(len(LEVELS)))]
        # a unit past its usage-limited max age would be an invalid row: such units are one year younger
        m = int(umax[u["type"]] / u["usage"] + 1e-9)
        if u["age"] > m:
            u["age"] = m - 1
    return capped_case(doc)


def fleet_row(time_limit: float) -> dict:
    doc = usage_fleet()
    case = build_case(doc)
    t0 = time.perf_counter()
    plan = solve_capped(case, time_limit=time_limit, gap=0.005)
    wall = time.perf_counter() - t0
    levels = {c: len({u.usage for u in case.units_of(c)}) for c in case.classes}
    return {"status": plan.status, "gap": plan.gap, "wall": wall, "cost": plan.present_cost,
            "levels": sorted(set(levels.values())), "method": plan.provenance.method if plan.provenance else "",
            "first": plan.stats.get("first_plan_seconds"), "units": case.unit_count}


def report(chains: list[dict], fl: dict) -> str:
    today = _dt.date.today().isoformat()
    lines = [f"Machine: {cpu_model()}, {os.cpu_count()} cores, Python {platform.python_version()}, "
             f"numpy {np.__version__}; {today}.", "",
             "| chain (30 years × max age 25 × 4 types) | state rows | states | build [ms] | recursion [ms] |",
             "| --- | --- | --- | --- | --- |"]
    for r in chains:
        lines.append(f"| {r['name']} | {r['rows']} | {r['states']:,} | {r['build']:.2f} | {r['backward']:.3f} |")
    lines += ["", "| fleet | usage levels per class | status | proven gap | time [s] | method |",
              "| --- | --- | --- | --- | --- | --- |",
              f"| {fl['units']:,} units / 20 classes (seed 7), capped | {', '.join(map(str, fl['levels']))} "
              f"| {fl['status']} | {fl['gap']:.3%} | {fl['wall']:.1f} | {fl['method']} |"]
    return "\n".join(lines) + "\n"


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeat", type=int, default=50)
    ap.add_argument("--time-limit", type=float, default=60.0)
    ap.add_argument("--no-write", action="store_true")
    ap.add_argument("--out", default=str(REPO / "docs" / "benchmarks-usage.md"))
    args = ap.parse_args(argv)
    cpus = None
    try:  # the chain on one core, as in bench_chain.py; the fleet solve on all
        cpus = os.sched_getaffinity(0)
        os.sched_setaffinity(0, {min(cpus)})
    except (AttributeError, OSError):
        pass
    chains = chain_rows(args.repeat)
    if cpus is not None:
        os.sched_setaffinity(0, cpus)
    fl = fleet_row(args.time_limit)
    text = report(chains, fl)
    print(text)
    if not args.no_write:
        head = ("# Benchmarks: usage levels and the overhaul\n\n"
                "`python benchmarks/bench_usage.py` (see its docstring for what is measured). Targets: the "
                "recursion under 5 ms per chain with the overhaul on (state count doubled); the 1,000-unit "
                "capped fleet with 5 usage levels per class within a proven 0.5 % gap in 60 s.\n\n")
        Path(args.out).write_text(head + text, encoding="utf-8")
    return 0


if __name__ == "__main__":
    sys.exit(main())
