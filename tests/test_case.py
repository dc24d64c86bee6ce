"""Case loading and validation (tenure.case).

The demo cases must load; every bad input must give a CaseError whose problems
name the file and the field path and say what is allowed, and all the problems
of a case must be reported together.  The small cases are made-up fixtures
(tests/casekit.py); nothing economic is checked here.
"""

from __future__ import annotations

import tomllib

import pytest

from casekit import BAD_INPUTS, BY_CLAIM, DEMO, START, UNCAPPED, base_doc, to_toml
from tenure.case import CaseError, build_case, load_case, read_document


def _problems(bad, tmp_path):
    """The problems a bad input gives, loading it the way its kind needs."""
    if bad.raw is not None:
        path = bad.write(tmp_path)
        with pytest.raises(CaseError) as err:
            load_case(path)
    else:
        for name, text in bad.files.items():
            (tmp_path / name).write_text(text, encoding="utf-8")
        with pytest.raises(CaseError) as err:
            build_case(bad.doc(), source="case.toml", base_dir=tmp_path)
    return err.value.problems


def _units_by_class(case):
    return {cls: sum(u.count for u in case.units_of(cls)) for cls in case.classes}


# ---------------------------------------------------------------------------
# the demo cases and the fixture itself
# ---------------------------------------------------------------------------
def test_demo_case_loads_with_78_units_in_four_classes():
    case = load_case(DEMO)
    assert case.unit_count == 78
    assert _units_by_class(case) == {"refuse-truck": 24, "transit-bus": 18, "utility-pickup": 28,
                                     "street-sweeper": 8}


def test_demo_case_reads_its_csv_inventory_of_49_rows():
    case = load_case(DEMO)
    assert len(case.units) == 49
    # the inventory is inlined into the raw document, so it no longer depends on the CSV
    assert "fleet" not in case.raw and len(case.raw["unit"]) == 49


def test_demo_case_reads_budget_limit_and_scenarios():
    case = load_case(DEMO)
    assert case.budget.cap == 2_300_000 and case.budget.cap_for(2027) == 1_850_000
    assert case.budget.cap_for(2030) == 2_300_000 and case.budget.basis == "gross"
    assert case.limit_for("refuse-truck") == 4 and case.limit_for("transit-bus") is None
    assert [s.id for s in case.scenarios] == ["bev-late", "battery-fast", "high-rate"]
    assert case.capped


def test_uncapped_demo_loads_with_12_units_and_no_caps():
    case = load_case(UNCAPPED)
    assert case.unit_count == 12
    assert _units_by_class(case) == {"refuse-truck": 6, "utility-pickup": 6}
    assert case.budget is None and not case.capped
    assert case.study.end_value == "continuing"


def test_demo_list_forms_are_read_as_tables():
    t = load_case(DEMO).type("pu-gasoline")
    assert t.om.kind == "table" and len(t.om.table) == t.max_age == 9
    assert t.salvage.kind == "table" and t.salvage.table[0] == 41200


def test_fixture_case_is_valid_and_round_trips_through_toml(tmp_path):
    doc = base_doc()
    assert tomllib.loads(to_toml(doc)) == doc
    (tmp_path / "ok.toml").write_text(to_toml(doc), encoding="utf-8")
    case = load_case(tmp_path / "ok.toml")
    assert case.unit_count == 3 and case.study.start_year == START


def test_defaults_fill_optional_fields():
    case = build_case(base_doc())
    van = case.type("van")
    assert case.study.end_value == "salvage"
    assert van.price_change == 0.0 and van.om_change == 0.0 and van.buy_from is None and van.buy_until is None
    assert [u.count for u in case.units] == [1, 2]


def test_max_age_defaults_to_the_length_of_an_om_list():
    doc = base_doc()
    del doc["asset_type"][1]["max_age"]
    assert build_case(doc).type("cart").max_age == 4


