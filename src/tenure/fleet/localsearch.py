"""Local search over a few classes' schedules: a better whole-unit plan before the last proof.

From a whole-unit plan ``x``, one step frees every column of a few classes (two by default),
fixes every other class's columns at ``x`` and solves that smaller integer program, from ``x``,
for a short time.  The other classes' purchases stay as they are, so the freed classes share
what they leave of each year's cap; ``x`` itself is a point of the step's program, so a step
never returns a worse plan, and a better one replaces ``x``.  The class sets are taken in a
seeded random order, every set once before any set again; a round of every set in which no
step improved and every step was solved to optimality means ``x`` is optimal against every
such change (a local optimum), and the search stops there.

This is large-neighbourhood search (common practice; from memory: P. Shaw, "Using constraint
programming and local search methods to solve vehicle routing problems", CP 1998; the
sub-MIP form of E. Danna, E. Rothberg, C. Le Pape, "Exploring relaxation induced neighborhoods
to improve MIP solutions", Mathematical Programming 102, 2005).  For the capped cohort program
it attacks what the year-by-year rounding leaves: the rounding fixes the early years of every
class before it sees the later ones, and a pair of classes re-planned over the whole horizon
can trade a year's money between them.

Only a heuristic, and it proves nothing: the bound still comes from the LP relaxation or the
integer program.  Written against :class:`~tenure.fleet.backend.Backend`, so every back end
runs it.
"""

from __future__ import annotations

import itertools
import time
from dataclasses import dataclass, replace

import numpy as np

from .backend import Backend
from .program import CohortProgram

#: classes freed per step (measured on the 1,000-unit / 20-class benchmark fleet: two classes
#: gave the best plan in 25 s; three were close, five worse, each step then too slow to finish)
CLASSES_PER_STEP = 2
#: the time limit of one step [s]
STEP_SECONDS = 2.0
#: the relative gap at which a step stops (the steps are small: most are solved exactly)
STEP_GAP = 1e-6
#: the cores' reduced-cost limits, as shares of the first plan's cost above the LP bound, tightest
#: first; each core is solved whole in one step, and the class sets then run in the last.  Measured in
#: the whole layer (30 s, one run each): 1,000 units 0.0096 % with 0.002 alone (twice) against 0.011 %
#: with 0.004 alone; 250 units 0.029 % with 0.004 alone against 0.044 % with 0.002 alone
CORE_SHARES = (0.002, 0.004)
#: the fewest classes for which the search starts in the core (the demo's four classes are freed
#: three at a time anyway, and its core left out what its best plans use: 61,883,460 against
#: 61,763,378 without it)
CORE_MIN_CLASSES = 8
#: classes freed per step within the core
CORE_CLASSES = 3
#: the time limit of the step that solves one core whole [s] (1,000 units, the two cores: 0.0096 % at 7 s,
#: 0.0101 % at 10 s, one run each)
CORE_SECONDS = 7.0


@dataclass(frozen=True)
class SearchResult:
    """The plan after the search: ``x`` (whole units), its ``cost`` [money, time 0], the number of
    ``steps`` and of ``improvements``, ``local_optimum`` (True when a whole round of class sets,
    each solved to within ``STEP_GAP``, found nothing better) and ``seconds`` spent [s]."""

    x: np.ndarray
    cost: float
    steps: int
    improvements: int
    local_optimum: bool
    seconds: float


def class_of_column(prog: CohortProgram) -> np.ndarray:
    """(n_cols,) the index (in ``prog.cols`` order) of the class each column belongs to; −1 for
    columns of no class (e.g. the elastic program's extra capital)."""
    owner = np.full(prog.n_cols, -1, dtype=np.int64)
    for i, ci in enumerate(prog.cols.values()):
        for arr in (ci.keep, ci.sell, ci.buy, ci.overhaul):
            if arr is not None:
                owner[arr[arr >= 0]] = i
    return owner


def restricted(prog: CohortProgram, matrix, free: np.ndarray, x: np.ndarray) -> CohortProgram:
    """The program in the ``free`` columns alone, every other column held at ``x``: their activity
    moves into the row bounds, and rows with no free column are dropped.  A tenth of the program for
    two classes of twenty, so a step costs the solver a tenth of the set-up (measured on the
    1,000-unit benchmark fleet: 0.08–0.3 s a step against 0.3–0.4 s with bounds alone).  Only the
    arrays are meaningful: the class index (``cols``) still describes the whole program."""
    held = matrix[:, ~free] @ x[~free]
    part = matrix[:, free]
    rows = np.flatnonzero(np.diff(part.tocsr().indptr) > 0)
    return replace(prog, cost=prog.cost[free], lower=prog.lower[free], upper=prog.upper[free],
                   row_lower=prog.row_lower[rows] - held[rows], row_upper=prog.row_upper[rows] - held[rows],
                   matrix=part[rows, :].tocsc(), cap_rows=np.full(len(prog.cap_rows), -1), rule_rows=())


