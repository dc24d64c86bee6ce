"""The local search over classes (tenure.fleet.localsearch), checked against exhaustive enumeration.

The reference optimum of each small capped fleet is test_fleet.exhaustive_optimum: every joint
keep/replace schedule of the units, priced from the curves (never from the program), filtered by
the caps and limits.  The search starts from a deliberately poor whole-unit plan: any point of the
program, found with a zero objective.
"""

from __future__ import annotations

import itertools
import time
from dataclasses import replace

import numpy as np
import pytest
from casekit import REPO
from test_fleet import close, exhaustive_optimum
from test_fleet_precision import MORE, SMALL, _case

from tenure.case import load_case
from tenure.fleet.backend import get_backend
from tenure.fleet.highs import HighsBackend
from tenure.fleet.localsearch import class_of_column, class_sets, core_columns, improve, reduced_costs
from tenure.fleet.program import build_program

NAMES = list(SMALL) + list(MORE)


def _poor_start(prog, backend):
    """A whole-unit point of ``prog`` with no regard to cost (HiGHS on a zero objective)."""
    res = backend(replace(prog, cost=np.zeros(prog.n_cols))).solve_mip(30, 0.0)
    assert res.x is not None
    return np.round(res.x)


def _set_up(case, solver="highs"):
    """The exhaustive optimum of ``case``, its program, the back end and a poor starting plan."""
    best, _ = exhaustive_optimum(case)
    prog = build_program(case)
    be = get_backend(solver)
    return best, prog, be, _poor_start(prog, be)


def _within_rows(prog, x):
    act = prog.matrix @ x
    return (np.array_equal(x, np.round(x)) and np.all(x >= prog.lower - 1e-9) and np.all(x <= prog.upper + 1e-9)
            and np.all(act >= prog.row_lower - 1e-6) and np.all(act <= prog.row_upper + 1e-6))


@pytest.mark.parametrize("solver", ["highs", "cbc"])
@pytest.mark.parametrize("name", NAMES)
def test_freeing_every_class_reaches_the_exhaustive_optimum(name, solver):
    """Two classes (vans, carts) and two freed per step: the one step is the whole program, so the
    search ends at the exhaustive optimum and calls it a local optimum."""
    best, prog, be, x0 = _set_up(_case(name), solver)
    r = improve(prog, be, x0, time.perf_counter() + 60, size=2)
    assert _within_rows(prog, r.x)
    assert close(r.cost, best)
    assert close(float(prog.cost @ r.x), r.cost)
    assert r.local_optimum and r.steps == 1
    assert r.improvements == (0 if close(float(prog.cost @ x0), best) else 1)


@pytest.mark.parametrize("solver", ["highs", "cbc"])
@pytest.mark.parametrize("name", NAMES)
def test_one_class_at_a_time_never_gets_worse_and_keeps_every_row(name, solver):
    """One class freed per step: each better plan is kept, every plan stays within every bound and
    row (matrix arithmetic), and none costs less than the exhaustive optimum; the last round is a
    local optimum on both back ends (CBC proves a step by its bound over the freed columns)."""
    best, prog, be, x0 = _set_up(_case(name), solver)
    seen = []
    r = improve(prog, be, x0, time.perf_counter() + 60, size=1,
                on_better=lambda x, cost: seen.append(cost))
    assert _within_rows(prog, r.x)
    assert best - 0.01 <= r.cost <= float(prog.cost @ x0) + 1e-6
    assert seen == sorted(seen, reverse=True) and len(seen) == r.improvements
    assert r.improvements == 0 or close(seen[-1], r.cost)
    # a round of both classes with no better plan ends it: at most one round after the last improvement
    assert r.steps <= 2 * (r.improvements + 1)
    assert r.local_optimum


def test_the_search_stops_at_its_deadline_with_the_plan_it_was_given():
    """No time left: no step is run and the starting plan comes back as it was."""
    case = _case("gross-45k")
    prog = build_program(case)
    be = get_backend("highs")
    x0 = _poor_start(prog, be)
    r = improve(prog, be, x0, time.perf_counter() - 1.0)
    assert r.steps == 0 and not r.local_optimum
    assert np.array_equal(r.x, x0)


