"""``report.html``: one self-contained page per plan or per comparison.

The page has no scripts, no external style sheet, font or image: the style is
inline, the charts are inline SVG from :mod:`tenure.report.charts`, so the
file can be mailed, archived or opened offline.  The pages are assembled by
jinja2 templates (``templates/``, autoescaping on): ``page.html.j2`` holds the
skeleton and style, ``plan.html.j2`` and ``compare.html.j2`` the sections;
the functions here prepare their values (plan fragments are passed as
``Markup``).  Functions here only build text; :mod:`tenure.report.documents`
writes it.

Look: one plain column, system fonts, grey rules; accents come from the
Okabe–Ito colour-blind-safe set (blue ``#0072B2`` for headings and figures,
vermillion ``#D55E00`` for warnings), the same palette as the charts.
"""

from __future__ import annotations

import datetime as _dt
import math
from collections import Counter
from html import escape
from importlib.resources import files as files_of
from typing import Any, Iterable, Sequence

import jinja2
from markupsafe import Markup

from .. import __version__
from ..model import AssetType, Case
from ..scenarios import Comparison
from . import charts, emissions, rules_view, taxnote
from .overhauls import overhauls_html
from .text import CAUTION

_ENV = jinja2.Environment(loader=jinja2.PackageLoader("tenure.report", "templates"), autoescape=True,
                          trim_blocks=True, lstrip_blocks=True, keep_trailing_newline=True,
                          undefined=jinja2.StrictUndefined)
#: the page style (templates/report.css), inline in every page
CSS = (files_of("tenure.report") / "templates" / "report.css").read_text(encoding="utf-8")

STATUS_WORDS = {
    "optimal": "optimal — the least present cost is proven",
    "feasible": "feasible — within a proven gap of the least present cost",
    "infeasible": "no plan fits the caps",
    "unsolved": "no plan within the caps found in the time allowed",
}


# ---------------------------------------------------------------------------
# small formatters
# ---------------------------------------------------------------------------
def money(x) -> str:
    """Whole currency units with comma grouping; '—' for None or not a number."""
    try:
        v = float(x)
    except (TypeError, ValueError):
        return "—"
    if not math.isfinite(v):
        return "—"
    return f"{v:,.0f}".replace("-", "−")


def pct(x, digits: int = 2) -> str:
    try:
        return f"{float(x):.{digits}%}"
    except (TypeError, ValueError):
        return "—"


def e(x: Any) -> str:
    return escape("" if x is None else str(x))


def table(head: Sequence[str], rows: Iterable[Sequence[Any]], num: Iterable[int] = (), raw: bool = False,
          nowrap: Iterable[int] = ()) -> str:
    """An HTML table of a plan-report fragment (the comparison page uses the template macro).

    Columns in ``num`` are right-aligned, those in ``nowrap`` kept on one line; cells are escaped unless ``raw``.
    """
    num = set(num)
    nw = set(nowrap)
    right = ' class="num"'
    out = ["<table><thead><tr>"]
    out += [f"<th{right if j in num else ''}>{e(h)}</th>" for j, h in enumerate(head)]
    out.append("</tr></thead><tbody>")
    for row in rows:
        out.append("<tr>")
        for j, c in enumerate(row):
            cell = str(c) if raw else e(c)
            attr = right if j in num else (' class="nw"' if j in nw else "")
            out.append(f"<td{attr}>{cell}</td>")
        out.append("</tr>")
    out.append("</tbody></table>")
    return "".join(out)


def fig_box(label: str, value: str, note: str = "", warn: bool = False) -> str:
    return (f'<div class="figure{" warn" if warn else ""}"><div class="k">{e(label)}</div>'
            f'<div class="v">{e(value)}</div>' + (f'<div class="n">{e(note)}</div>' if note else "") + "</div>")


def render(template: str, **context) -> str:
    """A page from ``templates/<template>`` (autoescaped; pre-built fragments are passed as Markup)."""
    return _ENV.get_template(template).render(version=__version__, **context)


