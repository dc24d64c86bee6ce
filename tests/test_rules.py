"""Tests of the rules fleets plan under: class sizes, orders, minimum life, nominal money, targets, emissions.

What each check is measured against is named beside it:

- **exhaustive search of joint schedules**: each unit slot (an inventory unit, or a slot a new
  unit may fill) has every schedule enumerated on its own — keep, replace with any buyable type,
  and (where the class shrinks) sell without a replacement; a new slot waits or buys — priced
  straight from ``tenure.curves`` with the timing of docs/conventions.md (never the state-graph
  tables or the program). The joint schedules are the product of the slots' schedules, kept when
  every rule holds, counted from the schedules themselves (:func:`joint_optimum`).
- **hand arithmetic** for a nominal cap deflated to constant money, and **numpy-financial** for
  the Fisher relation (a nominal cash flow discounted at the nominal rate has the present worth
  of its constant-money equivalent discounted at the derived real rate).
- **recomputation from the written files** (units.csv, years.csv, plan.json), as a user would.

The fleets are invented test data.
"""

from __future__ import annotations

import csv
import itertools
import json
import math
import time

import numpy as np
import numpy_financial as npf
import pytest

from casekit import to_toml
from tenure import chain, curves, life, service
from tenure.case import CaseError, build_case
from tenure.cli import main
from tenure.fleet import rules_rows
from tenure.fleet.backend import BACKENDS, get_backend
from tenure.fleet.program import build_program
from tenure.fleet.reserve import RESERVE_FRACTION, reserved
from tenure.fleet.rounding import fix_and_relax
from tenure.report.tables import write_plan
from tenure.scenarios import case_with, coerce, recost
from tenure.solve import solve

Y0, H = 2030, 4
REL = 1e-7


def rules_doc(**extra) -> dict:
    """A small invented one-class fleet: a diesel type with a minimum life and a cleaner electric one."""
    doc = {
        "study": {"title": "made-up rules case", "start_year": Y0, "horizon": H, "discount_rate": 0.05},
        "asset_type": [
            {"id": "dsl", "class": "bus", "price": 100000, "max_age": 4, "min_age": 3,
             "om": {"first": 9000, "gradient": 15000}, "salvage": {"retain": 0.7}, "emissions": 40},
            {"id": "bev", "class": "bus", "price": 130000, "max_age": 3, "price_change": -0.03,
             "om": {"first": 4000, "gradient": 4000}, "salvage": {"retain": 0.7},
             "emissions": {"first": 6, "change": -0.1}},
        ],
        "unit": [{"id": "A", "type": "dsl", "age": 0}, {"id": "B", "type": "dsl", "age": 2},
                 {"id": "C", "type": "bev", "age": 1}],
    }
    for k, v in extra.items():
        if k == "study":
            doc["study"].update(v)
        else:
            doc[k] = v
    return doc


# ---------------------------------------------------------------------------
# independent enumeration, priced from tenure.curves
# ---------------------------------------------------------------------------
def slot_schedules(case, start, allow_sell: bool) -> list[dict]:
    """Every schedule of one slot over the horizon, priced from the curves (docs/conventions.md).

    ``start`` is (type id, age) for an inventory unit, or None for a slot a new unit may fill (it
    waits, or buys a type at time k). Per year: buying and selling at time k (price of year k,
    market value of the age then), O&M and priced tonnes of the service year at k+1, no sale below
    min_age, no keep at max_age, salvage at the horizon. Each schedule records its present cost,
    units bought and in service by type, capital, market value received, tonnes, and the year
    index the starting unit first leaves (H when never).
    """
    s = case.study
    ids = [t.id for t in case.types]
    cp = s.carbon_price

    def v(t):
        return (1.0 + s.discount_rate) ** (-t)

    out = []

    def rec(k, held, waiting, acc):
        if k == H:
            cost = acc["cost"]
            if held is not None:
                t, a, _ = held
                cost -= float(curves.market_value(t, a, Y0 + H, Y0)) * v(H)
            out.append({**acc, "cost": cost})
            return
        y = Y0 + k

        def step(new_held, dcost, waiting_after, buy=None, mv=0.0, price=0.0, leaves=False):
            a2 = {key: (val.copy() if isinstance(val, np.ndarray) else val) for key, val in acc.items()}
            a2["cost"] += dcost
            if buy is not None:
                a2["buys"][k, ids.index(buy.id)] += 1
            a2["capital"][k] += price
            a2["proceeds"][k] += mv
            if leaves and a2["leave"] == H:
                a2["leave"] = k
            nxt = None
            if new_held is not None:  # in service in year k: O&M and priced tonnes at k+1
                t, a, vint = new_held
                a2["serv"][k, ids.index(t.id)] += 1
                tn = float(curves.tonnes(t, vint, Y0))
                a2["tonnes"][k] += tn
                a2["cost"] += (float(curves.om(t, a + 1, vint, Y0)) + cp * tn) * v(k + 1)
                nxt = (t, a + 1, vint)
            rec(k + 1, nxt, waiting_after, a2)

        if held is None:
            step(None, 0.0, waiting)
            if waiting:  # a new slot may buy any type buyable this year
                for t2 in case.types:
                    if t2.buyable(y):
                        p = float(curves.price(t2, y, Y0))
                        step((t2, 0, y), p * v(k), False, buy=t2, price=p)
            return
        t, a, vint = held
        if a < t.max_age:  # keep
            step((t, a, vint), 0.0, False)
        if a >= t.min_age:  # replace or sell, never below min_age
            mv = float(curves.market_value(t, a, y, Y0))
            for t2 in case.types:
                if t2.buyable(y):
                    p = float(curves.price(t2, y, Y0))
                    step((t2, 0, y), (p - mv) * v(k), False, buy=t2, mv=mv, price=p, leaves=True)
            if allow_sell:
                step(None, -mv * v(k), False, mv=mv, leaves=True)

    T = len(ids)
    acc0 = {"cost": 0.0, "buys": np.zeros((H, T)), "serv": np.zeros((H, T)), "capital": np.zeros(H),
            "proceeds": np.zeros(H), "tonnes": np.zeros(H), "leave": H}
    if start is None:
        rec(0, None, True, acc0)
    else:
        t = case.type(start[0])
        rec(0, (t, start[1], Y0 - start[1]), False, acc0)
    return out


