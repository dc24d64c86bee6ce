"""Where the time of ``tenure plan CASE --out DIR --quiet`` goes: start-up, solve and each writer.

Fleets are the invented ones of ``bench_fleet.py`` (``fleetgen.invented_fleet``, seed 7, 30 years):
250 units / 20 classes, 1,000 / 20, 10,000 / 20 and 10,000 / 100, each without a cap and with the
cap of ``fleetgen.capped_case`` (the uncapped plan's average yearly spend, gross), solved at the plan
command's defaults (gap 1e-4) with the time limits of ``bench_fleet.py``. Each run is one fresh
process (``writing_stages.py``) that takes the command's steps one by one and times each; the
uncapped runs are also timed as the whole command (``CLI wall``).

``--before SRC`` runs the same stages once more with another checkout's ``src`` folder first on the
path (e.g. the code before the writer changes), on the fleets named by ``--before-sizes``, so the
before/after figures come from one run of this script.

Usage::

    python benchmarks/bench_writing.py                         # every fleet (~6 min)
    python benchmarks/bench_writing.py --sizes 1000-u,1000-c --no-write
    python benchmarks/bench_writing.py --before /tmp/old/src    # and the old writers on the uncapped fleets

The table is printed and written to ``docs/benchmarks-writing.md`` (unless ``--no-write``).
"""

from __future__ import annotations

import argparse
import datetime as _dt
import json
import os
import platform
import subprocess
import sys
import tempfile
import time
from importlib import metadata
from pathlib import Path

HERE = Path(__file__).resolve().parent
REPO = HERE.parent
sys.path.insert(0, str(HERE))

from bench_fleet import write_case  # noqa: E402
from benchinfo import cpu_model  # noqa: E402
from fleetgen import capped_case, invented_fleet  # noqa: E402

#: name -> (units, classes, capped, time limit [s]); seed 7 and 30 years throughout (bench_fleet.py)
SIZES = {
    "250-u": (250, 20, False, 30.0), "250-c": (250, 20, True, 30.0),
    "1000-u": (1000, 20, False, 30.0), "1000-c": (1000, 20, True, 30.0),
    "10000x20-u": (10000, 20, False, 60.0), "10000x20-c": (10000, 20, True, 60.0),
    "10000-u": (10000, 100, False, 120.0), "10000-c": (10000, 100, True, 120.0),
}
SEED = 7
WRITERS = ("plan.json", "units.csv", "years.csv", "buy-list.csv", "html charts", "html page", "xlsx policy",
           "xlsx sheets")
COLUMNS = ("start-up", "load", "solve") + WRITERS + ("transaction",)
NOTES = "<!-- notes: kept when the script rewrites this file -->"


def run_stages(case_path: Path, out: Path, time_limit: float, src: str | None = None) -> dict:
    env = dict(os.environ, PYTHONIOENCODING="utf-8")
    if src:
        env["PYTHONPATH"] = src + os.pathsep + env.get("PYTHONPATH", "")
    r = subprocess.run([sys.executable, str(HERE / "writing_stages.py"), str(case_path), str(out), str(time_limit)],
                       capture_output=True, text=True, env=env)
    if r.returncode != 0:
        raise RuntimeError(f"writing_stages.py failed:\n{r.stderr[-2000:]}")
    return json.loads(r.stdout.strip().splitlines()[-1])


def run_cli(case_path: Path, out: Path, time_limit: float) -> float:
    t0 = time.perf_counter()
    r = subprocess.run([sys.executable, "-m", "tenure.cli", "plan", str(case_path), "--out", str(out), "--quiet",
                        "--time-limit", str(time_limit)], capture_output=True, text=True)
    if r.returncode not in (0, 3):
        raise RuntimeError(f"tenure plan failed:\n{r.stderr[-2000:]}")
    return time.perf_counter() - t0


def _row(name: str, t: dict, wall: float | None) -> list[str]:
    writing = sum(t.get(k, 0.0) for k in WRITERS) + t.get("transaction", 0.0)
    cells = [name, str(t.get("status", ""))] + [f"{t.get(k, 0.0):.2f}" for k in COLUMNS]
    ratio = writing / t["solve"] if t.get("solve") else float("nan")
    return cells + [f"{writing:.2f}", f"{ratio:.2f}", "—" if wall is None else f"{wall:.1f}"]


