"""The capped fleet solve: the same sequence for every back end.

1. The recursion without caps; if its plan fits every cap and limit it is
   optimal and is returned as it is.
2. The LP relaxation: a proven lower bound and the shadow price of each year's cap.
3. Fix-and-relax by year, guided by the LP (:mod:`tenure.fleet.rounding`): a
   feasible plan whose gap against the LP bound is usually well under 0.5 %.
   Years no rounding can fix get their own small integer programs
   (:mod:`tenure.fleet.yearmip`); under emission caps it first runs on a guiding
   program that keeps a reserve under each binding cap (:mod:`tenure.fleet.reserve`).
   When the rounding still fails, relax-and-fix by windows of years
   (:mod:`tenure.fleet.windows`) for at most ``WINDOWS_SHARE`` of the time left.
4. If the gap is still above the target, the integer program from that plan as
   its start (or, when both failed, from the years the rounding had fixed), for the time left.
   When it runs for more than a few seconds, a local search over two classes at a time
   (:mod:`tenure.fleet.localsearch`) joins it in a process of its own on the other core
   (:mod:`tenure.fleet.beside`); the two trade plans, the cheaper plan is kept, and the bound
   is the integer program's alone.  The integer program stops once the cheaper plan is proven
   within the gap by its bound, whichever side found it.

When no plan fits the caps, the elastic program (:mod:`tenure.fleet.shortfall`)
finds the least extra capital per year that makes one fit, and the plan under
the raised caps.
"""

from __future__ import annotations

import math
import sys
import time
from dataclasses import dataclass, field

import numpy as np

from .. import chain
from ..model import Case
from ..plan import Plan, Provenance, assemble
from ..uncapped import build_graphs, solve_uncapped
from .backend import DEFAULT_BACKEND, Backend, confirming_backends, get_backend
from .flows import fits_caps, flows_to_groups
from . import localsearch, rules_check, rules_rows
from .precheck import forced_over_caps
from .reserve import reserved
from .program import build_program
from .rounding import fix_and_relax
from .shortfall import shortfall
from .windows import window_plan

INF = math.inf
#: the default stopping gap, relative; also the loosest gap within which a plan is called
#: "optimal" (a looser ``--gap`` stops sooner, and the plan is then "feasible" with its gap)
DEFAULT_GAP = 1e-4
#: the share of the time left that windows of years may take when the rounding fails (the MIP gets the rest)
WINDOWS_SHARE = 0.6
#: the least time left [s] for which the local search over classes runs beside the MIP (it starts
#: after ``beside.DELAY`` seconds of the MIP, and its process takes about a second to start)
BESIDE_SECONDS = 8.0
#: the share of the time left that fix-and-relax on the program may take
ROUND_SHARE = 0.7
#: years before the one the rounding failed at that the repair re-opens
REPAIR_BACK = 2
#: the share of the time left that fix-and-relax on the guiding program (a reserve under the
#: emission caps) may take before fix-and-relax on the program itself
GUIDE_SHARE = 0.4


@dataclass
class _Run:
    """The state one solve carries from stage to stage."""

    case: Case
    backend: type[Backend]
    t0: float
    deadline: float
    progress: bool
    stats: dict = field(default_factory=dict)
    graphs: dict = field(default_factory=dict)
    sols: dict = field(default_factory=dict)
    uncapped_cost: float = 0.0
    #: the best dual bound the MIP has reported so far [money, time 0]
    bound_seen: float = -INF

    def log(self, msg: str) -> None:
        if self.progress:
            print(f"  [{self.elapsed():6.1f} s] {msg}", file=sys.stderr, flush=True)

    def elapsed(self) -> float:
        return round(time.perf_counter() - self.t0, 3)