def reduced_costs(prog: CohortProgram, row_duals: np.ndarray) -> np.ndarray:
    """(n_cols,) each column's LP reduced cost ``d = c − Aᵀy`` [money, time 0 per unit], ``y`` being the
    LP's row duals (present-cost change per unit of each row's bound).  At an LP optimum d ≥ 0 on columns
    at their lower bound, d ≤ 0 at their upper bound and d = 0 between (LP optimality conditions)."""
    return np.asarray(prog.cost - prog.matrix.T @ np.asarray(row_duals, dtype=float), dtype=float)


def core_columns(prog: CohortProgram, lp_x: np.ndarray, row_duals: np.ndarray, x: np.ndarray,
                 share: float = CORE_SHARES[-1]) -> np.ndarray:
    """(n_cols,) bool: the *core* of the program, the columns a near-optimal plan is likely to use.

    A column is in the core when its LP reduced cost is at most ``share`` × (cost of ``x`` − LP
    bound), when the LP uses it, or when ``x`` does.  By LP duality a plan's cost is the LP bound plus
    Σ reduced cost × units plus the caps' shadow prices × the money left unspent, so a column of
    large reduced cost costs a plan that much a unit; columns dearer than the whole gap cannot be in
    any better plan at all (reduced-cost fixing, common practice).  The core is a heuristic cut far
    inside that limit: a search within it proves nothing (core problems: from memory, E. Balas and
    E. Zemel, "An algorithm for large zero-one knapsack problems", Operations Research 28, 1980).
    """
    d = reduced_costs(prog, row_duals)
    limit = share * max(float(prog.cost @ x - prog.cost @ lp_x), 0.0)
    return (d <= limit) | (np.asarray(x) > 0.5) | (np.asarray(lp_x) > 1e-9)


def class_sets(n_classes: int, size: int, rng: np.random.Generator) -> list[tuple[int, ...]]:
    """Every set of ``size`` classes (all of them when there are no more), in a random order."""
    sets = list(itertools.combinations(range(n_classes), min(size, n_classes)))
    return [sets[i] for i in rng.permutation(len(sets))]