# ---------------------------------------------------------------------------
# assumptions
# ---------------------------------------------------------------------------
def window_text(t: AssetType, start_year: int) -> str:
    if t.buy_until is not None and t.buy_until < start_year:
        return f"no longer sold (last {t.buy_until})"
    if t.buy_from is None and t.buy_until is None:
        return "every year"
    if t.buy_from is None:
        return f"until {t.buy_until}"
    if t.buy_until is None:
        return f"from {t.buy_from}"
    return f"{t.buy_from}–{t.buy_until}"


def om_text(t: AssetType) -> str:
    c = t.om
    if c.kind == "gradient":
        s = f"{money(c.first)} in year 1, {'+' if c.gradient >= 0 else '−'}{money(abs(c.gradient))} per year of age"
    elif c.kind == "growth":
        s = f"{money(c.first)} in year 1, {c.growth:+.1%} per year of age"
    else:
        tab = list(c.table)
        s = f"listed by age: {money(tab[0])} … {money(tab[-1])} ({len(tab)} figures)" if tab else "listed"
    if t.om_change:
        s += f"; each later vintage {t.om_change:+.1%}"
    return s


def value_text(t: AssetType) -> str:
    c = t.salvage
    if c.kind == "retain":
        return f"keeps {c.retain:.0%} of the current new price per year of age"
    if c.kind == "line":
        return f"straight line to {c.floor:.0%} of the current new price at {c.life:g} years"
    tab = list(c.table)
    return (f"listed by age for a start-year sale: {money(tab[0])} … {money(tab[-1])}, then follows the new price"
            if tab else "listed")


def assumptions_html(case: Case) -> str:
    s = case.study
    last = s.start_year + s.horizon - 1
    end = {"salvage": f"units still held at the start of {last + 1} are sold at market value",
           "continuing": f"units still held at the start of {last + 1} are costed as continuing replacement chains "
                         f"(prices frozen at {last + 1} levels)"}.get(s.end_value, s.end_value)
    rows = [("Study", s.title or "(untitled)"), ("Case file", case.source),
            ("Planning years", f"{s.start_year}–{last} ({s.horizon} years)"),
            ("Discount rate", f"{s.discount_rate:.2%} per year, real"),
            ("Money", f"constant {s.start_year} currency; present cost is at the start of {s.start_year}"),
            ("End of the horizon", f"{s.end_value}: {end}")] + taxnote.assumption_rows(case)
    out = ["<h3>Study frame</h3>", table(("item", "value"), rows)]
    trow = []
    for t in case.types:
        n = sum(u.count for u in case.units if u.type == t.id)
        trow.append((t.id, t.class_, money(t.price), f"{t.price_change:+.1%}" if t.price_change else "—",
                     window_text(t, s.start_year), t.max_age, om_text(t), value_text(t), n))
    out.append("<h3>Asset types</h3>")
    out.append(f'<p class="money-note">Prices are for a unit bought in {s.start_year}; '
               "“price change” is the change per later purchase year. Max age: a unit is replaced "
               "when it reaches it.</p>")
    out.append(table(("type", "class", f"price ({s.start_year})", "price change / year", "can be bought",
                      "max age (years)", "O&M per year", "market value", "units held"), trow, num=(2, 3, 5, 8),
                     nowrap=(0, 1)))
    out += [x for x in [taxnote.depreciation_html(case)] if x]
    inv = []
    for t in case.types:
        ages = Counter()
        for u in case.units:
            if u.type == t.id:
                ages[u.age] += u.count
        if ages:
            inv.append((t.class_, t.id, sum(ages.values()), f"{min(ages)}–{max(ages)}" if len(ages) > 1
                        else str(min(ages)),
                        ", ".join(f"{a}: {n}" for a, n in sorted(ages.items()))))
    out.append(f"<h3>Inventory at the start of {s.start_year}</h3>")
    out.append(f'<p class="money-note">{case.unit_count} units in {len(case.units)} inventory rows; '
               "age = completed years of service.</p>")
    out.append(table(("class", "type", "units", "ages", "units by age"), inv, num=(2,)))
    out.append("<h3>Budget and limits</h3>")
    b = case.budget
    brows = []
    if b is None or (b.cap is None and not b.cap_by_year):
        brows.append(("Capital cap", "none — the plan is uncapped"))
    else:
        basis = ("gross: purchase prices" if b.basis == "gross"
                 else "net: purchase prices less market value of units sold that year")
        brows.append(("Capital cap per year", money(b.cap) if b.cap is not None else "none in other years"))
        for y, v in sorted(b.cap_by_year.items()):
            brows.append((f"Cap in {y}", money(v)))
        brows.append(("Cap basis", basis))
    if case.limits:
        for lim in case.limits:
            brows.append((f"Purchase limit, {lim.class_}", f"at most {lim.max_buys_per_year} new units a year"))
    else:
        brows.append(("Purchase limits", "none"))
    out.append(table(("item", "value"), brows))
    if case.scenarios:
        out.append("<h3>Scenarios defined in the case</h3>")
        out.append(table(("scenario", "note", "changes"),
                         [(sc.id, sc.note, "; ".join(f"{k} = {v}" for k, v in sc.set.items()))
                          for sc in case.scenarios]))
    return "\n".join(out)