def joint_optimum(case, *, new_slots: int = 0, allow_sell: bool = False, sizes=None) -> tuple[float | None, int]:
    """Least present cost over the product of all slots' schedules that keeps every rule of ``case``.

    Rules counted from the schedules: units in service each year equal ``sizes`` (when given);
    orders' purchases by type and year, and their ``replaces`` units leaving that year; targets
    (units bought / in service of the listed types against all); emission caps; capital caps.
    Partial products are dropped only when units in service already exceed ``sizes`` or capital
    already exceeds a gross cap, which no further slot can undo.
    """
    names = [nm for u in case.units for nm in u.names()]
    starts = [(u.type, u.age) for u in case.units for _ in u.names()]
    slots = [slot_schedules(case, st, allow_sell) for st in starts]
    slots += [slot_schedules(case, None, allow_sell) for _ in range(new_slots)]
    ids = [t.id for t in case.types]
    caps = np.array([math.inf if case.budget is None or case.budget.constant_cap(y) is None else case.budget.constant_cap(y)
                     for y in case.study.years])
    fields = ("buys", "serv", "capital", "tonnes")
    tracked = {nm for o in case.orders for nm in o.replaces}
    J = {"cost": np.zeros(1), **{f: np.zeros((1,) + slots[0][0][f].shape) for f in fields}}
    leaves = {}
    for j, sched in enumerate(slots):
        cost = np.array([x["cost"] for x in sched])
        n0, n1 = len(J["cost"]), len(cost)
        nxt = {"cost": (J["cost"][:, None] + cost[None, :]).ravel()}
        for f in fields:
            arr = np.array([x[f] for x in sched])
            nxt[f] = (J[f][:, None] + arr[None, :]).reshape((n0 * n1,) + arr.shape[1:])
        lv = {nm: np.repeat(col, n1) for nm, col in leaves.items()}
        if j < len(names) and names[j] in tracked:
            lv[names[j]] = np.tile(np.array([x["leave"] for x in sched]), n0)
        ok = np.all(nxt["capital"] <= caps + 1e-6, axis=1)
        if sizes is not None:
            ok &= np.all(nxt["serv"].sum(axis=2) <= sizes, axis=1)
        J = {f: a[ok] for f, a in nxt.items()}
        leaves = {nm: col[ok] for nm, col in lv.items()}
    ok = np.ones(len(J["cost"]), dtype=bool)
    if sizes is not None:
        ok &= np.all(J["serv"].sum(axis=2) == sizes, axis=1)
    for o in case.orders:
        k = o.year - Y0
        need = sum(p.count for p in case.orders if p.type == o.type and p.year == o.year)
        ok &= J["buys"][:, k, ids.index(o.type)] >= need
        for nm in o.replaces:
            ok &= leaves[nm] == k
    for tg in case.targets:
        good = [ids.index(t) for t in tg.types]
        every = [ids.index(t.id) for t in case.types if t.class_ in tg.classes]
        for key, share in (("buys", tg.share_of_buys), ("serv", tg.share_in_service)):
            if share is None:
                continue
            for k, y in enumerate(case.study.years):
                if y >= tg.from_:
                    ok &= J[key][:, k, good].sum(axis=1) >= share * J[key][:, k, every].sum(axis=1) - 1e-9
    for k, y in enumerate(case.study.years):
        cap = case.emission_cap_for(y)
        if cap is not None:
            ok &= J["tonnes"][:, k] <= cap + 1e-9
    feasible = J["cost"][ok]
    return (float(feasible.min()) if len(feasible) else None), int(ok.sum())


