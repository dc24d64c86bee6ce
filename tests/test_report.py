"""The human-facing documents: report.html (rendered in a real headless Chromium) and plan.xlsx.

The uncapped demo case gives a fast, real plan.  Capped plans are checked with
the uncapped plan of the capped demo case (whose years carry the case's caps,
so some years are over them) with made-up shadow prices, a premium, a gap and
a shortfall pasted on: the writers must draw whatever a plan says.  When
``tenure.fleet`` exists, a real capped solve is rendered too.

Chromium is the Debian package (``scripts/test`` installs it).  Without it the
browser tests fail, they do not skip: a report nobody has rendered is not
tested.
"""

from __future__ import annotations

import io
import json
import re
import shutil
import subprocess
import tempfile
from dataclasses import replace
from pathlib import Path

import openpyxl
import pytest

from casekit import DEMO, UNCAPPED
from tenure import chain
from tenure.case import load_case
from tenure.cli import main
from tenure.report import charts, documents, html
from tenure.report.tables import write_plan
from tenure.report.text import CAUTION
from tenure.scenarios import Comparison, RegretTable, SafeAction, ScenarioResult
from tenure.solve import solve, solve_uncapped


CHROMIUM_FLAGS = ("--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
                  "--disable-background-networking", "--disable-component-update", "--disable-sync")
UNCAPPED_CHARTS = tuple(c for c in charts.PLAN_CHARTS if c != "chart-cap-cost")


# ---------------------------------------------------------------------------
# fixtures
# ---------------------------------------------------------------------------
@pytest.fixture(scope="module")
def demo():
    case = load_case(UNCAPPED)
    return case, solve(case)


@pytest.fixture(scope="module")
def demo_out(demo, tmp_path_factory):
    case, plan = demo
    out = tmp_path_factory.mktemp("uncapped")
    write_plan(plan, out)
    paths = documents.write_all(plan, case, out)
    return out, paths


@pytest.fixture(scope="module")
def capped():
    """A plan with caps (some years over them), shadow prices, a premium and a gap."""
    case = load_case(DEMO)
    plan = solve_uncapped(case)
    years = tuple(replace(y, shadow_price=0.0 if (y.slack or 0.0) > 0 else 0.04 + 0.01 * (y.year % 5))
                  for y in plan.years)
    plan = plan.with_(years=years, uncapped_cost=plan.present_cost - 123456.0, status="feasible", gap=0.004,
                      lower_bound=plan.present_cost * 0.996, method="integer program")
    return case, plan


@pytest.fixture(scope="module")
def capped_out(capped, tmp_path_factory):
    case, plan = capped
    out = tmp_path_factory.mktemp("capped")
    write_plan(plan, out)
    documents.write_all(plan, case, out)
    return out


def chromium() -> str:
    exe = shutil.which("chromium") or shutil.which("chromium-browser")
    if exe is None:
        pytest.fail("Chromium is not installed: the report cannot be rendered. Install the Debian package "
                    "(apt-get update && apt-get install -y chromium); scripts/test does this.")
    return exe


def screenshot(page: Path, png: Path, height: int = 2400) -> Path:
    """Render ``page`` in a fresh headless Chromium profile and save a PNG screenshot."""
    with tempfile.TemporaryDirectory(prefix="tenure-chromium-") as profile:
        cmd = [chromium(), *CHROMIUM_FLAGS, f"--user-data-dir={profile}", f"--screenshot={png}",
               f"--window-size=1280,{height}", page.resolve().as_uri()]
        run = subprocess.run(cmd, capture_output=True, text=True, timeout=180, stdin=subprocess.DEVNULL)
    assert run.returncode == 0, f"chromium failed ({run.returncode}):\n{run.stderr[-2000:]}"
    assert png.is_file() and png.stat().st_size > 0, f"no screenshot written:\n{run.stderr[-2000:]}"
    return png


