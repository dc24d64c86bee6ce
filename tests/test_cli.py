"""Command line (tenure.cli): exit codes, messages on stderr, no tracebacks, output files.

Exit codes (src/tenure/cli.py): 0 done, 2 bad input.  Every bad input of
tests/casekit.py must give exit code 2 with the field path on stderr.  The
cases are the invented demo cases and small made-up fixtures.
"""

from __future__ import annotations

import csv
import json
import os
import subprocess
import sys

import pytest

from casekit import BAD_INPUTS, BY_CLAIM, DEMO, REPO, UNCAPPED, base_doc, to_toml
from tenure import cli


def _run(capsys, *argv):
    code = cli.main([str(a) for a in argv])
    out, err = capsys.readouterr()
    return code, out, err


def _subprocess(*argv):
    env = dict(os.environ, PYTHONIOENCODING="utf-8")
    return subprocess.run([sys.executable, "-m", "tenure.cli", *map(str, argv)], capture_output=True, text=True,
                          encoding="utf-8", cwd=REPO, env=env, timeout=120)


# ---------------------------------------------------------------------------
# check
# ---------------------------------------------------------------------------
def test_check_on_the_demo_prints_the_summary_and_exits_0(capsys):
    code, out, err = _run(capsys, "check", DEMO)
    assert code == 0 and err == ""
    assert "Quillmere Hollow public works fleet renewal" in out
    assert "units: 78 in 49 inventory rows; types: 7; classes: 4" in out
    assert "limit: refuse-truck at most 4 purchases per year" in out
    assert out.rstrip().endswith("case is valid.")


def test_check_on_the_uncapped_demo_says_uncapped(capsys):
    code, out, _ = _run(capsys, "check", UNCAPPED)
    assert code == 0
    assert "units: 12 in 9 inventory rows" in out and "budget: none (uncapped)" in out


def test_check_summary_counts_units_by_class(capsys):
    _, out, _ = _run(capsys, "check", DEMO)
    lines = {ln.split()[0]: ln.split() for ln in out.splitlines() if ln and not ln.startswith(" ")}
    assert lines["refuse-truck"][-1] == "24" and lines["transit-bus"][-1] == "18"
    assert lines["utility-pickup"][-1] == "28" and lines["street-sweeper"][-1] == "8"


@pytest.mark.parametrize("bad", BAD_INPUTS, ids=[b.claim for b in BAD_INPUTS])
def test_bad_input_exits_2_and_names_the_field_on_stderr(bad, tmp_path, capsys):
    code, out, err = _run(capsys, "check", bad.write(tmp_path))
    assert code == 2
    assert f": {bad.path}: " in err and bad.allowed in err
    assert "problem(s):" in err.splitlines()[0]
    assert "Traceback" not in err and "Traceback" not in out
    assert "case is valid" not in out


def test_every_problem_is_printed_once_per_line(tmp_path, capsys):
    doc = base_doc()
    doc["study"]["horizon"] = 0
    doc["asset_type"][0]["price"] = -1
    doc["unit"][1]["age"] = -3
    path = tmp_path / "case.toml"
    path.write_text(to_toml(doc), encoding="utf-8")
    code, _, err = _run(capsys, "check", path)
    lines = err.splitlines()
    assert code == 2 and lines[0] == "tenure check: the case has 3 problem(s):"
    assert len(lines) == 4 and all(ln.startswith(f"  {path}: ") for ln in lines[1:])


def test_missing_case_file_exits_2(tmp_path, capsys):
    code, _, err = _run(capsys, "check", tmp_path / "nowhere.toml")
    assert code == 2 and "no such case file" in err


def test_no_command_prints_help_and_exits_2(capsys):
    code, out, _ = _run(capsys)
    assert code == 2 and "usage: tenure" in out


# ---------------------------------------------------------------------------
# a real process: no traceback reaches the user
# ---------------------------------------------------------------------------
def test_module_run_of_check_on_the_demo_exits_0():
    r = _subprocess("check", DEMO)
    assert r.returncode == 0 and "case is valid." in r.stdout and r.stderr == ""


