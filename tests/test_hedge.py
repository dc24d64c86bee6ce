"""The hedge: one commitment of the first years across scenarios that re-plan later.

Independent reference: exhaustive enumeration.  Every joint schedule of a 3-unit fleet is listed
from the cost curves (``tenure.curves``, not the state-graph tables or the cohort program), costed
with the timing of docs/conventions.md, checked against the cap, and grouped by its first-N-year
unit actions; the best commitment is then found by brute force for each objective.  The
definitions of the two-stage program, EVPI and VSS (EVPI ≥ 0, VSS ≥ 0, EVPI = 0 when the
scenarios are identical) are those of J. R. Birge, F. Louveaux, *Introduction to Stochastic
Programming*, 2nd ed., §4.1–4.2 (from memory).  The case figures are invented test data.
"""

from __future__ import annotations

import itertools
import json
import math
import sys
from pathlib import Path

import numpy as np
import pytest

from tenure import curves
from tenure.case import CaseError, build_case
from tenure.cli import main
from tenure.hedge import HEDGE_KEYS, hedge, probabilities
from tenure.model import Scenario
from tenure.solve import solve

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "benchmarks"))
sys.path.insert(0, str(Path(__file__).resolve().parent))

from casekit import to_toml  # noqa: E402

Y0, H = 2030, 4
EXACT = {"gap": 0.0, "time_limit": 60.0}


def small_doc(cap: float | None = 60000.0) -> dict:
    """Three vans (ages 3, 4, 5; max age 6), a cheaper-to-run electric van from 2031, a yearly cap."""
    doc = {
        "study": {"title": "invented three-van depot", "start_year": Y0, "horizon": H, "discount_rate": 0.05,
                  "end_value": "salvage"},
        "asset_type": [
            {"id": "van-d", "class": "van", "price": 30000, "price_change": 0.01, "max_age": 6,
             "om": {"first": 3000, "gradient": 1500}, "salvage": {"retain": 0.8}},
            {"id": "van-e", "class": "van", "price": 38000, "price_change": -0.03, "buy_from": 2031, "max_age": 6,
             "om": {"first": 1200, "gradient": 600}, "salvage": {"life": 6, "floor": 0.1}},
        ],
        "unit": [{"id": "A", "type": "van-d", "age": 3}, {"id": "B", "type": "van-d", "age": 4},
                 {"id": "C", "type": "van-d", "age": 5}],
        "scenario": [
            {"id": "e-early", "set": {"asset_type.van-e.buy_from": 2030, "asset_type.van-e.price": 33000},
             "probability": 0.3},
            {"id": "dear-money", "set": {"study.discount_rate": 0.10, "asset_type.van-d.om.gradient": 2500},
             "probability": 0.2},
        ],
    }
    if cap is not None:
        doc["budget"] = {"cap": cap, "basis": "gross"}
    return doc


# ---------------------------------------------------------------------------
# the independent enumeration
# ---------------------------------------------------------------------------
def unit_schedules(case, unit):
    """Every schedule of one unit: (actions per year, present cost, capital per year), from tenure.curves."""
    s = case.study
    v = 1.0 / (1.0 + s.discount_rate)
    types = {t.id: t for t in case.types}
    out = []

    def walk(k, t, age, vint, acts, pc, cap):
        if k == s.horizon:
            end = curves.market_value(types[t], age, Y0 + k, Y0) * v ** k
            out.append((tuple(acts), pc - end, tuple(cap)))
            return
        y = Y0 + k
        if age < types[t].max_age:  # keep: O&M of service year age+1, paid at the end of the year
            walk(k + 1, t, age + 1, vint, acts + ["keep"],
                 pc + curves.om(types[t], age + 1, vint, Y0) * v ** (k + 1), cap)
        for nt in types.values():
            if nt.class_ == types[t].class_ and nt.buyable(y):
                p = curves.price(nt, y, Y0)
                mv = curves.market_value(types[t], age, y, Y0)
                c2 = list(cap)
                c2[k] += p
                walk(k + 1, nt.id, 1, y, acts + [nt.id],
                     pc + (p - mv) * v ** k + curves.om(nt, 1, y, Y0) * v ** (k + 1), c2)

    walk(0, unit.type, unit.age, Y0 - unit.age, [], 0.0, [0.0] * s.horizon)
    return out


