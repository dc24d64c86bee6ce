"""Usage levels and the mid-life overhaul (issue 15), checked against computations outside the graph.

Independent references:
- a brute-force enumeration of every keep/overhaul/replace schedule of one unit,
  each priced here from ``tenure.curves`` and the rules of docs/conventions.md
  ("Usage", "Overhaul"; common practice), never from the graph tables;
- an exhaustive search of the joint schedules of a small capped fleet;
- networkx's shortest path on the same graph;
- a hand-worked rebuild-versus-replace comparison (present worth of each
  alternative over a common study period: the defender/challenger method of the
  engineering-economy texts, e.g. Sullivan, Wicks & Koelling, *Engineering
  Economy*, replacement-analysis chapter, from memory; the figures are invented here).
The figures of the cases are invented test data.
"""

from __future__ import annotations

import copy
import csv
import io
import math

import networkx as nx
import numpy as np
import numpy_financial as npf
import pytest

from tenure import chain, curves, life
from tenure.rebuild import rebuild_life
from tenure.scenarios.recost import recost
from tenure.solve import solve
from tenure.case import CaseError, build_case
from tenure.report.tables import units_csv
from tenure.uncapped import solve_uncapped, starting_states

Y0 = 2030


def bus_doc(horizon=7, units=None, budget=None, two_types=False):
    """A made-up bus class with a usage reference, a usage limit and an overhaul option."""
    types = [{"id": "bus", "class": "bus", "price": 100000, "max_age": 8, "usage_reference": 50000,
              "usage_max": 400000, "om": {"first": 8000, "gradient": 3500}, "salvage": {"retain": 0.8},
              "om_change": 0.01, "price_change": 0.02,
              "overhaul": {"cost": 30000, "ages": [3, 5], "om_age_after": 1, "adds_years": 3}}]
    if two_types:
        types.append({"id": "ebus", "class": "bus", "price": 140000, "max_age": 7, "usage_reference": 40000,
                      "om": [4000, 5000, 6500, 8000, 10000, 12500, 15000],
                      "salvage": [110000, 90000, 72000, 60000, 50000], "buy_from": Y0 + 2})
    doc = {"study": {"start_year": Y0, "horizon": horizon, "discount_rate": 0.06},
           "asset_type": types,
           "unit": units or [{"id": "B1", "type": "bus", "age": 2}]}
    if budget is not None:
        doc["budget"] = budget
    return doc


# ---------------------------------------------------------------------------
# an independent pricer of one unit's schedule (curves + the stated rules)
# ---------------------------------------------------------------------------
def _rho(t, usage):
    return 1.0 if usage is None or t.usage_reference is None else usage / t.usage_reference


def _max_age(t, usage, oh):
    m = t.max_age
    if usage is not None and t.usage_max is not None and t.usage_reference is not None:
        m = min(m, math.floor(t.usage_max / usage))
    return m + (t.overhaul.adds_years if oh is not None else 0)


def _value(t, age, year, usage, y0=Y0):
    """Value curve at equivalent age age·ρ (lists interpolated, held at the last figure) × current price."""
    eq = age * _rho(t, usage)
    c = t.salvage
    if c.kind == "retain":
        f = c.retain ** eq
    elif c.kind == "line":
        f = 1 - (1 - c.floor) * min(eq, c.life) / c.life
    else:
        tab = [t.price] + list(c.table)
        lo = min(int(math.floor(eq)), len(tab) - 1)
        hi = min(lo + 1, len(tab) - 1)
        f = (tab[lo] + (tab[hi] - tab[lo]) * (eq - lo if hi > lo else 0.0)) / t.price
    return f * t.price * (1 + t.price_change) ** (year - y0)


def _om(t, service_year, vintage, usage, y0=Y0):
    return float(curves.om_base(t.om, service_year)) * (1 + t.om_change) ** (vintage - y0) * _rho(t, usage)


def options(case, state, k):
    """The actions open to a unit in state (type, age, overhauled_at) in planning year k."""
    t, a, oh = state
    out = []
    u = state_usage[0]
    if a < _max_age(t, u, oh):
        out.append("keep")
    if t.overhaul is not None and oh is None and a in t.overhaul.ages and a < _max_age(t, u, None) \
            and a + 1 <= _max_age(t, u, a):
        out.append("overhaul")
    out += [t2 for t2 in case.types_of(t.class_) if t2.buyable(Y0 + k)]
    return out


state_usage = [None]  # the job's usage while a schedule is enumerated