def sizes_of(*per_year):
    return np.array(per_year, dtype=float)


def check_plan_equals_enumeration(doc, **kw):
    case = build_case(doc)
    plan = solve(case, time_limit=60, gap=0.0)
    opt, n = joint_optimum(case, **kw)
    assert opt is not None and n > 0
    assert plan.status == "optimal"
    assert plan.present_cost == pytest.approx(opt, rel=REL)
    assert service.broken_rules(case, plan, {"bus": kw["sizes"]} if kw.get("sizes") is not None else None) == []
    return case, plan, opt


# ---------------------------------------------------------------------------
# exhaustive enumeration, rule by rule
# ---------------------------------------------------------------------------
def test_minimum_life_alone_matches_enumeration_and_no_sale_is_below_it():
    # min_age without a coupling rule: the recursion's plan, held to the enumeration
    case, plan, _ = check_plan_equals_enumeration(rules_doc())
    assert plan.method == "recursion"
    for u in plan.units:
        for e in u.events:
            if e.from_type:
                assert e.from_age >= case.type(e.from_type).min_age
    # the same enumeration without min_age finds a cheaper plan, so the rule binds in this fleet
    free = rules_doc()
    del free["asset_type"][0]["min_age"]
    assert joint_optimum(build_case(free))[0] < plan.present_cost - 1.0


def test_class_sizes_grow_and_shrink_match_enumeration():
    # 3 units; 4 from 2031; 2 from 2033. Growth buys without a sale, the shrink sells at market value.
    doc = rules_doc(demand=[{"class": "bus", "count_by_year": {"2031": 4, "2033": 2}}])
    case, plan, _ = check_plan_equals_enumeration(doc, new_slots=1, allow_sell=True, sizes=sizes_of(3, 4, 4, 2))
    assert [y.in_service for y in plan.years] == [3, 4, 4, 2]
    assert sum(y.buys for y in plan.years) >= 1 and sum(y.sells for y in plan.years) >= 2


def test_recost_of_a_growing_and_shrinking_class_equals_the_enumerated_optimum():
    # the schedule of a plan whose class grows (a unit bought from nothing) and shrinks (units sold
    # without a replacement), re-costed under its own case from tenure.curves, costs what exhaustive
    # search says is least, and breaks nothing; under a scenario needing one unit more from 2033 the
    # same schedule is flagged on the class size (the regret table of `tenure compare`)
    doc = rules_doc(demand=[{"class": "bus", "count_by_year": {"2031": 4, "2033": 2}}])
    case, plan, opt = check_plan_equals_enumeration(doc, new_slots=1, allow_sell=True, sizes=sizes_of(3, 4, 4, 2))
    d = plan.to_dict()
    assert any(not u["start_type"] for u in d["units"])  # the plan holds a unit bought from nothing
    assert any(e["action"] == "sell" for u in d["units"] for e in u["events"])
    r = recost(d, case)
    assert r.breaks == () and r.cost == pytest.approx(opt, rel=REL)
    more = recost(d, case_with(case, {"demand.bus.count_by_year.2033": 3}))
    assert more.breaks == ("class bus: 2 units in service in 2033, the rules need 3",)
    assert more.cost == pytest.approx(opt, rel=REL)  # the same schedule, the same prices


def test_year_actions_of_a_growing_and_shrinking_class_name_purchases_and_sales():
    # the codes compare reports for a year: a unit the plan adds is "buy:<type>" in its year and is
    # not held before; a unit sold without a replacement is "sell" and is not held after; sizes are
    # the demand's (3, 4, 4, 2), counted from the codes
    from tenure.report.html import actions_text
    from tenure.scenarios import first_year_actions

    case = build_case(rules_doc(demand=[{"class": "bus", "count_by_year": {"2031": 4, "2033": 2}}]))
    d = solve(case, time_limit=30, gap=0.0).to_dict()
    acts = {y: first_year_actions(d, y) for y in case.study.years}
    held = [sum(a != "sell" for a in acts[y].values()) for y in case.study.years]
    assert held == [3, 4, 4, 2]
    added = [u["unit"] for u in d["units"] if not u["start_type"]]
    assert len(added) == 1 and added[0] not in acts[2030] and acts[2031][added[0]].startswith("buy:")
    assert sum(a == "sell" for a in acts[2033].values()) == 2
    assert "sell, not replaced 2" in actions_text(acts[2033])


