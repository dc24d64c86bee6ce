"""Machine-readable plan outputs: ``plan.json``, ``units.csv``, ``years.csv``, ``buy-list.csv``.

Every file is rendered in memory and written atomically (``report.files``).
"""

from __future__ import annotations

import csv
import io
from pathlib import Path

from ..plan import UNIT_COLUMNS, YEAR_COLUMNS, Plan, attribute_names, event_rows, year_rows
from ..textutil import csv_cell
from . import buylist, files

__all__ = ["UNIT_COLUMNS", "YEAR_COLUMNS", "units_csv", "years_csv", "write_plan"]


def units_csv(plan: Plan) -> str:
    """One row per unit and event; a unit with no replacement gets one row with action ``keep``.

    The inventory's kept columns (department, …) follow the plan's columns.
    """
    kept = attribute_names(plan)
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(UNIT_COLUMNS + tuple(kept))
    for row in event_rows(plan, kept):
        w.writerow([csv_cell(x) for x in row])
    return buf.getvalue()


def years_csv(plan: Plan) -> str:
    """One row per planning year; ``buys_by_type`` as ``type:n;type:n``."""
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(YEAR_COLUMNS)
    for row in year_rows(plan):
        *money, shadow, mix = row
        w.writerow([csv_cell(x) for x in money] + ["" if shadow is None else f"{shadow:.6f}",
                                                   ";".join(f"{t}:{n}" for t, n in mix.items())])
    return buf.getvalue()


def write_plan(plan: Plan, out_dir: Path | str, *, list_years: int = buylist.DEFAULT_YEARS,
               group_by: str | None = None) -> list[Path]:
    """Write plan.json, units.csv, years.csv and buy-list.csv into ``out_dir``; returns the paths.

    ``buy-list.csv`` covers the first ``list_years`` planning years, grouped by the kept column ``group_by``.
    """
    out = Path(out_dir)
    rendered = {"plan.json": None, "units.csv": units_csv(plan), "years.csv": years_csv(plan),
                "buy-list.csv": buylist.buy_list_csv(buylist.buy_list(plan, list_years, group_by))}
    paths = [files.write_json(out / "plan.json", plan.to_dict())]
    for name in ("units.csv", "years.csv", "buy-list.csv"):
        paths.append(files.write_text(out / name, rendered[name]))
    return paths
