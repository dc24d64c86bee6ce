"""Scenarios, regret and sweeps: how the plan moves when the assumptions do.

Overrides
---------
A scenario is a set of overrides, ``dotted path = value``, applied to a copy
of the case document; the result is validated by :func:`tenure.case.build_case`
like any case.  Paths:

- ``study.<field>``                       (``discount_rate``, ``horizon``, ``end_value`` …)
- ``asset_type.<id>.<field>``             (any asset-type key but ``id``: ``price``,
  ``price_change``, ``buy_from``, ``buy_until``, ``max_age``, ``om``, ``om_change``,
  ``salvage``, ``class``); a table-valued field also takes ``.<key>`` for one of
  its present keys, e.g. ``asset_type.rt-bev.om.first``
- ``budget.cap``, ``budget.basis``, ``budget.cap_by_year.<year>`` (a missing
  ``[budget]`` is created)
- ``limit.<class>.max_buys_per_year``     (a missing ``[[limit]]`` of that class is created)
- ``unit.<id>.<field>``                   (``age``, ``type``, ``count`` of an inventory row)

Values are set exactly as given.  A path that does not exist is reported
with the nearest valid one.

Compare and regret
------------------
:func:`compare` solves the base case and each scenario with
:func:`tenure.solve.solve`, then re-costs every scenario's plan under every
other scenario's assumptions with its schedule fixed (:func:`recost`: each
unit's replacements happen in the same years with the same types, its costs
come from :mod:`tenure.curves` under the other scenario, timed as in
``docs/conventions.md``).  A plan that, under the other scenario, breaks a
cap, a purchase limit or a max age, or buys a type that cannot be bought
then, is flagged as *breaking* there.  Regret of plan *i* under scenario
*j* is its cost there less the least cost of any plan that can be carried
out under *j* (common practice: the minimax-regret rule of decision analysis
under uncertainty).  The plan of least maximum regret is chosen among plans
that break under no scenario (if there are none, the fewest breaks rank
first).  First-year actions common to every scenario's plan are "safe to
commit now".

Sweeps
------
:func:`sweep` solves the case over a grid of values (``--vary``) or over
Monte Carlo draws of the case's ``[[uncertain]]`` inputs (seeded, one
``numpy.random.default_rng(seed)``), and reports quantiles of the present
cost, how often each first-year action is optimal, and a one-at-a-time
sensitivity table.  Values for whole-number fields (years, ages, counts,
limits) are rounded to the nearest whole number before they are set.

All solves go through :func:`tenure.parallel.run_tasks`; a task carries the
case document and its overrides, never model objects, so the results are the
same in this process, in local worker processes or on a Dask cluster.
"""

from __future__ import annotations

import copy
import csv
import difflib
import io
import itertools
import math
import re
from collections import Counter
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Mapping, Sequence

import numpy as np

from . import curves, life, rule_paths
from .case import (
    STUDY_KEYS,
    TYPE_KEYS,
    UNIT_KEYS,
    CaseError,
    Problem,
    build_case,
    read_document,
)
from .model import Case, Scenario, Uncertain
from .plan import NoPlanError
from .parallel import Progress, run_tasks

#: fields whose values are whole numbers (sweep values are rounded for them)
INTEGER_FIELDS = frozenset({"buy_from", "buy_until", "max_age", "age", "count", "horizon", "start_year",
                            "max_buys_per_year"})
#: quantiles of present cost reported by a sweep [%]
QUANTILES = (5, 25, 50, 75, 95)
#: relative tolerance of the cap check when re-costing
CAP_TOL = 1e-9
BASE_NOTE = "the case as written"


# ===========================================================================
# overrides
# ===========================================================================
class _BadPath(Exception):
    pass


def _blocks(doc: Mapping, key: str) -> list:
    v = doc.get(key, [])
    if isinstance(v, dict):
        v = [v]
    return [b for b in v if isinstance(b, dict)] if isinstance(v, list) else []


def _match_id(rest: str, ids: Sequence[str]) -> tuple[str, str] | None:
    """Split ``rest`` = ``<id>.<field…>`` for an id of ``ids`` (longest id first, ids may hold dots)."""
    for i in sorted(ids, key=len, reverse=True):
        if rest.startswith(i + "."):
            return i, rest[len(i) + 1:]
    return None


def _classes(doc: Mapping) -> list[str]:
    seen: dict[str, None] = {}
    for b in _blocks(doc, "asset_type"):
        if isinstance(b.get("class"), str):
            seen.setdefault(b["class"], None)
    return list(seen)


def _study_years(doc: Mapping) -> list[int]:
    s = doc.get("study")
    if not isinstance(s, dict):
        return []
    try:
        y0, h = int(s["start_year"]), int(s["horizon"])
    except (KeyError, TypeError, ValueError):
        return []
    return list(range(y0, y0 + max(0, min(h, 200))))


def valid_paths(doc: Mapping) -> list[str]:
    """Every override path the document offers (the list the nearest-path hint is drawn from)."""
    out = [f"study.{k}" for k in STUDY_KEYS]
    for b in _blocks(doc, "asset_type"):
        tid = b.get("id")
        if not isinstance(tid, str):
            continue
        for k in TYPE_KEYS:
            if k == "id":
                continue
            out.append(f"asset_type.{tid}.{k}")
            if isinstance(b.get(k), dict):
                out += [f"asset_type.{tid}.{k}.{sub}" for sub in b[k]]
    out += ["budget.cap", "budget.basis"] + [f"budget.cap_by_year.{y}" for y in _study_years(doc)]
    out += [f"limit.{c}.max_buys_per_year" for c in _classes(doc)]
    for u in _blocks(doc, "unit"):
        if isinstance(u.get("id"), str):
            out += [f"unit.{u['id']}.{k}" for k in UNIT_KEYS if k != "id"]
    return out + ["budget.money"] + rule_paths.rule_paths(doc, _classes(doc), _study_years(doc))


