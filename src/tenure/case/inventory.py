"""The inventory: ``[[unit]]`` blocks and the ``[fleet] file`` table (CSV or .xlsx), read as fleets keep it.

A row names a unit (``id``), its ``type`` and its age in one of three forms: ``age`` (completed
years of service at the start of ``start_year``), ``in_service`` (a date) or ``model_year``; the
rules that turn a date or a model year into an age are stated in docs/conventions.md
("Inventory ages") and implemented in :func:`age_from_date` and :func:`age_from_model_year`.
``count`` is optional.  Every other column is kept as an attribute of the unit and carried
into the outputs.  Units past their max age are accepted (overdue: replaced in the first year).
"""

from __future__ import annotations

import datetime as dt
import difflib
from pathlib import Path
from typing import Any, Callable, Mapping

from ..model import AssetType, Unit
from ..tabular import Table, TableError, header_key, read_table
from .keys import AGE_COLUMNS, CSV_OPTIONAL, FLEET_KEYS, RESERVED_COLUMNS, UNIT_KEYS, UNIT_MORE_KEYS
from .problems import UNITS_MAX, Checker, Problem, blocks

#: what the header must hold, in the words of the messages
COLUMNS_TEXT = ("columns are id,type,age[,count] (in_service or model_year may replace age; any other column is "
                "kept as an attribute; `usage` is the unit's yearly usage)")
from .usage import unit_usage


def age_from_date(start_year: int, day: dt.date) -> int:
    """Completed years of service at the start of ``start_year`` of a unit in service since ``day``.

    ``age = start_year − year(day) − (1 if day is after 1 January else 0)``, at least 0: a unit that
    enters service during the start year counts as age 0 (docs/conventions.md, "Inventory ages").
    """
    completed = start_year - day.year - (1 if (day.month, day.day) > (1, 1) else 0)
    return max(0, completed)


def age_from_model_year(start_year: int, model_year: int) -> int:
    """``max(0, start_year − model_year)`` [years] (common practice; docs/conventions.md)."""
    return max(0, start_year - model_year)


def _number_or_text(v: Any) -> Any:
    """A table cell as the number it spells (so the checker's messages match TOML values), else as it is."""
    if not isinstance(v, str):
        return v
    try:
        return int(v)
    except ValueError:
        try:
            f = float(v)
            return int(f) if f.is_integer() else f
        except ValueError:
            return v


def _text(v: Any) -> str:
    """A kept cell as text: whole numbers without '.0', dates as ISO dates."""
    if isinstance(v, bool):
        return str(v).upper()
    if isinstance(v, float) and v.is_integer():
        return str(int(v))
    if isinstance(v, dt.datetime):
        return v.date().isoformat() if v.time() == dt.time() else v.isoformat(sep=" ")
    if isinstance(v, dt.date):
        return v.isoformat()
    return str(v).strip()


def _date(v: Any) -> dt.date | None:
    if isinstance(v, dt.datetime):
        return v.date()
    if isinstance(v, dt.date):
        return v
    if isinstance(v, str):
        for parse in (dt.date.fromisoformat, lambda s: dt.datetime.fromisoformat(s).date()):
            try:
                return parse(v.strip())
            except ValueError:
                pass
    return None


def _age(sub: Checker, row: Mapping, where: Callable[[str], str], start_year: int | None) -> int | None:
    """The inventory age of a row from whichever of age / in_service / model_year it has."""
    given = [c for c in AGE_COLUMNS if c in row and row[c] != ""]
    if len(given) != 1:
        sub.bad(where("age"), ("missing: give age (completed years), in_service (a date) or model_year" if not given
                               else f"give one of age, in_service, model_year, not {' and '.join(given)}"))
        return None
    col = given[0]
    if col == "age":
        return sub.integer_value(row["age"], where("age"), lo=0, hi=200, what="a whole number of years ≥ 0")
    if start_year is None:  # the study is broken; that is reported already
        return None
    if col == "in_service":
        day = _date(row[col])
        if day is None:
            sub.bad(where(col), f"= {row[col]!r}: must be a date, written YYYY-MM-DD (e.g. {start_year - 5}-04-30) "
                    "or a date cell in a spreadsheet")
            return None
        if day.year > start_year:
            sub.bad(where(col), f"= {day.isoformat()}: after the end of the start year {start_year}; the inventory "
                    f"holds units in service by {start_year}-12-31")
            return None
        if day.year < start_year - 200:
            sub.bad(where(col), f"= {day.isoformat()}: more than 200 years before the start year {start_year}")
            return None
        return age_from_date(start_year, day)
    year = sub.integer_value(row[col], where(col), lo=start_year - 200, hi=start_year,
                             what=f"a calendar year ≤ the start year {start_year}")
    return None if year is None else age_from_model_year(start_year, year)


