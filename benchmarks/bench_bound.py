"""How far HiGHS's proven bound gets on one fleet in a given time, with options or extra columns.

The question behind it (issue 10): is the 0.01 % target lost on the plan side or on the bound side?
For one fleet, the plain cohort program (``fleet.build_program``, every column integer, no start, 2
threads) is handed to HiGHS for ``--seconds``; the line printed gives the LP bound (the relaxation
before presolve), the best plan, HiGHS's dual bound, the gap, the nodes, and how far the bound has
come from the LP towards the best plan (*closed*). With ``--sample S`` the bound and the best plan are
also printed every S seconds (HiGHS's ``cbMipInterrupt`` callback), which is how the 600 s trajectory
in docs/benchmarks-fleet.md was taken.

``--search S`` then runs the local search (``fleet.localsearch.improve``, ``--search-size`` classes a
step, ``--search-step`` seconds a step, one class more at a local optimum) for S seconds from HiGHS's
plan, and prints its plan and its gap against HiGHS's bound. For the plan it ends with, the line
*split* divides the cost above the LP bound by the LP's prices: cost = LP bound + Σ (shadow price of a
cap × money left unspent under it) + Σ (reduced cost × units), an identity of LP duality (any LP
text; common practice).

``--option name=value`` sets a HiGHS option (repeatable). ``--counts year|cumulative`` adds one integer
column per class and year equal to the class's purchases in that year (or up to that year), with its
defining row: a candidate for better branching (common practice in lot sizing: branching on
cumulative quantities; from memory). Fleets: ``demo`` (cases/quillmere-fleet.toml) or a name of
``bench_fleet.SIZES``.

Usage::

    python benchmarks/bench_bound.py demo --seconds 20
    python benchmarks/bench_bound.py demo --seconds 20 --option mip_pscost_minreliable=2
    python benchmarks/bench_bound.py 1000 --seconds 600 --sample 60 --gap 0
    python benchmarks/bench_bound.py 1000 --seconds 600 --gap 0 --search 240 --search-size 4 --search-step 8
"""

from __future__ import annotations

import argparse
import sys
import time
from pathlib import Path

import numpy as np
import scipy.sparse as sp

HERE = Path(__file__).resolve().parent
REPO = HERE.parent
sys.path.insert(0, str(HERE))

from bench_fleet import SIZES
from fleetgen import capped_case, invented_fleet

from tenure import fleet
from tenure.fleet import localsearch
from tenure.fleet.highs import HighsBackend
from tenure.case import build_case, load_case


def load(name: str):
    if name == "demo":
        return load_case(REPO / "cases" / "quillmere-fleet.toml")
    units, classes, seed, horizon, _, _ = SIZES[name]
    return build_case(capped_case(invented_fleet(units, classes, seed=seed, horizon=horizon)))


def option_value(text: str):
    """'true'/'false', an int, a float, or the string itself."""
    if text in ("true", "false"):
        return text == "true"
    for kind in (int, float):
        try:
            return kind(text)
        except ValueError:
            pass
    return text


def count_rows(prog, how: str) -> list[np.ndarray]:
    """The purchase columns each count column adds up: per class and year, or up to the year."""
    out = []
    for ci in prog.cols.values():
        for k in range(ci.buy.shape[0]):
            block = ci.buy[k] if how == "year" else ci.buy[: k + 1]
            cols = block[block >= 0]
            if len(cols) and (how == "year" or k > 0):
                out.append(cols)
    return out


