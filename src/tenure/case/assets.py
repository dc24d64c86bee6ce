"""The ``[study]`` table and the ``[[asset_type]]`` blocks with their O&M and market-value curves."""

from __future__ import annotations

from typing import Any, Mapping

from ..model import END_VALUES, AssetType, OMCurve, Study, ValueCurve
from .keys import STUDY_KEYS, TYPE_KEYS
from .problems import Checker, blocks
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
    rate = chk.number(s, "discount_rate", "study", lo=-1, lo_open=True, what="a rate per year")
    end_value = chk.choice(s, "end_value", "study", END_VALUES, "salvage")
    if end_value == "continuing" and rate is not None and rate <= 0:
        chk.bad("study.discount_rate", f"= {rate!r}: end_value = 'continuing' needs a discount rate > 0 "
                "(a capitalised cost EAC/i is infinite at a zero rate); use end_value = 'salvage' or a positive rate")
    if None in (start, horizon, rate):
        return None
    return Study(title=title, start_year=start, horizon=horizon, discount_rate=rate, end_value=end_value)


def _om_curve(chk: Checker, v: Any, path: str) -> OMCurve | None:
    if isinstance(v, list):
        vals = [chk.number_value(x, f"{path}[{j + 1}]", lo=0, what="money ≥ 0") for j, x in enumerate(v)]
        if not vals:
            chk.bad(path, "= []: an O&M list needs one figure per age 1 … max_age")
            return None
        if any(x is None for x in vals):
            return None
        return OMCurve(kind="table", table=tuple(vals))
    t = chk.table(v, path)
    if t is None:
        return None
    chk.keys(t, ("first", "gradient", "growth"), path)
    first = chk.number(t, "first", path, lo=0, what="money ≥ 0")
    if "gradient" in t and "growth" in t:
        chk.bad(path, "give either 'gradient' (arithmetic) or 'growth' (geometric), not both")
        return None
    if "growth" in t:
        g = chk.number(t, "growth", path, lo=-1, lo_open=True, what="a rate per year")
        if first is None or g is None:
            return None
        return OMCurve(kind="growth", first=first, growth=g)
    grad = chk.number(t, "gradient", path, required=False, default=0.0, what="money per year")
    if first is None or grad is None:
        return None
    return OMCurve(kind="gradient", first=first, gradient=grad)


def _value_curve(chk: Checker, v: Any, path: str) -> ValueCurve | None:
    if isinstance(v, list):
        vals = [chk.number_value(x, f"{path}[{j + 1}]", lo=0, what="money ≥ 0") for j, x in enumerate(v)]
        if not vals:
            chk.bad(path, "= []: a market-value list needs at least the value at age 1")
            return None
        if any(x is None for x in vals):
            return None
        return ValueCurve(kind="table", table=tuple(vals))
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
        life = chk.number(t, "life", path, lo=0, lo_open=True, what="a number of years")
        floor = chk.number(t, "floor", path, required=False, default=0.0, lo=0, hi=1, hi_open=True,
                           what="a fraction of the price")
        if life is None or floor is None:
            return None
        return ValueCurve(kind="line", life=life, floor=floor)
    chk.bad(path, "must be { retain = r }, { life = n, floor = f } or a list of values by age 1 … n")
    return None


def _year(chk: Checker, t: Mapping, key: str, path: str) -> int | None:
    return chk.integer(t, key, path, required=False, default=None, lo=1900, hi=2300, what="a calendar year")


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
        price = chk.number(b, "price", p, lo=0, lo_open=True, what="money > 0")
        price_change = chk.number(b, "price_change", p, required=False, default=0.0, lo=-1, lo_open=True,
                                  what="a rate per year")
        om_change = chk.number(b, "om_change", p, required=False, default=0.0, lo=-1, lo_open=True,
                               what="a rate per year")
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
        if "salvage" not in b:
            chk.bad(f"{p}.salvage", "missing: { retain = r }, { life = n, floor = f } or a list by age 1 … n")
            sv = None
        else:
            sv = _value_curve(chk, b["salvage"], f"{p}.salvage")
        extra = type_usage_fields(chk, b, p, max_age)
        if None in (tid, cls, price, price_change, om_change, om, sv, max_age, extra):
            continue
        out.append(AssetType(id=tid, class_=cls, price=price, price_change=price_change, om_change=om_change,
                             buy_from=buy_from, buy_until=buy_until, max_age=max_age, om=om, salvage=sv, **extra))
    return out
