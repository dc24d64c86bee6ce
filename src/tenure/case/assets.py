"""The ``[study]`` table and the ``[[asset_type]]`` blocks with their O&M and market-value curves."""

from __future__ import annotations

from typing import Any, Mapping

from ..model import END_VALUES, RATE_BASES, AssetType, Emissions, OMCurve, Study, ValueCurve
from .keys import EMISSION_KEYS, STUDY_KEYS, TYPE_KEYS
from .problems import MONEY_MAX, RATE_MAX, RATE_MIN, Checker, blocks
from .taxes import _depreciation, _tax_rate
from .usage import type_usage_fields


def _study(chk: Checker, doc: Mapping) -> Study | None:
    s = doc.get("study")
    if s is None:
        chk.bad("study", "missing: a [study] table with start_year, horizon and discount_rate is required")
        return None
    s = chk.table(s, "study")
    if s is None:
        return None
    chk.keys(s, STUDY_KEYS, "study")
    title = chk.string(s, "title", "study", required=False, default="") or ""
    start = chk.integer(s, "start_year", "study", lo=1900, hi=2300, what="a calendar year")
    horizon = chk.integer(s, "horizon", "study", lo=1, hi=200, what="a whole number of years")
    rate = chk.number(s, "discount_rate", "study", lo=RATE_MIN, hi=RATE_MAX, lo_open=True, hi_open=True,
                      what="a rate per year > -1")
    if rate is not None and rate < 0 and horizon is not None:  # a negative rate makes late money weigh more
        chk.growth("study.discount_rate", 1 / (1 + rate) - 1, horizon + 100, "the discount factor over the horizon "
                   "and the longest life", shown=rate)
    end_value = chk.choice(s, "end_value", "study", END_VALUES, "salvage")
    if end_value == "continuing" and rate is not None and rate <= 0:
        chk.bad("study.discount_rate", f"= {rate!r}: end_value = 'continuing' needs a discount rate > 0 "
                "(a capitalised cost EAC/i is infinite at a zero rate); use end_value = 'salvage' or a positive rate")
    inflation = chk.number(s, "inflation", "study", required=False, default=0.0, lo=RATE_MIN, hi=RATE_MAX, lo_open=True,
                           hi_open=True, what="a rate per year")
    rate_basis = chk.choice(s, "rate_basis", "study", RATE_BASES, "real")
    carbon = chk.number(s, "carbon_price", "study", required=False, default=0.0, lo=0, hi=MONEY_MAX,
                        what="money per tonne ≥ 0")
    tax_rate = _tax_rate(chk, s)
    if None in (start, horizon, rate, inflation, carbon):
        return None
    nominal = None
    if rate_basis == "nominal":
        nominal, rate = rate, fisher_real_rate(rate, inflation)
    return Study(title=title, start_year=start, horizon=horizon, discount_rate=rate, end_value=end_value,
                 inflation=inflation, rate_basis=rate_basis, nominal_rate=nominal, carbon_price=carbon, tax_rate=tax_rate)


def fisher_real_rate(nominal: float, inflation: float) -> float:
    """Real rate per year from a nominal rate and general inflation (Fisher relation).

    ``real = (1 + nominal)/(1 + inflation) − 1`` (I. Fisher, *The Theory of Interest*, 1930;
    common practice in engineering economy texts).
    """
    return (1.0 + nominal) / (1.0 + inflation) - 1.0


def _emissions(chk: Checker, b: Mapping, p: str) -> Emissions | None:
    if "emissions" not in b:
        return Emissions()
    v = b["emissions"]
    where = f"{p}.emissions"
    if not isinstance(v, dict):
        x = chk.number_value(v, where, lo=0, what="tonnes per unit-year ≥ 0 or { first, change }")
        return None if x is None else Emissions(first=x)
    chk.keys(v, EMISSION_KEYS, where)
    first = chk.number(v, "first", where, lo=0, what="tonnes per unit-year ≥ 0")
    change = chk.number(v, "change", where, required=False, default=0.0, lo=RATE_MIN, hi=RATE_MAX,
                        lo_open=True, hi_open=True, what="a rate per vintage year")
    if first is None or change is None:
        return None
    return Emissions(first=first, change=change)


