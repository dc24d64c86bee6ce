"""Default precision of the fleet layer: plans proven within the default tolerance, shortfalls proven
least or given as two bounds, infeasibility claimed only on a proof.

References outside the project: exhaustive search of joint schedules priced from ``tenure.curves``
(``test_fleet.exhaustive_optimum``) and hand arithmetic from the case (docs/conventions.md: a unit
at max_age must be replaced that year).
"""

from __future__ import annotations

import os
import subprocess
import sys

import pytest

from casekit import to_toml
from tenure import fleet
from tenure.case import build_case
from tenure.fleet import driver
from tenure.fleet.backend import LPResult, MIPResult, get_backend
from tenure.fleet.precheck import forced_over_caps
from tenure.plan import NoPlanFound
from tenure.report.text import plan_summary
from test_fleet import (SMALL, FORCED_UNITS, close, exhaustive, exhaustive_optimum, forced_doc, small_case,
                        small_doc, _demo_with_cap)

#: 3–6-unit fleets, gross and net, with caps and a purchase limit, beyond test_fleet.SMALL; each binds
MORE = {
    "gross-3-units-40k": dict(cap=40000, units=FORCED_UNITS[2:]),
    "net-6-units-18k-4-years": dict(cap=18000, basis="net", horizon=4, units=FORCED_UNITS[2:] + [
        {"id": "V4", "type": "van-a", "age": 3}, {"id": "V5", "type": "van-a", "age": 1},
        {"id": "C3", "type": "cart-old", "age": 0}]),
    "gross-4-units-limit": dict(cap=70000, limit=1, units=FORCED_UNITS[2:] + [{"id": "V4", "type": "van-a",
                                                                             "age": 5}]),
}


def _case(name):
    return small_case(name) if name in SMALL else build_case(small_doc(**MORE[name]))


@pytest.mark.parametrize("solver", ["highs", "cbc"])
@pytest.mark.parametrize("name", list(SMALL) + list(MORE))
def test_default_run_reaches_the_exhaustive_optimum(name, solver):
    """At the default settings every small capped fleet is solved to its exhaustive optimum and
    called optimal, with the default tolerance recorded."""
    case = _case(name)
    best, _ = exhaustive_optimum(case)
    assert best is not None
    plan = fleet.solve_capped(case, backend=solver)
    assert plan.premium > 1.0  # the caps or the limit bind: the uncapped recursion alone would not do
    assert plan.status == "optimal"
    assert close(plan.present_cost, best)
    assert plan.tolerance == driver.DEFAULT_GAP == 1e-4
    assert plan.to_dict()["tolerance"] == 1e-4
    assert plan.gap <= 1e-4


def test_loose_gap_is_never_called_optimal_beyond_the_default_tolerance():
    plan = fleet.solve_capped(small_case("gross-45k"), gap=0.05)
    assert plan.tolerance == 1e-4
    assert (plan.status == "optimal") == (plan.gap <= 1e-4)
    if plan.status == "optimal":
        assert close(plan.present_cost, exhaustive("gross-45k"))


@pytest.mark.parametrize("solver", ["highs", "cbc"])
def test_known_shortfall_is_proven_least(solver):
    """Hand arithmetic (test_fleet.test_known_shortfall_from_the_cli): two vans at max age in 2030 cost
    2 × 30,000 against a 50,000 cap; the least extra capital is exactly 10,000, proven."""
    plan = fleet.solve_capped(build_case(forced_doc()), backend=solver)
    assert plan.status == "infeasible"
    assert plan.shortfall == ((2030, 10000.0),)
    assert plan.shortfall_least
    assert 10000.0 - 1.0 <= plan.shortfall_bound <= 10000.0
    d = plan.to_dict()
    assert d["shortfall_least"] is True and d["shortfall_at_least"] >= 9999.0


def _no_bound_backend(base):
    """``base`` whose LP and integer solves stop without a proven bound (as at a time limit)."""
    class NoBound(base):
        label = "stopped"

        def solve_lp(self):
            return LPResult("time limit reached")  # no LP bound either

        def solve_mip(self, *a, **kw):
            r = super().solve_mip(*a, **kw)
            return MIPResult("feasible" if r.x is not None else r.status, r.x, None)

    return NoBound


def test_unproven_shortfall_is_not_called_least(monkeypatch):
    """A solve stopped before its proof (no bound) must give both numbers and never say "least"."""
    stopped = _no_bound_backend(get_backend("highs"))
    monkeypatch.setattr(driver, "get_backend", lambda name: stopped)
    _, case = _demo_with_cap(1_600_000)
    monkeypatch.setattr(driver, "forced_over_caps", lambda case, graphs=None: [])  # reach the solver
    plan = fleet.solve_capped(case, backend="stopped", time_limit=20)
    assert plan.status == "unsolved"  # nothing proven: no infeasibility claimed
    assert not plan.shortfall_least and plan.shortfall_bound == 0.0
    text = plan_summary(plan, case)
    assert "not proven least" in text and "at most" in text and "least total extra capital, proven" not in text