def footer_html(case: Case) -> str:
    s = case.study
    return f"""<footer><h2>Cautions</h2>
<p><strong>{e(CAUTION)}</strong></p>
<ul>
<li>A plan is a planning aid, not an instruction to buy or sell. It is only as good as the prices, running costs,
market values and limits in the case file.</li>
<li>Inspections, manufacturer and regulatory retirement limits, and local procurement rules come first: a unit
that fails an inspection or reaches a mandated limit is replaced whatever this plan says.</li>
<li>Replacement and purchasing decisions belong to qualified professionals who know the units, the service and the
local rules.</li>
<li>All money is in constant {s.start_year} currency (real terms); the present cost is discounted to the start of
{s.start_year} at {s.discount_rate:.2%} per year.</li>
</ul>
<p class="small">Made by tenure {e(__version__)} from {e(case.source)} on {_dt.date.today().isoformat()}.
This page needs no network connection.</p>
</footer>"""


# ---------------------------------------------------------------------------
# the plan report
# ---------------------------------------------------------------------------
def _buys_by_type(plan) -> Counter:
    c: Counter = Counter()
    for u in plan.units:
        for ev in u.events:
            c[ev.type] += bool(ev.type) and ev.action != "overhaul"  # a sale without a replacement buys nothing
    return +c


