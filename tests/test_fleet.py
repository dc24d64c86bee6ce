"""Tests of the capped fleet plan (``tenure.fleet``): the cohort-flow integer program and its solve.

What each check is measured against is named beside it:

- **exhaustive search**: every keep/replace schedule of every unit of a small capped fleet is
  enumerated on its own and priced straight from ``tenure.curves`` with the timing of
  docs/conventions.md (:func:`unit_schedules`); it never reads the state-graph tables or the
  program. The joint schedules are the product of the units' schedules, kept when every year's
  cap and every purchase limit holds (:func:`exhaustive_optimum`). The least joint cost is the
  true optimum that the solver's answer, bound and gap are held to.
- **recomputation from the written files**: the caps and limits are re-added from ``units.csv``
  (one row per purchase, with its price and the market value of the unit sold) as a user would.
- **the same LP, solved here**: the relaxation of ``fleet.build_program`` is solved with highspy
  in this file (not through the layer's back ends), for complementary slackness and finite
  differences of its optimum (LP duality: common practice; a dual price is the slope of the optimum
  in the right-hand side). It checks the shadow prices the layer reports, not the program itself;
  a claim that no plan fits is proven by hand arithmetic from the case or by exhaustive search.
- **the backward recursion** (``solve_uncapped``), itself tested in test_chain.py against
  networkx and brute force, wherever no cap binds.
- **a second MIP solver**: CBC (the binary pulp ships, fed an MPS file) against HiGHS.
- **hand arithmetic** for the known shortfall of a fleet whose forced purchases exceed a cap.

The fleets are invented: a small made-up fleet below, the fictional Quillmere Hollow demo case
and seeded invented fleets from ``benchmarks/fleetgen.py``.
"""

from __future__ import annotations

import copy
import csv
import functools
import json
import math
import os
import subprocess
import sys
from collections import defaultdict
from pathlib import Path

import highspy
import numpy as np
import pytest

from casekit import DEMO, REPO, UNCAPPED, to_toml
from tenure import curves, fleet
from tenure.case import build_case, load_case, read_document
from tenure.report.tables import write_plan
from tenure.uncapped import solve_uncapped

sys.path.insert(0, str(REPO / "benchmarks"))
from fleetgen import capped_case, invented_fleet  # noqa: E402

Y0 = 2030
REL = 1e-6  # relative agreement of present costs required between two exact methods


# ---------------------------------------------------------------------------
# a small made-up capped fleet: 2 classes, 5 units, 6 years
# ---------------------------------------------------------------------------
def small_doc(cap=None, basis="gross", limit=None, cap_by_year=None, horizon=6, units=None) -> dict:
    """Vans (one type) and carts (an old type sold until 2031, a new one from 2031). Invented figures."""
    doc = {
        "study": {"title": "small capped fleet (made up)", "start_year": Y0, "horizon": horizon,
                  "discount_rate": 0.06, "end_value": "salvage"},
        "asset_type": [
            {"id": "van-a", "class": "van", "price": 30000, "price_change": 0.02, "max_age": 6,
             "om": {"first": 2500, "gradient": 800}, "salvage": {"retain": 0.8}},
            {"id": "cart-old", "class": "cart", "price": 12000, "buy_until": 2031, "max_age": 4,
             "om": [900, 1500, 2300, 3300], "salvage": {"life": 4, "floor": 0.1}},
            {"id": "cart-new", "class": "cart", "price": 16000, "price_change": -0.04, "buy_from": 2031,
             "max_age": 4, "om": {"first": 500, "growth": 0.25}, "om_change": -0.01,
             "salvage": [12500, 9800, 7600, 6100]},
        ],
        "unit": units if units is not None else [
            {"id": "V1", "type": "van-a", "age": 5}, {"id": "V2", "type": "van-a", "age": 4},
            {"id": "V3", "type": "van-a", "age": 2},
            {"id": "C1", "type": "cart-old", "age": 3}, {"id": "C2", "type": "cart-old", "age": 1},
        ],
    }
    if cap is not None or cap_by_year:
        doc["budget"] = {"basis": basis}
        if cap is not None:
            doc["budget"]["cap"] = cap
        if cap_by_year:
            doc["budget"]["cap_by_year"] = {str(y): v for y, v in cap_by_year.items()}
    if limit is not None:
        doc["limit"] = [{"class": "van", "max_buys_per_year": limit}]
    return doc