def test_short_time_limit_does_not_claim_least(monkeypatch):
    """With a time limit too short for the proof, "least" is claimed only when the bound shows it."""
    _, case = _demo_with_cap(1_600_000)
    monkeypatch.setattr(driver, "forced_over_caps", lambda case, graphs=None: [])
    try:
        plan = fleet.solve_capped(case, time_limit=1)
    except NoPlanFound as exc:  # no plan at all in the time: nothing is claimed
        assert "least" not in str(exc)
        return
    total = sum(x for _, x in plan.shortfall)
    if plan.shortfall_least:
        assert plan.shortfall_bound >= total - max(1.0, 1e-4 * total)
    else:
        assert "not proven least" in plan_summary(plan, case)


def test_false_cbc_verdict_is_not_passed_on(monkeypatch):
    """A back end that wrongly proves infeasibility (a stand-in claiming a huge bound) is overruled by
    the default back end's own proof: the case of test_fleet's gross-45k has an optimum."""
    base = get_backend("cbc")

    class Liar(base):
        def solve_mip(self, *a, **kw):
            return MIPResult("infeasible")

    monkeypatch.setattr(driver, "get_backend", lambda name: Liar if name == "liar" else get_backend(name))
    plan = fleet.solve_capped(small_case("gross-45k"), backend="liar")
    assert plan.status != "infeasible"


def test_precheck_names_the_forced_units_of_the_demo():
    """Hand arithmetic (test_fleet.test_demo_shortfall_added_to_the_caps_makes_it_feasible): the demo's
    2027 forced replacements cost at least 1,742,500 against a 1.2 M cap."""
    _, case = _demo_with_cap(1_200_000)
    over = forced_over_caps(case)
    assert over and over[0].year == 2027 and over[0].class_ is None
    assert over[0].needed == 1_742_500 and over[0].available == 1_200_000
    assert len(over[0].units) == 7  # 2 refuse trucks, a bus, 3 pickups, a sweeper


def test_precheck_finds_the_forced_vans_and_nothing_on_feasible_cases():
    over = forced_over_caps(build_case(forced_doc()))
    assert [(f.year, f.needed, f.available) for f in over] == [(2030, 60000.0, 50000.0)]
    assert sorted(n.split(" ")[0].split("#")[0] for n in over[0].units) == ["V1", "V2"]
    for name in SMALL:  # each has a plan (exhaustive search), so the check must find nothing
        assert forced_over_caps(small_case(name)) == []


def test_precheck_counts_forced_units_against_a_purchase_limit():
    """Two vans at max age with at most one purchase a year: impossible (counting)."""
    doc = small_doc(cap=10**6, limit=1, units=FORCED_UNITS)
    over = forced_over_caps(build_case(doc))
    assert [(f.class_, f.year, f.needed, f.available) for f in over] == [("van", 2030, 2.0, 1.0)]


def test_check_command_reports_the_forced_units(tmp_path):
    f = tmp_path / "forced.toml"
    f.write_text(to_toml(forced_doc()), encoding="utf-8")
    r = subprocess.run([sys.executable, "-m", "tenure.cli", "check", str(f)], capture_output=True, text=True,
                       encoding="utf-8", env=dict(os.environ, PYTHONIOENCODING="utf-8"), timeout=120)
    assert r.returncode == 3, r.stdout + r.stderr
    assert "V1" in r.stdout and "V2" in r.stdout and "60,000" in r.stdout and "50,000" in r.stdout


def test_compare_on_the_demo_shows_gaps_and_no_own_plan_is_beaten():
    """compare on the demo: under its own assumptions no scenario's plan is beaten (a cheaper schedule from
    another scenario becomes its best known plan), regret is never negative, and the regret table
    states each scenario's proven gap, marking regrets below it."""
    from tenure import scenarios as sc
    from tenure.case import load_case
    from tenure.report.compare import compare_text
    from casekit import DEMO

    case = load_case(DEMO)
    cmp = sc.compare(case, list(case.scenarios), options={"time_limit": 20.0})
    reg = cmp.regret
    for i in cmp.ids:
        if reg.regret[i][i] is not None:
            # no scenario's own plan is beaten under its own assumptions: where another scenario's schedule
            # was cheaper there, it became the scenario's best known plan (scenarios/bestknown.py)
            assert reg.regret[i][i] == 0.0, i
            assert cmp.scenario(i).present_cost == pytest.approx(reg.best_under[i], abs=0.011), i
        assert all(r is None or r >= 0 for r in reg.regret[i].values())
    text = compare_text(cmp)
    row = next(ln for ln in text.splitlines() if ln.strip().startswith("proven gap"))
    for j in cmp.ids:
        g = cmp.scenario(j).gap
        assert g is not None and f"{g:.3%}" in row
        for i in cmp.ids:
            r = reg.regret[i][j]
            if r is not None and 0 < r <= g * abs(reg.best_under[j]) and not reg.breaks[i][j]:
                assert "*" in text and "within solver" in text


