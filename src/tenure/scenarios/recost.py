"""Re-costing a fixed schedule under another case, and the regret table.

:func:`recost` lays a plan's schedule on another scenario's case (each
unit's replacements in the same years with the same types, costs from
:mod:`tenure.curves` under that case, timed as in ``docs/conventions.md``;
units bought from nothing or sold without a replacement, as a class grows or
shrinks, are kept as the plan has them) and lists the rules it breaks there:
caps, purchase limits, max ages, types that cannot be bought, and the
coupling rules of :mod:`tenure.fleet.rules_check` (class sizes, orders,
targets, emission caps).  A case with ``tax_rate`` is re-costed after tax
(docs/conventions.md, "Income tax"): the present cost the solve reports.
:func:`regret_table` re-costs every scenario's plan
under every scenario: regret of plan *i* under scenario *j* is its cost
there less the least cost of any plan that can be carried out under *j*
(common practice: the minimax-regret rule of decision analysis under
uncertainty).  The plan of least maximum regret is chosen among plans that
break under no scenario (if there are none, the fewest breaks rank first).
"""

from __future__ import annotations

import math
from collections import Counter
from dataclasses import dataclass
from typing import Mapping, Sequence

import numpy as np

from .. import curves, derived, life, tax
from ..fleet import rules_check
from ..model import Case, Overhaul
from ..plan import Event, UnitPlan
from .tasks import round2 as _r

#: relative tolerance of the cap check when re-costing
CAP_TOL = 1e-9


@dataclass(frozen=True)
class Recost:
    """A plan's schedule costed under a case.

    ``cost`` is the present cost at time 0 [money] (None when the schedule
    cannot be laid on the case at all: another horizon, other units, an
    unknown type); ``breaks`` lists the rules it breaks there; ``capital``
    the purchase prices and overhaul costs of each year under the case
    [money, undiscounted, constant money] (empty when ``cost`` is None).
    """

    cost: float | None
    breaks: tuple[str, ...]
    capital: tuple[float, ...] = ()

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
                c, _ = life.capitalised_chain_cost(t, s.discount_rate, s.start_year, y_end, tax_rate=s.tax_rate,
                                                   carbon_price=s.carbon_price)
                if best is None or c < best:
                    best = c
        if best is not None:
            out[cls] = best
    return out


class _UnknownType(Exception):
    """The plan buys a type the scenario does not have."""


def _unit_cost(case: Case, start, events, v: np.ndarray, grids: dict, chain_costs: dict, books) -> float:
    """Present cost [money, time 0] of one unit's fixed schedule under ``case``; adds its capital,
    proceeds and purchases by year and the rules it breaks to ``books``.

    ``start`` is the unit's inventory row, or the class of a unit the plan buys from nothing (a
    class growing under ``[[demand]]`` or an order); such a unit is held from its "buy" on, takes
    the class's first job (docs/case-format.md) and, like any unit, leaves at a "sell"."""
    s = case.study
    y0, H = s.start_year, s.horizon
    capital, proceeds, buys, broken = books
    types = {t.id: t for t in case.types}
    if isinstance(start, str):
        t, a, cls = None, 0, start
        u = derived.class_jobs(case, cls)[0]
    else:
        t, a = types[start.type], start.age
        cls = t.class_
        # usage and overhaul: docs/conventions.md ("Usage", "Overhaul"), the rules of tenure.derived
        u = derived.job_usage(case, start, grids[cls])
    oh, ov = None, None
    ev = {e["year"]: e for e in events if e.get("action") != "overhaul"}
    ovh = {e["year"] for e in events if e.get("action") == "overhaul"}
    total = 0.0
    for k in range(H):
        y = y0 + k
        e = ev.get(y)
        if t is None:  # not held: only a purchase from nothing starts the unit
            if e is None or not e.get("type"):
                if e is not None or y in ovh:
                    broken[f"{y}: the plan acts on a unit it does not hold"] += 1
                continue
        elif y in ovh:
            ov = _overhaul_of(t, a, oh, y, broken)
            oh = a
            total += v[k] * ov.cost + v[k + 1] * _year_cash(case, t, a, oh, ov, u, y)
            capital[k] += ov.cost
            a += 1
            continue
        elif e is not None:
            total -= v[k] * _sale_cash(case, t, a, oh, u, y)
            proceeds[k] += float(derived.value_at(t, a, y, y0, derived.ratio(t, u)))
            if not e.get("type"):  # sold without a replacement (a shrinking class)
                t, a, oh = None, 0, None
                continue
        else:
            top = derived.row_max_age(t, u, oh is not None)
            if a >= top:
                broken[f"{y}: keeps a {t.id} at age {a}, its max age is {top}"] += 1
            total += v[k + 1] * _year_cash(case, t, a, oh, ov, u, y)
            a += 1
            continue
        # a purchase: after the sale above, or of a unit the plan adds
        new = _bought(types, e["type"], y, cls, broken)
        p = curves.price(new, y, y0)
        total += v[k] * p + v[k + 1] * _year_cash(case, new, 0, None, None, u, y)
        capital[k] += p
        buys[k][new.class_] += 1
        t, a, oh = new, 1, None
    if t is None:
        return total
    return total + v[H] * _end_cost(case, t, a, oh, u, chain_costs.get(t.class_))


