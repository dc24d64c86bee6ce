"""Replacement chains: the stage-by-age state graph of a class and its backward recursion.

State graph
-----------
For one class, a state is ``(k, t, a)``: at time ``k`` (the start of planning
year ``k``) a unit of type ``t`` and age ``a`` is held; its vintage is
``start_year + k − a``.  Arcs leave every state of years ``k = 0 … H−1``:

- *keep* → ``(k+1, t, a+1)``, only while ``a < max_age(t)``; cost: the O&M of
  service year ``a+1`` of that vintage, paid at ``k+1``;
- *replace with t'* → ``(k+1, t', 1)`` for every type ``t'`` of the class
  buyable in year ``k``; cost: ``price(t', k) − value(t, a, k)`` at ``k`` plus
  the new unit's first-year O&M at ``k+1``.

- *overhaul* (classes with derived rows, ``tenure.derived``) → ``(k+1, overhaul_to[t, a], a+1)``;
  cost: the overhaul at ``k`` plus the next year's O&M at ``k+1``.  With usage levels
  (jobs) a replacement enters a buyable row of the unit's own job.

States at ``k = H`` carry the end value (docs/conventions.md).  Every cost is
discounted to time 0.  With ``[study] tax_rate`` the arc costs are after tax
(docs/conventions.md, "Income tax"; the pieces come from :mod:`tenure.tax`):
O&M less tax, less the depreciation shield of the service year, and each sale
less the tax on its market value over book value.
An inventory unit already past its max age (overdue) is a
state ``(0, t, a)`` with ``a > max_age(t)``: it has no keep arc, so it is sold at
time 0 at its market value.

:class:`StageGraph` holds the graph as arc-cost tables indexed by
``(k, t, a)``, which is what makes the recursion one numpy step per stage.
:func:`to_networkx` expands the same tables into a networkx ``DiGraph``
(reachable states only), and the fleet integer program (``tenure.fleet``)
enumerates its arcs from the same tables, so the solvers cannot disagree about
arcs or costs.

References
----------
.. [1] R. Bellman, "Equipment replacement policy", J. SIAM 3(3), 1955.
.. [2] W. L. Winston, *Operations Research: Applications and Algorithms*,
   network models chapter (equipment replacement as a shortest path).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from . import curves, life, money, tax
from .model import Case

KEEP = -1
#: action of a unit sold without a replacement (a class shrinks or a committed disposal); its path ends
SELL = -2
#: type and age of the first step of a unit bought without a sale (a class grows or an order adds)
NEW = -1
#: policy code of an overhaul (tenure.derived): to (k+1, overhaul_to[t, a], a+1)
OVERHAUL = -3
#: relative tolerance under which two costs count as tied (keep wins, then case order)
TIE = 1e-9


@dataclass(frozen=True)
class StageGraph:
    """The state graph of one class as arc-cost tables (one per class and case).

    Shapes use ``H`` planning years, ``T`` types (case order) and ages
    ``0 … A`` with ``A`` the largest max age of the class.  Money arrays named
    ``*_pw`` are present worth at time 0 [money]; the others are undiscounted
    amounts in constant start-year currency [money].

    Attributes
    ----------
    class_ : str
    types : tuple of str
    max_age : ndarray (T,)
    start_year, horizon : int
    rate : float
    buyable : bool ndarray (H, T)
    price : ndarray (H, T)
        Price of a new unit bought in year k.
    om_new : ndarray (H, T)
        O&M of service year 1 of a unit bought in year k, paid at k+1.
    om_keep : ndarray (H, T, A+1)
        O&M paid at k+1 by a unit of age a kept through year k (inf where keep is not allowed).
    value : ndarray (H+1, T, A+1)
        Market value of a unit of age a sold at time k (ages past max age only at k = 0: overdue units).
    keep_pw, buy_pw, sale_pw : present worths of the above
        ``keep_pw[k,t,a] = om_keep·v^(k+1)``; ``buy_pw[k,t] = price·v^k + om_new·v^(k+1)``
        (inf where not buyable); ``sale_pw[k,t,a] = value·v^k``.
    end_pw : ndarray (T, A+1)
        Present cost at time 0 of holding state (H, t, a) at the end
        ("salvage": minus the discounted market value; "continuing": the
        discounted least cost of keeping then an endless best chain).
    valid : bool ndarray (T, A+1)
        Ages that exist for each type (a ≤ max_age); A also covers the oldest overdue inventory unit.
    tax_rate : float or None
        When set, ``keep_pw``, ``buy_pw``, ``sale_pw`` and ``end_pw`` are after
        tax (docs/conventions.md, "Income tax"); ``price``, ``om_*`` and
        ``value`` stay the money paid and received, which is what capital caps
        and the yearly totals use.
    book : ndarray (H+1, T, A+1) or None
        Book value of a unit of age a at time k (after tax only).
    sellable : bool ndarray (T, A+1)
        Ages at which a unit may be sold or replaced (a ≥ min_age; the states that exist come from ``valid`` and reachability, so an overdue unit
        sells at time 0).
    tonnes_keep : ndarray (H, T, A+1)
        Tonnes CO2e emitted in year k by a unit of age a kept through it [t].
    tonnes_new : ndarray (H, T)
        Tonnes CO2e emitted in year k by a unit bought at time k [t].
    carbon_price : float
        Money per tonne [money/t]; ``keep_pw`` and ``buy_pw`` include
        ``carbon_price·tonnes`` paid at k+1, like O&M.
    job, job_usage, base, overhauled_at, overhaul_to, overhaul_cost, om_overhaul, overhaul_pw, labels
        Only on graphs with derived rows (``tenure.derived``; None otherwise): the job of each row
        (a replacement enters a buyable row of the same job), the usage of each job, the case type
        of each row, the age it was overhauled at (−1), the overhaul arc's target row by (t, a)
        (−1: none), its capital [money] and next-year O&M [money] by (k, t, a), its present cost
        (inf: none) and a unique name per row.
    """

    class_: str
    types: tuple[str, ...]
    max_age: np.ndarray
    start_year: int
    horizon: int
    rate: float
    buyable: np.ndarray
    price: np.ndarray
    om_new: np.ndarray
    om_keep: np.ndarray
    value: np.ndarray
    keep_pw: np.ndarray
    buy_pw: np.ndarray
    sale_pw: np.ndarray
    end_pw: np.ndarray
    valid: np.ndarray
    end_value: str = "salvage"
    chain_cost: float | None = None
    chain_type: str | None = None
    tax_rate: float | None = None
    book: np.ndarray | None = field(default=None, repr=False)
    sellable: np.ndarray | None = None
    tonnes_keep: np.ndarray | None = None
    tonnes_new: np.ndarray | None = None
    carbon_price: float = 0.0
    job: np.ndarray | None = None
    job_usage: tuple | None = None
    base: np.ndarray | None = None
    overhauled_at: np.ndarray | None = None
    overhaul_to: np.ndarray | None = None
    overhaul_cost: np.ndarray | None = None
    om_overhaul: np.ndarray | None = None
    overhaul_pw: np.ndarray | None = None
    labels: tuple | None = None

    @property
    def ages(self) -> int:
        """Number of age columns (A+1)."""
        return self.valid.shape[1]

    def type_index(self, type_id: str) -> int:
        return self.types.index(type_id)

    def row_label(self, t: int) -> str:
        """A unique name of row t (the type id unless the graph has derived rows)."""
        return self.types[t] if self.labels is None else self.labels[t]

    def start_row(self, type_id: str, usage=None) -> int:
        """Row of a not-overhauled unit of ``type_id`` doing the job of (rounded) ``usage``."""
        if self.job is None:
            return self.types.index(type_id)
        j = self.job_usage.index(usage)
        for r, tid in enumerate(self.types):
            if tid == type_id and self.job[r] == j and self.overhauled_at[r] < 0:
                return r
        raise KeyError((type_id, usage))

    def job_rows(self) -> list[np.ndarray]:
        """The rows of each job (all rows in one job without derived rows)."""
        if self.job is None:
            return [np.arange(len(self.types))]
        return [np.flatnonzero(self.job == j) for j in range(len(self.job_usage))]

    def reachable(self, starts) -> np.ndarray:
        """Bool (H+1, T, A+1): states reachable from the starting states ``[(t, a), …]``."""
        H, (T, A1) = self.horizon, self.valid.shape
        r = np.zeros((H + 1, T, A1), dtype=bool)
        for t, a in starts:
            r[0, t, a] = True
        keep_ok = self.valid & (np.arange(A1)[None, :] < self.max_age[:, None])
        jobs = self.job_rows()
        ov = None if self.overhaul_to is None else np.nonzero(self.overhaul_to >= 0)
        for k in range(H):
            r[k + 1, :, 1:] |= r[k, :, :-1] & keep_ok[:, :-1]
            for rows in jobs:
                if r[k, rows].any():
                    r[k + 1, rows, 1] |= self.buyable[k, rows]
            if ov is not None:
                src = r[k][ov]
                r[k + 1, self.overhaul_to[ov][src], ov[1][src] + 1] = True
        return r


def build_class_graph(case: Case, class_: str) -> StageGraph:
    """Arc-cost tables of the state graph of ``class_`` (see module docstring).

    Parameters
    ----------
    case : Case
    class_ : str
        A class of the case.

    Returns
    -------
    StageGraph
        With derived job/overhaul rows (``tenure.derived``) when the class uses usage or overhauls.
    """
    from . import derived

    if derived.has_derived(case, class_):
        return derived.build_derived_graph(case, class_)
    s = case.study
    H, y0, i = s.horizon, s.start_year, s.discount_rate
    types = case.types_of(class_)
    T = len(types)
    # an overdue inventory unit (age past max_age) is a starting state that can only be sold at time 0
    ids = {t.id for t in types}
    A = max([t.max_age for t in types] + [u.age for u in case.units if u.type in ids])
    k = np.arange(H)
    kk = np.arange(H + 1)
    ages = np.arange(A + 1)
    max_age = np.array([t.max_age for t in types])
    valid = ages[None, :] <= max_age[:, None]
    years = y0 + k

    buyable = np.array([[t.buyable(int(y)) for t in types] for y in years], dtype=bool).reshape(H, T)
    price = np.stack([np.asarray(curves.price(t, years, y0)) for t in types], axis=1)
    om_new = np.stack([np.asarray(curves.om(t, 1, years, y0)) * np.ones(H) for t in types], axis=1)
    # vintage of state (k, a) is y0 + k - a
    vint = (y0 + k)[:, None] - ages[None, :]
    om_keep = np.stack([np.asarray(curves.om(t, ages[None, :] + 1, vint, y0)) for t in types], axis=1)
    keep_ok = valid & (ages[None, :] < max_age[:, None])
    om_keep = np.where(keep_ok[None, :, :], om_keep, np.inf)
    value = np.stack([np.asarray(curves.market_value(t, ages[None, :], (y0 + kk)[:, None], y0)) for t in types],
                     axis=1)
    value = np.where(valid[None, :, :] | (kk == 0)[:, None, None], value, 0.0)
    min_age = np.array([t.min_age for t in types])
    sellable = ages[None, :] >= min_age[:, None]
    tonnes_keep = np.stack([np.asarray(curves.tonnes(t, vint, y0)) for t in types], axis=1)
    tonnes_keep = np.where(keep_ok[None, :, :], tonnes_keep, 0.0)
    tonnes_new = np.stack([np.asarray(curves.tonnes(t, years, y0)) * np.ones(H) for t in types], axis=1)
    cp = s.carbon_price

    v = np.asarray(money.pf(i, kk))
    # priced tonnes are paid at the end of each service year, like O&M (docs/conventions.md); with a tax
    # rate they are deducted like O&M
    keep_cash, new_cash, sale_cash, book = om_keep + cp * tonnes_keep, om_new + cp * tonnes_new, value, None
    if s.tax_rate is not None:
        keep_cash, new_cash, sale_cash, book = tax.arc_cash(case, types, keep_cash, new_cash, value, valid)
    keep_pw = keep_cash * v[1:, None, None]
    buy_pw = np.where(buyable, price * v[:H, None] + new_cash * v[1:, None], np.inf)
    sale_pw = sale_cash * v[:, None, None]

    end_pw, chain_cost, chain_type = _end_costs(case, types, sale_pw, v, A)
    end_pw = np.where(valid, end_pw, np.inf)
    return StageGraph(class_=class_, types=tuple(t.id for t in types), max_age=max_age, start_year=y0, horizon=H,
                      rate=i, buyable=buyable, price=price, om_new=om_new, om_keep=om_keep, value=value,
                      keep_pw=keep_pw, buy_pw=buy_pw, sale_pw=sale_pw, end_pw=end_pw, valid=valid,
                      end_value=s.end_value, chain_cost=chain_cost, chain_type=chain_type, tax_rate=s.tax_rate,
                      book=book, sellable=sellable, tonnes_keep=tonnes_keep, tonnes_new=tonnes_new,
                      carbon_price=cp)


def _end_costs(case: Case, types, sale_pw: np.ndarray, v: np.ndarray, A: int):
    """End value of every state at time H (docs/conventions.md, "End of the horizon") [money, time 0].

    "salvage": minus the market value received at H.  "continuing": the capitalised cost of the
    best endless chain of the challengers buyable in the last planning year, frozen at year
    ``start_year + H``, after keeping each held unit as long as pays.  Returns
    ``(end_pw (T, A+1), chain_cost, chain_type)``; the last two are None under "salvage".
    """
    s = case.study
    H, y0, i = s.horizon, s.start_year, s.discount_rate
    if s.end_value == "salvage":
        return -sale_pw[H], None, None
    y_end = y0 + H
    best = None
    for t in types:
        if t.buyable(y_end - 1):
            c, _ = life.capitalised_chain_cost(t, i, y0, y_end, tax_rate=s.tax_rate, carbon_price=s.carbon_price)
            if best is None or c < best[0] - TIE * abs(c):
                best = (c, t.id)
    chain_cost, chain_type = best
    end_pw = np.full((len(types), A + 1), np.inf)
    for j, t in enumerate(types):
        a = np.arange(t.max_age + 1)
        end_pw[j, : t.max_age + 1] = life.continuing_costs(t, a, y_end - a, chain_cost, i, y0, y_end,
                                                           tax_rate=s.tax_rate, carbon_price=s.carbon_price) * v[H]
    return end_pw, chain_cost, chain_type


@dataclass(frozen=True)
class ChainSolution:
    """Value function and optimal policy of one class (one result per recursion).

    Attributes
    ----------
    value : ndarray (H+1, T, A+1)
        Least present cost at time 0 from state (k, t, a) to the end [money];
        inf for states that do not exist.
    policy : int ndarray (H, T, A+1)
        ``KEEP`` (−1) or the index of the type to buy.
    replace_value : ndarray (H, T, A+1)
        Least present cost from state (k, t, a) when the unit is replaced at time k [money]
        (read by :func:`flexibility`).
    """

    graph: StageGraph
    value: np.ndarray
    policy: np.ndarray
    replace_value: np.ndarray = field(repr=False)


def _first_min(x: np.ndarray) -> tuple[int, float]:
    """Index of the least entry of a short vector (the first within TIE of it) and the least value.

    Plain Python over the T entries of one stage: for a handful of types this is several
    times faster than the equivalent numpy reductions, with the same result.
    """
    xs = x.tolist()
    m = min(xs)
    if not math.isfinite(m):
        return -1, float(m)
    lim = m + TIE * max(1.0, abs(m))
    for idx, val in enumerate(xs):
        if val <= lim:
            return idx, float(m)
    return -1, float(m)  # pragma: no cover - unreachable for finite m


def _tie_tolerance(g: StageGraph, buy_pw: np.ndarray) -> float:
    """Money below which two state values count as tied [money, time 0].

    Relative ``TIE`` of the largest value a chain can reach (a purchase in
    every year), so rounding noise never decides between keep and replace.
    """
    finite = np.abs(buy_pw[np.isfinite(buy_pw)])
    scale = float(finite.max()) if finite.size else 1.0
    return TIE * max(1.0, scale * (g.horizon + 1))


def backward(g: StageGraph, buy_pw: np.ndarray | None = None, sale_pw: np.ndarray | None = None) -> ChainSolution:
    """Backward recursion over the stages of ``g``, one numpy step per stage.

    ``V_H = end``;  for k = H−1 … 0:

        keep(k,t,a)    = keep_pw[k,t,a] + V_{k+1}(t, a+1)
        replace(k,t,a) = min_t' (buy_pw[k,t'] + V_{k+1}(t', 1)) − sale_pw[k,t,a]
        overhaul(k,t,a) = overhaul_pw[k,t,a] + V_{k+1}(overhaul_to[t,a], a+1)   (derived rows only)
        V_k(t,a)       = min(keep, overhaul, replace)

    With jobs (``tenure.derived``) t' ranges over the buyable rows of t's job.
    Ties go to keep, then to the overhaul, then to the first type in case order.  ``buy_pw`` and
    ``sale_pw`` may be given to price the arcs differently (for example with a
    price on capital added); by default the graph's own costs are used.

    Complexity: O(H·T·A) time and memory.
    """
    buy = g.buy_pw if buy_pw is None else buy_pw
    sale = g.sale_pw if sale_pw is None else sale_pw
    H, (T, A1) = g.horizon, g.valid.shape
    V = np.empty((H + 1, T, A1))
    V[H] = g.end_pw
    pol = np.empty((H, T, A1), dtype=np.int16)
    keep = np.empty((T, A1))  # the keep value of year k's states (a workspace: only replace values are kept)
    repv = np.empty((H, T, A1))
    # the oldest age column can never be kept (keep_pw is inf there): its keep value is inf
    keep[:, -1] = np.inf
    keep_pw = g.keep_pw[:, :, :-1]
    tol = _tie_tolerance(g, buy)
    use_keep = np.empty((T, A1), dtype=bool)
    no_sale = None if g.sellable is None or g.sellable[g.valid].all() else ~g.sellable & g.valid
    rep_tol = np.empty((T, A1))
    jobs = None if g.job is None else g.job_rows()
    ov = None if g.overhaul_to is None else _overhaul_arcs(g, A1)
    # Values of ages past a type's max age are never read by a valid state (their keep arcs
    # are inf and purchases enter at age 1), so they are masked once after the loop.
    for k in range(H - 1, -1, -1):
        nxt = V[k + 1]
        rep = repv[k]
        np.add(keep_pw[k], nxt[:, 1:], out=keep[:, :-1])
        if jobs is None:
            j, b = _first_min(buy[k] + nxt[:, 1])
            np.subtract(b, sale[k], out=rep)
            pol[k] = j
        else:
            _replace_by_job(buy[k], nxt, sale[k], jobs, rep, pol[k])
        if no_sale is not None:  # below min_age: no replace arc
            rep[no_sale] = np.inf
        alt = rep
        if ov is not None:  # replace_value keeps the pure replace value (flexibility reads it)
            alt = rep.copy()
            _overhaul_step(k, nxt, ov, alt, pol[k], tol)
        np.add(alt, tol, out=rep_tol)
        np.less_equal(keep, rep_tol, out=use_keep)
        np.copyto(V[k], alt)
        np.copyto(V[k], keep, where=use_keep)
        np.copyto(pol[k], KEEP, where=use_keep)
    # ... except at k = 0, where an age past max age is an overdue unit that must be sold now
    V[1:H, ~g.valid] = np.inf
    return ChainSolution(graph=g, value=V, policy=pol, replace_value=repv)


def _replace_by_job(buy: np.ndarray, nxt: np.ndarray, sale: np.ndarray, jobs, rep: np.ndarray,
                    pol: np.ndarray) -> None:
    """Replace values of one stage when rows belong to jobs: the best purchase among the job's rows."""
    enter = buy + nxt[:, 1]
    for rows in jobs:
        j, b = _first_min(enter[rows])
        rep[rows] = b - sale[rows]
        pol[rows] = rows[j] if j >= 0 else -1


def _overhaul_arcs(g: StageGraph, A1: int):
    """The overhaul arcs as flat indices: (source states, target states, their present costs (H, n))."""
    t, a = np.nonzero(g.overhaul_to >= 0)
    if len(t) == 0:
        return None
    return t * A1 + a, g.overhaul_to[t, a] * A1 + a + 1, g.overhaul_pw[:, t, a]


def _overhaul_step(k: int, nxt: np.ndarray, ov, rep: np.ndarray, pol: np.ndarray, tol: float) -> None:
    """Where an overhaul beats replacing (ties to the overhaul), write its value and OVERHAUL into
    ``rep``/``pol`` (keep is compared afterwards, so keep still wins ties)."""
    src, dst, pw = ov
    val = pw[k] + nxt.ravel()[dst]
    r = rep.ravel()
    better = val <= r[src] + tol
    r[src[better]] = val[better]
    pol.ravel()[src[better]] = OVERHAUL


@dataclass(frozen=True)
class Step:
    """One year of a unit's path: the state held at the start of year k and what is done."""

    k: int
    type: int
    age: int
    action: int  # KEEP, SELL, OVERHAUL or index of the type bought; type = age = NEW for a unit bought from nothing


def follow(sol: ChainSolution, t: int, a: int, k0: int = 0) -> list[Step]:
    """The optimal path from state (k0, t, a) to the end of the horizon."""
    steps = []
    for k in range(k0, sol.graph.horizon):
        act = int(sol.policy[k, t, a])
        steps.append(Step(k, t, a, act))
        t, a = next_state(sol.graph, t, a, act)
    return steps


def next_state(g: StageGraph, t: int, a: int, action: int) -> tuple[int, int]:
    """The state (t, a) after one year of ``action`` from (t, a)."""
    if action == KEEP:
        return t, a + 1
    if action == OVERHAUL:
        return int(g.overhaul_to[t, a]), a + 1
    return action, 1


def path_cost(g: StageGraph, steps: list[Step]) -> float:
    """Present cost at time 0 of a path (its arcs and its end state) [money]."""
    total = 0.0
    t = a = None
    for st in steps:
        if st.action == KEEP:
            total += g.keep_pw[st.k, st.type, st.age]
            t, a = st.type, st.age + 1
        elif st.action == SELL:
            return float(total - g.sale_pw[st.k, st.type, st.age])
        elif st.action == OVERHAUL:
            total += g.overhaul_pw[st.k, st.type, st.age]
            t, a = next_state(g, st.type, st.age, st.action)
        else:
            sale = 0.0 if st.type == NEW else g.sale_pw[st.k, st.type, st.age]
            total += g.buy_pw[st.k, st.action] - sale
            t, a = st.action, 1
    if t is None:
        return float("nan")
    return float(total + g.end_pw[t, a])


# re-exported: the networkx view of the same tables (tenure.chain_view) and the defer/advance costs
# (tenure.flexibility)
from .chain_view import END, to_networkx  # noqa: E402,F401
from .flexibility import flexibility  # noqa: E402,F401
