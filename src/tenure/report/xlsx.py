"""``plan.xlsx``: the plan as a workbook for people who work in spreadsheets.

Sheets: ``summary`` (key figures), ``years`` (one row per planning year, a
total row), ``units`` (one row per replacement of each unit), ``policy``
(the uncapped keep/replace policy of every class by age and year, from
:func:`tenure.chain.backward`) and ``assumptions`` (the case as read).

Money cells hold the plan's figures rounded to the cent, exactly as in
``plan.json``, and are shown with a thousands format; the currency is the
case's constant start-year currency (docs/conventions.md).  The workbook is
built in memory by the write-only writer :mod:`tenure.report.sheetxml` (each row
becomes XML text as it is put, so a 10,000-unit plan holds no cell objects);
:mod:`tenure.report.documents` writes it atomically.
"""

from __future__ import annotations

import math
from collections import Counter
from collections.abc import Sequence
from typing import Any

from .. import __version__
from ..chain import OVERHAUL
from ..model import Case
from ..textutil import cent
from . import rules_view
from .sheetxml import Align, Book, Fill, Font
from .text import CAUTION

MONEY = "#,##0;-#,##0"
RATE = "0.00%"
SHADOW = "0.0000"
HEAD_FONT = Font(bold=True)
HEAD_FILL = Fill("DCE9F2")   # a pale tint of Okabe–Ito blue #0072B2
SECTION_FONT = Font(bold=True, size=12, color="0072B2")
TOTAL_FONT = Font(bold=True)
HEAD_ALIGN = Align(vertical="top", wrap=True)
CENTRE = Align(horizontal="center")


class _Sheet:
    """Writes rows into a sheet (``sheetxml.Sheet``) and remembers the widest text of each column."""

    def __init__(self, ws):
        self.ws = ws
        self.width: Counter = Counter()
        self.heads: list[tuple[int, list[str]]] = []
        self._memo: dict[tuple, list[int]] = {}

    @property
    def row(self) -> int:
        return self.ws.row

    def put(self, values: Sequence[Any], fmt: dict[int, str] | None = None, font=None, fill=None,
            align: dict[int, Align] | None = None) -> int:
        """One row; ``fmt`` and ``align`` map a 0-based column to its number format / alignment."""
        if fmt or align:
            key = (tuple(fmt.items()) if fmt else None, tuple(align.items()) if align else None, font, fill,
                   len(values))
            styles = self._memo.get(key)
            if styles is None:   # rows of a sheet share a few layouts: look each up once
                book, fmt, align = self.ws.book, fmt or {}, align or {}
                styles = self._memo[key] = [book.style(fmt.get(j), font, fill, align.get(j))
                                            for j in range(len(values))]
        else:
            styles = self.ws.book.style(None, font, fill)
        width = self.width
        for j, v in enumerate(values, start=1):
            if v is not None:
                shown = len(f"{v:,.0f}") if isinstance(v, float) else len(str(v))
                width[j] = max(width[j], shown)
            elif j not in width:
                width[j] = 0
        return self.ws.append(values, styles)

    def head(self, values: Sequence[str], wrap_at: int = 18) -> int:
        """A header row; long headers wrap, so they widen a column to at most ``wrap_at`` characters."""
        before = dict(self.width)
        r = self.put(values, font=HEAD_FONT, fill=HEAD_FILL, align={j: HEAD_ALIGN for j in range(len(values))})
        for j, v in enumerate(values, start=1):
            longest = max((len(w) for w in str(v).split()), default=0)
            self.width[j] = max(before.get(j, 0), longest + 1, min(wrap_at, len(str(v))))
        self.heads.append((r, [str(v) for v in values]))
        return r

    def blank(self):
        self.ws.skip()

    def finish(self, freeze: str | None = "A2", min_w: int = 8, max_w: int = 60, fixed: dict | None = None):
        widths = self.ws.width
        for j, w in self.width.items():
            widths[j] = max(min_w, min(max_w, w + 2))
        for j, w in (fixed or {}).items():
            widths[j] = w
        for r, values in self.heads:   # wrapped headers: make the row tall enough
            lines = 1
            for j, v in enumerate(values, start=1):
                w = widths.get(j) or 10
                lines = max(lines, math.ceil(len(v) / max(1.0, w - 1)))
            self.ws.height[r] = 15 * min(lines, 4)
        if freeze:
            self.ws.freeze = freeze


