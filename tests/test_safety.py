"""Hostile but realistic inputs and faults (issue 11): exit 0/2/3, one clear message, never a traceback.

The failures of the issue are a table (FAILURES): each runs ``tenure`` in-process and checks the exit code
and that the message names the file or field, the value and what is allowed.  Spreadsheet safety follows
OWASP's CSV-injection guidance; the plausibility warnings are facts of the trade (common practice).
The cases are the tiny made-up case of tests/casekit.py and the invented demo.
"""

from __future__ import annotations

import copy
import csv
import io
import json
import os
from pathlib import Path

import openpyxl
import pytest

from casekit import DEMO, UNCAPPED, base_doc, to_toml
from tenure import cli
from tenure.case import build_case
from tenure.plausibility import Warning, case_warnings
from tenure.report import files, tables
from tenure.report.transaction import OutputFolder, verify


def _write(tmp_path: Path, doc: dict, name: str = "case.toml") -> Path:
    p = tmp_path / name
    p.write_text(to_toml(doc), encoding="utf-8")
    return p


def _doc(**study) -> dict:
    d = base_doc()
    d["study"].update(study)
    return d


def _typed(j: int, **fields) -> dict:
    d = base_doc()
    d["asset_type"][j].update(fields)
    return d


def _units(n: int) -> dict:
    d = base_doc()
    d["unit"][0]["count"] = n
    return d


def _scenario_bad_path() -> dict:
    d = base_doc()
    d["scenario"] = [{"id": "late", "set": {"asset_type.van.prize": 41000}},
                     {"id": "cheap", "set": {"asset_type.cart.price": -1.0}}]  # a second problem, same run
    return d


def _scenario_bad_value() -> dict:
    d = base_doc()
    d["scenario"] = [{"id": "dear", "set": {"study.discount_rate": 7.0}}]
    return d


def _uncertain_bad() -> dict:
    d = base_doc()
    d["uncertain"] = [{"path": "asset_type.van.price", "dist": "uniform", "low": -5.0, "high": 50000.0}]
    return d


def _no_buyable_and_other() -> dict:
    d = base_doc()
    d["asset_type"][0]["buy_until"] = 2031
    d["asset_type"][1]["salvage"] = {"retain": 2.0}
    return d