# ---------------------------------------------------------------------------
# every bad input: a CaseError naming the field and what is allowed
# ---------------------------------------------------------------------------
@pytest.mark.parametrize("bad", BAD_INPUTS, ids=[b.claim for b in BAD_INPUTS])
def test_bad_input_names_the_field_and_what_is_allowed(bad, tmp_path):
    problems = _problems(bad, tmp_path)
    hits = [p for p in problems if p.path == bad.path]
    assert hits, f"no problem at {bad.path!r}; got: {[str(p) for p in problems]}"
    assert any(bad.allowed in p.message for p in hits), [str(p) for p in hits]
    expected_file = bad.in_file or "case.toml"
    assert all(p.file.endswith(expected_file) for p in hits)
    # the printed form leads with file and field path
    assert str(hits[0]).startswith(f"{hits[0].file}: {bad.path}: ")


def test_bad_value_is_quoted_in_the_message(tmp_path):
    (p,) = [p for p in _problems(BY_CLAIM["negative price is refused"], tmp_path)]
    assert "-40000" in p.message


def test_allowed_range_is_stated_once(tmp_path):
    (p,) = _problems(BY_CLAIM["negative price is refused"], tmp_path)
    assert p.message.endswith("must be money > 0")
    (p,) = _problems(BY_CLAIM["negative cap is refused"], tmp_path)
    assert p.message.endswith("must be money ≥ 0")


def test_all_problems_are_reported_at_once():
    doc = base_doc()
    doc["study"]["horizon"] = 0
    doc["asset_type"][0]["price"] = -1
    doc["asset_type"][1]["salvage"] = {"retain": 2.0}
    doc["unit"][1]["age"] = -3
    doc["budget"] = {"cap": -5}
    with pytest.raises(CaseError) as err:
        build_case(doc, source="case.toml")
    paths = {p.path for p in err.value.problems}
    assert {"study.horizon", "asset_type[1].price", "asset_type[2].salvage.retain", "unit[2].age",
            "budget.cap"} <= paths
    # the exception text lists every problem, one a line
    assert len(str(err.value).splitlines()) == len(err.value.problems) >= 5


def test_unknown_key_lists_the_allowed_keys():
    doc = base_doc()
    doc["asset_type"][0]["pirce"] = doc["asset_type"][0].pop("price")
    with pytest.raises(CaseError) as err:
        build_case(doc)
    msg = next(p.message for p in err.value.problems if p.path == "asset_type[1].pirce")
    assert "unknown key 'pirce'" in msg and "allowed: id, class, price" in msg


def test_misspelt_key_also_reports_the_missing_required_field():
    doc = base_doc()
    doc["asset_type"][0]["pirce"] = doc["asset_type"][0].pop("price")
    with pytest.raises(CaseError) as err:
        build_case(doc)
    assert "asset_type[1].price" in {p.path for p in err.value.problems}


def test_unknown_unit_type_lists_the_types():
    doc = base_doc()
    doc["unit"][0]["type"] = "truck"
    with pytest.raises(CaseError) as err:
        build_case(doc)
    (p,) = err.value.problems
    assert p.path == "unit[1].type" and "(types: cart, van)" in p.message


def test_duplicate_unit_id_names_the_first_one():
    with pytest.raises(CaseError) as err:
        build_case(BY_CLAIM["duplicate unit id is refused"].doc())
    (p,) = err.value.problems
    assert "also unit[1]" in p.message


def test_each_bad_csv_row_is_reported_with_its_row_number(tmp_path):
    problems = _problems(BY_CLAIM["bad inventory CSV row names its row number"], tmp_path)
    paths = {p.path for p in problems}
    assert {"row 3.age", "row 4.count"} <= paths  # row 1 is the header
    assert all(p.file.endswith("fleet.csv") for p in problems)
    assert any("'old'" in p.message for p in problems if p.path == "row 3.age")


def csv_inventory_doc(tmp_path, text: str) -> dict:
    """The small valid case with its inventory moved to ``fleet.csv`` holding ``text``."""
    (tmp_path / "fleet.csv").write_text(text, encoding="utf-8")
    doc = base_doc()
    doc.pop("unit")
    doc["fleet"] = {"file": "fleet.csv"}
    return doc