def step(state, act, k, usage, i, y0=Y0):
    """(next state, present cost at time 0, capital paid at k) of one year's action."""
    t, a, oh = state
    v0, v1 = (1 + i) ** -k, (1 + i) ** -(k + 1)
    if act == "keep":
        served = a + 1 if oh is None else t.overhaul.om_age_after + (a + 1 - oh)
        return (t, a + 1, oh), _om(t, served, y0 + k - a, usage, y0) * v1, 0.0
    if act == "overhaul":
        c = t.overhaul.cost
        return (t, a + 1, a), c * v0 + _om(t, t.overhaul.om_age_after + 1, y0 + k - a, usage, y0) * v1, c
    p = act.price * (1 + act.price_change) ** k
    cost = (p - _value(t, a, y0 + k, usage, y0)) * v0 + _om(act, 1, y0 + k, usage, y0) * v1
    return (act, 1, None), cost, p


def all_schedules(case, t, a, usage, net=False):
    """Every feasible schedule of a unit from (t, a) at k = 0: (actions, present cost, spend by year);
    spend is capital (purchase prices and overhaul costs), less market value received when ``net``."""
    H, i = case.study.horizon, case.study.discount_rate
    state_usage[0] = usage
    out = []

    def rec(k, state, acts, pv, cap):
        if k == H:
            tt, aa, _ = state
            out.append((tuple(acts), pv - _value(tt, aa, Y0 + H, usage) * (1 + i) ** -H, tuple(cap)))
            return
        for act in options(case, state, k):
            nxt, c, paid = step(state, act, k, usage, i)
            if net and not isinstance(act, str):
                paid -= _value(state[0], state[1], Y0 + k, usage)
            rec(k + 1, nxt, acts + [act if isinstance(act, str) else act.id], pv + c, cap + [paid])

    rec(0, (t, a, None), [], 0.0, [])
    return out


# ---------------------------------------------------------------------------
# brute force = recursion, single units
# ---------------------------------------------------------------------------
@pytest.mark.parametrize("usage", [None, 30000.0, 80000.0])
@pytest.mark.parametrize("two_types", [False, True])
def test_brute_force_single_unit_equals_recursion(usage, two_types):
    """Least present cost over every keep/overhaul/replace schedule (priced from curves) equals the
    recursion's value at the unit's starting state, for each starting age."""
    unit = {"id": "B1", "type": "bus", "age": 2, **({} if usage is None else {"usage": usage})}
    case = build_case(bus_doc(units=[unit], two_types=two_types))
    g = chain.build_class_graph(case, "bus")
    sol = chain.backward(g)
    t = case.type("bus")
    checked = 0
    for a in range(0, _max_age(t, usage, None) + 1):
        best = min(pv for _, pv, _ in all_schedules(case, t, a, usage))
        r = g.start_row("bus", usage)
        assert sol.value[0, r, a] == pytest.approx(best, rel=1e-9)
        checked += 1
    assert checked == _max_age(t, usage, None) + 1


def test_overhaul_changes_the_answer():
    """The overhaul option is used somewhere and lowers the least cost (else the check above is idle)."""
    case = build_case(bus_doc())
    t = case.type("bus")
    scheds = all_schedules(case, t, 2, None)
    best = min(scheds, key=lambda s: s[1])
    without = min(pv for acts, pv, _ in scheds if "overhaul" not in acts)
    assert "overhaul" in best[0]
    assert best[1] < without - 1.0


def test_usage_limited_max_age_and_scaled_costs():
    """At 80,000 km/year against usage_max 400,000 km the max age is floor(400000/80000) = 5 (the rule of
    docs/conventions.md, common practice: age or km, whichever comes first), O&M is 1.6 × the curve and
    the value is the curve at 1.6 × the age."""
    case = build_case(bus_doc(units=[{"id": "B", "type": "bus", "age": 1, "usage": 80000}]))
    g = chain.build_class_graph(case, "bus")
    r = g.start_row("bus", 80000.0)
    assert g.max_age[r] == 5
    assert g.om_keep[0, r, 1] == pytest.approx((8000 + 3500) * 1.6 * 1.01 ** -1)
    assert g.value[0, r, 2] == pytest.approx(100000 * 0.8 ** 3.2)


def test_networkx_view_covers_overhaul_arcs():
    """networkx's shortest path on the view equals the recursion, and the view has overhaul arcs."""
    units = [{"id": "B1", "type": "bus", "age": 2}, {"id": "B2", "type": "bus", "age": 3, "usage": 80000}]
    case = build_case(bus_doc(units=units, two_types=True))
    g = chain.build_class_graph(case, "bus")
    sol = chain.backward(g)
    starts = list(starting_states(case, {"bus": g})["bus"])
    G = chain.to_networkx(g, starts)
    kinds = {d["action"] for _, _, d in G.edges(data=True)}
    assert {"keep", "replace", "overhaul", "end"} <= kinds
    for t, a in starts:
        d = nx.shortest_path_length(G, (0, g.row_label(t), a), chain.END, weight="weight", method="bellman-ford")
        assert d == pytest.approx(sol.value[0, t, a], rel=1e-9)
    # a replacement keeps the job: no replace arc crosses from one job's rows to another's
    for (k, lab, _), (k2, lab2, _), dd in G.edges(data=True):
        if dd["action"] == "replace":
            assert ("@80000" in lab) == ("@80000" in lab2)


