"""Usage and overhaul fields: ``usage_reference``/``usage_max``/``[asset_type.overhaul]`` and a unit's ``usage``.

Their meaning and the rules that use them are in docs/case-format.md and
docs/conventions.md ("Usage", "Overhaul").
"""

from __future__ import annotations

import math
from typing import Any, Mapping

from ..model import AssetType, Overhaul
from .keys import OVERHAUL_KEYS
from .problems import Checker


def type_usage_fields(chk: Checker, b: Mapping, p: str, max_age: int | None) -> dict | None:
    """The usage and overhaul fields of one ``[[asset_type]]`` block as AssetType keyword arguments.

    None when any of them is wrong (the problems are on ``chk``).
    """
    ref = chk.number(b, "usage_reference", p, required=False, default=None, lo=0, lo_open=True,
                     what="a yearly usage > 0 (km, hours, … per year)")
    umax = chk.number(b, "usage_max", p, required=False, default=None, lo=0, lo_open=True,
                      what="a lifetime usage > 0 (km, hours, …)")
    ok = not (("usage_reference" in b and ref is None) or ("usage_max" in b and umax is None))
    if umax is not None and ref is None and "usage_reference" not in b:
        chk.bad(f"{p}.usage_max", f"= {umax!r}: needs usage_reference (the yearly usage the curves are given for)")
        ok = False
    ov = None
    if "overhaul" in b:
        ov = _overhaul(chk, b["overhaul"], f"{p}.overhaul", max_age)
        ok = ok and ov is not None
    if not ok:
        return None
    return {"usage_reference": ref, "usage_max": umax, "overhaul": ov}


def _overhaul(chk: Checker, v: Any, path: str, max_age: int | None) -> Overhaul | None:
    t = chk.table(v, path)
    if t is None:
        return None
    chk.keys(t, OVERHAUL_KEYS, path)
    cost = chk.number(t, "cost", path, lo=0, what="money ≥ 0")
    ages = t.get("ages")
    lo = hi = None
    if ages is None:
        chk.bad(f"{path}.ages", "missing: [first, last] completed ages at which the overhaul may be done")
    elif (not isinstance(ages, list) or len(ages) != 2
          or not all(isinstance(a, int) and not isinstance(a, bool) for a in ages)):
        chk.bad(f"{path}.ages", f"= {ages!r}: must be [first, last], two whole numbers of years ≥ 1")
    else:
        lo, hi = ages
        top = (max_age - 1) if max_age is not None else None
        if lo < 1 or hi < lo or (top is not None and hi > top):
            chk.bad(f"{path}.ages", f"= {ages!r}: must be [first, last] with 1 ≤ first ≤ last ≤ max_age − 1"
                    + (f" = {top}" if top is not None else "") + " (an overhaul is done before the max age)")
            lo = hi = None
    after = chk.integer(t, "om_age_after", path, required=False, default=0, lo=0, hi=100,
                        what="a whole number of years ≥ 0")
    adds = chk.integer(t, "adds_years", path, required=False, default=0, lo=0, hi=100,
                       what="a whole number of years ≥ 0")
    if None in (cost, lo, hi, after, adds):
        return None
    return Overhaul(cost=cost, age_from=lo, age_to=hi, om_age_after=after, adds_years=adds)


def usage_max_age(t: AssetType, usage: float | None) -> int:
    """Max age of a unit of ``t`` in a job of yearly ``usage``: min(max_age, floor(usage_max/usage)) [years]."""
    if usage is None or t.usage_max is None:
        return t.max_age
    return int(min(t.max_age, math.floor(t.usage_max / usage + 1e-9)))


def unit_usage(chk: Checker, row: Mapping, p: str, t: AssetType | None, age: int | None) -> tuple[bool, float | None]:
    """A unit's ``usage`` (None when absent) checked against its type: (ok, usage)."""
    if "usage" not in row or row["usage"] in ("", None):
        return True, None
    u = chk.number(row, "usage", p, lo=0, lo_open=True, what="a yearly usage > 0 (km, hours, … per year)")
    if u is None:
        return False, None
    if t is None:
        return True, u
    if t.usage_reference is None:
        chk.bad(f"{p}.usage", f"= {u!r}: type {t.id!r} has no usage_reference, so usage cannot be used; "
                "give usage_reference on the type or drop the usage")
        return False, None
    m = usage_max_age(t, u)
    if m < 1:
        chk.bad(f"{p}.usage", f"= {u!r}: usage_max = {t.usage_max:g} of type {t.id!r} is used up in less than a year; "
                f"usage must be ≤ {t.usage_max:g}")
        return False, None
    if age is not None and age > m:
        chk.bad(f"{p}.age", f"= {age}: exceeds the usage-limited max age {m} of type {t.id!r} at usage {u:g} "
                f"(min(max_age = {t.max_age}, floor(usage_max / usage))); ages run 0 … {m}")
        return False, None
    return True, u
