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
from dataclasses import dataclass
from typing import Any, Mapping, Sequence

from ..model import Case, Scenario
from .overrides import case_with
from .bestknown import adopt, best_known
from .recost import RegretTable, regret_table
from .tasks import first_year_actions, make_task, solve_all as _solve_all
from .tasks import round2 as _r
from .tasks import solved as _solved

BASE_NOTE = "the case as written"


@dataclass(frozen=True)
class ScenarioResult:
    """One scenario of a comparison, solved on its own.

    ``present_cost`` and ``difference`` (from the base case's) are present
    worths at time 0 [money, cents]; ``gap`` is the plan's proven relative
    optimality gap as its solve reported it; ``capital_by_year`` maps a
    calendar year (text) to the purchase prices of that year [money,
    undiscounted]; ``first_year_actions`` maps a unit to ``"keep"`` or
    ``"replace:<type>"`` in the start year.
    """

    id: str
    note: str
    set: Mapping[str, Any]
    status: str
    present_cost: float | None
    difference: float | None
    gap: float | None
    message: str
    capital_by_year: Mapping[str, float]
    buys_by_type: Mapping[str, int]
    first_year_actions: Mapping[str, str]
    #: the scenario whose solve produced the schedule: ``id`` itself, or another scenario's id when that
    #: schedule is cheaper under this one (the best known plan, :mod:`tenure.scenarios.bestknown`)
    plan_from: str = ""

    @property
    def solved(self) -> bool:
        """Whether the scenario has a plan (optimal, or feasible within a proven gap)."""
        return _solved(self.status)

    def to_dict(self) -> dict:
        return {"id": self.id, "note": self.note, "set": dict(self.set), "status": self.status,
                "present_cost": self.present_cost, "difference": self.difference, "gap": self.gap,
                "message": self.message, "capital_by_year": dict(self.capital_by_year),
                "buys_by_type": dict(self.buys_by_type), "first_year_actions": dict(self.first_year_actions),
                "plan_from": self.plan_from or self.id}


@dataclass(frozen=True)
class SafeAction:
    """A start-year action that every solved scenario's plan takes for one unit."""

    unit: str
    action: str

    def to_dict(self) -> dict:
        return {"unit": self.unit, "action": self.action}


@dataclass(frozen=True)
class EarlyDifference:
    """A unit whose action in ``year`` differs between the scenarios' plans (scenario → action)."""

    unit: str
    year: int
    actions: Mapping[str, str]

    def to_dict(self) -> dict:
        return {"unit": self.unit, "year": self.year, "actions": dict(self.actions)}


