"""Entry point of the solvers: the one function every command and scenario calls.

``solve(case)`` uses the backward recursion (``tenure.chain`` via
``tenure.uncapped``) when the case has no cap, no limit and no rule that couples
units (demand, orders, targets, emission caps), and the fleet integer program
(``tenure.fleet``) otherwise.  Either way the answer is a
:class:`~tenure.plan.Plan`.
"""

from __future__ import annotations

from .model import Case
from .plan import Plan
from .uncapped import build_graphs, recursion_groups, solve_uncapped, starting_states

__all__ = ["solve", "solve_uncapped", "build_graphs", "starting_states", "recursion_groups"]


def solve(case: Case, **options) -> Plan:
    """Solve a case: recursion when uncapped, the fleet integer program otherwise.

    ``options`` (solver, time_limit, gap, progress) go to :func:`tenure.fleet.solve_capped`.
    """
    if not case.capped and not case.coupled:
        return solve_uncapped(case)
    from .fleet import solve_capped

    return solve_capped(case, **options)
