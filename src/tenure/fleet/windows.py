"""Relax-and-fix by windows of years: a whole-unit plan from small integer programs.

The years are taken a window at a time: the columns of years ``[k, k + width)`` are integer, the
years before ``k`` are fixed at what earlier windows chose, the years after are the LP relaxation.
The window's integer program is solved (briefly, to a small gap), its first ``step`` years are
fixed, and the window moves on.  Unlike the rounding of :mod:`tenure.fleet.rounding`, each
window's choice sees the LP of every later year, so it does not paint the later years into a
corner (a rounding that fails at some year is what this step exists for); on the elastic
program of :mod:`tenure.fleet.shortfall`, whose extra capital absorbs any overspend, it always
finishes.  Relax-and-fix for multi-period planning (common practice): L. A. Wolsey, *Integer
Programming*, Wiley 1998, §12.5; Y. Pochet and L. A. Wolsey, *Production Planning by Mixed
Integer Programming*, Springer 2006, §3.6.

Written against :class:`~tenure.fleet.backend.Backend`, so every back end runs it.
"""

from __future__ import annotations

import time
from dataclasses import replace

import numpy as np

from .backend import Backend
from .program import CohortProgram

#: years of integer columns per window, and years fixed per step (measured on the benchmark fleets and
#: the demo: 3/2 gave the best plans; 3/3 and 2/2 were faster by a third to a half, with worse plans)
WIDTH = 3
STEP = 2
#: each window's stopping gap (relative): windows are a heuristic, their own proofs are not needed
WINDOW_GAP = 1e-3
#: the least time of one window's solve [s]
MIN_SECONDS = 2.0


def window_plan(prog: CohortProgram, backend: type[Backend], deadline: float, integrality: np.ndarray | None = None,
                width: int = WIDTH, step: int = STEP, gap: float = WINDOW_GAP, log=None,
                fixed: tuple[np.ndarray, np.ndarray] | None = None, first_year: int = 0) -> np.ndarray | None:
    """An integral point of ``prog`` by relax-and-fix over windows of years, or None.

    Parameters
    ----------
    prog : CohortProgram
        The program (its cost may be any objective, e.g. the elastic program's extra capital).
    backend : Backend subclass
        Solves each window's integer program.
    deadline : float
        ``time.perf_counter()`` value after which no window is started (None is returned then); a
        window started before it may run past it by up to its own limit.
    integrality : (n_cols,) int array, optional
        1 for the columns that must be whole (default: all); others stay continuous throughout.
    width, step : int
        Years of integer columns per window [years], and years fixed per window [years], 1 ≤ step ≤ width.
    gap : float
        Relative gap at which each window's solve stops.
    fixed, first_year : optional
        ``(columns, values)`` held fixed throughout (e.g. the years a failed rounding had fixed, all
        before ``first_year``), and the year index [years from the start] of the first window:
        the windows then repair only the years from ``first_year`` on.

    Returns
    -------
    The point (integer columns rounded), or None when a window finds no point (the years fixed so
    far leave the later ones infeasible, or its time ran out first) or the deadline passes.
    """
    n = prog.n_cols
    integ = np.ones(n, dtype=np.int32) if integrality is None else np.asarray(integrality, dtype=np.int32)
    years = prog.column_years()
    H = len(prog.cap_rows)
    lower, upper = prog.lower.copy(), prog.upper.copy()
    if fixed is not None:
        lower[fixed[0]] = upper[fixed[0]] = fixed[1]
    x = None
    starts = list(range(first_year, H, step))
    for i, k in enumerate(starts):
        now = time.perf_counter()
        if now >= deadline:  # out of time: the caller's integer program gets what is left
            return None
        in_window = (years >= k) & (years < k + width) & (integ == 1)
        sub = replace(prog, lower=lower, upper=upper)
        # the time left shared by the windows left, each at least MIN_SECONDS; a window stopped by its
        # time limit before any point is tried once more with twice the time
        per = max(MIN_SECONDS, (deadline - now) / (len(starts) - i))
        res = backend(sub, in_window.astype(np.int32)).solve_mip(per, gap)
        if res.x is None and res.status != "infeasible":
            res = backend(sub, in_window.astype(np.int32)).solve_mip(2 * per, gap)
        if res.x is None:
            if log:
                log(f"window {k + 1} of {H} years: {res.status}")
            return None
        x = np.asarray(res.x, dtype=float)
        fix = (years >= k) & (years < k + step) & (integ == 1)
        lower[fix] = upper[fix] = np.round(x[fix])
    out = x.copy()
    out[integ == 1] = np.round(out[integ == 1])
    return out