#: small capped scenarios; each cap (or limit) binds: the exhaustive optimum costs more than the uncapped one
SMALL = {
    "gross-45k": dict(cap=45000),
    "gross-38k": dict(cap=38000),
    "gross-by-year": dict(cap=45000, cap_by_year={2031: 31000, 2032: 20000}),
    "net-26k": dict(cap=26000, basis="net"),
    "gross-60k-van-limit-1": dict(cap=60000, limit=1),
}


def small_case(name: str):
    return build_case(small_doc(**SMALL[name]))


# ---------------------------------------------------------------------------
# independent pricing: tenure.curves + docs/conventions.md, never the graph tables
# ---------------------------------------------------------------------------
def unit_schedules(case, type_id: str, age: int) -> list[tuple]:
    """Every keep/replace schedule of one unit over the horizon, each priced from the curves.

    Timing (docs/conventions.md): a purchase and the sale of the unit it replaces happen at time k
    (the start of year k) at the price of year ``start_year + k`` and the market value of the sold
    unit's age then; the O&M of the service year that starts at k is paid at k+1, a kept unit of age
    a paying service year a+1 of its own vintage, a new unit its service year 1; a unit may be kept
    only while younger than max_age and a type bought only in its buy window; at the horizon the
    held unit is sold at the market value of year ``start_year + horizon`` ("salvage").

    Returns a list of ``(present_cost, prices[H], market_values[H], events)``: per year the price
    paid and the market value received (0 in a year without a replacement).
    """
    s = case.study
    y0, H, i = s.start_year, s.horizon, s.discount_rate

    def v(t):
        return (1.0 + i) ** (-t)

    first = case.type(type_id)
    rivals = case.types_of(first.class_)
    out: list[tuple] = []

    def walk(k, t, a, vintage, cost, prices, values, events):
        if k == H:
            end = -float(curves.market_value(t, a, y0 + H, y0)) * v(H)
            out.append((cost + end, tuple(prices), tuple(values), tuple(events)))
            return
        y = y0 + k
        if a < t.max_age:  # keep
            om = float(curves.om(t, a + 1, vintage, y0)) * v(k + 1)
            walk(k + 1, t, a + 1, vintage, cost + om, prices + [0.0], values + [0.0], events)
        for t2 in rivals:  # replace with any type of the class buyable this year
            if not t2.buyable(y):
                continue
            p = float(curves.price(t2, y, y0))
            mv = float(curves.market_value(t, a, y, y0))
            c = (p - mv) * v(k) + float(curves.om(t2, 1, y, y0)) * v(k + 1)
            walk(k + 1, t2, 1, y, cost + c, prices + [p], values + [mv], events + [(y, t.id, a, t2.id)])

    walk(0, first, age, y0 - age, 0.0, [], [], [])
    return out


def _caps(case) -> np.ndarray:
    s, b = case.study, case.budget
    return np.array([math.inf if b is None or b.cap_for(y) is None else float(b.cap_for(y)) for y in s.years])


def exhaustive_optimum(case) -> tuple[float | None, int]:
    """Least present cost over the product of all units' schedules that meets every cap and limit.

    The product is built unit by unit; a partial joint schedule is dropped as soon as a year's
    spend, plus the least spend the remaining units could add that year, exceeds the cap, or a
    class's purchases exceed its limit. This only drops joint schedules that cannot meet the caps,
    so the minimum is over every feasible joint schedule. Returns (optimum or None, feasible count).
    """
    H = case.study.horizon
    net = case.budget is not None and case.budget.basis == "net"
    caps = _caps(case)
    classes = [c for c in case.classes if case.limit_for(c) is not None]  # only limited classes are counted
    limits = np.array([case.limit_for(c) for c in classes], dtype=float)
    per_unit = []
    for u in case.units:
        sched = unit_schedules(case, u.type, u.age)
        cost = np.array([x[0] for x in sched])
        price = np.array([x[1] for x in sched])
        value = np.array([x[2] for x in sched])
        spend = price - value if net else price
        buys = np.zeros((len(sched), len(classes), H))
        if case.type(u.type).class_ in classes:
            buys[:, classes.index(case.type(u.type).class_), :] = price > 0
        per_unit += [(cost, spend, buys)] * u.count
    rest = np.zeros((len(per_unit) + 1, H))  # least spend of units j… in each year
    for j in range(len(per_unit) - 1, -1, -1):
        rest[j] = rest[j + 1] + per_unit[j][1].min(axis=0)
    cost = np.zeros(1)
    spend = np.zeros((1, H))
    buys = np.zeros((1, len(classes), H))
    tol = 1e-6 * max(1.0, float(np.max(caps, initial=0.0, where=np.isfinite(caps))))
    for j, (cu, su, bu) in enumerate(per_unit):
        c2 = (cost[:, None] + cu[None, :]).ravel()
        s2 = (spend[:, None, :] + su[None, :, :]).reshape(-1, H)
        b2 = (buys[:, None] + bu[None]).reshape(len(c2), len(classes), H)
        ok = np.all(s2 + rest[j + 1] <= caps + tol, axis=1) & np.all(b2 <= limits[None, :, None], axis=(1, 2))
        cost, spend, buys = c2[ok], s2[ok], b2[ok]
    return (float(cost.min()) if len(cost) else None), len(cost)


