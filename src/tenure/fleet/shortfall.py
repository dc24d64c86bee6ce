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
from dataclasses import dataclass

import numpy as np

from ..model import Case
from ..plan import InfeasibleLimits, NoPlanFound
from .backend import Backend
from .program import CohortProgram, build_program

#: the flows' present cost is scaled by this in the elastic program, so it only breaks ties
#: between plans that need the same extra capital
TIE_BREAK = 1e-6


@dataclass(frozen=True)
class Shortfall:
    """``extra`` (H,) whole units of money added to each year's cap [money, undiscounted];
    ``x`` the integral flows of the plan under the raised caps; ``prog`` the program they belong to;
    ``proven`` True when the solver proved that some extra capital is needed."""

    extra: np.ndarray
    x: np.ndarray
    prog: CohortProgram
    proven: bool


def shortfall(case: Case, graphs, backend: type[Backend], time_limit: float, uncapped_cost: float) -> Shortfall:
    """Solve the elastic program of ``case`` with ``backend`` for at most ``time_limit`` [s].

    ``uncapped_cost`` [money, time 0]: the uncapped optimum; every plan costs at least that, so the
    tie-break term is at least ``TIE_BREAK·uncapped_cost`` and is taken off the dual bound before
    deciding whether extra capital is proven necessary.

    Raises :class:`~tenure.plan.InfeasibleLimits` when even unlimited capital does not help and
    :class:`~tenure.plan.NoPlanFound` when no point is found in the time.
    """
    prog = build_program(case, graphs)
    el, years = prog.with_elastic_caps()
    n0, m = prog.n_cols, len(years)
    el = _with_cost(el, np.concatenate([prog.cost * TIE_BREAK, np.ones(m)]))
    integrality = np.concatenate([np.ones(n0, dtype=np.int32), np.zeros(m, dtype=np.int32)])
    # any feasible point fixes the case; the gap only bounds how far above the least extra it may be
    res = backend(el, integrality).solve_mip(max(time_limit, 5.0), 1e-3)
    if res.x is None:
        if res.status == "infeasible":  # even unlimited capital does not help: a limit binds
            raise InfeasibleLimits()
        raise NoPlanFound(f"no plan was found within {time_limit:.0f} s, even with extra capital; "
                          "allow more time or check the caps and limits")
    extra = np.zeros(case.study.horizon)
    for j, k in enumerate(years):
        v = res.x[n0 + j]
        extra[k] = math.ceil(max(0.0, v) - 1e-6) if v > 1e-6 else 0.0
    least_extra = -math.inf if res.bound is None else res.bound - TIE_BREAK * uncapped_cost
    return Shortfall(extra=extra, x=np.round(res.x[:n0]), prog=prog, proven=least_extra > 0.5)


def _with_cost(prog: CohortProgram, cost: np.ndarray) -> CohortProgram:
    from dataclasses import replace

    return replace(prog, cost=cost)
