"""A cheap proof that the caps cannot be met: forced replacements that no cap can pay for.

A unit of type t and age a at the start must be replaced no later than year
``k_f = max(0, max_age_t − a)`` (docs/conventions.md: at max_age it must be replaced).  Whatever
the plan, that replacement costs at least ``c_u = min over years j ≤ k_f and types buyable in j``
of the purchase price (gross basis) or of the price less the unit's market value at its age then
(net basis, checked only when no trade can free money: every year's cheapest purchase is
worth at least any unit held).  So for every
year k the spend of years 0…k is at least the sum of ``c_u`` over the units forced by k, and when
that exceeds the sum of the caps of years 0…k no plan exists.  The same count against
``(k+1)·max_buys_per_year`` checks a class's purchase limit.  Counting arguments of this kind are
common practice for capital rationing (a necessary condition, checked in O(units·horizon)).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..model import Case
from ..uncapped import build_graphs, starting_states


@dataclass(frozen=True)
class ForcedOverCap:
    """Years 0…``year`` cannot pay for the replacements forced in them.

    ``year`` calendar year; ``needed`` least spend of the forced replacements [money,
    undiscounted]; ``available`` the caps of those years summed [money] (for a purchase limit:
    units, with ``class_`` set); ``units`` the names of the forced units (with the year each must go)."""

    year: int
    needed: float
    available: float
    units: tuple[str, ...]
    class_: str | None = None
    start_year: int | None = None

    def describe(self) -> str:
        names = ", ".join(self.units[:12]) + (" …" if len(self.units) > 12 else "")
        if self.class_ is not None:
            return (f"class {self.class_}: {len(self.units)} units reach max age by {self.year} but its purchase "
                    f"limit allows {self.available:,.0f} purchases up to then: {names}")
        when = (f"in {self.year}" if self.year == self.start_year else f"from {self.start_year} to {self.year}")
        return (f"{when} the replacements forced by max age need at least {self.needed:,.0f} of capital against "
                f"{self.available:,.0f} of caps: {names}")


def forced_over_caps(case: Case, graphs=None) -> list[ForcedOverCap]:
    """Every year (the first one only for the caps, each class once for the limits) whose forced
    replacements cannot be paid; [] when the check finds nothing (which proves nothing)."""
    if case.budget is None and not case.limits:
        return []
    graphs = build_graphs(case) if graphs is None else graphs
    H, y0 = case.study.horizon, case.study.start_year
    net = case.budget is not None and case.budget.basis == "net"
    need = np.zeros(H)
    forced_by: list[list[str]] = [[] for _ in range(H)]
    out: list[ForcedOverCap] = []
    for cls, states in starting_states(case, graphs).items():
        g = graphs[cls]
        count = np.zeros(H)
        for (t, a), names in states.items():
            kf = max(0, int(g.max_age[t]) - a)
            if kf >= H:
                continue
            need[kf] += len(names) * _least_cost(g, t, a, kf, net)
            forced_by[kf].extend(f"{n} ({y0 + kf})" for n in names)
            count[kf] += len(names)
        lim = case.limit_for(cls)
        if lim is not None:
            cum = np.cumsum(count)
            over = np.flatnonzero(cum > lim * np.arange(1, H + 1))
            if len(over):
                k = int(over[0])
                names = tuple(n for j in range(k + 1) for (t, a), ns in states.items()
                              if max(0, int(g.max_age[t]) - a) == j for n in ns)
                out.append(ForcedOverCap(y0 + k, float(cum[k]), float(lim * (k + 1)), names, cls, y0))
    if case.budget is not None and (not net or _trades_never_free_money(graphs)):
        caps = np.array([case.budget.cap_for(y0 + k) if case.budget.cap_for(y0 + k) is not None else math.inf
                         for k in range(H)], dtype=float)
        over = np.flatnonzero(np.cumsum(need) > np.cumsum(caps) + 1e-6)
        if len(over):
            k = int(over[0])
            units = tuple(n for j in range(k + 1) for n in forced_by[j])
            out.insert(0, ForcedOverCap(y0 + k, float(np.cumsum(need)[k]), float(np.cumsum(caps)[k]), units,
                                        start_year=y0))
    return out


def _trades_never_free_money(graphs) -> bool:
    """On the net basis a trade of a dear unit for a cheap one frees money for other purchases;
    the bound holds only when every year's cheapest purchase is worth at least any unit held."""
    for g in graphs.values():
        for j in range(g.horizon):
            prices = g.price[j][g.buyable[j]]
            if len(prices) and float(prices.min()) < float(np.nanmax(np.where(g.valid, g.value[j], -np.inf))):
                return False
    return True


def _least_cost(g, t: int, a: int, kf: int, net: bool) -> float:
    """Least spend of replacing a unit of type t, age a at the start, in some year j ≤ kf [money]."""
    best = math.inf
    for j in range(kf + 1):
        prices = g.price[j][g.buyable[j]]
        if not len(prices):
            continue
        c = float(prices.min())
        if net:
            c = max(0.0, c - float(g.value[j, t, min(a + j, g.value.shape[2] - 1)]))
        best = min(best, c)
    return 0.0 if not math.isfinite(best) else best