@functools.lru_cache(maxsize=None)
def exhaustive(name: str) -> float:
    opt, n = exhaustive_optimum(small_case(name))
    assert opt is not None and n > 1, f"{name}: the scenario must be feasible with a choice"
    return opt


def close(a, b, rel=REL):
    return abs(a - b) <= rel * max(1.0, abs(a), abs(b))


# ---------------------------------------------------------------------------
# the written plan, read back as a user would
# ---------------------------------------------------------------------------
def spend_from_units_csv(out_dir: Path, years) -> dict:
    """Per year: gross purchases, market value of the units sold, purchases per class (from units.csv)."""
    gross = {y: 0.0 for y in years}
    sold = {y: 0.0 for y in years}
    buys: dict = defaultdict(int)
    rows = 0
    with open(out_dir / "units.csv", newline="", encoding="utf-8") as fh:
        for r in csv.DictReader(fh):
            if r["action"] not in ("replace", "overhaul"):
                continue
            y = int(r["year"])
            gross[y] += float(r["price"])  # an overhaul's cost is capital of its year (docs/conventions.md)
            sold[y] += float(r["market_value"])
            buys[(r["class"], y)] += r["action"] == "replace"
            rows += 1
    return {"gross": gross, "sold": sold, "buys": buys, "rows": rows}


def check_written_plan(case, plan, out_dir: Path, extra: dict | None = None) -> None:
    """Write the plan, then check its files (:func:`check_files`)."""
    write_plan(plan, out_dir)
    check_files(case, out_dir, extra)


def check_files(case, out_dir: Path, extra: dict | None = None) -> None:
    """Every year's cap (raised by ``extra``) and every limit hold in units.csv; years.csv agrees."""
    s = case.study
    got = spend_from_units_csv(out_dir, s.years)
    net = case.budget is not None and case.budget.basis == "net"
    caps = _caps(case)
    per_year_rows = defaultdict(int)
    for (c, y), n in got["buys"].items():
        per_year_rows[y] += n
    with open(out_dir / "years.csv", newline="", encoding="utf-8") as fh:
        years = {int(r["year"]): r for r in csv.DictReader(fh)}
    for k, y in enumerate(s.years):
        cents = 0.01 * (per_year_rows[y] + 1)  # units.csv rounds each amount to the cent
        spend = got["gross"][y] - (got["sold"][y] if net else 0.0)
        cap = caps[k] + (extra or {}).get(y, 0.0)
        assert spend <= cap + cents, f"{y}: spend {spend:,.2f} over the cap {cap:,.2f}"
        assert abs(float(years[y]["capital"]) - got["gross"][y]) <= cents
        assert abs(float(years[y]["salvage"]) - got["sold"][y]) <= cents
        assert int(years[y]["buys"]) == per_year_rows[y]
    for lim in case.limits:
        for y in s.years:
            assert got["buys"][(lim.class_, y)] <= lim.max_buys_per_year, f"{lim.class_} {y}"


# ---------------------------------------------------------------------------
# the independent LP relaxation
# ---------------------------------------------------------------------------
def _solved_lp(case, extra_cap=None):
    prog = fleet.build_program(case, extra_cap=extra_cap)
    h = highspy.Highs()
    h.setOptionValue("output_flag", False)
    h.passModel(prog.n_cols, prog.n_rows, len(prog.a_value), 1, 1, 0.0, prog.cost, prog.lower, prog.upper,
                prog.row_lower, prog.row_upper, prog.a_start, prog.a_index, prog.a_value,
                np.zeros(prog.n_cols, dtype=np.int32))
    h.run()
    return prog, h, h.modelStatusToString(h.getModelStatus())


def lp_status(case) -> str:
    """HiGHS's model status of the relaxation ("Optimal", "Infeasible", …)."""
    return _solved_lp(case)[2]


