"""Fleet plan under annual capital caps: the cohort-flow integer program.

Model
-----
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
state graph, so the costs are those of the graph tables.

The parallel replacement problem under capital rationing:
S. Karabakal, J. R. Lohmann, J. C. Bean, "Parallel replacement under capital
rationing constraints", Management Science 40(3), 1994.

Solving
-------
1. The recursion without caps; if its plan fits every cap and limit it is
   optimal and is returned as it is.
2. The LP relaxation (HiGHS): a proven lower bound and the shadow price of
   each year's cap.
3. Fix-and-relax by year, guided by the LP: year by year, round the LP's sells
   and buys to whole units within that year's cap and limits, fix them, and
   re-solve the LP for the years after.  This gives a feasible plan whose gap
   against the LP bound is usually well under 0.5 %.
4. If the gap is still above the target, the integer program is handed to the
   MIP solver (HiGHS or CBC through pulp) with that plan as its start, for the
   time left.

When no plan fits the caps, an elastic program finds the least extra capital
per year that makes one fit (integer flows), and the plan under the raised caps.
"""

from __future__ import annotations

import math
import sys
import time
from dataclasses import dataclass, field

import numpy as np

from . import chain, rules_check, rules_rows
from .model import Case
from .plan import PathGroup, Plan, assemble
from .uncapped import build_graphs, solve_uncapped, starting_states

INF = math.inf
SOLVERS = ("highs", "cbc")


# ---------------------------------------------------------------------------
# the program as arrays
# ---------------------------------------------------------------------------
@dataclass
class ColumnIndex:
    """Where each variable of one class lives: column numbers by (k, t, a) or (k, t)."""

    keep: np.ndarray  # (H, T, A+1) int, -1 where absent
    sell: np.ndarray  # (H, T, A+1)
    buy: np.ndarray  # (H, T)


@dataclass
class CohortProgram:
    """The cohort-flow program in column-wise sparse form (one per case).

    ``cost`` [money, time 0], column bounds ``lower``/``upper``, rows
    ``row_lower ≤ A·x ≤ row_upper``.  ``cap_rows[k]`` is the row of year k's
    cap (−1 when uncapped); ``col_year[j]`` the planning year of column j.
    """

    cost: np.ndarray
    lower: np.ndarray
    upper: np.ndarray
    row_lower: np.ndarray
    row_upper: np.ndarray
    a_start: np.ndarray
    a_index: np.ndarray
    a_value: np.ndarray
    cap_rows: np.ndarray
    limit_rows: dict
    col_year: np.ndarray
    cols: dict  # class -> ColumnIndex
    starts: dict  # class -> {(t, a): [names]}
    graphs: dict
    cap_coef: dict = field(default_factory=dict)  # col -> coefficient in its year's cap row
    market_rhs: dict = field(default_factory=dict)  # (class, k) -> Σ buy − Σ sell (rules_rows.market_changes)
    rule_rows: tuple = ()  # (row, rules_rows.RuleRow) of each coupling row

    @property
    def n_cols(self) -> int:
        return len(self.cost)

    @property
    def n_rows(self) -> int:
        return len(self.row_lower)