def _set_one(doc: dict, path: str, value: Any) -> None:
    head, _, rest = path.partition(".")
    if not rest:
        raise _BadPath("a path has at least two parts, e.g. 'study.discount_rate'")
    if head == "study":
        if rest not in STUDY_KEYS:
            raise _BadPath(f"'{rest}' is not a study field")
        study = doc.get("study")
        if not isinstance(study, dict):
            raise _BadPath("the case has no [study] table")
        study[rest] = copy.deepcopy(value)
        return
    if head == "asset_type":
        blocks = _blocks(doc, "asset_type")
        ids = [b["id"] for b in blocks if isinstance(b.get("id"), str)]
        m = _match_id(rest, ids)
        if m is None:
            raise _BadPath("no such asset type")
        tid, field = m
        block = next(b for b in blocks if b.get("id") == tid)
        key, _, sub = field.partition(".")
        if key not in TYPE_KEYS or key == "id":
            raise _BadPath(f"'{key}' is not an asset-type field that can be set")
        if sub:
            if not isinstance(block.get(key), dict) or sub not in block[key]:
                raise _BadPath(f"asset type '{tid}' has no '{key}.{sub}' (set the whole '{key}' instead)")
            block[key][sub] = copy.deepcopy(value)
        else:
            block[key] = copy.deepcopy(value)
        return
    if head == "budget":
        budget = doc.setdefault("budget", {})
        if not isinstance(budget, dict):
            raise _BadPath("the case's budget is not a table")
        if rest in ("cap", "basis", "cap_by_year", "money"):
            budget[rest] = copy.deepcopy(value)
            return
        key, _, year = rest.partition(".")
        if key == "cap_by_year" and re.fullmatch(r"\d{4}", year):
            by_year = budget.setdefault("cap_by_year", {})
            if not isinstance(by_year, dict):
                raise _BadPath("budget.cap_by_year is not a table")
            by_year[year] = copy.deepcopy(value)
            return
        raise _BadPath("budget paths are budget.cap, budget.basis, budget.money and budget.cap_by_year.<year>")
    if head == "limit":
        m = _match_id(rest, _classes(doc))
        if m is None:
            raise _BadPath("no such class")
        cls, field = m
        if field != "max_buys_per_year":
            raise _BadPath("the only limit field is max_buys_per_year")
        limits = doc.get("limit", [])
        if isinstance(limits, dict):
            limits = doc["limit"] = [limits]
        for b in limits:
            if isinstance(b, dict) and b.get("class") == cls:
                b[field] = copy.deepcopy(value)
                return
        limits.append({"class": cls, field: copy.deepcopy(value)})
        doc["limit"] = limits
        return
    if head == "unit":
        blocks = _blocks(doc, "unit")
        m = _match_id(rest, [b["id"] for b in blocks if isinstance(b.get("id"), str)])
        if m is None:
            raise _BadPath("no such inventory row")
        uid, field = m
        if field not in UNIT_KEYS or field == "id":
            raise _BadPath(f"'{field}' is not a unit field that can be set (age, type, count)")
        next(b for b in blocks if b.get("id") == uid)[field] = copy.deepcopy(value)
        return
    try:
        if rule_paths.set_rule(doc, head, rest, value, _classes(doc)):
            return
    except rule_paths.BadRulePath as exc:
        raise _BadPath(str(exc)) from None
    raise _BadPath(f"'{head}' is not a part of a case that can be overridden")


def apply_overrides(raw_doc: Mapping[str, Any], overrides: Mapping[str, Any], *, source: str = "<memory>",
                    where: str = "set") -> dict[str, Any]:
    """A deep copy of ``raw_doc`` with every ``dotted path = value`` of ``overrides`` set exactly.

    Parameters
    ----------
    raw_doc : mapping
        A case document (e.g. ``Case.raw``, which has the inventory inlined).
    overrides : mapping
        Dotted path → value (see the module docstring for the paths).
    source, where : str
        File and context named in messages (e.g. ``"scenario bev-late"``).

    Raises
    ------
    CaseError
        Naming each path that does not exist and the nearest valid path.
    """
    doc = copy.deepcopy(dict(raw_doc))
    problems = []
    for path, value in overrides.items():
        try:
            _set_one(doc, str(path), value)
        except _BadPath as exc:
            near = difflib.get_close_matches(str(path), valid_paths(raw_doc), n=1, cutoff=0.0)
            hint = f"; nearest valid path: '{near[0]}'" if near else ""
            problems.append(Problem(source, f"{where}: '{path}'", f"no such path ({exc}){hint}"))
    if problems:
        raise CaseError(problems)
    return doc


def case_with(case: Case, overrides: Mapping[str, Any], *, where: str = "set") -> Case:
    """The case with ``overrides`` applied, validated by :func:`build_case` like any case."""
    doc = apply_overrides(case.raw, overrides, source=case.source, where=where)
    try:
        return build_case(doc, source=case.source)
    except CaseError as exc:
        raise CaseError([Problem(p.file, f"{where}: {p.path}", p.message) for p in exc.problems]) from None


# ===========================================================================
# scenario files
# ===========================================================================
SCENARIO_FILE_KEYS = ("scenario", "uncertain")