def solve_capped(case: Case, backend: str = DEFAULT_BACKEND, time_limit: float = 120.0, gap: float = DEFAULT_GAP,
                 progress: bool = False, solver: str | None = None) -> Plan:
    """Least-cost fleet plan under annual capital caps and purchase limits.

    Parameters
    ----------
    case : Case
    backend : str
        Name of the solver back end (see :func:`tenure.fleet.backend.get_backend`); it runs
        every stage.  ``solver`` is the same option under its former name.
    time_limit : float
        Seconds for the whole solve [s].
    gap : float
        Relative gap at which to stop (1e-4 = 0.01 %); status "optimal" means proven within it,
        and the plan records it as ``tolerance``.
    progress : bool
        Print one progress line per stage on stderr.

    Returns
    -------
    Plan
        status "optimal", "feasible" (with ``lower_bound`` and ``gap``), "infeasible" or
        "unsolved" (with ``shortfall`` and the plan under the raised caps); ``provenance`` names
        the method and back end behind the plan, its bound and its shadow prices.
    """
    name = solver if solver is not None else backend
    t0 = time.perf_counter()
    run = _Run(case, get_backend(name), t0, t0 + time_limit, progress, stats={"solver": name})
    run.stats["tolerance"] = min(gap, DEFAULT_GAP)
    run.graphs = build_graphs(case)
    run.sols = {c: chain.backward(g) for c, g in run.graphs.items()}
    free = solve_uncapped(case, run.graphs, run.sols)
    run.uncapped_cost = free.present_cost
    if fits_caps(free, case) and not rules_check.breaks(case, free):
        run.log("the uncapped plan fits every cap and limit: it is optimal")
        run.stats.update(first_plan_seconds=run.elapsed(), caps_binding=False)
        return free.with_(uncapped_cost=run.uncapped_cost, method="recursion (caps not binding)",
                          stats={**free.stats, **run.stats}, tolerance=run.stats["tolerance"],
                          provenance=Provenance("backward recursion (the caps do not bind)",
                                                "the plan itself (the recursion is exact)"))
    return _solve_program(run, gap)


