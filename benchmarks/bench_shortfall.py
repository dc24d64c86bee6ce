"""Benchmark of the shortfall diagnosis: how fast a 300-unit fleet whose caps cannot be met is
diagnosed, and whether the extra capital reported is proven least.

The fleet is invented (``fleetgen.invented_fleet(300, 6, seed 11)``, 30 years, gross cap), in the
shape of a county road department's after years of deferred purchases: six classes, with a share
of each class's units overdue, i.e. older than their type's max age, so they must be sold at the
start.  Three runs:

* ``overdue over the first cap``: the overdue units alone cost more than the first year's cap, so the
  pre-check proves that no plan exists and the elastic program finds the least extra capital;
* ``tight caps``: no overdue unit, the cap at a fraction of the uncapped plan's average yearly spend
  that no plan meets, though no single year's forced purchases exceed it;
* both together.

Each run is ``tenure plan CASE --out DIR --quiet --time-limit T`` in a subprocess for T = 15 s and the
default 30 s; figures come from ``plan.json`` (``stats.shortfall_at_most`` / ``shortfall_at_least``
/ ``shortfall_least``).  Usage::

    python benchmarks/bench_shortfall.py            # prints the table, writes docs/benchmarks-shortfall.md
    python benchmarks/bench_shortfall.py --no-write
"""

from __future__ import annotations

import argparse
import copy
import sys
import tempfile
from pathlib import Path

HERE = Path(__file__).resolve().parent
REPO = HERE.parent
sys.path.insert(0, str(HERE))

from bench_fleet import machine, run_plan, write_case  # noqa: E402
from fleetgen import capped_case, invented_fleet  # noqa: E402

LIMITS = (15.0, 30.0)


def county(overdue: float, factor: float, seed: int = 11) -> dict:
    """The invented 300-unit fleet with the first ``overdue`` share of each class's units set two years
    past their max age, and the cap at ``factor`` × the uncapped plan's average yearly spend (of the
    fleet before the change)."""
    doc = copy.deepcopy(capped_case(invented_fleet(300, 6, seed=seed), factor))
    max_age = {t["id"]: int(t["max_age"]) for t in doc["asset_type"]}
    by_type: dict = {}
    for u in doc["unit"]:
        by_type.setdefault(u["type"], []).append(u)
    for t, units in by_type.items():
        for u in units[: round(overdue * len(units))]:
            u["age"] = max_age[t] + 2
    return doc


RUNS = (("overdue over the first cap", 0.3, 1.0), ("tight caps", 0.0, 0.55), ("overdue + tight caps", 0.3, 0.55))


def run(doc: dict, limit: float, folder: Path) -> dict:
    rc, wall, _, plan = run_plan(write_case(doc, folder), folder / "out", limit)
    if plan is None:  # no plan at all, even with extra capital, in the time
        return {"status": "no plan", "exit": rc, "wall": wall, "solve": None, "at_most": None,
                "at_least": None, "least": False, "precheck": None, "years": 0}
    st = plan.get("stats", {})
    return {"status": plan["status"], "exit": rc, "wall": wall, "solve": st.get("seconds"),
            "at_most": st.get("shortfall_at_most"), "at_least": st.get("shortfall_at_least"),
            "least": st.get("shortfall_least"), "precheck": bool(st.get("forced_over_caps")),
            "years": len(plan.get("shortfall", []))}


def _m(x) -> str:
    return "—" if x is None else f"{x:,.0f}"


def table(rows: list[dict], m: dict) -> str:
    out = ["# Benchmark: the shortfall diagnosis on a 300-unit fleet", "",
           f"Machine: {m['cpu']}, {m['cores']} cores; Python {m['python']}, numpy {m['numpy']}, highspy "
           f"{m['highspy']}; {m['os']}; {m['date']}. One run per row.", "",
           __doc__.split("Usage::")[0].strip().replace("\n\n", "\n\n"), "",
           "| run | time limit [s] | status (exit) | pre-check | shortfall years | extra capital at most | "
           "at least | proven least | solve [s] | wall [s] |", "|---|---|---|---|---|---|---|---|---|---|"]
    for r in rows:
        out.append(f"| {r['label']} | {r['limit']:g} | {r['status']} ({r['exit']}) | {'—' if r['precheck'] is None else ('yes' if r['precheck'] else 'no')} "
                   f"| {r['years']} | {_m(r['at_most'])} | {_m(r['at_least'])} | {'yes' if r['least'] else 'no'} "
                   f"| {'—' if r['solve'] is None else format(r['solve'], '.1f')} | {r['wall']:.1f} |")
    return "\n".join(out) + "\n"


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--no-write", action="store_true")
    args = ap.parse_args(argv)
    rows = []
    with tempfile.TemporaryDirectory(prefix="tenure-bench-") as tmp:
        for label, overdue, factor in RUNS:
            doc = county(overdue, factor)
            for limit in LIMITS:
                folder = Path(tmp) / f"{len(rows)}"
                folder.mkdir()
                r = run(doc, limit, folder)
                rows.append({"label": label, "limit": limit, **r})
                print(rows[-1], flush=True)
    text = table(rows, machine())
    print(text)
    if not args.no_write:
        (REPO / "docs" / "benchmarks-shortfall.md").write_text(text, encoding="utf-8")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