def test_compare_of_a_shrinking_class_commits_the_sale_and_skips_units_no_longer_held():
    # 3 buses, 2 from 2030: the cheapest sale is the electric bus C (the largest market value; the
    # plan of each scenario sells it at once), so compare lists "sell" as safe to commit now, and the
    # second year's table does not look up the unit it no longer holds
    from tenure.scenarios import compare

    doc = rules_doc(demand=[{"class": "bus", "count_by_year": {"2030": 2}}])
    doc["scenario"] = [{"id": "dear-bev", "set": {"asset_type.bev.price": 156000}}]
    case = build_case(doc)
    cmp = compare(case, list(case.scenarios), options={"gap": 0.0, "time_limit": 30.0})
    assert {(a.unit, a.action) for a in cmp.safe_now} == {("A", "keep"), ("B", "keep"), ("C", "sell")}
    assert all(r.first_year_actions == {"A": "keep", "B": "keep", "C": "sell"} for r in cmp.scenarios)


def test_recost_flags_a_target_and_an_order_the_schedule_does_not_keep():
    # a plan solved without rules, re-costed under a case with a target of electric buys from 2031
    # and under one with an order of a diesel bus in 2032: the schedule (electric buys in 2031 and 2032,
    # a diesel one in 2033; checked on its events below) keeps neither, so neither scenario may treat
    # it as a plan it can carry out
    case = build_case(rules_doc())
    d = solve(case, time_limit=30, gap=0.0).to_dict()
    bought = sorted((e["year"], e["type"]) for u in d["units"] for e in u["events"] if e["type"])
    assert bought == [(2031, "bev"), (2032, "bev"), (2033, "dsl")]
    r = recost(d, build_case(rules_doc(target=[{"types": ["bev"], "share_of_buys": 1.0, "from": 2031}])))
    assert len(r.breaks) == 1 and r.breaks[0].endswith(": not met in 2033") and r.cost == pytest.approx(d["present_cost"], abs=0.01)
    r = recost(d, build_case(rules_doc(order=[{"type": "dsl", "year": 2032, "count": 1}])))
    assert "order of 1 dsl in 2032: only 0 bought" in r.breaks
    assert not r.feasible


def test_pure_class_size_change_is_a_network_flow_solved_by_its_lp():
    # no cap, no target: the LP relaxation is integral (common practice: network-flow matrices are
    # totally unimodular), so the plan comes straight from it and is proven optimal
    doc = rules_doc(demand=[{"class": "bus", "count_by_year": {"2032": 2}}])
    case, plan, _ = check_plan_equals_enumeration(doc, allow_sell=True, sizes=sizes_of(3, 3, 2, 2))
    assert plan.stats.get("gap_history", [[0, 0.0]])[-1][1] == 0.0


def test_orders_with_and_without_replaces_match_enumeration():
    # two units of bev arrive in 2031, replacing B (sold that year); the class grows by one
    doc = rules_doc(order=[{"type": "bev", "count": 2, "year": 2031, "replaces": ["B"]}])
    case, plan, _ = check_plan_equals_enumeration(doc, new_slots=1, allow_sell=False, sizes=sizes_of(3, 4, 4, 4))
    b = next(u for u in plan.units if u.unit == "B")
    assert b.events[0].year == 2031
    assert plan.years[1].buys_by_type.get("bev", 0) >= 2


def test_transition_targets_match_enumeration():
    doc = rules_doc(target=[{"types": ["bev"], "share_of_buys": 1.0, "from": 2031},
                            {"name": "half electric", "types": ["bev"], "share_in_service": 0.6, "from": 2032}])
    case, plan, _ = check_plan_equals_enumeration(doc)
    for st in (service.target_status(case, plan, t) for t in case.targets):
        assert st.met and st.first_met is not None and st.first_met <= st.target.from_


def test_emission_cap_and_carbon_price_match_enumeration():
    doc = rules_doc(study={"carbon_price": 120.0}, emission_cap=[{"from": 2032, "tonnes": 50}])
    case, plan, _ = check_plan_equals_enumeration(doc)
    tonnes = service.tonnes_by_year(case, plan)
    assert np.all(tonnes[2:] <= 50 + 1e-9)
    assert [y.tonnes for y in plan.years] == pytest.approx(list(tonnes), rel=1e-12)
    # the carbon line is the year's tonnes at the price
    assert [y.carbon for y in plan.years] == pytest.approx([120.0 * t for t in tonnes], rel=1e-12)


def test_all_rules_together_under_a_nominal_cap_match_enumeration():
    doc = rules_doc(study={"inflation": 0.03, "carbon_price": 40.0},
                    demand=[{"class": "bus", "count_by_year": {"2032": 4}}],
                    target=[{"types": ["bev"], "share_of_buys": 0.5, "from": 2031}],
                    emission_cap=[{"from": 2033, "tonnes": 90}],
                    budget={"cap": 300000, "money": "nominal"})
    check_plan_equals_enumeration(doc, new_slots=1, sizes=sizes_of(3, 3, 4, 4))


