"""Fix-and-relax by year, guided by the LP: a whole-unit plan from the LP relaxation.

Year by year, the LP's sells and buys are rounded to whole units within that
year's cap and limits, fixed (as column bounds of the back end's LP), and the LP
is re-solved for the years after.  Written against :class:`~tenure.fleet.backend.Backend`,
so every back end runs it.  A relax-and-fix scheme for lot sizing and scheduling
(common practice): see e.g. L. A. Wolsey, *Integer Programming*, Wiley 1998, §12.
"""

from __future__ import annotations

import math
import time

import numpy as np

from ..model import Case
from .backend import Backend
from .program import CohortProgram
from .rules_rows import satisfies
from .yearmip import solve_years

INF = math.inf
#: the stack mode of a year decided by its own integer program (after the rounding modes 0–2)
YEAR_MIP_MODE = 3
#: how many years before a failed year are decided again with it, tried in turn
WINDOWS = (0, 2, 5)


def _floors(prog: CohortProgram, x: np.ndarray, k: int):
    """Year k's sales rounded down, per class and state ``[sales, units in]``, and the candidates
    ``(fraction, class, state)`` for one more sale."""
    cands = []
    per_class = {}
    for cls, ci in prog.cols.items():
        keep, sell = ci.keep[k], ci.sell[k]
        ov = ci.overhaul[k] if ci.overhaul is not None else None
        sells = {}
        for t, a in zip(*np.nonzero((sell >= 0) | (keep >= 0))):
            t, a = int(t), int(a)
            js, jk = int(sell[t, a]), int(keep[t, a])
            jo = int(ov[t, a]) if ov is not None else -1
            n_in = (x[js] if js >= 0 else 0.0) + (x[jk] if jk >= 0 else 0.0) + (x[jo] if jo >= 0 else 0.0)
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
    return per_class, cands


def _overhauls(prog: CohortProgram, x: np.ndarray, k: int, cls: str, sells: dict, up=frozenset()) -> dict:
    """Whole overhauls of year k in ``cls`` per state: the LP's rounded down (up for the states in
    ``up``), at most the units not sold."""
    ov = prog.cols[cls].overhaul
    if ov is None:
        return {}
    out = {}
    for (t, a), (sv, n_in) in sells.items():
        jo = int(ov[k][t, a])
        if jo >= 0:
            n = math.floor(x[jo] + 1e-6) + ((cls, (t, a)) in up and x[jo] - math.floor(x[jo] + 1e-6) > 1e-6)
            out[(t, a)] = float(max(0.0, min(n, n_in - sv)))
    return out


def _overhaul_candidates(prog: CohortProgram, x: np.ndarray, k: int) -> list:
    """(fraction, class, state) of year k's fractional overhauls, largest fraction first."""
    out = []
    for cls, ci in prog.cols.items():
        if ci.overhaul is None:
            continue
        for t, a in zip(*np.nonzero(ci.overhaul[k] >= 0)):
            f = x[ci.overhaul[k][t, a]]
            f -= math.floor(f + 1e-6)
            if f > 1e-6:
                out.append((float(f), cls, (int(t), int(a))))
    return sorted(out, key=lambda c: (-c[0], c[1], c[2]))


def _buys(prog: CohortProgram, x: np.ndarray, k: int, cls: str, sells: dict, case: Case,
          memo: dict | None = None) -> dict[int, float]:
    """Whole purchases of year k in ``cls`` for the sales ``sells`` plus the class's size change that year
    (``prog.market_rhs``, met in the first job): per job when the graph has jobs (a replacement keeps the
    job's usage).  ``memo`` caches the answer per (class, job, purchases): a pure function of them within
    one year, which the year's checks ask again and again."""
    g = prog.graphs[cls]
    change = prog.market_rhs.get((cls, k), 0.0)
    jobs = [None] if g.job is None else list(g.job_rows())
    out: dict[int, float] = {}
    for j, rows in enumerate(jobs):
        n = sum(v[0] for (t, _), v in sells.items() if rows is None or g.job[t] == j)
        n = max(0.0, n + (change if j == 0 else 0.0))
        key = (cls, j, n)
        if memo is None or key not in memo:
            got = _class_buys(prog, x, k, cls, n, case, rows)
            if memo is None:
                out.update(got)
                continue
            memo[key] = got
        out.update(memo[key])
    return out


