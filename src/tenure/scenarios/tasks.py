"""Solve tasks: picklable descriptions of one solve, run anywhere.

A task carries the case document and its overrides, never model objects, so
the results are the same in this process, in local worker processes or on a
Dask cluster (:func:`tenure.parallel.run_tasks`).
"""

from __future__ import annotations

from typing import Any, Mapping

from ..plan import NoPlanError
from ..case import CaseError, build_case
from ..model import Case
from ..parallel import run_tasks
from ..progress import bar
from .overrides import SCENARIO_FILE_KEYS, apply_overrides


def _lean(doc: Mapping) -> dict:
    """The document without its scenario and uncertain blocks (not needed to solve it)."""
    return {k: v for k, v in doc.items() if k not in SCENARIO_FILE_KEYS}


def make_task(case: Case, overrides: Mapping[str, Any], options: Mapping[str, Any] | None = None, *,
              where: str = "set", keep_plan: bool = False) -> dict:
    """A picklable solve task: the case document, the overrides and the solver options."""
    return {"doc": _lean(case.raw), "set": dict(overrides), "options": dict(options or {}), "source": case.source,
            "where": where, "keep_plan": keep_plan}


def first_year_actions(plan_dict: Mapping, year: int) -> dict[str, str]:
    """``{unit: code}`` for one calendar year of a ``plan.to_dict()``: "keep", "replace:<type>",
    "overhaul", "buy:<type>" (a unit the plan adds) or "sell" (sold without a replacement), for
    every unit held in that year or acted on in it (a unit added later or sold before is left out)."""
    out = {}
    for u in plan_dict.get("units", []):
        held, act = bool(u.get("start_type")), None
        for e in sorted(u["events"], key=lambda e: e["year"]):
            if e["year"] == year:
                kind = e.get("action")
                act = (kind if kind in ("overhaul", "sell") else
                       f"{'buy' if kind == 'buy' else 'replace'}:{e['type']}")
            elif e["year"] < year and e.get("action") in ("buy", "sell"):
                held = e.get("action") == "buy"
        if act is not None or held:
            out[u["unit"]] = act or "keep"
    return out


def run_task(task: Mapping) -> dict:
    """Apply the overrides, validate, solve; a summary of the plan (and the plan itself if asked)."""
    from ..solve import solve

    try:
        doc = apply_overrides(task["doc"], task["set"], source=task["source"], where=task["where"])
        case = build_case(doc, source=task["source"])
        plan = solve(case, **{"progress": False, **task["options"]})
    except CaseError as exc:
        return {"status": "error", "message": str(exc), "present_cost": None}
    except NoPlanError as exc:
        return {"status": "infeasible", "message": f"no plan: {exc}", "present_cost": None}
    d = plan.to_dict()
    out = {"status": plan.status, "present_cost": float(plan.present_cost), "gap": float(plan.gap),
           "lower_bound": float(plan.lower_bound), "tolerance": plan.tolerance, "message": plan.message,
           "first_year": first_year_actions(d, case.study.start_year)}
    if task.get("keep_plan"):
        out["plan"] = d
    return out


def solve_all(tasks, *, workers, cluster, label, progress) -> list[dict]:
    """:func:`run_task` over ``tasks`` on the chosen back end, in task order, with a progress bar."""
    with bar(len(tasks), label, enabled=bool(progress)) as b:
        return run_tasks(run_task, tasks, workers=workers, cluster=cluster, progress=b)



def round2(x):
    """Money as written to the JSON documents: rounded to cents, None kept."""
    return None if x is None else round(float(x), 2)


def solved(status: str) -> bool:
    """Whether a task's status carries a plan with a present cost."""
    return status in ("optimal", "feasible")