@pytest.mark.parametrize("backend", BACKENDS)
def test_capped_emission_cap_plain_rounding_fails_year_programs_reach_the_enumerated_optimum(backend):
    # four diesel/electric buses under a 200,000 gross cap a year and 100 t a year from 2031: the LP
    # is fractional and no rounding of its years keeps the later years feasible, yet 9 joint
    # schedules keep both caps (exhaustive search); the year-by-year integer programs of
    # fix-and-relax find the cheapest of them, and the solve proves it (gap 0)
    doc = rules_doc(emission_cap=[{"from": 2031, "tonnes": 100}], budget={"cap": 200000})
    doc["unit"] = [{"id": "A", "type": "dsl", "age": 1}, {"id": "B", "type": "dsl", "age": 2},
                   {"id": "C", "type": "dsl", "age": 3}, {"id": "D", "type": "bev", "age": 1}]
    case = build_case(doc)
    opt, n = joint_optimum(case)
    assert n == 9 and opt is not None
    prog = build_program(case)
    lp = get_backend(backend)(prog).solve_lp()
    assert not np.allclose(lp.x, np.round(lp.x))  # a fractional LP: the rounding has work to do
    be = get_backend(backend)(prog)
    plain = fix_and_relax(prog, case, be, be.solve_lp().x, time.perf_counter() + 60, year_mip=False)
    assert plain is None
    be = get_backend(backend)(prog)
    x = fix_and_relax(prog, case, be, be.solve_lp().x, time.perf_counter() + 60)
    assert x is not None and rules_rows.satisfies(prog, x)
    assert float(prog.cost @ x) == pytest.approx(opt, rel=REL)
    plan = solve(case, time_limit=60, gap=0.0, solver=backend)
    assert plan.status == "optimal" and plan.present_cost == pytest.approx(opt, rel=REL)
    assert plan.provenance.method.startswith("fix-and-relax")
    assert service.broken_rules(case, plan) == []
    assert np.all(service.tonnes_by_year(case, plan)[1:] <= 100 + 1e-9)


def test_reserve_under_a_binding_emission_cap_keeps_the_true_cap():
    # the guiding program's LP cuts up to 0.2 % of the cap more (a reward per tonne held back), and
    # its flows keep the real program's rows: a·x ≤ E − r with 0 ≤ r (arithmetic)
    # (the three-bus fleet under 50 t from 2032 and a 300,000 cap: the 2032 cap has a shadow price)
    case = build_case(rules_doc(emission_cap=[{"from": 2032, "tonnes": 50}], budget={"cap": 300000}))
    prog = build_program(case)
    lp = get_backend(BACKENDS[0])(prog).solve_lp()
    guide = reserved(prog, lp.row_duals)
    binding = [r for r, rr in prog.rule_rows if rr.kind == "emissions" and abs(lp.row_duals[r]) > 1e-9]
    assert guide is not None and guide.n_cols == prog.n_cols + len(binding) > prog.n_cols
    assert guide.upper[prog.n_cols:] == pytest.approx([RESERVE_FRACTION * 50] * len(binding))
    assert np.all(guide.cost[prog.n_cols:] < 0)
    xg = get_backend(BACKENDS[0])(guide).solve_lp().x
    assert rules_rows.satisfies(prog, xg[:prog.n_cols])
    tonnes = (prog.matrix @ xg[:prog.n_cols])[binding]
    assert np.all(tonnes <= 50 - xg[prog.n_cols:] + 1e-6)
    # the reward makes the LP hold the whole reserve back here
    assert xg[prog.n_cols:] == pytest.approx(guide.upper[prog.n_cols:])
    # no emission cap binds: no guiding program
    assert reserved(prog, np.zeros(prog.n_rows)) is None


# ---------------------------------------------------------------------------
# hand computations: nominal money and the Fisher relation
# ---------------------------------------------------------------------------
def test_nominal_cap_is_deflated_by_inflation():
    doc = rules_doc(study={"inflation": 0.025}, budget={"cap": 1_000_000, "money": "nominal"})
    b = build_case(doc).budget
    # hand arithmetic: 1.025^3 = 1.076890625, and 1,000,000 / 1.076890625 = 928,599.41
    # (check: 928,599.41 × 1.076890625 = 928,599.41 + 71,400.59 = 1,000,000.00)
    assert b.constant_cap(2033) == pytest.approx(928_599.41, abs=0.01)
    assert b.constant_cap(2030) == 1_000_000
    assert b.cap_for(2033) == 1_000_000


