"""One ``tenure plan`` run split into timed stages, in a fresh process (used by ``bench_writing.py``).

Run as ``python benchmarks/writing_stages.py CASE OUT TIME_LIMIT [GAP]``; prints one JSON object of seconds
per stage. The stages are the steps ``tenure.commands.single.cmd_plan`` takes, called one by one
with the same arguments, so the sum is the command's work without argument parsing:

* ``start-up``: importing what the command imports (the CLI, the API, the writers);
* ``load``, ``warnings``: reading and checking the case, the plausibility warnings;
* ``solve``: ``api.solve`` with the command's default gap (the graph build is inside it);
* one stage per file: ``plan.json``, ``units.csv``, ``years.csv``, ``buy-list.csv``; report.html as
  ``html charts`` (matplotlib SVGs) and ``html page`` (life tables, tables and template); plan.xlsx as
  ``xlsx policy`` (the uncapped recursion the policy sheet shows) and ``xlsx sheets`` (building and
  saving the workbook);
* ``transaction``: opening the output folder and the commit (manifest with sha256 of every file,
  the rename and the link switch).
"""

from __future__ import annotations

import contextlib
import io
import json
import sys
import time
from pathlib import Path

T0 = time.perf_counter()
from tenure import api, cli  # noqa: E402,F401  (the command imports both)
from tenure.commands.common import PLAN_NAMES, _warn  # noqa: E402
from tenure.report import buylist, documents, files, html, tables  # noqa: E402
from tenure.report.transaction import OutputFolder  # noqa: E402

GAP = 1e-4  # the plan command's default


def _timed(t: dict, name: str, fn):
    """``fn`` wrapped so that its time is added to ``t[name]`` (a step inside another stage)."""
    def inner(*a, **kw):
        s = time.perf_counter()
        try:
            return fn(*a, **kw)
        finally:
            t[name] = t.get(name, 0.0) + time.perf_counter() - s
    return inner


def stages(case_path: str, out: str, time_limit: float, gap: float = GAP) -> dict:
    t: dict = {"start-up": time.perf_counter() - T0}
    html.plan_charts = _timed(t, "html charts", html.plan_charts)
    documents.policies = _timed(t, "xlsx policy", documents.policies)

    def clock(name, fn, *a, **kw):
        s = time.perf_counter()
        r = fn(*a, **kw)
        t[name] = t.get(name, 0.0) + time.perf_counter() - s
        return r

    case = clock("load", api.load_case, case_path)
    with contextlib.redirect_stdout(io.StringIO()):
        warnings = clock("warnings", _warn, case)
    plan = clock("solve", api.solve, case, time_limit=time_limit, gap=gap)
    t["solver seconds"] = (plan.stats or {}).get("seconds")
    tx = clock("transaction", OutputFolder(Path(out), "plan", PLAN_NAMES).__enter__)
    try:
        d = tx.staging
        clock("plan.json", lambda: files.write_json(d / "plan.json", tables.plan_dict(plan, tx.run_id)))
        clock("units.csv", lambda: files.write_text(d / "units.csv", tables.units_csv(plan)))
        clock("years.csv", lambda: files.write_text(d / "years.csv", tables.years_csv(plan)))
        clock("buy-list.csv", lambda: files.write_text(d / "buy-list.csv", buylist.buy_list_csv(
            buylist.buy_list(plan, buylist.DEFAULT_YEARS, case.group_by))))
        page = clock("html page", documents.plan_html, plan, case, run_id=tx.run_id, warnings=warnings)
        clock("html page", files.write_text, d / "report.html", page)
        t["html page"] -= t["html charts"]  # the charts are their own stage
        book = clock("xlsx sheets", documents.plan_xlsx, plan, case, run_id=tx.run_id, warnings=warnings)
        clock("xlsx sheets", files.write_bytes, d / "plan.xlsx", book)
        t["xlsx sheets"] -= t["xlsx policy"]
        clock("transaction", tx.commit, {"case": case.source, "status": plan.status})
    finally:
        tx.__exit__(None, None, None)
    t["status"] = plan.status
    return t


if __name__ == "__main__":
    print(json.dumps(stages(sys.argv[1], sys.argv[2], float(sys.argv[3]), *map(float, sys.argv[4:5]))))
