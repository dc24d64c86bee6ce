"""Benchmark of the coupling rules: the 1,000-unit benchmark fleet under a share-of-buys target and an
emission cap, on top of its yearly capital cap.

The fleet is ``fleetgen.invented_fleet(1000, 20, seed 7)`` with the cap of ``bench_fleet.py``
(``capped_case``: the uncapped plan's average yearly spend). Added here, all invented:

* emissions: incumbent types ``first = price/20,000`` t per unit-year (falling 1 % per vintage),
  newer types a tenth of that;
* a ``[[target]]``: ``share_of_buys`` of the newer types from the year every newer type can be
  bought, in the classes that have one;
* an ``[[emission_cap]]``: either one cap from year 15 on at a fraction of the cap-only plan's
  tonnes that year, or one cap a year from year 10 on, each at a fraction of that year's tonnes
  (the capital cap leaves little room to cut emissions: one cap a year at 0.99, or one cap from
  year 15 at 0.97, has no plan, proven: the LP relaxation has no point).

Each case is run as ``tenure plan CASE --out DIR --quiet --time-limit 60`` in a subprocess (as in
``bench_fleet.py``); times come from ``plan.json`` ``stats``. Usage::

    python benchmarks/bench_rules.py            # prints the table and writes docs/benchmarks-rules.md
    python benchmarks/bench_rules.py --no-write
"""

from __future__ import annotations

import argparse
import sys
import tempfile
from pathlib import Path

HERE = Path(__file__).resolve().parent
REPO = HERE.parent
sys.path.insert(0, str(HERE))

from bench_fleet import _toml_value, machine, run_plan, write_case  # noqa: E402
from fleetgen import capped_case, invented_fleet  # noqa: E402

TIME_LIMIT = 60.0
#: (label, share_of_buys, emission-cap fraction of the cap-only plan's tonnes, "flat" or "yearly", capital cap)
RUNS = (("capital cap only", None, None, None, True),
        ("+ target 1.0", 1.0, None, None, True),
        ("+ emission cap 0.99 from year 15", None, 0.99, "flat", True),
        ("+ target 1.0 + emission cap 0.99 from year 15", 1.0, 0.99, "flat", True),
        ("+ target 1.0 + emission cap 0.98 from year 15", 1.0, 0.98, "flat", True),
        ("+ target 1.0 + emission cap 0.97 from year 15", 1.0, 0.97, "flat", True),
        ("+ target 1.0 + yearly emission caps 0.995 from year 10", 1.0, 0.995, "yearly", True),
        ("no capital cap, target 1.0 + yearly emission caps 0.97 from year 10", 1.0, 0.97, "yearly", False))


def with_emissions(doc: dict) -> dict:
    out = dict(doc)
    out["asset_type"] = []
    for t in doc["asset_type"]:
        t = dict(t)
        base = round(t["price"] / 20_000, 2)
        t["emissions"] = {"first": base, "change": -0.01} if t["id"].endswith("-a") else round(base / 10, 3)
        out["asset_type"].append(t)
    return out


def rules_case(doc: dict, share, cap_fraction, tonnes_by_year, form="yearly") -> tuple[dict, list[str]]:
    """The extra TOML blocks of one run (the emission caps by year index: :func:`caps_of`)."""
    newer = [t for t in doc["asset_type"] if t["id"].endswith("-b")]
    start = doc["study"]["start_year"]
    lines = []
    if share is not None:
        y = max(t["buy_from"] for t in newer)
        lines += ["", "[[target]]", 'name = "newer types"', f"types = {_toml_value([t['id'] for t in newer])}",
                  f"share_of_buys = {share}", f"from = {y}"]
    if cap_fraction is not None and form == "flat":
        lines += ["", "[[emission_cap]]", f"from = {start + 15}", f"tonnes = {round(cap_fraction * tonnes_by_year[15], 1)}"]
    elif cap_fraction is not None:
        for k in range(10, len(tonnes_by_year)):
            lines += ["", "[[emission_cap]]", f"from = {start + k}", f"until = {start + k}",
                      f"tonnes = {round(cap_fraction * tonnes_by_year[k], 1)}"]
    return doc, lines


def caps_of(cap_fraction, tonnes_by_year, form) -> dict[int, float]:
    """Year index → emission cap [t] of one run, as :func:`rules_case` writes them."""
    if cap_fraction is None:
        return {}
    if form == "flat":
        return {k: round(cap_fraction * tonnes_by_year[15], 1) for k in range(15, len(tonnes_by_year))}
    return {k: round(cap_fraction * tonnes_by_year[k], 1) for k in range(10, len(tonnes_by_year))}


