"""Plain-text views for the terminal: case summary, life table.

Money is printed in whole currency units with thin grouping; the currency is
the case's constant start-year currency (docs/conventions.md).
"""

from __future__ import annotations

from collections import Counter

from ..life import LifeTable
from ..model import Case
from ..textutil import money
from . import rules_view
from . import taxnote as _taxnote
from .overhauls import overhaul_lines

__all__ = ["CAUTION", "money", "rule", "case_summary", "life_text", "plan_summary", "policy_text"]

CAUTION = ("Planning aid only: inspections, manufacturer and regulatory retirement limits, and local "
           "procurement rules come first; decisions belong to qualified professionals.")


def rule(width: int = 72) -> str:
    return "─" * width


def case_summary(case: Case) -> str:
    """One screen: study frame, classes and types, units by class and age band, budget and limits."""
    s = case.study
    last = s.start_year + s.horizon - 1
    out = [f"{s.title or '(untitled study)'}", rule(),
           f"years {s.start_year}–{last} ({s.horizon})   discount rate {s.discount_rate:.2%}/yr   "
           f"end value: {s.end_value}   source: {case.source}", ""]
    out[3:3] = [ln for ln in [rules_view.rate_line(case)] if ln]
    bands = [(0, 2), (3, 5), (6, 8), (9, 11), (12, 14), (15, 19), (20, 200)]
    head = "".join(f"{lo}-{hi}".rjust(7) if hi < 200 else f"{lo}+".rjust(7) for lo, hi in bands)
    out.append(f"{'class / type':<26}{'buy window':>14}{'max':>5}{'units':>7}  ages:{head}")
    for cls in case.classes:
        units = case.units_of(cls)
        n_cls = sum(u.count for u in units)
        out.append(f"{cls:<26}{'':>14}{'':>5}{n_cls:>7}")
        for t in case.types_of(cls):
            by_age: Counter[int] = Counter()
            for u in units:
                if u.type == t.id:
                    by_age[u.age] += u.count
            n = sum(by_age.values())
            window = f"{t.buy_from or '…'}–{t.buy_until or '…'}"
            if t.buy_until is not None and t.buy_until < s.start_year:
                window = "not sold"
            cells = "".join(str(sum(c for a, c in by_age.items() if lo <= a <= hi) or "·").rjust(7)
                            for lo, hi in bands)
            out.append(f"  {t.id:<24}{window:>14}{t.max_age:>5}{n:>7}       {cells}")
    out.append("")
    out.append(f"units: {case.unit_count} in {len(case.units)} inventory rows; types: {len(case.types)}; "
               f"classes: {len(case.classes)}")
    out += overdue_lines(case)
    b = case.budget
    if b is None or (b.cap is None and not b.cap_by_year):
        out.append("budget: none (uncapped)")
    else:
        extra = ", ".join(f"{y}: {money(v)}" for y, v in sorted(b.cap_by_year.items()))
        out.append(f"budget ({b.basis}): {money(b.cap)} per year" + (f"; by year {extra}" if extra else ""))
    for lim in case.limits:
        out.append(f"limit: {lim.class_} at most {lim.max_buys_per_year} purchases per year")
    if case.scenarios:
        out.append("scenarios: " + ", ".join(sc.id for sc in case.scenarios))
    return "\n".join(out)


def _ages_text(ages: list[int]) -> str:
    return f"age {ages[0]}" if len(ages) == 1 else f"ages {ages[0]}–{ages[-1]}"


def overdue_lines(case: Case) -> list[str]:
    """One warning line per type with inventory units past its max age (replaced in the first planning year)."""
    out = []
    for tid, n, ages, names in case.overdue():
        shown = ", ".join(names[:5]) + (f" and {len(names) - 5} more" if len(names) > 5 else "")
        out.append(f"warning: overdue: {n} unit{'s' if n > 1 else ''} of {tid} past max age "
                   f"{case.type(tid).max_age} ({_ages_text(ages)}: {shown}); the plan replaces "
                   f"{'them' if n > 1 else 'it'} in {case.study.start_year}")
    return out


