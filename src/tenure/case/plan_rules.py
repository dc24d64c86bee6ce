"""Rules that couple units: ``[[demand]]`` class sizes, ``[[order]]`` committed purchases and disposals,
``[[target]]`` transition targets and ``[[emission_cap]]`` yearly caps (docs/case-format.md)."""

from __future__ import annotations

import difflib
from typing import Any, Mapping

from ..model import AssetType, Demand, EmissionCap, Order, Study, Target, Unit
from .keys import DEMAND_KEYS, EMISSION_CAP_KEYS, ORDER_KEYS, TARGET_KEYS
from .problems import Checker, blocks


def _unknown(chk: Checker, where: str, value: str, known, what: str) -> None:
    near = difflib.get_close_matches(value, sorted(known), n=1, cutoff=0.5)
    hint = f"; did you mean '{near[0]}'?" if near else ""
    chk.bad(where, f"= {value!r}: unknown {what}{hint} (allowed: {', '.join(sorted(known))})")


def _horizon_year(chk: Checker, key: Any, where: str, study: Study | None) -> int | None:
    try:
        year = int(str(key))
    except ValueError:
        chk.bad(where, f"= {key!r}: keys must be calendar years")
        return None
    if study is not None and year not in study.years:
        chk.bad(where, f"year {year} is outside the horizon {study.start_year} … {study.start_year + study.horizon - 1}")
        return None
    return year


def _held_classes(types: list[AssetType], units: list[Unit]) -> set[str]:
    by_id = {t.id: t for t in types}
    return {by_id[u.type].class_ for u in units if u.type in by_id}


def _demands(chk: Checker, doc: Mapping, study: Study | None, types: list[AssetType], units: list[Unit]) -> list[Demand]:
    out: list[Demand] = []
    classes = {t.class_ for t in types}
    held = _held_classes(types, units)
    seen: set[str] = set()
    for j, b in enumerate(blocks(chk, doc, "demand"), start=1):
        p = f"demand[{j}]"
        chk.keys(b, DEMAND_KEYS, p)
        cls = chk.string(b, "class", p)
        if cls is not None:
            if cls not in classes:
                _unknown(chk, f"{p}.class", cls, classes, "class")
                cls = None
            elif cls not in held:
                chk.bad(f"{p}.class", f"= {cls!r}: the class holds no units at the start; a class size can only "
                        "change for a class of the inventory (add its units to the inventory)")
                cls = None
            elif cls in seen:
                chk.bad(f"{p}.class", f"= {cls!r}: a second [[demand]] for the same class; give all its years in one "
                        "count_by_year table")
                cls = None
            else:
                seen.add(cls)
        if "count_by_year" not in b:
            chk.bad(f"{p}.count_by_year", "missing: a table of calendar year → units in service, e.g. { 2030 = 20 }")
            continue
        t = chk.table(b["count_by_year"], f"{p}.count_by_year") or {}
        counts: dict[int, int] = {}
        for key, val in t.items():
            where = f"{p}.count_by_year.{key}"
            year = _horizon_year(chk, key, where, study)
            n = chk.integer_value(val, where, lo=0, what="a whole number of units ≥ 0")
            if year is not None and n is not None:
                counts[year] = n
        if not t and isinstance(b["count_by_year"], dict):
            chk.bad(f"{p}.count_by_year", "is empty: give at least one year, e.g. { 2030 = 20 }")
        if cls is not None and counts:
            out.append(Demand(class_=cls, count_by_year=dict(sorted(counts.items()))))
    return out


def _unit_ages(units: list[Unit]) -> dict[str, tuple[Unit, int]]:
    """Every name a `replaces` entry may use: each unit name, and a row id for rows of one unit."""
    names: dict[str, tuple[Unit, int]] = {}
    for u in units:
        for nm in u.names():
            names[nm] = (u, u.age)
        if u.count == 1:
            names[u.id] = (u, u.age)
    return names