def test_fisher_real_rate_gives_the_same_present_worth_as_nominal_discounting():
    doc = rules_doc(study={"discount_rate": 0.08, "inflation": 0.03, "rate_basis": "nominal"})
    s = build_case(doc).study
    # hand arithmetic: (1.08 / 1.03) − 1 = 0.0485436893…
    assert s.discount_rate == pytest.approx(0.0485436893, abs=1e-10)
    assert s.nominal_rate == 0.08
    # numpy-financial: constant-money flows C_k, nominal C_k·1.03^k; NPV at the nominal rate of the
    # nominal flows equals NPV at the real rate of the constant flows
    constant = np.array([-500.0, 120.0, 150.0, 170.0, 200.0])
    nominal = constant * 1.03 ** np.arange(5)
    assert npf.npv(0.08, nominal) == pytest.approx(npf.npv(s.discount_rate, constant), rel=1e-12)


# ---------------------------------------------------------------------------
# minimum life in policy and life
# ---------------------------------------------------------------------------
def test_policy_never_replaces_below_min_age_and_life_band_starts_there():
    case = build_case(rules_doc())
    sol = chain.backward(chain.build_class_graph(case, "bus"))
    j = sol.graph.type_index("dsl")
    assert np.all(sol.policy[:, j, :3] == chain.KEEP)
    t = case.type("dsl")
    lt = life.life_table(t, 0.05, Y0)
    # the plain table's least EAC without the rule, for comparison from the same rows
    assert lt.economic_life >= 3 and lt.band[0] >= 3
    assert lt.eac_total[lt.economic_life - 1] == min(lt.eac_total[2:])


# ---------------------------------------------------------------------------
# impossible targets and rules: exit 3 with the rule, the year and the reason
# ---------------------------------------------------------------------------
def test_target_impossible_by_min_age_names_the_reason(tmp_path, capsys):
    # A is new in 2030 and may not be replaced before age 3 (2033): an all-electric fleet in 2031 is impossible
    doc = rules_doc(target=[{"name": "all electric", "types": ["bev"], "share_in_service": 1.0, "from": 2031}])
    path = tmp_path / "case.toml"
    path.write_text(to_toml(doc), encoding="utf-8")
    assert main(["plan", str(path), "--out", str(tmp_path / "out"), "--quiet"]) == 3
    err = capsys.readouterr().err
    assert "all electric" in err and "from 2031" in err and "min_age" in err


def test_impossible_target_exits_3_naming_target_year_and_reason(tmp_path, capsys):
    doc = rules_doc(target=[{"name": "electric only", "types": ["bev"], "share_of_buys": 1.0, "from": 2031}])
    doc["asset_type"][1]["buy_from"] = 2033  # no electric bus before 2033; B must be replaced in 2031
    path = tmp_path / "case.toml"
    path.write_text(to_toml(doc), encoding="utf-8")
    assert main(["plan", str(path), "--out", str(tmp_path / "out"), "--quiet"]) == 3
    err = capsys.readouterr().err
    assert "electric only" in err and "2031" in err and "no type of the list" in err
    assert "Traceback" not in err


def test_target_impossible_under_the_cap_names_the_cap(tmp_path, capsys):
    # every bus electric from 2033: possible without the cap (A reaches min_age 3 then), but a
    # yearly cap of 110,000 is below every electric price (130,000·0.97^k ≥ 118,650 through 2033)
    doc = rules_doc(target=[{"name": "all electric", "types": ["bev"], "share_in_service": 1.0, "from": 2033}],
                    budget={"cap": 110000})
    path = tmp_path / "case.toml"
    path.write_text(to_toml(doc), encoding="utf-8")
    assert main(["plan", str(path), "--out", str(tmp_path / "out"), "--quiet"]) == 3
    err = capsys.readouterr().err
    assert "all electric" in err and "2033" in err and "capital caps" in err


# ---------------------------------------------------------------------------
# invariants re-checked from the written files
# ---------------------------------------------------------------------------
def _read_csv(path):
    with open(path, newline="", encoding="utf-8") as fh:
        return list(csv.DictReader(fh))