def build_program(case: Case, graphs=None, extra_cap: np.ndarray | None = None) -> CohortProgram:
    """Assemble the cohort-flow program of a case (see module docstring).

    ``extra_cap`` (H,) adds capital to each year's cap (used by the elastic
    diagnosis and to re-solve under raised caps).
    """
    s = case.study
    H = s.horizon
    graphs = build_graphs(case) if graphs is None else graphs
    starts = starting_states(case, graphs)
    budget = case.budget
    net = budget is not None and budget.basis == "net"

    cost: list[float] = []
    upper: list[float] = []
    col_year: list[int] = []
    rows_i: list[int] = []
    cols_j: list[int] = []
    vals: list[float] = []
    row_lo: list[float] = []
    row_hi: list[float] = []

    def new_row(lo: float, hi: float) -> int:
        row_lo.append(lo)
        row_hi.append(hi)
        return len(row_lo) - 1

    def new_col(c: float, ub: float, k: int) -> int:
        cost.append(c)
        upper.append(ub)
        col_year.append(k)
        return len(cost) - 1

    caps = np.full(H, INF)
    if budget is not None:
        for k in range(H):
            cap = budget.cap_for(s.start_year + k)
            if cap is not None:
                caps[k] = cap + (0.0 if extra_cap is None else extra_cap[k])
    cap_rows = np.array([new_row(-INF, caps[k]) if np.isfinite(caps[k]) else -1 for k in range(H)])
    cap_coef: dict[int, float] = {}
    limit_rows: dict = {}
    cols: dict = {}
    market_rhs = rules_rows.market_changes(case, starts)
    for cls, g in graphs.items():
        T, A1 = g.valid.shape
        n_units = rules_rows.size_bound(case, cls, sum(len(v) for v in starts[cls].values()))
        reach = g.reachable(list(starts[cls]))
        keep = np.full((H, T, A1), -1, dtype=np.int64)
        sell = np.full((H, T, A1), -1, dtype=np.int64)
        buy = np.full((H, T), -1, dtype=np.int64)
        lim = case.limit_for(cls)
        for k in range(H):
            any_buy = bool(g.buyable[k].any())
            for t, a in zip(*np.nonzero(reach[k])):
                t, a = int(t), int(a)
                if a < g.max_age[t]:
                    c = g.keep_pw[k, t, a] + (g.end_pw[t, a + 1] if k == H - 1 else 0.0)
                    keep[k, t, a] = new_col(float(c), n_units, k)
                if any_buy and (g.sellable is None or g.sellable[t, a]):
                    sell[k, t, a] = new_col(float(-g.sale_pw[k, t, a]), n_units, k)
            for t2 in np.flatnonzero(g.buyable[k]):
                c = g.buy_pw[k, t2] + (g.end_pw[t2, 1] if k == H - 1 else 0.0)
                buy[k, t2] = new_col(float(c), n_units, k)
        # conservation at each state: keep + sell − inflow = inventory (k = 0) or 0
        for k in range(H):
            for t, a in zip(*np.nonzero(reach[k])):
                t, a = int(t), int(a)
                n0 = float(len(starts[cls].get((t, a), []))) if k == 0 else 0.0
                r = new_row(n0, n0)
                for j in (keep[k, t, a], sell[k, t, a]):
                    if j >= 0:
                        rows_i.append(r); cols_j.append(j); vals.append(1.0)
                if k > 0:
                    if a >= 1 and keep[k - 1, t, a - 1] >= 0:
                        rows_i.append(r); cols_j.append(int(keep[k - 1, t, a - 1])); vals.append(-1.0)
                    if a == 1 and buy[k - 1, t] >= 0:
                        rows_i.append(r); cols_j.append(int(buy[k - 1, t])); vals.append(-1.0)
        # market node, cap and limit rows
        for k in range(H):
            s_cols = sell[k][sell[k] >= 0]
            b_cols = buy[k][buy[k] >= 0]
            if len(s_cols) == 0 and len(b_cols) == 0:
                continue
            d = -market_rhs.get((cls, k), 0.0)  # the row is Σ sell − Σ buy
            r = new_row(d, d)
            for j in s_cols:
                rows_i.append(r); cols_j.append(int(j)); vals.append(1.0)
            for j in b_cols:
                rows_i.append(r); cols_j.append(int(j)); vals.append(-1.0)
            if cap_rows[k] >= 0:
                for t2 in np.flatnonzero(buy[k] >= 0):
                    j = int(buy[k, t2])
                    cap_coef[j] = float(g.price[k, t2])
                    rows_i.append(int(cap_rows[k])); cols_j.append(j); vals.append(cap_coef[j])
                if net:
                    for t, a in zip(*np.nonzero(sell[k] >= 0)):
                        j = int(sell[k, t, a])
                        cap_coef[j] = -float(g.value[k, t, a])
                        rows_i.append(int(cap_rows[k])); cols_j.append(j); vals.append(cap_coef[j])
            if lim is not None and len(b_cols):
                r = new_row(-INF, float(lim))
                limit_rows[(cls, k)] = r
                for j in b_cols:
                    rows_i.append(r); cols_j.append(int(j)); vals.append(1.0)
        cols[cls] = ColumnIndex(keep=keep, sell=sell, buy=buy)
    rules = rules_rows.rule_rows(case, graphs, cols, starts)
    placed = []
    for rr in rules.rows:
        r = new_row(rr.lo, rr.hi)
        placed.append((r, rr))
        rows_i.extend([r] * len(rr.cols)); cols_j.extend(rr.cols.tolist()); vals.extend(rr.coefs.tolist())

    n = len(cost)
    ri = np.asarray(rows_i, dtype=np.int32)
    cj = np.asarray(cols_j, dtype=np.int64)
    vv = np.asarray(vals, dtype=float)
    order = np.lexsort((ri, cj))
    ri, cj, vv = ri[order], cj[order], vv[order]
    a_start = np.zeros(n + 1, dtype=np.int32)
    np.add.at(a_start, cj + 1, 1)
    a_start = np.cumsum(a_start).astype(np.int32)
    lower = np.zeros(n)
    for j, lo in rules.col_lower.items():
        lower[j] = lo
    return CohortProgram(cost=np.asarray(cost), lower=lower, upper=np.asarray(upper), row_lower=np.asarray(row_lo),
                         row_upper=np.asarray(row_hi), a_start=a_start, a_index=ri, a_value=vv, cap_rows=cap_rows,
                         limit_rows=limit_rows, col_year=np.asarray(col_year), cols=cols, starts=starts,
                         graphs=graphs, cap_coef=cap_coef, market_rhs=market_rhs,
                         rule_rows=tuple(placed))


# ---------------------------------------------------------------------------
# HiGHS back end
# ---------------------------------------------------------------------------
def _new_highs():
    """A silent HiGHS instance (its banner goes to the C-level stdout on first use, so mute fd 1 then)."""
    import os

    import highspy

    sys.stdout.flush()
    saved = os.dup(1)
    try:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, 1)
        os.close(devnull)
        h = highspy.Highs()
        h.setOptionValue("output_flag", False)
    finally:
        os.dup2(saved, 1)
        os.close(saved)
    return h


