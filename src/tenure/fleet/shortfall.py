"""The elastic program: the least extra capital per year that lets the caps be met.

The cohort-flow program gets one extra column per capped year (cost 1 per unit
of money, coefficient −1 in its cap row, so it raises that cap); the flows stay
integral.  Any feasible point is a plan under the caps raised by its extra
columns; the solver's dual bound on the least extra capital proves, when above
zero, that no plan fits the caps as they are (elastic programming / phase-one
of the simplex method: common practice).
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass, replace

import numpy as np

from ..model import Case
from ..plan import InfeasibleLimits, NoPlanFound
from .backend import Backend, MIPResult
from .program import CohortProgram, build_program
from .windows import window_plan

#: the flows' present cost is scaled by this in the elastic program, so it only breaks ties
#: between plans that need the same extra capital
TIE_BREAK = 1e-6


@dataclass(frozen=True)
class Shortfall:
    """``extra`` (H,) whole units of money added to each year's cap [money, undiscounted];
    ``x`` the integral flows of the plan under the raised caps; ``prog`` the program they belong to;
    ``bound`` a proven lower bound on the least total extra capital [money, undiscounted] (0 when
    nothing is proven); ``proven`` True when that bound shows some extra capital is needed;
    ``least`` True when ``extra.sum()`` is proven least (within one unit of money or the gap)."""

    extra: np.ndarray
    x: np.ndarray
    prog: CohortProgram
    proven: bool
    bound: float = 0.0
    least: bool = False


#: the least total extra capital is taken as proven when the bound is within this of it [money] …
ABS_TOL = 1.0
#: … or within this relative gap
REL_TOL = 1e-4


def shortfall(case: Case, graphs, backend: type[Backend], time_limit: float, uncapped_cost: float = 0.0,
              gap: float = REL_TOL) -> Shortfall:
    """Solve the elastic program of ``case`` with ``backend`` for at most ``time_limit`` [s].

    Two stages on one program (lexicographic, common practice): (1) minimise the total extra
    capital Σ e_k alone, so the LP's and the solver's dual bounds *are* lower bounds on the least
    extra capital (no cost term mixed in that could lift the bound without any extra being needed),
    from a plan found by windows of years (:func:`_least_extra`); (2) with each
    e_k bounded by stage 1's values, minimise the flows' present cost from stage 1's point.
    ``uncapped_cost`` is accepted for compatibility and not used.

    Raises :class:`~tenure.plan.InfeasibleLimits` when even unlimited capital does not help and
    :class:`~tenure.plan.NoPlanFound` when no point is found in the time.
    """
    t0 = time.perf_counter()
    prog = build_program(case, graphs)
    el, years = prog.with_elastic_caps()
    n0, m = prog.n_cols, len(years)
    integrality = np.concatenate([np.ones(n0, dtype=np.int32), np.zeros(m, dtype=np.int32)])
    stage1 = _with_cost(el, np.concatenate([np.zeros(n0), np.ones(m)]))
    res = _least_extra(stage1, integrality, backend, t0 + max(0.6 * time_limit, 5.0), gap, el.cost)
    if res.x is None:
        if res.status == "infeasible":  # even unlimited capital does not help: a limit binds
            raise InfeasibleLimits()
        raise NoPlanFound(f"no plan was found within {time_limit:.0f} s, even with extra capital; "
                          "allow more time or check the caps and limits")
    extra = np.zeros(case.study.horizon)
    for j, k in enumerate(years):
        v = res.x[n0 + j]
        extra[k] = math.ceil(max(0.0, v) - 1e-6) if v > 1e-6 else 0.0
    total = float(extra.sum())
    bound = 0.0 if res.bound is None else max(0.0, float(res.bound))
    bound = min(bound, total)
    least = res.status == "optimal" or total - bound <= max(ABS_TOL, gap * total)
    x = np.round(res.x[:n0])
    left = time_limit - (time.perf_counter() - t0)
    if left > 1.0 and total > 0:
        x = _cheapest_under(el, n0, m, years, extra, integrality, backend, left, gap, res.x, x)
    return Shortfall(extra=extra, x=x, prog=prog, proven=bound > 0.5, bound=bound, least=least)


def _least_extra(stage1: CohortProgram, integrality, backend, deadline: float, gap: float,
                 flow_cost: np.ndarray | None = None) -> MIPResult:
    """Stage 1: the least total extra capital.  The LP bound, then a plan by windows of years
    (:mod:`tenure.fleet.windows`; the extra capital absorbs any overspend, so only time stops it) or,
    when the windows run out of time, the least-cost flows with the caps raised as far as they need
    (``flow_cost``: the flows' present cost), then the integer program from that plan while it is
    not proven least (within :data:`ABS_TOL` or ``gap``)."""
    be = backend(stage1, integrality)
    lp = be.solve_lp()
    if lp.status == "infeasible":  # even unlimited capital does not help
        return MIPResult("infeasible")
    lp_bound = float(stage1.cost @ lp.x) if lp.x is not None else -math.inf  # an LP not solved proves nothing
    # the windows' own gap as the proof's: on this objective a window's slack is the total's
    start = window_plan(stage1, backend, time.perf_counter() + 0.8 * (deadline - time.perf_counter()),
                        integrality, gap=max(gap, 1e-6))
    if start is None and flow_cost is not None:
        start = _overspend_start(stage1, integrality, backend, flow_cost)
    if start is not None:
        total = float(stage1.cost @ start)
        if total - lp_bound <= max(ABS_TOL, gap * total):
            return MIPResult("optimal", start, lp_bound)
    res = be.solve_mip(max(1.0, deadline - time.perf_counter()), 0.0, start)
    bound = max(lp_bound, res.bound if res.bound is not None else -math.inf)
    bound = None if math.isinf(bound) else bound
    if res.x is None:
        return res if start is None else MIPResult("feasible", start, bound)
    if start is not None and float(stage1.cost @ start) < float(stage1.cost @ res.x):
        return MIPResult(res.status, start, bound)
    return MIPResult(res.status, res.x, bound)


def _overspend_start(stage1: CohortProgram, integrality, backend, flow_cost: np.ndarray) -> np.ndarray | None:
    """The least-cost flows when extra capital is free (the classes' flows are then a network, whose
    LP optimum is whole units when no coupling rule binds), each year's extra set to its overspend;
    None when that LP optimum is not whole."""
    n0 = int(np.count_nonzero(integrality))
    free = replace(stage1, cost=np.concatenate([flow_cost[:n0], np.zeros(stage1.n_cols - n0)]))
    lp = backend(free, integrality).solve_lp()
    if lp.x is None or np.any(np.abs(lp.x[:n0] - np.round(lp.x[:n0])) > 1e-7):
        return None
    x = lp.x.copy()
    x[:n0] = np.round(x[:n0])
    cap_rows = np.flatnonzero(stage1.matrix[:, n0:].getnnz(axis=1))
    spend = stage1.matrix[cap_rows, :n0] @ x[:n0]
    over = np.maximum(0.0, spend - stage1.row_upper[cap_rows])
    cols = stage1.matrix[cap_rows, n0:].tocsr()
    x[n0:] = 0.0
    x[n0 + cols.indices] = over[np.repeat(np.arange(len(cap_rows)), np.diff(cols.indptr))]
    return x


def _cheapest_under(el, n0, m, years, extra, integrality, backend, time_limit, gap, start, fallback):
    """Stage 2: the least present cost with each year's extra capital at most stage 1's."""
    ub = el.upper.copy()
    ub[n0:] = [extra[k] for k in years]
    stage2 = replace(el, cost=np.concatenate([el.cost[:n0], np.zeros(m)]), upper=ub)
    st = np.asarray(start, dtype=float).copy()
    st[:n0] = np.round(st[:n0])
    st[n0:] = np.minimum(np.maximum(st[n0:], 0.0), ub[n0:])
    res = backend(stage2, integrality).solve_mip(time_limit, gap, st)
    if res.x is None:
        return fallback
    x = np.round(res.x[:n0])
    return x if float(el.cost[:n0] @ x) <= float(el.cost[:n0] @ fallback) else fallback


def _with_cost(prog: CohortProgram, cost: np.ndarray) -> CohortProgram:
    return replace(prog, cost=cost)
