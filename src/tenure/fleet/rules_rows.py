"""Rows and bounds that couple the cohort program's units: class sizes, orders, targets, emission caps.

Written against the columns of each class (``ColumnIndex``: ``keep[k,t,a]``, ``sell[k,t,a]``,
``buy[k,t]``), so the program builder only adds what this module returns:

- **class size** (``[[demand]]`` and orders): the market node of class c in year k becomes
  ``Σ buy − Σ sell = S_k − S_{k−1}``, with ``S_k`` the units in service in year k
  (:func:`class_sizes`) and ``S_{−1}`` the inventory;
- **orders**: ``buy[k, t] ≥ count``; each ``replaces`` unit of starting state (t, a₀) leaving in
  year k: ``keep[j, t, a₀+j] ≥`` the units of that state still to leave after year j (j < k), and
  ``sell[k, t, a₀+k] ≥`` those leaving in k;
- **share_of_buys** s, year k ≥ from: ``Σ_{types} buy − s·Σ_{classes} buy ≥ 0``;
- **share_in_service** s: the same over ``keep[k,·,·] + buy[k,·]`` (units in service in year k);
- **emission cap** E_k: ``Σ tonnes_keep·keep[k] + Σ tonnes_new·buy[k] ≤ E_k`` [t].

Every row is linear in the program's columns (docs/conventions.md, "Rules").
"""

from __future__ import annotations

import math
from collections import defaultdict
from dataclasses import dataclass, field

import numpy as np

from ..model import Case

INF = math.inf


@dataclass(frozen=True)
class RuleRow:
    """One coupling row ``lo ≤ Σ coef·x[cols] ≤ hi``; ``rule`` and ``year`` name it in messages."""

    lo: float
    hi: float
    cols: np.ndarray
    coefs: np.ndarray
    rule: str
    year: int
    kind: str


@dataclass(frozen=True)
class RuleRows:
    """What the rules add to a cohort program (one per build)."""

    rows: tuple[RuleRow, ...] = ()
    col_lower: dict = field(default_factory=dict)  # column -> lower bound (orders, committed disposals)


def class_sizes(case: Case, cls: str, start_count: int) -> np.ndarray:
    """Units of ``cls`` in service in each planning year, ``S_k`` (int array of length horizon).

    A ``[[demand]]`` entry holds from its year until the next; before the first entry the class
    keeps its starting size, changed by each order's ``count`` less its ``replaces``.
    """
    s = case.study
    demand = next((d.count_by_year for d in case.demands if d.class_ == cls), {})
    class_of = {t.id: t.class_ for t in case.types}
    size, out = start_count, []
    for y in s.years:
        for o in case.orders:
            if o.year == y and class_of[o.type] == cls:
                size += o.count - len(o.replaces)
        if y in demand:
            size = demand[y]
        elif any(dy <= y for dy in demand):
            size = demand[max(dy for dy in demand if dy <= y)]
        out.append(size)
    return np.asarray(out, dtype=int)


def _order_bounds(case: Case, cols: dict, starts: dict) -> dict:
    lower: dict[int, float] = defaultdict(float)
    y0 = case.study.start_year
    index = {}
    for cls, ci in cols.items():
        types = _types(case, cls)
        for j, tid in enumerate(types):
            index[tid] = (cls, j)
    state_of = {}
    for cls, st in starts.items():
        for (t, a), names in st.items():
            for nm in names:
                state_of[nm] = (cls, t, a)
    for o in case.orders:
        cls, t2 = index[o.type]
        j = int(cols[cls].buy[o.year - y0, t2])
        if j >= 0:
            lower[j] += o.count
        k = o.year - y0
        for nm in o.replaces:
            cls_u, t, a0 = state_of[nm]
            ci = cols[cls_u]
            for kj in range(k):
                jk = int(ci.keep[kj, t, a0 + kj])
                if jk >= 0:
                    lower[jk] += 1
            js = int(ci.sell[k, t, a0 + k])
            if js >= 0:
                lower[js] += 1
    return dict(lower)


def _types(case: Case, cls: str) -> list[str]:
    return [t.id for t in case.types_of(cls)]


def _in_year(ci, k: int, kind: str, weights_keep=None, weights_buy=None):
    """Columns of year k of one class ('buy' or 'service') with per-type weights."""
    cols, coefs = [], []
    b = ci.buy[k]
    for t in np.flatnonzero(b >= 0):
        cols.append(int(b[t]))
        coefs.append(1.0 if weights_buy is None else float(weights_buy[t]))
    if kind == "service":
        # a unit overhauled in year k is in service during it, like a unit kept
        for kp in (ci.keep[k],) + (() if getattr(ci, "overhaul", None) is None else (ci.overhaul[k],)):
            for t, a in zip(*np.nonzero(kp >= 0)):
                cols.append(int(kp[t, a]))
                coefs.append(1.0 if weights_keep is None else float(weights_keep[t, a]))
    return cols, coefs