def _solve_program(run: _Run, gap: float) -> Plan:
    case, stats, label = run.case, run.stats, run.backend.label
    over = forced_over_caps(case, run.graphs)
    if over:
        stats["forced_over_caps"] = [f.describe() for f in over]
        run.log("pre-check: " + over[0].describe()[:160])
        return _infeasible(run, proven=True)
    prog = build_program(case, run.graphs)
    stats.update(columns=prog.n_cols, rows=prog.n_rows)
    run.log(f"cohort program: {prog.n_cols} columns, {prog.n_rows} rows")
    be = run.backend(prog)
    lp = be.solve_lp()
    stats["lp_seconds"] = run.elapsed()
    if lp.x is None:
        run.log(f"LP relaxation: {lp.status} — diagnosing the shortfall")
        return _infeasible(run)
    lp_bound = float(prog.cost @ lp.x)
    shadow = {case.study.start_year + k: float(max(0.0, -lp.row_duals[prog.cap_rows[k]]))
              for k in range(case.study.horizon) if prog.cap_rows[k] >= 0}
    run.log(f"LP bound {lp_bound:,.0f}")
    best_x, best_cost, method = None, INF, f"fix-and-relax rounding of the LP relaxation ({label})"
    partial: list = []
    if np.all(np.abs(lp.x - np.round(lp.x)) < 1e-7):
        # a network flow (e.g. class sizes without caps or targets): the LP optimum is a whole-unit plan
        xr = np.round(lp.x)
        method = f"LP relaxation, integral ({label})"
        run.log("the LP relaxation is integral: its plan is optimal")
    else:
        xr = _round(run, prog, be, lp, partial)
    if xr is not None and case.coupled and not rules_rows.satisfies(prog, xr):
        run.log("the rounded plan breaks a coupling row: the MIP solver takes over")
        xr = None
    if xr is None and time.perf_counter() < run.deadline:
        xr = _repair(run, prog, partial)
        if xr is not None:
            method = f"relax-and-fix by windows of years ({label})"
            run.log("plan by windows of years")
        else:
            run.log("windows of years found no plan: the MIP solver takes over")
    if xr is not None:
        best_x, best_cost = xr, float(prog.cost @ xr)
        stats["first_plan_seconds"] = run.elapsed()
        run.log(f"first plan {best_cost:,.0f} (gap {(best_cost - lp_bound) / abs(best_cost):.3%})")
    bound, bound_from = lp_bound, f"LP relaxation ({label})"
    history = stats.setdefault("gap_history", [])
    cur_gap = (best_cost - bound) / abs(best_cost) if best_x is not None else INF
    if best_x is not None:
        history.append([run.elapsed(), cur_gap])
    if cur_gap > gap and time.perf_counter() < run.deadline:
        left = run.deadline - time.perf_counter()
        hint = _partial_start(partial) if best_x is None else None
        if hint is not None:
            stats["partial_start_columns"] = int(len(hint[0]))
            run.log(f"MIP ({label}) for up to {left:.0f} s from the {len(hint[0])} columns fix-and-relax fixed")
        else:
            run.log(f"MIP ({label}) for up to {left:.0f} s")
        beside = _search_beside(run, prog, best_x, left, history, lp_bound, lp)
        try:
            res = be.solve_mip(left, gap, best_x, _gap_recorder(run, history, lp_bound, trust_dual=hint is None),
                               **({"partial_start": hint} if hint is not None else {}),
                               **({"exchange": beside} if beside is not None else {}))
        finally:  # the search stops with the MIP, however the MIP ends (an interrupt included)
            found = beside.close() if beside is not None else None
        if res.x is not None:
            xm = np.round(res.x)
            cm = float(prog.cost @ xm)
            if cm < best_cost:
                best_x, best_cost = xm, cm
                method = f"integer program ({label})" + (" from the first plan" if xr is not None else "")
                stats.setdefault("first_plan_seconds", run.elapsed())
            if res.bound is not None and res.bound > bound:
                bound, bound_from = res.bound, f"integer program's dual bound ({label})"
        if beside is not None:
            if found is not None:
                stats["local_search"] = {"steps": found.steps, "improvements": found.improvements,
                                         "local_optimum": found.local_optimum}
                run.log(f"local search beside the MIP: {found.improvements} better plans in {found.steps} steps")
                if found.improvements:
                    method += f", with a local search over classes beside it ({label})"
            cost, plan = beside.best
            if cost < best_cost - 1e-6 and rules_rows.satisfies(prog, plan):
                # the search's last plan came after the MIP's last look at it
                best_x, best_cost = plan, float(prog.cost @ plan)
                method = f"local search over classes beside the integer program ({label})"
    if best_x is None:
        stats["seconds"] = run.elapsed()
        return _infeasible(run)
    cur_gap = max(0.0, (best_cost - bound) / abs(best_cost))
    history.append([run.elapsed(), cur_gap])
    groups = flows_to_groups(prog, best_x, case, run.sols)
    stats["seconds"] = run.elapsed()
    plan = assemble(case, run.graphs, groups, status="optimal" if cur_gap <= stats["tolerance"] + 1e-12 else "feasible",
                    method="integer program", lower_bound=min(bound, best_cost), uncapped_cost=run.uncapped_cost,
                    shadow=shadow, message="shadow prices from the LP relaxation", stats=stats,
                    provenance=Provenance(method, bound_from, f"LP relaxation ({label})"))
    plan = plan.with_(tolerance=stats["tolerance"])
    run.log(f"plan {plan.present_cost:,.0f}, gap {plan.gap:.3%}, status {plan.status}")
    return plan


