"""Parts of ``report.html`` that come from the inventory as kept: the overdue notice, the first-years
table grouped by a kept column, the buy list, and the summaries by that column.

Functions return HTML text (pure functions of the Plan and the Case); :mod:`tenure.report.html`
places them in the page and :mod:`tenure.report.documents` chooses which to render.
"""

from __future__ import annotations

from ..model import Case
from ..plan import Plan
from . import html
from .buylist import BuyList
from .groups import GroupSummary, label
from .text import overdue_lines


def overdue_html(case: Case) -> str:
    """A notice with one line per type whose inventory units are past max age ('' when none are)."""
    lines = overdue_lines(case)
    if not lines:
        return ""
    items = "".join(f"<li>{html.e(ln.removeprefix('warning: overdue: '))}</li>" for ln in lines)
    return ('<div class="notice"><strong>Overdue units.</strong> These units are already past their max age; '
            f"the plan replaces them in {case.study.start_year}.<ul>{items}</ul></div>")


def first_years_html(plan: Plan, case: Case, column: str, n_years: int = 5) -> str:
    """Replacements of the first ``n_years``: one row per year, ``column`` value, class, sold and bought type."""
    s = case.study
    last = s.start_year + min(n_years, s.horizon) - 1
    groups: dict[tuple, dict] = {}
    for u in plan.units:
        gval = dict(u.attributes).get(column, "")
        for ev in u.events:
            if ev.year <= last:
                g = groups.setdefault((ev.year, gval, u.class_, ev.from_type, ev.type),
                                      {"units": [], "ages": [], "price": 0.0, "value": 0.0})
                g["units"].append(u.unit)
                g["ages"].append(ev.from_age)
                g["price"] += ev.price
                g["value"] += ev.market_value
    if not groups:
        return f"<p>No replacement is planned in {s.start_year}–{last}.</p>"
    order = {t.id: j for j, t in enumerate(case.types)}
    classes = {c: j for j, c in enumerate(case.classes)}
    rows = []
    for key in sorted(groups, key=lambda k: (k[0], k[1], classes.get(k[2], 99), order.get(k[3], 99),
                                             order.get(k[4], 99))):
        y, gval, cls, ft, tt = key
        g = groups[key]
        names = g["units"]
        shown = ", ".join(f'<span class="nw">{html.e(n)}</span>' for n in names[:4])
        rows.append((y, html.e(label(gval)), html.e(cls), len(names), html.e(f"{ft}, {html._ages(g['ages'])}"),
                     html.e(tt), html.money(g["price"]), html.money(g["value"]),
                     shown + (f" and {len(names) - 4} more" if len(names) > 4 else "")))
    return (f'<p class="money-note">Years {s.start_year}–{last}, by {html.e(column)}. Purchase prices and market '
            f"values received are totals of the row, undiscounted, in constant {s.start_year} currency. The buy list "
            "of the first years is in buy-list.csv and plan.xlsx (sheet “buy list”).</p>"
            + html.table(("year", column, "class", "units", "sold (type, age)", "bought type", "purchase prices",
                          "market value received", "units"), rows, num=(0, 3, 6, 7), nowrap=(2, 5), raw=True))


def buy_list_html(bl: BuyList) -> str:
    """Purchases of the buy list with a total per year (the disposals are in buy-list.csv and plan.xlsx)."""
    if not bl.years:
        return ""
    g = [bl.group_by] if bl.group_by else []
    rows = []
    for y in bl.years:
        for p in (p for p in bl.purchases if p.year == y):
            what = p.type if p.action == "buy" else f"overhaul of {p.type}"
            rows.append([y] + ([label(p.group)] if g else []) + [p.class_, what, p.count, html.money(p.unit_price),
                                                                 html.money(p.total)])
        rows.append([f"total {y}"] + [""] * len(g) + ["", "", sum(p.count for p in bl.purchases
                                                                  if p.year == y and p.action == "buy"), "",
                                                      html.money(bl.capital[y])])
    n = len(g)
    return (f"<h3>Buy list {bl.years[0]}–{bl.years[-1]}</h3>"
            '<p class="money-note">What to order: purchases of the first planning years; the units to sell, with '
            "their ids and expected market values, are in buy-list.csv and plan.xlsx (sheet “buy list”).</p>"
            + html.table(["year"] + g + ["class", "type bought", "count", "unit price", "total"], rows,
                         num=(3 + n, 4 + n, 5 + n)))


def group_html(gs: GroupSummary) -> str:
    """Present cost, replacements and capital by year for each value of the column."""
    col = html.e(gs.column)
    rows = [(label(g), gs.units[g], gs.replacements[g], html.money(gs.present_cost[g])) for g in gs.groups]
    rows.append(("all", sum(gs.units.values()), sum(gs.replacements.values()),
                 html.money(sum(gs.present_cost.values()))))
    shown = [k for k in range(len(gs.years)) if any(gs.capital[g][k] for g in gs.groups)][:12]
    cap_rows = [[label(g)] + [html.money(gs.capital[g][k]) for k in shown] for g in gs.groups]
    return (f"<h3>By {col}</h3>"
            + html.table((gs.column, "units", "replacements", "present cost"), rows, num=(1, 2, 3))
            + f'<p class="money-note">Capital by {col} in the first years with purchases (undiscounted); every year '
            f"is in plan.xlsx (sheet “by {col}”).</p>"
            + html.table([gs.column] + [str(gs.years[k]) for k in shown], cap_rows, num=range(1, len(shown) + 1)))
