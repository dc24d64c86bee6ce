"""The inventory: ``[[unit]]`` blocks and the ``[fleet] file`` CSV."""

from __future__ import annotations

import csv
import difflib
from pathlib import Path
from typing import Any, Mapping

from ..model import AssetType, Unit
from .keys import CSV_COLUMNS, CSV_OPTIONAL, FLEET_KEYS, UNIT_KEYS
from .problems import Checker, blocks
from .usage import unit_usage


def _csv_units(chk: Checker, fleet: Mapping, base_dir: Path) -> list[dict]:
    chk.keys(fleet, FLEET_KEYS, "fleet")
    name = chk.string(fleet, "file", "fleet")
    if name is None:
        return []
    path = (base_dir / name) if not Path(name).is_absolute() else Path(name)
    if not path.is_file():
        chk.bad("fleet.file", f"= {name!r}: no such file ({path}); give a CSV path relative to the case file")
        return []
    rows: list[dict] = []
    sub = Checker(str(path))
    try:
        with path.open(newline="", encoding="utf-8-sig") as fh:
            reader = csv.DictReader(fh)
            header = [h.strip() for h in (reader.fieldnames or [])]
            missing = [c for c in CSV_COLUMNS if c not in header]
            if missing:
                sub.bad("header", f"missing column(s) {', '.join(missing)}; columns are id,type,age[,count]")
                chk.problems.extend(sub.problems)
                return []
            for c in header:
                if c not in CSV_COLUMNS + CSV_OPTIONAL:
                    near = difflib.get_close_matches(c, CSV_COLUMNS + CSV_OPTIONAL, n=1, cutoff=0.5)
                    hint = f"; did you mean '{near[0]}'?" if near else ""
                    sub.bad("header", f"unknown column '{c}'{hint} (columns are id,type,age[,count][,usage])")
            for line_no, raw in enumerate(reader, start=2):
                r = {(k or "").strip(): (v or "").strip() for k, v in raw.items() if k is not None}
                if None in raw:  # more cells than header columns
                    sub.bad(f"row {line_no}", "has more cells than the header has columns")
                    continue
                if not any(r.values()):
                    continue
                where = f"row {line_no}"
                row: dict[str, Any] = {"id": r.get("id", ""), "type": r.get("type", ""), "_where": (str(path), where)}
                for col in ("age", "count"):
                    text = r.get(col, "")
                    if col == "count" and text == "":
                        continue
                    try:
                        row[col] = int(text)
                    except ValueError:
                        try:
                            f = float(text)
                            row[col] = int(f) if f.is_integer() else text
                        except ValueError:
                            row[col] = text
                if r.get("usage", "") != "":
                    try:
                        row["usage"] = float(r["usage"])
                    except ValueError:
                        row["usage"] = r["usage"]
                rows.append(row)
    except (UnicodeDecodeError, csv.Error) as exc:
        sub.bad("file", f"cannot be read as CSV text: {exc}")
    chk.problems.extend(sub.problems)
    return rows


def _units(chk: Checker, doc: Mapping, types: Mapping[str, AssetType], type_ids: set[str],
           base_dir: Path) -> list[Unit]:
    entries: list[tuple[dict, str, str]] = []  # (row, file, path)
    for j, b in enumerate(blocks(chk, doc, "unit"), start=1):
        chk.keys(b, UNIT_KEYS, f"unit[{j}]")
        entries.append((b, chk.file, f"unit[{j}]"))
    n_before = len(chk.problems)
    if "fleet" in doc:
        fleet = chk.table(doc["fleet"], "fleet")
        if fleet is not None:
            for row in _csv_units(chk, fleet, base_dir):
                f, where = row.pop("_where")
                entries.append((row, f, where))
    if not entries and "fleet" not in doc:
        chk.bad("unit", "missing: the fleet needs [[unit]] blocks or [fleet] file = \"….csv\"")
    elif not entries and len(chk.problems) == n_before:  # the CSV was read but holds no unit rows
        chk.bad("fleet.file", "the inventory CSV has no unit rows; give one row per unit (id,type,age[,count])")
    out: list[Unit] = []
    seen: dict[str, str] = {}
    for row, f, p in entries:
        sub = Checker(f)
        uid = sub.string(row, "id", p)
        tid = sub.string(row, "type", p)
        age = sub.integer(row, "age", p, lo=0, hi=200, what="a whole number of years ≥ 0")
        count = sub.integer(row, "count", p, required=False, default=1, lo=1, what="a whole number ≥ 1")
        if uid is not None:
            if uid in seen:
                sub.bad(f"{p}.id", f"= {uid!r}: duplicate unit id (also {seen[uid]})")
            seen.setdefault(uid, p if f == chk.file else f"{Path(f).name} {p}")
        if tid is not None and tid not in type_ids:
            near = difflib.get_close_matches(tid, sorted(type_ids), n=1, cutoff=0.5)
            hint = f"; did you mean '{near[0]}'?" if near else ""
            sub.bad(f"{p}.type", f"= {tid!r}: unknown asset type{hint} (types: {', '.join(sorted(type_ids))})")
        elif tid is not None and age is not None and tid in types and age > types[tid].max_age:
            sub.bad(f"{p}.age", f"= {age}: exceeds max_age = {types[tid].max_age} of type {tid!r}; "
                    "a unit at max_age must be replaced, so ages run 0 … max_age")
        ok, usage = unit_usage(sub, row, p, types.get(tid) if tid is not None else None, age)
        chk.problems.extend(sub.problems)
        if None in (uid, tid, age, count) or tid not in types or not ok:
            continue
        out.append(Unit(id=uid, type=tid, age=age, count=count, usage=usage))
    return out