# ---------------------------------------------------------------------------
def summary_sheet(ws, plan, case: Case, run_id: str | None = None):
    s = case.study
    cur = s.start_year
    sh = _Sheet(ws)
    sh.head(("item", "value", "unit / note"))
    rows = [
        ("study", s.title, ""),
        ("case file", case.source, ""),
        ("run id", run_id or "", "the same id is in plan.json, report.html and manifest.json"),
        ("status", plan.status, plan.method),
        ("plan found by", plan.provenance.method if plan.provenance else "", ""),
        ("lower bound from", plan.provenance.lower_bound if plan.provenance else "", ""),
        ("shadow prices from", plan.provenance.shadow_prices if plan.provenance else "", "empty when not computed"),
        ("present cost", cent(plan.present_cost), f"constant {cur} currency, present worth at the start of {cur}"),
        ("proven lower bound", cent(plan.lower_bound), f"constant {cur} currency"),
        ("optimality gap", plan.gap, "fraction of the present cost"),
        ("uncapped present cost", cent(plan.uncapped_cost), "empty when not computed"),
        ("premium over the uncapped plan", cent(plan.premium), f"constant {cur} currency"),
        ("replacements", sum(len(u.events) for u in plan.units), "units bought over the horizon"),
        ("capital, all years", cent(sum(cent(y.capital) for y in plan.years)), "undiscounted purchase prices"),
        ("market value received, all years", cent(sum(cent(y.salvage) for y in plan.years)), "undiscounted"),
        ("O&M, all years", cent(sum(cent(y.om) for y in plan.years)), "undiscounted"),
        ("end of the horizon", plan.end_year, f"end value rule: {plan.end_value}"),
        ("market value held at the end", cent(plan.end_market_value), f"at {plan.end_year} prices"),
        ("cap basis", plan.basis, ""),
    ]
    fmt_for = {"present cost": MONEY, "proven lower bound": MONEY, "uncapped present cost": MONEY,
               "premium over the uncapped plan": MONEY, "capital, all years": MONEY,
               "market value received, all years": MONEY, "O&M, all years": MONEY,
               "market value held at the end": MONEY, "optimality gap": "0.000%"}
    for item, value, note in rows:
        sh.put((item, value, note), fmt={1: fmt_for[item]} if item in fmt_for else None)
    for cls, v in (plan.by_class or {}).items():
        sh.put((f"present cost, {cls}", cent(v), f"constant {cur} currency"), fmt={1: MONEY})
    for y, x in plan.shortfall or ():
        sh.put((f"shortfall {y}", cent(x), "extra capital needed for a plan to fit the caps"), fmt={1: MONEY})
    sh.blank()
    sh.put(("caution", CAUTION, ""))
    sh.put(("made by", f"tenure {__version__}", ""))
    sh.finish(fixed={1: 34, 2: 22, 3: 60})


YEAR_HEAD = ("year", "buys", "capital", "cap", "room under cap (slack)", "O&M", "market value received",
             "net capital (capital less market value)", "shadow price of the cap")