def test_class_sets_take_every_combination_once_and_columns_know_their_class():
    rng = np.random.default_rng(3)
    sets = class_sets(6, 2, rng)
    assert sorted(sets) == list(itertools.combinations(range(6), 2))  # 15 pairs, each once
    assert class_sets(2, 5, rng) == [(0, 1)]
    prog = build_program(_case("gross-45k"))
    owner = class_of_column(prog)
    assert set(owner.tolist()) == {0, 1}
    for i, ci in enumerate(prog.cols.values()):
        assert np.all(owner[ci.buy[ci.buy >= 0]] == i)


@pytest.mark.parametrize("name", ["gross-45k", "net-26k"])
def test_search_beside_finds_the_optimum_in_its_own_process_and_hands_it_over(name):
    """SearchBeside (tenure.fleet.beside) runs the search in a process of its own: from a poor plan
    it hands over better plans through offered(), each within every row, and ends (both classes
    freed at once) at the exhaustive optimum; close() then returns the search's own result."""
    from tenure.fleet.beside import SearchBeside

    best, prog, be, x0 = _set_up(_case(name), "highs")
    costs = []
    search = SearchBeside(prog, be, x0, 30.0, on_plan=costs.append)
    search.found(float(prog.cost @ x0) + 1.0, x0)  # not better: nothing is sent, but the search starts
    assert _search_processes()  # the process is there (so the driver test's check can fail)
    offered = []
    until = time.perf_counter() + 60
    while time.perf_counter() < until and not (offered and search.best[0] <= best + 0.01):
        x = search.offered()
        if x is not None:
            offered.append(x)
        time.sleep(0.05)
    result = search.close()
    assert not _search_processes()
    assert close(search.best[0], best)
    assert all(_within_rows(prog, x) for x in offered) and offered
    assert costs == sorted(costs, reverse=True) and close(costs[-1], best)
    assert result is not None and close(result.cost, best) and result.local_optimum


def test_search_beside_takes_over_a_cheaper_plan_from_the_integer_program():
    """A plan reported through found() that is cheaper than the search's own replaces it in the
    search process: the search's result is then at least as good as that plan (here the optimum,
    found by HiGHS on the whole program)."""
    from tenure.fleet.beside import SearchBeside

    best, prog, be, x0 = _set_up(_case("gross-38k"), "highs")
    opt = be(prog).solve_mip(30, 0.0)
    assert close(float(prog.cost @ np.round(opt.x)), best)
    search = SearchBeside(prog, be, x0, 20.0)
    search.found(float(prog.cost @ np.round(opt.x)), opt.x)
    time.sleep(1.0)
    search.found(float(prog.cost @ np.round(opt.x)), opt.x)
    result = search.close()
    assert close(search.best[0], best)
    assert result is not None and close(result.cost, best)


def test_a_search_that_never_started_costs_nothing():
    from tenure.fleet.beside import SearchBeside

    prog = build_program(_case("gross-45k"))
    x0 = _poor_start(prog, get_backend("highs"))
    search = SearchBeside(prog, get_backend("highs"), x0, 30.0, delay=60.0)
    assert search.offered() is None
    assert search.close() is None
    assert np.array_equal(search.best[1], x0)


class _PlanElsewhere:
    """An exchange whose best plan (found elsewhere) costs ``cost``; it offers HiGHS nothing and
    ignores HiGHS's plans."""

    def __init__(self, cost: float):
        self.best = (cost, None)

    def offered(self):
        return None

    def found(self, cost, plan):
        pass


def test_highs_stops_once_the_plan_found_elsewhere_is_within_the_gap_of_its_bound():
    """HiGHS's interrupt callback ends the solve as soon as the exchange's best plan is within the
    gap of HiGHS's dual bound, whoever found that plan.  A plan elsewhere at cost 1 (below any bound of
    the demo, whose LP bound is about 61.6 million) is within the gap at HiGHS's first finite bound,
    so the solve ends there: not optimal by HiGHS's own incumbent, with a bound that is still a valid
    one (at most the plan HiGHS kept, and at least the LP bound).  A plan elsewhere at +inf never
    stops it: the same solve at a loose gap ends optimal on its own."""
    prog = build_program(load_case(REPO / "cases" / "quillmere-fleet.toml"))
    be = get_backend("highs")
    lp = be(prog).solve_lp()
    lp_bound = float(prog.cost @ lp.x)
    start = _poor_start(prog, be)
    stopped = HighsBackend(prog).solve_mip(120, 1e-4, start=start, exchange=_PlanElsewhere(1.0))
    assert stopped.status == "feasible" and stopped.x is not None
    kept = float(prog.cost @ np.round(stopped.x))
    assert kept <= float(prog.cost @ start) + 1e-6
    assert lp_bound * (1 - 1e-9) <= stopped.bound <= kept
    # HiGHS proves 1e-4 on the demo only after tens of seconds of branching: an interrupted solve is
    # far from that proof
    assert (kept - stopped.bound) / kept > 1e-4
    free = HighsBackend(prog).solve_mip(120, 0.05, start=start, exchange=_PlanElsewhere(float("inf")))
    assert free.status == "optimal"
    assert (float(prog.cost @ np.round(free.x)) - free.bound) <= 0.05 * abs(free.bound)