def _highs(prog: CohortProgram, integer: bool):
    h = _new_highs()
    h.setOptionValue("threads", 2)
    cost, lower, upper = prog.cost, prog.lower, prog.upper
    a_start, a_index, a_value = prog.a_start, prog.a_index, prog.a_value
    n = prog.n_cols
    integrality = np.full(n, 1 if integer else 0, dtype=np.int32)
    h.passModel(n, prog.n_rows, len(a_value), 1, 1, 0.0, cost, lower, upper, prog.row_lower, prog.row_upper,
                a_start, a_index, a_value, integrality)
    return h


def watch_improvements(h, t0: float, history: list, floor_bound: float = -INF) -> None:
    """Record (seconds, gap) at each improving MIP solution, the gap taken against the better of
    the solver's dual bound and ``floor_bound`` (the LP bound)."""

    def on_improve(e):
        try:
            obj = float(e.data_out.objective_function_value)
            bnd = max(float(e.data_out.mip_dual_bound), floor_bound)
            history.append([round(time.perf_counter() - t0, 3), max(0.0, (obj - bnd) / max(abs(obj), 1e-9))])
        except Exception:  # a callback must never break the solve
            pass

    try:
        h.cbMipImprovingSolution.subscribe(on_improve)
    except AttributeError:  # older highspy without the callback API
        pass


def _status_name(h) -> str:
    return h.modelStatusToString(h.getModelStatus())


def _solve_lp(h):
    h.run()
    st = _status_name(h)
    if st != "Optimal":
        return None, None, st
    sol = h.getSolution()
    return np.asarray(sol.col_value), np.asarray(sol.row_dual), st


# ---------------------------------------------------------------------------
# fix-and-relax by year, guided by the LP
# ---------------------------------------------------------------------------
def _round_year(prog: CohortProgram, x: np.ndarray, k: int, case: Case, eager: int = 0) -> dict[int, float] | None:
    """Whole-unit values for every column of year k, within its cap and limits; None if none found.

    ``eager`` 0 rounds a fractional sale up from one half; 1 rounds every
    fractional sale up while the cap allows (largest fraction first); 2 does
    the same oldest state first.  Sales brought forward make room in the
    years after, which is what a failed rounding usually lacks.
    """
    vals: dict[int, float] = {}
    cands = []  # (frac, class, state) candidates for one more sale
    per_class = {}
    for cls, ci in prog.cols.items():
        keep, sell = ci.keep[k], ci.sell[k]
        sells = {}
        for t, a in zip(*np.nonzero((sell >= 0) | (keep >= 0))):
            t, a = int(t), int(a)
            js, jk = int(sell[t, a]), int(keep[t, a])
            n_in = (x[js] if js >= 0 else 0.0) + (x[jk] if jk >= 0 else 0.0)
            n_in = float(round(n_in))
            if jk < 0:
                sv = n_in
            else:
                xs = x[js] if js >= 0 else 0.0
                sv = float(math.floor(xs + 1e-6))
                if js >= 0 and xs - sv > 1e-6 and sv + 1 <= n_in:
                    cands.append((xs - sv, cls, (t, a)))
            sells[(t, a)] = [sv, n_in]
        per_class[cls] = sells
    # decide extra sales: the LP's larger fractions first, while cap and limit allow
    if eager == 2:
        cands.sort(key=lambda c: (-c[2][1], -c[0], c[1], c[2]))
    else:
        cands.sort(key=lambda c: (-c[0], c[1], c[2]))
    threshold = 0.5 if eager == 0 else 1e-6

    def class_buys(cls, n_sell):
        # purchases = sales + the class's size change that year (rules_rows.market_changes)
        n_sell = max(0.0, n_sell + prog.market_rhs.get((cls, k), 0.0))
        ci = prog.cols[cls]
        g = prog.graphs[cls]
        b = ci.buy[k]
        idx = np.flatnonzero(b >= 0)
        if n_sell == 0 or len(idx) == 0:
            return {int(t): 0.0 for t in idx}
        lp = np.array([x[b[t]] for t in idx])
        base = np.floor(lp + 1e-6)
        if base.sum() > n_sell:
            base = np.zeros_like(base)
        rem = n_sell - base.sum()
        frac = lp - base
        # largest remainder, cheaper type first on ties
        order = sorted(range(len(idx)), key=lambda j: (-frac[j], g.price[k, idx[j]]))
        for j in order:
            if rem <= 0:
                break
            base[j] += 1
            rem -= 1
        if rem > 0:  # more sales than the LP planned buys: the rest buy the cheapest type
            base[int(np.argmin([g.price[k, t] for t in idx]))] += rem
        return {int(t): float(v) for t, v in zip(idx, base)}

    def year_spend(choice):
        tot = 0.0
        for cls, sells in choice.items():
            g = prog.graphs[cls]
            n_sell = sum(v[0] for v in sells.values())
            buys = class_buys(cls, n_sell)
            tot += sum(g.price[k, t] * v for t, v in buys.items())
            if case.budget is not None and case.budget.basis == "net":
                tot -= sum(g.value[k, t, a] * v[0] for (t, a), v in sells.items())
        return tot

    cap_row = prog.cap_rows[k]
    cap = prog.row_upper[cap_row] if cap_row >= 0 else INF

    def limit_ok(cls, n_sell):
        lim = case.limit_for(cls)
        return lim is None or n_sell <= lim

    def ok(choice):
        for cls, sells in choice.items():
            if not limit_ok(cls, sum(v[0] for v in sells.values()) + prog.market_rhs.get((cls, k), 0.0)):
                return False
        return year_spend(choice) <= cap + 1e-6

    if not ok(per_class):
        # the floors (and the forced sales) alone break the cap or limit: defer the least-forced sales
        deferrable = []
        for cls, sells in per_class.items():
            for (t, a), v in sells.items():
                jk = int(prog.cols[cls].keep[k][t, a])
                js = int(prog.cols[cls].sell[k][t, a])
                if jk >= 0 and v[0] > 0:
                    deferrable.append((x[js] - v[0] + 1, cls, (t, a)))
        deferrable.sort(key=lambda c: (c[0], c[1], c[2]))
        for _, cls, st in deferrable:
            while per_class[cls][st][0] > 0 and not ok(per_class):
                per_class[cls][st][0] -= 1
            if ok(per_class):
                break
        if not ok(per_class):
            return None
    for frac, cls, st in cands:
        if frac < threshold:
            continue
        per_class[cls][st][0] += 1
        if not ok(per_class):
            per_class[cls][st][0] -= 1
    for cls, sells in per_class.items():
        ci = prog.cols[cls]
        n_sell = 0.0
        for (t, a), (sv, n_in) in sells.items():
            js, jk = int(ci.sell[k][t, a]), int(ci.keep[k][t, a])
            if js >= 0:
                vals[js] = sv
            if jk >= 0:
                vals[jk] = n_in - sv
            n_sell += sv
        for t, v in class_buys(cls, n_sell).items():
            vals[int(ci.buy[k][t])] = v
    return vals


