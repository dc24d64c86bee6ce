"""The plan: one result object per solve, the same whichever solver made it.

A solver hands over, for each class, the paths its units follow through the
state graph (``chain.Step`` lists) with the unit names on each path;
:func:`assemble` turns them into the events, the yearly totals and the present
cost, so the recursion and the integer program are reported identically.
Money fields are undiscounted amounts in constant start-year currency except
``present_cost``, ``lower_bound`` and the per-unit ``present_cost`` (present
worth at time 0; docs/conventions.md).
"""

from __future__ import annotations

from collections import Counter
from dataclasses import dataclass, field, replace
from typing import Sequence

import numpy as np

from .chain import KEEP, NEW, OVERHAUL, SELL, StageGraph, Step, next_state, path_cost
from .model import Case


class NoPlanError(Exception):
    """No plan can be shown at all (the CLI exits 3 on it)."""


class InfeasibleLimits(NoPlanError):
    """No plan exists even with unlimited capital: a purchase limit binds."""

    def __init__(self, message: str | None = None):
        super().__init__(message or "no plan exists even with unlimited capital: the [[limit]] purchase limits are "
                         "too low for the units that reach max_age (raise max_buys_per_year)")


class NoPlanFound(NoPlanError):
    """No plan was found in the time allowed, not even under raised caps; none is proven impossible."""


@dataclass(frozen=True)
class Provenance:
    """Which method and which solver produced each figure of a plan, in words for the reports.

    ``method``: how the plan itself was found, e.g. "fix-and-relax rounding of the LP relaxation
    (HiGHS)"; ``lower_bound``: where the proven lower bound comes from, e.g. "LP relaxation
    (HiGHS)" ("" when there is none); ``shadow_prices``: where the caps' shadow prices come from
    ("" when none were computed).
    """

    method: str
    lower_bound: str = ""
    shadow_prices: str = ""

    def to_dict(self) -> dict:
        return {"method": self.method, "lower_bound": self.lower_bound, "shadow_prices": self.shadow_prices}


#: columns of units.csv and Plan.events_frame()
UNIT_COLUMNS = ("unit", "class", "start_type", "start_age", "year", "action", "from_type", "from_age", "type",
                "price", "market_value", "defer_cost", "advance_cost")
#: columns of years.csv and Plan.years_frame()
YEAR_COLUMNS = ("year", "buys", "capital", "salvage", "om", "cap", "slack", "shadow_price", "buys_by_type",
                "sells", "in_service", "tonnes", "carbon", "capital_nominal", "cap_nominal")


@dataclass(frozen=True)
class Event:
    """What is done to a unit in ``year``: ``action`` "replace" (the unit of ``from_type``/``from_age`` is
    sold and a new ``type`` bought), "buy" (a new ``type`` bought without a sale; ``from_type`` "") or
    "sell" (sold without a replacement; ``type`` ""), or "overhaul" (the unit is overhauled at ``from_age``
    for ``price``; ``type`` its own)."""

    year: int
    action: str
    from_type: str
    from_age: int
    type: str
    price: float
    market_value: float
    defer_cost: float | None = None
    advance_cost: float | None = None


@dataclass(frozen=True)
class UnitPlan:
    """The schedule of one unit and its present cost [money, time 0].

    ``attributes`` are the inventory's kept columns of the unit's row, (name, text) pairs.
    """

    unit: str
    class_: str
    start_type: str
    start_age: int
    events: tuple[Event, ...]
    present_cost: float
    end_type: str
    end_age: int
    attributes: tuple[tuple[str, str], ...] = ()