def _money_list(chk: Checker, v: list, path: str, empty: str) -> tuple[float, ...] | None:
    """A list of money figures by age (each ≥ 0 and ≤ MONEY_MAX), or None with the problems recorded."""
    vals = [chk.number_value(x, f"{path}[{j + 1}]", lo=0, hi=MONEY_MAX, what="money ≥ 0") for j, x in enumerate(v)]
    if not vals:
        chk.bad(path, f"= []: {empty}")
        return None
    return None if any(x is None for x in vals) else tuple(vals)


def _om_curve(chk: Checker, v: Any, path: str) -> OMCurve | None:
    if isinstance(v, list):
        vals = _money_list(chk, v, path, "an O&M list needs one figure per age 1 … max_age")
        return None if vals is None else OMCurve(kind="table", table=vals)
    t = chk.table(v, path)
    if t is None:
        return None
    chk.keys(t, ("first", "gradient", "growth"), path)
    first = chk.number(t, "first", path, lo=0, hi=MONEY_MAX, what="money ≥ 0")
    if "gradient" in t and "growth" in t:
        chk.bad(path, "give either 'gradient' (arithmetic) or 'growth' (geometric), not both")
        return None
    if "growth" in t:
        g = chk.number(t, "growth", path, lo=RATE_MIN, hi=RATE_MAX, lo_open=True, hi_open=True,
                       what="a rate per year > -1")
        if first is None or g is None:
            return None
        return OMCurve(kind="growth", first=first, growth=g)
    grad = chk.number(t, "gradient", path, required=False, default=0.0, lo=-MONEY_MAX, hi=MONEY_MAX,
                      what="money per year")
    if first is None or grad is None:
        return None
    return OMCurve(kind="gradient", first=first, gradient=grad)


def _value_curve(chk: Checker, v: Any, path: str) -> ValueCurve | None:
    if isinstance(v, list):
        vals = _money_list(chk, v, path, "a market-value list needs at least the value at age 1")
        return None if vals is None else ValueCurve(kind="table", table=vals)
    t = chk.table(v, path)
    if t is None:
        return None
    chk.keys(t, ("retain", "life", "floor"), path)
    if "retain" in t:
        if "life" in t or "floor" in t:
            chk.bad(path, "give either 'retain' or 'life' with 'floor', not both")
            return None
        r = chk.number(t, "retain", path, lo=0, hi=1, lo_open=True, what="a fraction kept per year")
        return None if r is None else ValueCurve(kind="retain", retain=r)
    if "life" in t or "floor" in t:
        life = chk.number(t, "life", path, lo=0, hi=200, lo_open=True, what="a number of years")
        floor = chk.number(t, "floor", path, required=False, default=0.0, lo=0, hi=1, hi_open=True,
                           what="a fraction of the price")
        if life is None or floor is None:
            return None
        return ValueCurve(kind="line", life=life, floor=floor)
    chk.bad(path, "must be { retain = r }, { life = n, floor = f } or a list of values by age 1 … n")
    return None


def _year(chk: Checker, t: Mapping, key: str, path: str) -> int | None:
    return chk.integer(t, key, path, required=False, default=None, lo=1900, hi=2300, what="a calendar year")


def _growth_checks(chk: Checker, doc: Mapping, p: str, price_change, om_change, om, max_age) -> None:
    """Compounding rates must not multiply a price or O&M figure by more than GROWTH_MAX within the study."""
    study = doc.get("study") if isinstance(doc.get("study"), dict) else {}
    h = study.get("horizon")
    h = h if isinstance(h, int) and not isinstance(h, bool) and 1 <= h <= 200 else None
    span = None if h is None or max_age is None else h + max_age  # purchase years and the ages after them
    chk.growth(f"{p}.price_change", price_change, span, "the price over the horizon and one life")
    chk.growth(f"{p}.om_change", om_change, span, "O&M by vintage over the horizon and one life")
    if om is not None and om.kind == "growth" and max_age is not None:
        chk.growth(f"{p}.om.growth", om.growth, max(max_age - 1, 1), "O&M from age 1 to max_age")