def years_sheet(ws, plan, case: Case):
    bought = []
    for y in plan.years:
        for t in y.buys_by_type:
            if t not in bought:
                bought.append(t)
    order = {t.id: j for j, t in enumerate(case.types)}
    bought.sort(key=lambda t: order.get(t, len(order)))
    head = list(YEAR_HEAD) + [f"bought: {t}" for t in bought]
    sh = _Sheet(ws)
    sh.head(head)
    fmt = {2: MONEY, 3: MONEY, 4: MONEY, 5: MONEY, 6: MONEY, 7: MONEY, 8: SHADOW}
    for y in plan.years:
        cap, sal = cent(y.capital), cent(y.salvage)
        sh.put([y.year, y.buys, cap, cent(y.cap), cent(y.slack), cent(y.om), sal, cent(cap - sal), y.shadow_price]
               + [y.buys_by_type.get(t, 0) for t in bought], fmt=fmt)
    tot = [cent(sum(cent(getattr(y, f)) for y in plan.years)) for f in ("capital", "om", "salvage")]
    sh.put(["total", sum(y.buys for y in plan.years), tot[0], None, None, tot[1], tot[2], cent(tot[0] - tot[2]), None]
           + [sum(y.buys_by_type.get(t, 0) for y in plan.years) for t in bought], fmt=fmt, font=TOTAL_FONT)
    sh.finish()


UNIT_HEAD = ("unit", "class", "type at start", "age at start", "year", "action", "sold type", "sold at age",
             "bought type", "price", "market value received", "extra cost to defer one year",
             "extra cost to advance one year", "unit present cost")


def units_sheet(ws, plan, case: Case):
    kept = list(case.attribute_names)  # the inventory's other columns, after the plan's
    sh = _Sheet(ws)
    sh.head(list(UNIT_HEAD) + kept)
    fmt = {9: MONEY, 10: MONEY, 11: MONEY, 12: MONEY, 13: MONEY}
    for u in plan.units:
        head = [u.unit, u.class_, u.start_type, u.start_age]
        tail = [dict(u.attributes).get(k) for k in kept]
        if not u.events:
            sh.put(head + [None, "keep", None, None, None, None, None, None, None, cent(u.present_cost)] + tail, fmt=fmt)
        for ev in u.events:
            sh.put(head + [ev.year, ev.action, ev.from_type, ev.from_age, ev.type, cent(ev.price),
                           cent(ev.market_value), cent(ev.defer_cost), cent(ev.advance_cost), cent(u.present_cost)] + tail,
                   fmt=fmt)
    sh.finish(freeze="B2")


def policy_sheet(ws, case: Case, solutions: dict | None):
    """Blocks per class and held type: rows age, columns year; '·' keep, else the type to buy."""
    from ..chain import KEEP

    s = case.study
    sh = _Sheet(ws)
    sh.head(["age \\ year"] + list(s.years))
    if not solutions:
        sh.put(("no policy: no class holds units",))
        sh.finish()
        return
    sh.put((("'·' keep the unit another year; a type id: sell the unit and buy that type. The policy ignores "
             "caps and limits (the uncapped optimum)."),))
    centred = {j: CENTRE for j in range(1, s.horizon + 1)}
    widths = [5] * s.horizon
    for cls, sol in solutions.items():
        g = sol.graph
        # one label per action code (-1 keep, -2 overhaul, ≥ 0 the type bought): the table is looked up, not
        # decided per cell
        codes = {**{j: tid for j, tid in enumerate(g.types)}, KEEP: "·", OVERHAUL: "overhaul"}
        for t, tid in enumerate(g.types):
            sh.blank()
            sh.put((f"{cls}: held type {g.row_label(t)} (max age {int(g.max_age[t])})",), font=SECTION_FONT)
            block = sol.policy[: g.horizon, t, : int(g.max_age[t]) + 1].T.tolist()   # rows age, columns year
            for a, acts in enumerate(block):
                cells = [codes.get(act, "—") for act in acts]
                for k, c in enumerate(cells):
                    widths[k] = max(widths[k], len(c))
                sh.put([a] + cells, align=centred)
    for k, w in enumerate(widths):
        sh.width[k + 2] = w
    sh.width[1] = 10
    sh.finish(freeze="B2", min_w=5)