def binding(r: dict, caps: dict, tonnes_by_year) -> dict:
    """How much the cap-only plan's tonnes exceed the caps (> 0: the cap binds) and how many tonnes
    the run's plan emits less than the cap-only plan in the capped years [t]."""
    out = {"over": sum(max(0.0, tonnes_by_year[k] - c) for k, c in caps.items()) if caps else None}
    if caps and r.get("tonnes"):
        out["cut"] = sum(tonnes_by_year[k] - r["tonnes"][k] for k in caps)
        out["worst"] = max(r["tonnes"][k] - c for k, c in caps.items())
    return out


def run(doc: dict, extra: list[str], workdir: Path) -> dict:
    path = write_case(doc, workdir)
    path.write_text(path.read_text(encoding="utf-8") + "\n".join(extra) + "\n", encoding="utf-8")
    res = run_layer_from(path, workdir)
    return res


def run_layer_from(path: Path, workdir: Path) -> dict:
    rc, wall, stderr, plan = run_plan(path, workdir / "out", TIME_LIMIT)
    if plan is None:
        msg = stderr.strip()[-300:]
        # "no plan meets …" is the rule check's proven verdict (the LP relaxation has no point);
        # anything else is a search that ran out of time
        status = "infeasible (proven)" if "no plan meets" in msg else "no plan found (not proven)"
        return {"status": status, "wall": wall, "message": msg}
    st = plan.get("stats", {})
    t05 = next((t for t, g in st.get("gap_history", []) if g <= 0.005 + 1e-12), None)
    return {"status": plan["status"], "wall": wall, "solve": st.get("seconds"), "first": st.get("first_plan_seconds"),
            "t05": t05, "gap": plan.get("gap"), "columns": st.get("columns"), "rows": st.get("rows"),
            "method": (plan.get("provenance") or {}).get("method", plan.get("method")),
            "tonnes": [y["tonnes"] for y in plan["years"]]}


def table(rows, m) -> str:
    head = ["run", "status", "first plan [s]", "≤ 0.5 % gap at [s]", "final gap", "solve [s]", "wall [s]",
            "cap-only plan over the caps [t]", "cut vs cap-only plan [t]", "columns", "rows", "method"]
    out = ["| " + " | ".join(head) + " |", "|" + "---|" * len(head)]
    for label, r in rows:
        def f(x, fmt="{:.1f}"):
            return "—" if x is None else fmt.format(x)
        out.append(f"| {label} | {r['status']} | {f(r.get('first'))} | {f(r.get('t05'))} | "
                   f"{f(r.get('gap'), '{:.3%}')} | {f(r.get('solve'))} | {f(r.get('wall'))} | "
                   f"{f(r.get('over'))} | {f(r.get('cut'))} | "
                   f"{r.get('columns', '—')} | {r.get('rows', '—')} | {r.get('method', '')} |")
    return "\n".join(out)


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--no-write", action="store_true")
    args = ap.parse_args(argv)
    from tenure.case import build_case
    from tenure.solve import solve

    doc = with_emissions(capped_case(invented_fleet(1000, 20, 7)))
    base = solve(build_case(doc), time_limit=TIME_LIMIT)
    tonnes = [y.tonnes for y in base.years]
    rows = []
    for label, share, frac, form, capped in RUNS:
        d = doc if capped else {k: v for k, v in doc.items() if k != "budget"}
        d, extra = rules_case(d, share, frac, tonnes, form)
        with tempfile.TemporaryDirectory(prefix="tenure-bench-rules-") as tmp:
            r = run(d, extra, Path(tmp))
        r.update(binding(r, caps_of(frac, tonnes, form), tonnes))
        if r.get("worst") is not None and r["worst"] > 1e-6:
            raise RuntimeError(f"{label}: the plan exceeds an emission cap by {r['worst']:.3f} t")
        rows.append((label, r))
        print(label, {k: v for k, v in r.items() if k != "tonnes"}, file=sys.stderr, flush=True)
    m = machine()
    md = table(rows, m)
    text = (f"# Benchmark: coupling rules on the 1,000-unit fleet\n\n"
            f"Machine: {m['cpu']}, {m['cores']} cores; Python {m['python']}, numpy {m['numpy']}, highspy "
            f"{m['highspy']}; {m['os']}; {m['date']}.\n\n"
            "`python benchmarks/bench_rules.py` — the 1,000-unit, 20-class invented fleet of `bench_fleet.py` "
            "(seed 7, 30 years, gross cap at the uncapped plan's average yearly spend) with invented emissions; "
            "the target is `share_of_buys` of the newer types from the year every newer type can be bought; "
            "the emission cap is one cap from year 15 on (flat) or one cap a year from year 10 on (yearly), at "
            f"the stated fraction of the cap-only plan's tonnes. Each run is the whole `tenure plan` command, time limit {TIME_LIMIT:g} s, gap target 0.5 %. "
            "Times are from the start of the solve (`plan.json` stats); wall time includes start-up and "
            "writing every output.\n\n" + md + "\n")
    print(text)
    if not args.no_write:
        (REPO / "docs" / "benchmarks-rules.md").write_text(text, encoding="utf-8")
    return 0


if __name__ == "__main__":
    sys.exit(main())