def read_scenario_file(path: Path | str, case: Case) -> tuple[list[Scenario], list[Uncertain]]:
    """Scenarios (``[[scenario]]``) and uncertain inputs (``[[uncertain]]``) of a TOML file.

    The blocks are validated exactly as in a case file; a scenario id already
    used by the case is refused.  Their paths are checked when they are used.
    """
    path = Path(path)
    doc = read_document(path)
    problems = []
    for k in doc:
        if k not in SCENARIO_FILE_KEYS:
            near = difflib.get_close_matches(k, SCENARIO_FILE_KEYS, n=1, cutoff=0.5)
            hint = f"; did you mean '{near[0]}'?" if near else ""
            problems.append(Problem(str(path), k, f"unknown key '{k}'{hint} (a scenario file holds "
                                                  "[[scenario]] and [[uncertain]] blocks)"))
    if problems:
        raise CaseError(problems)
    probe = {k: v for k, v in case.raw.items() if k not in SCENARIO_FILE_KEYS}
    probe["scenario"] = doc.get("scenario", [])
    probe["uncertain"] = doc.get("uncertain", [])
    built = build_case(probe, source=str(path))
    own = {s.id for s in case.scenarios}
    for j, s in enumerate(built.scenarios, start=1):
        if s.id in own:
            problems.append(Problem(str(path), f"scenario[{j}].id",
                                    f"= {s.id!r}: already a scenario of {case.source}; ids must be unique"))
    if problems:
        raise CaseError(problems)
    return list(built.scenarios), list(built.uncertain)


# ===========================================================================
# solve tasks (picklable; run anywhere)
# ===========================================================================
def run_options(solver: str, time_limit: float, gap: float, workers: int) -> dict:
    """Checked solver options for the tasks; ValueError with a one-line message otherwise."""
    if not (time_limit > 0):
        raise ValueError(f"--time-limit {time_limit!r}: must be a number of seconds > 0")
    if not (0 <= gap < 1):
        raise ValueError(f"--gap {gap!r}: must be a fraction in [0, 1), e.g. 0.005")
    if workers < 1:
        raise ValueError(f"--workers {workers!r}: must be a whole number ≥ 1")
    return {"solver": solver, "time_limit": float(time_limit), "gap": float(gap)}


def _lean(doc: Mapping) -> dict:
    """The document without its scenario and uncertain blocks (not needed to solve it)."""
    return {k: v for k, v in doc.items() if k not in SCENARIO_FILE_KEYS}


def make_task(case: Case, overrides: Mapping[str, Any], options: Mapping[str, Any] | None = None, *,
              where: str = "set", keep_plan: bool = False) -> dict:
    """A picklable solve task: the case document, the overrides and the solver options."""
    return {"doc": _lean(case.raw), "set": dict(overrides), "options": dict(options or {}), "source": case.source,
            "where": where, "keep_plan": keep_plan}


def first_year_actions(plan_dict: Mapping, year: int) -> dict[str, str]:
    """``{unit: "keep" | "replace:<type>"}`` for one calendar year of a ``plan.to_dict()``."""
    out = {}
    for u in plan_dict.get("units", []):
        act = "keep"
        for e in u["events"]:
            if e["year"] == year:
                act = f"replace:{e['type']}"
        out[u["unit"]] = act
    return out


def run_task(task: Mapping) -> dict:
    """Apply the overrides, validate, solve; a summary of the plan (and the plan itself if asked)."""
    from .solve import solve

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
           "lower_bound": float(plan.lower_bound), "message": plan.message,
           "first_year": first_year_actions(d, case.study.start_year)}
    if task.get("keep_plan"):
        out["plan"] = d
    return out


def _solve_all(tasks, *, workers, cluster, label, progress) -> list[dict]:
    bar = Progress(len(tasks), label, enabled=bool(progress))
    try:
        return run_tasks(run_task, tasks, workers=workers, cluster=cluster, progress=bar)
    finally:
        bar.close()


# ===========================================================================
# re-costing a fixed schedule under another case
# ===========================================================================
@dataclass(frozen=True)
class Recost:
    """A plan's schedule costed under a case.

    ``cost`` is the present cost at time 0 [money] (None when the schedule
    cannot be laid on the case at all: another horizon, other units, an
    unknown type); ``breaks`` lists the rules it breaks there.
    """

    cost: float | None
    breaks: tuple[str, ...]

    @property
    def feasible(self) -> bool:
        return self.cost is not None and not self.breaks


def _chain_costs(case: Case) -> dict[str, float]:
    """Per class, the capitalised cost of the best endless chain at the end ("continuing")."""
    s = case.study
    y_end = s.start_year + s.horizon
    out = {}
    for cls in case.classes:
        best = None
        for t in case.types_of(cls):
            if t.buyable(y_end - 1):
                c, _ = life.capitalised_chain_cost(t, s.discount_rate, s.start_year, y_end)
                if best is None or c < best:
                    best = c
        if best is not None:
            out[cls] = best
    return out


