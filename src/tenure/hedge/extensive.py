"""The extensive form of the two-stage program: one cohort program per scenario, stacked, with
non-anticipativity rows.

For scenarios s = 1 … S with probabilities p_s, cohort programs ``min c_s·x_s, A_s x_s ∈ [l_s, u_s]``
(:func:`tenure.fleet.program.build_program` of each scenario's case) and the first N planning
years' columns matched by meaning (:func:`tenure.hedge.stage.column_keys`):

- ``expected``: ``min Σ_s p_s c_s·x_s``;
- ``regret``:   ``min z`` with ``c_s·x_s − z ≤ own_s − R`` for every s (an epigraph variable;
  ``own_s`` the scenario's own optimum and ``R = Σ_s p_s own_s``, so ``z − R`` is the largest
  regret and the solver's relative gap is relative to a present cost, not to a regret near 0);
- non-anticipativity: ``x_1[key] = x_s[key]`` for every key of the first N years present in
  every scenario; a key missing in some scenario (a type it cannot buy, an age it cannot keep) is
  held at 0 in every copy, so the commitment can be carried out in every scenario.

The matrix is ``scipy.sparse.block_diag`` of the copies plus those rows; it goes to a back end
(:mod:`tenure.fleet.backend`) as a :class:`~tenure.fleet.program.CohortProgram`.

J. R. Birge, F. Louveaux, *Introduction to Stochastic Programming*, Springer, 2nd ed. 2011,
ch. 2–3 (the extensive form, non-anticipativity, EVPI and VSS).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Sequence

import numpy as np
import scipy.sparse as sp

from ..fleet.backend import get_backend
from ..fleet.program import CohortProgram, build_program
from ..plan import NoPlanError, NoPlanFound
from .stage import Key, Stage, column_keys

INF = math.inf


class NoCommonCommitment(NoPlanError):
    """No commitment of the first years can be carried out in every scenario (the CLI exits 3)."""


@dataclass(frozen=True)
class Extensive:
    """The stacked program: ``program`` (all copies), ``offsets[s]`` the first column of copy s,
    ``progs`` the copies, ``keys[s]`` their first-years columns by key, ``common`` the keys tied
    across copies, ``forbidden`` the keys held at 0, ``epigraph`` the column of z (−1: expected)."""

    program: CohortProgram
    offsets: tuple[int, ...]
    progs: tuple[CohortProgram, ...]
    keys: tuple[dict, ...]
    common: tuple[Key, ...]
    forbidden: tuple[Key, ...]
    epigraph: int
    years: int


def split_keys(keys: Sequence[dict]) -> tuple[list[Key], list[Key]]:
    """Keys present in every scenario (tied) and keys missing in some (held at 0), both sorted."""
    every = set(keys[0]).intersection(*keys[1:]) if keys else set()
    union = set().union(*keys) if keys else set()
    return sorted(every), sorted(union - every)


def build_extensive(stages: Sequence[Stage], years: int, objective: str = "expected",
                    own: Sequence[float] | None = None, progs: Sequence[CohortProgram] | None = None) -> Extensive:
    """Stack the scenarios' programs with non-anticipativity rows (see the module docstring).

    ``years``: N, the planning years committed; ``own``: each scenario's own optimum [money, time 0]
    (needed by ``regret``); ``progs``: the scenarios' programs when already built.
    """
    progs = tuple(progs) if progs is not None else tuple(build_program(st.case) for st in stages)
    keys = tuple(column_keys(p, years) for p in progs)
    common, forbidden = split_keys(keys)
    offsets = tuple(int(o) for o in np.cumsum([0] + [p.n_cols for p in progs[:-1]]))
    n = sum(p.n_cols for p in progs)
    upper = np.concatenate([p.upper for p in progs])
    for s, kd in enumerate(keys):
        for key in forbidden:
            if key in kd:
                upper[offsets[s] + kd[key]] = 0.0
    blocks = [p.matrix for p in progs]
    row_lo = [np.concatenate([p.row_lower for p in progs])]
    row_hi = [np.concatenate([p.row_upper for p in progs])]
    ri, cj, vv = [], [], []
    r = 0
    for key in common:
        j0 = offsets[0] + keys[0][key]
        for s in range(1, len(progs)):
            ri += [r, r]
            cj += [j0, offsets[s] + keys[s][key]]
            vv += [1.0, -1.0]
            r += 1
    n_na = r
    lower = np.concatenate([p.lower for p in progs])
    if objective == "regret":
        if own is None:
            raise ValueError("the regret objective needs each scenario's own optimum")
        R = float(sum(st.probability * o for st, o in zip(stages, own)))
        cost = np.concatenate([np.zeros(n), [1.0]])
        lower, upper = np.concatenate([lower, [-INF]]), np.concatenate([upper, [INF]])
        for s, p in enumerate(progs):
            nz = np.flatnonzero(p.cost)
            ri += [n_na + s] * (len(nz) + 1)
            cj += (offsets[s] + nz).tolist() + [n]
            vv += p.cost[nz].tolist() + [-1.0]
        row_lo.append(np.full(n_na, 0.0))
        row_hi.append(np.full(n_na, 0.0))
        row_lo.append(np.full(len(progs), -INF))
        row_hi.append(np.array([o - R for o in own], dtype=float))
        n_rows_extra, n_cols = n_na + len(progs), n + 1
        epigraph = n
    else:
        cost = np.concatenate([st.probability * p.cost for st, p in zip(stages, progs)])
        row_lo.append(np.zeros(n_na))
        row_hi.append(np.zeros(n_na))
        n_rows_extra, n_cols, epigraph = n_na, n, -1
    body = sp.block_diag(blocks, format="csc")
    if n_cols > n:
        body = sp.hstack([body, sp.csc_matrix((body.shape[0], n_cols - n))], format="csc")
    extra = sp.csc_matrix((vv, (ri, cj)), shape=(n_rows_extra, n_cols))
    matrix = sp.vstack([body, extra], format="csc")
    prog = CohortProgram(cost=cost, lower=lower, upper=upper, row_lower=np.concatenate(row_lo),
                         row_upper=np.concatenate(row_hi), matrix=matrix, cap_rows=np.zeros(0, dtype=np.int64),
                         cols={}, starts={}, graphs={})
    return Extensive(prog, offsets, progs, keys, tuple(common), tuple(forbidden), epigraph, years)


@dataclass(frozen=True)
class ExtensiveSolution:
    """``xs[s]`` the integral flows of copy s; ``objective`` and ``bound`` [money, time 0] of the
    stacked program (for ``regret`` they include the constant R); ``gap`` relative; ``status``."""

    xs: tuple[np.ndarray, ...]
    objective: float
    bound: float
    gap: float
    status: str


def solve_extensive(ext: Extensive, stages: Sequence[Stage], *, solver: str = "highs", time_limit: float = 120.0,
                    gap: float = 0.005, start: np.ndarray | None = None) -> ExtensiveSolution:
    """Solve the stacked program as an integer program through the back-end interface.

    ``start``: a feasible stacked point to begin from (e.g. the base plan's first years re-planned in
    every scenario), so that a time limit still leaves a commitment and a proven gap.

    Raises
    ------
    NoCommonCommitment
        When no commitment fits every scenario; the message names the scenario and the year that
        block it (:func:`blocking`).
    NoPlanFound
        When the solver found no point in ``time_limit`` [s] and proved nothing.
    """
    be = get_backend(solver)(ext.program)
    res = be.solve_mip(time_limit, gap, start)
    if res.x is None and start is not None and res.status != "infeasible":
        # the solver kept no point within the time limit: keep the start, bounded by the LP relaxation
        lp = be.solve_lp()
        lp_bound = -INF
        if lp.x is not None:
            lp_bound = float(lp.x[ext.epigraph] if ext.epigraph >= 0 else ext.program.cost @ lp.x)
        res = type(res)("feasible", np.asarray(start, dtype=float), lp_bound)
    if res.x is None:
        if res.status == "infeasible":
            raise NoCommonCommitment(blocking(ext.progs, stages, ext.years, solver))
        raise NoPlanFound(f"no hedged commitment found in {time_limit:g} s (none is proven impossible); "
                          "allow a longer --time-limit or commit fewer years")
    x = np.round(res.x)
    obj = float(ext.program.cost @ x) if ext.epigraph < 0 else float(res.x[ext.epigraph])
    bound = min(float(res.bound) if res.bound is not None else obj, obj)
    xs = tuple(x[o:o + p.n_cols] for o, p in zip(ext.offsets, ext.progs))
    g = (obj - bound) / max(abs(obj), 1e-9)
    if res.status == "optimal" and obj - bound <= 1e-9 * max(abs(obj), 1):
        g = 0.0
    return ExtensiveSolution(xs, obj, bound, float(max(g, 0.0)), res.status)


def blocking(progs: Sequence[CohortProgram], stages: Sequence[Stage], years: int, solver: str = "highs") -> str:
    """Why no commitment fits: the first scenario with no plan at all, or the first (year, scenario)
    whose tie to the base case has no LP solution, with the purchases it cannot make that year."""
    backend = get_backend(solver)
    y0 = stages[0].case.study.start_year
    for st, p in zip(stages, progs):
        if backend(p).solve_lp().x is None:
            return f"scenario {st.id} has no plan at all (its caps or limits cannot be met)"
    for n in range(1, years + 1):
        for s in range(1, len(stages)):
            pair = build_extensive([stages[0], stages[s]], n, progs=[progs[0], progs[s]])
            if backend(pair.program).solve_lp().x is None:
                year = y0 + n - 1
                lacks = sorted({k[3] for k in pair.forbidden if k[1] == n - 1 and k[2] == "buy"})
                why = f" (types not buyable there: {', '.join(lacks)})" if lacks else ""
                return (f"no commitment of {n} year(s) fits both the base case and scenario {stages[s].id}: "
                        f"scenario {stages[s].id} blocks year {year}{why}; commit fewer years or leave it out")
    return "no commitment of the first years fits every scenario's caps and limits at once"
