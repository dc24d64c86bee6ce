"""Plain-text views for the terminal: case summary, life table.

Money is printed in whole currency units with thin grouping; the currency is
the case's constant start-year currency (docs/conventions.md).
"""

from __future__ import annotations

from collections import Counter

from ..life import LifeTable
from ..model import Case

CAUTION = ("Planning aid only: inspections, manufacturer and regulatory retirement limits, and local "
           "procurement rules come first; decisions belong to qualified professionals.")


def money(x: float | None, width: int = 0) -> str:
    """Whole currency units with comma grouping; '—' for None."""
    s = "—" if x is None else f"{x:,.0f}"
    return s.rjust(width) if width else s


def rule(width: int = 72) -> str:
    return "─" * width


def case_summary(case: Case) -> str:
    """One screen: study frame, classes and types, units by class and age band, budget and limits."""
    s = case.study
    last = s.start_year + s.horizon - 1
    out = [f"{s.title or '(untitled study)'}", rule(),
           f"years {s.start_year}–{last} ({s.horizon})   discount rate {s.discount_rate:.2%}/yr   "
           f"end value: {s.end_value}   source: {case.source}", ""]
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