def pixel_stats(path: Path) -> dict:
    """Size, non-white fraction, distinct colours, and pixels of the charts' Okabe–Ito blue (#0072B2)."""
    import numpy as np
    from matplotlib.image import imread

    with path.open("rb") as fh:
        assert fh.read(8) == b"\x89PNG\r\n\x1a\n", "not a PNG"
    img = imread(path)                       # floats in [0, 1], H x W x (3 or 4)
    rgb = np.round(img[:, :, :3] * 255).astype(np.int32)
    h, w = rgb.shape[:2]
    non_white = float((rgb < 245).any(axis=2).mean())
    colours = len(np.unique(rgb.reshape(-1, 3) @ np.array([1 << 16, 1 << 8, 1])))
    blue = int((np.abs(rgb - np.array([0x00, 0x72, 0xB2])) < 12).all(axis=2).sum())
    return {"size": (w, h), "non_white": non_white, "colours": colours, "blue": blue}


def figures(page: str) -> dict[str, str]:
    """Each ``<figure class="chart" id=...>`` block of a page, by id."""
    return {m.group(1): m.group(0) for m in re.finditer(r'<figure class="chart" id="([^"]+)">.*?</figure>', page,
                                                        flags=re.S)}


# ---------------------------------------------------------------------------
# files
# ---------------------------------------------------------------------------
def test_write_all_writes_report_and_workbook(demo_out):
    out, paths = demo_out
    assert [p.name for p in paths] == ["report.html", "plan.xlsx"]
    assert all(p.is_file() and p.stat().st_size > 1000 for p in paths)
    assert not list(out.glob(".*.part")), "a temporary file was left behind"


def test_cli_plan_writes_report_and_workbook(tmp_path, capsys):
    assert main(["plan", str(UNCAPPED), "--out", str(tmp_path), "--quiet"]) == 0
    for name in ("plan.json", "report.html", "plan.xlsx"):
        assert (tmp_path / name).is_file(), name


def test_failed_render_leaves_no_file(demo, tmp_path, monkeypatch):
    case, plan = demo

    def boom(*_a, **_k):
        raise RuntimeError("workbook failed")

    monkeypatch.setattr(documents, "plan_html", lambda *_a: "<!DOCTYPE html>")
    monkeypatch.setattr(documents.xlsx, "workbook_bytes", boom)
    with pytest.raises(RuntimeError):
        documents.write_all(plan, case, tmp_path)
    assert list(tmp_path.iterdir()) == []


# ---------------------------------------------------------------------------
# report.html: content
# ---------------------------------------------------------------------------
def test_report_is_self_contained(demo_out):
    page = (demo_out[0] / "report.html").read_text(encoding="utf-8")
    assert page.startswith("<!DOCTYPE html>")
    for bad in ("<script", "<link", "<iframe", "@import", "src=\"http", "href=\"http", "url(http", "<img"):
        assert bad not in page, bad
    # the only addresses are SVG namespace names, which are never fetched
    assert set(re.findall(r"https?://[^\s\"')]+", page)) <= {"http://www.w3.org/2000/svg",
                                                              "http://www.w3.org/1999/xlink"}


def test_every_chart_is_present_uncapped(demo_out):
    page = (demo_out[0] / "report.html").read_text(encoding="utf-8")
    figs = figures(page)
    assert tuple(figs) == UNCAPPED_CHARTS
    assert page.count("<svg") == len(UNCAPPED_CHARTS)
    for cid, block in figs.items():
        assert block.count("<svg") == 1, cid
    assert "chart-cap-cost" not in page
    # no cap: no cap line in the capital chart
    assert "cap (gross basis)" not in figs["chart-capital"]


def test_svg_ids_are_unique_across_charts(demo_out):
    page = (demo_out[0] / "report.html").read_text(encoding="utf-8")
    ids = re.findall(r'\sid="([^"]+)"', page)
    dup = {i for i in ids if ids.count(i) > 1}
    assert not dup, sorted(dup)[:10]
    for ref in set(re.findall(r"url\(#([^)]+)\)", page)) | set(re.findall(r'href="#([^"]+)"', page)):
        assert ref in ids, ref


