"""The pieces every hedge solve shares: the scenarios and their probabilities, the meaning of a
column of the first planning years, and the re-plan of one scenario from a fixed commitment.

A column of the cohort program (:mod:`tenure.fleet.program`) is matched across scenarios by its
*meaning*, the key ``(class, k, kind, row, age)`` with ``kind`` "keep", "sell", "overhaul" or "buy"
(age 0 for a purchase) and ``row`` the name of the state graph's row: the type id, with
``@usage`` for a job off the reference usage and ``+ohA`` after an overhaul at age A
(:mod:`tenure.derived`), so that two jobs or an overhauled and a plain unit of one type never share
a key.  Never by its position: two scenarios with other buy windows or max ages have other
column lists.

:func:`replan_task` is the one picklable unit of work of the hedge layer (an own optimum, a
scenario re-planned from a commitment, or a Lagrangian subproblem with changed costs); it runs
in this process, in worker processes or on a Dask cluster (:func:`tenure.parallel.run_tasks`).
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from typing import Any, Mapping, Sequence

import numpy as np

from ..case import CaseError, build_case
from ..fleet.backend import get_backend
from ..fleet.program import CohortProgram, build_program
from ..model import Case, Scenario
from ..scenarios.overrides import SCENARIO_FILE_KEYS, apply_overrides, case_with

#: a column's meaning: (class, planning-year index k, "keep" | "sell" | "overhaul" | "buy", row name, age)
Key = tuple[str, int, str, str, int]


@dataclass(frozen=True)
class Stage:
    """One scenario of a hedge: ``id`` ("base" for the case as written), its ``probability``
    [fraction], its ``overrides`` (dotted path → value) and the validated ``case``."""

    id: str
    probability: float
    overrides: Mapping[str, Any]
    case: Case


def probabilities(scenarios: Sequence[Scenario]) -> list[float]:
    """Probabilities of the base case and of ``scenarios`` (in that order), summing to 1.

    A scenario's own ``probability`` is kept; the rest, ``1 − Σ given``, is shared equally by the
    base case and the scenarios without one (so with none given all are equally likely).  When
    every scenario has one, the base case takes the rest.  If the given ones sum to more than 1
    (possible only for a subset chosen from several files) they are scaled to sum to 1.
    """
    given = [s.probability for s in scenarios]
    free = 1 + sum(p is None for p in given)
    rest = 1.0 - sum(p for p in given if p is not None)
    if rest < -1e-12:
        total = 1.0 - rest
        return [0.0] + [(p or 0.0) / total for p in given]
    share = max(rest, 0.0) / free
    return [share] + [share if p is None else float(p) for p in given]


def stages(case: Case, scenarios: Sequence[Scenario]) -> list[Stage]:
    """The base case and each scenario as a :class:`Stage` (CaseError naming a bad override)."""
    probs = probabilities(scenarios)
    out = [Stage("base", probs[0], {}, case)]
    for s, p in zip(scenarios, probs[1:]):
        out.append(Stage(s.id, p, dict(s.set), case_with(case, s.set, where=f"scenario {s.id}")))
    return out


def row_names(g) -> tuple[str, ...]:
    """The name of each row of state graph ``g``: its type id, or the derived row's label."""
    return g.labels if g.labels is not None else g.types


def column_keys(prog: CohortProgram, years: int) -> dict[Key, int]:
    """``{key: column}`` of every column of planning years ``k < years`` (sorted by key)."""
    out: dict[Key, int] = {}
    for cls, ci in prog.cols.items():
        names = row_names(prog.graphs[cls])
        for kind, arr in (("keep", ci.keep), ("sell", ci.sell), ("overhaul", ci.overhaul)):
            if arr is None:
                continue
            for k, t, a in zip(*np.nonzero(arr[:years] >= 0)):
                out[(cls, int(k), kind, names[t], int(a))] = int(arr[k, t, a])
        for k, t in zip(*np.nonzero(ci.buy[:years] >= 0)):
            out[(cls, int(k), "buy", names[t], 0)] = int(ci.buy[k, t])
    return dict(sorted(out.items()))


def capital_by_year(prog: CohortProgram, x: np.ndarray, start_year: int) -> dict[str, float]:
    """Purchase prices paid in each calendar year (text key) by flows ``x`` [money, undiscounted]."""
    H = len(prog.cap_rows)
    cap = np.zeros(H)
    for cls, ci in prog.cols.items():
        price = prog.graphs[cls].price
        for k, t in zip(*np.nonzero(ci.buy >= 0)):
            cap[k] += price[k, t] * round(float(x[ci.buy[k, t]]))
    return {str(start_year + k): float(cap[k]) for k in range(H)}


