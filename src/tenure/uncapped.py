"""The uncapped fleet plan: every unit on its own optimal replacement chain.

Shared by the fleet layer (which starts from this plan and its value
functions) and by ``tenure.solve``.
"""

from __future__ import annotations

import time
from collections import defaultdict

from . import chain, derived
from .model import Case
from .plan import PathGroup, Plan, assemble


def _units_by_class(case: Case) -> dict[str, list]:
    """Inventory rows of each class, in inventory order (one pass over the units)."""
    class_of = {t.id: t.class_ for t in case.types}
    out: dict[str, list] = defaultdict(list)
    for u in case.units:
        out[class_of[u.type]].append(u)
    return out


def build_graphs(case: Case) -> dict[str, chain.StageGraph]:
    """The state graph of every class that holds units."""
    held = _units_by_class(case)
    return {c: chain.build_class_graph(case, c) for c in case.classes if held.get(c)}


def starting_states(case: Case, graphs: dict[str, chain.StageGraph]) -> dict[str, dict[tuple[int, int], list[str]]]:
    """Per class, the unit names at each starting state (t, a), in inventory order."""
    out: dict[str, dict[tuple[int, int], list[str]]] = {}
    held = _units_by_class(case)
    for cls, g in graphs.items():
        states: dict[tuple[int, int], list[str]] = defaultdict(list)
        grid = derived.usage_grid(case, cls) if g.job is not None else None
        for u in held.get(cls, ()):
            states[(g.start_row(u.type, derived.job_usage(case, u, grid)), u.age)].extend(u.names())
        out[cls] = dict(states)
    return out


def recursion_groups(case: Case, graphs, solutions) -> list[PathGroup]:
    """Each distinct starting state solved once: its optimal path, units and flexibility costs."""
    groups = []
    for cls, states in starting_states(case, graphs).items():
        sol = solutions[cls]
        for (t, a), names in states.items():
            steps = chain.follow(sol, t, a)
            groups.append(PathGroup(class_=cls, steps=tuple(steps), units=tuple(names), start=(t, a),
                                    flex=tuple(chain.flexibility(sol, steps))))
    return groups


def solve_uncapped(case: Case, graphs=None, sols=None) -> Plan:
    """Least-cost plan with no caps or limits: every unit follows its own optimal chain.

    ``graphs`` and ``sols`` (the classes' recursions) may be passed in when the
    caller already has them.
    """
    t0 = time.perf_counter()
    graphs = build_graphs(case) if graphs is None else graphs
    sols = {c: chain.backward(g) for c, g in graphs.items()} if sols is None else sols
    groups = recursion_groups(case, graphs, sols)
    dt = time.perf_counter() - t0
    return assemble(case, graphs, groups, status="optimal", method="recursion",
                    stats={"solve_seconds": round(dt, 4), "states_solved": sum(len(gr.units) > 0 for gr in groups)})
