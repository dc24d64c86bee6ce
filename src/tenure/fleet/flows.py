"""Integral cohort flows to unit paths, and the check that a plan fits every cap and limit."""

from __future__ import annotations

import numpy as np

from .. import chain
from ..model import Case
from ..plan import PathGroup, Plan
from .program import CohortProgram


def flows_to_groups(prog: CohortProgram, x: np.ndarray, case: Case, uncapped_sols: dict) -> list[PathGroup]:
    """Assign integral cohort flows to unit names and return their paths.

    Within a state the units keep their inventory order (units an order ``replaces`` first in their
    year, last before it): the first ones are sold, the next ones overhauled; the year's sold units of
    each job, oldest state first, take the job's purchases in the case order of types.  Purchases
    beyond the sales are new units (named ``<class>+<year>#n``); sales beyond the purchases leave
    without a replacement.  A class's size change is met in its first job.
    """
    H = case.study.horizon
    y0 = case.study.start_year
    leaves = {nm: o.year - y0 for o in case.orders for nm in o.replaces}
    groups: dict = {}
    for cls, ci in prog.cols.items():
        g = prog.graphs[cls]
        order = {}
        at: dict[tuple[int, int], list[str]] = {}
        origin = {}
        for (t, a), names in prog.starts[cls].items():
            at[(t, a)] = list(names)
            for nm in names:
                origin[nm] = (t, a)
        for j, nm in enumerate(nm for u in case.units_of(cls) for nm in u.names()):
            order[nm] = j
        steps: dict[str, list] = {nm: [] for nm in order}
        job = np.zeros(len(g.types), dtype=int) if g.job is None else g.job
        for k in range(H):
            nxt: dict[tuple[int, int], list[str]] = {}
            sold: dict[int, list[tuple[int, int, str]]] = {}

            def rank(nm, k=k):
                due = leaves.get(nm)
                return (0 if due == k else 1 if due is None else 2, order[nm])

            for (t, a) in sorted(at, key=lambda s: (-s[1], s[0])):
                names = sorted(at[(t, a)], key=rank)
                js = int(ci.sell[k][t, a]) if a < ci.sell.shape[2] else -1
                n_sell = int(round(x[js])) if js >= 0 else 0
                jo = int(ci.overhaul[k][t, a]) if ci.overhaul is not None and a < ci.overhaul.shape[2] else -1
                n_ov = int(round(x[jo])) if jo >= 0 else 0
                for nm in names[:n_sell]:
                    sold.setdefault(int(job[t]), []).append((t, a, nm))
                for nm in names[n_sell:n_sell + n_ov]:
                    steps[nm].append(chain.Step(k, t, a, chain.OVERHAUL))
                    nxt.setdefault(chain.next_state(g, t, a, chain.OVERHAUL), []).append(nm)
                for nm in names[n_sell + n_ov:]:
                    steps[nm].append(chain.Step(k, t, a, chain.KEEP))
                    nxt.setdefault((t, a + 1), []).append(nm)
            buys: dict[int, list[int]] = {}
            for t2 in range(len(g.types)):
                jb = int(ci.buy[k][t2])
                if jb >= 0:
                    buys.setdefault(int(job[t2]), []).extend([t2] * int(round(x[jb])))
            change = int(round(prog.market_rhs.get((cls, k), 0.0)))
            n_new = 0
            for j in sorted(set(sold) | set(buys) | ({0} if change else set())):
                bj, sj = buys.get(j, []), sold.get(j, [])
                if len(bj) - len(sj) != (change if j == 0 else 0):
                    raise RuntimeError(f"cohort flows do not balance in {cls} {y0 + k}")
                for (t, a, nm), t2 in zip(sj, bj):
                    steps[nm].append(chain.Step(k, t, a, t2))
                    nxt.setdefault((t2, 1), []).append(nm)
                for t, a, nm in sj[len(bj):]:
                    steps[nm].append(chain.Step(k, t, a, chain.SELL))
                for t2 in bj[len(sj):]:
                    n_new += 1
                    nm = f"{cls}+{y0 + k}#{n_new}"
                    order[nm], origin[nm] = len(order), (chain.NEW, chain.NEW)
                    steps[nm] = [chain.Step(k, chain.NEW, chain.NEW, t2)]
                    nxt.setdefault((t2, 1), []).append(nm)
            at = nxt
        sol = uncapped_sols[cls]
        for nm, st in steps.items():
            key = (cls, origin[nm], tuple(st))
            if key not in groups:
                groups[key] = [st, [], origin[nm], chain.flexibility(sol, st)]
            groups[key][1].append(nm)
    return [PathGroup(class_=cls, steps=tuple(st), units=tuple(names), start=start, flex=tuple(flex))
            for (cls, _, _), (st, names, start, flex) in groups.items()]


def fits_caps(plan: Plan, case: Case) -> bool:
    """True when a plan respects every cap and limit."""
    for y in plan.years:
        if y.slack is not None and y.slack < -1e-6:
            return False
    for lim in case.limits:
        for k in range(case.study.horizon):
            n = sum(1 for u in plan.units if u.class_ == lim.class_
                    for e in u.events if e.year == case.study.start_year + k and e.action != "overhaul")
            if n > lim.max_buys_per_year:
                return False
    return True

