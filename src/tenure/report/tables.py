"""Machine-readable plan outputs: ``plan.json``, ``units.csv``, ``years.csv``.

Every file is rendered in memory and written atomically (``report.files``).  Text cells that a
spreadsheet would read as a formula (first character ``=``, ``+``, ``-``, ``@``, tab or carriage return)
are neutralised with a leading apostrophe, as OWASP's CSV-injection guidance recommends
(docs/outputs.md); numbers are written as numbers.
"""

from __future__ import annotations

import csv
import io
from pathlib import Path

from ..plan import Plan
from . import files

UNIT_COLUMNS = ("unit", "class", "start_type", "start_age", "year", "action", "from_type", "from_age", "type",
                "price", "market_value", "defer_cost", "advance_cost")
YEAR_COLUMNS = ("year", "buys", "capital", "salvage", "om", "cap", "slack", "shadow_price", "buys_by_type")


FORMULA_START = ("=", "+", "-", "@", "\t", "\r")


def safe_text(x):
    """A text cell that no spreadsheet evaluates: ``'`` is put before a leading =, +, -, @, tab or CR.

    OWASP, "CSV Injection" (owasp.org/www-community/attacks/CSV_Injection): prefix such cells with a
    single quote.  Non-text values are returned unchanged.
    """
    if isinstance(x, str) and x.startswith(FORMULA_START):
        return "'" + x
    return x


def _cell(x):
    if x is None:
        return ""
    if isinstance(x, float):
        return f"{x:.2f}"
    return safe_text(x)


def safe_row(values) -> tuple:
    """Every text value of a row through :func:`safe_text`."""
    return tuple(safe_text(v) for v in values)


def units_csv(plan: Plan) -> str:
    """One row per unit and event; a unit with no replacement gets one row with action ``keep``."""
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(UNIT_COLUMNS)
    for u in plan.units:
        head = (u.unit, u.class_, u.start_type, u.start_age)
        if not u.events:
            w.writerow(safe_row(head + ("", "keep", u.start_type, u.start_age, u.start_type, "", "", "", "")))
        for e in u.events:
            w.writerow(safe_row(head + (e.year, e.action, e.from_type, e.from_age, e.type, _cell(e.price),
                                        _cell(e.market_value), _cell(e.defer_cost), _cell(e.advance_cost))))
    return buf.getvalue()


def years_csv(plan: Plan) -> str:
    """One row per planning year; ``buys_by_type`` as ``type:n;type:n``."""
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(YEAR_COLUMNS)
    for y in plan.years:
        mix = ";".join(f"{t}:{n}" for t, n in y.buys_by_type.items())
        shadow = "" if y.shadow_price is None else f"{y.shadow_price:.6f}"
        w.writerow((y.year, y.buys, _cell(y.capital), _cell(y.salvage), _cell(y.om), _cell(y.cap), _cell(y.slack),
                    shadow, safe_text(mix)))
    return buf.getvalue()


def plan_dict(plan: Plan, run_id: str | None = None) -> dict:
    """The ``plan.json`` document: ``Plan.to_dict()`` with the ``run_id`` of its output set first."""
    body = plan.to_dict()
    return {"run_id": run_id, **body} if run_id is not None else body


def write_plan(plan: Plan, out_dir: Path | str, run_id: str | None = None) -> list[Path]:
    """Write plan.json (with ``run_id`` when given), units.csv and years.csv into ``out_dir``; returns the paths."""
    out = Path(out_dir)
    rendered = {"plan.json": None, "units.csv": units_csv(plan), "years.csv": years_csv(plan)}
    paths = [files.write_json(out / "plan.json", plan_dict(plan, run_id))]
    for name in ("units.csv", "years.csv"):
        paths.append(files.write_text(out / name, rendered[name]))
    return paths
