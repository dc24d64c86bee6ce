"""Writing at scale: the write-only workbook writer (report/sheetxml.py), the fleet state arrays behind the
age and type charts, and the one progress bar over the files of ``tenure plan``.

The workbook is read back with openpyxl, an independent reader of the Office Open XML format
(ECMA-376 Part 1, SpreadsheetML); the fleet state is checked against a year-by-year walk of each
unit's events written here from the conventions (docs/conventions.md: age 0 in the year bought, one
year older each year kept, an overhaul keeps the age).
"""

from __future__ import annotations

import io
import json
from typing import ClassVar

import numpy as np
import openpyxl
import pytest
from casekit import DEMO, UNCAPPED

from tenure.case import load_case
from tenure.cli import main
from tenure.report import charts, documents, sheetxml
from tenure.solve import solve_uncapped


def _book(fill) -> openpyxl.Workbook:
    b = sheetxml.Book(title="Tarnvale depot", creator="tenure test")
    fill(b)
    return openpyxl.load_workbook(io.BytesIO(b.to_bytes()))


def test_values_come_back_with_their_types():
    def fill(b):
        ws = b.sheet("values")
        ws.append(["text", 3, 2.5, True, None, np.int64(7), np.float64(0.125), float("nan"), "", "  spaced "])
        ws.append([1e-05, -4, 123456789.123, False])
    wb = _book(fill)
    ws = wb["values"]
    row1 = [c.value for c in ws[1]]
    assert row1 == ["text", 3, 2.5, True, None, 7, 0.125, None, None, "  spaced "]
    assert isinstance(row1[5], int) and not isinstance(row1[5], bool)
    assert [c.value for c in ws[2]][:4] == [1e-05, -4, 123456789.123, False]
    assert wb.properties.title == "Tarnvale depot" and wb.properties.creator == "tenure test"


def test_text_is_never_a_formula_and_markup_is_escaped():
    # OWASP "CSV Injection": cells starting with = + - @ must stay text (data type "s", never "f")
    texts = ["=1+1", '=HYPERLINK("http://example.invalid","x")', "@SUM(A1)", "-2+3", "+7", "<b>&amp;</b>", 'a "q"']

    def fill(b):
        b.sheet("t").append(texts)
    ws = _book(fill)["t"]
    assert [c.value for c in ws[1]] == texts
    assert all(c.data_type == "s" for c in ws[1])


def test_control_characters_become_the_replacement_character():
    # XML 1.0 forbids C0 controls other than tab, LF and CR (W3C XML 1.0, section 2.2 "Characters")
    def fill(b):
        b.sheet("c").append(["bell\x07 here", "tab\tand\nline"])
    ws = _book(fill)["c"]
    assert [c.value for c in ws[1]] == ["bell\ufffd here", "tab\tand\nline"]


def test_styles_widths_heights_and_frozen_panes():
    bold = sheetxml.Font(bold=True)
    blue = sheetxml.Font(bold=True, size=12, color="0072B2")

    def fill(b):
        ws = b.sheet("s")
        money = b.style("#,##0;-#,##0")
        pct = b.style("0.00%")
        head = b.style(None, bold, sheetxml.Fill("DCE9F2"), sheetxml.Align(vertical="top", wrap=True))
        ws.append(["year", "capital", "rate"], head)
        ws.append([2027, 1234567.891, 0.05], [0, money, pct])
        ws.append(["section"], b.style(None, blue))
        ws.append([None, "mid"], [0, b.style(None, None, None, sheetxml.Align(horizontal="center"))])
        ws.width.update({1: 34, 2: 12.5})
        ws.height[1] = 30
        ws.freeze = "B2"
        b.sheet("other").freeze = "A2"
    wb = _book(fill)
    ws = wb["s"]
    assert ws.freeze_panes == "B2" and wb["other"].freeze_panes == "A2"
    assert ws.column_dimensions["A"].width == 34 and ws.column_dimensions["B"].width == 12.5
    assert ws.row_dimensions[1].height == 30
    h = ws["A1"]
    assert h.font.b and h.fill.fill_type == "solid" and h.fill.fgColor.rgb.endswith("DCE9F2")
    assert h.alignment.wrap_text and h.alignment.vertical == "top"
    assert ws["B2"].number_format == "#,##0;-#,##0" and ws["C2"].number_format == "0.00%"
    assert ws["B2"].value == 1234567.891 and ws["A2"].number_format == "General"
    assert ws["A3"].font.b and ws["A3"].font.sz == 12 and ws["A3"].font.color.rgb.endswith("0072B2")
    assert ws["B4"].alignment.horizontal == "center" and ws["A4"].value is None