def fix_and_relax(prog: CohortProgram, case: Case, h, x: np.ndarray, deadline: float, log=None,
                  max_backtracks: int | None = None):
    """Round the LP solution year by year, re-solving the LP for the later years.

    A year is rounded as the LP suggests first, then more eagerly (see
    :func:`_round_year`) when the later years would become infeasible; when no
    rounding of a year works, the year before is undone and rounded more
    eagerly (at most ``max_backtracks`` times, default twice the horizon).

    Returns the integral solution vector, or None when no rounding is found
    (the MIP solver then takes over).
    """
    H = case.study.horizon
    lower = prog.lower.copy()
    upper = prog.upper.copy()
    x = x.copy()
    budget = 2 * H if max_backtracks is None else max_backtracks
    stack: list[tuple[np.ndarray, np.ndarray, int, np.ndarray]] = []  # per fixed year: idx, values, mode, x before
    k, first_mode, backtracks = 0, 0, 0
    while k < H:
        fixed = False
        for eager in range(first_mode, 3):
            if time.perf_counter() > deadline:
                return None
            vals = _round_year(prog, x, k, case, eager)
            if vals is None:
                continue
            idx = np.fromiter(vals.keys(), dtype=np.int32, count=len(vals))
            v = np.fromiter(vals.values(), dtype=float, count=len(vals))
            changed = bool(np.any(np.abs(x[idx] - v) > 1e-7))
            h.changeColsBounds(len(idx), idx, v, v)
            if not changed or k == H - 1:
                stack.append((idx, v, eager, x.copy()))
                x[idx] = v
                fixed = True
                break
            xn, _, st = _solve_lp(h)
            if xn is not None:
                stack.append((idx, v, eager, x))
                x = xn
                fixed = True
                break
            # undo this year's fixing and round more eagerly
            h.changeColsBounds(len(idx), idx, lower[idx], upper[idx])
        if fixed:
            k, first_mode = k + 1, 0
            continue
        if not stack or backtracks >= budget:
            if log:
                log(f"year {case.study.start_year + k}: no rounding keeps the later years feasible")
            _solve_lp(h)
            return None
        # undo the year before and round it more eagerly
        idx, _, mode, x = stack.pop()
        h.changeColsBounds(len(idx), idx, lower[idx], upper[idx])
        k, first_mode = k - 1, mode + 1
        backtracks += 1
    if log and backtracks:
        log(f"fix-and-relax needed {backtracks} backtrack(s)")
    return np.round(x)


