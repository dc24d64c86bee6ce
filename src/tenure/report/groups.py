"""Summaries of a plan by a kept inventory column (``--by department`` or ``[fleet] group_by``).

A pure function of the :class:`~tenure.plan.Plan`: each unit schedule carries its inventory row's
kept columns, so the plan's present cost, capital by year and replacements split exactly by the
values of one column.  The group totals add up to the plan's: present cost (present worth at time
0), capital of each year and replacements (undiscounted, constant start-year currency;
docs/conventions.md).  Units whose row leaves the column empty form the group ``""`` (shown as
"(blank)").
"""

from __future__ import annotations

from dataclasses import dataclass

from ..plan import Plan

BLANK = "(blank)"


@dataclass(frozen=True)
class GroupSummary:
    """Plan totals split by the values of ``column`` (one result per plan and column).

    Attributes
    ----------
    column : str
    groups : tuple of str
        Values in order of first appearance in the inventory.
    years : tuple of int
    units, replacements : dict
        Group → number of units at the start; group → units bought over the horizon.
    present_cost : dict
        Group → present cost of its units' schedules [money, time 0].
    capital : dict
        Group → tuple of capital per planning year [money, undiscounted].
    """

    column: str
    groups: tuple[str, ...]
    years: tuple[int, ...]
    units: dict
    replacements: dict
    present_cost: dict
    capital: dict


def group_summary(plan: Plan, column: str) -> GroupSummary:
    """Present cost, capital by year and replacements of ``plan`` by the values of the kept ``column``."""
    years = tuple(y.year for y in plan.years)
    index = {y: k for k, y in enumerate(years)}
    order: dict[str, None] = {}
    units: dict[str, int] = {}
    reps: dict[str, int] = {}
    pc: dict[str, float] = {}
    cap: dict[str, list[float]] = {}
    for u in plan.units:
        g = dict(u.attributes).get(column, "")
        order.setdefault(g, None)
        units[g] = units.get(g, 0) + 1
        reps[g] = reps.get(g, 0) + len(u.events)
        pc[g] = pc.get(g, 0.0) + u.present_cost
        row = cap.setdefault(g, [0.0] * len(years))
        for ev in u.events:
            row[index[ev.year]] += ev.price
    return GroupSummary(column=column, groups=tuple(order), years=years, units=units, replacements=reps,
                        present_cost=pc, capital={g: tuple(v) for g, v in cap.items()})


def label(group: str) -> str:
    return group if group else BLANK


def group_sheet(ws, gs: GroupSummary) -> None:
    """A plan.xlsx sheet: one row per group (units, replacements, present cost, capital per year), a total row."""
    from ..textutil import cent as _r
    from .xlsx import MONEY, TOTAL_FONT, _Sheet

    sh = _Sheet(ws)
    sh.head([gs.column, "units", "replacements", "present cost"] + [f"capital {y}" for y in gs.years])
    fmt = {j: MONEY for j in range(3, 4 + len(gs.years))}
    for g in gs.groups:
        sh.put([label(g), gs.units[g], gs.replacements[g], _r(gs.present_cost[g])] + [_r(x) for x in gs.capital[g]],
               fmt=fmt)
    sh.put(["total", sum(gs.units.values()), sum(gs.replacements.values()), _r(sum(gs.present_cost.values()))]
           + [_r(sum(gs.capital[g][k] for g in gs.groups)) for k in range(len(gs.years))], fmt=fmt, font=TOTAL_FONT)
    sh.finish(freeze="B2")