def _asset_types(chk: Checker, doc: Mapping) -> list[AssetType]:
    out: list[AssetType] = []
    found = blocks(chk, doc, "asset_type")
    if not found and "asset_type" not in doc:
        chk.bad("asset_type", "missing: at least one [[asset_type]] block is required")
    seen: dict[str, int] = {}
    for j, b in enumerate(found, start=1):
        p = f"asset_type[{j}]"
        chk.keys(b, TYPE_KEYS, p)
        tid = chk.string(b, "id", p)
        if tid is not None:
            if tid in seen:
                chk.bad(f"{p}.id", f"= {tid!r}: duplicate id (also asset_type[{seen[tid]}]); ids must be unique")
            seen.setdefault(tid, j)
        cls = chk.string(b, "class", p)
        price = chk.number(b, "price", p, lo=0, hi=MONEY_MAX, lo_open=True, what="money > 0")
        price_change = chk.number(b, "price_change", p, required=False, default=0.0, lo=RATE_MIN, hi=RATE_MAX,
                                  lo_open=True, hi_open=True, what="a rate per year > -1")
        om_change = chk.number(b, "om_change", p, required=False, default=0.0, lo=RATE_MIN, hi=RATE_MAX,
                               lo_open=True, hi_open=True, what="a rate per year > -1")
        buy_from = _year(chk, b, "buy_from", p)
        buy_until = _year(chk, b, "buy_until", p)
        if buy_from is not None and buy_until is not None and buy_from > buy_until:
            chk.bad(f"{p}.buy_until", f"= {buy_until}: must not be before buy_from = {buy_from}")
        om = _om_curve(chk, b["om"], f"{p}.om") if "om" in b else None
        if "om" not in b:
            chk.bad(f"{p}.om", "missing: { first, gradient }, { first, growth } or a list by age 1 … max_age")
        if "max_age" in b:
            max_age = chk.integer(b, "max_age", p, lo=1, hi=100, what="a whole number of years")
        elif om is not None and om.kind == "table":
            max_age = len(om.table)
        else:
            max_age = None
            if om is not None:
                chk.bad(f"{p}.max_age", "missing: required unless om is a list (its length is then the max age)")
        if om is not None and max_age is not None:
            if om.kind == "table" and len(om.table) < max_age:
                chk.bad(f"{p}.om", f"has {len(om.table)} figures: an O&M list needs one per age 1 … max_age = {max_age}")
            if om.kind == "gradient" and om.first + om.gradient * (max_age - 1) < 0:
                chk.bad(f"{p}.om.gradient", f"= {om.gradient:g}: O&M would fall below zero before age max_age = {max_age}")
        _growth_checks(chk, doc, p, price_change, om_change, om, max_age)
        if "salvage" not in b:
            chk.bad(f"{p}.salvage", "missing: { retain = r }, { life = n, floor = f } or a list by age 1 … n")
            sv = None
        else:
            sv = _value_curve(chk, b["salvage"], f"{p}.salvage")
        dep = _depreciation(chk, b, p)
        min_age = chk.integer(b, "min_age", p, required=False, default=0, lo=0, hi=100,
                              what="a whole number of years ≥ 0")
        if min_age is not None and max_age is not None and min_age > max_age:
            chk.bad(f"{p}.min_age", f"= {min_age}: must not exceed max_age = {max_age} (a unit at max_age must be "
                    "replaced, so a minimum life past it could never be kept); allowed: 0 … max_age")
            min_age = None
        em = _emissions(chk, b, p)
        extra = type_usage_fields(chk, b, p, max_age)
        if None in (tid, cls, price, price_change, om_change, om, sv, max_age, min_age, em, extra):
            continue
        out.append(AssetType(id=tid, class_=cls, price=price, price_change=price_change, om_change=om_change,
                             buy_from=buy_from, buy_until=buy_until, max_age=max_age, om=om, salvage=sv,
                             min_age=min_age, emissions=em, depreciation=dep, **extra))
    return out
