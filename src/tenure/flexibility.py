"""Defer and advance costs: what doing each replacement on a path one year later or earlier costs.

Read from the recursion's values (:class:`tenure.chain.ChainSolution`), so every solver's plan gets
them from the same tables; units.csv carries them as ``defer_cost`` and ``advance_cost``.
"""

from __future__ import annotations

import numpy as np

from .chain import KEEP, NEW, OVERHAUL, SELL, ChainSolution, Step


def flexibility(sol: ChainSolution, steps: list[Step]) -> list[tuple[float | None, float | None]]:
    """Extra present cost of doing each replacement on a path one year later and one year earlier.

    For a replacement in year k from state (t, a): *defer* keeps one more year
    and replaces in year k+1 with the best challenger then, the rest of the
    chain re-optimised; *advance* replaces in year k−1 from (t, a−1) instead
    of keeping.  None where the move is not possible (max age reached, the
    year outside the horizon, or the unit bought the year before).  Costs are
    measured against "replace as planned, then the best chain", so they also
    apply to a path that is not optimal without caps (a capped plan's path).

    Returns
    -------
    list of (defer_cost, advance_cost), one per replacement on the path [money, time-0 present worth].
    """
    g = sol.graph
    H = g.horizon
    out = []
    for idx, st in enumerate(steps):
        if st.action in (KEEP, OVERHAUL):
            continue
        if st.action == SELL or st.type == NEW:  # no defer/advance for a purchase or sale without its pair
            out.append((None, None))
            continue
        k, t, a = st.k, st.type, st.age
        # base: replace now, then the best chain (equals the value on an optimal path)
        here = sol.replace_value[k, t, a]
        defer = None
        if k + 1 < H and a < g.max_age[t] and np.isfinite(g.keep_pw[k, t, a]):
            later = g.keep_pw[k, t, a] + sol.replace_value[k + 1, t, a + 1]
            if np.isfinite(later):
                defer = max(0.0, float(later - here))
        advance = None
        if k >= 1 and idx >= 1 and steps[idx - 1].action == KEEP and a >= 1:
            before = sol.replace_value[k - 1, t, a - 1]
            kept = g.keep_pw[k - 1, t, a - 1] + here
            if np.isfinite(before):
                advance = max(0.0, float(before - kept))
        out.append((defer, advance))
    return out
