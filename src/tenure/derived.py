"""Derived state rows of a class's state graph: usage levels ("jobs") and overhauled units.

A class whose types give ``usage_reference``/``usage_max`` or an
``[asset_type.overhaul]``, or whose units give ``usage``, gets one row of the
state graph's type dimension per

- (job, type): a unit of that type doing a job of yearly usage ``u`` (the
  *job* is set by the unit; a replacement keeps the job's usage, so buying
  type t' for a usage-u job enters row (u, t')); and
- (job, type, overhauled at a_o): the same unit after an overhaul done when it
  had completed ``a_o`` years (not buyable; reached only by an overhaul arc).

Each row has its own O&M table, market-value table and max age, so the keep
and replace arcs, the recursion, the fleet program and the networkx view read
it like any type.  The rules (docs/conventions.md, "Usage" and "Overhaul";
common practice):

- usage ratio ``ρ = u / usage_reference`` (1 for a type without a reference or
  a unit without usage);
- O&M of service year a: ``om(a)·ρ``, after an overhaul at a_o:
  ``om(om_age_after + a − a_o)·ρ`` (vintage ``om_change`` as usual);
- market value at age a: the value curve at equivalent age ``a·ρ`` (a list is
  interpolated linearly, held at its last figure past it) times the current
  price; a rebuilt unit sells like any unit of its true age (conservative: an
  overhaul adds no resale value);
- max age: ``min(max_age, floor(usage_max/u))``, plus ``adds_years`` after an
  overhaul;
- overhaul arc (k, r, a) → (k+1, r_o(a_o = a), a+1): the overhaul cost at k
  (capital, constant start-year money) plus the O&M of the year after it at k+1.

With ``[study] tax_rate`` the arcs are after tax (``tenure.tax.arc_cash``,
docs/conventions.md, "Income tax"): depreciation by years in service, not by
usage, and the overhaul capitalised and depreciated by the type's method from
the year it is done.

Usage levels are rounded to the nearest point of a grid of 1 % of the unit's type's
``usage_reference`` (down when rounding up would shorten the unit's usage-limited max age); when a class has more than :data:`MAX_LEVELS` distinct
levels the grid is widened (2 %, 5 %, 10 %, 20 %, 50 %) until it has at most that many.
"""

from __future__ import annotations

import math

import numpy as np

from . import curves, life, money, tax
from .model import AssetType, Case

#: most distinct usage levels (jobs) per class the graph and the fleet program carry
MAX_LEVELS = 8
#: usage grids tried in turn, as fractions of usage_reference
GRIDS = (0.01, 0.02, 0.05, 0.10, 0.20, 0.50)


def has_derived(case: Case, class_: str, usages=None) -> bool:
    """True when the class needs derived rows (usage on a type or unit, or an overhaul option)."""
    types = case.types_of(class_)
    if usages is not None or any(t.overhaul is not None for t in types):
        return True
    ids = {t.id for t in types}
    return any(u.usage is not None for u in case.units if u.type in ids)


def _ref_of(case: Case, type_id: str) -> float | None:
    return case.type(type_id).usage_reference


def _round(u: float, step: float) -> float:
    return float(round(u / step) * step)


def usage_grid(case: Case, class_: str) -> float | None:
    """The grid fraction used for the class's usage levels (None when no unit gives usage)."""
    ids = {t.id for t in case.types_of(class_)}
    raw = [(u.usage, _ref_of(case, u.type)) for u in case.units if u.type in ids and u.usage is not None]
    if not raw:
        return None
    for g in GRIDS:
        if len({_round(u, g * ref) for u, ref in raw}) <= MAX_LEVELS:
            return g
    return GRIDS[-1]


def job_usage(case: Case, unit, grid: float | None) -> float | None:
    """The rounded usage level of a unit's job (None: the reference job)."""
    if unit.usage is None or grid is None:
        return None
    step = grid * _ref_of(case, unit.type)
    u = _round(unit.usage, step)
    t = case.type(unit.type)
    if row_max_age(t, u, False) < row_max_age(t, unit.usage, False):
        u = float(math.floor(unit.usage / step) * step)  # never shorten the unit's usage-limited life
    return u