# (claim, argv builder(tmp_path) -> argv, exit code, texts that must all be on stderr)
FAILURES = [
    ("price of 1e15 is refused", lambda t: ["check", _write(t, _typed(0, price=1e15))], 2,
     ["asset_type[1].price", "= 1000000000000000.0", "≤ 1e12"]),
    ("price of 1e308 is refused", lambda t: ["check", _write(t, _typed(0, price=1e308))], 2,
     ["asset_type[1].price", "1e+308", "≤ 1e12"]),
    ("O&M growth of 1e6 is refused", lambda t: ["check", _write(t, _typed(0, om={"first": 3000.0, "growth": 1e6}))],
     2, ["asset_type[1].om.growth", "1000000.0", "< 1"]),
    ("price_change of 0.5 over 200 years is refused",
     lambda t: ["check", _write(t, {**_typed(0, price_change=0.5), "study": {**base_doc()["study"], "horizon": 200}})],
     2, ["asset_type[1].price_change", "0.5", "×1000"]),
    ("a discount rate of -0.99 is refused", lambda t: ["check", _write(t, _doc(discount_rate=-0.99))], 2,
     ["study.discount_rate", "-0.99", "×1000"]),
    ("a discount rate of 1e308 is refused", lambda t: ["check", _write(t, _doc(discount_rate=1e308))], 2,
     ["study.discount_rate", "1e+308", "< 1"]),
    ("a unit count of 1e8 is refused", lambda t: ["check", _write(t, _units(100_000_000))], 2,
     ["unit[1].count", "100000000", "[1, 200000]"]),
    ("a scenario override path is checked by check",
     lambda t: ["check", _write(t, _scenario_bad_path())], 2,
     ["scenario late", "asset_type.van.prize", "nearest valid path", "scenario cheap: asset_type[2].price", "-1.0"]),
    ("a scenario override value is checked by check", lambda t: ["check", _write(t, _scenario_bad_value())], 2,
     ["scenario dear", "study.discount_rate", "7.0"]),
    ("an uncertain input's ends are checked by check", lambda t: ["check", _write(t, _uncertain_bad())], 2,
     ["uncertain[1] low", "asset_type[1].price", "-5"]),
    ("a class with no buyable type is reported with other problems",
     lambda t: ["check", _write(t, _no_buyable_and_other())], 2,
     ["class 'van'", "2032", "asset_type[2].salvage.retain", "2.0"]),
    ("a directory as the case is called a directory", lambda t: ["check", t], 2, ["file: is a directory, not a case file"]),
    ("/dev/null as the case is not a regular file", lambda t: ["check", "/dev/null"], 2,
     ["/dev/null", "not a regular file"]),
    ("a directory as the inventory CSV is called a directory",
     lambda t: ["check", _write(t, {**{k: v for k, v in base_doc().items() if k != "unit"},
                                    "fleet": {"file": "inv"}}) if (t / "inv").mkdir() is None else None], 2,
     ["fleet.file", "'inv'", "is a directory"]),
    ("--out on a file is refused before any work",
     lambda t: ["plan", UNCAPPED, "--out", (t / "f").write_text("x") and t / "f"], 2,
     ["--out", "/f", "is a file, not a folder"]),
    ("--out under /proc is refused", lambda t: ["plan", UNCAPPED, "--out", "/proc/tenure-out"], 2,
     ["/proc/tenure-out", "system folder"]),
    ("--out /dev/null is refused", lambda t: ["plan", UNCAPPED, "--out", "/dev/null"], 2, ["/dev/null", "system"]),
    ("compare --out on a file is refused",
     lambda t: ["compare", DEMO, "--out", (t / "f").write_text("x") and t / "f"], 2, ["--out", "is a file"]),
    ("sweep --out on a file is refused",
     lambda t: ["sweep", DEMO, "--samples", "2", "--out", (t / "f").write_text("x") and t / "f"], 2,
     ["--out", "is a file"]),
    ("a folder in the way of an output name is refused",
     lambda t: ["plan", UNCAPPED, "--out", t / "o"] if (t / "o" / "plan.json").mkdir(parents=True) is None
     else None, 2, ["plan.json", "is a directory"]),
    ("--time-limit nan is refused", lambda t: ["plan", UNCAPPED, "--out", t / "o", "--time-limit", "nan"], 2,
     ["--time-limit nan", "(0, 1e6]"]),
    ("compare --time-limit inf is refused", lambda t: ["compare", DEMO, "--time-limit", "inf"], 2,
     ["--time-limit inf"]),
    ("--cluster notanaddress is refused at once", lambda t: ["compare", DEMO, "--cluster", "notanaddress"], 2,
     ["--cluster 'notanaddress'", "tcp://"]),
    ("a TOML file with a BOM is read", lambda t: ["check", _bom(t)], 0, []),
    ("a valid case passes check", lambda t: ["check", UNCAPPED], 0, []),
]


def _bom(tmp_path: Path) -> Path:
    p = tmp_path / "bom.toml"
    p.write_bytes(b"\xef\xbb\xbf" + to_toml(base_doc()).encode("utf-8"))
    return p


@pytest.mark.parametrize("claim,argv,code,texts", FAILURES, ids=[f[0] for f in FAILURES])
def test_every_failure_gives_its_exit_code_and_a_message_naming_it(claim, argv, code, texts, tmp_path, capsys):
    args = [str(a) for a in argv(tmp_path)]
    got = cli.main(args)
    out, err = capsys.readouterr()
    assert got == code, (claim, out, err)
    assert "Traceback" not in out + err
    for t in texts:
        assert t in err, (claim, t, err)
    if code == 2 and "--out" in args and "/proc" not in args[-1]:
        # nothing of a refused run is left behind
        o = Path(args[args.index("--out") + 1])
        assert not (o / ".tenure").exists()


def test_an_unreadable_case_or_csv_is_named_with_the_reason(tmp_path, capsys, monkeypatch):
    case = _write(tmp_path, base_doc())
    real = Path.read_bytes

    def denied(self):
        if self == case:
            raise PermissionError(13, "Permission denied", str(self))
        return real(self)

    monkeypatch.setattr(Path, "read_bytes", denied)
    assert cli.main(["check", str(case)]) == 2
    err = capsys.readouterr().err
    assert f"{case}: file: cannot be read: permission denied" in err


