"""Rules a plan is drawn under: ``[budget]``, ``[[limit]]`` and the coverage of every class by buyable types."""

from __future__ import annotations

import difflib
from typing import Mapping

from ..model import BUDGET_BASES, MONEY_BASES, AssetType, Budget, Limit, Study, Unit
from .keys import BUDGET_KEYS, LIMIT_KEYS
from .problems import CAP_MAX, UNITS_MAX, Checker, blocks, year_runs


def _budget(chk: Checker, doc: Mapping, study: Study | None) -> Budget | None:
    if "budget" not in doc:
        return None
    b = chk.table(doc["budget"], "budget")
    if b is None:
        return None
    chk.keys(b, BUDGET_KEYS, "budget")
    cap = chk.number(b, "cap", "budget", required=False, default=None, lo=0, hi=CAP_MAX, what="money ≥ 0")
    basis = chk.choice(b, "basis", "budget", BUDGET_BASES, "gross")
    money = chk.choice(b, "money", "budget", MONEY_BASES, "constant")
    study_table = doc.get("study") if isinstance(doc.get("study"), dict) else {}
    if money == "nominal" and "inflation" not in study_table:
        chk.bad("budget.money", "= 'nominal': then-year caps need [study] inflation (general inflation per year, "
                "e.g. inflation = 0.025) to be converted to constant start-year money")
    by_year: dict[int, float] = {}
    if "cap_by_year" in b:
        t = chk.table(b["cap_by_year"], "budget.cap_by_year")
        for key, val in (t or {}).items():
            where = f"budget.cap_by_year.{key}"
            try:
                year = int(str(key))
            except ValueError:
                chk.bad(where, f"= {key!r}: keys must be calendar years")
                continue
            if study is not None and year not in study.years:
                chk.bad(where, f"year {year} is outside the horizon {study.start_year} … "
                        f"{study.start_year + study.horizon - 1}")
                continue
            v = chk.number_value(val, where, lo=0, hi=CAP_MAX, what="money ≥ 0")
            if v is not None:
                by_year[year] = v
    inflation = study.inflation if study is not None else 0.0
    start = study.start_year if study is not None else 0
    return Budget(cap=cap, cap_by_year=by_year, basis=basis, money=money, inflation=inflation, start_year=start)


def _limits(chk: Checker, doc: Mapping, classes: set[str]) -> list[Limit]:
    out: list[Limit] = []
    seen: set[str] = set()
    for j, b in enumerate(blocks(chk, doc, "limit"), start=1):
        p = f"limit[{j}]"
        chk.keys(b, LIMIT_KEYS, p)
        cls = chk.string(b, "class", p)
        n = chk.integer(b, "max_buys_per_year", p, lo=0, what="a whole number ≥ 0")
        if cls is not None:
            if classes and cls not in classes:
                near = difflib.get_close_matches(cls, sorted(classes), n=1, cutoff=0.5)
                hint = f"; did you mean '{near[0]}'?" if near else ""
                chk.bad(f"{p}.class", f"= {cls!r}: unknown class{hint} (classes: {', '.join(sorted(classes))})")
                continue
            if cls in seen:
                chk.bad(f"{p}.class", f"= {cls!r}: a second limit for the same class")
                continue
            seen.add(cls)
        if cls is not None and n is not None:
            out.append(Limit(class_=cls, max_buys_per_year=n))
    return out


def _coverage(chk: Checker, study: Study, types: list[AssetType], units: list[Unit], skip=frozenset()) -> None:
    """Each class that holds units must have a type to buy in every planning year (``skip``: classes not judged)."""
    by_id = {t.id: t for t in types}
    classes = {by_id[u.type].class_ for u in units if u.type in by_id} - set(skip)
    for cls in sorted(classes):
        gaps = [y for y in study.years if not any(t.class_ == cls and t.buyable(y) for t in types)]
        if gaps:
            runs = year_runs(gaps)
            chk.bad(f"class {cls!r}", f"no asset type of this class can be bought in {runs}; a unit reaching "
                    "max_age then could not be replaced (widen a buy_from/buy_until window or add a type)")


def _size(chk: Checker, units: list[Unit]) -> None:
    """The whole inventory holds at most UNITS_MAX units (counts included), so a plan fits in memory."""
    total = sum(u.count for u in units)
    if total > UNITS_MAX:
        chk.bad("unit", f"the inventory holds {total:,} units (counts included): at most {UNITS_MAX:,} are allowed "
                "in one case (split the fleet into cases by class)")