def lp_relaxation(case, extra_cap=None):
    """Optimum, row activities and row duals of the relaxation of ``fleet.build_program`` (highspy)."""
    prog, h, status = _solved_lp(case, extra_cap)
    assert status == "Optimal"
    sol = h.getSolution()
    return prog, float(h.getInfo().objective_function_value), np.asarray(sol.row_value), np.asarray(sol.row_dual)


def program_mip_optimum(case) -> float:
    """Optimum of ``fleet.build_program`` handed to HiGHS as a MIP (no warm start, gap 0)."""
    prog = fleet.build_program(case)
    h = highspy.Highs()
    h.setOptionValue("output_flag", False)
    h.setOptionValue("mip_rel_gap", 0.0)
    h.passModel(prog.n_cols, prog.n_rows, len(prog.a_value), 1, 1, 0.0, prog.cost, prog.lower, prog.upper,
                prog.row_lower, prog.row_upper, prog.a_start, prog.a_index, prog.a_value,
                np.ones(prog.n_cols, dtype=np.int32))
    h.run()
    assert h.modelStatusToString(h.getModelStatus()) == "Optimal"
    return float(h.getInfo().objective_function_value)


# ---------------------------------------------------------------------------
# shared solves
# ---------------------------------------------------------------------------
def generated_doc(basis: str) -> dict:
    """Invented 100-unit, 5-class, 30-year fleet (seed 2), cap at the uncapped average yearly spend,
    at most 3 purchases a year in class-004 (the uncapped plan buys up to 6 there)."""
    doc = copy.deepcopy(capped_case(invented_fleet(100, 5, seed=2)))
    doc["budget"]["basis"] = basis
    doc["limit"] = [{"class": "class-004", "max_buys_per_year": 3}]
    return doc


@pytest.fixture(scope="module")
def demo():
    case = load_case(DEMO)
    return case, fleet.solve_capped(case)


@pytest.fixture(scope="module")
def generated():
    out = {}
    for basis in ("gross", "net"):
        case = build_case(generated_doc(basis))
        out[basis] = (case, fleet.solve_capped(case, time_limit=60))
    return out


# ---------------------------------------------------------------------------
# 1. exact optimum on a small fleet
# ---------------------------------------------------------------------------
def test_oracle_prices_the_uncapped_optimum_like_the_recursion():
    """Calibration of the oracle: with no cap the units are independent, so the least cost is the sum
    of each unit's cheapest schedule; it must equal the recursion (tested on its own in test_chain.py)."""
    case = build_case(small_doc())
    total = sum(min(x[0] for x in unit_schedules(case, u.type, u.age)) * u.count for u in case.units)
    assert close(total, solve_uncapped(case).present_cost, 1e-9)


@pytest.mark.parametrize("name", list(SMALL))
def test_capped_optimum_equals_exhaustive_search(name):
    case = small_case(name)
    best = exhaustive(name)
    free = solve_uncapped(build_case(small_doc())).present_cost
    assert best > free * (1 + 1e-6), "the cap (or limit) must bind for the test to mean anything"
    plan = fleet.solve_capped(case, solver="highs", gap=0.0, time_limit=60)
    assert plan.status == "optimal" or plan.gap <= 1e-9
    assert close(plan.present_cost, best), (plan.present_cost, best)


@pytest.mark.parametrize("name", list(SMALL))
def test_cbc_and_highs_agree_with_each_other_and_the_exhaustive_search(name):
    case = small_case(name)
    ph = fleet.solve_capped(case, solver="highs", gap=0.0, time_limit=60)
    pc = fleet.solve_capped(case, solver="cbc", gap=0.0, time_limit=60)
    assert ph.status == "optimal" and pc.status == "optimal"
    assert close(ph.present_cost, pc.present_cost)
    assert close(pc.present_cost, exhaustive(name))


