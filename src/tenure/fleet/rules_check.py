"""Whether a plan keeps the coupling rules, and why no plan can when none does.

:func:`breaks` checks a finished plan (the driver uses it so that the uncapped recursion's
plan is returned only when it keeps every rule).  :func:`diagnose` explains an impossible
case: an elastic copy of the cohort program gives every target and emission-cap row a slack
column (cost 1 per unit or tonne short); the earliest row that still needs slack names the
rule and the first year it cannot be met, and re-solving without caps and limits tells
whether they are the reason.
"""

from __future__ import annotations

import dataclasses

import numpy as np
import scipy.sparse as sp

from .. import service
from ..model import Case
from ..plan import InfeasibleLimits, Plan
from .backend import Backend
from .program import build_program
from .rules_rows import class_sizes


def required_sizes(case: Case) -> dict[str, np.ndarray]:
    """Class → units that must be in service each year, for classes under ``[[demand]]`` or orders."""
    out = {}
    classes = {d.class_ for d in case.demands} | {case.type(o.type).class_ for o in case.orders}
    for cls in classes:
        n0 = sum(u.count for u in case.units_of(cls))
        out[cls] = class_sizes(case, cls, n0)
    return out


def breaks(case: Case, plan: Plan) -> list[str]:
    """The rules ``plan`` breaks (class sizes, orders, targets, emission caps), one line each."""
    if not case.coupled:
        return []
    return service.broken_rules(case, plan, required_sizes(case))


def _short_rows(case: Case, graphs, backend: type[Backend], time_limit: float, mip: bool = True):
    """Rule rows needing slack in the elastic program: [(year, j, RuleRow)] sorted by year, or None
    when even unlimited slack on the rules leaves no plan.

    The LP relaxation is tried first (fast, and enough whenever the program's own LP has no
    solution); the integer program, for ``time_limit`` [s], only when the LP needs no slack, and its
    rows count only when its dual bound proves that some slack is needed (else ``[]``: nothing proven)."""
    prog = build_program(case, graphs)
    n0, m = prog.n_cols, len(prog.rule_rows)
    if m == 0:
        return None
    rows = np.array([r for r, _ in prog.rule_rows])
    signs = np.array([1.0 if np.isfinite(rr.lo) else -1.0 for _, rr in prog.rule_rows])
    extra = sp.csc_matrix((signs, (rows, np.arange(m))), shape=(prog.n_rows, m))
    # each unit or tonne short costs 1 (a thousandth more per year later, so the earliest rule year that
    # must give way is the one named) and nothing else counts: the LP's optimum and the integer program's
    # dual bound are then above zero exactly when some slack is needed, so a rule is called impossible
    # only on such a bound, never from a point alone
    y0 = case.study.start_year
    weight = np.array([1.0 + 1e-3 * (rr.year - y0) for _, rr in prog.rule_rows])
    el = dataclasses.replace(prog, cost=np.concatenate([np.zeros(n0), weight]),
                             lower=np.concatenate([prog.lower, np.zeros(m)]),
                             upper=np.concatenate([prog.upper, np.full(m, np.inf)]),
                             matrix=sp.hstack([prog.matrix, extra], format="csc"))
    integrality = np.concatenate([np.ones(n0, dtype=np.int32), np.zeros(m, dtype=np.int32)])
    be = backend(el, integrality)
    lp = be.solve_lp()
    if lp.x is None:
        return None
    slack = np.asarray(lp.x)[n0:]
    if mip and not np.any(slack > 1e-6):
        res = be.solve_mip(max(time_limit, 2.0), 1e-4)
        if res.x is None:
            return None if res.status == "infeasible" else []
        if res.bound is None or res.bound <= 1e-6:  # a point that needs slack proves nothing by itself
            return []
        slack = np.asarray(res.x)[n0:]
    return sorted(((rr.year, j, rr) for j, ((_, rr), v) in enumerate(zip(prog.rule_rows, slack)) if v > 1e-6),
                  key=lambda c: (c[0], c[1]))


def _feasible(case: Case, graphs, backend: type[Backend], time_limit: float) -> bool:
    be = backend(build_program(case, graphs))
    if be.solve_lp().x is None:
        return False
    return be.solve_mip(max(time_limit, 2.0), 1.0).status != "infeasible"


def _reason(case: Case, rr, graphs, backend, time_limit: float) -> str:
    y = rr.year
    target = next((t for t in case.targets if rr.rule.startswith(t.label + " (")), None)
    if target is not None and not any(case.type(t).buyable(y) for t in target.types):
        return f"no type of the list ({', '.join(target.types)}) can be bought in {y}"
    if case.budget is not None or case.limits:
        loose = dataclasses.replace(case, budget=None, limits=())
        left = _short_rows(loose, graphs, backend, time_limit, mip=False)  # the LP answers "without them"
        if left is not None and not any(r.rule == rr.rule and r.year == y for _, _, r in left):
            return "the capital caps and purchase limits leave too little room (it can be met without them)"
    if target is not None:
        others = [o for o in case.orders if o.year == y and o.type not in target.types
                  and case.type(o.type).class_ in target.classes]
        if others and target.share_of_buys is not None:
            return f"the order of {others[0].count} {others[0].type} that year is not of the list"
        return ("too few units can be bought or replaced by then: max_age, min_age, the class sizes and the "
                "orders keep other types in service")
    return "the units that must be in service then emit more, even when the cleanest types are bought"


def diagnose(case: Case, graphs, backend: type[Backend], time_limit: float) -> str | None:
    """Why no plan keeps the rules: the rule, the first year it cannot be met, and the reason.

    None when the coupling rules are not the cause (the caps or limits alone are).
    """
    time_limit = time_limit / 3  # up to three programs are solved here
    rows = _short_rows(case, graphs, backend, time_limit)
    if rows is None:
        if case.demands or case.orders:
            loose = dataclasses.replace(case, budget=None, limits=(), targets=(), emission_caps=())
            if not _feasible(loose, graphs, backend, time_limit):
                return ("the class sizes and orders cannot be kept by any plan: [[demand]] or an order asks for "
                        "sales or purchases that min_age, max_age, buy_from/buy_until or the orders' replaces "
                        "rule out")
        return None
    if not rows:
        return None
    _, _, rr = rows[0]
    what = f"target '{rr.rule}'" if rr.kind == "target" else f"the {rr.rule}"
    return f"no plan meets {what} from {rr.year}: {_reason(case, rr, graphs, backend, time_limit)}"


def raise_if_impossible(case: Case, graphs, backend: type[Backend], time_limit: float) -> None:
    """Raise :class:`~tenure.plan.InfeasibleLimits` (exit 3) naming the rule, year and reason when
    the coupling rules are what no plan can keep."""
    reason = diagnose(case, graphs, backend, time_limit)
    if reason:
        raise InfeasibleLimits(reason)