def enumerate_commitments(cases, n):
    """{commitment: [least cost in each scenario]} for commitments feasible in every scenario.

    A commitment is the tuple of each unit's first-n actions ("keep" or the type bought).
    """
    per_scenario = []
    for case in cases:
        scheds = [unit_schedules(case, u) for u in case.units]
        cap = case.budget.cap if case.budget is not None else math.inf
        best: dict = {}
        for combo in itertools.product(*scheds):
            capital = np.sum([c[2] for c in combo], axis=0)
            if np.any(capital > cap + 1e-6):
                continue
            key = tuple(c[0][:n] for c in combo)
            cost = sum(c[1] for c in combo)
            if cost < best.get(key, math.inf):
                best[key] = cost
        per_scenario.append(best)
    common = set(per_scenario[0]).intersection(*per_scenario[1:])
    return {c: [b[c] for b in per_scenario] for c in sorted(common)}, [min(b.values()) for b in per_scenario]


def as_commitment(h, case, n):
    acts = {u.id: ["keep"] * n for u in case.units}
    for c in h.commitment:
        if c.action == "replace":
            acts[c.unit.rsplit("#", 1)[0]][c.year - Y0] = c.type
    return tuple(tuple(acts[u.id]) for u in case.units)


def scenario_cases(doc):
    from tenure.scenarios import case_with

    base = build_case(doc)
    return base, [base] + [case_with(base, s.set) for s in base.scenarios]


@pytest.mark.parametrize("n", [1, 2])
@pytest.mark.parametrize("objective", ["expected", "regret"])
def test_hedge_equals_enumeration(n, objective):
    base, cases = scenario_cases(small_doc())
    probs = probabilities(base.scenarios)
    table, own = enumerate_commitments(cases, n)
    if objective == "expected":
        score = {c: sum(p * x for p, x in zip(probs, costs)) for c, costs in table.items()}
    else:
        score = {c: max(x - o for x, o in zip(costs, own)) for c, costs in table.items()}
    best = min(score.values())
    h = hedge(base, list(base.scenarios), commit_years=n, objective=objective, options=EXACT)
    got = h.expected_cost if objective == "expected" else h.max_regret
    assert got == pytest.approx(best, rel=1e-9, abs=1e-6)
    assert score[as_commitment(h, base, n)] == pytest.approx(best, rel=1e-9, abs=1e-6)
    # the scenario figures are those of the enumeration for the chosen commitment
    costs = table[as_commitment(h, base, n)]
    for s, c, o in zip(h.scenarios, costs, own):
        assert s.cost == pytest.approx(c, rel=1e-9)
        assert s.own_optimum == pytest.approx(o, rel=1e-9)
    # a real choice: the commitments differ in score; an e-van in 2030 (buyable only in e-early) is ruled out
    assert len(set(round(v, 2) for v in score.values())) > 1
    assert all(acts[0] != "van-e" for c in table for acts in c)


def test_evpi_vss_signs_and_json_keys(tmp_path):
    base, _ = scenario_cases(small_doc())
    h = hedge(base, list(base.scenarios), commit_years=2, options=EXACT)
    tol = 1e-9 * h.expected_cost + 1e-6
    assert h.evpi >= -tol and h.vss is not None and h.vss >= -tol
    assert h.evpi > 1.0  # the scenarios disagree about the first years here
    assert tuple(h.to_dict()) == HEDGE_KEYS
    assert [s["probability"] for s in h.to_dict()["scenarios"]] == pytest.approx([0.5, 0.3, 0.2])
    assert list(h.scenarios_frame().columns)[:5] == ["id", "probability", "cost", "own_optimum", "regret"]


def test_one_scenario_is_the_plan():
    doc = small_doc()
    doc.pop("scenario")
    case = build_case(doc)
    h = hedge(case, [], commit_years=2, options=EXACT)
    plan = solve(case, gap=0.0)
    assert h.expected_cost == pytest.approx(plan.present_cost, rel=1e-9)
    assert h.evpi == pytest.approx(0.0, abs=1e-6) and h.max_regret == pytest.approx(0.0, abs=1e-6)
    planned = {(u.unit, e.year, e.type) for u in plan.units for e in u.events if e.year < Y0 + 2}
    assert {(c.unit, c.year, c.type) for c in h.buys} == planned


def test_identical_scenarios_have_no_evpi():
    doc = small_doc()
    doc["scenario"] = [{"id": "same-1", "set": {"study.discount_rate": 0.05}},
                       {"id": "same-2", "set": {"asset_type.van-d.price": 30000}}]
    case = build_case(doc)
    h = hedge(case, list(case.scenarios), commit_years=2, options=EXACT)
    assert h.evpi == pytest.approx(0.0, abs=1e-6)
    assert [s.probability for s in h.scenarios] == pytest.approx([1 / 3] * 3)


def test_probabilities_rule():
    # the base case takes what the scenarios leave; unspecified ones share it equally (common practice)
    sc = [Scenario("a", "", {}, 0.3), Scenario("b", "", {}, None)]
    assert probabilities(sc) == pytest.approx([0.35, 0.3, 0.35])
    assert probabilities([Scenario("a", "", {}, None)]) == pytest.approx([0.5, 0.5])