def _orders(chk: Checker, doc: Mapping, study: Study | None, types: list[AssetType], units: list[Unit]) -> list[Order]:
    out: list[Order] = []
    by_id = {t.id: t for t in types}
    names = _unit_ages(units)
    held = _held_classes(types, units)
    replaced: dict[str, str] = {}
    for j, b in enumerate(blocks(chk, doc, "order"), start=1):
        p = f"order[{j}]"
        chk.keys(b, ORDER_KEYS, p)
        tid = chk.string(b, "type", p)
        count = chk.integer(b, "count", p, lo=1, what="a whole number of units ≥ 1")
        year = chk.integer(b, "year", p, lo=1900, hi=2300, what="a calendar year")
        if year is not None and study is not None and year not in study.years:
            chk.bad(f"{p}.year", f"= {year}: outside the horizon {study.start_year} … {study.start_year + study.horizon - 1}")
            year = None
        t = None
        if tid is not None:
            if tid not in by_id:
                _unknown(chk, f"{p}.type", tid, by_id, "asset type")
            else:
                t = by_id[tid]
                if t.class_ not in held:
                    chk.bad(f"{p}.type", f"= {tid!r}: its class {t.class_!r} holds no units at the start; orders "
                            "can only add to a class of the inventory")
                    t = None
                elif year is not None and not t.buyable(year):
                    chk.bad(f"{p}.year", f"= {year}: type {tid!r} cannot be bought then (buy_from = {t.buy_from}, "
                            f"buy_until = {t.buy_until})")
                    t = None
        reps = b.get("replaces", [])
        if not isinstance(reps, list) or not all(isinstance(r, str) for r in reps):
            chk.bad(f"{p}.replaces", f"= {reps!r}: must be a list of unit names, e.g. [\"BU-D16\"]")
            reps = []
        good: list[str] = []
        for r in reps:
            where = f"{p}.replaces"
            if r not in names:
                _unknown(chk, where, r, names, "unit (use a unit name, id#n for rows of several units)")
                continue
            u, age0 = names[r]
            nm = u.names()[0] if r == u.id else r
            ut = by_id.get(u.type)
            if nm in replaced:
                chk.bad(where, f"= {r!r}: already leaves in {replaced[nm]}; a unit can leave only once")
                continue
            if t is not None and ut is not None and ut.class_ != t.class_:
                chk.bad(where, f"= {r!r}: unit of class {ut.class_!r}, but the order is for class {t.class_!r}")
                continue
            if year is not None and study is not None and ut is not None:
                age = age0 + year - study.start_year
                if age > ut.max_age:
                    chk.bad(where, f"= {r!r}: it would be {age} in {year}, past max_age = {ut.max_age}; it must "
                            "leave by then (choose an earlier year)")
                    continue
                if age < ut.min_age:
                    chk.bad(where, f"= {r!r}: it would be {age} in {year}, below min_age = {ut.min_age} of type "
                            f"{ut.id!r}; allowed: a year when it is at least {ut.min_age}")
                    continue
            replaced[nm] = p
            good.append(nm)
        if t is not None and count is not None and year is not None and len(good) == len(reps):
            out.append(Order(type=t.id, count=count, year=year, replaces=tuple(good)))
    return out


def _targets(chk: Checker, doc: Mapping, types: list[AssetType]) -> list[Target]:
    out: list[Target] = []
    by_id = {t.id: t for t in types}
    classes = {t.class_ for t in types}
    for j, b in enumerate(blocks(chk, doc, "target"), start=1):
        p = f"target[{j}]"
        chk.keys(b, TARGET_KEYS, p)
        name = chk.string(b, "name", p, required=False, default=p) or p
        ids = _name_list(chk, b.get("types"), f"{p}.types", by_id, "asset-type ids", "asset type")
        buys = chk.number(b, "share_of_buys", p, required=False, default=None, lo=0, hi=1, what="a share")
        held = chk.number(b, "share_in_service", p, required=False, default=None, lo=0, hi=1, what="a share")
        if "share_of_buys" not in b and "share_in_service" not in b:
            chk.bad(p, "needs share_of_buys and/or share_in_service (shares in [0, 1])")
        start = chk.integer(b, "from", p, lo=1900, hi=2300, what="a calendar year")
        cls = b.get("classes")
        if cls is None and ids is not None:
            cls = list(dict.fromkeys(by_id[x].class_ for x in ids))
        elif cls is not None or "classes" in b:
            cls = _name_list(chk, cls, f"{p}.classes", classes, "classes", "class")
            if cls is not None and ids is not None:
                outside = [x for x in ids if by_id[x].class_ not in cls]
                if outside:
                    chk.bad(f"{p}.types", f"type(s) {', '.join(outside)} are not in the target's classes "
                            f"({', '.join(cls)})")
                    cls = None
        if ids is not None and cls is not None and start is not None and (buys is not None or held is not None):
            out.append(Target(types=tuple(ids), classes=tuple(cls), from_=start, share_of_buys=buys,
                              share_in_service=held, label=name))
    return out


def _name_list(chk: Checker, value, where: str, known, plural: str, what: str) -> list[str] | None:
    """A non-empty list of known names (types or classes), or None with every problem recorded."""
    if not isinstance(value, list) or not value or not all(isinstance(x, str) for x in value):
        chk.bad(where, f"= {value!r}: must be a non-empty list of {plural}")
        return None
    bad = [x for x in value if x not in known]
    for x in bad:
        _unknown(chk, where, x, known, what)
    return None if bad else value


def _emission_caps(chk: Checker, doc: Mapping) -> list[EmissionCap]:
    out: list[EmissionCap] = []
    for j, b in enumerate(blocks(chk, doc, "emission_cap"), start=1):
        p = f"emission_cap[{j}]"
        chk.keys(b, EMISSION_CAP_KEYS, p)
        start = chk.integer(b, "from", p, lo=1900, hi=2300, what="a calendar year")
        until = chk.integer(b, "until", p, required=False, default=None, lo=1900, hi=2300, what="a calendar year")
        tonnes = chk.number(b, "tonnes", p, lo=0, what="tonnes CO2e per year ≥ 0")
        if start is not None and until is not None and until < start:
            chk.bad(f"{p}.until", f"= {until}: must not be before from = {start}")
            continue
        if start is not None and tonnes is not None:
            out.append(EmissionCap(from_=start, tonnes=tonnes, until=until))
    return out