def test_written_outputs_keep_every_rule(tmp_path):
    doc = rules_doc(study={"inflation": 0.03, "carbon_price": 40.0},
                    demand=[{"class": "bus", "count_by_year": {"2032": 4}}],
                    order=[{"type": "bev", "count": 1, "year": 2031, "replaces": ["B"]}],
                    target=[{"types": ["bev"], "share_of_buys": 0.5, "from": 2031}],
                    emission_cap=[{"from": 2033, "tonnes": 90}],
                    budget={"cap": 300000, "money": "nominal"})
    case = build_case(doc)
    plan = solve(case, time_limit=60)
    write_plan(plan, tmp_path)
    units = _read_csv(tmp_path / "units.csv")
    years = _read_csv(tmp_path / "years.csv")
    pj = json.loads((tmp_path / "plan.json").read_text(encoding="utf-8"))
    # re-simulate each unit from units.csv with tenure.curves (docs/conventions.md timing)
    v = (1.05) ** -np.arange(H + 1.0)
    serv = np.zeros((H, 2))
    bought = np.zeros((H, 2))
    tonnes = np.zeros(H)
    capital = np.zeros(H)
    pc = 0.0
    ids = ["dsl", "bev"]
    by_unit: dict[str, list] = {}
    for r in units:
        by_unit.setdefault(r["unit"], []).append(r)
    for nm, rows in by_unit.items():
        head = rows[0]
        held = None if head["start_type"] == "" else (case.type(head["start_type"]), int(head["start_age"]),
                                                    Y0 - int(head["start_age"]))
        ev = {int(r["year"]): r for r in rows if r["year"]}
        for k in range(H):
            y = Y0 + k
            if y in ev:
                e = ev[y]
                if e["from_type"]:
                    assert int(e["from_age"]) >= case.type(e["from_type"]).min_age  # minimum life
                    pc -= float(curves.market_value(held[0], held[1], y, Y0)) * v[k]
                if e["type"]:
                    t2 = case.type(e["type"])
                    p = float(curves.price(t2, y, Y0))
                    assert float(e["price"]) == pytest.approx(p, abs=0.01)
                    pc += p * v[k]
                    capital[k] += p
                    bought[k, ids.index(t2.id)] += 1
                    held = (t2, 0, y)
                else:
                    held = None
            elif held is not None:
                assert held[1] < held[0].max_age
            if held is None:
                continue
            t, a, vint = held
            om = float(curves.om(t, a + 1, vint, Y0))
            tn = float(curves.tonnes(t, vint, Y0))
            pc += (om + 40.0 * tn) * v[k + 1]
            serv[k, ids.index(t.id)] += 1
            tonnes[k] += tn
            held = (t, a + 1, vint)
        if held is not None:
            pc -= float(curves.market_value(held[0], held[1], Y0 + H, Y0)) * v[H]
    assert pc == pytest.approx(pj["present_cost"], abs=0.02)  # present cost from the schedule
    assert list(serv.sum(axis=1)) == [3, 3, 4, 4]  # class sizes = demand (the order replacing B: net zero)
    assert bought[1, 1] >= 1  # the order
    for k in range(1, H):  # share_of_buys 0.5 from 2031
        assert bought[k, 1] >= 0.5 * bought[k].sum() - 1e-9
    for k, row in enumerate(years):
        assert float(row["tonnes"]) == pytest.approx(tonnes[k], abs=1e-3)
        if Y0 + k >= 2033:
            assert tonnes[k] <= 90 + 1e-9  # emission cap
        idx = 1.03 ** k
        # cap stated nominal: years.csv shows it in both bases, and capital in both
        assert float(row["cap_nominal"]) == pytest.approx(300000, abs=0.01)
        assert float(row["cap"]) == pytest.approx(300000 / idx, abs=0.01)
        assert float(row["capital"]) == pytest.approx(capital[k], abs=0.01)
        assert float(row["capital_nominal"]) == pytest.approx(capital[k] * idx, abs=0.02)
        assert capital[k] * idx <= 300000 + 0.01  # the cap, in the money basis stated
        assert int(row["in_service"]) == serv[k].sum()


# ---------------------------------------------------------------------------
# compare and sweep paths, validation messages
# ---------------------------------------------------------------------------
def test_every_new_field_can_be_overridden():
    doc = rules_doc(demand=[{"class": "bus", "count_by_year": {"2032": 4}}],
                    order=[{"type": "bev", "count": 1, "year": 2031}],
                    target=[{"types": ["bev"], "share_of_buys": 0.5, "from": 2031}],
                    emission_cap=[{"from": 2033, "tonnes": 90}], budget={"cap": 300000})
    case = build_case(doc)
    c2 = case_with(case, {"target.0.from": 2032, "study.inflation": 0.02, "study.carbon_price": 15.0,
                          "study.rate_basis": "nominal", "budget.money": "nominal",
                          "demand.bus.count_by_year.2033": 5, "order.0.count": 2, "emission_cap.0.tonnes": 80.0,
                          "asset_type.dsl.min_age": 1, "asset_type.bev.emissions.first": 5.0,
                          "target.0.share_of_buys": 0.25})
    assert c2.targets[0].from_ == 2032 and c2.targets[0].share_of_buys == 0.25
    assert c2.study.inflation == 0.02 and c2.study.carbon_price == 15.0 and c2.study.rate_basis == "nominal"
    assert c2.demands[0].count_by_year == {2032: 4, 2033: 5}
    assert c2.orders[0].count == 2 and c2.emission_caps[0].tonnes == 80.0
    assert c2.type("dsl").min_age == 1 and c2.type("bev").emissions.first == 5.0
    assert c2.budget.money == "nominal"
    assert coerce("target.0.from", 2031.6) == 2032 and coerce("study.carbon_price", 20.4) == 20.4
    with pytest.raises(CaseError) as exc:
        case_with(case, {"target.3.from": 2032})
    assert "target.0.from" in str(exc.value) or "0 to 0" in str(exc.value)


