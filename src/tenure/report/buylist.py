"""The buy list: what the plan buys and sells in its first planning years, ready to act on.

A pure function of the :class:`~tenure.plan.Plan` (its unit schedules carry the inventory's kept
columns, so a list can be grouped by any of them, e.g. ``department``):

- purchases: one row per year, group, class and type bought, with the count, the unit price and
  the row total;
- disposals: one row per year, group, class, type sold and age, with the unit ids and the
  expected market value (each and for the row).

Money is undiscounted, in constant start-year currency (docs/conventions.md).  Row totals are
rounded to the cent so that, for every listed year, the purchase totals add up to exactly the
year's ``capital`` in years.csv and the disposal totals to its ``salvage`` (market value
received): the cents lost or gained by rounding each row are handed to the rows with the largest
remainders (largest-remainder apportionment), never invented.
"""

from __future__ import annotations

import csv
import io
from dataclasses import dataclass
from decimal import Decimal

from ..plan import Plan

DEFAULT_YEARS = 2
CSV_COLUMNS = ("year", "action", "class", "type", "count", "age", "unit_price", "total_price", "market_value_each",
               "market_value", "units")


@dataclass(frozen=True)
class Purchase:
    """``count`` new units of ``type`` bought in ``year`` at ``unit_price`` each; ``total`` [money, cent-rounded].

    ``action`` "overhaul": ``count`` held units of ``type`` (ids ``units``, age ``age``) overhauled at
    ``unit_price`` each, capital of the year like a purchase.
    """

    year: int
    group: str
    class_: str
    type: str
    count: int
    unit_price: float
    total: float
    action: str = "buy"
    age: int | None = None
    units: tuple[str, ...] = ()


@dataclass(frozen=True)
class Disposal:
    """Units of ``type`` and ``age`` sold in ``year``: their ids and expected market value [money]."""

    year: int
    group: str
    class_: str
    type: str
    age: int
    units: tuple[str, ...]
    value_each: float
    total: float

    @property
    def count(self) -> int:
        return len(self.units)


@dataclass(frozen=True)
class BuyList:
    """Purchases and disposals of the first planning years (one result per plan and grouping).

    ``capital`` and ``market_value`` are the listed years' totals [money, cent-rounded], equal to
    years.csv's ``capital`` and ``salvage`` of those years.
    """

    years: tuple[int, ...]
    group_by: str | None
    purchases: tuple[Purchase, ...]
    disposals: tuple[Disposal, ...]
    capital: dict
    market_value: dict


def cents(x: float) -> int:
    """Money in whole cents, rounded exactly as years.csv prints it (``f"{x:.2f}"``)."""
    return int(Decimal(f"{x:.2f}") * 100)


def apportion(amounts: list[float], target_cents: int) -> list[int]:
    """Round each amount to cents so that they add up to ``target_cents`` (largest remainder first)."""
    exact = [Decimal(repr(a)) * 100 for a in amounts]
    out = [int(e.to_integral_value(rounding="ROUND_FLOOR")) for e in exact]
    rest = target_cents - sum(out)
    order = sorted(range(len(out)), key=lambda j: (-(exact[j] - out[j]), j))
    step = 1 if rest >= 0 else -1
    for n in range(abs(rest)):
        out[order[n % len(order)] if step > 0 else order[::-1][n % len(order)]] += step
    return out