# ---------------------------------------------------------------------------
# flows → unit paths
# ---------------------------------------------------------------------------
def flows_to_groups(prog: CohortProgram, x: np.ndarray, case: Case, uncapped_sols: dict) -> list[PathGroup]:
    """Assign integral cohort flows to unit names and return their paths.

    Within a state the units keep their inventory order and the first ones are
    sold (units an order ``replaces`` first in their year, last before it); the
    year's sold units, oldest state first, take the year's purchases in the case
    order of types.  Purchases beyond the sales are new units (named
    ``<class>+<year>#n``); sales beyond the purchases leave without a replacement.
    """
    H = case.study.horizon
    y0 = case.study.start_year
    leaves = {nm: o.year - y0 for o in case.orders for nm in o.replaces}
    groups: dict = {}
    for cls, ci in prog.cols.items():
        g = prog.graphs[cls]
        order = {}
        at: dict[tuple[int, int], list[str]] = {}
        origin = {}
        for (t, a), names in prog.starts[cls].items():
            at[(t, a)] = list(names)
            for nm in names:
                origin[nm] = (t, a)
        for j, nm in enumerate(nm for u in case.units_of(cls) for nm in u.names()):
            order[nm] = j
        steps: dict[str, list] = {nm: [] for nm in order}
        for k in range(H):
            nxt: dict[tuple[int, int], list[str]] = {}
            sold: list[tuple[int, int, str]] = []

            def rank(nm, k=k):
                due = leaves.get(nm)
                return (0 if due == k else 1 if due is None else 2, order[nm])

            for (t, a) in sorted(at, key=lambda s: (-s[1], s[0])):
                names = sorted(at[(t, a)], key=rank)
                js = int(ci.sell[k][t, a]) if a < ci.sell.shape[2] else -1
                n_sell = int(round(x[js])) if js >= 0 else 0
                for nm in names[:n_sell]:
                    sold.append((t, a, nm))
                for nm in names[n_sell:]:
                    steps[nm].append(chain.Step(k, t, a, chain.KEEP))
                    nxt.setdefault((t, a + 1), []).append(nm)
            buys = []
            for t2 in range(len(g.types)):
                jb = int(ci.buy[k][t2])
                if jb >= 0:
                    buys.extend([t2] * int(round(x[jb])))
            if len(buys) - len(sold) != int(round(prog.market_rhs.get((cls, k), 0.0))):
                raise RuntimeError(f"cohort flows do not balance in {cls} {y0 + k}")
            for (t, a, nm), t2 in zip(sold, buys):
                steps[nm].append(chain.Step(k, t, a, t2))
                nxt.setdefault((t2, 1), []).append(nm)
            for t, a, nm in sold[len(buys):]:
                steps[nm].append(chain.Step(k, t, a, chain.SELL))
            for j, t2 in enumerate(buys[len(sold):], start=1):
                nm = f"{cls}+{y0 + k}#{j}"
                order[nm], origin[nm] = len(order), (chain.NEW, chain.NEW)
                steps[nm] = [chain.Step(k, chain.NEW, chain.NEW, t2)]
                nxt.setdefault((t2, 1), []).append(nm)
            at = nxt
        sol = uncapped_sols[cls]
        for nm, st in steps.items():
            key = (cls, origin[nm], tuple(st))
            if key not in groups:
                groups[key] = [st, [], origin[nm], chain.flexibility(sol, st)]
            groups[key][1].append(nm)
    return [PathGroup(class_=cls, steps=tuple(st), units=tuple(names), start=start, flex=tuple(flex))
            for (cls, _, _), (st, names, start, flex) in groups.items()]


def _fits(plan: Plan, case: Case) -> bool:
    """True when a plan respects every cap and limit."""
    for y in plan.years:
        if y.slack is not None and y.slack < -1e-6:
            return False
    for lim in case.limits:
        for k in range(case.study.horizon):
            n = sum(1 for u in plan.units if u.class_ == lim.class_
                    for e in u.events if e.year == case.study.start_year + k)
            if n > lim.max_buys_per_year:
                return False
    return True


# ---------------------------------------------------------------------------
# CBC back end (through pulp)
# ---------------------------------------------------------------------------
def _pulp_problem(prog: CohortProgram, integer: bool):
    import pulp

    prob = pulp.LpProblem("cohort_flow", pulp.LpMinimize)
    cat = pulp.LpInteger if integer else pulp.LpContinuous
    xs = [pulp.LpVariable(f"x{j}", lowBound=float(prog.lower[j]), upBound=float(prog.upper[j]), cat=cat)
          for j in range(prog.n_cols)]
    prob += pulp.LpAffineExpression(zip(xs, prog.cost.tolist()))
    rows: list[list] = [[] for _ in range(prog.n_rows)]
    for j in range(prog.n_cols):
        for p in range(prog.a_start[j], prog.a_start[j + 1]):
            rows[prog.a_index[p]].append((xs[j], float(prog.a_value[p])))
    cons = []
    for r, terms in enumerate(rows):
        expr = pulp.LpAffineExpression(terms)
        lo, hi = prog.row_lower[r], prog.row_upper[r]
        if lo == hi:
            c = expr == lo
        elif np.isfinite(hi):
            c = expr <= hi
        else:
            c = expr >= lo
        prob += c, f"r{r}"
        cons.append(prob.constraints[f"r{r}"])
    return prob, xs, cons