def test_axes_name_their_units_and_currency(demo_out):
    figs = figures((demo_out[0] / "report.html").read_text(encoding="utf-8"))
    for cid in ("chart-capital", "chart-eac", "chart-class-cost"):
        assert "money in constant 2027 currency" in figs[cid], cid
    assert "calendar year" in figs["chart-capital"]
    assert "age (years)" in figs["chart-ages"] and "units (count)" in figs["chart-ages"]
    assert "units in service (count)" in figs["chart-types"]
    assert "(years)" in figs["chart-eac"]


def test_report_states_assumptions_summary_and_cautions(demo, demo_out):
    case, plan = demo
    page = (demo_out[0] / "report.html").read_text(encoding="utf-8")
    text = re.sub(r"<[^>]+>", " ", page)
    assert "5.00% per year, real" in text
    assert "2027–2056 (30 years)" in text
    assert "continuing" in text
    for t in case.types:
        assert t.id in text
        assert html.money(t.price) in text
    assert "none — the plan is uncapped" in text
    assert html.money(plan.present_cost) in text
    assert "optimal" in text
    n_buys = sum(len(u.events) for u in plan.units)
    assert f">{n_buys}<" in page
    assert html.e(CAUTION) in page
    assert "qualified professionals" in text and "procurement rules" in text


def test_eac_chart_marks_each_buyable_types_economic_life(demo, demo_out):
    case, _ = demo
    block = figures((demo_out[0] / "report.html").read_text(encoding="utf-8"))["chart-eac"]
    tables = documents.life_tables(case)
    assert [lt.type for lt in tables] == ["rt-diesel", "rt-bev", "pu-gasoline"]   # legacy type is not sold
    for lt in tables:
        assert f"{lt.type} ({case.type(lt.type).class_}), bought {lt.year}" in block
        assert f"economic life {lt.economic_life} year" in block


def test_capped_report_has_cap_line_marks_and_cap_costs(capped, capped_out):
    case, plan = capped
    page = (capped_out / "report.html").read_text(encoding="utf-8")
    figs = figures(page)
    assert tuple(figs) == charts.PLAN_CHARTS
    assert page.count("<svg") == len(charts.PLAN_CHARTS)
    assert "cap (gross basis)" in figs["chart-capital"]
    n_over = sum(1 for y in plan.years if y.slack is not None and y.slack < -0.5)
    assert n_over > 0 and figs["chart-capital"].count(">over<") == n_over
    assert "shadow price" in figs["chart-cap-cost"]
    text = re.sub(r"<[^>]+>", " ", page)
    assert html.money(plan.premium) in text and "Not proven optimal" in text
    assert "2,300,000" in text and "1,850,000" in text and "at most 4 new units a year" in text


def test_infeasible_and_empty_plans_render(capped, tmp_path):
    case, plan = capped
    bad = plan.with_(status="infeasible", shortfall=((2027, 420000.0), (2031, 15000.0)),
                     forcing_units=("RT-L14#1",))
    page = documents.plan_html(bad, case)
    assert "No plan fits the caps" in page and "420,000" in page
    assert "shortfall: extra capital needed" in figures(page)["chart-capital"]
    empty = bad.with_(years=(), units=(), by_class={}, present_cost=float("nan"))
    page = documents.plan_html(empty, case)
    assert tuple(figures(page)) == UNCAPPED_CHARTS
    book = openpyxl.load_workbook(io.BytesIO(documents.plan_xlsx(empty, case)))
    # "rules": the demo has a purchase target, emissions and nominal caps (issue 13)
    assert book.sheetnames == ["summary", "years", "units", "buy list", "policy", "assumptions", "rules"]
    summary = {r[0]: r[1] for r in book["summary"].iter_rows(min_row=2, values_only=True) if r[0]}
    # no plan: the status and the shortfall are there, the cost cell is empty (not NaN), nothing was bought
    assert summary["status"] == "infeasible" and summary["present cost"] is None
    assert summary["shortfall 2027"] == 420000 and summary["shortfall 2031"] == 15000
    assert summary["replacements"] == 0 and summary["capital, all years"] == 0
    assert [r[:3] for r in book["years"].iter_rows(min_row=2, values_only=True)] == [("total", 0, 0)]
    assert book["units"].max_row == 1  # the header only