def _bought(types: dict, type_id: str, y: int, cls: str, broken: Counter):
    """The type a plan buys in ``y`` for a unit of class ``cls``; counted in ``broken`` when it is of
    another class or cannot be bought in ``y`` (it is then priced as bought)."""
    new = types.get(type_id)
    if new is None:
        raise _UnknownType(f"{y}: the plan buys type {type_id!r}, unknown in the scenario")
    if new.class_ != cls:
        broken[f"{y}: buys {new.id} (class {new.class_}) for a {cls} unit"] += 1
    if not new.buyable(y):
        broken[f"{y}: buys {new.id}, which can be bought only {_window(new)}"] += 1
    return new


def _year_cash(case: Case, t, a: int, oh, ov, u, y: int) -> float:
    """Cost of the year ``y`` of a ``t`` of age ``a`` at its start (service year a+1), paid at its end
    [money]: O&M and priced tonnes by the usage ratio; after an overhaul at age ``oh`` the O&M of
    year ``om_age_after + a + 1 − oh``.  After tax (docs/conventions.md, "Income tax") less tax, less
    the depreciation shields of the unit (its own vintage's price) and of a capitalised overhaul."""
    s = case.study
    y0, cp = s.start_year, s.carbon_price  # priced tonnes are paid with the O&M
    served = a + 1 if oh is None else ov.om_age_after + a + 1 - oh
    cash = (curves.om(t, served, y - a, y0) + cp * curves.tonnes(t, y - a, y0)) * derived.ratio(t, u)
    if s.tax_rate is None:
        return float(cash)
    cash = tax.keep_cash(t, s.tax_rate, cash, a + 1, y - a, y0)
    if oh is not None:
        cash -= tax.overhaul_shield(t, s.tax_rate, a + 1 - oh)
    return float(cash)