@dataclass(frozen=True)
class YearRow:
    """Totals of one planning year [money, undiscounted].

    ``capital``: purchase prices and overhaul costs paid; ``salvage``: market value received for
    units sold; ``om``: O&M of the year (paid at its end); ``cap`` and
    ``slack`` on the budget's basis in constant money; ``shadow_price``: present-cost saving per
    extra unit of money in the year's cap (None when not computed).  ``in_service``: units
    held during the year, after its purchases and sales; ``tonnes``: their CO2e [t];
    ``carbon``: the priced tonnes [money, paid at the year's end]; ``price_index``:
    nominal money per unit of constant money, ``(1+inflation)^k``.
    """

    year: int
    buys: int
    capital: float
    salvage: float
    om: float
    cap: float | None = None
    slack: float | None = None
    shadow_price: float | None = None
    buys_by_type: dict = field(default_factory=dict)
    sells: int = 0
    in_service: int = 0
    tonnes: float = 0.0
    carbon: float = 0.0
    price_index: float = 1.0

    @property
    def capital_nominal(self) -> float:
        """Purchase prices in then-year money."""
        return self.capital * self.price_index

    @property
    def cap_nominal(self) -> float | None:
        """The cap in then-year money (None when uncapped)."""
        return None if self.cap is None else self.cap * self.price_index