def _target_rows(case: Case, cols: dict) -> list[RuleRow]:
    out = []
    y0 = case.study.start_year
    for tg in case.targets:
        for kind, share in (("buy", tg.share_of_buys), ("service", tg.share_in_service)):
            if share is None:
                continue
            for k in range(case.study.horizon):
                if y0 + k < tg.from_:
                    continue
                cc, vv = [], []
                for cls in tg.classes:
                    if cls not in cols:
                        continue
                    w = np.array([(1.0 - share) if tid in tg.types else -share for tid in _types(case, cls)])
                    ci = cols[cls]
                    c, v = _in_year(ci, k, kind, weights_keep=np.repeat(w[:, None], ci.keep.shape[2], axis=1),
                                    weights_buy=w)
                    cc += c
                    vv += v
                if cc:
                    name = "share_of_buys" if kind == "buy" else "share_in_service"
                    out.append(RuleRow(0.0, INF, np.asarray(cc), np.asarray(vv), f"{tg.label} ({name} {share:g})",
                                       y0 + k, "target"))
    return out


def _emission_rows(case: Case, cols: dict, graphs: dict) -> list[RuleRow]:
    out = []
    y0 = case.study.start_year
    for k in range(case.study.horizon):
        cap = case.emission_cap_for(y0 + k)
        if cap is None:
            continue
        cc, vv = [], []
        for cls, ci in cols.items():
            g = graphs[cls]
            c, v = _in_year(ci, k, "service", weights_keep=g.tonnes_keep[k], weights_buy=g.tonnes_new[k])
            cc += c
            vv += v
        out.append(RuleRow(-INF, float(cap), np.asarray(cc, dtype=np.int64), np.asarray(vv), "emission cap",
                           y0 + k, "emissions"))
    return out


def market_changes(case: Case, starts: dict) -> dict:
    """``(class, k) → S_k − S_{k−1}``, the right-hand side of each market node (absent when 0)."""
    rhs = {}
    if not (case.demands or case.orders):
        return rhs
    for cls, st in starts.items():
        n0 = sum(len(v) for v in st.values())
        sizes = class_sizes(case, cls, n0)
        prev = np.concatenate([[n0], sizes[:-1]])
        for k, d in enumerate(sizes - prev):
            if d:
                rhs[(cls, k)] = float(d)
    return rhs


def size_bound(case: Case, cls: str, start_count: int) -> float:
    """The most units the class can hold in a year (an upper bound for every column of the class)."""
    if not (case.demands or case.orders):
        return float(start_count)
    sizes = class_sizes(case, cls, start_count)
    return float(max(start_count, int(sizes.max(initial=0))))


def place(b, case: Case, graphs: dict, cols: dict, starts: dict) -> tuple[tuple, dict]:
    """Add the coupling rows to the program builder ``b``; returns ((row, RuleRow), …) and the
    column lower bounds of orders and committed disposals."""
    rules = rule_rows(case, graphs, cols, starts)
    placed = []
    for rr in rules.rows:
        r = b.row(rr.lo, rr.hi)
        b.put(r, rr.cols, rr.coefs)
        placed.append((r, rr))
    return tuple(placed), rules.col_lower


def rule_rows(case: Case, graphs: dict, cols: dict, starts: dict) -> RuleRows:
    """The coupling rows and column bounds of the case's rules (see module docstring).

    Parameters
    ----------
    case : Case
    graphs : dict class -> StageGraph
    cols : dict class -> ColumnIndex
    starts : dict class -> {(t, a): [unit names]}
    """
    if not case.coupled:
        return RuleRows()
    rows = _target_rows(case, cols) + _emission_rows(case, cols, graphs)
    return RuleRows(rows=tuple(rows), col_lower=_order_bounds(case, cols, starts))


def satisfies(prog, x: np.ndarray, tol: float = 1e-6) -> bool:
    """True when ``x`` meets every row and column bound of the program (a rounded plan is checked
    this way because fix-and-relax accepts its last year without an LP re-solve)."""
    ax = prog.matrix @ x
    scale = tol * np.maximum(1.0, np.abs(ax))
    return bool(np.all(ax >= prog.row_lower - scale) and np.all(ax <= prog.row_upper + scale)
                and np.all(x >= prog.lower - tol) and np.all(x <= prog.upper + tol))