def summary_html(plan, case: Case) -> str:
    s = case.study
    cur = s.start_year
    buys = _buys_by_type(plan)
    total_buys = sum(buys.values())
    capped_years = [y for y in plan.years if y.cap is not None]
    tight = [y for y in capped_years if y.slack is not None and y.slack < 0.005 * max(abs(y.cap), 1.0)]
    boxes = [
        fig_box("Present cost", money(plan.present_cost), f"at the start of {cur}, constant {cur} currency",
                warn=plan.status in ("infeasible", "unsolved")),
        fig_box("Status", plan.status, STATUS_WORDS.get(plan.status, "") + f" ({plan.method})",
                warn=plan.status != "optimal"),
        fig_box("Optimality gap", pct(plan.gap, 2) if plan.status not in ("infeasible", "unsolved") else "—",
                f"proven lower bound {money(plan.lower_bound)}"
                + (f" (from the {plan.provenance.lower_bound})" if plan.provenance and plan.provenance.lower_bound
                   else "") if plan.status == "feasible"
                else ("proven optimal" if plan.status == "optimal" else ""))
                + (f"; optimal means proven within {pct(plan.tolerance, 4)}" if plan.tolerance is not None else ""),
    ]
    if plan.premium is not None:
        boxes.append(fig_box("Premium over the uncapped plan", money(plan.premium),
                             f"uncapped present cost {money(plan.uncapped_cost)}"))
    elif not case.capped:
        boxes.append(fig_box("Premium over the uncapped plan", "0", "this plan has no caps or limits"))
    else:
        boxes.append(fig_box("Premium over the uncapped plan", "—", "the uncapped cost was not computed"))
    mix = ", ".join(f"{t} {n}" for t, n in sorted(buys.items(), key=lambda kv: -kv[1]))
    boxes.append(fig_box("Replacements", f"{total_buys}", mix or "no unit is replaced"))
    boxes.append(fig_box("Capital, all years", money(sum(y.capital for y in plan.years)),
                         "purchase prices, undiscounted; market value received "
                         + money(sum(y.salvage for y in plan.years))))
    if capped_years:
        boxes.append(fig_box("Years at the cap", f"{len(tight)} of {len(capped_years)}",
                             ", ".join(str(y.year) for y in tight[:8]) + (" …" if len(tight) > 8 else "")))
    end_note = (f"market value of units held at {plan.end_year}: {money(plan.end_market_value)}"
                if plan.end_value == "salvage" else f"units held at {plan.end_year} costed as continuing chains")
    boxes.append(fig_box("End of the horizon", plan.end_value, end_note))
    out = ['<div class="figures">' + "".join(boxes) + "</div>"] + [x for x in [taxnote.summary_html(case)] if x]
    if plan.status in ("infeasible", "unsolved"):
        rows = [(y, money(x)) for y, x in plan.shortfall]
        head = ('<strong>No plan fits the caps.</strong> Some units reach their max age in years without enough '
                "capital to replace them. Raising these years' caps by the amounts below makes the plan shown "
                "possible." if plan.status == "infeasible" else
                "<strong>No plan within the caps was found in the time allowed</strong>, and none is proven "
                "impossible. Raising these years' caps by the amounts below is enough for the plan shown; a "
                "longer time limit may find a plan within the caps as they are.")
        total = sum(x for _, x in plan.shortfall)
        head += (f" Total {money(total)}: the least total extra capital, proven." if plan.shortfall_least else
                 f" Total {money(total)}: not proven least; the least total extra capital is at most "
                 f"{money(total)} and at least {money(plan.shortfall_bound or 0.0)}.")
        out.append('<div class="notice">' + head + table(("year", "extra capital needed"), rows, num=(1,)))
        if plan.forcing_units:
            out.append("<p>Units whose forced replacement needs the money: "
                       + e(", ".join(plan.forcing_units[:20])) + (" …" if len(plan.forcing_units) > 20 else "")
                       + "</p>")
        out.append("</div>")
    elif plan.status == "feasible":
        out.append(f'<div class="notice"><strong>Not proven optimal.</strong> The solver stopped with a plan whose '
                   f"present cost is at most {pct(plan.gap)} above the least possible "
                   f"({money(plan.lower_bound)}).</div>")
    if plan.message:
        out.append(f'<p class="money-note">Solver note: {e(plan.message)}</p>')
    return "\n".join(out)


def _ages(ages: list[int]) -> str:
    """'age 4', 'ages 1–13, 16'."""
    a = sorted(set(ages))
    runs: list[list[int]] = []
    for x in a:
        if runs and x == runs[-1][-1] + 1:
            runs[-1].append(x)
        else:
            runs.append([x])
    text = ", ".join(f"{r[0]}–{r[-1]}" if len(r) > 2 else ", ".join(map(str, r)) for r in runs)
    return ("age " if len(a) == 1 else "ages ") + text


def first_years_html(plan, case: Case, n_years: int = 5) -> str:
    """Replacements of the first ``n_years``, one row per year, class, sold type and bought type."""
    s = case.study
    last = s.start_year + min(n_years, s.horizon) - 1
    groups: dict[tuple, dict] = {}
    for u in plan.units:
        for ev in u.events:
            if ev.year <= last and ev.action != "overhaul":
                g = groups.setdefault((ev.year, u.class_, ev.from_type, ev.type),
                                      {"units": [], "ages": [], "price": 0.0, "value": 0.0})
                g["units"].append(u.unit)
                g["ages"].append(ev.from_age)
                g["price"] += ev.price
                g["value"] += ev.market_value
    order = {t.id: j for j, t in enumerate(case.types)}
    classes = {c: j for j, c in enumerate(case.classes)}
    rows = []
    for key in sorted(groups, key=lambda k: (k[0], classes.get(k[1], 99), order.get(k[2], 99), order.get(k[3], 99))):
        y, cls, ft, tt = key
        g = groups[key]
        names = g["units"]
        shown = ", ".join(f'<span class="nw">{e(n)}</span>' for n in names[:4])
        sold = f"{ft}, {_ages(g['ages'])}" if ft else "none (a unit added)"
        rows.append((y, e(cls), len(names), e(sold), e(tt or "none (not replaced)"), money(g["price"]),
                     money(g["value"]), shown + (f" and {len(names) - 4} more" if len(names) > 4 else "")))
    if not rows:
        return f"<p>No replacement is planned in {s.start_year}–{last}.</p>"
    return (f'<p class="money-note">Years {s.start_year}–{last}. Purchase prices and market values received are '
            f"totals of the row, undiscounted, in constant {s.start_year} currency. The full schedule is in "
            "plan.xlsx (sheet “units”).</p>"
            + table(("year", "class", "units", "sold (type, age)", "bought type", "purchase prices",
                     "market value received", "units"), rows, num=(0, 2, 5, 6), nowrap=(1, 4), raw=True))