def _table_rows(chk: Checker, fleet: Mapping, base_dir: Path) -> list[tuple[dict, Checker, Callable]]:
    """The rows of the ``[fleet] file`` table as (row, checker of that file, where-function)."""
    name = chk.string(fleet, "file", "fleet")
    sheet = chk.string(fleet, "sheet", "fleet", required=False)
    if name is None:
        return []
    path = (base_dir / name) if not Path(name).is_absolute() else Path(name)
    if not path.is_file():
        why = "is a directory" if path.is_dir() else "no such file" if not path.exists() else "is not a regular file"
        chk.bad("fleet.file", f"= {name!r}: {why} ({path}); give a CSV or .xlsx path relative to the case file")
        return []
    try:
        table = read_table(path, sheet)
    except TableError as exc:
        path_key = "fleet.sheet" if exc.where == "sheet" else exc.where
        chk.problems.append(Problem(chk.file if exc.where == "sheet" else exc.file, path_key, exc.message))
        return []
    except OSError as exc:  # unreadable (permissions, a device): a message, never a traceback
        chk.problems.append(Problem(str(path), "file", f"cannot be read: {exc.strerror or exc}"))
        return []
    sub = Checker(table.file)
    if not _header_ok(sub, table):
        chk.problems.extend(sub.problems)
        return []
    out = []
    canon = {k: k.replace(" ", "_") for k in table.columns}
    for i, cells in table.records():
        if all(v == "" for v in cells.values()):
            continue
        row: dict[str, Any] = {}
        attrs = []
        for key, v in cells.items():
            c = canon[key]
            if c in ("id", "type", "in_service") + AGE_COLUMNS + CSV_OPTIONAL:
                row[c] = v if c == "in_service" else _number_or_text(v)
                if c in ("id", "type"):
                    row[c] = _text(v)
            else:
                attrs.append((key, _text(v)))
        row["attributes"] = dict(attrs)
        if row.get("count", "") == "":
            row.pop("count", None)
        cols = {canon[k]: k for k in table.columns}
        out.append((row, sub, (lambda c, i=i, cols=cols: table.where(i, cols.get(c, c)))))
    chk.problems.extend(sub.problems)
    return out


def _header_ok(sub: Checker, table: Table) -> bool:
    canon = [k.replace(" ", "_") for k in table.columns]
    missing = [c for c in ("id", "type") if c not in canon]
    ages = [c for c in AGE_COLUMNS if c in canon]
    if missing or not ages:
        what = missing + ([] if ages else ["age"])
        sub.bad(table.where(), f"missing column(s) {', '.join(what)}; {COLUMNS_TEXT}")
        return False
    if len(ages) > 1:
        sub.bad(table.where(), f"columns {' and '.join(ages)} both give the age; keep exactly one of age, "
                "in_service, model_year")
        return False
    for key in table.columns:
        if key in RESERVED_COLUMNS or key.replace(" ", "_") in RESERVED_COLUMNS:
            sub.bad(table.where(None, key), f"a kept column may not be called {table.headers[key]!r}: that is a "
                    "column of units.csv; rename it (reserved: " + ", ".join(RESERVED_COLUMNS) + ")")
    return not sub.problems


def _block_rows(chk: Checker, doc: Mapping) -> list[tuple[dict, Checker, Callable]]:
    out = []
    for j, b in enumerate(blocks(chk, doc, "unit"), start=1):
        p = f"unit[{j}]"
        chk.keys(b, UNIT_KEYS + UNIT_MORE_KEYS, p)
        row = dict(b)
        attrs = row.get("attributes", {})
        if not isinstance(attrs, dict) or any(isinstance(v, (dict, list)) for v in attrs.values()):
            chk.bad(f"{p}.attributes", f"= {attrs!r}: must be a table of text values, e.g. {{ department = \"roads\" }}")
            attrs = {}
        row["attributes"] = {header_key(k): _text(v) for k, v in attrs.items()}
        out.append((row, chk, (lambda c, p=p: f"{p}.{c}")))
    return out