def _class_buys(prog: CohortProgram, x: np.ndarray, k: int, cls: str, n_sell: float, case: Case,
                rows: np.ndarray | None = None) -> dict[int, float]:
    """``n_sell`` whole purchases of year k in ``cls`` (among ``rows``, default all): the LP's floors, then
    the largest remainders (cheaper type first on ties); purchases beyond the LP's buy the cheapest type.
    Under coupling rules (targets count types) they follow the LP's type mix one unit at a time."""
    g = prog.graphs[cls]
    b = prog.cols[cls].buy[k]
    idx = np.flatnonzero(b >= 0)
    if rows is not None:
        idx = idx[np.isin(idx, rows)]
    if n_sell == 0 or len(idx) == 0:
        return {int(t): 0.0 for t in idx}
    lp = np.array([x[b[t]] for t in idx])
    if case.coupled:
        return _follow_mix(lp, idx, g.price[k, idx], n_sell)
    base = np.floor(lp + 1e-6)
    if base.sum() > n_sell:
        base = np.zeros_like(base)
    rem = n_sell - base.sum()
    frac = lp - base
    order = sorted(range(len(idx)), key=lambda j: (-frac[j], g.price[k, idx[j]]))
    for j in order:
        if rem <= 0:
            break
        base[j] += 1
        rem -= 1
    if rem > 0:
        base[int(np.argmin([g.price[k, t] for t in idx]))] += rem
    return {int(t): float(v) for t, v in zip(idx, base)}


def _year_ok(prog: CohortProgram, x: np.ndarray, k: int, case: Case, choice: dict, up=frozenset(),
             memo: dict | None = None) -> bool:
    """True when the sales ``choice`` (and the purchases they imply) keep year k within its purchase
    limits and its cap (gross: prices; net: less the market values received)."""
    for cls, sells in choice.items():
        lim = case.limit_for(cls)
        if lim is not None and sum(v[0] for v in sells.values()) + prog.market_rhs.get((cls, k), 0.0) > lim:
            return False
    cap_row = prog.cap_rows[k]
    cap = prog.row_upper[cap_row] if cap_row >= 0 else INF
    net = case.budget is not None and case.budget.basis == "net"
    tot = 0.0
    for cls, sells in choice.items():
        g = prog.graphs[cls]
        buys = _buys(prog, x, k, cls, sells, case, memo)
        tot += sum(g.price[k, t] * v for t, v in buys.items())
        tot += sum(g.overhaul_cost[k, t, a] * v for (t, a), v in _overhauls(prog, x, k, cls, sells, up).items())
        if net:
            tot -= sum(g.value[k, t, a] * v[0] for (t, a), v in sells.items())
    return tot <= cap + 1e-6


def _defer(prog: CohortProgram, x: np.ndarray, k: int, per_class: dict, ok) -> bool:
    """Defer the least-forced sales (those the LP sold least of) until ``ok``; False if it never is."""
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
            return True
    return ok(per_class)