def years_table_html(plan, case: Case) -> str:
    rows = []
    for y in plan.years:
        rows.append((y.year, y.buys, money(y.capital), money(y.salvage), money(y.om),
                     money(y.cap) if y.cap is not None else "—", money(y.slack) if y.slack is not None else "—",
                     f"{y.shadow_price:.3f}" if y.shadow_price is not None else "—",
                     ", ".join(f"{t} {n}" for t, n in y.buys_by_type.items())))
    return table(("year", "buys", "capital", "market value received", "O&M", "cap", "room under cap",
                  "shadow price", "bought"), rows, num=(0, 1, 2, 3, 4, 5, 6, 7))


def class_table_html(plan, case: Case) -> str:
    rows = []
    for c, v in (plan.by_class or {}).items():
        n = sum(1 for u in plan.units if u.class_ == c)
        buys = sum(bool(e.type) and e.action != "overhaul" for u in plan.units if u.class_ == c for e in u.events)
        rows.append((c, n, buys, money(v)))
    rows.append(("all classes", len(plan.units), sum(bool(e.type) and e.action != "overhaul" for u in plan.units
                                                     for e in u.events), money(plan.present_cost)))
    return table(("class", "units", "replacements", "present cost"), rows, num=(1, 2, 3))


def plan_charts(plan, case: Case, life_tables) -> list[tuple[str, str, str, str]]:
    """(id, title, how to read, svg) of each chart of the plan report, in page order."""
    cur = case.study.start_year
    capped = any(y.cap is not None for y in plan.years)
    n_classes = len({u.class_ for u in plan.units})
    class_note = (f" The {charts.MAX_PANELS} classes with the most units of {n_classes} are shown; the spreadsheet "
                  "has every unit." if n_classes > charts.MAX_PANELS else "")
    bought: dict[str, int] = {}
    for u in plan.units:
        for ev in u.events:
            bought[ev.type] = bought.get(ev.type, 0) + 1
    if len(life_tables) > charts.MAX_PANELS:
        # the types the plan buys most come first
        life_tables = sorted(life_tables, key=lambda lt: -bought.get(lt.type, 0))[:charts.MAX_PANELS]
        type_note = (f" The {charts.MAX_PANELS} types the plan buys most are shown; tenure life prints every "
                     "type.")
    else:
        type_note = ""
    out = [
        ("chart-capital", "Capital per year" + (" against the cap" if capped else ""),
         ("Each bar is the money spent on new units in that year (purchase prices, undiscounted). "
          + ("The dashed line is the year's cap; bars marked in vermillion and hatched are over the cap, and "
             "cross-hatched boxes above the cap are the extra capital a plan would need. "
             if capped or plan.shortfall else "This plan has no cap, so there is no cap line. ")
          + f"Money in constant {cur} currency."),
         charts.capital_chart(plan, case)),
        ("chart-ages", "Fleet age by year",
         "One panel per class. Each column is a year, each row an age; the colour says how many units have that "
         "age in that year (white: none; lighter colours: more units). Age 0 means bought that year. The "
         "vermillion line is the max age: units are replaced on reaching it." + class_note,
         charts.age_heatmap(plan, case)),
        ("chart-types", "Units in service by type",
         "The height of each band is the number of units of that type in service in the year; the total is the "
         "fleet size. Watch bands shrink as a type is phased out and grow as its successor is bought.",
         charts.types_chart(plan, case)),
        ("chart-eac", "Equivalent annual cost by years kept",
         "For one new unit of each type that can be bought, bought in the year shown: the yearly cost of owning "
         "it (capital: price less resale value; O&M; and their total) if it is kept N years and then sold. The "
         "lowest point of the total is the economic life; the shaded band holds the lives whose cost is "
         f"within the tolerance of the least. Money per year, in constant {cur} currency." + type_note,
         charts.eac_chart(case, life_tables)),
        ("chart-class-cost", "Present cost by class",
         f"The present cost of each class's part of the plan, at the start of {cur} in constant {cur} currency "
         "(purchases and O&M, less market values received and the end value).",
         charts.class_cost_chart(plan, case)),
    ]
    out.append(emissions.chart_section(plan, case))
    cap_svg = charts.cap_cost_chart(plan, case)
    if cap_svg is not None:
        out.append(("chart-cap-cost", "Cost of each year's cap",
                    "For each capped year: how much the present cost of the plan would fall per 1 of extra cap "
                    "money in that year (a shadow price"
                    + (f" from the {plan.provenance.shadow_prices}" if plan.provenance and plan.provenance.shadow_prices
                       else "") + "). Tall bars mark "
                    "the years where the cap costs most; a bar of 0 means the cap does not bind.",
                    cap_svg))
    return out