def test_bad_probability_exit_2(tmp_path, capsys):
    doc = small_doc()
    doc["scenario"][0]["probability"] = 0.9
    p = tmp_path / "c.toml"
    p.write_text(to_toml(doc))
    assert main(["hedge", str(p), "--commit-years", "1", "--out", str(tmp_path / "o")]) == 2
    err = capsys.readouterr().err
    assert "scenario[2].probability" in err and "sum to 1.1" in err
    doc["scenario"][0]["probability"] = -0.1
    with pytest.raises(CaseError) as exc:
        build_case(doc)
    assert "scenario[1].probability" in str(exc.value) and "[0, 1]" in str(exc.value)


def test_no_common_commitment_exit_3(tmp_path, capsys):
    doc = small_doc(cap=None)
    doc["scenario"] = [{"id": "older-a", "set": {"unit.A.age": 6}}]
    p = tmp_path / "c.toml"
    p.write_text(to_toml(doc))
    assert main(["hedge", str(p), "--commit-years", "1", "--out", str(tmp_path / "o")]) == 3
    err = capsys.readouterr().err
    assert "older-a" in err and "2030" in err
    assert not (tmp_path / "o").exists()


def test_cli_writes_the_set(tmp_path, capsys):
    p = tmp_path / "c.toml"
    p.write_text(to_toml(small_doc()))
    out = tmp_path / "o"
    assert main(["hedge", str(p), "--commit-years", "2", "--gap", "0", "--out", str(out), "--quiet"]) == 0
    d = json.loads((out / "hedge.json").read_text())
    assert tuple(d) == HEDGE_KEYS and d["commit_years"] == 2
    buys = [c for c in d["commitment"] if c["action"] == "replace"]
    rows = (out / "hedge.csv").read_text().splitlines()
    assert rows[0] == "unit,year,type" and len(rows) == 1 + len(buys)
    html = (out / "report.html").read_text()
    assert "perfect information" in html and "inspections" in html.lower()
    # one output set (docs/outputs.md): the three files, their manifest (with the run id), the hidden set store
    assert sorted(x.name for x in out.iterdir()) == [".tenure", "hedge.csv", "hedge.json", "manifest.json",
                                                     "report.html"]
    manifest = json.loads((out / "manifest.json").read_text())
    assert sorted(e["name"] for e in manifest["files"]) == ["hedge.csv", "hedge.json", "report.html"]


# ---------------------------------------------------------------------------
# decomposition and workers
# ---------------------------------------------------------------------------
def mid_doc():
    from fleetgen import capped_case, invented_fleet

    doc = capped_case(invented_fleet(60, 4, seed=3, horizon=10, max_age_hi=10), factor=1.3)
    new = [t["id"] for t in doc["asset_type"] if t["id"].endswith("-b")]
    doc["scenario"] = [
        {"id": "new-early", "set": {f"asset_type.{t}.buy_from": 2028 for t in new}},
        {"id": "high-rate", "set": {"study.discount_rate": 0.08}},
        {"id": "cheap-money", "set": {"budget.cap": round(doc["budget"]["cap"] * 1.5, -3),
                                      "study.discount_rate": 0.01}},
    ]
    return doc


def test_decomposition_agrees_with_extensive_form():
    case = build_case(mid_doc())
    opts = {"gap": 1e-4, "time_limit": 60.0}
    ext = hedge(case, list(case.scenarios), commit_years=2, method="extensive", options=opts)
    lag = hedge(case, list(case.scenarios), commit_years=2, method="lagrangian", options=opts)
    assert "extensive" in ext.method and "Lagrangian" in lag.method
    # the Lagrangian bound is valid: no hedge costs less than it
    assert lag.lower_bound <= ext.expected_cost * (1 + 1e-9)
    assert lag.gap <= 1e-4 and ext.gap <= 1e-4
    assert abs(lag.expected_cost - ext.expected_cost) <= (lag.gap + ext.gap) * ext.expected_cost + 1e-6


def test_same_result_on_every_back_end():
    case = build_case(small_doc())
    runs = [hedge(case, list(case.scenarios), commit_years=2, method="lagrangian", options=EXACT, max_iter=3,
                  workers=w, cluster=c).to_dict() for w, c in ((1, None), (2, None), (2, "local"))]
    assert runs[0] == runs[1] == runs[2]