def life_text(lt: LifeTable, title: str = "") -> str:
    """The EAC table by holding period with the economic life and its band marked."""
    lo, hi = lt.band
    out = [title or f"Economic life of {lt.type}, bought {lt.year}", rule(74),
           f"{'hold N':>6} {'EAC capital':>14} {'EAC O&M':>14} {'EAC total':>14} {'marginal':>14}",
           ]
    for n, c, o, t, m in zip(lt.years, lt.eac_capital, lt.eac_om, lt.eac_total, lt.marginal):
        mark = "  ◆ least EAC" if n == lt.economic_life else ("  · in band" if lo <= n <= hi else "")
        out.append(f"{n:>6} {c:>14,.2f} {o:>14,.2f} {t:>14,.2f} {m:>14,.2f}{mark}")
    out.append(rule(74))
    out.append(f"economic life {lt.economic_life} years, least EAC {lt.min_eac:,.2f} per year; "
               f"within {lt.tolerance:.1%}: {lo}–{hi} years")
    out.append("marginal = cost of keeping through year N (lost market value + interest on value held + O&M), "
               "at the end of year N")
    return "\n".join(out)


def plan_summary(plan, case: Case, out_dir: str | None = None, written: list[str] | None = None) -> str:
    """The terminal summary of a plan: status, present cost, buys by class and type, capital by 5-year period."""
    s = case.study
    lines = [f"{s.title or 'plan'} — {plan.method}, status {plan.status}", rule()]
    lines += overdue_lines(case)
    lines.append(f"present cost (time 0, {s.start_year} currency): {money(plan.present_cost)}")
    if s.tax_rate is not None:
        lines.append(f"{_taxnote.tax_line(case)}")
    if plan.status == "feasible":
        bound_from = plan.provenance.lower_bound if plan.provenance is not None else ""
        lines.append(f"proven lower bound {money(plan.lower_bound)}  (gap {plan.gap:.3%}"
                     + (f"; bound from the {bound_from})" if bound_from else ")"))
    if plan.tolerance is not None and plan.status in ("optimal", "feasible"):
        lines.append(f"optimal means proven within a relative gap of {plan.tolerance:.4%}; "
                     f"this plan's gap {plan.gap:.4%}")
    if plan.premium is not None:
        lines.append(f"premium over the uncapped plan: {money(plan.premium)}  (uncapped {money(plan.uncapped_cost)})")
    by_cls: dict[str, Counter] = {}
    for u in plan.units:
        c = by_cls.setdefault(u.class_, Counter())
        for e in u.events:
            if e.type and e.action != "overhaul":  # a sale without a purchase buys nothing
                c[e.type] += 1
    lines.append("")
    lines.append(f"{'replacements':<26}{'by type bought'}")
    for cls in case.classes:
        if cls not in by_cls:
            continue
        mix = ", ".join(f"{t} {n}" for t, n in by_cls[cls].items()) or "none"
        lines.append(f"  {cls:<24}{sum(by_cls[cls].values()):>4}   {mix}")
    lines += overhaul_lines(plan)
    lines.append("")
    lines.append(f"{'period':<12}{'capital':>14}{'buys':>7}{'market value in':>18}{'O&M':>14}")
    for k0 in range(0, s.horizon, 5):
        ys = plan.years[k0:k0 + 5]
        label = f"{ys[0].year}–{ys[-1].year}"
        lines.append(f"{label:<12}{money(sum(y.capital for y in ys), 14)}{sum(y.buys for y in ys):>7}"
                     f"{money(sum(y.salvage for y in ys), 18)}{money(sum(y.om for y in ys), 14)}")
    capped = [y for y in plan.years if y.cap is not None]
    tight = [y for y in capped if y.slack is not None and y.slack < 0.005 * max(y.cap, 1.0)]
    if capped:
        lines.append("")
        lines.append(f"caps ({plan.basis}): {len(tight)} of {len(capped)} years at the cap"
                     + (": " + ", ".join(str(y.year) for y in tight[:12]) if tight else ""))
        priced = sorted((y for y in plan.years if y.shadow_price), key=lambda y: -y.shadow_price)[:5]
        if priced:
            source = plan.provenance.shadow_prices if plan.provenance is not None else ""
            lines.append("  dearest caps (present-cost saving per extra unit of money"
                         + (f", {source}" if source else "") + "): "
                         + ", ".join(f"{y.year} {y.shadow_price:.3f}" for y in priced))
    if plan.status in ("infeasible", "unsolved"):
        lines.append("")
        if plan.status == "infeasible":
            lines.append("NO PLAN FITS THE CAPS: units reach their max age with no money to replace them.")
        else:
            lines.append("NO PLAN WITHIN THE CAPS WAS FOUND in the time allowed, and none is proven impossible.")
            lines.append("A longer --time-limit may find one; the shortfall below is enough for the plan shown.")
        total = sum(x for _, x in plan.shortfall)
        least = ("the least total extra capital, proven" if plan.shortfall_least else
                 f"not proven least: the least total extra capital is at most {money(total)} and at least "
                 f"{money(plan.shortfall_bound or 0.0)}")
        lines.append(f"Raising these years' caps by these amounts makes the plan shown possible "
                     f"(total {money(total)}; {least}):")
        cells = [f"{y}: {money(x, 10)}" for y, x in plan.shortfall]
        for j in range(0, len(cells), 4):
            lines.append("  " + "   ".join(cells[j:j + 4]))
        if plan.forcing_units:
            lines.append("units whose forced replacement needs the money: " + ", ".join(plan.forcing_units[:12])
                         + (" …" if len(plan.forcing_units) > 12 else ""))
    extra = rules_view.summary_lines(case, plan)
    lines += [""] + extra if extra else []
    if out_dir:
        lines.append("")
        names = written or ["plan.json", "units.csv", "years.csv"]
        lines.append(f"written to {out_dir}/: {', '.join(names)}")
    lines.append(CAUTION)
    return "\n".join(lines)


