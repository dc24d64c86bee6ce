"""``hedge()``: the hedged commitment of the first years, from the scenarios to the :class:`Hedge`.

1. Each scenario solved on its own (:func:`tenure.solve.solve` through the scenario tasks): its
   own optimum and, for the base case, the plan whose first years give the VSS.
2. The commitment: the extensive form (:mod:`.extensive`) when the stacked program has at most
   :data:`EXTENSIVE_COLUMNS` columns (or when asked), else the Lagrangian decomposition
   (:mod:`.decompose`, expected cost only).
3. Every scenario re-planned from the commitment and from the base plan's first years; the
   commitment turned into unit actions by the fleet layer's flows-to-paths assignment.
"""

from __future__ import annotations

from typing import Any, Mapping, Sequence

import numpy as np

from .. import chain
from ..fleet.flows import flows_to_groups
from ..fleet.program import build_program
from ..model import Case, Scenario
from ..parallel import run_tasks
from ..scenarios.tasks import make_task, run_task, solved
from .decompose import lagrangian
from .extensive import NoCommonCommitment, blocking, build_extensive, solve_extensive, split_keys
from .result import CommitAction, Hedge, HedgedScenario
from .stage import Stage, column_keys, make_replan_task, plan_flows, replan_task, stages as make_stages

OBJECTIVES = ("expected", "regret")
METHODS = ("auto", "extensive", "lagrangian")
#: the largest stacked program (columns) the "auto" method gives to the extensive form; measured
#: in docs/benchmarks-hedge.md (the demo, 29,932 columns: 214 s extensive with a start, against no
#: end in 13 min for the decomposition at a 1e-4 gap)
EXTENSIVE_COLUMNS = 40_000


def hedge(case: Case, scenarios: Sequence[Scenario], *, commit_years: int, objective: str = "expected",
          method: str = "auto", options: Mapping[str, Any] | None = None, workers: int = 1,
          cluster: str | None = None, max_iter: int = 30) -> Hedge:
    """The commitment of the first ``commit_years`` planning years best across the base case and ``scenarios``.

    ``objective`` "expected" (least probability-weighted present cost) or "regret" (least largest
    regret); ``options`` solver, time_limit [s] per solve, gap [fraction]; ``workers``/``cluster``
    as in :func:`tenure.parallel.run_tasks`.

    Raises
    ------
    ValueError
        A bad argument (one line, naming it).
    NoCommonCommitment
        No commitment fits every scenario; the message names the scenario and the year.
    """
    opts = {"solver": "highs", "time_limit": 120.0, "gap": 0.005, **dict(options or {})}
    sts = make_stages(case, scenarios)
    _check(sts, commit_years, objective, method)
    own = run_tasks(run_task, [make_task(case, st.overrides, opts, where=f"scenario {st.id}", keep_plan=True)
                               for st in sts], workers=workers, cluster=cluster)
    for st, r in zip(sts, own):
        if not solved(r["status"]):
            raise NoCommonCommitment(f"scenario {st.id} has no plan on its own: {r.get('message', r['status'])}")
    own_cost = [float(r["present_cost"]) for r in own]
    progs = [build_program(st.case) for st in sts]
    seed = plan_flows(own[0]["plan"], progs[0], commit_years)
    keys = [column_keys(p, commit_years) for p in progs]
    common, forbidden = split_keys(keys)
    size = sum(p.n_cols for p in progs)
    if method == "auto":
        method = "extensive" if size <= EXTENSIVE_COLUMNS or objective == "regret" else "lagrangian"
    notes = []
    # the base plan's first years re-planned in every scenario: the VSS, and a start for the extensive form
    base_res = run_tasks(replan_task, [make_replan_task(st, case, commit_years, opts, fixed=seed,
                                                        keep_x=method == "extensive") for st in sts],
                         workers=workers, cluster=cluster)
    if method == "extensive":
        ext = build_extensive(sts, commit_years, objective, own=own_cost, progs=progs)
        sol = solve_extensive(ext, sts, **opts, start=_start(ext, base_res, own_cost, sts))
        commit = {k: int(sol.xs[0][j]) for k, j in keys[0].items() if sol.xs[0][j] > 0.5}
        joint = [float(p.cost @ x) for p, x in zip(progs, sol.xs)]
        gap, bound, label = sol.gap, sol.bound, f"extensive form ({size:,} columns, {len(sts)} scenarios)"
    else:
        dec = lagrangian(sts, case, commit_years, common, forbidden, opts, seeds=[seed], gap=opts["gap"],
                         max_iter=max_iter, workers=workers, cluster=cluster)
        if dec.commitment is None:
            raise NoCommonCommitment(blocking(progs, sts, commit_years, opts["solver"]))
        commit, joint = dec.commitment, [np.inf] * len(sts)
        gap, bound = dec.gap, dec.lower_bound
        label = f"Lagrangian decomposition ({dec.iterations} iterations, {len(sts)} scenarios)"
    return _assemble(case, sts, progs, commit, base_res, own, own_cost, joint, opts, objective, method, label, gap,
                     bound, commit_years, workers, cluster, notes)


