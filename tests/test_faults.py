"""Fault injection on the output folder (issue 11): SIGKILL, Ctrl-C and SIGTERM at seeded random instants, and
two runs at one folder.  After every fault the folder must hold exactly one complete set whose files agree:
every file listed in manifest.json has its size and sha256, plan.json, report.html and plan.xlsx carry the
manifest's run id, no tenure file outside the manifest is left, and a file that is not tenure's is untouched.

The checks here recompute the checksums with hashlib and read the run id from each file itself; they do not
call tenure's own ``verify``.  ``python tests/test_faults.py N`` runs a longer campaign of N faults and prints
the counts (docs/outputs.md quotes them).
"""

from __future__ import annotations

import hashlib
import json
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import openpyxl

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))
from casekit import DEMO, REPO, UNCAPPED  # noqa: E402

FOREIGN = "my-notes.txt"
TENURE_NAMES = ("plan.json", "units.csv", "years.csv", "buy-list.csv", "report.html", "plan.xlsx", "manifest.json", "compare.json",
                "compare.csv", "sweep.json", "sweep.csv", "sensitivity.csv")


def _start(out: Path, case: Path = UNCAPPED, quiet: bool = True) -> subprocess.Popen:
    env = dict(os.environ, PYTHONIOENCODING="utf-8")
    argv = [sys.executable, "-m", "tenure.cli", "plan", str(case), "--out", str(out)] + (["--quiet"] if quiet else [])
    return subprocess.Popen(argv, cwd=REPO, env=env, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)


def consistent(out: Path) -> list[str]:
    """What is wrong with the folder's set (empty: one complete set whose files agree)."""
    try:
        manifest = json.loads((out / "manifest.json").read_text(encoding="utf-8"))
    except (OSError, ValueError) as exc:
        return [f"manifest: {exc}"]
    rid, bad = manifest["run_id"], []
    listed = {e["name"] for e in manifest["files"]} | {"manifest.json"}
    for e in manifest["files"]:
        try:
            data = (out / e["name"]).read_bytes()
        except OSError as exc:
            bad.append(f"{e['name']}: {exc}")
            continue
        if len(data) != e["size"] or hashlib.sha256(data).hexdigest() != e["sha256"]:
            bad.append(f"{e['name']}: size or sha256 differs from the manifest")
    if "plan.json" in listed:
        if json.loads((out / "plan.json").read_text(encoding="utf-8")).get("run_id") != rid:
            bad.append("plan.json: another run id")
        if f'<code id="run-id">{rid}</code>' not in (out / "report.html").read_text(encoding="utf-8"):
            bad.append("report.html: another run id")
        ws = openpyxl.load_workbook(out / "plan.xlsx", read_only=True)["summary"]
        if [r[1] for r in ws.iter_rows(values_only=True) if r[0] == "run id"] != [rid]:
            bad.append("plan.xlsx: another run id")
    for n in TENURE_NAMES:
        if n not in listed and (out / n).exists():
            bad.append(f"{n}: not in the manifest")
    if (out / FOREIGN).read_text() != "not tenure's":
        bad.append("a foreign file was changed")
    return bad


def _reference(out: Path) -> tuple[float, float]:
    """One complete run into ``out``; returns (seconds until it locked the folder, seconds until it ended)."""
    t0 = time.perf_counter()
    p = _start(out)
    locked = None
    while p.poll() is None:
        if locked is None and any((out / ".tenure" / "sets").glob("*.part")):
            locked = time.perf_counter() - t0
        time.sleep(0.02)
    assert p.returncode == 0, p.stderr.read()
    return (locked or 0.0), time.perf_counter() - t0