def recost(plan_dict: Mapping, case: Case) -> Recost:
    """Present cost of a plan's schedule under ``case``, and the rules it breaks there.

    Each unit starts from ``case``'s inventory (type and age) and is replaced
    in the same calendar years by the same types as in the plan; every price,
    market value, O&M and end value comes from ``case`` via :mod:`tenure.curves`
    and is discounted at ``case``'s rate (docs/conventions.md: buying and
    selling at the start of a year, O&M at its end).

    Parameters
    ----------
    plan_dict : mapping
        ``Plan.to_dict()`` of the plan.
    case : Case
    """
    s = case.study
    y0, H, rate = s.start_year, s.horizon, s.discount_rate
    cp = s.carbon_price  # priced tonnes are paid with the O&M (docs/conventions.md)
    years = [y["year"] for y in plan_dict.get("years", [])]
    if years != list(s.years):
        return Recost(None, (f"the plan covers {years[0] if years else '?'}–{years[-1] if years else '?'}, "
                             f"the scenario {y0}–{y0 + H - 1}",))
    rows = {u.id: u for u in case.units}
    names = [n for u in case.units for n in u.names()]
    plan_units = plan_dict.get("units", [])
    plan_names = [u["unit"] for u in plan_units]
    if sorted(plan_names) != sorted(names):
        extra = sorted(set(plan_names) - set(names))
        missing = sorted(set(names) - set(plan_names))
        return Recost(None, ("the plan's units differ from the scenario's inventory"
                             + (f"; not in the scenario: {', '.join(extra[:5])}" if extra else "")
                             + (f"; not in the plan: {', '.join(missing[:5])}" if missing else ""),))
    types = {t.id: t for t in case.types}
    v = (1.0 + rate) ** -np.arange(H + 1, dtype=float)
    capital = np.zeros(H)
    proceeds = np.zeros(H)
    buys: list[Counter] = [Counter() for _ in range(H)]
    chain_costs = _chain_costs(case) if s.end_value == "continuing" else {}
    broken: Counter = Counter()  # message -> units
    total = 0.0
    for pu in plan_units:
        row = rows[pu["unit"].rsplit("#", 1)[0]]
        t, a = types[row.type], row.age
        cls = t.class_
        ev = {e["year"]: e["type"] for e in pu["events"]}
        for k in range(H):
            y = y0 + k
            if y in ev:
                new = types.get(ev[y])
                if new is None:
                    return Recost(None, (f"{y}: the plan buys type {ev[y]!r}, unknown in the scenario",))
                if new.class_ != cls:
                    broken[f"{y}: buys {new.id} (class {new.class_}) for a {cls} unit"] += 1
                if not new.buyable(y):
                    broken[f"{y}: buys {new.id}, which can be bought only {_window(new)}"] += 1
                p = curves.price(new, y, y0)
                mv = curves.market_value(t, a, y, y0)
                total += v[k] * (p - mv) + v[k + 1] * (curves.om(new, 1, y, y0) + cp * curves.tonnes(new, y, y0))
                capital[k] += p
                proceeds[k] += mv
                buys[k][new.class_] += 1
                t, a = new, 1
            else:
                if a >= t.max_age:
                    broken[f"{y}: keeps a {t.id} at age {a}, its max age is {t.max_age}"] += 1
                total += v[k + 1] * (curves.om(t, a + 1, y - a, y0) + cp * curves.tonnes(t, y - a, y0))
                a += 1
        y_end = y0 + H
        if s.end_value == "salvage":
            total -= v[H] * curves.market_value(t, a, y_end, y0)
        else:
            a_end = min(a, t.max_age)
            total += v[H] * life.continuing_cost(t, a_end, y_end - a_end, chain_costs[t.class_], rate, y0, y_end)
    b = case.budget
    for k in range(H):
        y = y0 + k
        cap = b.constant_cap(y) if b is not None else None
        if cap is not None:
            spend = capital[k] - (proceeds[k] if b.basis == "net" else 0.0)
            if spend > cap * (1 + CAP_TOL) + 1e-6:
                broken[f"{y}: spends {spend:,.0f} ({b.basis}), over the cap of {cap:,.0f}"] += 1
        for cls, n in buys[k].items():
            lim = case.limit_for(cls)
            if lim is not None and n > lim:
                broken[f"{y}: buys {n} {cls} units, over the limit of {lim}"] += 1
    msgs = tuple(m if n == 1 or "cap" in m or "limit" in m else f"{m} ({n} units)"
                 for m, n in sorted(broken.items(), key=lambda kv: kv[0][:4]))
    return Recost(float(total), msgs)


def _window(t) -> str:
    if t.buy_from is not None and t.buy_until is not None:
        return f"in {t.buy_from}–{t.buy_until}"
    return f"from {t.buy_from}" if t.buy_from is not None else f"until {t.buy_until}"


def regret_table(ids: Sequence[str], plans: Mapping[str, Mapping | None], cases: Mapping[str, Case]) -> dict:
    """Every plan re-costed under every scenario; regret and the plan of least maximum regret.

    Returns the ``"regret"`` part of ``compare.json``: ``cost[i][j]`` (plan of
    scenario *i* under scenario *j*), ``regret[i][j]`` (None where plan *i*
    breaks a rule under *j* or cannot be laid on it), ``breaks[i][j]``,
    ``best_under[j]``, ``max_regret[i]`` (None when the plan breaks somewhere),
    ``least_max_regret`` and ``rule``; ``ids`` and ``matrix`` (rows: plans,
    columns: scenarios, in ``ids`` order) repeat ``regret`` as a list of lists.
    """
    cost: dict[str, dict[str, float | None]] = {}
    breaks: dict[str, dict[str, list[str]]] = {}
    feasible: dict[str, dict[str, bool]] = {}
    for i in ids:
        cost[i], breaks[i], feasible[i] = {}, {}, {}
        for j in ids:
            if plans.get(i) is None:
                cost[i][j], breaks[i][j], feasible[i][j] = None, ["no plan"], False
                continue
            r = recost(plans[i], cases[j])
            cost[i][j], breaks[i][j], feasible[i][j] = r.cost, list(r.breaks), r.feasible
    best = {}
    for j in ids:
        ok = [cost[i][j] for i in ids if feasible[i][j]]
        best[j] = min(ok) if ok else None
    regret = {i: {j: (cost[i][j] - best[j] if feasible[i][j] and best[j] is not None else None) for j in ids}
              for i in ids}
    max_regret = {}
    rank = {}
    for n, i in enumerate(ids):
        if plans.get(i) is None:
            continue
        vals = [r for r in regret[i].values() if r is not None]
        n_broken = sum(1 for j in ids if not feasible[i][j])
        max_regret[i] = max(vals) if vals and n_broken == 0 else None
        rank[i] = (n_broken, max(vals) if vals else math.inf, n)
    choice = min(rank, key=rank.get) if rank else None
    if choice is not None and rank[choice][0] > 0:
        rule = ("every plan breaks a rule under some scenario; the plan breaking the fewest scenarios, then "
                "of least maximum regret where it can be carried out, is chosen")
    else:
        rule = "least maximum regret among the plans that break no rule under any scenario"
    rounded = _round_nested(regret)
    return {"scenarios": list(ids), "ids": list(ids), "matrix": [[rounded[i][j] for j in ids] for i in ids],
            "cost": _round_nested(cost), "regret": rounded,
            "breaks": breaks, "best_under": {j: _r(x) for j, x in best.items()},
            "max_regret": {i: _r(x) for i, x in max_regret.items()}, "least_max_regret": choice, "rule": rule}


