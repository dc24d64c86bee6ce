"""Benchmark of the capped fleet layer against the plain cohort program handed straight to HiGHS.

Fleets are invented (``benchmarks/fleetgen.py``): seeded, 30 years, a cap in every year at the
uncapped plan's average yearly purchase spend (``capped_case``), gross basis; ``demo`` is the demo case
file itself. For each size:

* **this layer** — the whole ``tenure plan CASE --out DIR`` run in a subprocess on a case file
  written to a temporary folder (TOML for the types and budget, CSV for the inventory), so start-up,
  loading, solving and writing every output are all inside the wall time. The solver's own times
  come from ``plan.json`` ``stats``: ``first_plan_seconds``, ``gap_history`` (seconds, gap), ``seconds``
  and the final ``gap``; they are counted from the start of the solve.
* **plain MIP** — in this process, ``fleet.build_program`` → the same arrays handed to HiGHS as an
  integer program (``passModel``, 2 threads, no start solution, no fix-and-relax, ``mip_rel_gap`` 0),
  with a time limit. The clock starts before ``build_program``. Incumbents are recorded with
  ``fleet.watch_improvements`` and the bound's progress with HiGHS's ``cbMipInterrupt`` callback;
  every gap is taken against the better of HiGHS's dual bound and the LP bound of the same program
  (solved beforehand, off the clock), which is the bound the layer reports against.

Usage::

    python benchmarks/bench_fleet.py                 # the demo and every fleet of SIZES, both methods (~15 min)
    python benchmarks/bench_fleet.py --quick         # without the plain runs on 10,000 units
    python benchmarks/bench_fleet.py --sizes 250,1000 --no-write

The markdown table is printed and written to ``docs/benchmarks-fleet.md`` (unless ``--no-write``), in
place of the file's method and results; the dated sections after the results are kept.
"""

from __future__ import annotations

import argparse
import csv
import datetime as _dt
import json
import math
import os
import platform
import subprocess
import sys
import tempfile
import time
from importlib import metadata
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
REPO = HERE.parent
sys.path.insert(0, str(HERE))

from fleetgen import capped_case, invented_fleet  # noqa: E402

from benchinfo import cpu_model
from tenure import fleet  # noqa: E402
from tenure.case import build_case, load_case  # noqa: E402

#: name -> (units, classes, seed, horizon [years], layer time limit [s], plain time limit [s])
#: Seeds are fixed. At a cap of the average yearly spend some seeds give fleets whose forced
#: replacements cannot fit (seed 7 at 100 units has an infeasible LP), so the 100-unit fleet uses
#: the first seed whose capped case has a plan (seed 2).  The limits follow the issue-10 targets:
#: 30 s of solve where the target is a gap within 30 s; where it is a whole run within 60 s or
#: 120 s, a limit that leaves the start-up and the writing room inside it (50 s, 110 s).
SIZES = {
    "100": (100, 5, 2, 30, 30.0, 30.0),
    "250": (250, 20, 7, 30, 30.0, 30.0),
    "1000": (1000, 20, 7, 30, 30.0, 30.0),
    "1000-40y": (1000, 20, 7, 40, 50.0, 50.0),
    "1000-50y": (1000, 20, 7, 50, 50.0, 50.0),
    "10000-20": (10000, 20, 7, 30, 50.0, 50.0),
    "10000": (10000, 100, 7, 30, 110.0, 110.0),
}
#: the demo (cases/quillmere-fleet.toml, 78 units, 4 classes) runs at the default time limit (30 s),
#: and the plain program gets the same
DEMO = "demo"
DEMO_LIMITS = (30.0, 30.0)
DEFAULT_SIZES = "demo,100,250,1000,1000-40y,1000-50y,10000-20,10000"
#: issue 10's acceptance per fleet: (gap, seconds, what the seconds count). "solve": a proven gap of at
#: most ``gap`` first reached within ``seconds`` of solve; "whole": a final gap of at most ``gap`` and the
#: whole run within ``seconds``; "optimal": status optimal (proven within the default 1e-4) and the whole
#: run within ``seconds``
ACCEPTANCE = {
    DEMO: (1e-4, 10.0, "optimal"),
    "250": (1e-4, 30.0, "solve"),
    "1000": (1e-4, 30.0, "solve"),
    "1000-40y": (5e-4, 60.0, "whole"),
    "1000-50y": (5e-4, 60.0, "whole"),
    "10000-20": (5e-4, 60.0, "whole"),
    "10000": (5e-4, 120.0, "whole"),
}
#: proven gaps whose first times are tabled: 0.05 % and 0.01 %
TARGETS = (0.0005, 0.0001)