@pytest.mark.parametrize("name", ["gross-45k", "net-26k", "gross-60k-van-limit-1"])
def test_cbc_and_highs_run_the_same_sequence_to_the_same_optimum(name, monkeypatch):
    """Both back ends go through the same stages: the LP, fix-and-relax (once, on that back end's own LP)
    and, when needed, the MIP from its plan; at gap 0 both reach the exhaustive optimum."""
    from tenure.fleet import driver, get_backend

    calls = []
    real = driver.fix_and_relax

    def spy(prog, case, be, x, deadline, log=None, **kw):
        out = real(prog, case, be, x, deadline, log, **kw)
        calls.append((type(be), out is not None))
        return out

    monkeypatch.setattr(driver, "fix_and_relax", spy)
    case = small_case(name)
    plans, seqs = {}, {}
    for backend in ("highs", "cbc"):
        calls.clear()
        plans[backend] = fleet.solve_capped(case, backend=backend, gap=0.0, time_limit=60)
        # rounding ran once on this back end's own LP, or not at all because that LP was already integral
        integral = plans[backend].provenance.method.startswith("LP relaxation, integral")
        assert calls == ([] if integral else [(get_backend(backend), True)]), (backend, calls)
        seqs[backend] = (integral, [ok for _, ok in calls])
    assert seqs["highs"] == seqs["cbc"]
    ph, pc = plans["highs"], plans["cbc"]
    assert ph.status == pc.status == "optimal"
    assert close(ph.present_cost, pc.present_cost) and close(pc.present_cost, exhaustive(name))
    assert ph.provenance.shadow_prices == "LP relaxation (HiGHS)"
    assert pc.provenance.shadow_prices == "LP relaxation (CBC)"
    # the writers name the source the plan records, not a fixed one
    from tenure.report.text import plan_summary

    summary = plan_summary(pc, case)  # the dearest caps are listed when some cap has a shadow price
    assert ("LP relaxation (CBC)" in summary) == any(y.shadow_price for y in pc.years) and "HiGHS" not in summary
    assert pc.to_dict()["provenance"]["shadow_prices"] == "LP relaxation (CBC)"
    # the caps' shadow prices agree too (LP duality: the LP optimum's slope does not depend on the solver)
    for yh, yc in zip(ph.years, pc.years):
        assert abs(yh.shadow_price - yc.shadow_price) <= 1e-6 * max(1.0, yh.shadow_price), yh.year


def test_cbc_bound_stopped_at_the_gap_is_still_a_bound(demo):
    """CBC stopping within its gap tolerance has not proven its plan optimal. Each solver's lower
    bound must stay at or below the other's plan (a plan's cost is an upper bound on the optimum),
    and "optimal" must mean no cheaper plan exists. (On the demo, HiGHS's plan is the cheaper one.)"""
    case, ph = demo
    pc = fleet.solve_capped(case, solver="cbc", gap=0.005, time_limit=60)
    assert pc.success
    tol = 1e-9 * abs(ph.present_cost)
    assert pc.lower_bound <= ph.present_cost + tol, (pc.status, pc.lower_bound, ph.present_cost)
    assert ph.lower_bound <= pc.present_cost + tol
    if pc.status == "optimal":
        assert pc.present_cost <= ph.present_cost + tol
    assert abs(pc.gap - (pc.present_cost - pc.lower_bound) / abs(pc.present_cost)) <= 1e-9


@pytest.mark.parametrize("solver", ["highs", "cbc"])
@pytest.mark.parametrize("gap", [0.05, 0.005, 0.0])
@pytest.mark.parametrize("name", list(SMALL))
def test_reported_bound_and_gap_are_true(name, gap, solver):
    """lower_bound ≤ true optimum ≤ present_cost, and the gap is what the bound says."""
    best = exhaustive(name)
    plan = fleet.solve_capped(small_case(name), solver=solver, gap=gap, time_limit=60)
    slack = 1e-9 * abs(best)
    assert plan.lower_bound <= best + slack <= plan.present_cost + 2 * slack
    assert plan.gap <= max(gap, 1e-9) + 1e-12
    assert abs(plan.gap - (plan.present_cost - plan.lower_bound) / abs(plan.present_cost)) <= 1e-9
    if plan.status == "optimal":
        assert close(plan.present_cost, best)


# ---------------------------------------------------------------------------
# 2. caps and limits hold in the written plan
# ---------------------------------------------------------------------------
@pytest.mark.parametrize("name", list(SMALL))
def test_small_written_plan_respects_caps_and_limits(name, tmp_path):
    case = small_case(name)
    check_written_plan(case, fleet.solve_capped(case, gap=0.0), tmp_path)


def test_demo_written_plan_respects_caps_and_limits(demo, tmp_path):
    case, plan = demo
    assert plan.success and case.limits  # the demo caps refuse trucks at 4 purchases a year
    check_written_plan(case, plan, tmp_path)
    assert plan.lower_bound <= plan.present_cost
    assert plan.gap <= 0.005  # the default target


@pytest.mark.parametrize("basis", ["gross", "net"])
def test_generated_100_unit_written_plan_respects_caps_and_limits(generated, basis, tmp_path):
    case, plan = generated[basis]
    assert plan.success
    check_written_plan(case, plan, tmp_path)
    assert plan.lower_bound <= plan.present_cost
    assert plan.gap <= 0.005
    assert plan.premium > 0  # the cap binds


