"""The cohort-flow program of a capped fleet, as arrays (``scipy.sparse``).

Built from the same state graphs as the recursion (``tenure.chain``).  For
each class the units flow through the reachable states ``(k, t, a)``:

- ``keep[k,t,a]``  units kept through year k (only while a < max_age);
- ``sell[k,t,a]``  units sold at time k, each freeing a slot in the class's
  year-k market node;
- ``buy[k,t']``    units of type t' bought at time k (buyable types only).

Rows: conservation at every state (inflow = keep + sell, the inflow at k = 0
being the inventory), the market node of each class and year
(Σ sell = Σ buy), each year's cap (gross: Σ price·buy; net: less Σ value·sell)
and each class's ``max_buys_per_year``.  End values are added to the arcs that
enter the final states.  A sell/buy pair is exactly a *replace* arc of the
state graph, so the costs [money, present worth at time 0] are those of the
graph tables.

The parallel replacement problem under capital rationing:
S. Karabakal, J. R. Lohmann, J. C. Bean, "Parallel replacement under capital
rationing constraints", Management Science 40(3), 1994.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace

import numpy as np
import scipy.sparse as sp

from ..model import Case
from ..uncapped import build_graphs, starting_states
from . import rules_rows

INF = math.inf


@dataclass(frozen=True)
class ColumnIndex:
    """Where each variable of one class lives: column numbers by (k, t, a) or (k, t), −1 where absent."""

    keep: np.ndarray  # (H, T, A+1) int
    sell: np.ndarray  # (H, T, A+1)
    buy: np.ndarray  # (H, T)


@dataclass(frozen=True)
class CohortProgram:
    """``min cost·x  s.t.  row_lower ≤ matrix·x ≤ row_upper,  lower ≤ x ≤ upper``.

    ``cost`` [money, time 0]; ``matrix`` a ``scipy.sparse.csc_matrix`` (rows × columns);
    ``cap_rows[k]`` the row of year k's cap (−1 when uncapped); ``cols`` the columns of each
    class, ``starts`` the inventory names by starting state, ``graphs`` the state graphs.
    """

    cost: np.ndarray
    lower: np.ndarray
    upper: np.ndarray
    row_lower: np.ndarray
    row_upper: np.ndarray
    matrix: sp.csc_matrix
    cap_rows: np.ndarray
    cols: dict  # class -> ColumnIndex
    starts: dict  # class -> {(t, a): [names]}
    graphs: dict
    market_rhs: dict = field(default_factory=dict)  # (class, k) -> Σ buy − Σ sell (rules_rows.market_changes)
    rule_rows: tuple = ()  # (row, rules_rows.RuleRow) of each coupling row

    @property
    def n_cols(self) -> int:
        return len(self.cost)

    @property
    def n_rows(self) -> int:
        return len(self.row_lower)

    # column-wise arrays as solver interfaces take them
    @property
    def a_start(self) -> np.ndarray:
        return self.matrix.indptr.astype(np.int32)

    @property
    def a_index(self) -> np.ndarray:
        return self.matrix.indices.astype(np.int32)

    @property
    def a_value(self) -> np.ndarray:
        return self.matrix.data.astype(float)

    def with_elastic_caps(self) -> tuple["CohortProgram", np.ndarray]:
        """The program with one extra column per capped year (coefficient −1 in its cap row, so
        it adds capital to that cap), unbounded above.  Returns it and the capped years' indices."""
        years = np.flatnonzero(self.cap_rows >= 0)
        m = len(years)
        extra = sp.csc_matrix((-np.ones(m), (self.cap_rows[years], np.arange(m))), shape=(self.n_rows, m))
        return replace(self, cost=np.concatenate([self.cost, np.zeros(m)]),
                       lower=np.concatenate([self.lower, np.zeros(m)]),
                       upper=np.concatenate([self.upper, np.full(m, INF)]),
                       matrix=sp.hstack([self.matrix, extra], format="csc")), years


class _Builder:
    """Columns and (row, column, value) triplets as they are created."""

    def __init__(self):
        self.cost: list[float] = []
        self.upper: list[float] = []
        self.row_lo: list[float] = []
        self.row_hi: list[float] = []
        self.ri: list[int] = []
        self.cj: list[int] = []
        self.vv: list[float] = []

    def row(self, lo: float, hi: float) -> int:
        self.row_lo.append(lo)
        self.row_hi.append(hi)
        return len(self.row_lo) - 1

    def col(self, c: float, ub: float) -> int:
        self.cost.append(c)
        self.upper.append(ub)
        return len(self.cost) - 1

    def put(self, r: int, cols, value) -> None:
        cols = np.asarray(cols, dtype=np.int64).ravel()
        self.ri.extend([r] * len(cols))
        self.cj.extend(cols.tolist())
        self.vv.extend(np.broadcast_to(np.asarray(value, dtype=float), cols.shape).tolist())