@dataclass(frozen=True)
class Plan:
    """Result of a solve.

    Attributes
    ----------
    status : str
        "optimal", "feasible" (with a proven ``gap``), "infeasible" (proven:
        no plan fits the caps) or "unsolved" (no plan within the caps found in
        the time allowed, none proven impossible).
    method : str
        "recursion" or "integer program".
    present_cost : float
        Present worth at time 0 of purchases, O&M and end values less market
        values received [money].
    lower_bound, gap : float
        A proven bound on the least present cost, and ``(cost − bound)/|cost|``.
    years : tuple of YearRow
    units : tuple of UnitPlan
    end_year : int
        Calendar year at which end values apply (start_year + horizon).
    end_market_value : float
        Market value of the units held at the end ("salvage" end value) [money at end_year].
    by_class : dict
        Present cost by class [money].
    uncapped_cost : float or None
        Present cost of the best plan without caps and limits, for the premium.
    shortfall : tuple of (year, extra_capital)
        Least extra capital per year that makes an infeasible case feasible.
    provenance : Provenance or None
        The method and solver behind the plan, its bound and its shadow prices.
    tax_rate : float or None
        Set when the present cost is after tax (docs/conventions.md, "Income
        tax"); the yearly capital, market value and O&M stay before tax.
    tolerance : float or None
        The relative gap the solve stopped at: "optimal" means proven within it (None: exact
        method, no tolerance).
    shortfall_bound : float or None
        A proven lower bound on the least total extra capital [money, undiscounted]; the total of
        ``shortfall`` is an upper bound.
    shortfall_least : bool
        True when the total of ``shortfall`` is proven least (within the tolerance).
    """

    status: str
    method: str
    present_cost: float
    lower_bound: float
    gap: float
    years: tuple[YearRow, ...]
    units: tuple[UnitPlan, ...]
    end_year: int
    end_value: str
    end_market_value: float
    by_class: dict
    basis: str = "gross"
    uncapped_cost: float | None = None
    shortfall: tuple = ()
    message: str = ""
    stats: dict = field(default_factory=dict)
    forcing_units: tuple = ()
    provenance: Provenance | None = None
    tax_rate: float | None = None
    tolerance: float | None = None
    shortfall_bound: float | None = None
    shortfall_least: bool = True

    @property
    def success(self) -> bool:
        return self.status in ("optimal", "feasible")

    @property
    def premium(self) -> float | None:
        """Present-cost premium over the uncapped plan [money]."""
        return None if self.uncapped_cost is None else self.present_cost - self.uncapped_cost

    # -- DataFrames (pandas is imported only when one is asked for) ---------
    def events_frame(self):
        """units.csv as a DataFrame: one row per unit and replacement (columns ``UNIT_COLUMNS``).

        A unit never replaced gets one row with action ``keep`` and no year.
        Money columns [money, undiscounted] are not rounded.
        """
        import pandas as pd

        kept = attribute_names(self)
        df = pd.DataFrame(list(event_rows(self, kept)), columns=list(UNIT_COLUMNS) + kept)
        for col in ("start_age", "year", "from_age"):
            df[col] = df[col].astype("Int64")
        return df

    def units_frame(self):
        """One row per unit: its start, its replacements, its end state and present cost [money, time 0]."""
        import pandas as pd

        kept = attribute_names(self)
        rows = [(u.unit, u.class_, u.start_type, u.start_age, len(u.events),
                 u.events[0].year if u.events else None, u.end_type, u.end_age, u.present_cost)
                + tuple(dict(u.attributes).get(k, "") for k in kept)
                for u in self.units]
        df = pd.DataFrame(rows, columns=["unit", "class", "start_type", "start_age", "replacements",
                                         "first_replacement", "end_type", "end_age", "present_cost"] + kept)
        df["first_replacement"] = df["first_replacement"].astype("Int64")
        return df

    def years_frame(self):
        """years.csv as a DataFrame: one row per planning year (columns ``YEAR_COLUMNS``).

        ``buys_by_type`` is a dict cell {type: units}; money [money, undiscounted] is not rounded.
        """
        import pandas as pd

        return pd.DataFrame(list(year_rows(self)), columns=list(YEAR_COLUMNS))

    def with_(self, **kw) -> "Plan":
        return replace(self, **kw)

    def to_dict(self) -> dict:
        """The ``plan.json`` document."""
        d = {
            "status": self.status,
            "method": self.method,
            "present_cost": _r(self.present_cost),
            "lower_bound": _r(self.lower_bound),
            "gap": self.gap,
            "tolerance": self.tolerance,
            "uncapped_cost": _r(self.uncapped_cost),
            "premium": _r(self.premium),
            "basis": self.basis,
            "end": {"year": self.end_year, "rule": self.end_value, "market_value": _r(self.end_market_value)},
            "by_class": {k: _r(v) for k, v in self.by_class.items()},
            "years": [
                {"year": y.year, "buys": y.buys, "capital": _r(y.capital), "salvage": _r(y.salvage), "om": _r(y.om),
                 "cap": _r(y.cap), "slack": _r(y.slack), "shadow_price": y.shadow_price,
                 "buys_by_type": dict(y.buys_by_type), "sells": y.sells, "in_service": y.in_service,
                 "tonnes": round(y.tonnes, 3), "carbon": _r(y.carbon), "capital_nominal": _r(y.capital_nominal),
                 "cap_nominal": _r(y.cap_nominal)}
                for y in self.years
            ],
            "units": [
                {"unit": u.unit, "class": u.class_, "start_type": u.start_type, "start_age": u.start_age,
                 "present_cost": _r(u.present_cost), "attributes": dict(u.attributes),
                 "events": [{"year": e.year, "action": e.action, "type": e.type, "from_type": e.from_type,
                             "from_age": e.from_age, "price": _r(e.price), "market_value": _r(e.market_value),
                             "defer_cost": _r(e.defer_cost), "advance_cost": _r(e.advance_cost)}
                            for e in u.events]}
                for u in self.units
            ],
            "stats": self.stats,
            "message": self.message,
        }
        if self.provenance is not None:
            d["provenance"] = self.provenance.to_dict()
        if self.tax_rate is not None:
            d["tax_rate"] = self.tax_rate
        if self.status in ("infeasible", "unsolved") or self.shortfall:
            d["shortfall"] = [{"year": y, "extra_capital": _r(x)} for y, x in self.shortfall]
            d["forcing_units"] = list(self.forcing_units)
            d["shortfall_least"] = self.shortfall_least
            d["shortfall_at_least"] = _r(self.shortfall_bound)
        return d


def _r(x):
    """Round money to the cent for output (None passes through)."""
    return None if x is None else round(float(x), 2)


@dataclass(frozen=True)
class PathGroup:
    """Units of one class that follow the same path, with per-event flexibility costs."""

    class_: str
    steps: tuple[Step, ...]
    units: tuple[str, ...]
    start: tuple[int, int]
    flex: tuple = ()