def test_unit_years_follow_the_schedule(demo):
    case, plan = demo
    uy = charts.unit_years(plan, case)
    by_name = dict(zip((u.unit for u in plan.units), uy))
    # a unit row without a count keeps its id in every output (issue 12): RT-L14, not RT-L14#1
    # RT-L14 is 14 (its max age) in 2027: replaced at once by an rt-diesel, age 0, then 1 …
    assert by_name["RT-L14"][0] == ("rt-diesel", 0) and by_name["RT-L14"][1] == ("rt-diesel", 1)
    # RT-D08 keeps its rt-diesel until its first replacement
    first = plan.units[[u.unit for u in plan.units].index("RT-D08")].events[0]
    k = first.year - case.study.start_year
    assert by_name["RT-D08"][k - 1] == ("rt-diesel", 8 + k - 1)
    assert by_name["RT-D08"][k] == (first.type, 0)
    for u, row in zip(plan.units, uy):
        for t, a in row:
            assert a < case.type(t).max_age


# ---------------------------------------------------------------------------
# report.html: rendered in a real browser
# ---------------------------------------------------------------------------
def test_report_renders_in_headless_chromium(demo_out, tmp_path):
    png = screenshot(demo_out[0] / "report.html", tmp_path / "report.png")
    st = pixel_stats(png)
    assert st["size"] == (1280, 2400)
    assert st["non_white"] > 0.06, st
    assert st["colours"] > 200, st
    assert st["blue"] > 12000, st           # chart bars and areas, not only the header rule


def test_capped_report_renders_in_headless_chromium(capped_out, tmp_path):
    png = screenshot(capped_out / "report.html", tmp_path / "capped.png", height=3200)
    st = pixel_stats(png)
    assert st["non_white"] > 0.06 and st["colours"] > 200, st


def test_compare_report_renders_in_headless_chromium(tmp_path):
    case = load_case(DEMO)
    out = tmp_path / "cmp"
    documents.write_compare_report(comparison(), case, out)
    st = pixel_stats(screenshot(out / "report.html", tmp_path / "cmp.png"))
    assert st["non_white"] > 0.05 and st["colours"] > 100, st


# ---------------------------------------------------------------------------
# plan.xlsx
# ---------------------------------------------------------------------------
def _header(ws) -> list:
    return [c.value for c in ws[1]]


def test_workbook_sheets_headers_and_formats(demo_out):
    wb = openpyxl.load_workbook(demo_out[0] / "plan.xlsx")
    assert wb.sheetnames == ["summary", "years", "units", "buy list", "policy", "assumptions"]  # "buy list": issue 12
    for ws in wb:
        assert ws.freeze_panes in ("A2", "B2"), ws.title
        assert all(ws.column_dimensions[k].width >= 5 for k in ws.column_dimensions), ws.title
    years = wb["years"]
    head = _header(years)
    assert head[:9] == ["year", "buys", "capital", "cap", "room under cap (slack)", "O&M", "market value received",
                        "net capital (capital less market value)", "shadow price of the cap"]
    assert years.cell(row=2, column=3).number_format == "#,##0;-#,##0"
    units = wb["units"]
    assert _header(units)[:6] == ["unit", "class", "type at start", "age at start", "year", "action"]
    assert units.cell(row=2, column=10).number_format == "#,##0;-#,##0"


