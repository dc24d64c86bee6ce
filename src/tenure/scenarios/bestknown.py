"""Each scenario's best known plan: its own solve's, or another scenario's schedule when that is cheaper there.

A solve stops within its proven gap, so under scenario *j* the plan solved for another
scenario *i*, its schedule fixed and costed under *j* (:func:`tenure.scenarios.recost.recost`),
can cost less than *j*'s own plan while carrying out every rule of *j*.  That schedule is then
the best plan known for *j*: it becomes *j*'s plan (cost, gap against *j*'s proven lower bound,
capital by year, first-year actions), and regret is taken against it, so no scenario's plan is
beaten under its own assumptions.  The lower bound stays the one *j*'s solve proved: a cheaper
known plan narrows the gap, never the bound.
"""

from __future__ import annotations

from typing import Mapping, Sequence

from ..model import Case
from ..textutil import money
from .recost import RegretTable, recost
from .tasks import first_year_actions, solved

#: money [cents] by which another schedule must be cheaper to replace a scenario's own plan
CHEAPER_BY = 0.005


def best_known(ids: Sequence[str], plans: Mapping[str, Mapping | None], table: RegretTable) -> dict[str, str]:
    """Scenario id → the id of the scenario whose schedule is cheapest under it, where that is
    another scenario's schedule cheaper than its own by more than :data:`CHEAPER_BY` and breaking no
    rule there.  Scenarios whose own plan is the best known are left out."""
    out = {}
    for j in ids:
        own = table.cost[j][j] if plans.get(j) is not None else None
        if own is None or table.breaks[j][j]:
            continue
        others = [(table.cost[i][j], n, i) for n, i in enumerate(ids)
                  if i != j and plans.get(i) is not None and not table.breaks[i][j] and table.cost[i][j] is not None]
        if others:
            cost, _, i = min(others)
            if cost < own - CHEAPER_BY:
                out[j] = i
    return out


def adopt(ids: Sequence[str], plans: Mapping[str, Mapping | None], results: Sequence[Mapping],
          cases: Mapping[str, Case], chosen: Mapping[str, str]) -> tuple[dict, list[dict]]:
    """Plans and task results with each scenario in ``chosen`` given the schedule of ``chosen[j]``.

    The result of *j* keeps its solve's ``lower_bound``; ``present_cost`` becomes the schedule's cost
    under *j* [money, time 0]; ``gap`` = (cost − lower_bound) / cost; the status becomes "optimal"
    when that gap is within *j*'s tolerance; ``capital_by_year`` [money, undiscounted] is the
    schedule's capital under *j*; ``plan_from`` names *i*; ``message`` says what happened.
    """
    plans, out = dict(plans), []
    for j, res in zip(ids, results):
        res = dict(res)
        i = chosen.get(j)
        if i is not None and solved(res["status"]):
            case = cases[j]
            rc = recost(plans[i], case)
            lb = res.get("lower_bound")
            own = res["present_cost"]
            res["present_cost"] = rc.cost
            if lb is not None:
                res["gap"] = max(0.0, (rc.cost - lb) / max(abs(rc.cost), 1e-9))
                tol = res.get("tolerance")
                if tol is not None and res["gap"] <= tol + 1e-12:
                    res["status"] = "optimal"
            res["capital_by_year"] = {str(case.study.start_year + k): round(c, 2) for k, c in enumerate(rc.capital)}
            res["first_year"] = first_year_actions(plans[i], case.study.start_year)
            res["plan_from"] = i
            res["message"] = (f"best known plan: the {i} plan's schedule costs {money(own - rc.cost)} less under {j} "
                              f"than {j}'s own solve (which stopped within its proven gap); {j}'s proven lower "
                              "bound is kept")
            plans[j] = plans[i]
        out.append(res)
    return plans, out
