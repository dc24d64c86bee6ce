"""One year of fix-and-relax decided by a small integer program: year k whole, later years relaxed.

When no rounding of year k's LP values keeps the later years' LP feasible (typically a coupling
row of year k — an emission cap, a share target — that whole units miss while the capital cap
leaves no slack), the year is decided by the integer program in which the years already fixed
keep their values, year k's columns are integer and every later column is continuous.  Its
optimum is a whole-unit year k that meets year k's rows *and* leaves the later years' LP
feasible, at the least cost of the relaxed remainder: relax-and-fix in its original form (common
practice; L. A. Wolsey, *Integer Programming*, Wiley 1998, §12.4 on relax-and-fix heuristics for
lot sizing).  Solved through :class:`~tenure.fleet.backend.Backend` like every other stage, so
it is the same for every back end.

Only a heuristic: a year that has no such integer program point makes fix-and-relax backtrack,
as a failed rounding does; nothing is concluded about the whole program from it.
"""

from __future__ import annotations

import time
from dataclasses import replace

import numpy as np

from .backend import Backend
from .program import CohortProgram

#: relative gap of a year's integer program: a year's choice need not be proven to the last cent,
#: the plan's own gap is taken against the LP bound afterwards
YEAR_GAP = 1e-3
#: seconds one year's integer program may take at most (less when the solve's deadline is nearer)
YEAR_SECONDS = 20.0


def year_columns(prog: CohortProgram, k: int) -> np.ndarray:
    """Every column of year k (keep, sell, overhaul of each state; buy of each type), sorted."""
    out = []
    for ci in prog.cols.values():
        for arr in (ci.keep[k], ci.sell[k], ci.buy[k]) + (() if ci.overhaul is None else (ci.overhaul[k],)):
            out.append(arr[arr >= 0].ravel())
    return np.unique(np.concatenate(out)).astype(np.int64) if out else np.zeros(0, dtype=np.int64)


def solve_years(prog: CohortProgram, backend: type[Backend], lower: np.ndarray, upper: np.ndarray,
                years: range, deadline: float, seconds: float = YEAR_SECONDS) -> list | None:
    """Whole-unit values of the columns of ``years`` from the program with column bounds
    ``lower``/``upper`` (the years fixed so far), those years integer and the later years continuous.

    Parameters
    ----------
    prog : CohortProgram
    backend : type[Backend]
        The back end class of the solve.
    lower, upper : np.ndarray (n_cols,)
        Current column bounds [units]: the fixed years at their values, the rest as built.
    years : range
        Consecutive planning year indices decided together.
    deadline : float
        ``time.perf_counter()`` value after which no solve starts [s].
    seconds : float
        Time limit of this integer program [s] (less when the deadline is nearer).

    Returns ``[(columns, values)]``, one pair per year of ``years``, or None when the solver finds
    no point in time (or proves there is none: either way the caller goes on otherwise).
    """
    left = min(seconds, deadline - time.perf_counter())
    if left < 1.0:
        return None
    per_year = [year_columns(prog, k) for k in years]
    integ = np.zeros(prog.n_cols, dtype=np.int32)
    for cols in per_year:
        integ[cols] = 1
    res = backend(replace(prog, lower=lower, upper=upper), integ).solve_mip(left, YEAR_GAP)
    if res.x is None:
        return None
    return [(cols, np.round(res.x[cols])) for cols in per_year]
