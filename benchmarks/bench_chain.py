"""Benchmark of the replacement-chain recursion (tenure.chain / tenure.solve).

Run:  python benchmarks/bench_chain.py [--quick]

Prints a markdown table of:

(a) one class chain, 30 years × max age 25 × 4 types: the median time of
    ``chain.build_class_graph`` and of ``chain.backward``;
(b) an uncapped fleet of 10,000 units in 50 classes (an invented case made by a seeded
    generator): the median time of ``tenure.solve.solve_uncapped``, with a breakdown by phase;
(c) the values of chain (a) found by networkx's generic shortest path on ``chain.to_networkx``:
    ``bellman_ford_path_length`` once per starting state, and a single-source Bellman–Ford that
    finds every state's value in one call (from the END sink on the reversed graph, the graph's
    natural super-source for "cost to go"). Also, on the forward graph, a single-source run from a
    super-source joined to every starting state by zero-cost arcs (this gives only the best
    start's value). Each is checked against the recursion and set against it as a ratio.

Targets: single chain < 5 ms; 10,000-unit fleet < 2 s on one core; ≥ 20× faster than the generic
shortest path. The process is pinned to one CPU where the OS allows it. Seeds are fixed.
"""

from __future__ import annotations

import os

for _v in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_v, "1")

import argparse
import datetime as _dt
import platform
import statistics
import sys
import time

import networkx as nx
import numpy as np

from benchinfo import cpu_model
from tenure import chain
from tenure.case import build_case
from tenure.plan import assemble
from tenure.solve import build_graphs, recursion_groups, solve_uncapped

START = 2030


# ---------------------------------------------------------------------------
# invented cases (seeded)
# ---------------------------------------------------------------------------
def _type(rng: np.random.Generator, tid: str, cls: str, max_age: int, horizon: int) -> dict:
    price = float(rng.integers(20, 800) * 1000)
    kind = rng.integers(3)
    if kind == 0:
        om = {"first": float(rng.integers(2, 60) * 500), "gradient": float(rng.integers(0, 40) * 100)}
    elif kind == 1:
        om = {"first": float(rng.integers(2, 60) * 500), "growth": float(rng.uniform(0.0, 0.12))}
    else:
        om = [float(x) for x in np.cumsum(rng.integers(1000, 6000, size=max_age))]
    sk = rng.integers(3)
    if sk == 0:
        salvage = {"retain": float(rng.uniform(0.7, 0.92))}
    elif sk == 1:
        salvage = {"life": float(rng.integers(min(5, max_age), max_age + 1)), "floor": float(rng.uniform(0.0, 0.15))}
    else:
        salvage = [float(x) for x in price * np.cumprod(rng.uniform(0.75, 0.95, size=max_age))]
    t = {"id": tid, "class": cls, "price": price, "price_change": float(rng.uniform(-0.05, 0.03)),
         "max_age": int(max_age), "om": om, "om_change": float(rng.uniform(-0.02, 0.01)), "salvage": salvage}
    return t


