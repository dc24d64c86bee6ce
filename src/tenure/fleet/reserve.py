"""A guiding program for fix-and-relax that keeps a reserve under each binding emission cap.

Whole units round the LP's fractional replacements, so a year rounded to its cap's last tonne
leaves the next years no room, and under a capital cap that binds every year the later caps can
then no longer be met.  The guiding program adds to every emission-cap row ``a·x ≤ E_k`` one
continuous column ``r_k`` (coefficient +1, bounds ``0 ≤ r_k ≤ δ_k``) with a reward (negative
cost) per tonne, so its LP cuts up to ``δ_k`` more tonnes wherever a tonne costs less than the
reward — a margin that the rounding of that year may use up again, because ``r_k`` is never fixed
and drops back to 0 in the LP re-solve after the year is rounded.  Any point of the guiding
program keeps the true caps (``a·x ≤ E_k − r_k ≤ E_k``), so its flows are a plan of the real
program; its objective only steers the rounding and is never reported as a bound.  A safety
margin on the side constraints of a relax-and-fix heuristic (common practice).
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np
import scipy.sparse as sp

from .program import CohortProgram

#: the reserve under each binding emission cap, as a fraction of the cap
RESERVE_FRACTION = 2e-3
#: the reward per tonne of reserve, as a multiple of the largest emission-cap shadow price of the LP
REWARD_FACTOR = 2.0


def reserved(prog: CohortProgram, row_duals: np.ndarray) -> CohortProgram | None:
    """The guiding program of ``prog`` (see the module docstring), or None when no emission cap has
    a shadow price in the LP (``row_duals``, present-cost change per unit of each row's bound).

    Columns ``prog.n_cols …`` are the reserves, one per binding emission-cap row.
    """
    rows = [(r, rr) for r, rr in prog.rule_rows if rr.kind == "emissions" and abs(row_duals[r]) > 1e-9]
    if not rows:
        return None
    reward = REWARD_FACTOR * max(abs(row_duals[r]) for r, _ in rows)
    m = len(rows)
    idx = np.array([r for r, _ in rows])
    extra = sp.csc_matrix((np.ones(m), (idx, np.arange(m))), shape=(prog.n_rows, m))
    depth = np.array([RESERVE_FRACTION * abs(rr.hi) for _, rr in rows])
    return replace(prog, cost=np.concatenate([prog.cost, np.full(m, -reward)]),
                   lower=np.concatenate([prog.lower, np.zeros(m)]), upper=np.concatenate([prog.upper, depth]),
                   matrix=sp.hstack([prog.matrix, extra], format="csc"))