def test_a_write_error_partway_is_one_message_and_leaves_the_earlier_set(tmp_path, capsys, monkeypatch):
    out = tmp_path / "o"
    assert cli.main(["plan", str(UNCAPPED), "--out", str(out), "--quiet"]) == 0
    before = json.loads((out / "manifest.json").read_text())["run_id"]
    real = files._write_bytes

    def full(path, data):
        if path.name == "plan.xlsx":
            raise OSError(28, "No space left on device", str(path))
        return real(path, data)

    monkeypatch.setattr(files, "_write_bytes", full)
    capsys.readouterr()
    assert cli.main(["plan", str(UNCAPPED), "--out", str(out), "--quiet"]) == 2
    err = capsys.readouterr().err
    assert "plan.xlsx: no space left on the device" in err and "Traceback" not in err
    assert json.loads((out / "manifest.json").read_text())["run_id"] == before
    assert verify(out) == []
    assert [p.name for p in (out / ".tenure" / "sets").iterdir()] == [before]


# ---------------------------------------------------------------------------
# the output transaction
# ---------------------------------------------------------------------------
def _plan(out: Path, capsys) -> str:
    assert cli.main(["plan", str(UNCAPPED), "--out", str(out), "--quiet"]) == 0
    capsys.readouterr()
    return json.loads((out / "manifest.json").read_text())["run_id"]


def test_one_run_id_in_every_file_and_a_manifest_of_sizes_and_checksums(tmp_path, capsys):
    out = tmp_path / "o"
    (tmp_path / "o").mkdir()
    (out / "notes.txt").write_text("mine")
    rid = _plan(out, capsys)
    manifest = json.loads((out / "manifest.json").read_text())
    names = {e["name"] for e in manifest["files"]}
    assert names == {"plan.json", "units.csv", "years.csv", "buy-list.csv", "report.html", "plan.xlsx"}
    assert json.loads((out / "plan.json").read_text())["run_id"] == rid
    assert f'<code id="run-id">{rid}</code>' in (out / "report.html").read_text()
    ws = openpyxl.load_workbook(out / "plan.xlsx")["summary"]
    assert [r[1] for r in ws.iter_rows(values_only=True) if r[0] == "run id"] == [rid]
    import hashlib

    for e in manifest["files"]:
        data = (out / e["name"]).read_bytes()
        assert len(data) == e["size"] and hashlib.sha256(data).hexdigest() == e["sha256"]
    rid2 = _plan(out, capsys)
    assert rid2 != rid and verify(out) == []
    assert (out / "notes.txt").read_text() == "mine"  # not tenure's: left alone
    assert sorted(p.name for p in (out / ".tenure" / "sets").iterdir()) == [rid2]


def test_files_of_an_older_tenure_are_adopted_without_a_mixed_instant(tmp_path, capsys):
    out = tmp_path / "o"
    out.mkdir()
    (out / "plan.json").write_text('{"old": true}')
    (out / "report.html").write_text("old report")
    with OutputFolder(out, "plan"):  # adoption happens under the lock, before anything is rendered
        assert json.loads((out / "plan.json").read_text()) == {"old": True}
        assert (out / "plan.json").is_symlink() and (out / "report.html").read_text() == "old report"
        assert verify(out) == []  # the adopted set has its own manifest
    rid = _plan(out, capsys)
    assert json.loads((out / "plan.json").read_text())["run_id"] == rid and verify(out) == []


def test_a_second_run_at_a_locked_folder_refuses_at_once(tmp_path, capsys):
    out = tmp_path / "o"
    with OutputFolder(out, "plan") as first:
        assert cli.main(["plan", str(UNCAPPED), "--out", str(out), "--quiet"]) == 2
        err = capsys.readouterr().err
        assert "another tenure run is writing to this folder" in err and f"run {first.run_id}" in err
        assert f"pid {os.getpid()}" in err


def test_an_out_folder_whose_parents_are_missing_is_created_with_them(tmp_path, capsys):
    """The README's first command writes to out/quillmere in a fresh clone, where out/ does not exist."""
    out = tmp_path / "out" / "fleet" / "2027"
    rid = _plan(out, capsys)
    assert verify(out) == [] and json.loads((out / "plan.json").read_text())["run_id"] == rid


def test_a_refused_run_leaves_no_folders_it_made(tmp_path, monkeypatch):
    out = tmp_path / "new" / "deeper"

    def no_lock(self):
        raise OSError(37, "No locks available")

    monkeypatch.setattr(OutputFolder, "_lock", no_lock)
    with pytest.raises(Exception, match="No locks available"):
        with OutputFolder(out, "plan"):
            pass
    assert not (tmp_path / "new").exists()