# ---------------------------------------------------------------------------
# hand-worked rebuild versus replace
# ---------------------------------------------------------------------------
def test_hand_worked_rebuild_versus_replace():
    """A 3-year-old unit (max age 4) is rebuilt or replaced; study period 2 years, i = 10 %, salvage end.

    Price 100 (constant), O&M om(a) = 10·a, value by age 1 … 6: [50, 40, 32, 25, 20, 16]; overhaul at
    age 3 for 20, O&M afterwards om(om_age_after + j) with om_age_after = 1, max age 4 + 2.
    Present worth of each alternative over the common 2-year study period (defender/challenger
    comparison, from memory of the method; v = 1/1.1):
      rebuild, keep:     20 + om(2)·v + om(3)·v² − value(5)·v² = 20 + 18.182 + 24.793 − 16.529 = 46.446
      replace, keep:     (100 − 32) + om(1)·v + om(2)·v² − value(2)·v² = 68 + 9.091 − 16.529 = 60.562
      replace, replace:  68 + 10·v + (100 − 50)·v + 10·v² − 50·v²      = 68 + 54.545 − 33.058 = 89.488
      keep, replace:     om(4)·v + (100 − 25)·v + 10·v² − 50·v²         = 104.545 − 33.058 = 71.488
      rebuild, replace:  20 + 20·v + (100 − 25)·v + 10·v² − 50·v²       = 20 + 86.364 − 33.058 = 73.306
    (keep, keep is not allowed: age 4 is the max age.)  The rebuild wins by 14.116; at a rebuild cost
    of 40 it costs 66.446 and replacing (60.562) wins.
    """
    doc = {"study": {"start_year": Y0, "horizon": 2, "discount_rate": 0.10},
           "asset_type": [{"id": "m", "class": "m", "price": 100, "max_age": 4, "om": {"first": 10, "gradient": 10},
                           "salvage": [50, 40, 32, 25, 20, 16],
                           "overhaul": {"cost": 20, "ages": [3, 3], "om_age_after": 1, "adds_years": 2}}],
           "unit": [{"id": "M", "type": "m", "age": 3}]}
    sol = chain.backward(chain.build_class_graph(build_case(doc), "m"))
    assert sol.value[0, 0, 3] == pytest.approx(46.446, abs=1e-3)
    assert sol.policy[0, 0, 3] == chain.OVERHAUL
    assert [s.action for s in chain.follow(sol, 0, 3)] == [chain.OVERHAUL, chain.KEEP]
    doc["asset_type"][0]["overhaul"]["cost"] = 40
    sol = chain.backward(chain.build_class_graph(build_case(doc), "m"))
    assert sol.value[0, 0, 3] == pytest.approx(60.562, abs=1e-3)
    assert sol.policy[0, 0, 3] == 0


# ---------------------------------------------------------------------------
# after tax: usage rows and a capitalised overhaul (docs/conventions.md, "Income tax")
# ---------------------------------------------------------------------------
def _taxed_m(cost=20, tau=0.3):
    return {"study": {"start_year": Y0, "horizon": 2, "discount_rate": 0.10, "tax_rate": tau},
            "asset_type": [{"id": "m", "class": "m", "price": 100, "max_age": 4, "om": {"first": 10, "gradient": 10},
                            "salvage": [50, 40, 32, 25, 20, 16],
                            "depreciation": {"method": "straight-line", "life": 4},
                            "overhaul": {"cost": cost, "ages": [3, 3], "om_age_after": 1, "adds_years": 2}}],
            "unit": [{"id": "M", "type": "m", "age": 3}]}


