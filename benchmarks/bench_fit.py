"""Benchmark of ``tenure fit``: 1,000 units × 10 years of monthly cost records (120,000 rows).

Run:  python benchmarks/bench_fit.py

An invented case (4 types, 1,000 units aged 10 … 19 at the start of 2027) and seeded records:
one cost record per unit and month, 2017-01 … 2026-12, and 2,000 sales.  Times the whole command as
a user runs it (``tenure.cli.main``: read and validate, prepare, fit, render fitted.toml, fit.json and
fit.html, write the set), and separately reading + fitting only (``fit_case``); median of 3 runs
each.  Prints a markdown table with the machine and date.  Target: under 10 s.
"""

from __future__ import annotations

import os

for _v in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_v, "1")

import datetime as _dt
import platform
import statistics
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

from benchinfo import cpu_model
from tenure import cli, curves
from tenure.case import load_case
from tenure.fit import fit_case

SEED = 14
START = 2027
TYPES = (("hauler", "gradient", 30000, 3500), ("loader", "growth", 22000, 0.07),
         ("van", "gradient", 6000, 900), ("mower", "growth", 4000, 0.09))


def make(folder: Path) -> Path:
    rng = np.random.default_rng(SEED)
    blocks = []
    for tid, form, first, second in TYPES:
        om = f"{{ first = {first}, {form} = {second} }}"
        blocks.append(f'[[asset_type]]\nid = "{tid}"\nclass = "{tid}"\nprice = {first * 9}\nmax_age = 25\n'
                      f"om = {om}\nsalvage = {{ retain = 0.85 }}\n")
    (folder / "case.toml").write_text(
        f'[study]\ntitle = "invented benchmark fleet"\nstart_year = {START}\nhorizon = 10\ndiscount_rate = 0.05\n\n'
        + "\n".join(blocks) + '\n[fleet]\nfile = "fleet.csv"\n', encoding="utf-8")
    ids = [f"U{j:04d}" for j in range(1000)]
    types = [TYPES[j % 4][0] for j in range(1000)]
    ages = rng.integers(10, 20, 1000)
    (folder / "fleet.csv").write_text("id,type,age\n" + "".join(f"{i},{t},{a}\n" for i, t, a in zip(ids, types, ages)))
    case = load_case(folder / "case.toml")
    lines = ["unit,date,amount\n"]
    for i, t, a in zip(ids, types, ages):
        ty = case.type(t)
        for year in range(START - 10, START):
            s = year - (START - a) + 1
            annual = curves.om_base(ty.om, s) * rng.lognormal(-0.02, 0.2)
            monthly = annual / 12 * rng.lognormal(-0.045, 0.3, 12)
            lines += [f"{i}#1,{year}-{m + 1:02d}-15,{v:.2f}\n" for m, v in enumerate(monthly)]
    (folder / "costs.csv").write_text("".join(lines))
    sales = ["type,year,age,price\n"]
    for _ in range(2000):
        t = case.type(TYPES[int(rng.integers(4))][0])
        age = float(rng.uniform(0.5, 20))
        sales.append(f"{t.id},{int(rng.integers(START - 10, START))},{age:.2f},"
                     f"{t.price * 0.85 ** age * rng.lognormal(0, 0.12):.0f}\n")
    (folder / "sales.csv").write_text("".join(sales))
    return folder / "case.toml"


def median_time(fn, runs: int = 3) -> float:
    times = []
    for _ in range(runs):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return statistics.median(times)


def main() -> None:
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        case_path = make(folder)
        rows = sum(1 for _ in open(folder / "costs.csv")) - 1
        argv = ["fit", str(case_path), "--costs", str(folder / "costs.csv"), "--sales", str(folder / "sales.csv"),
                "--inflation", "0.02", "--out", str(folder / "out")]
        import contextlib
        import io

        def command():
            with contextlib.redirect_stdout(io.StringIO()):
                assert cli.main(argv) == 0

        case = load_case(case_path)
        whole = median_time(command)
        fit_only = median_time(lambda: fit_case(case, [folder / "costs.csv"], folder / "sales.csv"))
    print(f"tenure fit benchmark — {_dt.date.today().isoformat()}, {cpu_model()}, "
          f"Python {platform.python_version()} on {platform.system()}, {os.cpu_count()} logical CPUs (shared)\n")
    print("| what | rows | median of 3 [s] | target |")
    print("| --- | ---: | ---: | --- |")
    print(f"| `tenure fit` command (read, validate, fit, write fitted.toml, fit.json, fit.html) | {rows:,} | "
          f"{whole:.2f} | < 10 s |")
    print(f"| `fit_case` only (read, validate, prepare, fit) | {rows:,} | {fit_only:.2f} | — |")


if __name__ == "__main__":
    sys.exit(main())