def plan_report(plan, case: Case, life_tables, extra: dict | None = None, notes: str = "") -> str:
    """The whole ``report.html`` of a plan; ``extra`` holds HTML parts by place ("summary", "first_years",
    "tables"); ``notes`` the run id and warnings (report.notes), shown above the footer."""
    extra = extra or {}
    s = case.study
    what = "a least-cost plan" if plan.status == "optimal" else "a plan" if plan.success else "an attempted plan"
    title = s.title or "Renewal plan"
    return render("plan.html.j2", page_title=f"{title} — renewal plan", title=title, first=s.start_year,
                  last=s.start_year + s.horizon - 1, horizon=s.horizon, unit_count=case.unit_count,
                  method=plan.method, status=plan.status, what=what,
                  capped=any(y.cap is not None for y in plan.years),
                  summary=Markup(summary_html(plan, case) + extra.get("summary", "")), first_years=Markup((extra.get("first_years") or first_years_html(plan, case)) + overhauls_html(plan, case)),
                  charts=[(cid, ttl, read, Markup(svg)) for cid, ttl, read, svg in plan_charts(plan, case, life_tables)],
                  class_table=Markup(class_table_html(plan, case)), years_table=Markup(years_table_html(plan, case)),
                  extra_tables=Markup(extra.get("tables", "")), rules=Markup(rules_view.rules_html(plan, case)),
                  assumptions=Markup(assumptions_html(case)), footer=Markup(notes + footer_html(case)))


# ---------------------------------------------------------------------------
# the comparison report
# ---------------------------------------------------------------------------
def _regret_view(cmp: Comparison) -> dict:
    """Head, rows and chosen plan of the regret table; a cell that breaks a rule shows why on hover."""
    reg = cmp.regret
    ids = list(reg.ids)
    rows, broke = [], False
    for i in ids:
        cells = []
        for j in ids:
            x = reg.regret[i][j]
            if x is not None:
                cells.append(money(x))
            elif reg.breaks[i][j]:
                broke = True
                reasons = "; ".join(reg.breaks[i][j][:3])
                cells.append(Markup('<span title="{}">breaks a rule</span>').format(reasons))
            else:
                cells.append("—")
        if i in reg.max_regret:
            worst = money(reg.max_regret[i]) if reg.max_regret[i] is not None else "breaks a rule"
        else:
            worst = "—"
        rows.append([i] + cells + [worst])
    return {"head": ["plan ↓ / scenario →"] + ids + ["largest regret"], "rows": rows,
            "num": list(range(1, len(ids) + 2)), "best": reg.least_max_regret, "rule": reg.rule, "broke": broke}