def _solve_cbc(prog: CohortProgram, time_limit: float, gap: float, warm: np.ndarray | None):
    """CBC through pulp: (x or None, status, proven lower bound or None).

    pulp reports "Optimal" also when CBC stopped within its gap tolerance, so the proof is read
    from CBC's log: "Optimal" here only when CBC proved the plan optimal; otherwise the bound is the
    "Lower bound" CBC logs (None when it logs none).
    """
    import os
    import tempfile

    import pulp

    prob, xs, _ = _pulp_problem(prog, integer=True)
    if warm is not None:
        for v, val in zip(xs, warm):
            v.setInitialValue(float(val))
    with tempfile.TemporaryDirectory(prefix="tenure-cbc-") as tmp:
        log_path = os.path.join(tmp, "cbc.log")
        solver = pulp.PULP_CBC_CMD(msg=False, timeLimit=max(1, int(time_limit)), gapRel=gap,
                                   warmStart=warm is not None, logPath=log_path)
        prob.solve(solver)
        try:
            with open(log_path, encoding="utf-8", errors="replace") as fh:
                log = fh.read()
        except OSError:
            log = ""
    status = pulp.LpStatus[prob.status]
    if status not in ("Optimal",) and prob.sol_status not in (1, 2):
        return None, status, None
    x = np.round(np.array([v.value() or 0.0 for v in xs]))
    result = next((ln for ln in log.splitlines() if ln.startswith("Result - ")), "")
    proven = prob.sol_status == 1 and "Optimal solution found" in result and "tolerance" not in result
    if proven:
        return x, "Optimal", float(prog.cost @ x)
    bound = None
    for ln in log.splitlines():
        if ln.startswith("Lower bound:"):
            try:
                bound = float(ln.split(":", 1)[1])
            except ValueError:
                bound = None
    return x, "Feasible", bound


def _lp_cbc(prog: CohortProgram):
    import pulp

    prob, xs, cons = _pulp_problem(prog, integer=False)
    prob.solve(pulp.PULP_CBC_CMD(msg=False))
    if pulp.LpStatus[prob.status] != "Optimal":
        return None, None, pulp.LpStatus[prob.status]
    x = np.array([v.value() or 0.0 for v in xs])
    duals = np.array([c.pi if c.pi is not None else 0.0 for c in cons])
    return x, duals, "Optimal"


# ---------------------------------------------------------------------------
# infeasibility: the elastic program
# ---------------------------------------------------------------------------
def _shortfall(case: Case, graphs, time_limit: float, solver: str, uncapped_cost: float):
    """Least extra capital per year (integer flows) that lets the caps be met.

    Returns ``(extra, x, prog, proven)``: the extra capital by planning year
    (None when no point was found), the flows of the plan under the raised
    caps, the program, and whether the solver proved that *some* extra capital
    is needed (its dual bound on the extra is above zero), i.e. that no plan
    fits the caps as they are.
    """
    prog = build_program(case, graphs)
    H = case.study.horizon
    cap_years = [k for k in range(H) if prog.cap_rows[k] >= 0]
    # one elastic column per capped year: cost 1 per unit of money, coefficient −1 in its cap row
    n0 = prog.n_cols
    m = len(cap_years)
    # the flows' present cost, scaled far down, only breaks ties between plans needing the same extra capital
    cost = np.concatenate([prog.cost * 1e-6, np.ones(m)])
    lower = np.concatenate([prog.lower, np.zeros(m)])
    upper = np.concatenate([prog.upper, np.full(m, INF)])
    starts = list(prog.a_start)
    index = list(prog.a_index)
    value = list(prog.a_value)
    for k in cap_years:
        index.append(int(prog.cap_rows[k]))
        value.append(-1.0)
        starts.append(len(index))
    el = CohortProgram(cost=cost, lower=lower, upper=upper, row_lower=prog.row_lower, row_upper=prog.row_upper,
                       a_start=np.asarray(starts, dtype=np.int32), a_index=np.asarray(index, dtype=np.int32),
                       a_value=np.asarray(value), cap_rows=prog.cap_rows, limit_rows=prog.limit_rows,
                       col_year=np.concatenate([prog.col_year, np.asarray(cap_years)]), cols=prog.cols,
                       starts=prog.starts, graphs=graphs, market_rhs=prog.market_rhs)
    h = _highs(el, integer=True)
    integ = np.concatenate([np.ones(n0, dtype=np.int32), np.zeros(m, dtype=np.int32)])
    h.changeColsIntegrality(n0 + m, np.arange(n0 + m, dtype=np.int32), integ)
    h.setOptionValue("time_limit", float(max(time_limit, 5.0)))
    # any feasible point of the elastic program is a plan under the raised caps, so its extra capital
    # always fixes the case; the gap only bounds how far above the least extra it may be
    h.setOptionValue("mip_rel_gap", 1e-3)
    h.run()
    info = h.getInfo()
    if info.primal_solution_status != 2:
        if _status_name(h) == "Infeasible":  # even unlimited capital does not help: a limit binds
            raise InfeasibleLimits()
        raise InfeasibleLimits(f"no plan was found within {time_limit:.0f} s, even with extra capital; "
                               "allow more time (--time-limit) or check the caps and limits")
    xs = np.asarray(h.getSolution().col_value)
    extra = np.zeros(H)
    for j, k in enumerate(cap_years):
        extra[k] = math.ceil(max(0.0, xs[n0 + j]) - 1e-6) if xs[n0 + j] > 1e-6 else 0.0
    # every plan costs at least the uncapped optimum, so the tie-break term is at least 1e-6 of it
    least_extra = float(info.mip_dual_bound) - 1e-6 * uncapped_cost
    return extra, np.round(xs[:n0]), prog, least_extra > 0.5


