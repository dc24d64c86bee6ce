"""What a plan holds in service each year, read back from its unit schedules: tonnes CO2e, class sizes
and transition targets.

A unit is *in service* in year k when it is held during that year, after that year's purchases and
sales (docs/conventions.md, "Rules"); the same count gives class sizes, target shares and tonnes.
These are pure functions of a :class:`~tenure.plan.Plan` and its case, computed from ``curves``
rather than from the solver's tables, so reports and tests can check a plan against its rules.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from . import curves
from .model import Case, Target
from .plan import Plan


def holdings(case: Case, plan: Plan) -> list[list[tuple[str, int] | None]]:
    """Per unit of ``plan.units``, per planning year: (type, vintage) in service, or None when not held."""
    s = case.study
    out = []
    for u in plan.units:
        by_year = {e.year: e for e in u.events}
        cur = None if u.start_age is None else (u.start_type, s.start_year - u.start_age)
        row = []
        for y in s.years:
            e = by_year.get(y)
            if e is not None:
                cur = (e.type, y) if e.type else None
            row.append(cur)
        out.append(row)
    return out


def tonnes_by_year(case: Case, plan: Plan) -> np.ndarray:
    """Fleet tonnes CO2e of each planning year [t], from the units in service.

    ``Σ_units first_T·(1+change_T)^(vintage − start_year)`` over the units in service in year k.
    """
    types = {t.id: t for t in case.types}
    out = np.zeros(case.study.horizon)
    for row in holdings(case, plan):
        for k, held in enumerate(row):
            if held is not None:
                out[k] += curves.tonnes(types[held[0]], held[1], case.study.start_year)
    return out


def in_service(case: Case, plan: Plan) -> dict[str, np.ndarray]:
    """Units in service by type id and planning year (int arrays of length horizon)."""
    out = {t.id: np.zeros(case.study.horizon, dtype=int) for t in case.types}
    for row in holdings(case, plan):
        for k, held in enumerate(row):
            if held is not None:
                out[held[0]][k] += 1
    return out


def bought(case: Case, plan: Plan) -> dict[str, np.ndarray]:
    """Units bought by type id and planning year (replacements, growth and orders alike)."""
    out = {t.id: np.zeros(case.study.horizon, dtype=int) for t in case.types}
    for u in plan.units:
        for e in u.events:
            if e.type:
                out[e.type][e.year - case.study.start_year] += 1
    return out


@dataclass(frozen=True)
class TargetStatus:
    """Whether a plan meets one transition target: ``met`` in every year from its ``from`` on,
    ``first_met`` the first year from which every later year meets it (None if never),
    ``first_short`` the first year from ``from`` on that falls short (None if none)."""

    target: Target
    met: bool
    first_met: int | None
    first_short: int | None


def target_status(case: Case, plan: Plan, target: Target, tol: float = 1e-9) -> TargetStatus:
    """Check ``target`` year by year on the plan's purchases and units in service."""
    s = case.study
    in_cls = {t.id for t in case.types if t.class_ in target.classes}
    counts = []
    if target.share_of_buys is not None:
        counts.append((bought(case, plan), target.share_of_buys))
    if target.share_in_service is not None:
        counts.append((in_service(case, plan), target.share_in_service))
    ok = np.ones(s.horizon, dtype=bool)
    for by_type, share in counts:
        good = sum(by_type[t] for t in target.types)
        every = sum(by_type[t] for t in in_cls)
        ok &= good >= share * every - tol
    years = np.array(list(s.years))
    short = [int(y) for y, o in zip(years, ok) if y >= target.from_ and not o]
    first_met = None
    for k in range(s.horizon - 1, -1, -1):
        if not ok[k]:
            break
        first_met = int(years[k])
    return TargetStatus(target=target, met=not short, first_met=first_met, first_short=short[0] if short else None)


def class_sizes(case: Case, plan: Plan) -> dict[str, np.ndarray]:
    """Units in service by class and planning year."""
    by_type = in_service(case, plan)
    out = {c: np.zeros(case.study.horizon, dtype=int) for c in case.classes}
    for t in case.types:
        out[t.class_] += by_type[t.id]
    return out


def broken_rules(case: Case, plan: Plan, required_sizes: dict[str, np.ndarray] | None = None) -> list[str]:
    """The coupling rules a plan breaks, one line each (empty when it keeps them all).

    ``required_sizes``: class → units that must be in service each year (from ``[[demand]]`` and
    orders); the orders' purchases and disposals, the targets and the emission caps are checked
    on the plan's schedule.
    """
    s = case.study
    out = []
    sizes = class_sizes(case, plan)
    for cls, need in (required_sizes or {}).items():
        bad = [y for y, n, m in zip(s.years, sizes[cls], need) if n != m]
        if bad:
            out.append(f"class {cls}: {sizes[cls][bad[0] - s.start_year]} units in service in {bad[0]}, "
                       f"the rules need {need[bad[0] - s.start_year]}")
    buys = bought(case, plan)
    leave: dict[str, int] = {}
    for u in plan.units:
        for e in u.events:
            if e.from_type:
                leave.setdefault(u.unit, e.year)  # the unit itself leaves at its first sale
    for o in case.orders:
        ordered = sum(p.count for p in case.orders if p.type == o.type and p.year == o.year)
        if buys[o.type][o.year - s.start_year] < ordered:
            out.append(f"order of {o.count} {o.type} in {o.year}: only {buys[o.type][o.year - s.start_year]} bought")
        for nm in o.replaces:
            if leave.get(nm) != o.year:
                out.append(f"order of {o.type} in {o.year}: {nm} does not leave that year")
    for tg in case.targets:
        st = target_status(case, plan, tg)
        if not st.met:
            out.append(f"target {tg.label}: not met in {st.first_short}")
    tonnes = tonnes_by_year(case, plan)
    for y, tn in zip(s.years, tonnes):
        cap = case.emission_cap_for(y)
        if cap is not None and tn > cap * (1 + 1e-9) + 1e-6:
            out.append(f"emission cap {cap:g} t in {y}: the plan emits {tn:.1f} t")
            break
    return out