def improve(prog: CohortProgram, backend: type[Backend], x: np.ndarray, deadline: float, *,
            size: int = CLASSES_PER_STEP, step_seconds: float = STEP_SECONDS, seed: int = 0,
            log=None, on_better=None, owner: np.ndarray | None = None, outside=None,
            stopped=None, grow: bool = False, core=None,
            core_seconds: float = CORE_SECONDS) -> SearchResult:
    """A plan at least as good as ``x`` by re-planning ``size`` classes at a time (module docstring).

    Parameters
    ----------
    prog : CohortProgram
        The program; ``x`` must be one of its integral points.
    backend : Backend subclass
        Solves each step's integer program.
    x : (n_cols,) array
        The starting plan [units].
    deadline : float
        ``time.perf_counter()`` value after which no step is started; a step's limit is cut so
        that it ends by then (a step may overrun by the solver's own granularity, about 1 s).
    size : int
        Classes freed per step.
    step_seconds : float
        Time limit of one step [s].
    seed : int
        Seed of the order of the class sets (the search is repeatable for a given seed).
    on_better : callable, optional
        Called with the new plan and its cost [money, time 0] at each improvement.
    owner : (n_cols,) int array, optional
        The class index of each column (default :func:`class_of_column`), for a program whose class
        index was left behind (e.g. sent to another process).
    outside : callable, optional
        Polled before each step; returns a plan found elsewhere (e.g. by the integer program running
        beside the search) or None.  A plan cheaper than the search's own is taken over, and when
        ``outside`` is given a local optimum does not end the search: it waits for such a plan (or
        the deadline).
    core : sequence of (n_cols,) bool arrays, optional
        Start in these parts of the program, each inside the next (:func:`core_columns` at
        ``CORE_SHARES``; the columns outside held at the plan's values): one step per core with every
        class free in it, for at most ``core_seconds`` each, then ``CORE_CLASSES`` classes a step within
        the last core, and at a local optimum there the whole program as without a core.  Measured on the
        1,000-unit benchmark fleet, the search alone from the first plan for 25 s: 1,109,899,545 with one
        core (share 0.004) against 1,109,978,474 without.
    stopped : callable, optional
        Polled before each step; True ends the search.
    grow : bool
        At a local optimum, free one class more per step (while fewer than all classes), back to
        ``size`` when a plan is taken over from outside.  Measured on the demo (four classes): from
        the plan where two at a time found nothing better (61,863,687 after 30 s), three at a time
        reached 61,760,714 in 25 s.

    Returns
    -------
    SearchResult
    """
    t0 = time.perf_counter()
    x = np.round(np.asarray(x, dtype=float))
    cost = float(prog.cost @ x)
    owner = class_of_column(prog) if owner is None else owner
    matrix = prog.matrix.tocsc()
    rng = np.random.default_rng(seed)
    n_classes = int(owner.max()) + 1 if len(owner) else 0
    steps = improvements = 0
    local_optimum = False
    tol = max(1e-9 * abs(cost), 1e-6)

    def over() -> bool:
        return deadline - time.perf_counter() < 0.2 or (stopped is not None and stopped())

    # within the cores first (a step for each whole, then class sets in the last), then the whole program
    cores = [np.asarray(c, dtype=bool) for c in (core if core is not None else ())]
    whole_steps = len(cores)  # the first steps: one core each, every class free
    in_core = bool(cores)

    def first_width() -> int:
        return CORE_CLASSES if in_core else size

    width = first_width()  # classes freed per step now

    def taken_over() -> bool:
        nonlocal x, cost, local_optimum, width
        other = outside() if outside is not None else None
        if other is None:
            return False
        other = np.round(np.asarray(other, dtype=float))
        c = float(prog.cost @ other)
        if c >= cost - tol:
            return False
        x, cost, local_optimum = other, c, False
        width = first_width()
        return True

    def sets():
        if steps < whole_steps:
            return [tuple(range(n_classes))] * (whole_steps - steps)
        return class_sets(n_classes, width, rng)

    while n_classes and not over():
        all_exact, improved = True, False
        for chosen in sets():
            if over():
                break
            improved = taken_over() or improved
            whole = steps < whole_steps
            within = cores[steps] if whole else cores[-1] if in_core else True
            free = (np.isin(owner, chosen) & within) | (owner < 0)
            sub = restricted(prog, matrix, free, x)
            limit = core_seconds if whole else step_seconds
            res = backend(sub).solve_mip(min(limit, deadline - time.perf_counter()), STEP_GAP, start=x[free])
            steps += 1
            if res.x is None:
                all_exact = False
                continue
            xs = x.copy()
            xs[free] = np.round(np.asarray(res.x, dtype=float))
            cs = float(prog.cost @ xs)
            # solved when proven within STEP_GAP (a back end may say "optimal" only at a zero gap); the
            # bound is the step's own, over the freed columns alone
            step_cost = float(sub.cost @ xs[free])
            all_exact = all_exact and (res.status == "optimal" or (
                res.bound is not None and step_cost - res.bound <= STEP_GAP * abs(step_cost) + 1e-6))
            # a step's optimum can only tie or beat its start; ties and rounding noise are not moves
            if cs < cost - tol:
                x, cost, improved, local_optimum = xs, cs, True, False
                improvements += 1
                if on_better is not None:
                    on_better(x, cost)
        if over():
            break
        if steps <= whole_steps:  # the cores were solved whole: on to the class sets in the last
            continue
        if in_core and not improved:
            # a local optimum within the core is none of the whole program: leave the core
            in_core, width = False, size
            continue
        if not improved:
            # the same steps from the same plan give the same answers: a round without a better plan
            # is a local optimum when every step of it was solved exactly; it ends the search unless a
            # plan may still come from outside
            local_optimum = all_exact
            if grow and width + 1 < n_classes:
                width += 1
                continue
            if outside is None:
                break
            while not over() and not taken_over():
                time.sleep(0.1)
        elif not in_core and n_classes <= width and outside is None:
            # the one step freed every class: the whole program
            local_optimum = all_exact
            break
    if log:
        log(f"local search: {improvements} better plans in {steps} steps"
            + (" (a local optimum)" if local_optimum else ""))
    return SearchResult(x, cost, steps, improvements, local_optimum, time.perf_counter() - t0)