# ---------------------------------------------------------------------------
# the layer's entry point
# ---------------------------------------------------------------------------
def solve_capped(case: Case, solver: str = "highs", time_limit: float = 120.0, gap: float = 0.005,
                 progress: bool = False) -> Plan:
    """Least-cost fleet plan under annual capital caps and purchase limits.

    Parameters
    ----------
    case : Case
    solver : {"highs", "cbc"}
        MIP solver for the last stage (the LP bound and fix-and-relax use HiGHS
        with "highs", CBC's LP with "cbc").
    time_limit : float
        Seconds for the whole solve [s].
    gap : float
        Relative gap at which to stop (0.005 = 0.5 %).
    progress : bool
        Print one progress line per stage on stderr.

    Returns
    -------
    Plan
        status "optimal", "feasible" (with ``lower_bound`` and ``gap``), or
        "infeasible" (with ``shortfall`` and the plan under the raised caps).
    """
    if solver not in SOLVERS:
        raise ValueError(f"solver must be one of {SOLVERS}, got {solver!r}")
    t0 = time.perf_counter()
    deadline = t0 + time_limit
    stats: dict = {"solver": solver}

    def log(msg):
        if progress:
            print(f"  [{time.perf_counter() - t0:6.1f} s] {msg}", file=sys.stderr, flush=True)

    graphs = build_graphs(case)
    sols = {c: chain.backward(g) for c, g in graphs.items()}
    free = solve_uncapped(case, graphs, sols)
    uncapped_cost = free.present_cost
    if _fits(free, case) and not rules_check.breaks(case, free):
        log("the uncapped plan fits every cap and limit: it is optimal")
        stats.update(first_plan_seconds=round(time.perf_counter() - t0, 3), caps_binding=False)
        return free.with_(uncapped_cost=uncapped_cost, method="recursion (caps not binding)",
                          stats={**free.stats, **stats})
    prog = build_program(case, graphs)
    stats.update(columns=prog.n_cols, rows=prog.n_rows)
    log(f"cohort program: {prog.n_cols} columns, {prog.n_rows} rows")

    # LP relaxation: bound and shadow prices
    if solver == "highs":
        h = _highs(prog, integer=False)
        x_lp, duals, st = _solve_lp(h)
    else:
        h = None
        x_lp, duals, st = _lp_cbc(prog)
    stats["lp_seconds"] = round(time.perf_counter() - t0, 3)
    if x_lp is None:
        log(f"LP relaxation: {st} — diagnosing the shortfall")
        return _infeasible(case, graphs, sols, uncapped_cost, solver, deadline, t0, stats,
                           proven=st == "Infeasible")
    lp_bound = float(prog.cost @ x_lp)
    integral = bool(np.all(np.abs(x_lp - np.round(x_lp)) < 1e-7))
    shadow = {case.study.start_year + k: float(max(0.0, -duals[prog.cap_rows[k]]))
              for k in range(case.study.horizon) if prog.cap_rows[k] >= 0}
    log(f"LP bound {lp_bound:,.0f}")

    best_x, best_cost, status_word = None, INF, "feasible"
    if integral:  # a network flow (e.g. class sizes without caps): the LP optimum is a whole-unit plan
        best_x, best_cost = np.round(x_lp), float(prog.cost @ np.round(x_lp))
        stats["first_plan_seconds"] = round(time.perf_counter() - t0, 3)
        log("the LP relaxation is integral: its plan is optimal")
    elif solver == "highs":
        xr = fix_and_relax(prog, case, h, x_lp, deadline, log)
        if xr is not None and case.coupled and not rules_rows.satisfies(prog, xr):
            log("fix-and-relax plan breaks a coupling row: the MIP solver takes over")
            xr = None
        if xr is not None:
            best_x, best_cost = xr, float(prog.cost @ xr)
            stats["first_plan_seconds"] = round(time.perf_counter() - t0, 3)
            log(f"fix-and-relax plan {best_cost:,.0f} (gap {(best_cost - lp_bound) / abs(best_cost):.3%})")
    bound = lp_bound
    cur_gap = (best_cost - bound) / abs(best_cost) if best_x is not None else INF
    history = stats.setdefault("gap_history", [])
    if best_x is not None:
        history.append([round(time.perf_counter() - t0, 3), cur_gap])
    if cur_gap > gap and time.perf_counter() < deadline:
        left = deadline - time.perf_counter()
        log(f"MIP ({solver}) for up to {left:.0f} s")
        if solver == "highs":
            hm = _highs(prog, integer=True)
            hm.setOptionValue("time_limit", float(max(left, 1.0)))
            hm.setOptionValue("mip_rel_gap", float(gap))
            watch_improvements(hm, t0, history, lp_bound)
            if best_x is not None:
                sol = hm.getSolution()
                sol.col_value = list(best_x)
                sol.value_valid = True
                hm.setSolution(sol)
            hm.run()
            info = hm.getInfo()
            if info.primal_solution_status == 2:
                xm = np.round(np.asarray(hm.getSolution().col_value))
                cm = float(prog.cost @ xm)
                if cm < best_cost:
                    best_x, best_cost = xm, cm
                    stats.setdefault("first_plan_seconds", round(time.perf_counter() - t0, 3))
                bound = max(bound, float(info.mip_dual_bound))
            elif _status_name(hm) == "Infeasible":
                return _infeasible(case, graphs, sols, uncapped_cost, solver, deadline, t0, stats, proven=True)
        else:
            xm, st, cbc_bound = _solve_cbc(prog, left, gap, best_x)
            if xm is not None:
                cm = float(prog.cost @ xm)
                if cm < best_cost:
                    best_x, best_cost = xm, cm
                    stats.setdefault("first_plan_seconds", round(time.perf_counter() - t0, 3))
                if st == "Optimal":  # proven by CBC, not merely within its gap tolerance
                    bound = max(bound, best_cost)
                elif cbc_bound is not None:
                    bound = max(bound, cbc_bound)
            elif st == "Infeasible":
                return _infeasible(case, graphs, sols, uncapped_cost, solver, deadline, t0, stats, proven=True)
    if best_x is None:
        stats["seconds"] = round(time.perf_counter() - t0, 3)
        return _infeasible(case, graphs, sols, uncapped_cost, solver, deadline, t0, stats)
    cur_gap = max(0.0, (best_cost - bound) / abs(best_cost))
    history.append([round(time.perf_counter() - t0, 3), cur_gap])
    status_word = "optimal" if cur_gap <= 1e-9 else "feasible"
    groups = flows_to_groups(prog, best_x, case, sols)
    stats["seconds"] = round(time.perf_counter() - t0, 3)
    plan = assemble(case, graphs, groups, status=status_word, method="integer program",
                    lower_bound=min(bound, best_cost), uncapped_cost=uncapped_cost, shadow=shadow,
                    message="shadow prices from the LP relaxation", stats=stats)
    log(f"plan {plan.present_cost:,.0f}, gap {plan.gap:.3%}, status {plan.status}")
    return plan


