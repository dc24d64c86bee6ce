"""Compare: the base case and each scenario solved, regret, and what is safe to commit now.

:func:`compare` solves the base case and each scenario with
:func:`tenure.solve.solve` (through :func:`tenure.parallel.run_tasks`), then
re-costs every scenario's plan under every other scenario's assumptions
(:mod:`tenure.scenarios.recost`).  First-year actions common to every
scenario's plan are "safe to commit now".
"""

from __future__ import annotations

import difflib
from collections import Counter
from typing import Any, Mapping, Sequence

from ..model import Case, Scenario
from .overrides import case_with
from .recost import regret_table
from .tasks import first_year_actions, make_task, solve_all as _solve_all
from .tasks import round2 as _r

BASE_NOTE = "the case as written"


def select_scenarios(case: Case, wanted: Sequence[str] | None, extra: Sequence[Scenario] = ()) -> list[Scenario]:
    """The scenarios to compare: all of the case's (and ``extra``) or those named in ``wanted``.

    Raises
    ------
    ValueError
        An id that is not a scenario (the message names the nearest id).
    """
    pool = list(case.scenarios) + list(extra)
    if not wanted:
        return pool
    by_id = {s.id: s for s in pool}
    out = []
    for w in wanted:
        if w == "base":
            continue
        if w not in by_id:
            near = difflib.get_close_matches(w, list(by_id), n=1)
            hint = f"; did you mean '{near[0]}'?" if near else ""
            raise ValueError(f"--scenario {w!r}: no such scenario{hint} (scenarios: {', '.join(by_id) or 'none'})")
        if by_id[w] not in out:
            out.append(by_id[w])
    return out


def _actions_in(plan_dict, year) -> dict[str, str]:
    return first_year_actions(plan_dict, year) if plan_dict else {}


def compare(case: Case, scenarios: Sequence[Scenario], *, options: Mapping[str, Any] | None = None,
            workers: int = 1, cluster: str | None = None, progress: bool = False) -> dict:
    """Solve the base case and each scenario; the ``compare.json`` document.

    Parameters
    ----------
    case : Case
    scenarios : sequence of Scenario
    options : mapping
        Solver options for capped cases (solver, time_limit, gap).
    workers, cluster :
        See :func:`tenure.parallel.run_tasks`.
    progress : bool
        Show a progress bar on a terminal.

    Returns
    -------
    dict
        ``scenarios`` (one entry per scenario, base first), ``regret``,
        ``safe_now`` (first-year actions common to every scenario's plan) and
        ``differ_early`` (decisions of the first two years that differ).
    """
    entries = [("base", BASE_NOTE, {})] + [(s.id, s.note, dict(s.set)) for s in scenarios]
    cases = {sid: (case if sid == "base" else case_with(case, sets, where=f"scenario {sid}"))
             for sid, _, sets in entries}
    tasks = [make_task(case, sets, options, where=f"scenario {sid}", keep_plan=True) for sid, _, sets in entries]
    results = _solve_all(tasks, workers=workers, cluster=cluster, label="compare", progress=progress)
    ids = [sid for sid, _, _ in entries]
    plans = {sid: res.get("plan") for sid, res in zip(ids, results)}
    base_cost = results[0]["present_cost"] if results[0]["status"] in ("optimal", "feasible") else None
    y0 = case.study.start_year
    rows = []
    for (sid, note, sets), res in zip(entries, results):
        pd_ = res.get("plan")
        ok = res["status"] in ("optimal", "feasible")
        pc = res["present_cost"]
        cap_by_year, buys_by_type = {}, Counter()
        if pd_:
            for y in pd_["years"]:
                cap_by_year[str(y["year"])] = y["capital"]
                buys_by_type.update(y["buys_by_type"])
        rows.append({
            "id": sid, "note": note, "set": sets, "status": res["status"],
            "present_cost": _r(pc),
            "difference": _r(pc - base_cost) if ok and base_cost is not None and pc is not None else None,
            "gap": res.get("gap"), "message": res.get("message", ""),
            "capital_by_year": cap_by_year,
            "buys_by_type": {t.id: buys_by_type[t.id] for t in cases[sid].types if buys_by_type[t.id]},
            "first_year_actions": res.get("first_year", {}),
        })
    regret = regret_table(ids, plans, cases)
    solved = [sid for sid, res in zip(ids, results) if res["status"] in ("optimal", "feasible")]
    safe, differ = [], []
    if solved:
        first = {sid: _actions_in(plans[sid], y0) for sid in solved}
        common_units = [u for u in first[solved[0]] if all(u in first[s] for s in solved)]
        for u in common_units:
            acts = {first[s][u] for s in solved}
            if len(acts) == 1:
                safe.append({"unit": u, "action": first[solved[0]][u]})
        for y in (y0, y0 + 1):
            acts_y = {sid: _actions_in(plans[sid], y) for sid in solved}
            for u in common_units:
                by_s = {s: acts_y[s][u] for s in solved}
                if len(set(by_s.values())) > 1:
                    differ.append({"unit": u, "year": y, "actions": by_s})
    return {"case": case.source, "title": case.study.title, "start_year": y0, "horizon": case.study.horizon,
            "scenarios": rows, "regret": regret, "safe_now": safe, "safe_now_from": solved,
            "differ_early": differ}