def assemble(case: Case, graphs: dict[str, StageGraph], groups: Sequence[PathGroup], *, status: str, method: str,
             lower_bound: float | None = None, uncapped_cost: float | None = None, shortfall=(),
             shadow: dict | None = None, message: str = "", stats: dict | None = None,
             provenance: Provenance | None = None) -> Plan:
    """Build the :class:`Plan` from unit paths: events, yearly totals, present cost."""
    s = case.study
    H, y0 = s.horizon, s.start_year
    acc = {key: np.zeros(H) for key in ("buys", "sells", "capital", "salvage", "om", "tonnes", "in_service")}
    by_type: list[Counter] = [Counter() for _ in range(H)]
    end_mv = 0.0
    class_of = {t.id: t.class_ for t in case.types}
    held = {class_of[u.type] for u in case.units}
    by_class: dict[str, float] = {c: 0.0 for c in case.classes if c in held}
    units: list[UnitPlan] = []
    attrs = {name: u.attributes for u in case.units for name in u.names()}
    total = 0.0
    for grp in groups:
        g = graphs[grp.class_]
        n = len(grp.units)
        cost = path_cost(g, list(grp.steps))
        total += n * cost
        by_class[grp.class_] = by_class.get(grp.class_, 0.0) + n * cost
        events, (t, a) = _walk(g, grp, n, y0, acc, by_type)
        if s.end_value == "salvage" and t is not None:
            end_mv += n * g.value[H, t, a]
        t0, a0 = grp.start
        new = t0 == NEW
        for name in grp.units:
            units.append(UnitPlan(unit=name, class_=grp.class_, start_type="" if new else g.types[t0],
                                  start_age=None if new else a0, events=tuple(events), present_cost=cost,
                                  end_type="" if t is None else g.types[t], end_age=None if t is None else int(a),
                                  attributes=attrs.get(name, ())))
    order = {name: j for j, name in enumerate(_unit_order(case))}
    units.sort(key=lambda u: order.get(u.unit, len(order)))
    years = []
    budget = case.budget
    for k in range(H):
        y = y0 + k
        cap = budget.constant_cap(y) if budget is not None else None
        capital, salvage = acc["capital"][k], acc["salvage"][k]
        spend = capital - (salvage if budget is not None and budget.basis == "net" else 0.0)
        years.append(YearRow(year=y, buys=int(acc["buys"][k]), capital=float(capital), salvage=float(salvage),
                             om=float(acc["om"][k]), cap=cap, slack=None if cap is None else float(cap - spend),
                             shadow_price=None if shadow is None else shadow.get(y),
                             buys_by_type=dict(sorted(by_type[k].items())), sells=int(acc["sells"][k]),
                             in_service=int(acc["in_service"][k]), tonnes=float(acc["tonnes"][k]),
                             carbon=float(s.carbon_price * acc["tonnes"][k]),
                             price_index=float((1.0 + s.inflation) ** k)))
    lb = total if lower_bound is None else min(lower_bound, total)
    # "optimal" within a tolerance keeps its proven gap; an exact method passes no bound
    gap = (total - lb) / max(abs(total), 1e-9)
    return Plan(status=status, method=method, present_cost=float(total), lower_bound=float(lb),
                gap=float(max(gap, 0.0)), years=tuple(years), units=tuple(units), end_year=y0 + H,
                end_value=s.end_value, end_market_value=float(end_mv), by_class=by_class,
                basis=budget.basis if budget is not None else "gross", uncapped_cost=uncapped_cost,
                shortfall=tuple(shortfall), message=message, stats=dict(stats or {}), provenance=provenance,
                tax_rate=s.tax_rate)