def policy_text(sol, case: Case, type_ids: list[str]) -> str:
    """Optimal action by planning year (columns) and age (rows) for units of each type in ``type_ids``."""
    from ..chain import KEEP, OVERHAUL

    g = sol.graph
    y0 = g.start_year
    H = g.horizon
    ids = list(dict.fromkeys(g.types))  # derived rows (tenure.derived) repeat their type's id
    code = {t: chr(ord("A") + j) for j, t in enumerate(ids)}
    out = [f"Policy for class {g.class_}: '·' keep; a letter: sell the unit and buy that type",
           "types: " + ", ".join(f"{code[t]} = {t}" for t in ids)]
    for tid in type_ids:
        t = g.type_index(tid)
        out.append("")
        out.append(f"held type {tid} (max age {g.max_age[t]}); rows: age at the start of the year; "
                   "columns: year")
        out.append("age " + "".join(f"{(y0 + k) % 100:>3}" for k in range(H)))
        for a in range(0, int(g.max_age[t]) + 1):
            cells = "".join(("·" if int(sol.policy[k, t, a]) == KEEP else "+" if int(sol.policy[k, t, a]) == OVERHAUL
                             else code[g.types[int(sol.policy[k, t, a])]]).rjust(3) for k in range(H))
            out.append(f"{a:>3} {cells}")
    out.append("")
    if g.overhaul_to is not None:
        out.append("'+': overhaul the unit (rows of overhauled units are not shown)")
    out.append("columns are the last two digits of the calendar year; the policy ignores caps and limits")
    return "\n".join(out)