# ---------------------------------------------------------------------------
# writing a case file
# ---------------------------------------------------------------------------
def _toml_value(v) -> str:
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, (int, float)):
        return repr(v)
    if isinstance(v, str):
        return json.dumps(v)
    if isinstance(v, list):
        return "[" + ", ".join(_toml_value(x) for x in v) + "]"
    if isinstance(v, dict):
        return "{ " + ", ".join(f"{k} = {_toml_value(x)}" for k, x in v.items()) + " }"
    raise TypeError(v)


def write_case(doc: dict, folder: Path) -> Path:
    """``case.toml`` (study, types, budget, limits) plus ``fleet.csv`` (the inventory) in ``folder``."""
    lines = ["format = 1", "", "[study]"]
    lines += [f"{k} = {_toml_value(v)}" for k, v in doc["study"].items()]
    for t in doc["asset_type"]:
        lines += ["", "[[asset_type]]"] + [f"{k} = {_toml_value(v)}" for k, v in t.items()]
    if "budget" in doc:
        lines += ["", "[budget]"] + [f"{k} = {_toml_value(v)}" for k, v in doc["budget"].items()]
    for lim in doc.get("limit", []):
        lines += ["", "[[limit]]"] + [f"{k} = {_toml_value(v)}" for k, v in lim.items()]
    lines += ["", "[fleet]", 'file = "fleet.csv"', ""]
    with open(folder / "fleet.csv", "w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh, lineterminator="\n")
        w.writerow(("id", "type", "age"))
        for u in doc["unit"]:
            w.writerow((u["id"], u["type"], u["age"]))
    path = folder / "case.toml"
    path.write_text("\n".join(lines), encoding="utf-8")
    return path


# ---------------------------------------------------------------------------
# gap bookkeeping
# ---------------------------------------------------------------------------
def first_time_at(history, target: float):
    """First time [s] in ``[(t, gap), …]`` at which the gap is ≤ target (None if never)."""
    for t, g in history:
        if g <= target + 1e-12:
            return float(t)
    return None


# ---------------------------------------------------------------------------
# this layer: the whole CLI run
# ---------------------------------------------------------------------------
def run_plan(path: Path, out: Path, time_limit: float, extra=()) -> tuple[int, float, str, dict | None]:
    """``tenure plan PATH --out OUT --quiet --time-limit T [extra]`` in a subprocess: its exit code, wall
    time [s], stderr and plan.json (None when it wrote none: exit 3 with no plan at all).  Exit codes
    other than 0 and 3 raise."""
    cmd = [sys.executable, "-m", "tenure.cli", "plan", str(path), "--out", str(out), "--quiet",
           "--time-limit", str(time_limit)] + list(extra)
    t0 = time.perf_counter()
    r = subprocess.run(cmd, capture_output=True, text=True, encoding="utf-8",
                       env=dict(os.environ, PYTHONIOENCODING="utf-8"))
    wall = time.perf_counter() - t0
    if r.returncode not in (0, 3):
        raise RuntimeError(f"tenure plan failed ({r.returncode}):\n{r.stderr[-2000:]}")
    plan_file = out / "plan.json"
    plan = json.loads(plan_file.read_text(encoding="utf-8")) if plan_file.exists() else None
    return r.returncode, wall, r.stderr, plan


def run_layer(doc: dict | Path, time_limit: float, workdir: Path, extra: list | None = None) -> dict:
    """The whole run on ``doc`` (a case document, written to ``workdir`` first, or a case file's path)."""
    path = doc if isinstance(doc, Path) else write_case(doc, workdir)
    rc, wall, _, plan = run_plan(path, workdir / "out", time_limit, extra or ())
    if plan is None:  # exit 3 with no plan at all (no plan found, even with extra capital)
        return {"status": "no plan", "wall": wall, "solve": None, "first": None, "t1": None, "t05": None,
                "gap": None, "cost": None, "columns": None, "rows": None, "exit": rc}
    st = plan.get("stats", {})
    hist = st.get("gap_history", [])
    return {
        "status": plan["status"],
        "wall": wall,
        "solve": st.get("seconds"),
        "first": st.get("first_plan_seconds"),
        "t1": first_time_at(hist, TARGETS[0]),
        "t05": first_time_at(hist, TARGETS[1]),
        "gap": plan["gap"] if plan["status"] != "infeasible" else None,
        "cost": plan.get("present_cost"),
        "columns": st.get("columns"),
        "rows": st.get("rows"),
        "exit": rc,
    }


# ---------------------------------------------------------------------------
# the plain cohort program: straight to HiGHS
# ---------------------------------------------------------------------------
def _silent_highs():
    return fleet.new_highs()  # a quiet HiGHS instance (its banner muted)


def lp_bound(case) -> float:
    prog = fleet.build_program(case)
    h = _silent_highs()
    h.setOptionValue("threads", 2)
    h.passModel(prog.n_cols, prog.n_rows, len(prog.a_value), 1, 1, 0.0, prog.cost, prog.lower, prog.upper,
                prog.row_lower, prog.row_upper, prog.a_start, prog.a_index, prog.a_value,
                np.zeros(prog.n_cols, dtype=np.int32))
    h.run()
    if h.modelStatusToString(h.getModelStatus()) != "Optimal":
        raise RuntimeError("the LP relaxation is not optimal: pick a seed whose capped case is feasible")
    return float(h.getInfo().objective_function_value)


def run_plain(case, time_limit: float, bound: float) -> dict:
    t0 = time.perf_counter()
    prog = fleet.build_program(case)
    h = _silent_highs()
    h.setOptionValue("threads", 2)
    h.setOptionValue("time_limit", float(time_limit))
    h.setOptionValue("mip_rel_gap", 0.0)
    h.passModel(prog.n_cols, prog.n_rows, len(prog.a_value), 1, 1, 0.0, prog.cost, prog.lower, prog.upper,
                prog.row_lower, prog.row_upper, prog.a_start, prog.a_index, prog.a_value,
                np.ones(prog.n_cols, dtype=np.int32))
    improving: list = []
    fleet.watch_improvements(h, t0, improving, bound)
    progress: list = []

    def on_interrupt(e):  # the bound moves between incumbents; sample (time, gap) when the gap changes
        try:
            obj = float(e.data_out.mip_primal_bound)
            if not math.isfinite(obj) or abs(obj) >= 1e30:
                return
            bnd = max(float(e.data_out.mip_dual_bound), bound)
            g = max(0.0, (obj - bnd) / max(abs(obj), 1e-9))
            if not progress or g < progress[-1][1] - 1e-12:
                progress.append([round(time.perf_counter() - t0, 3), g])
        except Exception:
            pass

    try:
        h.cbMipInterrupt.subscribe(on_interrupt)
    except AttributeError:
        pass
    h.run()
    total = time.perf_counter() - t0
    info = h.getInfo()
    have = info.primal_solution_status == 2
    final = None
    if have:
        obj = float(info.objective_function_value)
        final = max(0.0, (obj - max(float(info.mip_dual_bound), bound)) / max(abs(obj), 1e-9))
    hist = sorted(improving + progress + ([[round(total, 3), final]] if final is not None else []))
    return {
        "status": h.modelStatusToString(h.getModelStatus()),
        "wall": total,
        "first": float(improving[0][0]) if improving else (hist[0][0] if hist else None),
        "t1": first_time_at(hist, TARGETS[0]),
        "t05": first_time_at(hist, TARGETS[1]),
        "gap": final,
    }


# ---------------------------------------------------------------------------
# machine and table
# ---------------------------------------------------------------------------
def machine() -> dict:
    cpu = cpu_model()
    try:
        cores = len(os.sched_getaffinity(0))
    except AttributeError:
        cores = os.cpu_count()

    def ver(name):
        try:
            return metadata.version(name)
        except metadata.PackageNotFoundError:
            return "?"

    return {"cpu": cpu, "cores": cores, "python": platform.python_version(), "numpy": ver("numpy"),
            "highspy": ver("highspy"), "date": _dt.date.today().isoformat(), "os": platform.platform()}


def _s(x) -> str:
    return "—" if x is None else f"{x:.1f}"


def _g(x) -> str:
    return "—" if x is None else f"{100 * x:.3f} %"


def acceptance(name: str, result: dict | None) -> str:
    """Issue 10's target for fleet ``name`` (``ACCEPTANCE``) and whether ``result`` (a layer or plain
    row; a plain run's whole time is its solve) meets it; "—" for a fleet without one."""
    if name not in ACCEPTANCE:
        return "—"
    gap, seconds, kind = ACCEPTANCE[name]
    label = {"optimal": f"optimal ≤ {seconds:g} s whole run", "solve": f"≤ {100 * gap:g} % in {seconds:g} s",
             "whole": f"≤ {100 * gap:g} % in {seconds:g} s whole run"}[kind]
    if result is None:
        return label
    wall = result["wall"]
    if kind == "optimal":
        met = str(result["status"]).lower() == "optimal" and wall <= seconds
    elif kind == "solve":
        reached = result["t05"] if gap == TARGETS[1] else result["t1"]
        met = reached is not None and reached <= seconds
    else:
        met = result["gap"] is not None and result["gap"] <= gap + 1e-12 and wall <= seconds
    return f"{label}: {'met' if met else '**not met**'}"


def table(rows: list[dict], m: dict) -> str:
    out = [f"Machine: {m['cpu']}, {m['cores']} cores available; Python {m['python']}, numpy {m['numpy']}, "
           f"highspy {m['highspy']}; {m['os']}; run {m['date']}.", "",
           "| fleet | program (columns × rows) | method | status | first plan [s] | ≤ 0.05 % [s] | ≤ 0.01 % [s] | final gap "
           "| solve [s] | whole run [s] | outside the solve [s] | target (issue 10) |",
           "|---|---|---|---|---|---|---|---|---|---|---|---|"]
    for r in rows:
        size = (f"demo, {r['units']} units / {r['classes']} classes / {r['horizon']} years" if r["name"] == DEMO else
                f"{r['units']:,} units / {r['classes']} classes / {r['horizon']} years (seed {r['seed']})")
        prog = f"{r['columns']:,} × {r['rows']:,}" if r.get("columns") else "—"
        L = r["layer"]
        out.append(f"| {size} | {prog} | tenure plan (whole run) | {L['status']} | {_s(L['first'])} | {_s(L['t1'])} "
                   f"| {_s(L['t05'])} | {_g(L['gap'])} | {_s(L['solve'])} | {_s(L['wall'])} "
                   f"| {_s(None if L['solve'] is None else L['wall'] - L['solve'])} | {acceptance(r['name'], L)} |")
        P = r.get("plain")
        if P is None:
            out.append(f"| {size} | {prog} | plain MIP ({r['plain_limit']:.0f} s) | not run | | | | | | | | |")
        else:
            out.append(f"| {size} | {prog} | plain MIP ({r['plain_limit']:.0f} s) | {P['status']} | {_s(P['first'])} "
                       f"| {_s(P['t1'])} | {_s(P['t05'])} | {_g(P['gap'])} | {_s(P['wall'])} | — | — "
                       f"| {acceptance(r['name'], P)} |")
    return "\n".join(out)


def history_of(path: Path) -> str:
    """The sections of an earlier results file after its results table (the dated sections that
    record how the figures came about), kept when the file is rewritten; "" when there are none."""
    if not path.exists():
        return ""
    text = path.read_text(encoding="utf-8")
    at = text.find("\n## Results\n")
    nxt = text.find("\n## ", at + 1) if at >= 0 else -1
    return text[nxt + 1:] if nxt >= 0 else ""


METHOD = """\
# Benchmark: capped fleet plans

Produced by `python benchmarks/bench_fleet.py{flags}` (about 15 minutes on 2 cores, most of it the
plain runs' time limits); rerun it to refresh this file.

**Fleets.** Invented, seeded fleets from `benchmarks/fleetgen.py` (`invented_fleet`), 30 planning
years, 5 % real rate, salvage end value; each class has an incumbent type and every other class a
newer type arriving later with a falling price. The cap is the same in every year, at the uncapped
plan's average yearly purchase spend (`capped_case`, gross basis), so it binds in the years of
forced and clustered replacements. The seed is fixed per size; at this cap some seeds give fleets
whose forced replacements cannot fit at all, and the 100-unit fleet uses seed 2 for that reason.

**This layer.** The whole `tenure plan CASE --out DIR --quiet --time-limit T` run in a subprocess
(T = {layer_limits}), on a case file written to a temporary folder (TOML plus the inventory as CSV):
start-up, loading, the solve and writing every output (plan.json, units.csv, years.csv, report.html,
plan.xlsx) are inside *whole run*; *outside the solve* is whole run less solve, nearly all of it the
writing of report.html and plan.xlsx on the larger fleets. *Solve*, *first plan*, and the times to
0.05 % and 0.01 % are the solver's own, from `plan.json` `stats` (`seconds`, `first_plan_seconds`,
`gap_history`), counted from the start of the solve; the default stopping gap of 0.01 % applies, so
the layer stops once it is below it. The gap is proven: present cost against the better of the LP
bound and the MIP solver's dual bound.

**Plain MIP.** The same cohort-flow program (`fleet.build_program`) handed to HiGHS as an integer
program directly (`passModel`, 2 threads, no start solution, no fix-and-relax, gap target 0) with the
time limit shown; the clock starts before `build_program`, and *solve* is the whole time used. It
does not stop at 0.01 %, so its final gap is the one at its time limit. Incumbents are recorded with
`fleet.watch_improvements`, the bound's progress with HiGHS's `cbMipInterrupt` callback, and every
gap is taken against the better of HiGHS's dual bound and the same LP bound (computed beforehand,
off the clock). "—" means not reached or not applicable.

**The demo** (`cases/quillmere-fleet.toml`, 78 units, 4 classes, caps in nominal money) runs at the
default time limit, 30 s, and its plain program gets the same.

Targets (issue 10): the demo optimal (proven within 0.01 %) within 10 s whole run at the default
settings; 250 and 1,000 units / 20 classes ≤ 0.01 % within 30 s; 10,000 units / 100 classes ≤ 0.05 %
within 120 s whole run; 10,000 units / 20 classes and 1,000 units at 40 and 50 years ≤ 0.05 % within
60 s whole run. The last column applies each fleet's target to each run (a plain run's whole time is
its solve). One run per row, so a result near its target can go either way in another run (the
dated sections below give the spread).
"""


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--sizes", default=DEFAULT_SIZES, help=f"comma-separated fleet names ({DEFAULT_SIZES})")
    ap.add_argument("--quick", action="store_true", help="skip the 300 s plain MIP on 10,000 units")
    ap.add_argument("--no-plain", action="store_true", help="only this layer")
    ap.add_argument("--no-write", action="store_true", help="print the table only")
    ap.add_argument("--out", default=str(REPO / "docs" / "benchmarks-fleet.md"))
    args = ap.parse_args(argv)
    sizes = [s.strip() for s in args.sizes.split(",") if s.strip()]
    rows = []
    unknown = [n for n in sizes if n != DEMO and n not in SIZES]
    if unknown:
        ap.error(f"--sizes: {', '.join(unknown)}: allowed are {DEMO}, {', '.join(SIZES)}")
    for n in sizes:
        if n == DEMO:
            doc = REPO / "cases" / "quillmere-fleet.toml"
            case = load_case(doc)
            layer_limit, plain_limit = DEMO_LIMITS
            units, classes = sum(u.count for u in case.units), len({t.class_ for t in case.types})
            seed, horizon = None, case.study.horizon
        else:
            units, classes, seed, horizon, layer_limit, plain_limit = SIZES[n]
            doc = capped_case(invented_fleet(units, classes, seed=seed, horizon=horizon))
            case = build_case(doc)
        print(f"== {n}: {units:,} units / {classes} classes / {horizon} years"
              + ("" if seed is None else f" (seed {seed})"), file=sys.stderr, flush=True)
        row = {"name": n, "units": units, "classes": classes, "seed": seed, "horizon": horizon,
               "plain_limit": plain_limit}
        with tempfile.TemporaryDirectory(prefix=f"bench-fleet-{n}-") as tmp:
            row["layer"] = run_layer(doc, layer_limit, Path(tmp))
        row["columns"], row["rows"] = row["layer"]["columns"], row["layer"]["rows"]
        print(f"   layer: {row['layer']}", file=sys.stderr, flush=True)
        run_it = not args.no_plain and not (args.quick and units >= 10000)
        if run_it:
            bound = lp_bound(case)
            row["plain"] = run_plain(case, plain_limit, bound)
            print(f"   plain: {row['plain']}", file=sys.stderr, flush=True)
        else:
            row["plain"] = None
        rows.append(row)
    m = machine()
    text = table(rows, m)
    print(text)
    if not args.no_write:
        flags = "".join(f for f, on in ((" --quick", args.quick), (" --no-plain", args.no_plain),
                                         (f" --sizes {args.sizes}", args.sizes != DEFAULT_SIZES)) if on)
        limits = ", ".join(f"{(DEMO_LIMITS if n == DEMO else SIZES[n][4:])[0]:.0f} s for {n}" for n in sizes)
        history = history_of(Path(args.out))
        doc = METHOD.format(flags=flags, layer_limits=limits) + "\n## Results\n\n" + text + "\n"
        Path(args.out).write_text(doc + ("\n" + history if history else ""), encoding="utf-8")
        print(f"\nwritten to {args.out}", file=sys.stderr)
    return 0


if __name__ == "__main__":
    sys.exit(main())