# ===========================================================================
# compare
# ===========================================================================
def _r(x):
    return None if x is None else round(float(x), 2)


def _round_nested(d):
    return {i: {j: _r(x) for j, x in row.items()} for i, row in d.items()}


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


def compare_csv(doc: Mapping) -> str:
    """One row per scenario: cost, difference, max regret, capital by year, units bought by type."""
    rows = doc["scenarios"]
    years = sorted({y for r in rows for y in r["capital_by_year"]})
    types = []
    for r in rows:
        types += [t for t in r["buys_by_type"] if t not in types]
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(["id", "note", "status", "present_cost", "difference", "max_regret"]
               + [f"capital_{y}" for y in years] + [f"buys_{t}" for t in types])
    mr = doc["regret"]["max_regret"]
    for r in rows:
        w.writerow([r["id"], r["note"], r["status"], _cell(r["present_cost"]), _cell(r["difference"]),
                    _cell(mr.get(r["id"]))]
                   + [_cell(r["capital_by_year"].get(y)) for y in years]
                   + [r["buys_by_type"].get(t, 0) for t in types])
    return buf.getvalue()


def _cell(x):
    if x is None:
        return ""
    return f"{x:.2f}" if isinstance(x, float) else x


def _money(x, signed=False) -> str:
    if x is None:
        return "—"
    if signed and round(x) == 0:
        return "0"
    return f"{x:+,.0f}" if signed else f"{x:,.0f}"


def _group_units(items: Sequence[tuple[str, Any]]) -> list[tuple[str, Any]]:
    """Collapse consecutive units of one inventory row with the same value: ``RT-L12#1–2``."""
    out: list[tuple[str, Any]] = []
    run: list[str] = []
    prev_row = prev_val = None

    def flush():
        if run:
            if len(run) == 1:
                out.append((run[0], prev_val))
            else:
                out.append((f"{run[0]}–{run[-1].rsplit('#', 1)[1]}", prev_val))

    for name, val in items:
        row = name.rsplit("#", 1)[0]
        if run and row == prev_row and val == prev_val:
            run.append(name)
            continue
        flush()
        run = [name]
        prev_row, prev_val = row, val
    flush()
    return out


