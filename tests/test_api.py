"""The Python API (tenure.api, docs/api.md).

- docs/api.md's code blocks run as written (they carry their own asserts);
- ``Case.from_frames`` is the case-file checker: the frames of a case rebuild
  the same model objects, and every bad input of tests/casekit.py, given as
  frames, gives the same problems (field paths) as the document does;
- the plan's DataFrames hold what units.csv and years.csv hold (the CSV
  writer is the reference: same rows, same columns, values to the cent);
- ``economic_life`` is the life table of tenure.life (checked there against
  published examples) and its economic life is the least-EAC row.
The cases are the invented demos and the made-up fixture of casekit.py.
"""

from __future__ import annotations

import io
import os
import re

import pandas as pd
import pytest

import tenure
from tenure.case import TYPE_KEYS
from casekit import BAD_INPUTS, DEMO, REPO, UNCAPPED, base_doc
from tenure.case import TOP_KEYS, CaseError, build_case
from tenure.report.tables import units_csv, years_csv

DOC = REPO / "docs" / "api.md"


def _code_blocks(text: str) -> list[str]:
    return re.findall(r"^```python\n(.*?)^```", text, flags=re.S | re.M)


def test_docs_api_code_blocks_run(monkeypatch):
    blocks = _code_blocks(DOC.read_text(encoding="utf-8"))
    assert len(blocks) >= 5
    monkeypatch.chdir(REPO)
    namespace: dict = {}
    for j, block in enumerate(blocks, start=1):
        exec(compile(block, f"{DOC.name} block {j}", "exec"), namespace)
    assert namespace["plan2"].present_cost < namespace["plan"].present_cost


# ---------------------------------------------------------------------------
# frames <-> case
# ---------------------------------------------------------------------------
@pytest.mark.parametrize("path", [DEMO, UNCAPPED])
def test_frames_of_a_case_rebuild_the_same_model(path):
    case = tenure.load_case(path)
    again = tenure.Case.from_frames(**case.frames())
    for field in ("study", "types", "units", "budget", "limits", "scenarios", "uncertain"):
        assert getattr(again, field) == getattr(case, field), field


def test_types_frame_has_the_toml_field_names_and_curve_cells():
    case = tenure.load_case(DEMO)
    types = case.types_frame()
    # every [[asset_type]] key of the case format, in its order (case.keys.TYPE_KEYS), the original ten first
    assert list(types.columns) == list(TYPE_KEYS)
    assert list(types.columns)[:10] == ["id", "class", "price", "price_change", "buy_from", "buy_until", "max_age",
                                        "om", "om_change", "salvage"]
    assert list(types.index) == [t.id for t in case.types]
    # values as in cases/quillmere-fleet.toml
    assert types.loc["rt-diesel", "om"] == {"first": 21800, "gradient": 4600}
    assert types.loc["rt-bev", "salvage"] == {"life": 12, "floor": 0.07}
    assert types.loc["pu-gasoline", "om"][:2] == [6100, 6750]
    assert types.loc["rt-bev", "buy_from"] == 2031 and pd.isna(types.loc["rt-bev", "buy_until"])


def test_inventory_frame_counts_every_unit():
    case = tenure.load_case(DEMO)
    inv = case.inventory_frame()
    # the demo inventory has pickups' yearly usage and keeps a department column (cases/quillmere-fleet.csv)
    assert list(inv.columns) == ["id", "type", "age", "count", "usage", "department"]
    assert inv.set_index("id").loc["PU-G07", "usage"] == 12000
    assert inv["count"].sum() == case.unit_count == 78
    assert inv.set_index("id").loc["BU-D16", "department"] == "transit"


def test_flattened_curve_columns_equal_curve_cells():
    doc = base_doc()
    types = pd.DataFrame(doc["asset_type"])
    flat = types.drop(columns=["om", "salvage"]).assign(**{
        "om.first": [3000, None], "om.gradient": [500, None], "salvage.retain": [0.8, None],
        "salvage.life": [None, 4], "salvage.floor": [None, 0.1]})
    flat["om"] = [None, [500, 600, 700, 800]]
    case = tenure.Case.from_frames(study=doc["study"], types=flat, inventory=pd.DataFrame(doc["unit"]))
    assert case.types == build_case(doc).types