@pytest.mark.parametrize("solver", ["highs", "cbc"])
@pytest.mark.parametrize("name", ["gross-45k", "gross-60k-van-limit-1"])
def test_default_run_with_the_search_beside_from_the_start_is_still_exact(name, solver, monkeypatch):
    """The driver with the search joining at once (no delay; with CBC it always starts at once): the
    run still ends at the exhaustive optimum, called optimal, and the search's process is stopped."""
    from tenure import fleet
    from tenure.fleet import beside, driver

    monkeypatch.setattr(beside, "DELAY", 0.0)
    monkeypatch.setattr(driver, "BESIDE_SECONDS", 0.0)
    case = _case(name)
    best, _ = exhaustive_optimum(case)
    plan = fleet.solve_capped(case, backend=solver, time_limit=60)
    assert plan.status == "optimal" and close(plan.present_cost, best)
    assert not _search_processes()


def _search_processes() -> list[int]:
    """Pids of this process's children that run the search (``python -m tenure.fleet.beside``), read
    from /proc (Linux, where the search runs)."""
    import os
    from pathlib import Path

    found = []
    for d in Path("/proc").glob("[0-9]*"):
        try:
            ppid = int((d / "stat").read_text().rsplit(")", 1)[1].split()[1])
            cmd = (d / "cmdline").read_bytes().replace(b"\0", b" ")
        except (OSError, ValueError, IndexError):
            continue
        if ppid == os.getpid() and b"tenure.fleet.beside" in cmd:
            state = (d / "stat").read_text().rsplit(")", 1)[1].split()[0]
            if state != "Z":
                found.append(int(d.name))
    return found


def _three_class_doc():
    """test_fleet's vans and carts plus a third class (one mower), under a cap that binds. Invented figures."""
    from test_fleet import small_doc

    doc = small_doc(cap=45000)
    doc["asset_type"].append({"id": "mower-a", "class": "mower", "price": 9000, "max_age": 5,
                              "om": {"first": 700, "gradient": 450}, "salvage": {"retain": 0.7}})
    doc["unit"].append({"id": "M1", "type": "mower-a", "age": 3})
    return doc


def test_growing_neighbourhoods_free_more_classes_at_a_local_optimum():
    """Three classes, one freed per step with ``grow``: at the local optimum of single classes the
    search goes on with pairs, so it takes more steps than a round of singles after its last
    improvement, ends no worse than without growing and no better than the exhaustive optimum."""
    from tenure.case import build_case

    case = build_case(_three_class_doc())
    best, prog, be, x0 = _set_up(case)
    plain = improve(prog, be, x0, time.perf_counter() + 60, size=1)
    grown = improve(prog, be, x0, time.perf_counter() + 60, size=1, grow=True)
    assert len(prog.cols) == 3
    assert plain.local_optimum and grown.local_optimum
    assert plain.steps <= 3 * (plain.improvements + 1)
    assert grown.steps >= plain.steps + 3  # at least one round of the three pairs
    assert best - 0.01 <= grown.cost <= plain.cost + 1e-6
    assert _within_rows(prog, grown.x)


def test_a_step_proven_by_its_bound_counts_as_solved():
    """A back end that says "feasible" with a bound at the step's optimum (as CBC does when it stops
    within its gap) proves the step as well as "optimal": the bound is compared with the step's own
    cost over the freed columns, not with the whole plan's."""
    from tenure.fleet.backend import MIPResult

    highs = get_backend("highs")

    class BoundOnly(highs):
        def solve_mip(self, *a, **kw):
            res = super().solve_mip(*a, **kw)
            return MIPResult("feasible", res.x, res.bound)

    prog = build_program(_case("gross-45k"))
    x0 = _poor_start(prog, highs)
    r = improve(prog, BoundOnly, x0, time.perf_counter() + 60, size=1)
    assert r.local_optimum