def compare_text(doc: Mapping) -> str:
    """The terminal view of ``compare.json``."""
    rows = doc["scenarios"]
    ids = [r["id"] for r in rows]
    w = max(13, *(len(i) + 2 for i in ids))
    lab = 26
    y0, H = doc["start_year"], doc["horizon"]
    out = [f"{doc.get('title') or 'compare'} — {len(rows) - 1} scenario(s) against the base case",
           "─" * (lab + w * len(ids))]
    for r in rows:
        out.append(f"  {r['id']:<{max(len(i) for i in ids)}}  {r['note'] or ''}")
    out.append("")
    out.append(f"{'':<{lab}}" + "".join(i.rjust(w) for i in ids))

    def line(label, cells):
        out.append(f"{label:<{lab}}" + "".join(str(c).rjust(w) for c in cells))

    line("status", [r["status"] for r in rows])
    line(f"present cost ({y0} money)", [_money(r["present_cost"]) for r in rows])
    line("difference from base", [_money(r["difference"], signed=True) for r in rows])
    out.append("capital spent (undiscounted)")
    for k0 in range(0, H, 5):
        ys = [str(y) for y in range(y0 + k0, min(y0 + k0 + 5, y0 + H))]
        line(f"  {ys[0]}–{ys[-1]}", [_money(sum(r["capital_by_year"].get(y, 0.0) for y in ys))
                                     if r["capital_by_year"] else "—" for r in rows])
    types = []
    for r in rows:
        types += [t for t in r["buys_by_type"] if t not in types]
    out.append("units bought over the horizon")
    for t in types:
        line(f"  {t}", [r["buys_by_type"].get(t, 0) for r in rows])

    base = rows[0]
    if len(rows) > 1:
        out.append("")
        out.append("In brief")
    for r in rows[1:]:
        if r["difference"] is None:
            out.append(f"  {r['id']}: {r['status']} — {r['message'] or 'no comparable plan'}")
            continue
        rel = r["difference"] / abs(base["present_cost"]) if base["present_cost"] else 0.0
        b_under = doc["regret"]["breaks"]["base"][r["id"]]
        reg_b = doc["regret"]["regret"]["base"][r["id"]]
        if b_under:
            fate = ("the base plan cannot be carried out under it (" + b_under[0]
                    + (" …" if len(b_under) > 1 else "") + ")")
        elif reg_b is not None and round(reg_b) == 0:
            fate = "kept as is, the base plan is the cheapest plan known there too"
        else:
            fate = f"kept as is, the base plan would cost {_money(reg_b)} more there than the best plan"
        out.append(f"  {r['id']}: re-planned, {_money(r['difference'], signed=True)} ({rel:+.1%}) against the base; "
                   + fate)

    differ = doc["differ_early"]
    out.append("")
    if differ:
        solved = doc["safe_now_from"]
        out.append(f"Decisions in {y0}–{y0 + 1} that differ between scenarios")
        out.append(f"{'unit':<18}{'year':>6}" + "".join(s.rjust(max(w, 20)) for s in solved))
        for year in (y0, y0 + 1):
            items = [(d["unit"], tuple(d["actions"][s] for s in solved)) for d in differ if d["year"] == year]
            for name, acts in _group_units(items):
                out.append(f"{name:<18}{year:>6}" + "".join(a.rjust(max(w, 20)) for a in acts))
    else:
        out.append(f"Every scenario's plan takes the same decisions in {y0}–{y0 + 1}.")

    reg = doc["regret"]
    out.append("")
    out.append("Regret: each row's plan, schedule fixed, costed under each column's assumptions,")
    out.append("less the least cost of any plan that can be carried out there ('breaks': it cannot)")
    out.append(f"{'plan of':<{lab}}" + "".join(i.rjust(w) for i in ids) + "max regret".rjust(w))
    for i in ids:
        cells = []
        for j in ids:
            if reg["breaks"][i][j]:
                cells.append("breaks" if reg["cost"][i][j] is not None else "n/a")
            else:
                cells.append(_money(reg["regret"][i][j]))
        cells.append(_money(reg["max_regret"].get(i)))
        line(f"  {i}", cells)
    notes = [(i, j, reg["breaks"][i][j]) for i in ids for j in ids if reg["breaks"][i][j]]
    for i, j, msgs in notes:
        more = f" (+{len(msgs) - 3} more)" if len(msgs) > 3 else ""
        out.append(f"  {i} plan under {j}: " + "; ".join(msgs[:3]) + more)
    for i in ids:
        own = reg["regret"][i][i]
        if own is not None and own > 0.005 * max(abs(reg["best_under"][i] or 0.0), 1.0) * 1e-3:
            cheaper = [k for k in ids if reg["regret"][k][i] == 0.0]
            out.append(f"  note: under {i} the {', '.join(cheaper) or 'another'} plan is {_money(own)} cheaper than "
                       f"{i}'s own plan (the capped solve stops within its optimality gap)")
    ch = reg["least_max_regret"]
    if ch is not None:
        mr = reg["max_regret"].get(ch)
        out.append(f"least maximum regret: the {ch} plan"
                   + (f" (at most {_money(mr)} above the best plan of any scenario)" if mr is not None else "")
                   + f" — {reg['rule']}")

    out.append("")
    safe = doc["safe_now"]
    solved = doc["safe_now_from"]
    buys = [(s["unit"], s["action"]) for s in safe if s["action"] != "keep"]
    keeps = [s for s in safe if s["action"] == "keep"]
    n_units = len(rows[0]["first_year_actions"]) or len(safe)
    out.append(f"Safe to commit now ({y0}: the same action in the plans of {', '.join(solved)}):")
    if buys:
        for name, act in _group_units(buys):
            out.append(f"  replace {name} with {act.split(':', 1)[1]}")
    else:
        out.append("  no purchase is common to every scenario's plan")
    out.append(f"  keep {len(keeps)} unit(s); {n_units - len(safe)} unit(s) have first-year decisions "
               "that depend on the scenario")
    return "\n".join(out)


def write_compare(doc: Mapping, case: Case, out_dir: Path | str) -> list[Path]:
    """compare.json and compare.csv (atomic writes), and the report when its writer is installed."""
    from .report import files

    out = Path(out_dir)
    paths = [files.write_json(out / "compare.json", doc), files.write_text(out / "compare.csv", compare_csv(doc))]
    try:
        from .report import documents

        writer = documents.write_compare_report
    except (ImportError, AttributeError):
        return paths
    extra = writer(doc, case, out)
    if isinstance(extra, (list, tuple)):
        paths += [Path(p) for p in extra]
    elif extra is not None:
        paths.append(Path(extra))
    return paths


# ===========================================================================
# sweeps
# ===========================================================================
VARY_SYNTAX = "PATH=LOW:HIGH:STEPS, e.g. asset_type.rt-bev.price_change=-0.07:-0.02:6"


@dataclass(frozen=True)
class Axis:
    """One swept input of a grid: ``steps`` evenly spaced values from ``low`` to ``high``."""

    path: str
    low: float
    high: float
    steps: int

    def values(self) -> list:
        return [coerce(self.path, x) for x in np.linspace(self.low, self.high, self.steps)]


def parse_vary(text: str) -> Axis:
    """``PATH=LOW:HIGH:STEPS`` → :class:`Axis`; ValueError with a one-line message otherwise."""
    path, eq, rng = text.partition("=")
    parts = rng.split(":")
    if not eq or not path.strip() or len(parts) != 3:
        raise ValueError(f"--vary {text!r}: expected {VARY_SYNTAX}")
    try:
        low, high = float(parts[0]), float(parts[1])
    except ValueError:
        raise ValueError(f"--vary {text!r}: LOW and HIGH must be numbers ({VARY_SYNTAX})") from None
    try:
        steps = int(parts[2])
    except ValueError:
        raise ValueError(f"--vary {text!r}: STEPS must be a whole number ≥ 2 ({VARY_SYNTAX})") from None
    if not (math.isfinite(low) and math.isfinite(high)):
        raise ValueError(f"--vary {text!r}: LOW and HIGH must be finite numbers")
    if steps < 2 and low != high:
        raise ValueError(f"--vary {text!r}: STEPS must be a whole number ≥ 2 ({VARY_SYNTAX})")
    if low > high:
        raise ValueError(f"--vary {text!r}: LOW must not be above HIGH")
    return Axis(path.strip(), low, high, max(steps, 1))