def class_jobs(case: Case, class_: str) -> tuple:
    """Usage levels of the class's jobs in order (None, the reference job, first)."""
    grid = usage_grid(case, class_)
    ids = {t.id for t in case.types_of(class_)}
    levels = {job_usage(case, u, grid) for u in case.units if u.type in ids}
    return tuple(sorted(levels, key=lambda x: (x is not None, x or 0.0))) or (None,)


def ratio(t: AssetType, usage: float | None) -> float:
    """Usage ratio ρ = usage/usage_reference (1 without either) [-]."""
    if usage is None or t.usage_reference is None:
        return 1.0
    return usage / t.usage_reference


def row_max_age(t: AssetType, usage: float | None, overhauled: bool) -> int:
    """Max age of a row: min(max_age, floor(usage_max/usage)) (+ adds_years after an overhaul) [years]."""
    m = t.max_age
    if usage is not None and t.usage_max is not None and t.usage_reference is not None:
        m = min(m, int(math.floor(t.usage_max / usage + 1e-9)))
    return m + (t.overhaul.adds_years if overhauled and t.overhaul is not None else 0)


def value_at(t: AssetType, age, year, start_year: int, rho: float):
    """Market value at equivalent age ``age·ρ`` sold in ``year`` [money] (docs/conventions.md, "Usage").

    ρ = 1 is exactly ``curves.market_value``; otherwise a list-form curve is
    interpolated linearly between ages and held at its last figure.
    """
    if rho == 1.0:
        return np.asarray(curves.market_value(t, age, year, start_year))
    eq = np.asarray(age, dtype=float) * rho
    c = t.salvage
    if c.kind == "table":
        tab = np.concatenate([[t.price], np.asarray(c.table, dtype=float)]) / t.price
        frac = np.interp(eq, np.arange(len(tab)), tab)
    else:
        frac = np.asarray(curves.value_fraction(c, eq, t.price))
    return frac * np.asarray(curves.price(t, year, start_year))


def rows_of(case: Case, class_: str, usages=None) -> list[tuple]:
    """The rows ``(job, usage, type, overhauled_at or -1)`` in order: per job its types, then their overhauled rows."""
    jobs = tuple(usages) if usages is not None else class_jobs(case, class_)
    types = case.types_of(class_)
    rows = []
    for j, u in enumerate(jobs):
        rows += [(j, u, t, -1) for t in types]
        for t in types:
            if t.overhaul is not None:
                rows += [(j, u, t, a) for a in t.overhaul.ages if a < row_max_age(t, u, False)]
    return rows


def _row_tables(t: AssetType, u, ao: int, H: int, A1: int, y0: int):
    """om_keep (H, A1), value (H+1, A1) and max age of one row (keep arcs not yet masked)."""
    k, kk, ages = np.arange(H), np.arange(H + 1), np.arange(A1)
    rho = ratio(t, u)
    vint = (y0 + k)[:, None] - ages[None, :]
    served = ages[None, :] + 1 if ao < 0 else t.overhaul.om_age_after + 1 + ages[None, :] - ao
    om_keep = np.asarray(curves.om(t, np.maximum(served, 1), vint, y0)) * rho * np.ones((H, A1))
    if ao >= 0:
        om_keep = np.where(ages[None, :] > ao, om_keep, np.inf)
    value = value_at(t, ages[None, :], (y0 + kk)[:, None], y0, rho) * np.ones((H + 1, A1))
    return om_keep, value, row_max_age(t, u, ao >= 0)