def _start(ext, base_res, own_cost, sts):
    """The stacked point of the base plan's first years re-planned in every scenario (None if one cannot)."""
    if any("x" not in r for r in base_res):
        return None
    x = np.concatenate([np.asarray(r["x"], dtype=float) for r in base_res])
    if ext.epigraph >= 0:
        R = sum(st.probability * o for st, o in zip(sts, own_cost))
        x = np.append(x, max(r["cost"] - o for r, o in zip(base_res, own_cost)) + R)
    return x


def _check(sts: Sequence[Stage], n: int, objective: str, method: str) -> None:
    if objective not in OBJECTIVES:
        raise ValueError(f"--objective {objective!r}: must be one of {', '.join(OBJECTIVES)}")
    if method not in METHODS:
        raise ValueError(f"--method {method!r}: must be one of {', '.join(METHODS)}")
    if method == "lagrangian" and objective == "regret":
        raise ValueError("--method lagrangian: the decomposition minimises the expected cost; "
                         "use --objective expected or --method extensive")
    s0 = sts[0].case.study
    if not (isinstance(n, int) and 1 <= n <= s0.horizon):
        raise ValueError(f"--commit-years {n!r}: must be a whole number in [1, {s0.horizon}] (the horizon)")
    for st in sts[1:]:
        s = st.case.study
        if (s.start_year, s.horizon) != (s0.start_year, s0.horizon):
            raise ValueError(f"scenario {st.id}: a hedge needs the same start year and horizon in every scenario "
                             f"({s.start_year}+{s.horizon} against {s0.start_year}+{s0.horizon})")


def _assemble(case, sts, progs, commit, base_res, own, own_cost, joint, opts, objective, method, label, gap, bound,
              n, workers, cluster, notes) -> Hedge:
    """Re-plan every scenario from the commitment and from the base plan's first years; the Hedge."""
    S = len(sts)
    tasks = [make_replan_task(st, case, n, opts, fixed=commit, keep_x=(s == 0)) for s, st in enumerate(sts)]
    res = run_tasks(replan_task, tasks, workers=workers, cluster=cluster) + list(base_res)
    rows, costs = [], []
    for s, st in enumerate(sts):
        r = res[s]
        if r.get("cost") is None and not np.isfinite(joint[s]):
            raise NoCommonCommitment(f"the commitment found cannot be re-planned in scenario {st.id} "
                                     f"({r.get('message', r['status'])})")
        cost = min(r.get("cost") if r.get("cost") is not None else np.inf, joint[s])
        best = min(own_cost[s], cost)
        if cost < own_cost[s] - 1e-6 * max(abs(cost), 1):
            notes.append(f"scenario {st.id}: the re-plan from the commitment costs less than its own plan "
                         f"(own solve gap {own[s].get('gap', 0):.3%}); the re-plan is its best known plan")
        b = res[S + s].get("cost")
        note = "the case as written" if s == 0 else next(
            (sc.note for sc in case.scenarios if sc.id == st.id), "")
        rows.append(HedgedScenario(st.id, note, st.probability, cost, best, cost - best,
                                   float(own[s].get("gap") or 0.0), b, res[s].get("capital_by_year", {})))
        costs.append(cost)
    expected = float(sum(st.probability * c for st, c in zip(sts, costs)))
    perfect = float(sum(st.probability * r.own_optimum for st, r in zip(sts, rows)))
    base_costs = [r.base_cost for r in rows]
    vss = None if any(b is None for b in base_costs) else float(
        sum(st.probability * b for st, b in zip(sts, base_costs)) - expected)
    if vss is None:
        notes.append("VSS not computed: the base plan's first years cannot be carried out in every scenario")
    actions = _unit_actions(sts[0].case, progs[0], np.asarray(res[0]["x"]), n)
    return Hedge(case=case.source, title=case.study.title, start_year=case.study.start_year, commit_years=n,
                 objective=objective, method=label, commitment=actions, scenarios=tuple(rows),
                 expected_cost=expected, max_regret=max(r.regret for r in rows), evpi=expected - perfect, vss=vss,
                 gap=float(gap), lower_bound=float(bound), notes=tuple(notes))


def _unit_actions(case: Case, prog, x: np.ndarray, n: int) -> tuple[CommitAction, ...]:
    """The first ``n`` years of the base case's re-plan as unit actions (the fleet layer's assignment)."""
    sols = {c: chain.backward(g) for c, g in prog.graphs.items()}
    groups = flows_to_groups(prog, x, case, sols)
    y0 = case.study.start_year
    out = []
    order = {name: j for j, name in enumerate(nm for u in case.units for nm in u.names())}
    for grp in groups:
        g = prog.graphs[grp.class_]
        for name in grp.units:
            for st in grp.steps:
                if st.k >= n:
                    continue
                if st.action == chain.KEEP:
                    act, t = "keep", st.type
                elif st.action == chain.SELL:
                    act, t = "sell", st.type
                elif st.action == chain.OVERHAUL:
                    act, t = "overhaul", st.type
                else:  # a purchase: with a sale ("replace") or, for a unit the plan adds, without ("buy")
                    act, t = ("buy" if st.type == chain.NEW else "replace"), st.action
                out.append(CommitAction(name, y0 + st.k, act, g.types[t]))
    out.sort(key=lambda c: (order.get(c.unit, len(order)), c.year))
    return tuple(out)