@pytest.mark.parametrize("name", list(SMALL) + list(MORE))
def test_windows_of_years_give_a_whole_unit_plan_within_every_row(name):
    """Relax-and-fix by windows (fleet.windows): on the elastic program (extra capital absorbs any
    overspend) it always finishes; on the capped program it may not (a window can find the years fixed
    before it leave no whole-unit plan), but any point it gives is integral, within every bound and
    row of the program (checked by matrix arithmetic here), and costs no less than the exhaustive optimum."""
    import time

    import numpy as np

    from tenure.fleet.program import build_program
    from tenure.fleet.windows import window_plan

    case = _case(name)
    best, _ = exhaustive_optimum(case)
    prog = build_program(case)
    el, _years = prog.with_elastic_caps()
    integ = np.concatenate([np.ones(prog.n_cols, dtype=np.int32), np.zeros(el.n_cols - prog.n_cols, dtype=np.int32)])
    for p, integrality, must in ((prog, None, False), (el, integ, True)):
        x = window_plan(p, get_backend("highs"), time.perf_counter() + 60, integrality, width=2, step=1)
        if x is None:
            assert not must
            continue
        whole = np.ones(p.n_cols, dtype=bool) if integrality is None else integrality == 1
        assert np.array_equal(x[whole], np.round(x[whole]))
        assert np.all(x >= p.lower - 1e-9) and np.all(x <= p.upper + 1e-9)
        act = p.matrix @ x
        assert np.all(act >= p.row_lower - 1e-6) and np.all(act <= p.row_upper + 1e-6)
        if p is prog:
            assert float(prog.cost @ x) >= best - 0.01


def _stage_one(case):
    """The elastic program of ``case``, its stage-one program (cost: the extra capital alone), the
    integrality of its columns and the number of flow columns."""
    import numpy as np

    from tenure.fleet import shortfall as sf
    from tenure.fleet.program import build_program

    prog = build_program(case)
    el, years = prog.with_elastic_caps()
    n0, m = prog.n_cols, len(years)
    integ = np.concatenate([np.ones(n0, dtype=np.int32), np.zeros(m, dtype=np.int32)])
    return el, sf._with_cost(el, np.concatenate([np.zeros(n0), np.ones(m)])), integ, n0


def test_elastic_windows_find_the_known_shortfall_and_the_lp_proves_it():
    """Hand arithmetic (test_known_shortfall_is_proven_least): the windows' plan of the elastic program
    needs exactly the known extra capital, and its LP bound equals it, so it is proven least without
    an integer search."""
    import time


    from tenure.fleet import shortfall as sf

    el, stage1, integ, n0 = _stage_one(build_case(forced_doc()))
    res = sf._least_extra(stage1, integ, get_backend("highs"), time.perf_counter() + 30, 1e-4)
    assert res.status == "optimal"
    assert float(res.x[n0:].sum()) == pytest.approx(10000.0, abs=1e-6)
    assert res.bound == pytest.approx(10000.0, abs=1e-6)


def test_elastic_start_without_windows_is_the_least_cost_flows_with_their_overspend(monkeypatch):
    """When the windows run out of time, stage one still starts from a plan: the least-cost flows with
    free extra capital, each year's extra its overspend (checked here row by row: every row of the
    elastic program holds), so the integer program never starts cold."""
    import numpy as np

    from tenure.fleet import shortfall as sf

    el, stage1, integ, n0 = _stage_one(build_case(forced_doc()))
    x = sf._overspend_start(stage1, integ, get_backend("highs"), el.cost)
    assert x is not None and np.array_equal(x[:n0], np.round(x[:n0])) and np.all(x[n0:] >= 0)
    act = el.matrix @ x
    assert np.all(act >= el.row_lower - 1e-6) and np.all(act <= el.row_upper + 1e-6)
    # the forced vans' 10,000 over the cap at least (hand arithmetic, test_known_shortfall_is_proven_least)
    assert x[n0:].sum() >= 10000.0 - 1e-6
    monkeypatch.setattr(sf, "window_plan", lambda *a, **k: None)
    res = sf._least_extra(stage1, integ, get_backend("highs"), __import__("time").perf_counter() + 30, 1e-4, el.cost)
    assert res.x is not None and float(res.x[n0:].sum()) == pytest.approx(10000.0, abs=1e-6)