@dataclass(frozen=True)
class Comparison:
    """The base case and each scenario solved, the regret table and the safe first-year actions.

    One result object per comparison; :meth:`to_dict` is ``compare.json``.
    ``scenarios`` holds the base case first; ``safe_now_from`` names the
    solved scenarios the safe actions are drawn from.
    """

    case: str
    title: str
    start_year: int
    horizon: int
    scenarios: tuple[ScenarioResult, ...]
    regret: RegretTable
    safe_now: tuple[SafeAction, ...]
    safe_now_from: tuple[str, ...]
    differ_early: tuple[EarlyDifference, ...]
    #: regret of committing each plan's first ``commit_years`` years, then re-planning (None: not asked)
    commit_regret: RegretTable | None = None
    commit_years: int | None = None
    commit_notes: tuple[str, ...] = ()

    @property
    def ids(self) -> list[str]:
        return [s.id for s in self.scenarios]

    @property
    def base(self) -> ScenarioResult:
        return self.scenarios[0]

    def scenario(self, sid: str) -> ScenarioResult:
        """The result of scenario ``sid`` (KeyError naming the ids otherwise)."""
        for s in self.scenarios:
            if s.id == sid:
                return s
        raise KeyError(f"no scenario {sid!r} in the comparison (scenarios: {', '.join(self.ids)})")

    def calendar_years(self) -> list[str]:
        """Every calendar year with a capital figure in some scenario, in order (text keys)."""
        return sorted({y for r in self.scenarios for y in r.capital_by_year})

    def bought_types(self) -> list[str]:
        """Every type bought in some scenario's plan, in order of first appearance."""
        out: list[str] = []
        for r in self.scenarios:
            out += [t for t in r.buys_by_type if t not in out]
        return out

    def scenario_rows(self) -> tuple[list[str], list[list]]:
        """Columns and rows of ``compare.csv``: cost, difference, max regret, capital by year, buys by type."""
        years, types = self.calendar_years(), self.bought_types()
        extra = [f"max_regret_commit_{self.commit_years}"] if self.commit_regret is not None else []
        cols = (["id", "note", "status", "present_cost", "difference", "max_regret"] + extra
                + [f"capital_{y}" for y in years] + [f"buys_{t}" for t in types])
        rows = [[r.id, r.note, r.status, r.present_cost, r.difference, self.regret.max_regret.get(r.id)]
                + ([self.commit_regret.max_regret.get(r.id)] if extra else [])
                + [r.capital_by_year.get(y) for y in years] + [r.buys_by_type.get(t, 0) for t in types]
                for r in self.scenarios]
        return cols, rows

    def scenarios_frame(self):
        """``compare.csv`` as a pandas DataFrame (one row per scenario; missing figures are NaN)."""
        import pandas as pd

        cols, rows = self.scenario_rows()
        return pd.DataFrame(rows, columns=cols)

    def regret_frame(self):
        """Regret as a DataFrame: index the plan of each scenario, columns the scenarios (NaN: breaks a rule)."""
        return self.regret.frame()

    def to_dict(self) -> dict:
        d = {"case": self.case, "title": self.title, "start_year": self.start_year, "horizon": self.horizon,
             "scenarios": [s.to_dict() for s in self.scenarios], "regret": self.regret.to_dict(),
             "safe_now": [s.to_dict() for s in self.safe_now], "safe_now_from": list(self.safe_now_from),
             "differ_early": [d.to_dict() for d in self.differ_early]}
        if self.commit_regret is not None:
            d["commit_regret"] = {**self.commit_regret.to_dict(), "commit_years": self.commit_years,
                                  "notes": list(self.commit_notes)}
        return d


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
            workers: int = 1, cluster: str | None = None, progress: bool = False,
            commit_years: int | None = None) -> Comparison:
    """Solve the base case and each scenario; regret and the actions safe to commit now.

    Parameters
    ----------
    case : Case
    scenarios : sequence of Scenario
    options : mapping
        Solver options for capped cases (solver, time_limit [s], gap [fraction]).
    workers, cluster :
        See :func:`tenure.parallel.run_tasks`.
    progress : bool
        Show a progress bar on a terminal.
    commit_years : int or None
        Also the regret of committing each plan's first N years, then re-planning
        (:mod:`tenure.scenarios.replan`).

    Returns
    -------
    Comparison
        ``to_dict()`` is ``compare.json``.
    """
    entries = [("base", BASE_NOTE, {})] + [(s.id, s.note, dict(s.set)) for s in scenarios]
    cases = {sid: (case if sid == "base" else case_with(case, sets, where=f"scenario {sid}"))
             for sid, _, sets in entries}
    tasks = [make_task(case, sets, options, where=f"scenario {sid}", keep_plan=True) for sid, _, sets in entries]
    results = _solve_all(tasks, workers=workers, cluster=cluster, label="compare", progress=progress)
    ids = [sid for sid, _, _ in entries]
    plans = {sid: res.get("plan") for sid, res in zip(ids, results)}
    # a schedule solved for another scenario that is cheaper under a scenario becomes its plan (bestknown.py)
    table = regret_table(ids, plans, cases)
    chosen = best_known(ids, plans, table)
    if chosen:
        plans, results = adopt(ids, plans, results, cases, chosen)
        table = regret_table(ids, plans, cases)
    base_cost = results[0]["present_cost"] if _solved(results[0]["status"]) else None
    rows = tuple(_result(sid, note, sets, res, base_cost, cases[sid])
                 for (sid, note, sets), res in zip(entries, results))
    solved = [sid for sid, res in zip(ids, results) if _solved(res["status"])]
    safe, differ = _first_years(plans, solved, case.study.start_year)
    commit = (None, ())
    if commit_years is not None:
        from .replan import commit_regret_table

        commit = commit_regret_table(case, [(sid, sets) for sid, _, sets in entries], plans,
                                     {sid: res["present_cost"] for sid, res in zip(ids, results)},
                                     {sid: res.get("gap") for sid, res in zip(ids, results)}, commit_years,
                                     options or {}, workers=workers, cluster=cluster)
    return Comparison(case.source, case.study.title, case.study.start_year, case.study.horizon, rows,
                      table, safe, tuple(solved), differ, commit[0], commit_years, commit[1])


def _result(sid: str, note: str, sets: Mapping, res: Mapping, base_cost: float | None, case: Case) -> ScenarioResult:
    pd_ = res.get("plan")
    pc = res["present_cost"]
    cap_by_year, buys_by_type = {}, Counter()
    if pd_:
        for y in pd_["years"]:
            cap_by_year[str(y["year"])] = y["capital"]
            buys_by_type.update(y["buys_by_type"])
    cap_by_year = dict(res.get("capital_by_year", cap_by_year))  # another scenario's schedule, costed here
    ok = _solved(res["status"])
    return ScenarioResult(
        id=sid, note=note, set=sets, status=res["status"], present_cost=_r(pc),
        difference=_r(pc - base_cost) if ok and base_cost is not None and pc is not None else None,
        gap=res.get("gap"), message=res.get("message", ""), capital_by_year=cap_by_year,
        buys_by_type={t.id: buys_by_type[t.id] for t in case.types if buys_by_type[t.id]},
        first_year_actions=res.get("first_year", {}), plan_from=res.get("plan_from", sid))


def _first_years(plans: Mapping, solved: Sequence[str], y0: int):
    """Start-year actions shared by every solved plan, and the decisions of the first two years that differ."""
    safe, differ = [], []
    if not solved:
        return (), ()
    first = {sid: _actions_in(plans[sid], y0) for sid in solved}
    common_units = [u for u in first[solved[0]] if all(u in first[s] for s in solved)]
    for u in common_units:
        if len({first[s][u] for s in solved}) == 1:
            safe.append(SafeAction(u, first[solved[0]][u]))
    for y in (y0, y0 + 1):
        acts_y = {sid: _actions_in(plans[sid], y) for sid in solved}
        for u in common_units:
            by_s = {s: acts_y[s].get(u, "not held") for s in solved}  # sold the year before
            if len(set(by_s.values())) > 1:
                differ.append(EarlyDifference(u, y, by_s))
    return tuple(safe), tuple(differ)