def test_workbook_totals_equal_plan_json_to_the_cent(demo_out):
    out = demo_out[0]
    pj = json.loads((out / "plan.json").read_text())
    wb = openpyxl.load_workbook(out / "plan.xlsx")
    summary = {r[0]: r[1] for r in wb["summary"].iter_rows(min_row=2, values_only=True) if r[0]}
    assert summary["present cost"] == pj["present_cost"]
    for cls, v in pj["by_class"].items():
        assert summary[f"present cost, {cls}"] == v
    rows = list(wb["years"].iter_rows(min_row=2, values_only=True))
    body, total = rows[:-1], rows[-1]
    assert total[0] == "total" and len(body) == len(pj["years"])
    for r, y in zip(body, pj["years"]):
        assert (r[0], r[1], r[2], r[5], r[6]) == (y["year"], y["buys"], y["capital"], y["om"], y["salvage"])
    for col, key in ((2, "capital"), (5, "om"), (6, "salvage")):
        assert abs(total[col] - sum(y[key] for y in pj["years"])) < 0.005, key
    assert total[1] == sum(y["buys"] for y in pj["years"])
    assert summary["capital, all years"] == total[2]
    events = [(u["unit"], e) for u in pj["units"] for e in u["events"]]
    urows = [r for r in wb["units"].iter_rows(min_row=2, values_only=True) if r[5] == "replace"]
    assert len(urows) == len(events)
    for r, (name, ev) in zip(urows, events):
        assert (r[0], r[4], r[8], r[9], r[10]) == (name, ev["year"], ev["type"], ev["price"], ev["market_value"])
    assert abs(sum(r[9] for r in urows) - sum(ev["price"] for _, ev in events)) < 0.005


def test_workbook_policy_matches_the_recursion(demo, demo_out):
    case, _ = demo
    ws = openpyxl.load_workbook(demo_out[0] / "plan.xlsx")["policy"]
    years = _header(ws)[1:]
    assert years == list(case.study.years)
    cells = list(ws.iter_rows(min_row=2, values_only=True))
    sol = chain.backward(chain.build_class_graph(case, "refuse-truck"))
    g = sol.graph
    t = g.type_index("rt-diesel")
    start = [r[0] for r in cells].index("refuse-truck: held type rt-diesel (max age 14)")
    for a in range(0, 15):
        row = cells[start + 1 + a]
        assert row[0] == a
        for k in range(case.study.horizon):
            act = int(sol.policy[k, t, a])
            assert row[1 + k] == ("·" if act == chain.KEEP else g.types[act]), (a, k)


def test_workbook_assumptions_as_read(demo, demo_out):
    case, _ = demo
    ws = openpyxl.load_workbook(demo_out[0] / "plan.xlsx")["assumptions"]
    values = [c for row in ws.iter_rows(values_only=True) for c in row if c is not None]
    assert 0.05 in values and "continuing" in values and 2027 in values
    for t in case.types:
        assert t.id in values and t.price in values
    for u in case.units:
        assert u.id in values


def test_capped_workbook_has_caps_and_shadow_prices(capped, capped_out):
    _, plan = capped
    ws = openpyxl.load_workbook(capped_out / "plan.xlsx")["years"]
    rows = list(ws.iter_rows(min_row=2, values_only=True))[:-1]
    assert [r[3] for r in rows] == [round(y.cap, 2) for y in plan.years]
    assert [r[8] for r in rows] == [y.shadow_price for y in plan.years]