def table(rows: list[list[str]]) -> str:
    head = ["fleet", "status"] + [f"{c} [s]" for c in COLUMNS] + ["writing [s]", "writing / solve", "CLI wall [s]"]
    out = ["| " + " | ".join(head) + " |", "|" + "---|" * len(head)]
    out += ["| " + " | ".join(r) + " |" for r in rows]
    return "\n".join(out)


def label(name: str) -> str:
    units, classes, capped, _ = SIZES[name]
    return f"{units:,} / {classes} {'capped' if capped else 'uncapped'}"


def machine() -> str:
    vers = ", ".join(f"{p} {metadata.version(p)}" for p in ("numpy", "matplotlib", "highspy", "openpyxl"))
    return (f"Machine: {cpu_model()}, {os.cpu_count()} cores; Python {platform.python_version()}, {vers}; "
            f"{platform.platform()}; {_dt.date.today().isoformat()}.")


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--sizes", default=",".join(SIZES))
    ap.add_argument("--before", default=None, help="a src folder to time the same stages with (before/after)")
    ap.add_argument("--before-sizes", default="1000-u,1000-c,10000x20-u,10000-u")
    ap.add_argument("--no-write", action="store_true")
    args = ap.parse_args(argv)
    after, before = [], []
    with tempfile.TemporaryDirectory() as tmp:
        for name in args.sizes.split(","):
            units, classes, capped, limit = SIZES[name]
            doc = invented_fleet(units, classes, SEED)
            doc = capped_case(doc) if capped else doc
            folder = Path(tmp) / name
            folder.mkdir()
            case = write_case(doc, folder)
            t = run_stages(case, folder / "out", limit)
            wall = None if capped else run_cli(case, folder / "cli", limit)
            after.append(_row(label(name), t, wall))
            print("after ", " | ".join(after[-1]), flush=True)
            if args.before and name in args.before_sizes.split(","):
                t = run_stages(case, folder / "before", limit, src=args.before)
                before.append(_row(label(name), t, None))
                print("before", " | ".join(before[-1]), flush=True)
    text = [table(after)]
    if before:
        text += ["", "Before (the same stages with the writers of `--before`, in the same run):", "", table(before)]
    print("\n".join(text))
    if not args.no_write:
        write_doc("\n".join(text), after, before)
    return 0


def write_doc(tables_md: str, after, before) -> None:
    doc = REPO / "docs" / "benchmarks-writing.md"
    old = doc.read_text(encoding="utf-8") if doc.exists() else ""
    body = old[old.index(NOTES):] if NOTES in old else ""   # the reading of the table is kept
    text = ("# Benchmark: where the time of `tenure plan` goes\n\n" + machine() + " Timings were taken on a "
            "shared machine (2 cores shared with other workers, commands under `nice -n 10`), one run each; "
            "expect a few tenths of a second of noise on every figure.\n\n"
            "`python benchmarks/bench_writing.py" + (" --before OLD/src" if before else "") + "` — the invented "
            "fleets of `bench_fleet.py` (seed 7, 30 years), each without and with the cap of "
            "`fleetgen.capped_case`, solved at the plan command's defaults (gap 1e-4; time limit 30 s, 60 s at "
            "10,000 / 20, 120 s at 10,000 / 100). Every run is one fresh process timing the command's steps "
            "(`benchmarks/writing_stages.py`): start-up (imports), load (read and check the case), solve "
            "(`api.solve`, the graph build included), one column per file (report.html as its charts and the "
            "rest of the page; plan.xlsx as the uncapped recursion its policy sheet shows and the sheets), and "
            "the transaction (lock, manifest with sha256, switch). *writing* is the sum of the file columns and "
            "the transaction; *CLI wall* is the whole `tenure plan CASE --out DIR --quiet` command, timed "
            "separately.\n\n" + tables_md + "\n" + ("\n" + body if body else ""))
    doc.write_text(text, encoding="utf-8")


if __name__ == "__main__":
    sys.exit(main())