def test_hand_worked_rebuild_versus_replace_after_tax():
    """The unit of the test above after tax: τ = 30 %, straight line over 4 years (25 a year of the
    basis 100, the price in its purchase year); the overhaul (cost 20) is capitalised and depreciated
    the same way from the year it is done (5 a year), hand computation, v = 1/1.1:
      rebuild, keep:    20 + (0.7·20 − 0.3·(25 + 5))·v + (0.7·30 − 0.3·(0 + 5))·v²
                        − [20 − 0.3·(20 − (0 + 20·(1 − 2/4)))]·v² = 20 + 5v + 19.5v² − 17v² = 26.612
      replace, keep:    100 − [32 − 0.3·(32 − 25)] + (0.7·10 − 0.3·25)·v + (0.7·20 − 0.3·25)·v²
                        − [40 − 0.3·(40 − 50)]·v² = 70.1 − 0.5v − 36.5v² = 39.480
      keep, replace:    (0.7·40 − 0.3·25 + 100 − [25 − 0.3·25])·v − (0.5 + 57.5)·v² = 45.702
      replace, replace: 70.1 + (−0.5 + 100 − 57.5)·v − 58v² = 60.348
      rebuild, replace: 20 + (5 + 100 − [25 − 0.3·(25 − 15)])·v − 58v² = 47.521
    The rebuild wins (as before tax); at a rebuild cost of 40 it costs
    40 + 3.5v + (18 − 20)v² = 41.529 and replacing (39.480) wins."""
    g = chain.build_class_graph(build_case(_taxed_m()), "m")
    sol = chain.backward(g)
    assert sol.value[0, 0, 3] == pytest.approx(26.611570, abs=1e-6)
    assert [s.action for s in chain.follow(sol, 0, 3)] == [chain.OVERHAUL, chain.KEEP]
    v = 1 / 1.1
    oh = int(g.overhaul_to[0, 3])
    assert g.overhaul_pw[0, 0, 3] == pytest.approx(20 + 5 * v)  # capital at 0, year after it at 1
    assert g.book[2, oh, 5] == pytest.approx(10.0)  # unit written off, the overhaul half
    assert g.sale_pw[1, oh, 4] == pytest.approx(22 * v)  # book 0 + 15: a loss, a credit of 0.9
    assert g.sale_pw[0, 0, 3] == pytest.approx(29.9)
    sol = chain.backward(chain.build_class_graph(build_case(_taxed_m(cost=40)), "m"))
    assert sol.value[0, 0, 3] == pytest.approx(39.480165, abs=1e-6)
    assert sol.policy[0, 0, 3] == 0


def test_usage_row_after_tax_scales_om_not_depreciation():
    """A bus at 80,000 km/year (1.6 × the reference): the after-tax keep arc of service year 2 is
    (1 − τ)·1.6·om(2) − τ·d_2·B, the depreciation on the calendar (MACRS is by year in service, IRS
    Pub 946, not by usage), the basis B the price of its purchase year 100,000·1.02⁻¹; the sale at
    age 2 is the value at 1.6 × the age less τ·(MV − book)."""
    doc = bus_doc(units=[{"id": "B", "type": "bus", "age": 1, "usage": 80000}])
    doc["study"]["tax_rate"] = 0.25
    doc["asset_type"][0]["depreciation"] = {"method": "macrs", "recovery_years": 5}
    g = chain.build_class_graph(build_case(doc), "bus")
    r = g.start_row("bus", 80000.0)
    basis = 100000 * 1.02 ** -1
    om = (8000 + 3500) * 1.6 * 1.01 ** -1
    assert g.keep_pw[0, r, 1] == pytest.approx((0.75 * om - 0.25 * 0.32 * basis) / 1.06)
    mv = 100000 * 1.02 * 0.8 ** 3.2  # sold at time 1 (prices of 2031), equivalent age 3.2
    assert g.sale_pw[1, r, 2] == pytest.approx((mv - 0.25 * (mv - basis * 0.48)) / 1.06)


def test_after_tax_plans_with_usage_and_overhaul_recost_to_the_solved_cost():
    """The recursion (graph tables) and the per-unit recost (tenure.curves and tenure.tax) agree to
    the cent on an after-tax bus class with usage levels and an overhaul the plan uses; both end
    values. Two independent routes through the rules of docs/conventions.md."""
    units = [{"id": "B1", "type": "bus", "age": 2}, {"id": "B2", "type": "bus", "age": 3, "usage": 80000},
             {"id": "B3", "type": "bus", "age": 4, "usage": 30000}]
    for end in ("salvage", "continuing"):
        doc = bus_doc(horizon=9, units=units, two_types=True)
        doc["study"].update(tax_rate=0.25, end_value=end, carbon_price=40.0)  # priced tonnes in the end value too
        doc["asset_type"][0]["emissions"] = 30.0
        doc["asset_type"][0]["overhaul"]["cost"] = 15000  # cheap enough that the after-tax plans use it
        for t in doc["asset_type"]:
            t["depreciation"] = {"method": "macrs", "recovery_years": 5}
        case = build_case(doc)
        plan = solve(case)
        events = [e for u in plan.to_dict()["units"] for e in u["events"]]
        assert any(e.get("action") == "overhaul" for e in events), end
        assert abs(recost(plan.to_dict(), case).cost - plan.present_cost) < 0.005, end


