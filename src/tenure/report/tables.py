"""Machine-readable plan outputs: ``plan.json``, ``units.csv``, ``years.csv``.

Every file is rendered in memory and written atomically (``report.files``).
"""

from __future__ import annotations

import csv
import io
from pathlib import Path

from ..plan import Plan
from . import files

UNIT_COLUMNS = ("unit", "class", "start_type", "start_age", "year", "action", "from_type", "from_age", "type",
                "price", "market_value", "defer_cost", "advance_cost")
YEAR_COLUMNS = ("year", "buys", "capital", "salvage", "om", "cap", "slack", "shadow_price", "buys_by_type",
                "sells", "in_service", "tonnes", "carbon", "capital_nominal", "cap_nominal")


def _cell(x):
    if x is None:
        return ""
    if isinstance(x, float):
        return f"{x:.2f}"
    return x


def units_csv(plan: Plan) -> str:
    """One row per unit and event; a unit with no replacement gets one row with action ``keep``."""
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(UNIT_COLUMNS)
    for u in plan.units:
        head = (u.unit, u.class_, u.start_type, _cell(u.start_age))
        if not u.events:
            w.writerow(head + ("", "keep", u.start_type, u.start_age, u.start_type, "", "", "", ""))
        for e in u.events:
            w.writerow(head + (e.year, e.action, e.from_type, e.from_age, e.type, _cell(e.price),
                               _cell(e.market_value), _cell(e.defer_cost), _cell(e.advance_cost)))
    return buf.getvalue()


def years_csv(plan: Plan) -> str:
    """One row per planning year; ``buys_by_type`` as ``type:n;type:n``.

    ``capital``, ``cap`` and ``slack`` are constant start-year money; ``capital_nominal`` and
    ``cap_nominal`` the same in then-year money (docs/conventions.md, "Nominal money").
    """
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(YEAR_COLUMNS)
    for y in plan.years:
        mix = ";".join(f"{t}:{n}" for t, n in y.buys_by_type.items())
        shadow = "" if y.shadow_price is None else f"{y.shadow_price:.6f}"
        w.writerow((y.year, y.buys, _cell(y.capital), _cell(y.salvage), _cell(y.om), _cell(y.cap), _cell(y.slack),
                    shadow, mix, y.sells, y.in_service, f"{y.tonnes:.3f}", _cell(y.carbon),
                    _cell(y.capital_nominal), _cell(y.cap_nominal)))
    return buf.getvalue()


def write_plan(plan: Plan, out_dir: Path | str) -> list[Path]:
    """Write plan.json, units.csv and years.csv into ``out_dir``; returns the paths."""
    out = Path(out_dir)
    rendered = {"plan.json": None, "units.csv": units_csv(plan), "years.csv": years_csv(plan)}
    paths = [files.write_json(out / "plan.json", plan.to_dict())]
    for name in ("units.csv", "years.csv"):
        paths.append(files.write_text(out / name, rendered[name]))
    return paths