def test_csv_unit_of_unknown_type_names_its_row(tmp_path):
    doc = csv_inventory_doc(tmp_path, "id,type,age\nV1,van,2\nX9,vna,1\n")
    with pytest.raises(CaseError) as err:
        build_case(doc, base_dir=tmp_path)
    (p,) = err.value.problems
    assert p.path == "row 3.type" and "did you mean 'van'" in p.message


def test_csv_inventory_loads_like_unit_blocks(tmp_path):
    doc = csv_inventory_doc(tmp_path, "id,type,age,count\nV1,van,2,\nC1,cart,1,2\n")
    case = build_case(doc, base_dir=tmp_path)
    assert case.units == build_case(base_doc()).units


def test_missing_csv_message_shows_the_resolved_path(tmp_path):
    problems = _problems(BY_CLAIM["missing inventory CSV is refused"], tmp_path)
    (p,) = problems
    assert str(tmp_path / "fleet.csv") in p.message


def test_missing_csv_is_not_also_reported_as_a_missing_inventory(tmp_path):
    problems = _problems(BY_CLAIM["missing inventory CSV is refused"], tmp_path)
    assert [p.path for p in problems] == ["fleet.file"]


def test_csv_with_a_header_only_is_reported_as_empty(tmp_path):
    doc = csv_inventory_doc(tmp_path, "id,type,age\n")
    with pytest.raises(CaseError) as err:
        build_case(doc, base_dir=tmp_path)
    (p,) = err.value.problems
    assert p.path == "fleet.file" and "no unit rows" in p.message


def test_toml_syntax_error_is_a_case_error_not_a_crash(tmp_path):
    path = BY_CLAIM["TOML syntax error is reported with its line"].write(tmp_path)
    with pytest.raises(CaseError) as err:
        read_document(path)
    (p,) = err.value.problems
    assert p.file == str(path) and "not valid TOML" in p.message


def test_missing_case_file_is_a_case_error(tmp_path):
    with pytest.raises(CaseError) as err:
        load_case(tmp_path / "nowhere.toml")
    assert "no such case file" in str(err.value)


def test_missing_study_and_types_and_units_are_all_reported():
    with pytest.raises(CaseError) as err:
        build_case({})
    assert {"study", "asset_type", "unit"} <= {p.path for p in err.value.problems}


def test_cap_by_year_inside_the_horizon_is_accepted():
    doc = base_doc()
    doc["budget"] = {"cap": 50000, "cap_by_year": {str(START): 10000, str(START + 4): 0}}
    b = build_case(doc).budget
    assert b.cap_for(START) == 10000 and b.cap_for(START + 4) == 0 and b.cap_for(START + 1) == 50000


def test_boundary_values_are_accepted():
    """retain = 1 and floor = 0 are inside (0, 1] and [0, 1); a zero rate is fine for 'salvage'."""
    doc = base_doc()
    doc["asset_type"][0]["salvage"] = {"retain": 1.0}
    doc["asset_type"][1]["salvage"] = {"life": 4, "floor": 0.0}
    doc["study"]["discount_rate"] = 0.0
    doc["budget"] = {"cap": 0}
    case = build_case(doc)
    assert case.type("van").salvage.retain == 1.0 and case.type("cart").salvage.floor == 0.0


def test_a_class_that_cannot_be_bought_in_some_year_is_refused():
    doc = base_doc()
    doc["asset_type"][0]["buy_until"] = START + 1
    with pytest.raises(CaseError) as err:
        build_case(doc)
    (p,) = err.value.problems
    assert p.path == "class 'van'" and f"{START + 2}–{START + 4}" in p.message


def test_one_mistake_gives_at_most_two_problems(tmp_path):
    """No cascade: e.g. 'pirce' gives the unknown key and the missing price, nothing more."""
    counts = {}
    for j, bad in enumerate(BAD_INPUTS):
        folder = tmp_path / f"case{j}"
        folder.mkdir()
        counts[bad.claim] = len(_problems(bad, folder))
    assert max(counts.values()) <= 2, counts