def test_rebuild_life_after_tax_by_hand_and_equal_to_life_without_overhaul():
    """`life --usage` after tax: the m type bought new, overhauled at 3 and held 5 years, τ = 30 %,
    straight line over 4 years, i = 10 %: yearly after-tax costs −0.5, 6.5, 13.5, then
    0.7·20 − 0.3·(25 + 5) = 5 and 0.7·30 − 0.3·5 = 19.5, the overhaul 20 at 3, the sale
    20 − 0.3·(20 − 10) = 17 at 5 (hand computation); EAC by numpy-financial. Without the overhaul
    the EAC equals tenure.life's after-tax table."""
    case = build_case(_taxed_m())
    t = case.type("m")
    rl = rebuild_life(t, 0.10, Y0, Y0, None, tax_rate=0.3)
    flows = [-100.0, 0.5, -6.5, -13.5 - 20.0, -5.0, -19.5 + 17.0]
    eac = npf.pmt(0.10, 5, npf.npv(0.10, flows))
    assert rl.eac_with[(3, 5)] == pytest.approx(eac, rel=1e-12)
    lt = life.life_table(t, 0.10, Y0, tax_rate=0.3)
    assert rl.eac_without == pytest.approx(lt.eac_total, rel=1e-12)


# ---------------------------------------------------------------------------
# the fleet layer against an exhaustive joint search
# ---------------------------------------------------------------------------
def _joint_best(case, units):
    """Least present cost of the joint schedules of ``units`` within each year's cap (numpy search)."""
    H = case.study.horizon
    caps = np.array([case.budget.cap_for(Y0 + k) for k in range(H)], dtype=float)
    pv = np.zeros(1)
    cap = np.zeros((1, H))
    for u in units:
        sc = all_schedules(case, case.type(u["type"]), u["age"], u.get("usage"), net=case.budget.basis == "net")
        p = np.array([s[1] for s in sc])
        c = np.array([s[2] for s in sc])
        pv = (pv[:, None] + p[None, :]).ravel()
        cap = (cap[:, None, :] + c[None, :, :]).reshape(-1, H)
        if case.budget.basis == "gross":  # gross partial sums only grow: prune early
            ok = (cap <= caps + 1e-6).all(axis=1)
            pv, cap = pv[ok], cap[ok]
    ok = (cap <= caps + 1e-6).all(axis=1)
    return float(pv[ok].min())


@pytest.mark.parametrize("cap, basis", [(60000, "gross"), (110000, "gross"), (150000, "gross"), (60000, "net")])
def test_exhaustive_joint_schedules_equal_fleet_layer(cap, basis):
    """Four buses (two jobs) under a cap: the fleet layer's plan costs what the best joint schedule
    costs (overhauls count as capital against the cap on both bases)."""
    units = [{"id": "A", "type": "bus", "age": 3}, {"id": "B", "type": "bus", "age": 4},
             {"id": "C", "type": "bus", "age": 3, "usage": 65000}, {"id": "D", "type": "bus", "age": 5}]
    case = build_case(bus_doc(horizon=4, units=units, budget={"cap": cap, "basis": basis}))
    plan = solve(case, gap=0.0, time_limit=60)
    best = _joint_best(case, units)
    assert plan.status == "optimal"
    assert plan.present_cost == pytest.approx(best, rel=1e-7)
    free = solve_uncapped(case)
    assert any(y.slack < -1e-6 for y in free.years)  # the cap binds
    assert all(y.slack >= -1e-6 for y in plan.years)


# ---------------------------------------------------------------------------
# plan outputs: units.csv re-costed, ages, overhaul rules
# ---------------------------------------------------------------------------
def _fleet_case(cap=None):
    units = [{"id": f"U{j}", "type": "bus", "age": j % 6, **({"usage": 30000.0 + 10000 * (j % 4)} if j % 3 else {})}
             for j in range(12)]
    return build_case(bus_doc(horizon=10, units=units, two_types=True,
                              budget=None if cap is None else {"cap": cap}))


@pytest.mark.parametrize("cap", [None, 400000])
def test_units_csv_recosted_equals_present_cost(cap):
    """Every unit's events in units.csv, replayed year by year with the independent pricer, give the
    reported present cost."""
    case = _fleet_case(cap)
    plan = solve(case, time_limit=60)
    rows = list(csv.DictReader(io.StringIO(units_csv(plan))))
    usage = {n: u.usage for u in case.units for n in u.names()}
    i, H = case.study.discount_rate, case.study.horizon
    total = 0.0
    n_ov = 0
    for u in plan.units:
        ev = {int(r["year"]): r for r in rows if r["unit"] == u.unit and r["year"]}
        state = (case.type(u.start_type), u.start_age, None)
        pv = 0.0
        for k in range(H):
            r = ev.get(Y0 + k)
            act = "keep" if r is None else ("overhaul" if r["action"] == "overhaul" else case.type(r["type"]))
            n_ov += act == "overhaul"
            state, c, _ = step(state, act, k, usage[u.unit], i)
            pv += c
        pv -= _value(state[0], state[1], Y0 + H, usage[u.unit]) * (1 + i) ** -H
        assert pv == pytest.approx(u.present_cost, rel=1e-9)
        total += pv
    assert total == pytest.approx(plan.present_cost, rel=1e-9)
    assert n_ov > 0