def coerce(path: str, x: float):
    """The value to set at ``path``: rounded for whole-number fields, else a float."""
    whole = path.rsplit(".", 1)[-1] in INTEGER_FIELDS or rule_paths.is_integer(path)
    return int(round(float(x))) if whole else float(x)


def draw(uncertain: Sequence[Uncertain], samples: int, seed: int) -> np.ndarray:
    """``samples × len(uncertain)`` draws from one ``default_rng(seed)``, input by input.

    uniform on [low, high]; triangular (low, mode, high); normal (mean, sd)
    clipped to [low, high].
    """
    rng = np.random.default_rng(seed)
    cols = []
    for u in uncertain:
        if u.dist == "uniform":
            col = rng.uniform(u.low, u.high, samples)
        elif u.dist == "triangular":
            col = (rng.triangular(u.low, u.mode, u.high, samples) if u.high > u.low
                   else np.full(samples, u.low))
        elif u.dist == "normal":
            col = np.clip(rng.normal(u.mean, u.sd, samples), u.low, u.high)
        else:  # pragma: no cover - validated by tenure.case
            raise ValueError(f"unknown distribution {u.dist!r}")
        cols.append(col)
    return np.column_stack(cols) if cols else np.empty((samples, 0))


def _check_inputs(case: Case, inputs: Sequence[tuple[str, float, float, str]]) -> None:
    """Both ends of every input must give a valid case (paths and values)."""
    problems = []
    for path, low, high, where in inputs:
        for x in (low, high):
            try:
                case_with(case, {path: coerce(path, x)}, where=where)
            except CaseError as exc:
                problems += [p for p in exc.problems if p not in problems]
    if problems:
        raise CaseError(problems)


def sweep(case: Case, *, axes: Sequence[Axis] = (), samples: int | None = None, seed: int = 0,
          uncertain: Sequence[Uncertain] | None = None, options: Mapping[str, Any] | None = None,
          workers: int = 1, cluster: str | None = None, progress: bool = False, max_points: int = 100_000) -> dict:
    """Solve the case over a grid (``axes``) or Monte Carlo draws; the ``sweep.json`` document.

    Exactly one of ``axes`` (grid: every combination, first axis slowest)
    and ``samples`` (Monte Carlo over ``uncertain``, default
    ``case.uncertain``) is given.  Besides the points, the base case and each
    input at its low and at its high end (the others as in the case) are
    solved for the one-at-a-time sensitivity table.

    Returns
    -------
    dict
        ``mode``, ``inputs``, ``base``, ``present_cost`` (quantiles 5/25/50/75/95 %
        by linear interpolation between order statistics, mean, min, max),
        ``first_year_actions`` (unit → action → share of solved points),
        ``sensitivity`` (sorted by swing) and ``points``.
    """
    if bool(axes) == (samples is not None):
        raise ValueError("give either grid axes or a number of samples")
    if axes:
        mode = "grid"
        names = [a.path for a in axes]
        inputs = [{"path": a.path, "low": a.low, "high": a.high, "steps": a.steps} for a in axes]
        ends = [(a.path, a.low, a.high, "--vary") for a in axes]
        n_points = math.prod(a.steps for a in axes)
        if n_points > max_points:
            raise ValueError(f"the grid has {n_points} points; at most {max_points} are allowed")
        points = [dict(zip(names, combo)) for combo in itertools.product(*(a.values() for a in axes))]
    else:
        mode = "monte_carlo"
        unc = list(case.uncertain if uncertain is None else uncertain)
        if not unc:
            raise ValueError("--samples needs [[uncertain]] blocks in the case or in a --scenarios file")
        if samples < 1:
            raise ValueError(f"--samples {samples}: must be a whole number ≥ 1")
        inputs = [{"path": u.path, "dist": u.dist, "low": u.low, "high": u.high,
                   **{k: getattr(u, k) for k in ("mode", "mean", "sd") if getattr(u, k) is not None}} for u in unc]
        ends = [(u.path, u.low, u.high, f"uncertain[{j}]") for j, u in enumerate(unc, start=1)]
        x = draw(unc, samples, seed)
        points = []
        for row in x:
            p: dict[str, Any] = {}
            for u, val in zip(unc, row):
                p[u.path] = coerce(u.path, val)
            points.append(p)
    _check_inputs(case, ends)
    oat = [(path, coerce(path, lo), coerce(path, hi)) for path, lo, hi, _ in ends]
    tasks = [make_task(case, {}, options, where="base")]
    tasks += [make_task(case, p, options, where=f"point {n}") for n, p in enumerate(points, start=1)]
    for path, lo, hi in oat:
        tasks += [make_task(case, {path: lo}, options, where=f"{path} low"),
                  make_task(case, {path: hi}, options, where=f"{path} high")]
    res = _solve_all(tasks, workers=workers, cluster=cluster, label="sweep", progress=progress)
    base, pts, ends_res = res[0], res[1:1 + len(points)], res[1 + len(points):]
    ok = [r for r in pts if r["status"] in ("optimal", "feasible")]
    costs = np.array([r["present_cost"] for r in ok], dtype=float)
    pc = {"solved": len(ok), "not_solved": len(pts) - len(ok)}
    if len(costs):
        qs = np.quantile(costs, [q / 100 for q in QUANTILES])
        pc.update({"quantiles": {str(q): _r(v) for q, v in zip(QUANTILES, qs)}, "mean": _r(costs.mean()),
                   "min": _r(costs.min()), "max": _r(costs.max())})
    else:
        pc.update({"quantiles": {str(q): None for q in QUANTILES}, "mean": None, "min": None, "max": None})
    freq: dict[str, Counter] = {}
    for r in ok:
        for u, act in r["first_year"].items():
            freq.setdefault(u, Counter())[act] += 1
    shares = {u: {a: round(n / len(ok), 6) for a, n in sorted(c.items(), key=lambda kv: (-kv[1], kv[0]))}
              for u, c in freq.items()}
    sens = []
    for j, (path, lo, hi) in enumerate(oat):
        r_lo, r_hi = ends_res[2 * j], ends_res[2 * j + 1]
        c_lo, c_hi = r_lo["present_cost"], r_hi["present_cost"]
        good = r_lo["status"] in ("optimal", "feasible") and r_hi["status"] in ("optimal", "feasible")
        sens.append({"path": path, "low": lo, "high": hi, "cost_at_low": _r(c_lo), "cost_at_high": _r(c_hi),
                     "status_at_low": r_lo["status"], "status_at_high": r_hi["status"],
                     "swing": _r(abs(c_hi - c_lo)) if good else None})
    sens.sort(key=lambda s: (s["swing"] is None, -(s["swing"] or 0.0)))
    return {
        "case": case.source, "title": case.study.title, "start_year": case.study.start_year, "mode": mode,
        "seed": seed if mode == "monte_carlo" else None, "points_count": len(points), "inputs": inputs,
        "base": {"status": base["status"], "present_cost": _r(base["present_cost"]),
                 "first_year_actions": base.get("first_year", {})},
        "present_cost": pc, "first_year_actions": shares, "sensitivity": sens,
        "points": [{"point": n, "values": p, "status": r["status"], "present_cost": _r(r["present_cost"])}
                   for n, (p, r) in enumerate(zip(points, pts), start=1)],
    }