def class_types(rng, cls: str, n_types: int, max_age: int, horizon: int, fixed_max=False) -> list[dict]:
    """``n_types`` types of a class: a legacy type (no longer sold), a current one (always sold),
    then newer ones with buy windows that open later."""
    out = []
    for j in range(n_types):
        ma = max_age if fixed_max else int(rng.integers(max(2, max_age // 2), max_age + 1))
        t = _type(rng, f"{cls}-t{j}", cls, ma, horizon)
        if j == 0 and n_types > 1:
            t["buy_until"] = START - int(rng.integers(1, 5))  # legacy: held, no longer sold
        elif j >= 2:
            t["buy_from"] = START + int(rng.integers(1, horizon // 2))
        out.append(t)
    if fixed_max:
        out[-1]["max_age"] = max_age  # the class's largest max age is exactly max_age
    return out


def single_chain_case(seed=1, horizon=30, max_age=25, n_types=4):
    rng = np.random.default_rng(seed)
    types = class_types(rng, "c", n_types, max_age, horizon, fixed_max=True)
    units = [{"id": f"u{j}", "type": t["id"], "age": a, "count": 1}
             for j, (t, a) in enumerate((t, a) for t in types for a in range(0, t["max_age"] + 1, 5))]
    return build_case({"study": {"title": "bench chain", "start_year": START, "horizon": horizon,
                                 "discount_rate": 0.05, "end_value": "salvage"},
                       "asset_type": types, "unit": units})


def fleet_case(seed=2, n_units=10_000, n_classes=50, horizon=30):
    rng = np.random.default_rng(seed)
    types, units = [], []
    per_class = np.full(n_classes, n_units // n_classes)
    per_class[: n_units - per_class.sum()] += 1
    for c in range(n_classes):
        cls = f"class{c:02d}"
        ts = class_types(rng, cls, int(rng.integers(1, 5)), int(rng.integers(6, 26)), horizon)
        types.extend(ts)
        held = [t for t in ts if "buy_from" not in t]  # inventory: types already on the market
        for j in range(int(per_class[c])):
            t = held[int(rng.integers(len(held)))]
            units.append({"id": f"{cls}-{j:04d}", "type": t["id"], "age": int(rng.integers(0, t["max_age"] + 1)),
                          "count": 1})
    case = build_case({"study": {"title": "bench fleet", "start_year": START, "horizon": horizon,
                                 "discount_rate": 0.05, "end_value": "continuing"},
                       "asset_type": types, "unit": units})
    assert case.unit_count == n_units and len(case.classes) == n_classes and not case.capped
    return case


# ---------------------------------------------------------------------------
# timing
# ---------------------------------------------------------------------------
#: (median, min) of every timed measurement, by label
TIMES: dict[str, tuple[float, float]] = {}


def median_time(fn, reps: int, label: str | None = None) -> float:
    """Median wall time of ``reps`` calls after one warm-up [s]; the minimum is kept in TIMES."""
    fn()  # warm-up
    ts = []
    for _ in range(reps):
        t0 = time.perf_counter()
        fn()
        ts.append(time.perf_counter() - t0)
    med = statistics.median(ts)
    if label:
        TIMES[label] = (med, min(ts))
    return med


def pin_one_core() -> str:
    try:
        cpu = min(os.sched_getaffinity(0))
        os.sched_setaffinity(0, {cpu})
        return f"pinned to CPU {cpu}"
    except (AttributeError, OSError):
        return "not pinned"


def fmt_ms(s: float) -> str:
    return f"{s * 1e3:.3f} ms" if s < 1 else f"{s:.3f} s"


def continuing_variant(case):
    """The same case with the "continuing" end value (capitalised chains at the horizon)."""
    raw = dict(case.raw)
    raw["study"] = {**raw["study"], "end_value": "continuing"}
    return build_case(raw)


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="fewer repetitions")
    args = ap.parse_args(argv)
    q = args.quick
    pin = pin_one_core()
    load0 = os.getloadavg() if hasattr(os, "getloadavg") else None

    # (a) one chain ------------------------------------------------------------
    case1 = single_chain_case()
    g = chain.build_class_graph(case1, "c")
    H, (T, A1) = g.horizon, g.valid.shape
    t_build = median_time(lambda: chain.build_class_graph(case1, "c"), 50 if q else 300, "build")
    t_back = median_time(lambda: chain.backward(g), 200 if q else 2000, "back")
    t_chain = t_build + t_back
    TIMES["chain"] = (t_chain, TIMES["build"][1] + TIMES["back"][1])
    sol = chain.backward(g)
    case1c = continuing_variant(case1)
    median_time(lambda: chain.build_class_graph(case1c, "c"), 20 if q else 100, "build_cont")

    # (b) fleet ----------------------------------------------------------------
    t0 = time.perf_counter()
    fleet = fleet_case()
    t_case = time.perf_counter() - t0
    reps = 3 if q else 5
    t_fleet = median_time(lambda: solve_uncapped(fleet), reps, "fleet")
    plan = solve_uncapped(fleet)
    graphs = build_graphs(fleet)
    sols = {c: chain.backward(gr) for c, gr in graphs.items()}
    groups = recursion_groups(fleet, graphs, sols)
    median_time(lambda: build_graphs(fleet), reps, "f_graphs")
    median_time(lambda: [chain.backward(gr) for gr in graphs.values()], reps, "f_back")
    median_time(lambda: recursion_groups(fleet, graphs, sols), reps, "f_groups")
    median_time(lambda: assemble(fleet, graphs, groups, status="optimal", method="recursion"), reps, "f_assemble")

    # (c) networkx on graph (a) ----------------------------------------------------
    starts = [(t, a) for t in range(T) for a in range(int(g.max_age[t]) + 1)]
    t_nxbuild = median_time(lambda: chain.to_networkx(g, starts), 3 if q else 10, "nx_build")
    G = chain.to_networkx(g, starts)

    def bf_each():
        return [nx.bellman_ford_path_length(G, (0, g.types[t], a), chain.END) for t, a in starts]

    def bf_reverse():
        return nx.single_source_bellman_ford_path_length(G.reverse(copy=False), chain.END)

    def bf_super():
        G2 = G.copy()
        for t, a in starts:
            G2.add_edge("source", (0, g.types[t], a), weight=0.0)
        return nx.single_source_bellman_ford_path_length(G2, "source")[chain.END]

    t_each = median_time(bf_each, 1 if q else 3, "nx_each")
    t_rev = median_time(bf_reverse, 3 if q else 7, "nx_rev")
    t_sup = median_time(bf_super, 3 if q else 7, "nx_sup")
    # the ratio to the single-source run is near the target, so it is also measured in interleaved
    # rounds (recursion, then networkx, round after round): both then see the same machine load
    round_ratios, round_ratios_back = [], []
    for _ in range(3 if q else 9):
        tb = median_time(lambda: chain.build_class_graph(case1, "c"), 11)
        tk = median_time(lambda: chain.backward(g), 31)
        tn = median_time(bf_reverse, 3)
        round_ratios.append(tn / (tb + tk))
        round_ratios_back.append(tn / tk)
    vals = bf_each()
    err_each = max(abs(v - sol.value[0, t, a]) for v, (t, a) in zip(vals, starts))
    dist = bf_reverse()
    err_rev = max(abs(d - sol.value[k, g.type_index(n), a]) for (k, n, a), d in
                  ((n, d) for n, d in dist.items() if n != chain.END))
    err_sup = abs(bf_super() - min(sol.value[0, t, a] for t, a in starts))
    load1 = os.getloadavg() if hasattr(os, "getloadavg") else None

    # report ---------------------------------------------------------------------
    def ok(x):
        return "met" if x else "**missed**"

    def row(mark, what, label, target="", result=""):
        med, lo = TIMES[label]
        print(f"| {mark} | {what} | {fmt_ms(med)} | {fmt_ms(lo)} | {target} | {result} |")

    def ratio(x, y):
        return x / y

    print(f"# tenure chain benchmark — {_dt.datetime.now().astimezone().isoformat(timespec='seconds')}")
    print()
    print(f"- CPU: {cpu_model()} ({pin}; {os.cpu_count()} logical CPUs on the machine)")
    if load0 is not None:
        print(f"- load average (1 min) at start / end: {load0[0]:.2f} / {load1[0]:.2f} "
              "(other processes share the machine when this is well above 0; the min column is less affected)")
    print(f"- Python {platform.python_version()} ({platform.python_implementation()}), numpy {np.__version__}, "
          f"networkx {nx.__version__}, {platform.system()} {platform.release()}")
    print(f"- chain (a): H = {H} years, T = {T} types, ages 0…{A1 - 1}, salvage end value; {G.number_of_nodes()} "
          f"nodes and {G.number_of_edges()} arcs in the networkx view ({len(starts)} starting states)")
    print(f"- fleet (b): {fleet.unit_count} units (one inventory row each), {len(fleet.classes)} classes, "
          f"{len(fleet.types)} types, H = {fleet.study.horizon}, continuing end value; {len(groups)} distinct "
          f"starting states; present cost {plan.present_cost:,.0f}; building the case took {t_case:.2f} s "
          "(not timed)")
    print()
    print("| # | measurement | median | min | target | result |")
    print("|---|---|---|---|---|---|")
    row("a", "`build_class_graph`, one chain 30 y × age 25 × 4 types", "build")
    row("a", "`backward`, same chain", "back")
    row("a", "build + backward", "chain", "< 5 ms", ok(t_chain < 5e-3))
    row("a", "`build_class_graph`, same chain with the continuing end value (for reference)", "build_cont")
    row("b", "`solve_uncapped`, 10,000 units / 50 classes", "fleet", "< 2 s", ok(t_fleet < 2.0))
    row("b", "… `build_graphs` (50 classes)", "f_graphs")
    row("b", "… `backward` × 50", "f_back")
    row("b", "… `recursion_groups` (follow + flexibility)", "f_groups")
    row("b", "… `assemble` (events, years, unit plans)", "f_assemble")
    row("c", "`to_networkx`, all starting states", "nx_build")
    r1 = ratio(t_each, t_chain)
    row("c", f"`bellman_ford_path_length` × {len(starts)} starts (max error {err_each:.1e})", "nx_each",
        "≥ 20×", f"{r1:,.0f}× build+backward — {ok(r1 >= 20)}")
    r2, r3 = statistics.median(round_ratios), statistics.median(round_ratios_back)
    row("c", f"single-source Bellman–Ford from END on the reversed graph, all states (max error {err_rev:.1e})",
        "nx_rev", "≥ 20×", f"{r2:,.1f}× build+backward — {ok(r2 >= 20)}; {r3:,.1f}× backward only — "
        f"{ok(r3 >= 20)} (medians of {len(round_ratios)} interleaved rounds; range "
        f"{min(round_ratios):.1f}–{max(round_ratios):.1f}× and {min(round_ratios_back):.1f}–"
        f"{max(round_ratios_back):.1f}×)")
    r4 = ratio(t_nxbuild + t_rev, t_back)
    print(f"| c | … the same, graph made by `to_networkx` first, vs `backward` (both from the cost tables) | "
          f"{fmt_ms(t_nxbuild + t_rev)} | | ≥ 20× | {r4:,.0f}× — {ok(r4 >= 20)} |")
    row("c", f"single-source from a super-source joined to every start, best start only (error {err_sup:.1e})",
        "nx_sup", "", f"{ratio(t_sup, t_chain):,.1f}× build+backward")
    print()
    print("Ratios are networkx median time / recursion median time on the same chain; "
          "errors are against the recursion's values [money].")
    return 0


if __name__ == "__main__":
    sys.exit(main())