def campaign(tmp: Path, faults: int, seed: int) -> dict:
    """``faults`` faults (SIGKILL, and every fourth one SIGINT or SIGTERM) at seeded instants spread from the
    start of a run to the end of its writing; returns the counts."""
    out = tmp / "out"
    out.mkdir()
    (out / FOREIGN).write_text("not tenure's")
    locked, total = _reference(out)
    rng = np.random.default_rng(seed)
    at = rng.uniform(max(0.0, locked - 1.0), total * 1.05, faults)  # from before the lock to after the end
    counts = {"faults": 0, "consistent": 0, "tracebacks": 0, "exit_codes": {}, "problems": []}
    for j, delay in enumerate(at):
        sig = (signal.SIGINT, signal.SIGTERM)[(j // 4) % 2] if j % 4 == 3 else signal.SIGKILL
        p = _start(out)
        time.sleep(delay)
        if p.poll() is None:
            p.send_signal(sig)
        _, err = p.communicate(timeout=120)
        counts["faults"] += 1
        counts["exit_codes"][p.returncode] = counts["exit_codes"].get(p.returncode, 0) + 1
        counts["tracebacks"] += "Traceback" in err
        if p.returncode in (130, 143):
            assert err.strip().count("\n") == 0 and "interrupted by SIG" in err, err
        problems = consistent(out)
        counts["consistent"] += not problems
        counts["problems"] += problems
    return counts


def test_kills_at_random_instants_always_leave_one_complete_consistent_set(tmp_path):
    c = campaign(tmp_path, faults=5, seed=11)
    assert c["faults"] == 5 and c["problems"] == [] and c["consistent"] == 5 and c["tracebacks"] == 0
    # −SIGINT/−SIGTERM: the signal came while Python itself was starting, before tenure ran (nothing written)
    assert set(c["exit_codes"]) <= {0, 130, 143, -signal.SIGKILL, -signal.SIGINT, -signal.SIGTERM}
    # the next run cleans what the killed ones left: one set, no staging folder
    p = _start(tmp_path / "out")
    assert p.wait(timeout=120) == 0
    assert len(list((tmp_path / "out" / ".tenure" / "sets").iterdir())) == 1


def test_two_plans_at_one_folder_never_mix(tmp_path):
    out = tmp_path / "out"
    out.mkdir()
    (out / FOREIGN).write_text("not tenure's")
    a, b = _start(out), _start(out)
    (_, ea), (_, eb) = a.communicate(timeout=120), b.communicate(timeout=120)
    codes = sorted([a.returncode, b.returncode])
    assert codes in ([0, 0], [0, 2]), (codes, ea, eb)
    if codes == [0, 2]:  # the second refused at once, saying why
        assert "another tenure run is writing to this folder" in (ea + eb)
    assert "Traceback" not in ea + eb
    assert consistent(out) == []


def test_an_interrupt_once_the_solve_has_begun_stops_it_writes_nothing_and_says_so(tmp_path):
    out = tmp_path / "out"
    out.mkdir()
    (out / FOREIGN).write_text("not tenure's")
    p = _start(out, DEMO)
    assert p.wait(timeout=300) in (0, 3)
    before = (out / "manifest.json").read_bytes()
    for sig, code in ((signal.SIGINT, 130), (signal.SIGTERM, 143)):
        p = _start(out, DEMO, quiet=False)
        seen = ""
        while "LP relaxation" not in seen and "cohort program" not in seen:  # the solve has begun
            line = p.stderr.readline()
            assert line, "the run ended before its solve"
            seen += line
        p.send_signal(sig)
        rest = p.stderr.read()
        assert p.wait(timeout=60) == code
        assert rest.count("\n") == 1 and "interrupted by" in rest and "Traceback" not in rest
        assert (out / "manifest.json").read_bytes() == before and consistent(out) == []
        assert not list((out / ".tenure" / "sets").glob("*.part"))


if __name__ == "__main__":  # a longer campaign for the record
    import tempfile

    n = int(sys.argv[1]) if len(sys.argv) > 1 else 30
    with tempfile.TemporaryDirectory() as d:
        c = campaign(Path(d), faults=n, seed=2026)
    print(f"faults tried: {c['faults']}; folders found consistent: {c['consistent']}; tracebacks: "
          f"{c['tracebacks']}; exit codes: {c['exit_codes']}")
    for prob in c["problems"]:
        print("  ", prob)