def test_a_run_that_gives_up_leaves_the_lock_of_a_run_that_holds_it(tmp_path):
    """Run A made .tenure, then gave up without committing, while run B (started beside it) took the
    lock: A must not remove the lock file B holds, or a third run could lock a new file beside B."""
    import fcntl

    out = tmp_path / "o"
    a = OutputFolder(out, "plan").__enter__()
    a._release()
    fd = os.open(out / ".tenure" / "lock", os.O_RDWR)
    fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)  # B holds it
    try:
        a.__exit__(None, None, None)
        assert (out / ".tenure" / "lock").exists()
    finally:
        os.close(fd)
    a2 = OutputFolder(tmp_path / "p", "plan").__enter__()
    a2.__exit__(None, None, None)
    assert not (tmp_path / "p").exists()  # alone, a run that gives up leaves nothing it made


def test_a_state_folder_made_by_a_run_starting_at_the_same_instant_is_shared(tmp_path, monkeypatch):
    """Two runs starting together both find .tenure missing; the one whose mkdir comes second must
    take the folder the other made (and then meet its lock), not fail on "File exists"."""
    out = tmp_path / "o"
    out.mkdir()
    real_mkdir = Path.mkdir

    def raced_mkdir(self, *args, **kwargs):
        if self.name == ".tenure":
            real_mkdir(self, *args, **kwargs)  # the other run got there first
            raise FileExistsError(17, "File exists", str(self))
        return real_mkdir(self, *args, **kwargs)

    monkeypatch.setattr(Path, "mkdir", raced_mkdir)
    with OutputFolder(out, "plan") as folder:
        assert folder.state.is_dir() and (folder.state / "sets").is_dir()
    monkeypatch.undo()
    assert (out / ".tenure").is_dir()  # not ours to remove: the run that made it may be using it


def test_a_compare_set_replaces_a_plan_set_whole(tmp_path, capsys):
    out = tmp_path / "o"
    _plan(out, capsys)
    assert cli.main(["compare", str(DEMO), "--scenario", "high-rate", "--out", str(out), "--quiet"]) in (0, 3)
    capsys.readouterr()
    assert not (out / "plan.json").exists() and not (out / "plan.json").is_symlink()
    rid = json.loads((out / "manifest.json").read_text())["run_id"]
    assert json.loads((out / "compare.json").read_text())["run_id"] == rid and verify(out) == []


# ---------------------------------------------------------------------------
# spreadsheet safety: OWASP, "CSV Injection" (owasp.org/www-community/attacks/CSV_Injection)
# ---------------------------------------------------------------------------
def _formula_case() -> dict:
    d = base_doc()
    d["study"]["title"] = '=HYPERLINK("http://example.invalid","x")'
    d["asset_type"][0]["class"] = "=1+1"
    d["unit"][0]["id"] = "@SUM(A1)"
    d["unit"][1]["id"] = "-2+3"
    return d


def test_no_input_text_becomes_a_formula_in_the_spreadsheet_or_the_csv(tmp_path, capsys):
    case = _write(tmp_path, _formula_case())
    out = tmp_path / "o"
    assert cli.main(["plan", str(case), "--out", str(out), "--quiet"]) == 0
    wb = openpyxl.load_workbook(out / "plan.xlsx")
    cells = [c for ws in wb for row in ws.iter_rows() for c in row if isinstance(c.value, str)]
    starts = [c for c in cells if c.value.startswith(("=", "@", "-2+3"))]
    assert {c.value for c in starts} >= {'=HYPERLINK("http://example.invalid","x")', "=1+1", "@SUM(A1)", "-2+3"}
    assert all(c.data_type == "s" for c in starts)  # text, never "f" (formula)
    rows = list(csv.DictReader(io.StringIO((out / "units.csv").read_text())))
    assert {r["unit"].split("#")[0] for r in rows} == {"'@SUM(A1)", "'-2+3"}
    assert {r["class"] for r in rows} == {"'=1+1", "cart"}


def test_csv_neutralising_follows_owasp():
    # OWASP: a cell beginning with =, +, -, @, tab or carriage return gets a leading single quote
    assert [tables.safe_text(x) for x in ("=A1", "+1", "-1", "@x", "\tx", "\rx", "bus", "", 5, None)] == \
        ["'=A1", "'+1", "'-1", "'@x", "'\tx", "'\rx", "bus", "", 5, None]