@pytest.mark.parametrize("edit, where, allowed", [
    (lambda d: d.update(demand=[{"class": "tram", "count_by_year": {"2031": 2}}]), "demand[1].class", "allowed: bus"),
    (lambda d: d.update(demand=[{"class": "bus", "count_by_year": {"2040": 2}}]), "demand[1].count_by_year.2040",
     "outside the horizon"),
    (lambda d: d.update(order=[{"type": "bev", "count": 1, "year": 2031, "replaces": ["Z"]}]), "order[1].replaces",
     "allowed:"),
    (lambda d: d.update(order=[{"type": "bev", "count": 1, "year": 2030, "replaces": ["A"]}]), "order[1].replaces",
     "min_age"),
    (lambda d: d.update(target=[{"types": ["bev"], "share_of_buys": 1.5, "from": 2031}]), "target[1].share_of_buys",
     "[0, 1]"),
    (lambda d: d.update(target=[{"types": ["bev"], "from": 2031}]), "target[1]", "share_of_buys and/or"),
    (lambda d: d.update(emission_cap=[{"from": 2031, "tonnes": -1}]), "emission_cap[1].tonnes", "≥ 0"),
    (lambda d: d["asset_type"][0].update(min_age=5), "asset_type[1].min_age", "0 … max_age"),
    (lambda d: d["study"].update(rate_basis="then-year"), "study.rate_basis", "'real', 'nominal'"),
    (lambda d: d.update(budget={"cap": 1, "money": "nominal"}), "budget.money", "inflation"),
    (lambda d: d["asset_type"][1].update(emissions={"first": 1, "rate": 0.1}), "asset_type[2].emissions.rate",
     "allowed: first, change"),
])
def test_bad_rule_input_names_field_and_allowed_values(edit, where, allowed):
    doc = rules_doc()
    edit(doc)
    with pytest.raises(CaseError) as exc:
        build_case(doc, source="made-up.toml")
    hits = [p for p in exc.value.problems if p.path == where]
    assert hits, [str(p) for p in exc.value.problems]
    assert allowed in hits[0].message and hits[0].file == "made-up.toml"


def test_version_1_case_without_new_keys_reads_as_before():
    case = build_case(rules_doc())
    assert case.study.inflation == 0.0 and case.study.carbon_price == 0.0 and not case.coupled
    assert list(itertools.chain.from_iterable([case.demands, case.orders, case.targets])) == []


def test_recost_of_a_plan_under_its_own_carbon_price_equals_its_present_cost():
    # scenarios.recost prices a schedule straight from tenure.curves; with a carbon price it must
    # agree with the solver's present cost of the same plan (the same timing, docs/conventions.md)
    from tenure.scenarios import recost

    case = build_case(rules_doc(study={"carbon_price": 90.0}))
    plan = solve(case)
    rc = recost(plan.to_dict(), case)
    assert rc.cost == pytest.approx(plan.present_cost, rel=1e-9) and not rc.breaks
    plain = solve(build_case(rules_doc()))
    assert plan.present_cost > plain.present_cost + 1.0  # the carbon line is really priced


def test_a_rule_is_called_impossible_only_on_a_bound_never_from_a_point():
    """Common practice (elastic programming): a point that uses slack on a rule row proves nothing;
    only a positive lower bound on the least slack does.  A back end whose integer solve stops at such
    a point with no bound must not make the rule check name a rule; with a proven bound it does."""
    import numpy as np

    from tenure.fleet import rules_check
    from tenure.fleet.backend import MIPResult, get_backend
    from tenure.uncapped import build_graphs

    case = build_case(rules_doc(emission_cap=[{"from": 2032, "tonnes": 50}], budget={"cap": 300000}))
    graphs = build_graphs(case)
    base = get_backend("highs")

    def stopped(bound):
        class Stopped(base):
            def solve_mip(self, *a, **kw):
                x = np.asarray(self.solve_lp().x, dtype=float).copy()
                x[-1] += 5.0  # a point with 5 t of slack on the last rule row
                return MIPResult("feasible", x, bound)
        return Stopped

    # the LP of this case needs no slack, so the check reaches the integer program
    assert rules_check._short_rows(case, graphs, base, 10.0, mip=False) == []
    assert rules_check._short_rows(case, graphs, stopped(None), 10.0) == []
    assert rules_check._short_rows(case, graphs, stopped(0.0), 10.0) == []
    rows = rules_check._short_rows(case, graphs, stopped(5.0), 10.0)
    assert rows and rows[0][2].kind == "emissions" and rows[0][2].rule == "emission cap"
