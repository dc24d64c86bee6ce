"""Machine-readable plan outputs: ``plan.json``, ``units.csv``, ``years.csv``, ``buy-list.csv``.

Every file is rendered in memory and written atomically (``report.files``).  Text cells that a
spreadsheet would read as a formula (first character ``=``, ``+``, ``-``, ``@``, tab or carriage return)
are neutralised with a leading apostrophe, as OWASP's CSV-injection guidance recommends
(docs/outputs.md); numbers are written as numbers.
"""

from __future__ import annotations

import csv
import io
from pathlib import Path

from ..plan import UNIT_COLUMNS, YEAR_COLUMNS, Plan, attribute_names, event_rows, year_rows
from ..textutil import csv_cell
from . import buylist, files

__all__ = ["UNIT_COLUMNS", "YEAR_COLUMNS", "units_csv", "years_csv", "write_plan", "plan_dict", "safe_text",
           "safe_row"]

FORMULA_START = ("=", "+", "-", "@", "\t", "\r")


def safe_text(x):
    """A text cell that no spreadsheet evaluates: ``'`` is put before a leading =, +, -, @, tab or CR.

    OWASP, "CSV Injection" (owasp.org/www-community/attacks/CSV_Injection): prefix such cells with a
    single quote.  Non-text values are returned unchanged.
    """
    if isinstance(x, str) and x.startswith(FORMULA_START):
        return "'" + x
    return x


def safe_row(values) -> tuple:
    """Every text value of a row through :func:`safe_text`."""
    return tuple(safe_text(v) for v in values)


def units_csv(plan: Plan) -> str:
    """One row per unit and event; a unit with no replacement gets one row with action ``keep``.

    The inventory's kept columns (department, …) follow the plan's columns.
    """
    kept = attribute_names(plan)
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(UNIT_COLUMNS + tuple(kept))
    for row in event_rows(plan, kept):
        w.writerow(safe_row(csv_cell(x) for x in row))
    return buf.getvalue()


def years_csv(plan: Plan) -> str:
    """One row per planning year; ``buys_by_type`` as ``type:n;type:n``.

    ``capital``, ``cap`` and ``slack`` are constant start-year money; ``capital_nominal`` and
    ``cap_nominal`` the same in then-year money (docs/conventions.md, "Nominal money").
    """
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(YEAR_COLUMNS)
    for row in year_rows(plan):
        year, buys, capital, salvage, om, cap, slack, shadow, mix, sells, held, tonnes, carbon, cap_n, cap_nom = row
        w.writerow([year, buys] + [csv_cell(x) for x in (capital, salvage, om, cap, slack)]
                   + ["" if shadow is None else f"{shadow:.6f}", safe_text(";".join(f"{t}:{n}" for t, n in mix.items())),
                      sells, held, f"{tonnes:.3f}"] + [csv_cell(x) for x in (carbon, cap_n, cap_nom)])
    return buf.getvalue()


def plan_dict(plan: Plan, run_id: str | None = None) -> dict:
    """The ``plan.json`` document: ``Plan.to_dict()`` with the ``run_id`` of its output set first."""
    body = plan.to_dict()
    return {"run_id": run_id, **body} if run_id is not None else body


def write_plan(plan: Plan, out_dir: Path | str, run_id: str | None = None, *, list_years: int = buylist.DEFAULT_YEARS,
               group_by: str | None = None, done=None) -> list[Path]:
    """Write plan.json (with ``run_id`` when given), units.csv, years.csv and buy-list.csv into ``out_dir``;
    returns the paths.

    ``buy-list.csv`` covers the first ``list_years`` planning years, grouped by the kept column ``group_by``.
    ``done(name)``, when given, is called after each file is written (a progress bar's step).
    """
    out = Path(out_dir)
    steps = (("plan.json", lambda: files.write_json(out / "plan.json", plan_dict(plan, run_id))),
             ("units.csv", lambda: files.write_text(out / "units.csv", units_csv(plan))),
             ("years.csv", lambda: files.write_text(out / "years.csv", years_csv(plan))),
             ("buy-list.csv", lambda: files.write_text(out / "buy-list.csv", buylist.buy_list_csv(
                 buylist.buy_list(plan, list_years, group_by)))))
    paths = []
    for name, write in steps:
        paths.append(write())
        if done is not None:
            done(name)
    return paths