def _sale_cash(case: Case, t, a: int, oh, u, y: int) -> float:
    """Proceeds of selling a ``t`` of age ``a`` in ``y`` [money]: its market value (at the usage's
    equivalent age); after tax less ``τ·(MV − book value)``, the book value of the unit and of an
    overhaul done at age ``oh``."""
    s = case.study
    mv = float(derived.value_at(t, a, y, s.start_year, derived.ratio(t, u)))
    if s.tax_rate is None:
        return mv
    book = tax.book_value(t, a, y - a, s.start_year) + (0.0 if oh is None else tax.overhaul_book(t, a - oh))
    return mv - float(tax.tax_on_sale(mv, book, s.tax_rate))


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
    years = [y["year"] for y in plan_dict.get("years", [])]
    if years != list(s.years):
        return Recost(None, (f"the plan covers {years[0] if years else '?'}–{years[-1] if years else '?'}, "
                             f"the scenario {y0}–{y0 + H - 1}",))
    names = [n for u in case.units for n in u.names()]
    plan_units = plan_dict.get("units", [])
    held = [u for u in plan_units if u.get("start_type")]  # the rest the plan buys from nothing
    plan_names = [u["unit"] for u in held]
    if sorted(plan_names) != sorted(names):
        extra = sorted(set(plan_names) - set(names))
        missing = sorted(set(names) - set(plan_names))
        return Recost(None, ("the plan's units differ from the scenario's inventory"
                             + (f"; not in the scenario: {', '.join(extra[:5])}" if extra else "")
                             + (f"; not in the plan: {', '.join(missing[:5])}" if missing else ""),))
    unknown = sorted({u.get("class", "") for u in plan_units if not u.get("start_type")} - set(case.classes))
    if unknown:
        return Recost(None, (f"the plan adds units of class {', '.join(map(repr, unknown))}, unknown in the scenario",))
    v = (1.0 + rate) ** -np.arange(H + 1, dtype=float)
    capital, proceeds = np.zeros(H), np.zeros(H)
    buys: list[Counter] = [Counter() for _ in range(H)]
    books = (capital, proceeds, buys, Counter())  # the last: broken rule message -> units
    chain_costs = _chain_costs(case) if s.end_value == "continuing" else {}
    grids = {c: derived.usage_grid(case, c) for c in case.classes}
    row_of = {n: u for u in case.units for n in u.names()}
    total = 0.0
    try:
        for pu in plan_units:
            start = row_of[pu["unit"]] if pu.get("start_type") else pu["class"]
            total += _unit_cost(case, start, pu["events"], v, grids, chain_costs, books)
    except _UnknownType as exc:
        return Recost(None, (str(exc),))
    broken = books[3]
    _budget_breaks(case, capital, proceeds, buys, broken)
    for msg in rules_check.breaks(case, schedule_of(plan_dict, case)):
        broken[msg] += 1
    msgs = tuple(m if n == 1 or "cap" in m or "limit" in m else f"{m} ({n} units)"
                 for m, n in sorted(broken.items(), key=lambda kv: kv[0][:4]))
    return Recost(float(total), msgs, tuple(float(c) for c in capital))


@dataclass(frozen=True)
class Schedule:
    """A plan's unit schedules read back from ``Plan.to_dict()``: what the rule checks of
    :mod:`tenure.service` read of a plan (its ``units``), with the units' starts taken from ``case``."""

    units: tuple[UnitPlan, ...]


def schedule_of(plan_dict: Mapping, case: Case) -> Schedule:
    """The unit schedules of ``plan_dict`` as :class:`~tenure.plan.UnitPlan` objects (costs left at 0:
    only the schedule is read)."""
    ages = {n: u.age for u in case.units for n in u.names()}
    out = []
    for u in plan_dict.get("units", []):
        evs = tuple(Event(year=int(e["year"]), action=e.get("action", ""), from_type=e.get("from_type") or "",
                          from_age=int(e.get("from_age") if e.get("from_age") is not None else -1),
                          type=e.get("type") or "", price=0.0, market_value=0.0) for e in u.get("events", []))
        start = u.get("start_type") or ""
        out.append(UnitPlan(unit=u["unit"], class_=u.get("class", ""), start_type=start,
                            start_age=ages.get(u["unit"]) if start else None, events=evs, present_cost=0.0,
                            end_type="", end_age=0))
    return Schedule(tuple(out))


def _overhaul_of(t, a: int, oh, y: int, broken: Counter) -> Overhaul:
    """The overhaul a plan does to a ``t`` at age ``a`` in ``y``; counted in ``broken`` when ``t`` has
    none, the unit was overhauled before or the age is not allowed (it is then priced as free)."""
    if t.overhaul is None or oh is not None or a not in t.overhaul.ages:
        broken[f"{y}: overhauls a {t.id} at age {a}, which the scenario does not allow"] += 1
        return t.overhaul or Overhaul(0.0, a, a, a, 0)
    return t.overhaul


def _end_cost(case: Case, t, a: int, oh, u, chain_cost) -> float:
    """End value of holding a ``t`` of age ``a`` at the end [money at the end year, a cost]: minus its
    sale proceeds (after tax when the case is), or (continuing) its continuing cost; a unit off the
    reference usage or overhauled is sold and followed by the best chain, as in ``tenure.derived``."""
    s = case.study
    y0, y_end = s.start_year, s.start_year + s.horizon
    mv = _sale_cash(case, t, a, oh, u, y_end)
    if s.end_value == "salvage":
        return -mv
    if oh is not None or derived.ratio(t, u) != 1.0 or derived.row_max_age(t, u, False) != t.max_age:
        return chain_cost - mv
    a_end = min(a, t.max_age)
    return life.continuing_cost(t, a_end, y_end - a_end, chain_cost, s.discount_rate, y0, y_end,
                                tax_rate=s.tax_rate, carbon_price=s.carbon_price)