def _walk(g: StageGraph, grp: PathGroup, n: int, y0: int, acc: dict, by_type: list) -> tuple[list, tuple]:
    """Add one path group's yearly totals (n units) to ``acc``; its events and end state (None when sold)."""
    events = []
    flex = iter(grp.flex)
    t = a = None
    for st in grp.steps:
        k = st.k
        if st.action == KEEP:
            acc["om"][k] += n * g.om_keep[k, st.type, st.age]
            acc["tonnes"][k] += n * g.tonnes_keep[k, st.type, st.age]
            acc["in_service"][k] += n
            t, a = st.type, st.age + 1
            continue
        if st.action == OVERHAUL:  # capital in its year; the unit stays in service and keeps its age
            c = g.overhaul_cost[k, st.type, st.age]
            acc["capital"][k] += n * c
            acc["om"][k] += n * g.om_overhaul[k, st.type, st.age]
            acc["tonnes"][k] += n * g.tonnes_keep[k, st.type, st.age]
            acc["in_service"][k] += n
            events.append(Event(year=y0 + k, action="overhaul", from_type=g.types[st.type], from_age=st.age,
                                type=g.types[st.type], price=float(c), market_value=0.0))
            t, a = next_state(g, st.type, st.age, st.action)
            continue
        d, adv = next(flex, (None, None))
        if st.action == SELL:
            mv = g.value[k, st.type, st.age]
            acc["salvage"][k] += n * mv
            acc["sells"][k] += n
            events.append(Event(year=y0 + k, action="sell", from_type=g.types[st.type], from_age=st.age, type="",
                                price=0.0, market_value=float(mv)))
            return events, (None, None)
        new = st.type == NEW
        p, mv = g.price[k, st.action], (0.0 if new else g.value[k, st.type, st.age])
        acc["buys"][k] += n
        acc["sells"][k] += 0 if new else n
        acc["capital"][k] += n * p
        acc["salvage"][k] += n * mv
        acc["om"][k] += n * g.om_new[k, st.action]
        acc["tonnes"][k] += n * g.tonnes_new[k, st.action]
        acc["in_service"][k] += n
        by_type[k][g.types[st.action]] += n
        events.append(Event(year=y0 + k, action="buy" if new else "replace", from_type="" if new else g.types[st.type],
                            from_age=-1 if new else st.age, type=g.types[st.action], price=float(p),
                            market_value=float(mv), defer_cost=d, advance_cost=adv))
        t, a = st.action, 1
    return events, (t, a)


def _unit_order(case: Case) -> list[str]:
    return [name for u in case.units for name in u.names()]


def attribute_names(plan: Plan) -> list[str]:
    """The inventory's kept columns (department, …), in order of first appearance among the units."""
    seen: dict[str, None] = {}
    for u in plan.units:
        for k, _ in u.attributes:
            seen.setdefault(k, None)
    return list(seen)


def event_rows(plan: Plan, kept: Sequence[str] = ()):
    """Rows of units.csv in ``UNIT_COLUMNS`` order, then the kept columns ``kept``; values unformatted
    (None where a cell is empty, "" where a unit has no value for a kept column)."""
    for u in plan.units:
        head = (u.unit, u.class_, u.start_type, u.start_age)
        attrs = dict(u.attributes)
        tail = tuple(attrs.get(k, "") for k in kept)
        if not u.events:
            yield head + (None, "keep", u.start_type, u.start_age, u.start_type, None, None, None, None) + tail
        for e in u.events:
            yield head + (e.year, e.action, e.from_type, e.from_age, e.type, e.price, e.market_value,
                          e.defer_cost, e.advance_cost) + tail


def year_rows(plan: Plan):
    """Rows of years.csv in ``YEAR_COLUMNS`` order, values unformatted (``buys_by_type`` a dict)."""
    for y in plan.years:
        yield (y.year, y.buys, y.capital, y.salvage, y.om, y.cap, y.slack, y.shadow_price, dict(y.buys_by_type),
               y.sells, y.in_service, y.tonnes, y.carbon, y.capital_nominal, y.cap_nominal)
