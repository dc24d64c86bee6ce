"""Do the two back ends agree?  HiGHS and CBC on the benchmark fleets, the same command and time limit.

For each fleet of ``bench_fleet.SIZES`` (default: every one; about 15 minutes), ``tenure plan CASE --out DIR
--quiet --time-limit T --solver S`` is run in a subprocess for S = highs and cbc.  The two *agree* when
their statuses agree (both plans, optimal or feasible, or both the same verdict) and their costs are
within the larger of their proven gaps: ``|c_highs − c_cbc| ≤ max(gap_highs·c_highs, gap_cbc·c_cbc)``,
each gap being against that back end's own proven bound.  Usage::

    python benchmarks/bench_backends.py               # prints the table, writes docs/benchmarks-backends.md
    python benchmarks/bench_backends.py --sizes 100,250 --no-write
"""

from __future__ import annotations

import argparse
import sys
import tempfile
from pathlib import Path

HERE = Path(__file__).resolve().parent
REPO = HERE.parent
sys.path.insert(0, str(HERE))

from bench_fleet import SIZES, machine, run_layer  # noqa: E402
from fleetgen import capped_case, invented_fleet  # noqa: E402

DEFAULT = "100,250,1000,1000-40y,1000-50y,10000-20,10000"
SOLVERS = ("highs", "cbc")


def _plan(status: str) -> bool:
    return status in ("optimal", "feasible")


def agree(a: dict, b: dict) -> bool:
    """Statuses and costs within the gaps (see the module docstring)."""
    if _plan(a["status"]) != _plan(b["status"]):
        return False
    if not _plan(a["status"]):
        return a["status"] == b["status"]
    tol = max(a["gap"] * abs(a["cost"]), b["gap"] * abs(b["cost"]))
    return abs(a["cost"] - b["cost"]) <= tol + 0.01


def run(name: str, solver: str, folder: Path) -> dict:
    units, classes, seed, horizon, limit, _ = SIZES[name]
    doc = capped_case(invented_fleet(units, classes, seed=seed, horizon=horizon))
    r = run_layer(doc, limit, folder, extra=["--solver", solver])
    return {**r, "limit": limit}


def table(rows: list[dict], m: dict) -> str:
    out = ["# Benchmark: HiGHS and CBC on the same fleets", "",
           f"Machine: {m['cpu']}, {m['cores']} cores; Python {m['python']}, numpy {m['numpy']}, highspy "
           f"{m['highspy']}; {m['os']}; {m['date']}. One run per cell.", "",
           __doc__.split("Usage::")[0].strip(), "",
           "| fleet | limit [s] | HiGHS: status, cost, gap | CBC: status, cost, gap | cost difference | agree |",
           "|---|---|---|---|---|---|"]

    def cell(r):
        if not _plan(r["status"]):
            return r["status"]
        return f"{r['status']}, {r['cost']:,.0f}, {r['gap']:.3%}"

    for row in rows:
        h, c = row["highs"], row["cbc"]
        diff = (f"{abs(h['cost'] - c['cost']):,.0f}" if _plan(h["status"]) and _plan(c["status"]) else "—")
        out.append(f"| {row['name']} | {h['limit']:g} | {cell(h)} | {cell(c)} | {diff} | "
                   f"{'yes' if agree(h, c) else '**no**'} |")
    return "\n".join(out) + "\n"


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--sizes", default=DEFAULT)
    ap.add_argument("--no-write", action="store_true")
    args = ap.parse_args(argv)
    rows = []
    with tempfile.TemporaryDirectory(prefix="tenure-bench-") as tmp:
        for name in [s.strip() for s in args.sizes.split(",") if s.strip()]:
            row = {"name": name}
            for solver in SOLVERS:
                folder = Path(tmp) / f"{name}-{solver}"
                folder.mkdir()
                row[solver] = run(name, solver, folder)
                print(name, solver, row[solver], file=sys.stderr, flush=True)
            rows.append(row)
    text = table(rows, machine())
    print(text)
    if not args.no_write:
        (REPO / "docs" / "benchmarks-backends.md").write_text(text, encoding="utf-8")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