def test_a_curve_given_as_cell_and_columns_is_one_more_problem():
    doc = base_doc()
    types = pd.DataFrame(doc["asset_type"]).assign(**{"om.first": [2500, None]})
    types.loc[1, "price"] = -1
    with pytest.raises(CaseError) as err:
        tenure.Case.from_frames(study=doc["study"], types=types, inventory=doc["unit"])
    assert [p.path for p in err.value.problems] == ["asset_type[1].om.first", "asset_type[2].price"]


def _as_frames(doc: dict) -> dict:
    return {"study": doc["study"], "types": pd.DataFrame(doc["asset_type"]), "inventory": pd.DataFrame(doc["unit"]),
            "budget": doc.get("budget"), "limits": doc.get("limit")}


FRAMEABLE = [b for b in BAD_INPUTS if b.raw is None and not b.files and b.edit is not None
             and set(b.doc()) <= set(TOP_KEYS) - {"fleet", "format"}]


@pytest.mark.parametrize("bad", FRAMEABLE, ids=[b.claim for b in FRAMEABLE])
def test_bad_frames_give_the_problems_of_the_same_document(bad):
    with pytest.raises(CaseError) as from_doc:
        build_case(bad.doc())
    with pytest.raises(CaseError) as from_frames:
        tenure.Case.from_frames(**_as_frames(bad.doc()))
    assert [p.path for p in from_frames.value.problems] == [p.path for p in from_doc.value.problems]
    assert bad.path in [p.path for p in from_frames.value.problems]


def test_frameable_bad_inputs_cover_the_type_unit_study_and_budget_checks():
    paths = {b.path.split("[")[0].split(".")[0] for b in FRAMEABLE}
    assert {"asset_type", "unit", "study", "budget", "limit"} <= paths


# ---------------------------------------------------------------------------
# plan frames against the CSV writer
# ---------------------------------------------------------------------------
@pytest.fixture(scope="module")
def uncapped_plan():
    return tenure.solve(tenure.load_case(UNCAPPED))


def _csv(text: str) -> pd.DataFrame:
    return pd.read_csv(io.StringIO(text), keep_default_na=True)


def test_events_frame_is_units_csv(uncapped_plan):
    frame = uncapped_plan.events_frame()
    csv = _csv(units_csv(uncapped_plan))
    assert list(frame.columns) == list(csv.columns)
    assert len(frame) == len(csv)
    for col in csv.columns:
        got = frame[col].round(2) if frame[col].dtype.kind == "f" else frame[col]
        pd.testing.assert_series_equal(got.astype(object).where(got.notna(), None).reset_index(drop=True),
                                       csv[col].astype(object).where(csv[col].notna(), None), check_names=False,
                                       check_dtype=False)


def test_years_frame_is_years_csv(uncapped_plan):
    frame = uncapped_plan.years_frame()
    csv = _csv(years_csv(uncapped_plan))
    assert list(frame.columns) == list(csv.columns)
    for col in ("year", "buys"):
        assert frame[col].tolist() == csv[col].tolist()
    for col in ("capital", "salvage", "om"):
        assert frame[col].round(2).tolist() == csv[col].tolist()
    mix = [";".join(f"{t}:{n}" for t, n in d.items()) for d in frame["buys_by_type"]]
    assert mix == csv["buys_by_type"].fillna("").tolist()


def test_units_frame_sums_to_the_present_cost(uncapped_plan):
    units = uncapped_plan.units_frame()
    assert units["present_cost"].sum() == pytest.approx(uncapped_plan.present_cost, rel=1e-12)
    assert units["replacements"].sum() == sum(y.buys for y in uncapped_plan.years)


# ---------------------------------------------------------------------------
# economic life, policy, argument errors
# ---------------------------------------------------------------------------
def test_economic_life_frame_is_the_life_table():
    case = tenure.load_case(DEMO)
    lt = tenure.life_tables(case, "bus-diesel", 2030)[0]
    df = tenure.economic_life(case, "bus-diesel", 2030)
    assert df["eac_total"].tolist() == lt.eac_total.tolist()
    assert df["marginal_cost"].tolist() == lt.marginal.tolist()
    # EAC total = capital + O&M (the definition, docs/conventions.md)
    assert (df["eac_capital"] + df["eac_om"] - df["eac_total"]).abs().max() < 1e-6
    assert df.loc[df["economic_life"], "holding_years"].tolist() == [int(df.loc[df["eac_total"].idxmin(),
                                                                                "holding_years"])]


def test_unknown_type_id_is_a_value_error_with_the_nearest_id():
    case = tenure.load_case(DEMO)
    with pytest.raises(ValueError, match=r"type_id = 'bus-desel'.*did you mean 'bus-diesel'"):
        tenure.economic_life(case, "bus-desel")