# ---------------------------------------------------------------------------
# 3. gross and net bases
# ---------------------------------------------------------------------------
def test_net_basis_allows_more_buying_under_the_same_cap(tmp_path):
    """Proceeds count against the cap on the net basis, so the same cap admits more purchases:
    the net optimum is no dearer, and its gross purchases exceed the cap in some year while the net
    spend recomputed from units.csv stays within it."""
    cap = 32000
    gross = build_case(small_doc(cap=cap, limit=1))
    net = build_case(small_doc(cap=cap, basis="net", limit=1))
    opt_g, _ = exhaustive_optimum(gross)
    opt_n, _ = exhaustive_optimum(net)
    assert opt_n < opt_g  # exhaustive search: strictly cheaper here
    pg = fleet.solve_capped(gross, gap=0.0)
    pn = fleet.solve_capped(net, gap=0.0)
    assert close(pg.present_cost, opt_g) and close(pn.present_cost, opt_n)
    write_plan(pn, tmp_path)
    got = spend_from_units_csv(tmp_path, net.study.years)
    assert max(got["gross"].values()) > cap + 1
    for y in net.study.years:
        assert got["gross"][y] - got["sold"][y] <= cap + 0.05
    # the plan's own year rows report the net slack
    for row in pn.years:
        assert abs(row.slack - (cap - (row.capital - row.salvage))) <= 1e-6


def test_net_basis_generated_fleet_is_no_dearer_than_gross(generated):
    (_, pg), (_, pn) = generated["gross"], generated["net"]
    # net feasible set ⊇ gross feasible set, so the net bound is at most the gross optimum
    assert pn.lower_bound <= pg.present_cost + 1e-6 * abs(pg.present_cost)


# ---------------------------------------------------------------------------
# 4. no binding cap: the recursion's plan
# ---------------------------------------------------------------------------
def _unbound(doc: dict, cap: float) -> dict:
    d = copy.deepcopy(doc)
    d["budget"] = {"cap": cap, "basis": "gross"}
    for lim in d.get("limit", []):
        lim["max_buys_per_year"] = 10 ** 6
    return d


def _events(plan) -> dict:
    return {u.unit: [(e.year, e.from_type, e.from_age, e.type) for e in u.events] for u in plan.units}


def _doc(which: str) -> dict:
    if which == "small":
        return small_doc()
    if which == "demo":
        return read_document(DEMO)
    if which == "uncapped-demo":  # "continuing" end value
        return read_document(UNCAPPED)
    return invented_fleet(100, 5, seed=2)


@pytest.mark.parametrize("which", ["small", "demo", "uncapped-demo", "generated"])
def test_huge_cap_gives_the_recursion_plan(which):
    doc = _doc(which)
    base_dir = DEMO.parent
    free_doc = copy.deepcopy(doc)
    free_doc.pop("budget", None)
    free_doc.pop("limit", None)
    free = solve_uncapped(build_case(free_doc, base_dir=base_dir))
    top = max(y.capital for y in free.years)
    for cap in (1e12, top + 1.0):  # far away, and just above the uncapped plan's dearest year
        case = build_case(_unbound(doc, cap), base_dir=base_dir)
        plan = fleet.solve_capped(case)
        assert plan.status == "optimal"
        assert plan.present_cost == free.present_cost
        assert _events(plan) == _events(free)


@pytest.mark.parametrize("which", ["small", "demo", "uncapped-demo"])
def test_uncapped_cohort_program_optimum_equals_the_recursion(which):
    """The program itself (not the short cut that returns the recursion's plan) with an unbinding
    cap: its LP and MIP optima equal the recursion. Without caps the rows are flow conservation at
    states and market nodes, a network whose LP optimum is integral (common practice)."""
    case = build_case(_unbound(_doc(which), 1e12), base_dir=DEMO.parent)
    free = solve_uncapped(case).present_cost
    _, z_lp, _, _ = lp_relaxation(case)
    assert close(z_lp, free, 1e-9)
    assert close(program_mip_optimum(case), free, 1e-9)


# ---------------------------------------------------------------------------
# 5. infeasible caps: the shortfall
# ---------------------------------------------------------------------------
FORCED_UNITS = [
    {"id": "V1", "type": "van-a", "age": 6}, {"id": "V2", "type": "van-a", "age": 6},  # both at max_age
    {"id": "V3", "type": "van-a", "age": 2},
    {"id": "C1", "type": "cart-old", "age": 2}, {"id": "C2", "type": "cart-old", "age": 1},
]