def _infeasible(case, graphs, sols, uncapped_cost, solver, deadline, t0, stats, proven: bool = False):
    """The elastic diagnosis: shortfall by year, forcing units, and the plan under the raised caps.

    ``proven``: the caller already proved that no plan fits (the LP relaxation
    or the MIP solver said so).  Otherwise the status is "infeasible" only when
    the elastic program proves that extra capital is needed, and "unsolved"
    when it cannot tell within the time left.
    """
    left = max(5.0, deadline - time.perf_counter())
    if case.coupled:
        reason = rules_check.diagnose(case, graphs, left)
        if reason:
            raise InfeasibleLimits(reason)
    extra, x, prog, needs_extra = _shortfall(case, graphs, left, solver, uncapped_cost)
    proven = proven or needs_extra
    y0 = case.study.start_year
    shortfall = [(y0 + k, float(extra[k])) for k in range(case.study.horizon) if extra[k] > 0]
    groups = flows_to_groups(prog, x, case, sols)
    stats["seconds"] = round(time.perf_counter() - t0, 3)
    if proven:
        status, message = "infeasible", ("no plan fits the caps (proven); the plan shown fits the caps raised "
                                         "by the shortfall")
    else:
        status, message = "unsolved", (f"no plan within the caps was found in {stats['seconds']:g} s and none is "
                                       "proven impossible; raising the caps by the shortfall is enough for the "
                                       "plan shown (a longer --time-limit may find a plan within the caps)")
    plan = assemble(case, graphs, groups, status=status, method="integer program (elastic)",
                    uncapped_cost=uncapped_cost, shortfall=shortfall, message=message, stats=stats)
    short_years = {y for y, _ in shortfall}
    forcing = []
    for u in plan.units:
        for e in u.events:
            if e.year in short_years and e.from_age >= case.type(e.from_type).max_age:
                forcing.append(f"{u.unit} ({e.year}, age {e.from_age})")
    return plan.with_(forcing_units=tuple(forcing))


class InfeasibleLimits(Exception):
    """No plan at all: even unlimited capital does not help (a purchase limit binds), or none was found in time."""

    def __init__(self, message: str | None = None):
        super().__init__(message or "no plan exists even with unlimited capital: the [[limit]] purchase limits are "
                         "too low for the units that reach max_age (raise max_buys_per_year)")