def buy_list(plan: Plan, years: int = DEFAULT_YEARS, group_by: str | None = None) -> BuyList:
    """The buy list of the first ``years`` planning years of ``plan``, grouped by the kept column ``group_by``.

    Parameters
    ----------
    plan : Plan
    years : int
        Number of planning years listed (from the start year; at most the horizon).
    group_by : str, optional
        A kept inventory column (header key, e.g. ``"department"``); rows are split by its value.
    """
    listed = tuple(y.year for y in plan.years[:max(0, years)])
    buys: dict[tuple, list] = {}
    sells: dict[tuple, list] = {}
    for u in plan.units:
        group = dict(u.attributes).get(group_by, "") if group_by else ""
        for ev in u.events:
            if ev.year not in listed:
                continue
            if ev.action == "overhaul":  # capital like a purchase; the unit stays
                b = buys.setdefault((ev.year, group, u.class_, ev.type, ev.price, "overhaul", ev.from_age), [0])
                b[0] += 1
                b.append(u.unit)
                continue
            if ev.action in ("replace", "buy"):  # "sell": no purchase
                b = buys.setdefault((ev.year, group, u.class_, ev.type, ev.price, "buy", None), [0])
                b[0] += 1
            if ev.action in ("replace", "sell"):  # "buy" (growth, orders): nothing sold
                s = sells.setdefault((ev.year, group, u.class_, ev.from_type, ev.from_age, ev.market_value), [])
                s.append(u.unit)
    rows_b = sorted(buys.items(), key=lambda kv: (kv[0][:4], kv[0][5]))
    rows_s = sorted(sells.items(), key=lambda kv: (kv[0][:3], kv[0][3], -kv[0][4]))
    by_year = {y.year: y for y in plan.years}
    purchases, disposals = [], []
    capital, value = {}, {}
    for y in listed:
        pb = [(k, n[0], tuple(n[1:])) for k, n in rows_b if k[0] == y]
        ps = [(k, names) for k, names in rows_s if k[0] == y]
        capital[y] = cents(by_year[y].capital) / 100
        value[y] = cents(by_year[y].salvage) / 100
        tb = apportion([n * k[4] for k, n, _ in pb], cents(by_year[y].capital)) if pb else []
        ts = apportion([len(nm) * k[5] for k, nm in ps], cents(by_year[y].salvage)) if ps else []
        purchases += [Purchase(year=y, group=k[1], class_=k[2], type=k[3], count=n, unit_price=float(k[4]),
                               total=c / 100, action=k[5], age=k[6], units=names)
                      for (k, n, names), c in zip(pb, tb)]
        disposals += [Disposal(year=y, group=k[1], class_=k[2], type=k[3], age=int(k[4]), units=tuple(nm),
                               value_each=float(k[5]), total=c / 100) for (k, nm), c in zip(ps, ts)]
    return BuyList(years=listed, group_by=group_by, purchases=tuple(purchases), disposals=tuple(disposals),
                   capital=capital, market_value=value)


def _money(x: float | None) -> str:
    return "" if x is None else f"{x:.2f}"


def buy_list_csv(bl: BuyList) -> str:
    """``buy-list.csv``: purchases (action ``buy``) and overhauls (action ``overhaul``), then disposals (action
    ``sell``) of each listed year.

    Columns: year, action, [the group column], class, type, count, age (units sold or overhauled), unit_price and
    total_price (purchases and overhauls: the year's capital), market_value_each and market_value (disposals),
    units (ids sold or overhauled, ``;``-separated).
    """
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    head = list(CSV_COLUMNS)
    if bl.group_by:
        head.insert(2, bl.group_by)
    w.writerow(head)
    for y in bl.years:
        for p in (p for p in bl.purchases if p.year == y):
            row = [p.year, p.action, p.class_, p.type, p.count, "" if p.age is None else p.age, _money(p.unit_price),
                   _money(p.total), "", "", "; ".join(p.units)]
            if bl.group_by:
                row.insert(2, p.group)
            w.writerow(row)
        for d in (d for d in bl.disposals if d.year == y):
            row = [d.year, "sell", d.class_, d.type, d.count, d.age, "", "", _money(d.value_each), _money(d.total),
                   "; ".join(d.units)]
            if bl.group_by:
                row.insert(2, d.group)
            w.writerow(row)
    return buf.getvalue()


SHEET_HEAD = ("year", "action", "class", "type", "count", "age (sold or overhauled)", "unit price", "total price",
              "expected market value each", "expected market value", "units")


def buy_list_sheet(ws, bl: BuyList) -> None:
    """The "buy list" sheet of plan.xlsx: the rows of buy-list.csv and a total row per year.

    A year's total row holds its capital and market value received, equal to the years sheet.
    """
    from .xlsx import MONEY, TOTAL_FONT, _Sheet

    g = [bl.group_by] if bl.group_by else []
    n = len(g)
    head = list(SHEET_HEAD)
    head[2:2] = g
    sh = _Sheet(ws)
    sh.head(head)
    fmt = {6 + n: MONEY, 7 + n: MONEY, 8 + n: MONEY, 9 + n: MONEY}
    for y in bl.years:
        for p in (p for p in bl.purchases if p.year == y):
            sh.put([y, p.action] + [p.group] * n + [p.class_, p.type, p.count, p.age, p.unit_price, p.total, None, None,
                                                    ", ".join(p.units) or None], fmt=fmt)
        for d in (d for d in bl.disposals if d.year == y):
            sh.put([y, "sell"] + [d.group] * n + [d.class_, d.type, d.count, d.age, None, None, d.value_each, d.total,
                                                  ", ".join(d.units)], fmt=fmt)
        sh.put([y, "total"] + [None] * n + [None, None, sum(p.count for p in bl.purchases if p.year == y
                                                            and p.action == "buy"), None, None,
                                            bl.capital[y], None, bl.market_value[y], None], fmt=fmt, font=TOTAL_FONT)
    if not bl.years:
        sh.put(("no planning year is listed",))
    sh.finish(max_w=50)