def build_derived_graph(case: Case, class_: str, usages=None):
    """The state graph of ``class_`` with job and overhaul rows (see the module docstring).

    ``usages`` (a sequence of yearly usages, None for the reference) replaces the
    inventory's jobs (``life``/``policy --usage``).  Returns a ``chain.StageGraph``.
    """
    from .chain import TIE, StageGraph

    s = case.study
    H, y0, i = s.horizon, s.start_year, s.discount_rate
    rows = rows_of(case, class_, usages)
    jobs = tuple(usages) if usages is not None else class_jobs(case, class_)
    T = len(rows)
    max_age = np.array([row_max_age(t, u, ao >= 0) for _, u, t, ao in rows])
    ids = {t.id for _, _, t, _ in rows}
    # an overdue inventory unit (age past max_age) is a starting state that can only be sold at time 0
    A1 = max([int(max_age.max())] + [u.age for u in case.units if u.type in ids]) + 1
    ages = np.arange(A1)
    years = y0 + np.arange(H)
    om_keep = np.empty((H, T, A1))
    value = np.empty((H + 1, T, A1))
    for r, (_, u, t, ao) in enumerate(rows):
        om_keep[:, r], value[:, r], _ = _row_tables(t, u, ao, H, A1, y0)
    valid = ages[None, :] <= max_age[:, None]
    keep_ok = valid & (ages[None, :] < max_age[:, None])
    om_keep = np.where(keep_ok[None], om_keep, np.inf)
    value = np.where(valid[None] | (np.arange(H + 1) == 0)[:, None, None], value, 0.0)
    buyable = np.array([[ao < 0 and t.buyable(int(y)) for _, _, t, ao in rows] for y in years], dtype=bool)
    buyable = buyable.reshape(H, T)
    price = np.stack([np.asarray(curves.price(t, years, y0)) * np.ones(H) for _, _, t, _ in rows], axis=1)
    om_new = np.stack([np.asarray(curves.om(t, 1, years, y0)) * ratio(t, u) * np.ones(H) for _, u, t, _ in rows],
                      axis=1)
    ov_to, ov_cost, om_ov = _overhaul_tables(rows, H, A1, y0, max_age)
    # tonnes of a row follow its base type's vintage, scaled by the job's usage like O&M (common practice)
    vint = years[:, None] - ages[None, :]
    tonnes_keep = np.stack([np.asarray(curves.tonnes(t, vint, y0)) * ratio(t, u) * np.ones((H, A1))
                            for _, u, t, _ in rows], axis=1)
    tonnes_keep = np.where(keep_ok[None], tonnes_keep, 0.0)
    tonnes_new = np.stack([np.asarray(curves.tonnes(t, years, y0)) * ratio(t, u) * np.ones(H) for _, u, t, _ in rows],
                          axis=1)
    cp = s.carbon_price
    sellable = ages[None, :] >= np.array([t.min_age for _, _, t, _ in rows])[:, None]
    v = np.asarray(money.pf(i, np.arange(H + 1)))
    # priced tonnes are paid at the end of each service year, like O&M (docs/conventions.md); with a tax
    # rate they are deducted like O&M, and the overhaul is capital depreciated from the year it is done
    keep_cash, new_cash, sale_cash = om_keep + cp * tonnes_keep, om_new + cp * tonnes_new, value
    ov_cash, book = om_ov + cp * np.where(np.isfinite(tonnes_keep), tonnes_keep, 0.0), None
    if s.tax_rate is not None:
        keep_cash, new_cash, sale_cash, book, ov_cash = tax.arc_cash(
            case, [t for _, _, t, _ in rows], keep_cash, new_cash, value, valid,
            overhauled_at=[ao for _, _, _, ao in rows], om_overhaul=ov_cash)
    keep_pw = keep_cash * v[1:, None, None]
    buy_pw = np.where(buyable, price * v[:H, None] + new_cash * v[1:, None], np.inf)
    sale_pw = sale_cash * v[:, None, None]
    ov_pw = np.where(ov_to[None] >= 0, ov_cost * v[:H, None, None] + ov_cash * v[1:, None, None], np.inf)
    chain_cost = chain_type = None
    if s.end_value == "salvage":
        end_pw = -sale_pw[H]
    else:
        end_pw, chain_cost, chain_type = _continuing_end(case, class_, rows, sale_cash, v, TIE)
    end_pw = np.where(valid, end_pw, np.inf)
    types = case.types_of(class_)
    labels = tuple(_label(u, t, ao) for _, u, t, ao in rows)
    return StageGraph(class_=class_, types=tuple(t.id for _, _, t, _ in rows), max_age=max_age, start_year=y0,
                      horizon=H, rate=i, buyable=buyable, price=price, om_new=om_new, om_keep=om_keep, value=value,
                      keep_pw=keep_pw, buy_pw=buy_pw, sale_pw=sale_pw, end_pw=end_pw, valid=valid,
                      end_value=s.end_value, chain_cost=chain_cost, chain_type=chain_type,
                      job=np.array([j for j, _, _, _ in rows]), job_usage=jobs,
                      base=np.array([types.index(t) for _, _, t, _ in rows]),
                      overhauled_at=np.array([ao for _, _, _, ao in rows]), overhaul_to=ov_to,
                      overhaul_cost=ov_cost, om_overhaul=om_ov, overhaul_pw=ov_pw, labels=labels, sellable=sellable,
                      tonnes_keep=tonnes_keep, tonnes_new=tonnes_new, carbon_price=cp, tax_rate=s.tax_rate,
                      book=book)