def plan_flows(plan_dict: Mapping, prog: CohortProgram, years: int) -> dict[Key, int]:
    """The flows of planning years ``k < years`` of a ``Plan.to_dict()``, by key [units].

    Each unit walks the rows of its class's state graph from its start state (``prog.starts``):
    a "replace" sells it and buys the event's type in the same job (age 1 next year), an
    "overhaul" moves it to the overhauled row (one year older), a "sell" ends it, a "buy" starts
    a unit the plan adds (in the class's first job, as the program's market rows have it), and
    any other year keeps it (one year older).  ``ValueError`` for a schedule the program cannot
    carry (another inventory, a type or overhaul it lacks).
    """
    start = {nm: (cls, t, a) for cls, st in prog.starts.items() for (t, a), names in st.items() for nm in names}
    out: dict[Key, int] = {}

    def add(key):
        out[key] = out.get(key, 0) + 1

    for u in plan_dict["units"]:
        cls = u.get("class")
        if u.get("start_type"):
            if u["unit"] not in start:
                raise ValueError(f"unit {u['unit']}: not in the inventory")
            cls, r, a = start[u["unit"]]
        else:
            r, a = None, 0
        g = prog.graphs[cls]
        names = row_names(g)
        H = len(g.price)
        ev = {e["year"]: e for e in u["events"]}
        for k in range(min(years, H)):
            e = ev.get(g.start_year + k)
            act = e.get("action") if e is not None else None
            if r is None:
                if act == "buy":
                    r, a = _bought_row(g, e["type"], 0), 1
                    add((cls, k, "buy", names[r], 0))
                continue
            if act == "overhaul":
                to = -1 if g.overhaul_to is None else int(g.overhaul_to[r, a])
                if to < 0:
                    raise ValueError(f"unit {u['unit']}: no overhaul of a {names[r]} at age {a}")
                add((cls, k, "overhaul", names[r], a))
                r, a = to, a + 1
            elif act in ("replace", "sell"):
                add((cls, k, "sell", names[r], a))
                if act == "sell":
                    r = None
                    continue
                r = _bought_row(g, e["type"], 0 if g.job is None else int(g.job[r]))
                add((cls, k, "buy", names[r], 0))
                a = 1
            else:
                add((cls, k, "keep", names[r], a))
                a += 1
    return dict(sorted(out.items()))


def _bought_row(g, type_id: str, job: int) -> int:
    """The row a new ``type_id`` bought for ``job`` enters (not overhauled)."""
    try:
        return g.start_row(type_id, None if g.job is None else g.job_usage[job])
    except (KeyError, ValueError):
        raise ValueError(f"type {type_id}: not in class {g.class_}") from None


def make_replan_task(stage: Stage, base: Case, years: int, options: Mapping[str, Any], *,
                     fixed: Mapping[Key, int] | None = None, forbid: Sequence[Key] = (),
                     extra_cost: Mapping[Key, float] | None = None, weight: float = 1.0,
                     keep_x: bool = False) -> dict:
    """A picklable task for :func:`replan_task` (the base case's document plus the scenario's overrides).

    ``fixed``: flows of the first ``years`` years held at these values (every other column of
    those years at 0); ``forbid``: keys held at 0; ``extra_cost``: money added to a column's
    cost after the scenario's cost is multiplied by ``weight`` (the Lagrangian terms);
    ``keep_x``: return every column's value too.
    """
    doc = {k: v for k, v in base.raw.items() if k not in SCENARIO_FILE_KEYS}
    return {"doc": doc, "set": dict(stage.overrides), "source": base.source, "where": f"scenario {stage.id}",
            "years": int(years), "fixed": None if fixed is None else sorted(fixed.items()),
            "forbid": sorted(forbid), "extra_cost": sorted((extra_cost or {}).items()), "weight": float(weight),
            "keep_x": bool(keep_x),
            "options": {"solver": "highs", "time_limit": 120.0, "gap": 0.005, **dict(options)}}


def replan_task(task: Mapping) -> dict:
    """Solve one scenario's cohort program with its first years fixed or re-costed (see the module docstring).

    Returns ``{"status", "cost", "bound", "weighted_bound", "first", "capital_by_year"}``: status "optimal",
    "feasible", "infeasible" or "none"; ``cost`` the present cost of the flows under the scenario
    [money, time 0] (without the extra costs), ``bound`` a proven lower bound of the modified
    objective; ``first`` the first years' flows by key (as a sorted list of pairs).
    """
    try:
        doc = apply_overrides(task["doc"], task["set"], source=task["source"], where=task["where"])
        case = build_case(doc, source=task["source"])
    except CaseError as exc:
        return {"status": "error", "message": str(exc)}
    prog = build_program(case)
    keys = column_keys(prog, task["years"])
    lower, upper, cost = prog.lower.copy(), prog.upper.copy(), prog.cost * task["weight"]
    for key in task["forbid"]:
        if tuple(key) in keys:
            upper[keys[tuple(key)]] = 0.0
    if task["fixed"] is not None:
        fixed = {tuple(k): v for k, v in task["fixed"]}
        if any(v > 0 and k not in keys for k, v in fixed.items()):
            return {"status": "infeasible", "message": "the commitment uses a column this scenario lacks"}
        for key, j in keys.items():
            lower[j] = upper[j] = float(fixed.get(key, 0))
    for key, c in task["extra_cost"]:
        if tuple(key) in keys:
            cost[keys[tuple(key)]] += c
    mod = replace(prog, lower=lower, upper=upper, cost=cost)
    opts = task["options"]
    res = get_backend(opts["solver"])(mod).solve_mip(opts["time_limit"], opts["gap"])
    if res.x is None:
        return {"status": res.status, "message": "no plan with the commitment fixed"}
    x = np.round(res.x)
    out = {"x": x.tolist()} if task.get("keep_x") else {}
    return {**out, "status": res.status, "cost": float(prog.cost @ x), "objective": float(cost @ x),
            "bound": float(res.bound) if res.bound is not None else float(cost @ x),
            "first": [(k, int(x[j])) for k, j in keys.items() if x[j] > 0.5],
            "capital_by_year": capital_by_year(prog, x, case.study.start_year)}