def test_compare_commit_regret(tmp_path):
    from tenure.report.compare import compare_csv, compare_text
    from tenure.scenarios import compare

    case = build_case(small_doc())
    cmp = compare(case, list(case.scenarios), options=EXACT, commit_years=1)
    reg = cmp.commit_regret
    _, cases = scenario_cases(small_doc())
    table, own = enumerate_commitments(cases, 1)
    # the diagonal: a scenario's own first year re-planned under itself is its own optimum (regret 0)
    for sid in cmp.ids:
        assert reg.regret[sid][sid] == pytest.approx(0.0, abs=0.01)
    # each cell is the enumeration's least cost of that plan's first-year actions under the column's scenario
    checked = 0
    for i in cmp.ids:
        acts = cmp.scenario(i).first_year_actions
        key = tuple((acts[u.names()[0]].split(":", 1)[-1] if acts[u.names()[0]] != "keep" else "keep",)
                    for u in case.units)
        for j, o in zip(cmp.ids, own):
            if key in table:
                assert reg.cost[i][j] == pytest.approx(table[key][cmp.ids.index(j)], abs=0.01)
                assert reg.best_under[j] == pytest.approx(o, abs=0.01)
                checked += 1
    assert checked >= 6
    assert "commit_regret" in cmp.to_dict() and "max_regret_commit_1" in compare_csv(cmp)
    assert "then re-planning" in compare_text(cmp)


# ---------------------------------------------------------------------------
# jobs of several usages, overhauls and classes that grow or shrink
# ---------------------------------------------------------------------------
def bus_jobs_doc() -> dict:
    """Four buses in two jobs (one runs 65,000 km a year) with a mid-life overhaul, under a cap
    (the invented fleet of tests/test_usage_overhaul.py)."""
    from test_usage_overhaul import bus_doc

    units = [{"id": "A", "type": "bus", "age": 3}, {"id": "B", "type": "bus", "age": 4},
             {"id": "C", "type": "bus", "age": 3, "usage": 65000}, {"id": "D", "type": "bus", "age": 5}]
    return bus_doc(horizon=4, units=units, budget={"cap": 110000})


def resized_doc() -> dict:
    """The three-bus fleet of tests/test_rules.py growing to 4 in 2031 and shrinking to 2 in 2033."""
    from test_rules import rules_doc

    return rules_doc(demand=[{"class": "bus", "count_by_year": {"2031": 4, "2033": 2}}])


def test_commitment_keys_cover_every_first_years_column_of_jobs_and_overhauls():
    # a column of the first years without a key is neither tied across scenarios nor fixed by a
    # commitment: each job's and each overhauled row's columns need keys of their own (counted)
    from tenure.fleet.program import build_program
    from tenure.hedge.stage import column_keys

    prog = build_program(build_case(bus_jobs_doc()))
    assert prog.graphs["bus"].labels is not None and any(ci.overhaul is not None for ci in prog.cols.values())
    years = prog.column_years()
    for n in (1, 2, 4):
        assert sorted(column_keys(prog, n).values()) == list(np.flatnonzero((years >= 0) & (years < n)))


@pytest.mark.parametrize("make_doc", [bus_jobs_doc, resized_doc])
def test_a_plan_committed_for_the_whole_horizon_costs_what_it_cost(make_doc):
    # the plan's schedule as the flows of every year (overhauls, two jobs; units added and sold without
    # a replacement), held fixed in the cohort program, leaves one point: its cost is the plan's
    # present cost, which exhaustive search confirms in tests/test_usage_overhaul.py and test_rules.py
    from tenure.fleet.program import build_program
    from tenure.hedge.stage import Stage, make_replan_task, plan_flows, replan_task

    case = build_case(make_doc())
    plan = solve(case, gap=0.0, time_limit=60)
    acts = {e.action for u in plan.units for e in u.events}
    assert acts >= ({"overhaul", "replace"} if make_doc is bus_jobs_doc else {"buy", "sell", "replace"})
    fixed = plan_flows(plan.to_dict(), build_program(case), case.study.horizon)
    r = replan_task(make_replan_task(Stage("base", 1.0, {}, case), case, case.study.horizon, EXACT, fixed=fixed))
    assert r["status"] == "optimal" and r["cost"] == pytest.approx(plan.present_cost, rel=1e-9)


@pytest.mark.parametrize("make_doc", [bus_jobs_doc, resized_doc])
def test_one_scenario_hedge_commits_the_plans_own_first_years(make_doc):
    # with no other scenario the best commitment is the optimal plan's first two years: every
    # replacement, purchase of an added unit, overhaul and sale of it (two-stage program with one
    # scenario; Birge and Louveaux, from memory)
    case = build_case(make_doc())
    h = hedge(case, [], commit_years=2, options=EXACT)
    plan = solve(case, gap=0.0)
    assert h.expected_cost == pytest.approx(plan.present_cost, rel=1e-9)
    planned = sorted((e.year, e.action, e.type or e.from_type) for u in plan.units for e in u.events
                     if e.year < case.study.start_year + 2)
    committed = sorted((c.year, c.action, c.type) for c in h.commitment if c.action != "keep")
    assert committed == planned and committed