def _search_beside(run: _Run, prog, x, seconds: float, history: list, lp_bound: float, lp):
    """The local search over classes in a process beside the MIP (:mod:`tenure.fleet.beside`), from the
    whole-unit plan ``x``; None without a plan, with less than ``BESIDE_SECONDS`` to go, or in a
    worker process (a sweep's or comparison's workers already take the cores).  With a back end that
    trades plans during its solve the search starts after ``beside.DELAY`` seconds of it; with one
    that does not (CBC), at once, and the plans meet at the end.  On programs of at least
    ``localsearch.CORE_MIN_CLASSES`` classes the search starts in the core of the LP ``lp``
    (:func:`~tenure.fleet.localsearch.core_columns`)."""
    import multiprocessing

    if x is None or seconds < BESIDE_SECONDS or multiprocessing.parent_process() is not None:
        return None

    def better(cost: float) -> None:
        # against the best bound the MIP has reported so far (the LP bound before it reports any)
        bnd = max(lp_bound, run.bound_seen)
        history.append([run.elapsed(), max(0.0, (cost - bnd) / abs(cost))])

    from .beside import DELAY, SearchBeside

    core = None
    if lp.row_duals is not None and len(prog.cols) >= localsearch.CORE_MIN_CLASSES:
        core = [localsearch.core_columns(prog, lp.x, lp.row_duals, x, share) for share in localsearch.CORE_SHARES]
        run.stats["core_columns"] = [int(c.sum()) for c in core]
    search = SearchBeside(prog, run.backend, x, seconds, on_plan=better, delay=DELAY, core=core)
    what = ("a local search over classes, first in the LP's cores "
            f"({' and '.join(f'{int(c.sum()):,}' for c in core)} of {prog.n_cols:,} columns)" if core is not None
            else f"a local search over {localsearch.CLASSES_PER_STEP} classes at a time")
    if run.backend.trades_plans and core is None:
        run.log(f"{what} joins it after {DELAY:g} s")
    else:
        # with a back end that makes no calls during its solve, or with a core whose first step is a
        # long one (CORE_SECONDS), at once: on the 1,000-unit benchmark fleet the MIP has no better
        # plan of its own in its first 16 s
        search.start()
        run.log(f"{what} runs beside it")
    return search


def _round(run: _Run, prog, be: Backend, lp, partial: list):
    """Fix-and-relax: first on the guiding program that keeps a reserve under the binding emission
    caps (:mod:`tenure.fleet.reserve`), for up to ``GUIDE_SHARE`` of the time left, then on the program
    itself.  Measured on the 1,000-unit benchmark fleet (docs/benchmarks-rules.md): yearly emission
    caps under a capital cap that binds every year find a plan only with the reserve; a single cap
    finds one either way, and sooner without it."""
    guide = reserved(prog, lp.row_duals) if run.case.emission_caps else None
    if guide is not None:
        bg = run.backend(guide)
        lg = bg.solve_lp()
        if lg.x is not None:
            until = time.perf_counter() + GUIDE_SHARE * (run.deadline - time.perf_counter())
            xg = fix_and_relax(guide, run.case, bg, lg.x, until, run.log)
            if xg is not None and rules_rows.satisfies(prog, xg[:prog.n_cols]):
                run.log("fix-and-relax with a reserve under the emission caps found a plan")
                return xg[:prog.n_cols]
        run.log("fix-and-relax with a reserve under the emission caps found no plan")
    # the rounding (with its year programs and backtracking) may take only part of the time left, so a
    # failed rounding still leaves the repair and the integer program time of their own
    until = time.perf_counter() + ROUND_SHARE * (run.deadline - time.perf_counter())
    return fix_and_relax(prog, run.case, be, lp.x, until, run.log, partial=partial)


def _repair(run: _Run, prog, partial: list):
    """A plan when the rounding failed: windows of years (each a small MIP that sees the LP of the later
    years), first over the years from a little before the failure with the rounding's earlier years
    kept, then over every year; at most ``WINDOWS_SHARE`` of the time left in all."""
    deadline = time.perf_counter() + WINDOWS_SHARE * (run.deadline - time.perf_counter())
    kept = partial[:-REPAIR_BACK] if len(partial) > REPAIR_BACK else []
    if kept:
        hint = _partial_start(kept)
        x = window_plan(prog, run.backend, deadline, fixed=hint, first_year=len(kept))
        if x is not None:
            run.log(f"the rounding's first {len(kept)} years kept, the later ones repaired by windows of years")
            return x
    return window_plan(prog, run.backend, deadline)


def _partial_start(partial: list):
    """``(columns, values)`` of the years fix-and-relax had fixed when it failed, or None."""
    if not partial:
        return None
    return (np.concatenate([c for c, _ in partial]).astype(np.int32), np.concatenate([v for _, v in partial]))