def _label(u, t: AssetType, ao: int) -> str:
    name = t.id if u is None else f"{t.id}@{u:g}"
    return name if ao < 0 else f"{name}+oh{ao}"


def _overhaul_tables(rows, H: int, A1: int, y0: int, max_age: np.ndarray):
    """Target row (T, A1), overhaul cost (H, T, A1) [money] and the O&M of the year after it (H, T, A1)."""
    T = len(rows)
    to = np.full((T, A1), -1, dtype=np.int64)
    cost = np.zeros((H, T, A1))
    om_ov = np.zeros((H, T, A1))
    where = {(j, t.id, ao): r for r, (j, _, t, ao) in enumerate(rows) if ao >= 0}
    k = np.arange(H)
    for r, (j, u, t, ao) in enumerate(rows):
        if ao >= 0 or t.overhaul is None:
            continue
        for a in t.overhaul.ages:
            r2 = where.get((j, t.id, a))
            if r2 is None or a >= max_age[r] or a + 1 > max_age[r2]:
                continue
            to[r, a] = r2
            cost[:, r, a] = t.overhaul.cost
            om_ov[:, r, a] = np.asarray(curves.om(t, t.overhaul.om_age_after + 1, y0 + k - a, y0)) * ratio(t, u)
    return to, cost, om_ov


def _continuing_end(case: Case, class_: str, rows, sale: np.ndarray, v: np.ndarray, tie: float):
    """End costs under "continuing": reference rows as in ``chain``; other rows are sold at the end
    (``sale``: the proceeds, after tax when the case is) and the endless best chain starts (an upper
    bound on keeping them a while longer)."""
    s = case.study
    y0, i, H = s.start_year, s.discount_rate, s.horizon
    y_end = y0 + H
    best = None
    for t in case.types_of(class_):
        if t.buyable(y_end - 1):
            c, _ = life.capitalised_chain_cost(t, i, y0, y_end, tax_rate=s.tax_rate, carbon_price=s.carbon_price)
            if best is None or c < best[0] - tie * abs(c):
                best = (c, t.id)
    chain_cost, chain_type = best
    T, A1 = len(rows), sale.shape[2]
    end = np.full((T, A1), np.inf)
    for r, (_, u, t, ao) in enumerate(rows):
        if ao < 0 and ratio(t, u) == 1.0 and row_max_age(t, u, False) == t.max_age:
            a = np.arange(t.max_age + 1)
            end[r, : t.max_age + 1] = life.continuing_costs(t, a, y_end - a, chain_cost, i, y0, y_end,
                                                            tax_rate=s.tax_rate, carbon_price=s.carbon_price) * v[H]
        else:
            end[r] = (chain_cost - sale[H, r]) * v[H]
    return end, chain_cost, chain_type