@pytest.mark.parametrize("kw, name", [({"time_limit": 0}, "time_limit"), ({"gap": 1.5}, "gap"),
                                      ({"solver": "simplex"}, "solver")])
def test_bad_solve_options_name_the_parameter_not_a_flag(kw, name):
    case = tenure.load_case(UNCAPPED)
    with pytest.raises(ValueError) as err:
        tenure.solve(case, **kw)
    assert str(err.value).startswith(name) and "--" not in str(err.value)


def test_compare_and_sweep_check_their_arguments_before_solving():
    case = tenure.load_case(UNCAPPED)
    with pytest.raises(ValueError, match="exactly one"):
        tenure.sweep(case)
    with pytest.raises(ValueError, match="workers"):
        tenure.compare(case, workers=0)


def test_policy_frame_matches_the_recursion():
    case = tenure.load_case(UNCAPPED)
    cls = case.classes[0]
    sol = tenure.policy(case, cls)
    frame = tenure.policy_frame(case, cls)
    g = sol.graph
    t = g.type_index(frame.loc[0, "held_type"])
    first = frame[(frame["held_type"] == g.types[t]) & (frame["year"] == g.start_year)]
    expect = ["keep" if int(x) < 0 else g.types[int(x)] for x in sol.policy[0, t, : int(g.max_age[t]) + 1]]
    assert first["action"].tolist() == expect


def test_importing_tenure_keeps_solve_the_function():
    assert callable(tenure.solve) and tenure.solve.__module__ == "tenure.api"
    assert os.path.basename(tenure.api.__file__) == "api.py"


# ---------------------------------------------------------------------------
# compare and sweep: the override paths agree with rebuilding the case from frames
# ---------------------------------------------------------------------------
def _doc(result):
    """The JSON document of a comparison or sweep (typed results give it through to_dict())."""
    return result.to_dict() if hasattr(result, "to_dict") else result


def _solved_at_rate(case, rate: float) -> float:
    parts = case.frames()
    parts["study"]["discount_rate"] = rate
    return round(tenure.solve(tenure.Case.from_frames(**parts)).present_cost, 2)


def test_sweep_points_equal_cases_rebuilt_from_frames():
    # source: separate solves of the case rebuilt with the swept rate (Case.from_frames), not the override code
    case = tenure.load_case(UNCAPPED)
    doc = _doc(tenure.sweep(case, vary=["study.discount_rate=0.03:0.07:2"]))
    costs = {p["values"]["study.discount_rate"]: p["present_cost"] for p in doc["points"]}
    assert sorted(costs) == [0.03, 0.07]
    for rate, cost in costs.items():
        assert cost == pytest.approx(_solved_at_rate(case, rate), abs=0.011)


def test_compare_of_a_scenario_object_equals_the_case_rebuilt_from_frames():
    from tenure.model import Scenario

    case = tenure.load_case(UNCAPPED)
    dear = Scenario(id="dear-money", note="7 % real", set={"study.discount_rate": 0.07})
    doc = _doc(tenure.compare(case, [dear]))
    rows = {r["id"]: r for r in doc["scenarios"]}
    assert list(rows) == ["base", "dear-money"]
    assert rows["dear-money"]["present_cost"] == pytest.approx(_solved_at_rate(case, 0.07), abs=0.011)
    assert rows["base"]["present_cost"] == pytest.approx(round(tenure.solve(case).present_cost, 2), abs=0.011)


def test_api_defaults_are_the_command_lines():
    """A notebook's tenure.solve / compare / sweep stop where `tenure plan` / `compare` / `sweep` stop:
    the same time limit and the same default gap as the fleet layer's (fleet.driver.DEFAULT_GAP)."""
    import inspect

    from tenure.commands.parser import build_parser
    from tenure.fleet.driver import DEFAULT_GAP

    p = build_parser()
    plan = p.parse_args(["plan", "x.toml", "--out", "o"])
    cmp = p.parse_args(["compare", "x.toml"])
    swp = p.parse_args(["sweep", "x.toml", "--samples", "3"])
    for fn, args in ((tenure.solve, plan), (tenure.compare, cmp), (tenure.sweep, swp)):
        sig = inspect.signature(fn).parameters
        assert sig["time_limit"].default == args.time_limit, fn.__name__
        assert sig["gap"].default == args.gap == DEFAULT_GAP, fn.__name__