def _gap_recorder(run: _Run, history: list, floor_bound: float, trust_dual: bool = True):
    """(seconds, gap) at each improving MIP point, against the better of its dual bound and the LP bound.

    ``trust_dual`` False: nothing is recorded, because HiGHS completing a partial start runs a
    sub-MIP whose callbacks report the sub-problem's objective and bound (on the 250-unit benchmark
    fleet a "0.008 %" that the whole never had); the gap after the solve is recorded as always."""

    def on_incumbent(obj: float, dual_bound: float) -> None:
        if not trust_dual:
            return
        bnd = max(dual_bound, floor_bound)
        run.bound_seen = max(run.bound_seen, bnd)
        history.append([run.elapsed(), max(0.0, (obj - bnd) / max(abs(obj), 1e-9))])

    return on_incumbent


def _infeasible(run: _Run, proven: bool = False) -> Plan:
    """The elastic diagnosis: shortfall by year, forcing units, and the plan under the raised caps.

    "infeasible" only on a proof: the elastic program's bound shows that extra capital is needed,
    and, when the back end is not the default one, the default back end proves it too
    (:func:`~tenure.fleet.backend.confirming_backends`), so no solver's false verdict reaches the
    user.  Otherwise the status is "unsolved".  ``proven`` True: the pre-check's arithmetic
    (:mod:`tenure.fleet.precheck`) already proved it, whatever the solver; an LP's verdict is
    confirmed like the others.
    """
    case, stats = run.case, run.stats
    left = max(5.0, run.deadline - time.perf_counter())
    if case.coupled:
        rules_check.raise_if_impossible(case, run.graphs, run.backend, left)
        left = max(5.0, run.deadline - time.perf_counter())
    sf = shortfall(case, run.graphs, run.backend, left, run.uncapped_cost, stats.get("tolerance", DEFAULT_GAP))
    confirmed, bound = sf.proven, sf.bound
    for other in confirming_backends(stats["solver"]) if confirmed and not proven else ():
        check = shortfall(case, run.graphs, get_backend(other), max(5.0, left / 2), run.uncapped_cost,
                          stats.get("tolerance", DEFAULT_GAP))
        confirmed, bound = confirmed and check.proven, min(bound, check.bound)
        if check.least and check.extra.sum() < sf.extra.sum():
            sf = check
    y0 = case.study.start_year
    short = [(y0 + k, float(sf.extra[k])) for k in range(case.study.horizon) if sf.extra[k] > 0]
    groups = flows_to_groups(sf.prog, sf.x, case, run.sols)
    stats["seconds"] = run.elapsed()
    total = float(sf.extra.sum())
    least = sf.least and total - bound <= max(1.0, 1e-4 * total)
    stats.update(shortfall_at_most=total, shortfall_at_least=bound, shortfall_least=least)
    if confirmed or proven:
        status, message = "infeasible", ("no plan fits the caps (proven); the plan shown fits the caps raised "
                                         "by the shortfall")
    else:
        status, message = "unsolved", (f"no plan within the caps was found in {stats['seconds']:g} s and none is "
                                       "proven impossible; raising the caps by the shortfall is enough for the "
                                       "plan shown (a longer time limit may find a plan within the caps)")
    plan = assemble(case, run.graphs, groups, status=status, method="integer program (elastic)",
                    uncapped_cost=run.uncapped_cost, shortfall=short, message=message, stats=stats,
                    provenance=Provenance(f"elastic integer program ({run.backend.label})"))
    short_years = {y for y, _ in short}
    forcing = [f"{u.unit} ({e.year}, age {e.from_age})" for u in plan.units for e in u.events
               if e.year in short_years and e.from_type and e.action != "overhaul"
               and e.from_age >= case.type(e.from_type).max_age]
    return plan.with_(forcing_units=tuple(forcing), shortfall_bound=bound,
                      shortfall_least=least, tolerance=stats.get("tolerance"))