def _lp_and_optimum(prog, solver="highs"):
    """The program's LP (back end ``solver``) and a whole-unit optimum (HiGHS, gap 0)."""
    lp = get_backend(solver)(prog).solve_lp()
    assert lp.status == "optimal"
    opt = get_backend("highs")(prog).solve_mip(60, 0.0)
    assert opt.status == "optimal"
    return lp, np.round(opt.x)


@pytest.mark.parametrize("solver", ["highs", "cbc"])
@pytest.mark.parametrize("name", NAMES)
def test_reduced_costs_meet_the_lp_optimality_conditions(name, solver):
    """d = c − Aᵀy from either back end's row duals is dual feasible for the LP optimum: d ≥ 0 at a
    column's lower bound, d ≤ 0 at its upper bound, d = 0 between (LP optimality conditions, any LP
    text; common practice); and the LP bound equals y·b + d·x over the active bounds (strong duality).
    With HiGHS, d is also HiGHS's own reduced cost of the same solve."""
    prog = build_program(_case(name))
    lp = get_backend(solver)(prog).solve_lp()
    d = reduced_costs(prog, lp.row_duals)
    x, scale = lp.x, max(1.0, float(np.abs(prog.cost).max()))
    tol = 1e-6 * scale
    at_lo, at_up = x <= prog.lower + 1e-7, x >= prog.upper - 1e-7
    assert np.all(d[at_lo & ~at_up] >= -tol) and np.all(d[at_up & ~at_lo] <= tol)
    assert np.all(np.abs(d[~at_lo & ~at_up]) <= tol)
    act = prog.matrix @ x
    y = np.asarray(lp.row_duals)
    row_side = np.where(y > 0, prog.row_lower, np.where(y < 0, prog.row_upper, act))
    assert close(float(y @ row_side + d @ x), float(prog.cost @ x))
    if solver == "highs":
        from tenure.fleet.highs import _load

        h = _load(prog, prog.lower, prog.upper, np.zeros(prog.n_cols, dtype=np.int32))
        h.run()
        assert np.allclose(d, np.asarray(h.getSolution().col_dual), atol=tol)


@pytest.mark.parametrize("name", NAMES)
def test_a_core_at_the_whole_gap_keeps_every_column_of_the_optimum(name):
    """Reduced-cost fixing (common practice): a plan costs at least the LP bound plus each column's
    reduced cost times its units, so with the limit at the whole gap of the optimal plan itself the
    core holds every column that plan uses, and the optimum is the exhaustive one.  Tighter cores
    are nested inside it, and the cores always hold the LP's columns and the plan's."""
    case = _case(name)
    best, _ = exhaustive_optimum(case)
    prog = build_program(case)
    lp, opt = _lp_and_optimum(prog)
    assert close(float(prog.cost @ opt), best)
    whole = core_columns(prog, lp.x, lp.row_duals, opt, share=1.0)
    assert np.all(whole[opt > 0.5])
    tight = core_columns(prog, lp.x, lp.row_duals, opt, share=0.0)
    assert np.all(whole[tight]) and np.all(tight[lp.x > 1e-9]) and np.all(tight[opt > 0.5])
    d = reduced_costs(prog, lp.row_duals)
    assert np.array_equal(~whole, (d > float(prog.cost @ opt - prog.cost @ lp.x)) & (opt < 0.5) & (lp.x <= 1e-9))


def test_the_search_from_the_cores_leaves_them_and_ends_at_a_local_optimum():
    """Three classes, two cores (the tightest only the LP's and the start's columns): the first steps
    solve each core whole, then single classes in the last core; at a local optimum there the search
    goes on in the whole program, so it ends at a local optimum of the whole program, no worse than
    its start and no better than the exhaustive optimum, within every row."""
    from tenure.case import build_case

    case = build_case(_three_class_doc())
    best, prog, be, x0 = _set_up(case)
    lp = be(prog).solve_lp()
    cores = [core_columns(prog, lp.x, lp.row_duals, x0, share) for share in (0.0, 0.01)]
    assert cores[0].sum() < cores[1].sum() < prog.n_cols
    seen = []
    r = improve(prog, be, x0, time.perf_counter() + 60, size=1, grow=True, core=cores,
                on_better=lambda x, cost: seen.append(cost))
    assert r.local_optimum and _within_rows(prog, r.x)
    assert best - 0.01 <= r.cost <= float(prog.cost @ x0) + 1e-6
    assert r.steps >= 2 + 3  # the two cores whole, then at least one round of single classes
    assert seen == sorted(seen, reverse=True) and len(seen) == r.improvements