# ---------------------------------------------------------------------------
# comparison report
# ---------------------------------------------------------------------------
def comparison(without_plan: str | None = None) -> Comparison:
    """A made-up comparison of three scenarios of the demo (``without_plan``: one scenario found no plan)."""
    ids = ["base", "bev-late", "high-rate"]
    rows = []
    for j, sid in enumerate(ids):
        first = {"RT-L14#1": "replace:rt-diesel", "RT-L14#2": "replace:rt-diesel"}
        first.update({f"PU-G09#{k}": "keep" for k in range(1, 71 - j)})
        if sid == without_plan:
            rows.append(ScenarioResult(sid, f"note {sid}", {}, "infeasible", None, None, None, "no plan: limits",
                                       {}, {}, {}))
            continue
        rows.append(ScenarioResult(sid, f"note {sid}", {}, "optimal", 5.0e7 + 1.0e6 * j, 1.0e6 * j, 0.0, "",
                                   {str(2027 + k): 1.0e6 + 1.0e5 * ((k + j) % 4) for k in range(30)},
                                   {"rt-bev": 40 + j, "bus-bev": 30 - j}, first))
    m = {i: {k: 0.0 if a == b else 1.0e5 * (a + b) for b, k in enumerate(ids)} for a, i in enumerate(ids)}
    breaks = {i: {k: () for k in ids} for i in ids}
    if without_plan:
        for k in ids:
            m[without_plan][k] = None
            breaks[without_plan][k] = ("no plan",)
    regret = RegretTable(tuple(ids), cost=m, regret=m, breaks=breaks, best_under={k: 5.0e7 for k in ids},
                         max_regret={i: max(m[i].values()) for i in ids if i != without_plan},
                         least_max_regret="bev-late", rule="least maximum regret among the plans that break no rule")
    safe = (SafeAction("RT-L14#1", "replace:rt-diesel"), SafeAction("PU-G09#1", "keep"))
    return Comparison("quillmere-fleet.toml", "Quillmere", 2027, 30, tuple(rows), regret, safe, tuple(ids), ())


def test_compare_report_has_costs_profiles_and_regret(tmp_path):
    case = load_case(DEMO)
    path = documents.write_compare_report(comparison(), case, tmp_path)
    assert path == tmp_path / "report.html"
    page = path.read_text(encoding="utf-8")
    assert tuple(figures(page)) == charts.COMPARE_CHARTS and page.count("<svg") == 2
    assert "<script" not in page and "<link" not in page
    regret = page[page.index('id="regret"'):page.index('id="decisions"')]
    assert regret.count("<tr") == 4                       # header + 3 plans
    assert '<tr class="best"><td>bev-late</td>' in regret
    assert "300,000" in regret                            # row maximum of bev-late
    decisions = page[page.index('id="decisions"'):page.index('id="assumptions"')]
    assert "replace with rt-diesel" in decisions and "RT-L14#1" in decisions and "PU-G09#1" in decisions
    assert "money in constant 2027 currency" in figures(page)["chart-compare-capital"]
    assert html.e(CAUTION) in page


def test_compare_report_of_a_scenario_without_a_plan(tmp_path):
    # a scenario whose limits leave no plan (status infeasible): no bar, no line, its regret row breaks
    case = load_case(UNCAPPED)
    page = documents.write_compare_report(comparison("high-rate"), case, tmp_path).read_text(encoding="utf-8")
    assert tuple(figures(page)) == charts.COMPARE_CHARTS
    regret = page[page.index('id="regret"'):page.index('id="decisions"')]
    assert regret.count("breaks a rule") == 3 + 1 and 'title="no plan"' in regret
    scen = page[page.index('id="scenarios"'):page.index('id="charts"')]
    assert "infeasible" in scen and "—" in scen


# ---------------------------------------------------------------------------
# a real capped solve
# ---------------------------------------------------------------------------
def test_real_capped_plan_report(tmp_path):
    case = load_case(DEMO)
    plan = solve(case, time_limit=60, gap=0.01, progress=False)
    write_plan(plan, tmp_path)
    documents.write_all(plan, case, tmp_path)
    page = (tmp_path / "report.html").read_text(encoding="utf-8")
    figs = figures(page)
    assert "cap (gross basis)" in figs["chart-capital"]
    has_prices = any(y.shadow_price is not None for y in plan.years)
    assert ("chart-cap-cost" in figs) and (has_prices == ("shadow price" in figs["chart-cap-cost"]))
    pj = json.loads((tmp_path / "plan.json").read_text())
    summary = {r[0]: r[1] for r in openpyxl.load_workbook(tmp_path / "plan.xlsx")["summary"]
               .iter_rows(min_row=2, values_only=True) if r[0]}
    assert summary["present cost"] == pj["present_cost"]
    st = pixel_stats(screenshot(tmp_path / "report.html", tmp_path / "shot.png"))
    assert st["non_white"] > 0.06, st