def test_ages_and_overhaul_rules_hold_in_plans():
    """No unit exceeds its usage-limited max age (+ adds_years after an overhaul); overhauls only at the
    allowed ages, at most once per unit."""
    case = _fleet_case(400000)
    plan = solve(case, time_limit=60)
    usage = {n: u.usage for u in case.units for n in u.names()}
    seen = 0
    for u in plan.units:
        t, a, oh = case.type(u.start_type), u.start_age, None
        ev = {e.year: e for e in u.events}
        n_ov = 0
        for k in range(case.study.horizon):
            e = ev.get(Y0 + k)
            if e is not None and e.action == "overhaul":
                assert t.overhaul is not None and a in t.overhaul.ages and oh is None
                n_ov += 1
                oh, a = a, a + 1
            elif e is not None:
                t, a, oh = case.type(e.type), 1, None
            else:
                a += 1
            assert a <= _max_age(t, usage[u.unit], oh)
            seen += 1
        assert n_ov <= 1
    assert seen == len(plan.units) * case.study.horizon


# ---------------------------------------------------------------------------
# validation
# ---------------------------------------------------------------------------
@pytest.mark.parametrize("edit, path, fragment", [
    (lambda d: d["asset_type"][0]["overhaul"].update(ages=[5, 3]), "asset_type[1].overhaul.ages", "first ≤ last"),
    (lambda d: d["asset_type"][0]["overhaul"].update(ages=[3, 8]), "asset_type[1].overhaul.ages", "max_age − 1 = 7"),
    (lambda d: d["asset_type"][0]["overhaul"].update(colour=1), "asset_type[1].overhaul.colour",
     "allowed: cost, ages, om_age_after, adds_years"),
    (lambda d: d["asset_type"][0].update(usage_reference=-5), "asset_type[1].usage_reference", "> 0"),
    (lambda d: d["asset_type"][0].pop("usage_reference"), "asset_type[1].usage_max", "needs usage_reference"),
    (lambda d: d["unit"][0].update(usage=0), "unit[1].usage", "> 0"),
    (lambda d: d["unit"][0].update(age=6, usage=80000), "unit[1].age", "usage-limited max age 5"),
])
def test_bad_usage_and_overhaul_fields_are_named(edit, path, fragment):
    doc = bus_doc()
    edit(doc)
    with pytest.raises(CaseError) as err:
        build_case(copy.deepcopy(doc), source="b.toml")
    msgs = [str(p) for p in err.value.problems]
    assert any(path in m and fragment in m for m in msgs), msgs


def test_usage_on_a_type_without_reference_is_refused():
    doc = bus_doc()
    doc["asset_type"][0].pop("usage_reference")
    doc["asset_type"][0].pop("usage_max")
    doc["unit"][0]["usage"] = 20000
    with pytest.raises(CaseError) as err:
        build_case(doc, source="b.toml")
    assert any("unit[1].usage" in str(p) and "no usage_reference" in str(p) for p in err.value.problems)


def test_usage_levels_rounded_to_a_grid():
    """Usages 30,210 and 30,190 km fall on the 1 % grid (500 km) at 30,000: one job, one row per type."""
    units = [{"id": "A", "type": "bus", "age": 1, "usage": 30210}, {"id": "B", "type": "bus", "age": 1, "usage": 30190}]
    case = build_case(bus_doc(units=units))
    g = chain.build_class_graph(case, "bus")
    assert g.job_usage == (30000.0,)
    assert list(starting_states(case, {"bus": g})["bus"]) == [(g.start_row("bus", 30000.0), 1)]


# ---------------------------------------------------------------------------
# the demo, the command line and the stationary EAC with and without the overhaul
# ---------------------------------------------------------------------------
def _recost_units(case, plan):
    """Present cost of every unit replayed from units.csv with the independent pricer."""
    rows = list(csv.DictReader(io.StringIO(units_csv(plan))))
    y0, H, i = case.study.start_year, case.study.horizon, case.study.discount_rate
    usage = {n: u.usage for u in case.units for n in u.names()}
    by_unit: dict = {}
    for r in rows:
        if r["year"]:
            by_unit.setdefault(r["unit"], {})[int(r["year"])] = r
    out = {}
    for u in plan.units:
        state = (case.type(u.start_type), u.start_age, None)
        pv = 0.0
        for k in range(H):
            r = by_unit.get(u.unit, {}).get(y0 + k)
            act = "keep" if r is None else ("overhaul" if r["action"] == "overhaul" else case.type(r["type"]))
            state, c, _ = step(state, act, k, usage[u.unit], i, y0)
            pv += c
        out[u.unit] = pv - _value(state[0], state[1], y0 + H, usage[u.unit], y0) * (1 + i) ** -H
    return out