def _round_year(prog: CohortProgram, x: np.ndarray, k: int, case: Case, eager: int = 0) -> dict[int, float] | None:
    """Whole-unit values for every column of year k, within its cap and limits; None if none found.

    ``eager`` 0 rounds a fractional sale up from one half; 1 rounds every
    fractional sale up while the cap allows (largest fraction first); 2 does
    the same oldest state first.  Sales brought forward make room in the
    years after, which is what a failed rounding usually lacks.
    """
    per_class, cands = _floors(prog, x, k)
    # decide extra sales: the LP's larger fractions first, while cap and limit allow
    if eager == 2:
        cands.sort(key=lambda c: (-c[2][1], -c[0], c[1], c[2]))
    else:
        cands.sort(key=lambda c: (-c[0], c[1], c[2]))
    threshold = 0.5 if eager == 0 else 1e-6

    memo: dict = {}
    up: set = set()  # states whose fractional overhaul is rounded up

    def ok(choice):
        return _year_ok(prog, x, k, case, choice, up, memo)

    # the floors (and the forced sales) alone may break the cap or limit: then defer some
    if not ok(per_class) and not _defer(prog, x, k, per_class, ok):
        return None
    for frac, cls, st in cands:
        if frac < threshold:
            continue
        per_class[cls][st][0] += 1
        if not ok(per_class):
            per_class[cls][st][0] -= 1
    for frac, cls, st in _overhaul_candidates(prog, x, k):
        if frac >= 0.5:
            up.add((cls, st))
            if not ok(per_class):
                up.discard((cls, st))
    vals: dict[int, float] = {}
    for cls, sells in per_class.items():
        ci = prog.cols[cls]
        ovs = _overhauls(prog, x, k, cls, sells, up)
        for (t, a), (sv, n_in) in sells.items():
            js, jk = int(ci.sell[k][t, a]), int(ci.keep[k][t, a])
            no = ovs.get((t, a), 0.0)
            if js >= 0:
                vals[js] = sv
            if jk >= 0:
                vals[jk] = n_in - sv - no
            if no or (t, a) in ovs:
                vals[int(ci.overhaul[k][t, a])] = no
        for t, v in _buys(prog, x, k, cls, sells, case).items():
            vals[int(ci.buy[k][t])] = v
    return vals


def _follow_mix(lp: np.ndarray, idx: np.ndarray, price: np.ndarray, n_buy: float) -> dict[int, float]:
    """``n_buy`` whole purchases spread over types ``idx``: each to the type with the most LP purchases
    not yet given (cheaper first on ties), so a type the LP does not buy is bought only past its total."""
    base = np.zeros(len(idx))
    for _ in range(int(round(n_buy))):
        j = min(range(len(idx)), key=lambda j: (-(lp[j] - base[j]), price[j]))
        base[j] += 1
    return {int(t): float(v) for t, v in zip(idx, base)}