def _budget_breaks(case: Case, capital, proceeds, buys, broken: Counter) -> None:
    """Count in ``broken`` each year whose spend is over its cap or whose purchases of a class are over its limit."""
    b = case.budget
    for k in range(case.study.horizon):
        y = case.study.start_year + k
        cap = b.constant_cap(y) if b is not None else None
        if cap is not None:
            spend = capital[k] - (proceeds[k] if b.basis == "net" else 0.0)
            if spend > cap * (1 + CAP_TOL) + 1e-6:
                broken[f"{y}: spends {spend:,.0f} ({b.basis}), over the cap of {cap:,.0f}"] += 1
        for cls, n in buys[k].items():
            lim = case.limit_for(cls)
            if lim is not None and n > lim:
                broken[f"{y}: buys {n} {cls} units, over the limit of {lim}"] += 1


def _window(t) -> str:
    if t.buy_from is not None and t.buy_until is not None:
        return f"in {t.buy_from}–{t.buy_until}"
    return f"from {t.buy_from}" if t.buy_from is not None else f"until {t.buy_until}"


@dataclass(frozen=True)
class RegretTable:
    """Every scenario's plan re-costed under every scenario (the ``"regret"`` part of ``compare.json``).

    ``cost[i][j]``: present cost [money, cents] of the plan of scenario *i*
    under scenario *j* (None when it cannot be laid on *j*);
    ``regret[i][j] = cost[i][j] − best_under[j]`` (None where plan *i* breaks
    a rule under *j*); ``breaks[i][j]``: the rules it breaks there;
    ``max_regret[i]`` (None when the plan breaks somewhere);
    ``least_max_regret``: the chosen plan, by ``rule``.
    """

    ids: tuple[str, ...]
    cost: Mapping[str, Mapping[str, float | None]]
    regret: Mapping[str, Mapping[str, float | None]]
    breaks: Mapping[str, Mapping[str, tuple[str, ...]]]
    best_under: Mapping[str, float | None]
    max_regret: Mapping[str, float | None]
    least_max_regret: str | None
    rule: str

    def matrix(self) -> list[list[float | None]]:
        """``regret`` as rows (plans) × columns (scenarios), in ``ids`` order."""
        return [[self.regret[i][j] for j in self.ids] for i in self.ids]

    def frame(self):
        """The regret matrix as a pandas DataFrame: index ``plan``, one column per scenario; NaN where it breaks."""
        import pandas as pd

        df = pd.DataFrame(self.matrix(), index=list(self.ids), columns=list(self.ids), dtype=float)
        df.index.name = "plan"
        return df

    def to_dict(self) -> dict:
        ids = list(self.ids)
        return {"scenarios": ids, "ids": ids, "matrix": self.matrix(),
                "cost": {i: dict(r) for i, r in self.cost.items()}, "regret": {i: dict(r) for i, r in self.regret.items()},
                "breaks": {i: {j: list(b) for j, b in r.items()} for i, r in self.breaks.items()},
                "best_under": dict(self.best_under), "max_regret": dict(self.max_regret),
                "least_max_regret": self.least_max_regret, "rule": self.rule}


def regret_table(ids: Sequence[str], plans: Mapping[str, Mapping | None], cases: Mapping[str, Case]) -> RegretTable:
    """Every plan re-costed under every scenario; regret and the plan of least maximum regret.

    Parameters
    ----------
    ids : sequence of str
        Scenario ids, base first.
    plans : mapping
        Scenario id → ``Plan.to_dict()`` of its plan (None: no plan).
    cases : mapping
        Scenario id → its case.
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
    return RegretTable(ids=tuple(ids), cost=_round_nested(cost), regret=_round_nested(regret),
                       breaks={i: {j: tuple(b) for j, b in row.items()} for i, row in breaks.items()},
                       best_under={j: _r(x) for j, x in best.items()},
                       max_regret={i: _r(x) for i, x in max_regret.items()}, least_max_regret=choice, rule=rule)



def _round_nested(d):
    return {i: {j: _r(x) for j, x in row.items()} for i, row in d.items()}