def test_demo_with_usage_and_overhaul_recosted_from_units_csv():
    """The demo (buses with an overhaul option, pickups with a usage column), capped: units.csv
    replayed with the independent pricer gives every unit's and the plan's present cost, buses are
    overhauled, and the report shows where."""
    from casekit import DEMO
    from tenure.case import load_case
    from tenure.report.overhauls import overhaul_groups, overhauls_html

    case = load_case(DEMO)
    assert {u.usage for u in case.units if u.type == "pu-gasoline"} == {None, 12000, 16000, 26000, 32000}
    assert case.type("bus-diesel").overhaul.ages == range(7, 11)
    plan = solve(case, time_limit=60)
    assert plan.success
    costs = _recost_units(case, plan)
    for u in plan.units:
        assert costs[u.unit] == pytest.approx(u.present_cost, rel=1e-9)
    assert sum(costs.values()) == pytest.approx(plan.present_cost, rel=1e-9)
    groups = overhaul_groups(plan)
    assert groups and all(t == "bus-diesel" and 7 <= a <= 10 for _, _, t, a, _, _ in groups)
    html = overhauls_html(plan, case)
    assert "<h3>Overhauls</h3>" in html and str(groups[0][0]) in html


def test_rebuild_life_without_overhaul_equals_the_life_table():
    """At the reference usage the EAC without overhaul is the life table's (Sullivan, Wicks & Koelling,
    replacement analysis: EAC = P(A/P) − S(A/F) + PW(O&M)(A/P), from memory), and with the overhaul
    each EAC is the present worth of its cash flows times numpy-financial's capital recovery factor."""
    import numpy_financial as npf

    from tenure.life import life_table
    from tenure.rebuild import rebuild_life

    case = build_case(bus_doc())
    t = case.type("bus")
    r = rebuild_life(t, 0.06, Y0, Y0, None)
    lt = life_table(t, 0.06, Y0, Y0)
    assert np.allclose(r.eac_without, lt.eac_total, rtol=1e-12)
    ao, n = 4, 10
    cash = [-t.price] + [-_om(t, a if a <= ao else 1 + a - ao, Y0, None) for a in range(1, n + 1)]
    cash[ao] -= 30000
    cash[n] += _value(t, n, Y0 + n, None)
    eac = npf.pmt(0.06, n, npf.npv(0.06, cash))  # pmt of a negative present worth is the positive EAC
    assert r.eac_with[(ao, n)] == pytest.approx(eac, rel=1e-9)
    assert r.min_with == min(r.eac_with.values())
    at = rebuild_life(t, 0.06, Y0, Y0, 80000.0)
    assert at.max_age == 5 and len(at.eac_without) == 5
    assert all(a < 5 and n <= 8 for a, n in at.eac_with)


def test_cli_life_and_policy_take_usage(tmp_path, capsys):
    from casekit import to_toml
    from tenure.cli import main

    p = tmp_path / "b.toml"
    p.write_text(to_toml(bus_doc()), encoding="utf-8")
    assert main(["life", str(p), "--usage", "80000"]) == 0
    out = capsys.readouterr().out
    assert "at usage 80,000 per year: max age 5" in out and "with overhaul: overhaul at age" in out
    assert main(["policy", str(p), "--class", "bus", "--usage", "80000"]) == 0
    out = capsys.readouterr().out
    assert "held type bus (max age 5)" in out and "'+': overhaul" in out
    assert "types: A = bus\n" in out  # the derived rows share their type's letter
    assert main(["policy", str(p), "--class", "bus", "--usage", "-3"]) == 2
    assert "--usage -3" in capsys.readouterr().err


def test_csv_usage_column_is_read_and_checked(tmp_path):
    from tenure.case import load_case

    doc = bus_doc()
    doc.pop("unit")
    doc["fleet"] = {"file": "f.csv"}
    from casekit import to_toml
    (tmp_path / "c.toml").write_text(to_toml(doc), encoding="utf-8")
    (tmp_path / "f.csv").write_text("id,type,age,count,usage\nA,bus,2,1,\nB,bus,3,2,30000\n", encoding="utf-8")
    case = load_case(tmp_path / "c.toml")
    assert [(u.id, u.usage) for u in case.units] == [("A", None), ("B", 30000.0)]
    (tmp_path / "f.csv").write_text("id,type,age,usage\nA,bus,2,lots\n", encoding="utf-8")
    with pytest.raises(CaseError) as err:
        load_case(tmp_path / "c.toml")
    assert any("row 2.usage" in str(p) and "'lots'" in str(p) for p in err.value.problems)


