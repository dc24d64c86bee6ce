"""Regret of committing a plan's first N years, then re-planning under the scenario that comes true.

Beside the whole-schedule regret (:mod:`.recost`): the cell (plan i, scenario j) is the least
present cost under j of carrying out plan i's first N years (the same units replaced by the same
types in the same years) and re-planning the later years, less the best plan known under j.  The
best known plan under j is j's own plan or, when one of these re-plans costs less under j's own
assumptions (possible when j's own solve stopped at a gap), that re-plan — a scenario's own plan
is never reported as beaten under its own assumptions, and the note says by how much and why.
Re-plans run as hedge re-plan tasks (:func:`tenure.hedge.stage.replan_task`) through
:func:`tenure.parallel.run_tasks`.
"""

from __future__ import annotations

from typing import Any, Mapping, Sequence

from ..model import Case
from ..parallel import run_tasks
from .recost import RegretTable
from .tasks import round2 as _r


def commit_regret_table(case: Case, entries: Sequence[tuple[str, Mapping]], plans: Mapping[str, Mapping | None],
                        own_cost: Mapping[str, float | None], own_gap: Mapping[str, float | None], years: int,
                        options: Mapping[str, Any], *, workers: int = 1,
                        cluster: str | None = None) -> tuple[RegretTable, tuple[str, ...]]:
    """The commit-N-years-then-re-plan regret table and its notes.

    ``entries`` (scenario id, overrides), base first; ``plans`` id → ``Plan.to_dict()`` (None: no
    plan); ``own_cost`` / ``own_gap`` each scenario's own present cost [money, time 0] and proven gap.
    """
    from ..fleet.program import build_program
    from ..hedge.stage import Stage, make_replan_task, plan_flows, replan_task
    from .overrides import case_with

    ids = [sid for sid, _ in entries]
    cases = {sid: (case if not sets else case_with(case, sets, where=f"scenario {sid}")) for sid, sets in entries}
    stages = {sid: Stage(sid, 0.0, dict(sets), cases[sid]) for sid, sets in entries}
    pairs = [(i, j) for i in ids if plans.get(i) for j in ids]
    flows = {i: plan_flows(plans[i], build_program(cases[i]), years) for i in ids if plans.get(i)}
    tasks = [make_replan_task(stages[j], case, years, options, fixed=flows[i]) for i, j in pairs]
    res = dict(zip(pairs, run_tasks(replan_task, tasks, workers=workers, cluster=cluster)))
    cost = {i: {j: (res[(i, j)].get("cost") if (i, j) in res else None) for j in ids} for i in ids}
    breaks = {i: {j: (() if cost[i][j] is not None else
                      ("no plan" if not plans.get(i) else "its first years cannot be carried out here",))
                  for j in ids} for i in ids}
    best, notes = {}, []
    for j in ids:
        found = [cost[i][j] for i in ids if cost[i][j] is not None]
        own = own_cost.get(j)
        best[j] = min(found + ([own] if own is not None else [])) if found or own is not None else None
        if own is not None and best[j] is not None and best[j] < own - 1e-6 * max(abs(own), 1.0):
            by = next(i for i in ids if cost[i][j] == best[j])
            notes.append(f"{j}: re-planning from the {by} plan's first {years} year(s) costs {own - best[j]:,.0f} "
                         f"less than {j}'s own plan (its solve stopped at a gap of {own_gap.get(j) or 0:.3%}); "
                         "that re-plan is its best known plan")
    regret = {i: {j: (cost[i][j] - best[j] if cost[i][j] is not None else None) for j in ids} for i in ids}
    max_regret = {i: (max(regret[i].values()) if plans.get(i) and all(r is not None for r in regret[i].values())
                      else None) for i in ids if plans.get(i)}
    ranked = [i for i in ids if max_regret.get(i) is not None]
    choice = min(ranked, key=lambda i: (max_regret[i], ids.index(i))) if ranked else None
    table = RegretTable(ids=tuple(ids), cost={i: {j: _r(x) for j, x in r.items()} for i, r in cost.items()},
                        regret={i: {j: _r(x) for j, x in r.items()} for i, r in regret.items()}, breaks=breaks,
                        best_under={j: _r(x) for j, x in best.items()},
                        max_regret={i: _r(x) for i, x in max_regret.items()}, least_max_regret=choice,
                        rule=f"least maximum regret of committing a plan's first {years} year(s), then re-planning")
    return table, tuple(notes)