def sweep_csv(doc: Mapping) -> str:
    """One row per point: its input values, status and present cost."""
    names = [i["path"] for i in doc["inputs"]]
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(["point"] + names + ["status", "present_cost"])
    for p in doc["points"]:
        w.writerow([p["point"]] + [p["values"][n] for n in names] + [p["status"], _cell(p["present_cost"])])
    return buf.getvalue()


def sensitivity_csv(doc: Mapping) -> str:
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(["path", "low", "high", "cost_at_low", "cost_at_high", "swing"])
    for s in doc["sensitivity"]:
        w.writerow([s["path"], s["low"], s["high"], _cell(s["cost_at_low"]), _cell(s["cost_at_high"]),
                    _cell(s["swing"])])
    return buf.getvalue()


def write_sweep(doc: Mapping, out_dir: Path | str) -> list[Path]:
    """sweep.json, sweep.csv (points) and sensitivity.csv, written atomically."""
    from .report import files

    out = Path(out_dir)
    return [files.write_json(out / "sweep.json", doc), files.write_text(out / "sweep.csv", sweep_csv(doc)),
            files.write_text(out / "sensitivity.csv", sensitivity_csv(doc))]


def sweep_text(doc: Mapping) -> str:
    """The terminal view of ``sweep.json``."""
    pc = doc["present_cost"]
    y0 = doc["start_year"]
    n = doc["points_count"]
    how = (f"Monte Carlo, {n} draws, seed {doc['seed']}" if doc["mode"] == "monte_carlo"
           else f"grid of {n} points")
    out = [f"{doc.get('title') or 'sweep'} — {how}", "─" * 72]
    for i in doc["inputs"]:
        if doc["mode"] == "grid":
            out.append(f"  {i['path']}: {i['low']:g} … {i['high']:g} in {i['steps']} steps")
        else:
            extra = "".join(f", {k} {i[k]:g}" for k in ("mode", "mean", "sd") if k in i)
            out.append(f"  {i['path']}: {i['dist']} on [{i['low']:g}, {i['high']:g}]{extra}")
    out.append("")
    out.append(f"base case present cost: {_money(doc['base']['present_cost'])} ({doc['base']['status']})")
    out.append(f"present cost ({y0} money) over {pc['solved']} solved point(s)"
               + (f"; {pc['not_solved']} not solved" if pc["not_solved"] else ""))
    out.append("  " + "".join(f"{'P' + q:>14}" for q in pc["quantiles"]) + f"{'mean':>14}")
    out.append("  " + "".join(f"{_money(v):>14}" for v in pc["quantiles"].values()) + f"{_money(pc['mean']):>14}")
    out.append("")
    shares = doc["first_year_actions"]
    varying = [(u, tuple(s.items())) for u, s in shares.items() if len(s) > 1]
    fixed = [(u, next(iter(s))) for u, s in shares.items() if len(s) == 1]
    out.append(f"{y0} decisions: {len(fixed)} unit(s) take the same action at every point")
    fixed_buys = [(u, a) for u, a in fixed if a != "keep"]
    for name, act in _group_units(fixed_buys):
        out.append(f"  always: replace {name} with {act.split(':', 1)[1]}")
    if varying:
        out.append("  depends on the inputs (share of points where each action is optimal):")
        for name, acts in _group_units(varying):
            out.append(f"    {name:<16} " + ", ".join(f"{a} {s:.0%}" for a, s in acts))
    out.append("")
    out.append("One at a time (each input at its low and high end, the others as in the case)")
    out.append(f"{'input':<40}{'low':>10}{'high':>10}{'cost at low':>16}{'cost at high':>16}{'swing':>14}")
    top = max([s["swing"] or 0.0 for s in doc["sensitivity"]] + [1e-9])
    for s in doc["sensitivity"]:
        bar = "█" * int(round(12 * (s["swing"] or 0.0) / top))
        out.append(f"{s['path']:<40}{s['low']:>10g}{s['high']:>10g}{_money(s['cost_at_low']):>16}"
                   f"{_money(s['cost_at_high']):>16}{_money(s['swing']):>14} {bar}")
    return "\n".join(out)