def test_scenario_recost_of_a_usage_and_overhaul_plan_equals_its_cost():
    """The scenario layer re-costs a plan with usage jobs and overhauls under its own case at the
    plan's present cost (the same rules, docs/conventions.md), and flags an overhaul the other
    case does not allow."""
    from tenure import scenarios as sc

    case = _fleet_case(400000)
    plan = solve(case, time_limit=60).to_dict()
    r = sc.recost(plan, case)
    assert r.cost == pytest.approx(plan["present_cost"], abs=0.01)
    assert not r.breaks
    doc = copy.deepcopy(dict(case.raw))
    doc["asset_type"][0].pop("overhaul")
    other = build_case(doc)
    assert any("overhauls a bus at age" in m for m in sc.recost(plan, other).breaks)


def test_rounding_never_shortens_a_units_usage_limited_life():
    """usage_max 211,600 km at 26,300 km/year allows floor(8.046) = 8 years. The nearest point of the
    500 km grid (1 % of 50,000) is 26,500, which would allow floor(7.985) = 7: the unit, aged 8, is
    put on 26,000 instead (floor(8.138) = 8), so its starting state exists."""
    from tenure import derived

    doc = bus_doc(units=[{"id": "A", "type": "bus", "age": 8, "usage": 26300}])
    doc["asset_type"][0]["usage_max"] = 211600
    case = build_case(doc)
    assert derived.job_usage(case, case.units[0], derived.usage_grid(case, "bus")) == 26000.0
    g = chain.build_class_graph(case, "bus")
    (t, a), = starting_states(case, {"bus": g})["bus"]
    assert a == 8 == g.max_age[t]
    doc["unit"][0].update(usage=26200, age=7)  # 26,200 → 26,000 (nearest; no limit crossed)
    assert derived.job_usage(build_case(doc), build_case(doc).units[0], 0.01) == 26000.0
    doc["unit"][0].update(usage=26260)  # nearest 26,500 allows 7 < floor(211600/26260) = 8: down to 26,000
    assert derived.job_usage(build_case(doc), build_case(doc).units[0], 0.01) == 26000.0
    doc["unit"][0].update(usage=26700)  # floor(7.925) = 7; nearest 26,500 (7.985 → 7) shortens nothing
    assert derived.job_usage(build_case(doc), build_case(doc).units[0], 0.01) == 26500.0


def test_continuing_end_value_with_usage_and_overhaul_recosts_equal():
    """Under the "continuing" end value, the plan's present cost (graph tables, tenure.derived) equals
    the scenario layer's re-costing of its schedule (curves, the rule of docs/conventions.md "Usage")."""
    from tenure import scenarios as sc

    units = [{"id": "A", "type": "bus", "age": 2}, {"id": "B", "type": "bus", "age": 4, "usage": 70000},
             {"id": "C", "type": "bus", "age": 1, "usage": 30000}]
    doc = bus_doc(horizon=6, units=units)
    doc["study"]["end_value"] = "continuing"
    case = build_case(doc)
    plan = solve(case).to_dict()
    r = sc.recost(plan, case)
    assert not r.breaks
    assert r.cost == pytest.approx(plan["present_cost"], abs=0.01)
    assert any(e["action"] == "overhaul" for u in plan["units"] for e in u["events"])


def test_buy_list_lists_overhauls_as_capital_not_as_a_purchase_and_a_sale():
    # an overhaul is capital of its year (docs/conventions.md, "Overhaul"): the buy list shows it as its own
    # action with the unit's id, and the listed years still add up to years.csv's capital and market value
    from tenure.report import buylist

    units = [{"id": f"B{j}", "type": "bus", "age": a} for j, a in enumerate((2, 3, 4, 1))]
    plan = solve(build_case(bus_doc(horizon=8, units=units)))
    events = [(u.unit, e.year) for u in plan.units for e in u.events if e.action == "overhaul"]
    assert events, "the made-up buses are overhauled in this case"
    bl = buylist.buy_list(plan, plan.years[-1].year - Y0 + 1)
    over = [p for p in bl.purchases if p.action == "overhaul"]
    assert sorted((n, p.year) for p in over for n in p.units) == sorted(events)
    assert all(p.unit_price == 30000 and p.total == 30000 * p.count for p in over)
    sold = {n for d in bl.disposals for n in d.units}
    for y in plan.years:
        cap = sum(p.total for p in bl.purchases if p.year == y.year)
        value = sum(d.total for d in bl.disposals if d.year == y.year)
        assert round(cap, 2) == round(y.capital, 2) and round(value, 2) == round(y.salvage, 2)
    # an overhauled unit is not listed as sold in its overhaul year at a zero price
    assert not any(d.value_each == 0 for d in bl.disposals) and sold <= {u.unit for u in plan.units}