def fix_and_relax(prog: CohortProgram, case: Case, be: Backend, x: np.ndarray, deadline: float, log=None,
                  max_backtracks: int | None = None, partial: list | None = None, year_mip: bool = True):
    """Round the LP solution year by year, re-solving the LP for the later years.

    A year is rounded as the LP suggests first, then more eagerly (see
    :func:`_round_year`) when the later years would become infeasible; when no
    rounding of a year works (``year_mip`` True), the year is decided by its own
    integer program, the later years relaxed (:mod:`tenure.fleet.yearmip`), and
    failing that together with the ``WINDOWS`` years before it; when that fails
    too, the year before is undone and rounded more eagerly (at most
    ``max_backtracks`` times, default twice the horizon).

    Returns the integral solution vector, or None when no rounding is found
    (the MIP solver then takes over).  On failure, ``partial`` (a list, when given) receives the
    deepest prefix of fixed years seen as ``(columns, values)``, a partial start for the MIP.
    The back end's column bounds are restored either way.
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
                _release(be, stack, lower, upper)
                return None
            vals = _round_year(prog, x, k, case, eager)
            if vals is None:
                continue
            idx = np.fromiter(vals.keys(), dtype=np.int32, count=len(vals))
            v = np.fromiter(vals.values(), dtype=float, count=len(vals))
            changed = bool(np.any(np.abs(x[idx] - v) > 1e-7))
            be.set_bounds(idx, v, v)
            if not changed or k == H - 1:
                xk = x.copy()
                xk[idx] = v
                # the last year has no later LP to check it: its rows are checked here
                if changed and not satisfies(prog, xk):
                    be.set_bounds(idx, lower[idx], upper[idx])
                    continue
                stack.append((idx, v, eager, x))
                x = xk
                fixed = True
                break
            xn = be.solve_lp().x
            if xn is not None:
                stack.append((idx, v, eager, x))
                x = xn
                fixed = True
                break
            # undo this year's fixing and round more eagerly
            be.set_bounds(idx, lower[idx], upper[idx])
        for back in WINDOWS if not fixed and year_mip and first_mode <= YEAR_MIP_MODE else ():
            fixed, x = _fix_by_window(prog, be, stack, lower, upper, x, k, back, deadline)
            if log:
                y = case.study.start_year + k
                log(f"year {y}: no rounding worked; the integer program of {y - back}–{y} "
                    + ("decided them" if fixed else "found no point that keeps the later years feasible"))
            if fixed:
                break
        if fixed:
            k, first_mode = k + 1, 0
            continue
        if partial is not None and sum(len(s[0]) for s in stack) > sum(len(c) for c, _ in partial):
            partial[:] = [(s[0].copy(), s[1].copy()) for s in stack]
        if not stack or backtracks >= budget:
            if log:
                log(f"year {case.study.start_year + k}: no rounding keeps the later years feasible")
            _release(be, stack, lower, upper)
            return None
        # undo the year before and round it more eagerly
        idx, _, mode, x = stack.pop()
        be.set_bounds(idx, lower[idx], upper[idx])
        k, first_mode = k - 1, mode + 1
        backtracks += 1
    if log and backtracks:
        log(f"fix-and-relax needed {backtracks} backtrack(s)")
    _release(be, stack, lower, upper)
    return np.round(x)


def _fix_by_window(prog: CohortProgram, be: Backend, stack: list, lower: np.ndarray, upper: np.ndarray,
                   x: np.ndarray, k: int, back: int, deadline: float) -> tuple[bool, np.ndarray]:
    """Years k−back … k from one integer program (:func:`~tenure.fleet.yearmip.solve_years`) when no
    rounding of year k worked: the ``back`` years before k are taken off ``stack`` and decided again
    with year k, the later years relaxed.  On success each year is fixed on the back end and pushed
    on ``stack`` (mode ``YEAR_MIP_MODE``); otherwise the stack and the bounds are as they were.
    Returns (fixed, the LP solution to go on from)."""
    back = min(back, len(stack))
    popped = stack[len(stack) - back:]
    del stack[len(stack) - back:]
    lo, up = lower.copy(), upper.copy()
    for idx, v, _, _ in stack:
        lo[idx], up[idx] = v, v
    for idx, _, _, _ in popped:
        be.set_bounds(idx, lower[idx], upper[idx])
    got = solve_years(prog, type(be), lo, up, range(k - back, k + 1), deadline)
    xn = None
    if got is not None:
        idx = np.concatenate([c for c, _ in got])
        v = np.concatenate([v for _, v in got])
        be.set_bounds(idx, v, v)
        xn = be.solve_lp().x
        if xn is None:
            be.set_bounds(idx, lower[idx], upper[idx])
    if xn is None:
        for idx, v, _, _ in popped:
            be.set_bounds(idx, v, v)
        stack.extend(popped)
        return False, x
    x0 = popped[0][3] if popped else x
    for c, v in got:
        stack.append((c, v, YEAR_MIP_MODE, x0))
    return True, xn


def _release(be: Backend, stack: list, lower: np.ndarray, upper: np.ndarray) -> None:
    """Give the fixed columns their own bounds back (the back end is left as it was loaded)."""
    if stack:
        idx = np.concatenate([s[0] for s in stack])
        be.set_bounds(idx, lower[idx], upper[idx])