def test_json_output_never_holds_nan_or_infinity(tmp_path, capsys):
    assert json.loads(files.dumps({"a": float("inf"), "b": [float("nan"), 1.5]})) == {"a": None, "b": [None, 1.5]}
    assert cli.main(["life", str(UNCAPPED), "--json"]) == 0
    text = capsys.readouterr().out
    assert "Infinity" not in text and "NaN" not in text
    json.loads(text, parse_constant=lambda c: pytest.fail(f"non-JSON constant {c}"))


# ---------------------------------------------------------------------------
# plausibility warnings (common practice: used units are worth less than new ones, O&M rises with age,
# real discount rates lie in 0–20 % a year)
# ---------------------------------------------------------------------------
def _codes(doc) -> list[str]:
    return [w.code for w in case_warnings(build_case(doc))]


def test_each_plausibility_warning_fires_on_its_mistake_and_not_on_the_tiny_case():
    assert _codes(base_doc()) == []
    # a cart bought for 9,000 and sold a year later for 9,500: a profit every year, so the economic life is 1
    assert _codes(_typed(1, salvage=[9500.0, 8000.0, 7000.0])) == ["market-value-above-price", "economic-life-1"]
    assert _codes(_typed(1, om=[500.0, 600.0, 700.0, 800.0, 900.0])) == ["om-list-too-long"]
    assert _codes(_typed(1, om=[800.0, 700.0, 700.0, 900.0])) == ["om-falling"]
    assert _codes(_typed(0, om={"first": 3000.0, "gradient": -100.0})) == ["om-falling"]
    assert _codes(_doc(discount_rate=0.25)) == ["discount-rate"]
    assert _codes(_doc(discount_rate=-0.01))[0] == "discount-rate"
    # price 1,000, O&M rising by 20,000 a year: keeping a second year costs far more than buying again
    # (hand: EAC(1) = 1000·1.05 − 800 + 100 = 350; EAC(2) > 20,000/2)
    assert _codes(_typed(0, price=1000.0, om={"first": 100.0, "gradient": 20000.0})) == ["economic-life-1"]


def test_a_warning_is_a_frozen_record_with_code_place_and_message():
    (w,) = case_warnings(build_case(_doc(discount_rate=0.3)))
    assert w == Warning("discount-rate", "study.discount_rate", w.message) and "0–20 %" in w.message
    with pytest.raises(AttributeError):
        w.code = "x"


def test_duplicate_csv_columns_are_refused_with_the_column_named(tmp_path, capsys):
    # a duplicated column is refused, not warned about: only one of the two could be read (tabular.py)
    (tmp_path / "inv.csv").write_text("id,type,age,age\nV1,van,2,3\n")
    d = {k: v for k, v in base_doc().items() if k != "unit"}
    d["fleet"] = {"file": "inv.csv"}
    case = _write(tmp_path, d)
    assert cli.main(["check", str(case)]) == 2
    err = capsys.readouterr().err
    assert "inv.csv" in err and "header" in err and "'age' appears twice" in err


def test_warnings_in_check_plan_and_report(tmp_path, capsys):
    d = base_doc()
    d["study"]["discount_rate"] = 0.3
    case = _write(tmp_path, d)
    assert cli.main(["check", str(case)]) == 0
    out = capsys.readouterr().out
    assert "warning: study.discount_rate: = 0.3" in out
    assert out.rstrip().endswith("case is valid (the warnings above do not stop a run).")
    assert cli.main(["plan", str(case), "--out", str(tmp_path / "o"), "--quiet"]) == 0
    assert "warning: study.discount_rate: = 0.3" in capsys.readouterr().out
    page = (tmp_path / "o" / "report.html").read_text()
    assert "Warnings about the case" in page and "outside the usual 0–20 %" in page
    ws = openpyxl.load_workbook(tmp_path / "o" / "plan.xlsx")["warnings"]
    assert [r[0] for r in ws.iter_rows(min_row=2, values_only=True)] == ["discount-rate"]


def test_bounds_leave_the_demo_cases_valid(capsys):
    for case in (DEMO, UNCAPPED):
        assert cli.main(["check", str(case)]) == 0
    capsys.readouterr()


def test_the_size_limit_counts_every_unit(tmp_path):
    d = base_doc()
    d["unit"] = [{"id": f"U{j}", "type": "van", "age": 1, "count": 100_000} for j in range(3)]
    from tenure.case import CaseError

    with pytest.raises(CaseError) as exc:
        build_case(copy.deepcopy(d))
    assert any("300,000 units" in p.message and "200,000" in p.message for p in exc.value.problems)