def _commit_view(cmp: Comparison) -> dict | None:
    """Head and rows of the commit-then-re-plan regret table (None when it was not asked for)."""
    reg = cmp.commit_regret
    if reg is None:
        return None
    ids = list(reg.ids)
    rows = [[i] + [("cannot be carried out" if reg.breaks[i][j] else money(reg.regret[i][j])) for j in ids]
            + [money(reg.max_regret.get(i))] for i in ids]
    return {"years": cmp.commit_years, "head": ["plan ↓ / scenario →"] + ids + ["largest regret"], "rows": rows,
            "num": list(range(1, len(ids) + 2)), "best": reg.least_max_regret, "notes": list(cmp.commit_notes)}


def action_label(act: str) -> str:
    """A first-year action code (``scenarios.first_year_actions``) in words."""
    kind, _, t = act.partition(":")
    return {"replace": f"replace with {t}", "buy": f"buy {t} (a unit added)",
            "sell": "sell, not replaced"}.get(kind, act)


def actions_text(actions: dict) -> str:
    """``{unit: "keep" | "replace:<type>" | …}`` as 'replace 9: rt-diesel 7 (RT-L14#1, …); keep 69'."""
    if not actions:
        return "—"
    keep = sum(1 for a in actions.values() if a == "keep")
    by_type: dict[str, list[str]] = {}
    others: dict[str, list[str]] = {}
    for unit, act in actions.items():
        if act.startswith("replace:"):
            by_type.setdefault(act.split(":", 1)[1], []).append(unit)
        elif act != "keep":
            others.setdefault(action_label(act), []).append(unit)
    parts = []
    n_rep = sum(len(v) for v in by_type.values())
    if n_rep:
        mix = ", ".join(f"{t} {len(us)} ({', '.join(us[:3])}{', …' if len(us) > 3 else ''})"
                        for t, us in by_type.items())
        parts.append(f"replace {n_rep}: {mix}")
    parts += [f"{label} {len(us)} ({', '.join(us[:3])}{', …' if len(us) > 3 else ''})" for label, us in others.items()]
    parts.append(f"keep {keep}")
    return "; ".join(parts)


def _safe_rows(cmp: Comparison) -> list[tuple]:
    grouped: dict[str, list[str]] = {}
    for x in cmp.safe_now:
        grouped.setdefault(x.action, []).append(x.unit)
    rows = []
    for act, units in sorted(grouped.items(), key=lambda kv: (kv[0] == "keep", kv[0])):
        label = action_label(act)
        rows.append((label, len(units), ", ".join(units[:12]) + (f" and {len(units) - 12} more" if len(units) > 12
                                                                 else "")))
    return rows


def compare_report(cmp: Comparison, case: Case, notes: str = "") -> str:
    """The whole ``report.html`` of a comparison of scenarios (templates/compare.html.j2); ``notes`` the run id."""
    s = case.study
    cur = str(s.start_year)
    title = s.title or "Scenario comparison"
    scen = cmp.scenarios
    ids = cmp.ids
    caps = {}
    if case.budget is not None and (case.budget.cap is not None or case.budget.cap_by_year):
        caps = {y: case.budget.constant_cap(y) for y in s.years if case.budget.constant_cap(y) is not None}
    types = cmp.bought_types()
    return render(
        "compare.html.j2", page_title=f"{title} — scenario comparison", title=title, cur=cur, first=s.start_year,
        last=s.start_year + s.horizon - 1, capped=bool(caps), ids=ids,
        scenario_rows=[(r.id, r.note or "", r.status or "—", money(r.present_cost), _signed(r.difference))
                       for r in scen],
        cost_svg=Markup(charts.compare_cost_chart(scen, cur)),
        capital_svg=Markup(charts.compare_capital_chart(scen, cur, caps)),
        regret=_regret_view(cmp), safe_rows=_safe_rows(cmp), commit=_commit_view(cmp),
        first_year=[(r.id, actions_text(r.first_year_actions)) for r in scen],
        differ_rows=[[d.unit, d.year] + [d.actions.get(i, "—") for i in ids] for d in cmp.differ_early],
        types=types, buy_rows=[[r.id] + [money(r.buys_by_type.get(t, 0)) for t in types] for r in scen],
        assumptions=Markup(assumptions_html(case)), footer=Markup(notes + footer_html(case)))


def _signed(x) -> str:
    if x is None:
        return "—"
    return ("+" if x > 0 else "") + money(x)