def _caps(case: Case, extra_cap) -> np.ndarray:
    s, budget = case.study, case.budget
    caps = np.full(s.horizon, INF)
    if budget is not None:
        for k in range(s.horizon):
            cap = budget.constant_cap(s.start_year + k)
            if cap is not None:
                caps[k] = cap + (0.0 if extra_cap is None else extra_cap[k])
    return caps


def _class_columns(b: _Builder, g, reach, H: int, n_units: float) -> ColumnIndex:
    T, A1 = g.valid.shape
    keep = np.full((H, T, A1), -1, dtype=np.int64)
    sell = np.full((H, T, A1), -1, dtype=np.int64)
    buy = np.full((H, T), -1, dtype=np.int64)
    for k in range(H):
        any_buy = bool(g.buyable[k].any())
        for t, a in zip(*np.nonzero(reach[k])):
            if a < g.max_age[t]:
                keep[k, t, a] = b.col(float(g.keep_pw[k, t, a] + (g.end_pw[t, a + 1] if k == H - 1 else 0.0)), n_units)
            if any_buy and (g.sellable is None or g.sellable[t, a]):  # no sale below min_age
                sell[k, t, a] = b.col(float(-g.sale_pw[k, t, a]), n_units)
        for t2 in np.flatnonzero(g.buyable[k]):
            buy[k, t2] = b.col(float(g.buy_pw[k, t2] + (g.end_pw[t2, 1] if k == H - 1 else 0.0)), n_units)
    return ColumnIndex(keep=keep, sell=sell, buy=buy)


def _class_rows(b: _Builder, g, ci: ColumnIndex, reach, start: dict, cap_rows, net: bool, lim,
                market: dict | None = None) -> None:
    keep, sell, buy = ci.keep, ci.sell, ci.buy
    H = len(cap_rows)
    # conservation at each state: keep + sell − inflow = inventory (k = 0) or 0
    for k in range(H):
        for t, a in zip(*np.nonzero(reach[k])):
            n0 = float(len(start.get((int(t), int(a)), []))) if k == 0 else 0.0
            r = b.row(n0, n0)
            b.put(r, [j for j in (keep[k, t, a], sell[k, t, a]) if j >= 0], 1.0)
            if k > 0:
                inflow = [keep[k - 1, t, a - 1]] if a >= 1 else []
                inflow += [buy[k - 1, t]] if a == 1 else []
                b.put(r, [j for j in inflow if j >= 0], -1.0)
    # market node, cap and limit rows
    for k in range(H):
        s_mask, b_mask = sell[k] >= 0, buy[k] >= 0
        if not s_mask.any() and not b_mask.any():
            continue
        d = -(market or {}).get(k, 0.0)  # Σ sell − Σ buy = −(the class's size change)
        r = b.row(d, d)
        b.put(r, sell[k][s_mask], 1.0)
        b.put(r, buy[k][b_mask], -1.0)
        if cap_rows[k] >= 0:
            b.put(int(cap_rows[k]), buy[k][b_mask], g.price[k][b_mask])
            if net:
                b.put(int(cap_rows[k]), sell[k][s_mask], -g.value[k][s_mask])
        if lim is not None and b_mask.any():
            b.put(b.row(-INF, float(lim)), buy[k][b_mask], 1.0)


def build_program(case: Case, graphs=None, extra_cap: np.ndarray | None = None) -> CohortProgram:
    """Assemble the cohort-flow program of a case (see the module docstring).

    ``extra_cap`` (H,) [money] adds capital to each year's cap (used to re-solve
    under raised caps and by the tests' finite differences).
    """
    H = case.study.horizon
    graphs = build_graphs(case) if graphs is None else graphs
    starts = starting_states(case, graphs)
    net = case.budget is not None and case.budget.basis == "net"
    b = _Builder()
    caps = _caps(case, extra_cap)
    cap_rows = np.array([b.row(-INF, caps[k]) if np.isfinite(caps[k]) else -1 for k in range(H)], dtype=np.int64)
    cols: dict = {}
    market = rules_rows.market_changes(case, starts)
    for cls, g in graphs.items():
        n_units = rules_rows.size_bound(case, cls, sum(len(v) for v in starts[cls].values()))
        reach = g.reachable(list(starts[cls]))
        cols[cls] = _class_columns(b, g, reach, H, n_units)
        _class_rows(b, g, cols[cls], reach, starts[cls], cap_rows, net, case.limit_for(cls),
                    {k: d for (c, k), d in market.items() if c == cls})
    placed, col_lower = rules_rows.place(b, case, graphs, cols, starts)
    n, m = len(b.cost), len(b.row_lo)
    matrix = sp.coo_matrix((np.asarray(b.vv), (np.asarray(b.ri), np.asarray(b.cj))), shape=(m, n)).tocsc()
    lower = np.zeros(n)
    lower[list(col_lower)] = list(col_lower.values())
    return CohortProgram(cost=np.asarray(b.cost), lower=lower, upper=np.asarray(b.upper),
                         row_lower=np.asarray(b.row_lo), row_upper=np.asarray(b.row_hi), matrix=matrix,
                         cap_rows=cap_rows, cols=cols, starts=starts, graphs=graphs, market_rhs=market,
                         rule_rows=placed)