def _units(chk: Checker, doc: Mapping, types: Mapping[str, AssetType], type_ids: set[str],
           base_dir: Path, start_year: int | None = None) -> list[Unit]:
    entries = _block_rows(chk, doc)
    n_before = len(chk.problems)
    fleet = chk.table(doc["fleet"], "fleet") if "fleet" in doc else None
    if fleet is not None:
        chk.keys(fleet, FLEET_KEYS, "fleet")
        if "file" in fleet or not entries:
            entries += _table_rows(chk, fleet, base_dir)
    if not entries and "fleet" not in doc:
        chk.bad("unit", "missing: the fleet needs [[unit]] blocks or [fleet] file = \"….csv\" (or \"….xlsx\")")
    elif not entries and len(chk.problems) == n_before:  # the table was read but holds no unit rows
        chk.bad("fleet.file", "the inventory has no unit rows; give one row per unit (id,type,age[,count])")
    out: list[Unit] = []
    seen_ids: dict[str, str] = {}
    seen_names: dict[str, str] = {}
    for row, owner, where in entries:
        sub = Checker(owner.file)
        unit = _unit(sub, row, where, types, type_ids, start_year)
        if unit is not None:
            place = where("id").rsplit(".", 1)[0]
            place = place if owner is chk else f"{Path(owner.file).name} {place}"
            if unit.id in seen_ids:
                sub.bad(where("id"), f"= {unit.id!r}: duplicate unit id (also {seen_ids[unit.id]})")
            else:
                clash = [n for n in unit.names() if n in seen_names]
                if clash:
                    sub.bad(where("id"), f"= {unit.id!r}: its unit name {clash[0]!r} is also the name of "
                            f"{seen_names[clash[0]]}; blocks with count > 1 are named id#1 … id#count")
            seen_ids.setdefault(unit.id, place)
            for n in unit.names():
                seen_names.setdefault(n, place)
        chk.problems.extend(sub.problems)
        if unit is not None and not sub.problems:
            out.append(unit)
    if fleet is not None and "group_by" in fleet:
        _group_by(chk, fleet, out)
    return out


def _unit(sub: Checker, row: Mapping, where, types, type_ids, start_year) -> Unit | None:
    def text(col):
        v = row.get(col, "")
        if not isinstance(v, str) or not v.strip():
            sub.bad(where(col), "missing (a text value is required)" if v == "" else f"= {v!r}: must be non-empty text")
            return None
        return v.strip()

    uid, tid = text("id"), text("type")
    age = _age(sub, row, where, start_year)
    count = 1
    if row.get("count", "") != "":
        count = sub.integer_value(row["count"], where("count"), lo=1, hi=UNITS_MAX, what="a whole number ≥ 1")
    if tid is not None and tid not in type_ids:
        near = difflib.get_close_matches(tid, sorted(type_ids), n=1, cutoff=0.5)
        hint = f"; did you mean '{near[0]}'?" if near else ""
        sub.bad(where("type"), f"= {tid!r}: unknown asset type{hint} (types: {', '.join(sorted(type_ids))})")
    ok, usage = unit_usage(sub, row, where("usage").rsplit(".", 1)[0], types.get(tid) if tid is not None else None,
                           age if tid in types and age is not None and age <= types[tid].max_age else None)
    if None in (uid, tid, age, count) or tid not in types or not ok:
        return None
    attrs = tuple((k, v) for k, v in row.get("attributes", {}).items())
    return Unit(id=uid, type=tid, age=age, count=count, attributes=attrs, usage=usage)


def _group_by(chk: Checker, fleet: Mapping, units: list[Unit]) -> str | None:
    name = chk.string(fleet, "group_by", "fleet")
    if name is None:
        return None
    kept = sorted({k for u in units for k, _ in u.attributes})
    if header_key(name) not in kept:
        chk.bad("fleet.group_by", f"= {name!r}: not a kept inventory column (kept columns: "
                f"{', '.join(kept) if kept else 'none; add a column such as department to the inventory'})")
        return None
    return header_key(name)


def group_by(doc: Mapping) -> str | None:
    """The ``[fleet] group_by`` column of a validated document, in header-key form."""
    fleet = doc.get("fleet")
    if isinstance(fleet, dict) and isinstance(fleet.get("group_by"), str):
        return header_key(fleet["group_by"])
    return None


def inline(units) -> list[dict]:
    """``[[unit]]`` blocks of the validated inventory (ages resolved), for the case's raw document."""
    out = []
    for u in units:
        b: dict[str, Any] = {"id": u.id, "type": u.type, "age": u.age, "count": u.count}
        if u.usage is not None:
            b["usage"] = u.usage
        if u.attributes:
            b["attributes"] = dict(u.attributes)
        out.append(b)
    return out