def arrays(prog, how: str | None):
    """The program's arrays, with the count columns and their rows appended when asked for."""
    A, n = prog.matrix.tocsc(), prog.n_cols
    cost, lo, up, rl, ru = prog.cost, prog.lower, prog.upper, prog.row_lower, prog.row_upper
    if how:
        rows = count_rows(prog, how)
        m = len(rows)
        ri = np.concatenate([np.full(len(c) + 1, r) for r, c in enumerate(rows)])
        cj = np.concatenate([np.append(c, n + r) for r, c in enumerate(rows)])
        vv = np.concatenate([np.append(np.ones(len(c)), -1.0) for c in rows])
        B = sp.csc_matrix((vv, (ri, cj)), shape=(m, n + m))
        A = sp.vstack([sp.hstack([A, sp.csc_matrix((A.shape[0], m))]), B], format="csc")
        cost, lo = np.append(cost, np.zeros(m)), np.append(lo, np.zeros(m))
        up, rl, ru = np.append(up, np.full(m, np.inf)), np.append(rl, np.zeros(m)), np.append(ru, np.zeros(m))
    return A, cost, lo, up, rl, ru


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("fleet", help="demo, or a name of bench_fleet.SIZES")
    ap.add_argument("--seconds", type=float, default=20.0)
    ap.add_argument("--gap", type=float, default=1e-4, help="HiGHS's mip_rel_gap (default 1e-4)")
    ap.add_argument("--option", action="append", default=[], help="a HiGHS option, name=value")
    ap.add_argument("--counts", choices=("year", "cumulative"))
    ap.add_argument("--sample", type=float, default=0.0, help="print the bound every S seconds")
    ap.add_argument("--threads", type=int, default=2, help="HiGHS's threads (fixed for the whole process)")
    ap.add_argument("--search", type=float, default=0.0, help="seconds of local search from HiGHS's plan")
    ap.add_argument("--search-size", type=int, default=2)
    ap.add_argument("--search-step", type=float, default=2.0)
    args = ap.parse_args(argv)
    if args.fleet != "demo" and args.fleet not in SIZES:
        ap.error(f"fleet {args.fleet!r}: allowed are demo, {', '.join(SIZES)}")
    if any(o.partition("=")[0] == "threads" for o in args.option):
        ap.error("threads: use --threads (HiGHS fixes its thread count at its first solve in a process)")
    case = load(args.fleet)
    prog = fleet.build_program(case)
    A, cost, lo, up, rl, ru = arrays(prog, args.counts)

    def highs(integer: bool):
        h = fleet.new_highs()
        h.setOptionValue("threads", args.threads)
        h.passModel(len(cost), len(rl), A.nnz, 1, 1, 0.0, cost, lo, up, rl, ru, A.indptr.astype(np.int32),
                    A.indices.astype(np.int32), A.data.astype(float), np.full(len(cost), int(integer), dtype=np.int32))
        return h

    relax = highs(False)
    relax.run()
    lp = relax.getInfo().objective_function_value  # the LP bound, before the MIP's presolve
    lp_sol = relax.getSolution()
    h = highs(True)
    h.setOptionValue("time_limit", args.seconds)
    h.setOptionValue("mip_rel_gap", args.gap)
    for item in args.option:
        name, _, value = item.partition("=")
        h.setOptionValue(name, option_value(value))
    t0 = time.perf_counter()
    next_sample = [args.sample]

    def on_interrupt(e):
        now = time.perf_counter() - t0
        if args.sample and now >= next_sample[0]:
            next_sample[0] += args.sample
            print(f"  {now:6.0f} s  plan {e.data_out.objective_function_value:,.0f}  "
                  f"bound {e.data_out.mip_dual_bound:,.0f}", flush=True)

    if args.sample:
        h.cbMipInterrupt.subscribe(on_interrupt)
    h.run()
    info = h.getInfo()
    bound = info.mip_dual_bound
    if info.primal_solution_status == 2:  # a feasible plan in hand
        plan = info.objective_function_value
        found = (f"plan {plan:,.0f}  bound {bound:,.0f}  gap {(plan - bound) / abs(plan):.4%}  "
                 f"closed {(bound - lp) / (plan - lp) if plan > lp else float('nan'):.0%}")
    else:
        found = f"no plan  bound {bound:,.0f}"
    print(f"{args.fleet} {args.seconds:g} s {args.threads} threads {' '.join(args.option) or 'defaults'}"
          f"{' counts=' + args.counts if args.counts else ''}: LP {lp:,.0f}  {found}  "
          f"nodes {info.mip_node_count}  wall {time.perf_counter() - t0:.1f} s")
    if info.primal_solution_status != 2:
        return 0
    x = np.asarray(h.getSolution().col_value)[: prog.n_cols]
    if args.search > 0:
        res = localsearch.improve(prog, HighsBackend, x, time.perf_counter() + args.search, size=args.search_size,
                                  step_seconds=args.search_step, grow=True)
        x = res.x
        print(f"search {args.search:g} s, {args.search_size} classes a step, {args.search_step:g} s a step: plan "
              f"{res.cost:,.0f}  gap {(res.cost - bound) / abs(res.cost):.4%} against HiGHS's bound  "
              f"({res.improvements} better plans in {res.steps} steps)")
    n, m = prog.n_cols, prog.n_rows
    caps, rows, cols = split(prog, x, np.asarray(lp_sol.col_value)[:n], np.asarray(lp_sol.row_dual)[:m],
                             np.asarray(lp_sol.col_dual)[:n])
    print(f"split: cost {prog.cost @ x:,.0f} = LP {lp:,.0f} + unspent cap {caps:,.0f} + other rows {rows:,.0f} "
          f"+ dearer arcs {cols:,.0f}")
    return 0


def split(prog, x, x_lp, row_dual, col_dual) -> tuple[float, float, float]:
    """The cost of plan ``x`` above the LP optimum ``x_lp`` [money, time 0], by LP duality
    (c = Aᵀy + d, so c·(x − x_lp) = y·A(x − x_lp) + d·(x − x_lp)): the caps' rows (shadow price × the
    money left unspent under a binding cap), the other rows (limits, rules; zero for equalities) and the
    columns (reduced cost × units on arcs the LP prices dearer).  The count columns' rows are left out:
    they are equalities, met by both points."""
    dx = x - x_lp
    per_row = row_dual * (prog.matrix.tocsr() @ dx)
    caps = prog.cap_rows[prog.cap_rows >= 0]
    return float(per_row[caps].sum()), float(per_row.sum() - per_row[caps].sum()), float(col_dual @ dx)


if __name__ == "__main__":
    raise SystemExit(main())