def assumptions_sheet(ws, case: Case):
    s = case.study
    sh = _Sheet(ws)
    sh.head(("section", "item", "value", "unit / note"))
    add = sh.put
    add(("study", "title", s.title, ""))
    add(("study", "case file", case.source, ""))
    add(("study", "start year", s.start_year, "planning year 0"))
    add(("study", "horizon", s.horizon, "years"))
    add(("study", "discount rate", s.discount_rate, "real, per year"), fmt={2: RATE})
    add(("study", "end value", s.end_value, ""))
    add(("study", "money", f"constant {s.start_year} currency", ""))
    b = case.budget
    if b is None or (b.cap is None and not b.cap_by_year):
        add(("budget", "cap", "none", "uncapped"))
    else:
        add(("budget", "cap per year", b.cap, f"constant {s.start_year} currency"), fmt={2: MONEY})
        for y, v in sorted(b.cap_by_year.items()):
            add(("budget", f"cap in {y}", v, f"constant {s.start_year} currency"), fmt={2: MONEY})
        add(("budget", "basis", b.basis, "gross: purchase prices; net: less market value of units sold"))
    for lim in case.limits:
        add(("limit", lim.class_, lim.max_buys_per_year, "most new units per year"))
    for sc in case.scenarios:
        add(("scenario", sc.id, "; ".join(f"{k} = {v}" for k, v in sc.set.items()), sc.note))
    sh.width[3] = min(sh.width[3], 30)

    sh.blank()
    sh.put(("asset types",), font=SECTION_FONT)
    thead = ("type", "class", f"price ({s.start_year})", "price change per year", "buy from", "buy until",
             "max age", "O&M form", "O&M year 1", "O&M gradient per year", "O&M growth per year", "O&M list",
             "O&M change per vintage", "market value form", "retain per year", "straight-line life",
             "straight-line floor", "market value list")
    sh.head(thead)
    for t in case.types:
        om, sv = t.om, t.salvage
        sh.put((t.id, t.class_, t.price, t.price_change, t.buy_from, t.buy_until, t.max_age, om.kind,
                om.first if om.kind != "table" else None, om.gradient if om.kind == "gradient" else None,
                om.growth if om.kind == "growth" else None,
                ", ".join(f"{x:g}" for x in om.table) if om.kind == "table" else None, t.om_change, sv.kind,
                sv.retain if sv.kind == "retain" else None, sv.life if sv.kind == "line" else None,
                sv.floor if sv.kind == "line" else None,
                ", ".join(f"{x:g}" for x in sv.table) if sv.kind == "table" else None),
               fmt={2: MONEY, 3: RATE, 8: MONEY, 9: MONEY, 10: RATE, 12: RATE, 14: RATE, 16: RATE})
    sh.blank()
    sh.put((f"inventory at the start of {s.start_year}",), font=SECTION_FONT)
    sh.head(("id", "type", "age", "count"))
    for u in case.units:
        sh.put((u.id, u.type, u.age, u.count))
    for j in range(1, 19):
        sh.width[j] = min(max(sh.width[j], 8), 24)
    sh.finish(fixed={1: 26})


def warnings_sheet(ws, warnings) -> None:
    """One row per plausibility warning (``tenure.plausibility.Warning``)."""
    sh = _Sheet(ws)
    sh.head(("code", "where", "warning"))
    for w in warnings:
        sh.put((w.code, w.where, w.message))
    sh.finish(fixed={3: 90})


def workbook_bytes(plan, case: Case, solutions: dict | None = None, extra_sheets=(), run_id: str | None = None,
                   warnings=()) -> bytes:
    """The whole ``plan.xlsx`` as bytes; ``extra_sheets`` are (title, fill(ws)) pairs added after "units";
    with the output set's ``run_id`` and the case's plausibility warnings."""
    wb = Book(title=case.study.title or "", creator=f"tenure {__version__}")
    summary_sheet(wb.sheet("summary"), plan, case, run_id)
    years_sheet(wb.sheet("years"), plan, case)
    units_sheet(wb.sheet("units"), plan, case)
    for title, fill in extra_sheets:
        fill(wb.sheet(title[:31]))
    policy_sheet(wb.sheet("policy"), case, solutions)
    assumptions_sheet(wb.sheet("assumptions"), case)
    rules_view.rules_sheet(wb, plan, case)
    if warnings:
        warnings_sheet(wb.sheet("warnings"), warnings)
    return wb.to_bytes()