def test_sheet_titles_follow_the_format_rules():
    # a sheet name has at most 31 characters and none of [ ] : * ? / \ (ECMA-376 Part 1, 18.2.19), and is unique
    def fill(b):
        for t in ("by cost/centre [north]", "x" * 40, "x" * 40):
            b.sheet(t).append([t])
    assert _book(fill).sheetnames == ["by cost-centre -north-", "x" * 31, "x" * 29 + "-2"]


def test_a_large_sheet_round_trips():
    rng = np.random.default_rng(5)
    vals = rng.uniform(-1e6, 1e6, size=(3000, 6)).round(2)

    def fill(b):
        ws = b.sheet("big")
        money = b.style("#,##0;-#,##0")
        for j, row in enumerate(vals.tolist()):
            ws.append([f"U{j:05d}#1"] + row, [0] + [money] * 6)
    ws = _book(fill)["big"]
    back = [r for r in ws.iter_rows(values_only=True)]
    assert len(back) == 3000 and back[0][0] == "U00000#1"
    assert np.array_equal(np.array([r[1:] for r in back]), vals)


def _walk(plan, case):
    """Type and age by unit and year, walked year by year from each unit's start and events."""
    s = case.study
    out = []
    for u in plan.units:
        t, a = u.start_type, (-1 if u.start_age is None else u.start_age)
        row = []
        for k in range(s.horizon):
            if k > 0 and a >= 0:
                a += 1
            for e in u.events:
                if e.year == s.start_year + k and e.action != "overhaul":
                    t, a = (e.type, 0) if e.type else ("", -1)
            row.append((t if a >= 0 else "", a))
        out.append(row)
    return out


@pytest.mark.parametrize("path", [DEMO, UNCAPPED])
def test_fleet_state_arrays_follow_each_units_events(path):
    case = load_case(path)
    plan = solve_uncapped(case)
    st = charts.fleet_state(plan, case)
    assert st.age.shape == st.type_code.shape == (len(plan.units), case.study.horizon)
    names = list(st.types) + [""]
    got = [[(names[c], a) for c, a in zip(cr, ar)] for cr, ar in zip(st.type_code.tolist(), st.age.tolist())]
    assert got == _walk(plan, case)
    assert charts.unit_years(plan, case) == got


class _Bar:
    """Stands in for tenure.progress.bar: records what a bar would show."""

    made: ClassVar[list] = []

    def __init__(self, total, label="", *, enabled=True, **_k):
        self.total, self.label, self.enabled, self.steps, self.posts = total, label, enabled, 0, []
        _Bar.made.append(self)

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        return False

    def update(self, n=1):
        self.steps += n

    def set_postfix_str(self, s):
        self.posts.append(s)


def test_one_progress_bar_counts_the_six_files(tmp_path, monkeypatch):
    case = load_case(DEMO)
    plan = solve_uncapped(case)
    _Bar.made = []
    monkeypatch.setattr(documents, "bar", _Bar)
    paths = documents.write_plan_files(plan, case, tmp_path, run_id="r1", progress=True)
    assert [p.name for p in paths] == ["plan.json", "units.csv", "years.csv", "buy-list.csv", "report.html",
                                       "plan.xlsx"]
    main_bar = _Bar.made[0]
    assert main_bar.total == 6 and main_bar.enabled and main_bar.steps == 6
    assert [p.split()[0] for p in main_bar.posts] == [p.name for p in paths]
    assert all(not b.enabled for b in _Bar.made[1:])   # no second bar under the first


def test_quiet_draws_no_bar(tmp_path, monkeypatch):
    _Bar.made = []
    monkeypatch.setattr(documents, "bar", _Bar)
    assert main(["plan", str(UNCAPPED), "--out", str(tmp_path / "o"), "--quiet"]) == 0
    assert _Bar.made and not any(b.enabled for b in _Bar.made)
    wb = openpyxl.load_workbook(tmp_path / "o" / "plan.xlsx")
    summary = {r[0]: r[1] for r in wb["summary"].iter_rows(min_row=2, values_only=True) if r[0]}
    pj = json.loads((tmp_path / "o" / "plan.json").read_text())
    assert summary["present cost"] == pj["present_cost"] and summary["run id"] == pj["run_id"]
