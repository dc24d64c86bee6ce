"""The cohort-flow program of a capped fleet, as arrays (``scipy.sparse``).

Built from the same state graphs as the recursion (``tenure.chain``).  For
each class the units flow through the reachable states ``(k, t, a)``:

- ``keep[k,t,a]``  units kept through year k (only while a < max_age);
- ``sell[k,t,a]``  units sold at time k, each freeing a slot in the class's
  year-k market node;
- ``buy[k,t']``    units of type t' bought at time k (buyable types only);
- ``overhaul[k,t,a]`` units overhauled at time k (graphs with derived rows, ``tenure.derived``),
  flowing into (k+1, overhaul_to[t,a], a+1); their cost counts in the cap on both bases.

Rows: conservation at every state (inflow = keep + sell, the inflow at k = 0
being the inventory), the market node of each class and year
(Σ sell = Σ buy; one node per job when the graph has jobs: a replacement keeps
the job's usage), each year's cap (gross: Σ price·buy; net: less Σ value·sell)
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
    overhaul: np.ndarray | None = None  # (H, T, A+1), graphs with overhaul arcs only


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

    def column_years(self) -> np.ndarray:
        """(n_cols,) the year index k of each class column (keep, sell, buy and overhaul at time k);
        −1 for any other column (e.g. the elastic program's extra capital)."""
        years = np.full(self.n_cols, -1, dtype=np.int64)
        for ci in self.cols.values():
            for arr in (ci.keep, ci.sell, ci.buy, ci.overhaul):
                if arr is not None:
                    k = np.nonzero(arr >= 0)[0]
                    years[arr[arr >= 0]] = k
        return years

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
    """Columns, rows and chunks of (row, column, value) triplets as they are created."""

    def __init__(self):
        self.cost: list[float] = []
        self.upper: list[float] = []
        self.row_lo: list[float] = []
        self.row_hi: list[float] = []
        self.chunks: list[tuple[np.ndarray, np.ndarray, np.ndarray]] = []

    def row(self, lo: float, hi: float) -> int:
        self.row_lo.append(lo)
        self.row_hi.append(hi)
        return len(self.row_lo) - 1

    def rows(self, lo: np.ndarray, hi: np.ndarray) -> np.ndarray:
        """Append one row per entry of ``lo``/``hi``; their indices."""
        first = len(self.row_lo)
        self.row_lo.extend(np.asarray(lo, dtype=float).tolist())
        self.row_hi.extend(np.asarray(hi, dtype=float).tolist())
        return np.arange(first, len(self.row_lo))

    def cols(self, cost: np.ndarray, ub: float) -> int:
        """Append one column per entry of ``cost``, each with upper bound ``ub``; the first's index."""
        first = len(self.cost)
        self.cost.extend(np.asarray(cost, dtype=float).tolist())
        self.upper.extend([ub] * len(cost))
        return first

    def put(self, rows, cols, value) -> None:
        """Coefficients ``value`` (a number or one per entry) at (``rows``, ``cols``); entries whose
        column is −1 (absent) are skipped.  ``rows`` may be one row for all."""
        cols = np.asarray(cols, dtype=np.int64).ravel()
        keep = cols >= 0
        n = int(np.count_nonzero(keep))
        if n == 0:
            return
        rows = np.full(n, rows, dtype=np.int64) if np.ndim(rows) == 0 else np.asarray(rows, dtype=np.int64)[keep]
        vals = np.full(n, value, dtype=float) if np.ndim(value) == 0 else np.asarray(value, dtype=float)[keep]
        self.chunks.append((rows, cols[keep], vals))

    def matrix(self) -> sp.csc_matrix:
        if not self.chunks:
            return sp.csc_matrix((len(self.row_lo), len(self.cost)))
        ri, cj, vv = (np.concatenate(x) for x in zip(*self.chunks))
        return sp.coo_matrix((vv, (ri, cj)), shape=(len(self.row_lo), len(self.cost))).tocsc()


def _states(mask: np.ndarray):
    """(t, a) of the true entries of a (T, A+1) mask, as Python ints, in row-major order."""
    ts, as_ = np.nonzero(mask)
    return zip(ts.tolist(), as_.tolist())


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
    """Year by year: for each reachable state (row-major order) its keep column (while a < max_age)
    then its sell column (when the year has a buyable type), then one buy column per buyable type."""
    T, A1 = g.valid.shape
    keep = np.full((H, T, A1), -1, dtype=np.int64)
    sell = np.full((H, T, A1), -1, dtype=np.int64)
    buy = np.full((H, T), -1, dtype=np.int64)
    for k in range(H):
        ts, as_ = np.nonzero(reach[k])
        has_keep = as_ < g.max_age[ts]
        has_sell = np.full(len(ts), bool(g.buyable[k].any()))
        if g.sellable is not None:  # no sale below min_age
            has_sell &= g.sellable[ts, as_]
        first = np.concatenate([[0], np.cumsum(has_keep.astype(np.int64) + has_sell)])
        cost = np.empty(first[-1])
        kc, sc = first[:-1][has_keep], (first[:-1] + has_keep)[has_sell]
        kt, ka = ts[has_keep], as_[has_keep]
        cost[kc] = g.keep_pw[k, kt, ka] + (g.end_pw[kt, ka + 1] if k == H - 1 else 0.0)
        cost[sc] = -g.sale_pw[k, ts[has_sell], as_[has_sell]]
        base = b.cols(cost, n_units)
        keep[k, kt, ka] = base + kc
        sell[k, ts[has_sell], as_[has_sell]] = base + sc
        t2 = np.flatnonzero(g.buyable[k])
        buy[k, t2] = b.cols(g.buy_pw[k, t2] + (g.end_pw[t2, 1] if k == H - 1 else 0.0), n_units) + np.arange(len(t2))
    return ColumnIndex(keep=keep, sell=sell, buy=buy, overhaul=_overhaul_columns(b, g, reach, H, n_units))


def _overhaul_columns(b: _Builder, g, reach, H: int, n_units: float) -> np.ndarray | None:
    """One column per reachable state with an overhaul arc, after all the class's other columns."""
    if g.overhaul_to is None or not (g.overhaul_to >= 0).any():
        return None
    T, A1 = g.valid.shape
    ov = np.full((H, T, A1), -1, dtype=np.int64)
    for k in range(H):
        ts, as_ = np.nonzero(reach[k] & (g.overhaul_to >= 0))
        if len(ts) == 0:
            continue
        cost = g.overhaul_pw[k, ts, as_] + (g.end_pw[g.overhaul_to[ts, as_], as_ + 1] if k == H - 1 else 0.0)
        ov[k, ts, as_] = b.cols(cost, n_units) + np.arange(len(ts))
    return ov


def _class_rows(b: _Builder, g, ci: ColumnIndex, reach, start: dict, cap_rows, net: bool, lim,
                market_change: dict | None = None) -> None:
    """The class's rows: conservation at each state (year by year, row-major), then for each year
    its market node and its purchase-limit row; its coefficients in the caps' rows.  ``market_change`` maps a
    year k to the class's size change Σ buy − Σ sell then ([[demand]], orders; rules_rows.market_changes)."""
    keep, sell, buy = ci.keep, ci.sell, ci.buy
    H = len(cap_rows)
    # conservation at each state: keep + sell − inflow = inventory (k = 0) or 0
    ks, ts, as_ = np.nonzero(reach[:H])
    n0 = np.zeros(len(ks))
    n0[ks == 0] = [len(start.get(st, [])) for st in zip(ts[ks == 0].tolist(), as_[ks == 0].tolist())]
    r = b.rows(n0, n0)
    b.put(r, keep[ks, ts, as_], 1.0)
    b.put(r, sell[ks, ts, as_], 1.0)
    old = (ks > 0) & (as_ >= 1)
    b.put(r[old], keep[ks[old] - 1, ts[old], as_[old] - 1], -1.0)
    new = (ks > 0) & (as_ == 1)
    b.put(r[new], buy[ks[new] - 1, ts[new]], -1.0)
    if ci.overhaul is not None:
        _overhaul_rows(b, g, ci.overhaul, r, ks, ts, as_, cap_rows)
    # market node (Σ sell = Σ buy) of each year and job, and the purchase limit of each year
    job = np.zeros(len(g.types), dtype=np.int64) if g.job is None else g.job
    n_jobs = int(job.max()) + 1
    market = np.full((H, n_jobs), -1, dtype=np.int64)
    limit = np.full(H, -1, dtype=np.int64)
    b_any = (buy >= 0).any(axis=1)
    for k in range(H):
        for j in range(n_jobs):
            if (sell[k][job == j] >= 0).any() or (buy[k][job == j] >= 0).any():
                # Σ sell − Σ buy = −(the class's size change), met in the first job
                d = -(market_change or {}).get(k, 0.0) if j == 0 else 0.0
                market[k, j] = b.row(d, d)
        if lim is not None and b_any[k]:
            limit[k] = b.row(-INF, float(lim))
    sk, st, sa = np.nonzero(sell >= 0)
    bk, bt = np.nonzero(buy >= 0)
    b.put(market[sk, job[st]], sell[sk, st, sa], 1.0)
    b.put(market[bk, job[bt]], buy[bk, bt], -1.0)
    lb = limit[bk] >= 0
    b.put(limit[bk][lb], buy[bk, bt][lb], 1.0)
    # caps: gross Σ price·buy; net less Σ value·sell
    cb = cap_rows[bk] >= 0
    b.put(cap_rows[bk][cb], buy[bk, bt][cb], g.price[bk, bt][cb])
    if net:
        cs = cap_rows[sk] >= 0
        b.put(cap_rows[sk][cs], sell[sk, st, sa][cs], -g.value[sk, st, sa][cs])


def _overhaul_rows(b: _Builder, g, ov: np.ndarray, r, ks, ts, as_, cap_rows) -> None:
    """Overhaul columns in the conservation rows (out of (k,t,a), into (k+1, overhaul_to, a+1)) and in
    the caps (their cost is capital on both bases)."""
    H, T, A1 = ov.shape
    row_of = np.full((H, T, A1), -1, dtype=np.int64)
    row_of[ks, ts, as_] = r
    ok, ot, oa = np.nonzero(ov >= 0)
    b.put(row_of[ok, ot, oa], ov[ok, ot, oa], 1.0)
    inner = ok + 1 < H
    b.put(row_of[ok[inner] + 1, g.overhaul_to[ot[inner], oa[inner]], oa[inner] + 1], ov[ok, ot, oa][inner], -1.0)
    cc = cap_rows[ok] >= 0
    b.put(cap_rows[ok][cc], ov[ok, ot, oa][cc], g.overhaul_cost[ok, ot, oa][cc])


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
    n = len(b.cost)
    matrix = b.matrix()
    lower = np.zeros(n)
    lower[list(col_lower)] = list(col_lower.values())
    return CohortProgram(cost=np.asarray(b.cost), lower=lower, upper=np.asarray(b.upper),
                         row_lower=np.asarray(b.row_lo), row_upper=np.asarray(b.row_hi), matrix=matrix,
                         cap_rows=cap_rows, cols=cols, starts=starts, graphs=graphs, market_rhs=market,
                         rule_rows=placed)