def forced_doc(cap_by_year=None) -> dict:
    return small_doc(cap=50000, cap_by_year=cap_by_year, units=FORCED_UNITS)


def test_known_shortfall_from_the_cli(tmp_path):
    """Two vans at max_age must be replaced in 2030 for 2 × 30,000 against a 50,000 cap; nothing else
    is forced over any cap, so the least extra capital is 10,000 in 2030 (hand arithmetic)."""
    case_file = tmp_path / "forced.toml"
    case_file.write_text(to_toml(forced_doc()), encoding="utf-8")
    out = tmp_path / "out"
    env = dict(os.environ, PYTHONIOENCODING="utf-8")
    r = subprocess.run([sys.executable, "-m", "tenure.cli", "plan", str(case_file), "--out", str(out), "--quiet",
                        "--time-limit", "30"], capture_output=True, text=True, encoding="utf-8", env=env,
                       timeout=180)
    assert r.returncode == 3, r.stderr
    doc = json.loads((out / "plan.json").read_text(encoding="utf-8"))
    assert doc["status"] == "infeasible"
    assert doc["shortfall"] == [{"year": 2030, "extra_capital": 10000.0}]
    # the plan shown fits the caps raised by the shortfall
    check_files(build_case(forced_doc()), out, extra={2030: 10000.0})
    # adding the shortfall to the cap makes the case feasible, and the least extra is needed
    raised = build_case(forced_doc(cap_by_year={2030: 60000}))
    plan = fleet.solve_capped(raised, gap=0.0)
    assert plan.status == "optimal"
    assert close(plan.present_cost, exhaustive_optimum(raised)[0])
    assert exhaustive_optimum(build_case(forced_doc(cap_by_year={2030: 59999})))[0] is None


def test_infeasible_plan_object_and_json():
    plan = fleet.solve_capped(build_case(forced_doc()))
    assert plan.status == "infeasible" and not plan.success
    assert plan.shortfall == ((2030, 10000.0),)
    d = plan.to_dict()
    assert d["shortfall"] == [{"year": 2030, "extra_capital": 10000.0}]
    assert all(set(x) == {"year", "extra_capital"} for x in d["shortfall"])


def _demo_with_cap(cap: float) -> tuple[dict, object]:
    doc = read_document(DEMO)
    doc["budget"] = {"cap": cap, "basis": "gross"}
    return doc, build_case(doc, base_dir=DEMO.parent)


def _forced_spend_in_start_year(case) -> float:
    """Least purchase spend of the start year: each unit already at max_age replaced by the cheapest type
    of its class buyable that year, at its list price (the start year's price, docs/conventions.md)."""
    y0 = case.study.start_year
    buyable = [t for t in case.types
               if (t.buy_from is None or t.buy_from <= y0) and (t.buy_until is None or y0 <= t.buy_until)]
    total = 0.0
    for u in case.units:
        t = case.type(u.type)
        if u.age >= t.max_age:
            total += u.count * min(b.price for b in buyable if b.class_ == t.class_)
    return total


def test_demo_shortfall_added_to_the_caps_makes_it_feasible(tmp_path):
    """The demo with a 1.2 M cap in every year: its LP relaxation is already infeasible, so no plan
    exists. The shortfall, added year by year through cap_by_year, must give a case that solves."""
    doc, case = _demo_with_cap(1_200_000)
    # the proof, by hand arithmetic from the case (docs/conventions.md: a unit at max_age must be replaced
    # that year): in 2027 two refuse trucks (age 14 of 14), a bus (16 of 16), three pickups (9 of 9) and a
    # sweeper (11 of 11) are at max age; their cheapest replacements buyable in 2027 cost
    # 2 × 372,000 + 548,000 + 3 × 51,500 + 296,000 = 1,742,500 > 1,200,000
    assert _forced_spend_in_start_year(case) == 2 * 372_000 + 548_000 + 3 * 51_500 + 296_000 == 1_742_500
    # the relaxation of the layer's own program agrees: this checks the program builder, it proves nothing
    assert lp_status(case) == "Infeasible"
    plan = fleet.solve_capped(case, time_limit=30)
    assert plan.status == "infeasible" and plan.shortfall
    extra = dict(plan.shortfall)
    assert all(x > 0 for x in extra.values())
    check_written_plan(case, plan, tmp_path / "short", extra=extra)  # the plan shown fits the raised caps
    doc["budget"]["cap_by_year"] = {str(y): 1_200_000 + x for y, x in extra.items()}
    raised = build_case(doc, base_dir=DEMO.parent)
    again = fleet.solve_capped(raised, time_limit=30)
    assert again.status in ("optimal", "feasible"), again.message
    check_written_plan(raised, again, tmp_path / "raised")


