"""The networkx view of a class's state graph: the same arc-cost tables as :mod:`tenure.chain`, as a DiGraph.

Used by the tests and benchmarks as an independent reference (networkx's shortest paths on the same
arcs); the solvers never read it.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

if TYPE_CHECKING:  # networkx loads only when the view is built (tests, benchmarks)
    import networkx as nx

    from .chain import StageGraph

END = "end"


def to_networkx(g: StageGraph, starts) -> nx.DiGraph:
    """The state graph as a networkx DiGraph, reachable states only.

    Nodes are ``(k, type_id, age)`` plus a sink ``"end"``; arcs carry
    ``weight`` (present cost at time 0 [money]), ``outlay`` (purchase price
    [money]), ``proceeds`` (market value received [money]) and ``action``
    (``"keep"``, ``"replace"``, ``"overhaul"`` or ``"end"``).  Built from the same tables as the
    recursion; on graphs with derived rows nodes are named by ``StageGraph.row_label``.
    """
    import networkx as nx

    r = g.reachable(starts)
    G = nx.DiGraph()
    H = g.horizon
    names = [g.row_label(t) for t in range(len(g.types))]
    job = np.zeros(len(names), dtype=int) if g.job is None else g.job
    for k in range(H):
        ts, as_ = np.nonzero(r[k])
        buy_types = np.flatnonzero(g.buyable[k])
        for t, a in zip(ts.tolist(), as_.tolist()):
            u = (k, names[t], a)
            if a < g.max_age[t]:
                G.add_edge(u, (k + 1, names[t], a + 1), weight=float(g.keep_pw[k, t, a]), outlay=0.0,
                           proceeds=0.0, action="keep")
            if g.overhaul_to is not None and g.overhaul_to[t, a] >= 0:
                G.add_edge(u, (k + 1, names[g.overhaul_to[t, a]], a + 1), weight=float(g.overhaul_pw[k, t, a]),
                           outlay=float(g.overhaul_cost[k, t, a]), proceeds=0.0, action="overhaul")
            sellable = g.sellable is None or bool(g.sellable[t, a])
            for t2 in (buy_types[job[buy_types] == job[t]].tolist() if sellable else []):
                G.add_edge(u, (k + 1, names[t2], 1), weight=float(g.buy_pw[k, t2] - g.sale_pw[k, t, a]),
                           outlay=float(g.price[k, t2]), proceeds=float(g.value[k, t, a]), action="replace")
    ts, as_ = np.nonzero(r[H])
    for t, a in zip(ts.tolist(), as_.tolist()):
        G.add_edge((H, names[t], a), END, weight=float(g.end_pw[t, a]), outlay=0.0,
                   proceeds=float(g.value[H, t, a]) if g.end_value == "salvage" else 0.0, action="end")
    return G