@pytest.mark.parametrize("claim", ["TOML syntax error is reported with its line", "missing inventory CSV is refused",
                                   "bad inventory CSV row names its row number", "negative price is refused"])
def test_module_run_on_bad_input_exits_2_without_a_traceback(claim, tmp_path):
    bad = BY_CLAIM[claim]
    r = _subprocess("check", bad.write(tmp_path))
    assert r.returncode == 2
    assert bad.path in r.stderr and "Traceback" not in r.stderr + r.stdout


def test_module_run_with_an_unknown_type_exits_2_without_a_traceback():
    r = _subprocess("life", UNCAPPED, "--type", "pu-gas")
    assert r.returncode == 2 and "did you mean 'pu-gasoline'" in r.stderr and "Traceback" not in r.stderr


# ---------------------------------------------------------------------------
# life
# ---------------------------------------------------------------------------
def test_life_json_parses(capsys):
    code, out, _ = _run(capsys, "life", UNCAPPED, "--type", "pu-gasoline", "--json")
    d = json.loads(out)
    assert code == 0 and d["type"] == "pu-gasoline" and len(d["rows"]) == 9
    assert 1 <= d["economic_life"] <= 9 and d["band"][0] <= d["economic_life"] <= d["band"][1]


def test_life_json_first_row_is_the_hand_computed_one_year_eac(capsys):
    # pu-gasoline (demo data): 51,500 · 1.05 − 41,200 · 1.008 + 6,100 = 12,545.40 + 6,100 = 18,645.40
    _, out, _ = _run(capsys, "life", UNCAPPED, "--type", "pu-gasoline", "--json")
    assert json.loads(out)["rows"][0]["eac_total"] == pytest.approx(18645.40, abs=1e-6)


def test_life_table_text_marks_the_economic_life(capsys):
    code, out, _ = _run(capsys, "life", UNCAPPED, "--type", "rt-diesel")
    assert code == 0 and "◆ least EAC" in out and "economic life" in out


def test_life_unknown_type_exits_2_with_a_suggestion(capsys):
    code, out, err = _run(capsys, "life", UNCAPPED, "--type", "rt-disel")
    assert code == 2 and out == ""
    assert "--type 'rt-disel'" in err and "did you mean 'rt-diesel'" in err and "(types: " in err


@pytest.mark.parametrize("value", ["1.5", "-0.1"])
def test_life_tolerance_outside_0_1_exits_2(value, capsys):
    code, _, err = _run(capsys, "life", UNCAPPED, "--tolerance", value)
    assert code == 2 and "--tolerance" in err and "[0, 1)" in err


def test_life_bad_case_exits_2(tmp_path, capsys):
    code, _, err = _run(capsys, "life", BY_CLAIM["negative price is refused"].write(tmp_path))
    assert code == 2 and "asset_type[1].price" in err


# ---------------------------------------------------------------------------
# plan
# ---------------------------------------------------------------------------
def test_plan_on_the_uncapped_demo_writes_its_three_files(tmp_path, capsys):
    out_dir = tmp_path / "out"
    code, out, err = _run(capsys, "plan", UNCAPPED, "--out", out_dir, "--quiet")
    assert code == 0, err
    for name in ("plan.json", "units.csv", "years.csv"):
        assert (out_dir / name).is_file(), name
    json.loads((out_dir / "plan.json").read_text(encoding="utf-8"))
    with (out_dir / "years.csv").open(newline="", encoding="utf-8") as fh:
        years = [r["year"] for r in csv.DictReader(fh) if r["year"].isdigit()]
    assert years == [str(y) for y in range(2027, 2057)]  # one row per planning year 2027 … 2056
    assert "present cost" in out and "Traceback" not in err


def test_plan_bad_option_exits_2(tmp_path, capsys):
    code, _, err = _run(capsys, "plan", UNCAPPED, "--out", tmp_path / "o", "--gap", "2")
    assert code == 2 and "--gap" in err
