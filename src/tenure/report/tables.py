"""Machine-readable plan outputs: ``plan.json``, ``units.csv``, ``years.csv``, ``buy-list.csv``.

Every file is rendered in memory and written atomically (``report.files``).
"""

from __future__ import annotations

import csv
import io
from pathlib import Path

from ..plan import Plan
from . import buylist, files

UNIT_COLUMNS = ("unit", "class", "start_type", "start_age", "year", "action", "from_type", "from_age", "type",
                "price", "market_value", "defer_cost", "advance_cost")
YEAR_COLUMNS = ("year", "buys", "capital", "salvage", "om", "cap", "slack", "shadow_price", "buys_by_type")


def _cell(x):
    if x is None:
        return ""
    if isinstance(x, float):
        return f"{x:.2f}"
    return x


def attribute_names(plan: Plan) -> list[str]:
    """The inventory's kept columns, in order of first appearance among the units."""
    seen: dict[str, None] = {}
    for u in plan.units:
        for k, _ in u.attributes:
            seen.setdefault(k, None)
    return list(seen)


def units_csv(plan: Plan) -> str:
    """One row per unit and event; a unit with no replacement gets one row with action ``keep``.

    The inventory's kept columns (department, …) follow the plan's columns.
    """
    kept = attribute_names(plan)
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(UNIT_COLUMNS + tuple(kept))
    for u in plan.units:
        head = (u.unit, u.class_, u.start_type, u.start_age)
        tail = tuple(dict(u.attributes).get(k, "") for k in kept)
        if not u.events:
            w.writerow(head + ("", "keep", u.start_type, u.start_age, u.start_type, "", "", "", "") + tail)
        for e in u.events:
            w.writerow(head + (e.year, e.action, e.from_type, e.from_age, e.type, _cell(e.price),
                               _cell(e.market_value), _cell(e.defer_cost), _cell(e.advance_cost)) + tail)
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
                    shadow, mix))
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