def test_demo_time_limited_shortfall_still_raises_the_caps_enough(tmp_path):
    """Cut short (5 s), the elastic program need not find the least extra capital, but the plan it
    shows must still fit the caps raised by the shortfall it reports: that plan is the proof."""
    _, case = _demo_with_cap(1_600_000)
    plan = fleet.solve_capped(case, time_limit=5)
    assert plan.status == "infeasible" and plan.shortfall
    check_written_plan(case, plan, tmp_path, extra=dict(plan.shortfall))


# ---------------------------------------------------------------------------
# 6. shadow prices of the caps
# ---------------------------------------------------------------------------
def _check_shadow_prices(case, plan, n_diff: int | None = None):
    prog, z, row_value, _ = lp_relaxation(case)
    H = case.study.horizon
    binding = []
    for k in range(H):
        sp = plan.years[k].shadow_price
        r = prog.cap_rows[k]
        assert sp is not None and sp >= 0.0
        slack = prog.row_upper[r] - row_value[r]
        if slack > 1e-6 * max(1.0, prog.row_upper[r]):
            # complementary slackness holds for every optimal primal–dual pair (LP duality)
            assert sp <= 1e-9, (case.study.start_year + k, sp, slack)
        else:
            binding.append(k)
    assert binding, "some cap must bind in the LP"
    step = 100.0  # money added to one year's cap
    for k in binding[:n_diff]:
        extra = np.zeros(H)
        extra[k] = step
        _, z_up, _, _ = lp_relaxation(case, extra)
        slope = (z - z_up) / step  # present-cost saving per extra unit of money in year k
        sp = plan.years[k].shadow_price
        assert abs(slope - sp) <= 1e-4 * max(sp, 1e-3), (case.study.start_year + k, slope, sp)


def test_demo_shadow_prices_are_lp_slopes(demo):
    case, plan = demo
    _check_shadow_prices(case, plan)


@pytest.mark.parametrize("name", ["gross-45k", "net-26k", "gross-by-year"])
def test_small_shadow_prices_are_lp_slopes(name):
    case = small_case(name)
    _check_shadow_prices(case, fleet.solve_capped(case, gap=0.0))


def test_generated_shadow_prices_are_lp_slopes(generated):
    case, plan = generated["gross"]
    _check_shadow_prices(case, plan, n_diff=6)


# ---------------------------------------------------------------------------
# "infeasible" means proven; the LP relaxation alone cannot prove it here
# ---------------------------------------------------------------------------
def test_integer_infeasibility_that_the_lp_misses_is_proven_and_reported():
    """Three vans one year short of max age, a cap of 1.5 vans a year: the LP replaces 1.5 vans in each of
    the two years it has, whole vans cannot (at most one a year, two in all); the elastic program proves
    that extra capital is needed, so the status is "infeasible", not merely "unsolved"."""
    doc = small_doc(horizon=4, units=[{"id": f"V{j}", "type": "van-a", "age": 5} for j in range(1, 4)])
    price_2030, price_2031 = 30000.0, 30000.0 * 1.02  # van-a: 30,000 in 2030 (Y0), rising 2 % a year
    doc["budget"] = {"cap": 1.5 * price_2031, "basis": "gross"}
    case = build_case(doc)
    assert lp_status(case) == "Optimal"
    exact, _ = exhaustive_optimum(case)
    assert exact is None  # no joint schedule fits: the independent check
    plan = fleet.solve_capped(case, time_limit=30)
    assert plan.status == "infeasible"
    extra = dict(plan.shortfall)
    # by hand: one of the two years (2030, 2031) must buy two vans; the cheaper is 2030
    # (2 × 30,000 − 45,900 = 14,100)
    least = 2 * price_2030 - 1.5 * price_2031
    assert set(extra) == {2030}  # 2031 would need 2 × 30,600 − 45,900 = 15,300
    assert least - 1.0 <= sum(extra.values()) <= least * (1 + 1e-3) + 1.0
    raised = copy.deepcopy(doc)
    raised["budget"]["cap_by_year"] = {str(y): 1.5 * price_2031 + x for y, x in extra.items()}
    again = fleet.solve_capped(build_case(raised), time_limit=30)
    assert again.status in ("optimal", "feasible")
