"""Lagrangian decomposition of the expected-cost hedge, for many scenarios or large fleets.

The non-anticipativity rows ``x_s[key] = x̄[key]`` (first N years) are moved into the objective
with multipliers λ_s, Σ_s λ_s = 0 (the condition for the free x̄ to drop out):

    L(λ) = Σ_s min_{x_s feasible for s} ( p_s c_s·x_s + λ_s·x_s^N )

Every term is one scenario's own cohort program with changed costs on its first-years columns,
solved independently (:func:`tenure.hedge.stage.replan_task` through
:func:`tenure.parallel.run_tasks`).  Since Σ λ_s = 0, any commitment feasible in every scenario
costs the same in L and in the hedge, so the sum of the subproblems' proven lower bounds is a
valid lower bound of the hedge at every λ.  λ moves along the projected subgradient
``g_s = x_s^N − mean_r x_r^N`` with Polyak's step ``θ (UB − L)/‖g‖²`` (θ halved when L stops
rising).  Upper bounds: the base plan's first years, then at each iteration the subproblem
solution closest to the probability-weighted mean, each carried out in every scenario and the
later years re-planned (an infeasible candidate is skipped).

Results depend only on the inputs: tasks are listed in scenario order and the back ends return
them in that order, so 1 worker, many workers and a Dask cluster give the same iterates.

M. Held, P. Wolfe, H. P. Crowder, "Validation of subgradient optimization", Mathematical
Programming 6, 1974; Birge & Louveaux, *Introduction to Stochastic Programming*, 2nd ed., §9.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any, Mapping, Sequence

import numpy as np

from ..model import Case
from ..parallel import run_tasks
from .stage import Key, Stage, make_replan_task, replan_task

INF = math.inf


@dataclass(frozen=True)
class Decomposition:
    """``commitment`` the best commitment found (flows by key), ``upper_bound`` its expected cost and
    ``lower_bound`` the best Lagrangian bound [money, time 0]; ``history`` (iteration, L, UB)."""

    commitment: Mapping[Key, int] | None
    upper_bound: float
    lower_bound: float
    iterations: int
    history: tuple[tuple[int, float, float], ...]

    @property
    def gap(self) -> float:
        if not math.isfinite(self.upper_bound):
            return INF
        return max(0.0, (self.upper_bound - self.lower_bound) / max(abs(self.upper_bound), 1e-9))


def _evaluate(results: Sequence[Mapping], stages: Sequence[Stage]) -> float:
    """Expected cost of a commitment from its S re-plans (inf when one cannot carry it out)."""
    if any(r.get("cost") is None for r in results):
        return INF
    return float(sum(st.probability * r["cost"] for st, r in zip(stages, results)))


def lagrangian(stages: Sequence[Stage], base: Case, years: int, common: Sequence[Key], forbidden: Sequence[Key],
               options: Mapping[str, Any], *, seeds: Sequence[Mapping[Key, int]] = (), gap: float = 0.005,
               max_iter: int = 30, workers: int = 1, cluster: str | None = None) -> Decomposition:
    """Lagrangian bound and best commitment of the expected-cost hedge (see the module docstring).

    Parameters
    ----------
    stages : the scenarios with probabilities; base : the case the scenarios override;
    years : N, committed planning years; common, forbidden : tied keys and keys held at 0
        (:func:`tenure.hedge.extensive.split_keys`);
    options : solver options of every subproblem (solver, time_limit [s], gap);
    seeds : commitments evaluated first (e.g. the base plan's first years);
    gap : stop when ``(UB − L)/UB`` is at most this; max_iter : subgradient iterations.
    """
    S, m = len(stages), len(common)
    index = {k: j for j, k in enumerate(common)}
    lam = np.zeros((S, m))
    best_c, ub, lb, theta, stall = None, INF, -INF, 1.0, 0
    seen: set = set()
    pending = []
    for c in seeds:
        _queue(pending, seen, c)
    history = []
    it = 0
    for it in range(1, max_iter + 1):
        tasks = [make_replan_task(st, base, years, options, forbid=forbidden, weight=st.probability,
                                  extra_cost={k: float(lam[s, j]) for k, j in index.items() if lam[s, j] != 0.0})
                 for s, st in enumerate(stages)]
        for c in pending:
            tasks += [make_replan_task(st, base, years, options, fixed=c) for st in stages]
        res = run_tasks(replan_task, tasks, workers=workers, cluster=cluster)
        for j, c in enumerate(pending):
            ev = _evaluate(res[S * (j + 1):S * (j + 2)], stages)
            if ev < ub:
                ub, best_c = ev, c
        pending = []
        sub = res[:S]
        if any(r.get("bound") is None for r in sub):
            break  # a scenario has no plan at all: the caller diagnoses it
        L = float(sum(r["bound"] for r in sub))
        stall = 0 if L > lb + 1e-9 * max(abs(lb), 1) else stall + 1
        lb = max(lb, L)
        if stall >= 2:
            theta, stall = theta / 2, 0
        flows = [dict((tuple(k), v) for k, v in r["first"]) for r in sub]
        X = np.array([[f.get(k, 0) for k in common] for f in flows], dtype=float)
        mean = np.array([st.probability for st in stages]) @ X
        pick = int(np.argmin(((X - mean) ** 2).sum(axis=1)))
        _queue(pending, seen, flows[pick])
        history.append((it, L, ub))
        g = X - X.mean(axis=0)
        norm2 = float((g ** 2).sum())
        if (math.isfinite(ub) and (ub - lb) <= gap * abs(ub)) or (norm2 == 0 and not pending):
            break
        if norm2 == 0:
            continue  # every subproblem agrees: evaluate that commitment next round
        target = ub if math.isfinite(ub) else L + 0.05 * abs(L)
        lam += theta * max(target - L, 1e-9 * max(abs(L), 1)) / norm2 * g
    if pending:
        tasks = [make_replan_task(st, base, years, options, fixed=c) for c in pending for st in stages]
        res = run_tasks(replan_task, tasks, workers=workers, cluster=cluster)
        for j, c in enumerate(pending):
            ev = _evaluate(res[S * j:S * (j + 1)], stages)
            if ev < ub:
                ub, best_c = ev, c
    return Decomposition(best_c, ub, min(lb, ub), it, tuple(history))


def _queue(pending: list, seen: set, c: Mapping[Key, int]) -> None:
    key = tuple(sorted(c.items()))
    if key not in seen:
        seen.add(key)
        pending.append(dict(key))
