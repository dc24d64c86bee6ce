"""Case files, format version 1: read TOML (+ optional CSV inventory), validate, build the model.

Every problem of a case is collected before anything is reported, so a user
fixes a file in one pass.  Each problem names the file, the field path (for
example ``asset_type[2].salvage.retain``; blocks are counted from 1), the
value found and what is allowed.  Unknown keys are rejected with the nearest
valid name.

The meaning of every field is in ``docs/case-format.md``; the timing of cash
flows is in ``docs/conventions.md``.
"""

from __future__ import annotations

import copy
import csv
import difflib
import math
import re
import tomllib
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Mapping

from .model import (
    BUDGET_BASES,
    END_VALUES,
    AssetType,
    Budget,
    Case,
    Limit,
    OMCurve,
    Scenario,
    Study,
    Uncertain,
    Unit,
    ValueCurve,
)

FORMAT_VERSION = 1

TOP_KEYS = ("format", "study", "asset_type", "unit", "fleet", "budget", "limit", "scenario", "uncertain")
STUDY_KEYS = ("title", "start_year", "horizon", "discount_rate", "end_value")
TYPE_KEYS = (
    "id", "class", "price", "price_change", "buy_from", "buy_until",
    "max_age", "om", "om_change", "salvage",
)
UNIT_KEYS = ("id", "type", "age", "count")
FLEET_KEYS = ("file",)
CSV_COLUMNS = ("id", "type", "age")
CSV_OPTIONAL = ("count",)
BUDGET_KEYS = ("cap", "cap_by_year", "basis")
LIMIT_KEYS = ("class", "max_buys_per_year")
SCENARIO_KEYS = ("id", "note", "set")
UNCERTAIN_KEYS = ("path", "dist", "low", "high", "mode", "mean", "sd")
DISTRIBUTIONS = ("uniform", "triangular", "normal")


@dataclass(frozen=True)
class Problem:
    """One thing wrong with a case: where, what was found, what is allowed."""

    file: str
    path: str
    message: str

    def __str__(self) -> str:
        return f"{self.file}: {self.path}: {self.message}"


class CaseError(Exception):
    """A case could not be used; ``problems`` lists every reason."""

    def __init__(self, problems: list[Problem]):
        self.problems = list(problems)
        super().__init__("\n".join(str(p) for p in self.problems))


# ---------------------------------------------------------------------------
# small typed readers that record problems instead of raising
# ---------------------------------------------------------------------------
class _Checker:
    def __init__(self, file: str):
        self.file = file
        self.problems: list[Problem] = []

    def bad(self, path: str, message: str) -> None:
        self.problems.append(Problem(self.file, path, message))

    def keys(self, table: Mapping[str, Any], allowed: tuple[str, ...], path: str) -> None:
        for k in table:
            if k not in allowed:
                near = difflib.get_close_matches(k, allowed, n=1, cutoff=0.5)
                hint = f"; did you mean '{near[0]}'?" if near else ""
                where = f"{path}.{k}" if path else k
                self.bad(where, f"unknown key '{k}'{hint} (allowed: {', '.join(allowed)})")

    def table(self, value: Any, path: str) -> dict | None:
        if not isinstance(value, dict):
            self.bad(path, f"= {value!r}: must be a table ({{ key = value, … }})")
            return None
        return value

    def string(self, table: Mapping, key: str, path: str, required: bool = True, default: str | None = None) -> str | None:
        if key not in table:
            if required:
                self.bad(f"{path}.{key}" if path else key, "missing (a text value is required)")
            return default
        v = table[key]
        if not isinstance(v, str) or (required and not v.strip()):
            self.bad(f"{path}.{key}", f"= {v!r}: must be non-empty text")
            return default
        return v

    def number(
        self,
        table: Mapping,
        key: str,
        path: str,
        *,
        required: bool = True,
        default: float | None = None,
        lo: float | None = None,
        hi: float | None = None,
        lo_open: bool = False,
        hi_open: bool = False,
        what: str = "a number",
    ) -> float | None:
        where = f"{path}.{key}" if path else key
        if key not in table:
            if required:
                self.bad(where, f"missing ({what} is required)")
            return default
        return self.number_value(table[key], where, lo=lo, hi=hi, lo_open=lo_open, hi_open=hi_open, what=what)

    def number_value(self, v: Any, where: str, *, lo=None, hi=None, lo_open=False, hi_open=False, what="a number"):
        if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v):
            self.bad(where, f"= {v!r}: must be {_allowed(what, lo, hi, lo_open, hi_open)}")
            return None
        if (lo is not None and (v < lo or (lo_open and v == lo))) or (
            hi is not None and (v > hi or (hi_open and v == hi))
        ):
            self.bad(where, f"= {v!r}: must be {_allowed(what, lo, hi, lo_open, hi_open)}")
            return None
        return float(v)

    def integer(self, table: Mapping, key: str, path: str, *, required: bool = True, default: int | None = None,
                lo: int | None = None, hi: int | None = None, what: str = "a whole number") -> int | None:
        where = f"{path}.{key}" if path else key
        if key not in table:
            if required:
                self.bad(where, f"missing ({what} is required)")
            return default
        return self.integer_value(table[key], where, lo=lo, hi=hi, what=what)

    def integer_value(self, v: Any, where: str, *, lo=None, hi=None, what="a whole number") -> int | None:
        ok = (isinstance(v, int) and not isinstance(v, bool)) or (isinstance(v, float) and v.is_integer())
        if not ok or (lo is not None and v < lo) or (hi is not None and v > hi):
            self.bad(where, f"= {v!r}: must be {_allowed(what, lo, hi, False, False)}")
            return None
        return int(v)

    def choice(self, table: Mapping, key: str, path: str, allowed: tuple[str, ...], default: str) -> str:
        if key not in table:
            return default
        v = table[key]
        if v not in allowed:
            near = difflib.get_close_matches(str(v), allowed, n=1, cutoff=0.5)
            hint = f"; did you mean '{near[0]}'?" if near else ""
            self.bad(f"{path}.{key}", f"= {v!r}: must be one of {', '.join(repr(a) for a in allowed)}{hint}")
            return default
        return v


_BOUND_SUFFIX = re.compile(r"\s*[≥>≤<]\s*-?[0-9.]+$")


def _allowed(what: str, lo, hi, lo_open, hi_open) -> str:
    """``what`` with the allowed range; a bound already written in ``what`` ("money ≥ 0") is not repeated."""
    rng = _range_text(lo, hi, lo_open, hi_open)
    return _BOUND_SUFFIX.sub("", what) + rng if rng else what


def _range_text(lo, hi, lo_open, hi_open) -> str:
    if lo is None and hi is None:
        return ""
    if hi is None:
        return f" {'>' if lo_open else '≥'} {lo:g}"
    if lo is None:
        return f" {'<' if hi_open else '≤'} {hi:g}"
    return f" in {'(' if lo_open else '['}{lo:g}, {hi:g}{')' if hi_open else ']'}"


def _blocks(chk: _Checker, doc: Mapping, key: str) -> list[dict]:
    """An array of tables (``[[key]]``) as a list; a single table is accepted too."""
    v = doc.get(key, [])
    if isinstance(v, dict):
        v = [v]
    if not isinstance(v, list) or not all(isinstance(b, dict) for b in v):
        chk.bad(key, f"must be one or more [[{key}]] blocks")
        return []
    return v


# ---------------------------------------------------------------------------
# sections
# ---------------------------------------------------------------------------
def _study(chk: _Checker, doc: Mapping) -> Study | None:
    s = doc.get("study")
    if s is None:
        chk.bad("study", "missing: a [study] table with start_year, horizon and discount_rate is required")
        return None
    s = chk.table(s, "study")
    if s is None:
        return None
    chk.keys(s, STUDY_KEYS, "study")
    title = chk.string(s, "title", "study", required=False, default="") or ""
    start = chk.integer(s, "start_year", "study", lo=1900, hi=2300, what="a calendar year")
    horizon = chk.integer(s, "horizon", "study", lo=1, hi=200, what="a whole number of years")
    rate = chk.number(s, "discount_rate", "study", lo=-1, lo_open=True, what="a rate per year")
    end_value = chk.choice(s, "end_value", "study", END_VALUES, "salvage")
    if end_value == "continuing" and rate is not None and rate <= 0:
        chk.bad("study.discount_rate", f"= {rate!r}: end_value = 'continuing' needs a discount rate > 0 "
                "(a capitalised cost EAC/i is infinite at a zero rate); use end_value = 'salvage' or a positive rate")
    if None in (start, horizon, rate):
        return None
    return Study(title=title, start_year=start, horizon=horizon, discount_rate=rate, end_value=end_value)


def _om_curve(chk: _Checker, v: Any, path: str) -> OMCurve | None:
    if isinstance(v, list):
        vals = [chk.number_value(x, f"{path}[{j + 1}]", lo=0, what="money ≥ 0") for j, x in enumerate(v)]
        if not vals:
            chk.bad(path, "= []: an O&M list needs one figure per age 1 … max_age")
            return None
        if any(x is None for x in vals):
            return None
        return OMCurve(kind="table", table=tuple(vals))
    t = chk.table(v, path)
    if t is None:
        return None
    chk.keys(t, ("first", "gradient", "growth"), path)
    first = chk.number(t, "first", path, lo=0, what="money ≥ 0")
    if "gradient" in t and "growth" in t:
        chk.bad(path, "give either 'gradient' (arithmetic) or 'growth' (geometric), not both")
        return None
    if "growth" in t:
        g = chk.number(t, "growth", path, lo=-1, lo_open=True, what="a rate per year")
        if first is None or g is None:
            return None
        return OMCurve(kind="growth", first=first, growth=g)
    grad = chk.number(t, "gradient", path, required=False, default=0.0, what="money per year")
    if first is None or grad is None:
        return None
    return OMCurve(kind="gradient", first=first, gradient=grad)


def _value_curve(chk: _Checker, v: Any, path: str) -> ValueCurve | None:
    if isinstance(v, list):
        vals = [chk.number_value(x, f"{path}[{j + 1}]", lo=0, what="money ≥ 0") for j, x in enumerate(v)]
        if not vals:
            chk.bad(path, "= []: a market-value list needs at least the value at age 1")
            return None
        if any(x is None for x in vals):
            return None
        return ValueCurve(kind="table", table=tuple(vals))
    t = chk.table(v, path)
    if t is None:
        return None
    chk.keys(t, ("retain", "life", "floor"), path)
    if "retain" in t:
        if "life" in t or "floor" in t:
            chk.bad(path, "give either 'retain' or 'life' with 'floor', not both")
            return None
        r = chk.number(t, "retain", path, lo=0, hi=1, lo_open=True, what="a fraction kept per year")
        return None if r is None else ValueCurve(kind="retain", retain=r)
    if "life" in t or "floor" in t:
        life = chk.number(t, "life", path, lo=0, lo_open=True, what="a number of years")
        floor = chk.number(t, "floor", path, required=False, default=0.0, lo=0, hi=1, hi_open=True,
                           what="a fraction of the price")
        if life is None or floor is None:
            return None
        return ValueCurve(kind="line", life=life, floor=floor)
    chk.bad(path, "must be { retain = r }, { life = n, floor = f } or a list of values by age 1 … n")
    return None


def _year(chk: _Checker, t: Mapping, key: str, path: str) -> int | None:
    return chk.integer(t, key, path, required=False, default=None, lo=1900, hi=2300, what="a calendar year")


def _asset_types(chk: _Checker, doc: Mapping) -> list[AssetType]:
    out: list[AssetType] = []
    blocks = _blocks(chk, doc, "asset_type")
    if not blocks and "asset_type" not in doc:
        chk.bad("asset_type", "missing: at least one [[asset_type]] block is required")
    seen: dict[str, int] = {}
    for j, b in enumerate(blocks, start=1):
        p = f"asset_type[{j}]"
        chk.keys(b, TYPE_KEYS, p)
        tid = chk.string(b, "id", p)
        if tid is not None:
            if tid in seen:
                chk.bad(f"{p}.id", f"= {tid!r}: duplicate id (also asset_type[{seen[tid]}]); ids must be unique")
            seen.setdefault(tid, j)
        cls = chk.string(b, "class", p)
        price = chk.number(b, "price", p, lo=0, lo_open=True, what="money > 0")
        price_change = chk.number(b, "price_change", p, required=False, default=0.0, lo=-1, lo_open=True,
                                  what="a rate per year")
        om_change = chk.number(b, "om_change", p, required=False, default=0.0, lo=-1, lo_open=True,
                               what="a rate per year")
        buy_from = _year(chk, b, "buy_from", p)
        buy_until = _year(chk, b, "buy_until", p)
        if buy_from is not None and buy_until is not None and buy_from > buy_until:
            chk.bad(f"{p}.buy_until", f"= {buy_until}: must not be before buy_from = {buy_from}")
        om = _om_curve(chk, b["om"], f"{p}.om") if "om" in b else None
        if "om" not in b:
            chk.bad(f"{p}.om", "missing: { first, gradient }, { first, growth } or a list by age 1 … max_age")
        if "max_age" in b:
            max_age = chk.integer(b, "max_age", p, lo=1, hi=100, what="a whole number of years")
        elif om is not None and om.kind == "table":
            max_age = len(om.table)
        else:
            max_age = None
            if om is not None:
                chk.bad(f"{p}.max_age", "missing: required unless om is a list (its length is then the max age)")
        if om is not None and max_age is not None:
            if om.kind == "table" and len(om.table) < max_age:
                chk.bad(f"{p}.om", f"has {len(om.table)} figures: an O&M list needs one per age 1 … max_age = {max_age}")
            if om.kind == "gradient" and om.first + om.gradient * (max_age - 1) < 0:
                chk.bad(f"{p}.om.gradient", f"= {om.gradient:g}: O&M would fall below zero before age max_age = {max_age}")
        if "salvage" not in b:
            chk.bad(f"{p}.salvage", "missing: { retain = r }, { life = n, floor = f } or a list by age 1 … n")
            sv = None
        else:
            sv = _value_curve(chk, b["salvage"], f"{p}.salvage")
        if None in (tid, cls, price, price_change, om_change, om, sv, max_age):
            continue
        out.append(AssetType(id=tid, class_=cls, price=price, price_change=price_change, om_change=om_change,
                             buy_from=buy_from, buy_until=buy_until, max_age=max_age, om=om, salvage=sv))
    return out


def _csv_units(chk: _Checker, fleet: Mapping, base_dir: Path) -> list[dict]:
    chk.keys(fleet, FLEET_KEYS, "fleet")
    name = chk.string(fleet, "file", "fleet")
    if name is None:
        return []
    path = (base_dir / name) if not Path(name).is_absolute() else Path(name)
    if not path.is_file():
        chk.bad("fleet.file", f"= {name!r}: no such file ({path}); give a CSV path relative to the case file")
        return []
    rows: list[dict] = []
    sub = _Checker(str(path))
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
                    sub.bad("header", f"unknown column '{c}'{hint} (columns are id,type,age[,count])")
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
                rows.append(row)
    except (UnicodeDecodeError, csv.Error) as exc:
        sub.bad("file", f"cannot be read as CSV text: {exc}")
    chk.problems.extend(sub.problems)
    return rows


def _units(chk: _Checker, doc: Mapping, types: Mapping[str, AssetType], type_ids: set[str],
           base_dir: Path) -> list[Unit]:
    entries: list[tuple[dict, str, str]] = []  # (row, file, path)
    for j, b in enumerate(_blocks(chk, doc, "unit"), start=1):
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
        sub = _Checker(f)
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
        chk.problems.extend(sub.problems)
        if None in (uid, tid, age, count) or tid not in types:
            continue
        out.append(Unit(id=uid, type=tid, age=age, count=count))
    return out


def _budget(chk: _Checker, doc: Mapping, study: Study | None) -> Budget | None:
    if "budget" not in doc:
        return None
    b = chk.table(doc["budget"], "budget")
    if b is None:
        return None
    chk.keys(b, BUDGET_KEYS, "budget")
    cap = chk.number(b, "cap", "budget", required=False, default=None, lo=0, what="money ≥ 0")
    basis = chk.choice(b, "basis", "budget", BUDGET_BASES, "gross")
    by_year: dict[int, float] = {}
    if "cap_by_year" in b:
        t = chk.table(b["cap_by_year"], "budget.cap_by_year")
        for key, val in (t or {}).items():
            where = f"budget.cap_by_year.{key}"
            try:
                year = int(str(key))
            except ValueError:
                chk.bad(where, f"= {key!r}: keys must be calendar years")
                continue
            if study is not None and year not in study.years:
                chk.bad(where, f"year {year} is outside the horizon {study.start_year} … "
                        f"{study.start_year + study.horizon - 1}")
                continue
            v = chk.number_value(val, where, lo=0, what="money ≥ 0")
            if v is not None:
                by_year[year] = v
    return Budget(cap=cap, cap_by_year=by_year, basis=basis)


def _limits(chk: _Checker, doc: Mapping, classes: set[str]) -> list[Limit]:
    out: list[Limit] = []
    seen: set[str] = set()
    for j, b in enumerate(_blocks(chk, doc, "limit"), start=1):
        p = f"limit[{j}]"
        chk.keys(b, LIMIT_KEYS, p)
        cls = chk.string(b, "class", p)
        n = chk.integer(b, "max_buys_per_year", p, lo=0, what="a whole number ≥ 0")
        if cls is not None:
            if classes and cls not in classes:
                near = difflib.get_close_matches(cls, sorted(classes), n=1, cutoff=0.5)
                hint = f"; did you mean '{near[0]}'?" if near else ""
                chk.bad(f"{p}.class", f"= {cls!r}: unknown class{hint} (classes: {', '.join(sorted(classes))})")
                continue
            if cls in seen:
                chk.bad(f"{p}.class", f"= {cls!r}: a second limit for the same class")
                continue
            seen.add(cls)
        if cls is not None and n is not None:
            out.append(Limit(class_=cls, max_buys_per_year=n))
    return out


def _scenarios(chk: _Checker, doc: Mapping) -> list[Scenario]:
    out: list[Scenario] = []
    seen: set[str] = set()
    for j, b in enumerate(_blocks(chk, doc, "scenario"), start=1):
        p = f"scenario[{j}]"
        chk.keys(b, SCENARIO_KEYS, p)
        sid = chk.string(b, "id", p)
        note = chk.string(b, "note", p, required=False, default="") or ""
        if sid is not None:
            if sid in seen or sid == "base":
                chk.bad(f"{p}.id", f"= {sid!r}: scenario ids must be unique and not 'base'")
            seen.add(sid)
        sets = chk.table(b.get("set", None), f"{p}.set") if "set" in b else None
        if "set" not in b:
            chk.bad(f"{p}.set", "missing: a table of overrides, e.g. { \"study.discount_rate\" = 0.07 }")
        if sid is not None and sets is not None:
            out.append(Scenario(id=sid, note=note, set=dict(sets)))
    return out


def _uncertain(chk: _Checker, doc: Mapping) -> list[Uncertain]:
    out: list[Uncertain] = []
    for j, b in enumerate(_blocks(chk, doc, "uncertain"), start=1):
        p = f"uncertain[{j}]"
        chk.keys(b, UNCERTAIN_KEYS, p)
        path = chk.string(b, "path", p)
        dist = chk.choice(b, "dist", p, DISTRIBUTIONS, "uniform")
        low = chk.number(b, "low", p)
        high = chk.number(b, "high", p)
        mode = chk.number(b, "mode", p, required=dist == "triangular")
        mean = chk.number(b, "mean", p, required=dist == "normal")
        sd = chk.number(b, "sd", p, required=dist == "normal", lo=0, lo_open=True, what="a number")
        if low is not None and high is not None and low > high:
            chk.bad(f"{p}.high", f"= {high:g}: must not be below low = {low:g}")
        if mode is not None and low is not None and high is not None and not (low <= mode <= high):
            chk.bad(f"{p}.mode", f"= {mode:g}: must lie in [low, high] = [{low:g}, {high:g}]")
        if None not in (path, low, high):
            out.append(Uncertain(path=path, dist=dist, low=low, high=high, mode=mode, mean=mean, sd=sd))
    return out


def _coverage(chk: _Checker, study: Study, types: list[AssetType], units: list[Unit]) -> None:
    """Each class that holds units must have a type to buy in every planning year."""
    by_id = {t.id: t for t in types}
    classes = {by_id[u.type].class_ for u in units if u.type in by_id}
    for cls in sorted(classes):
        gaps = [y for y in study.years if not any(t.class_ == cls and t.buyable(y) for t in types)]
        if gaps:
            runs = _runs(gaps)
            chk.bad(f"class {cls!r}", f"no asset type of this class can be bought in {runs}; a unit reaching "
                    "max_age then could not be replaced (widen a buy_from/buy_until window or add a type)")


def _runs(years: list[int]) -> str:
    parts, start, prev = [], years[0], years[0]
    for y in years[1:] + [None]:
        if y is not None and y == prev + 1:
            prev = y
            continue
        parts.append(str(start) if start == prev else f"{start}–{prev}")
        if y is not None:
            start = prev = y
    return ", ".join(parts)


# ---------------------------------------------------------------------------
# public entry points
# ---------------------------------------------------------------------------
def build_case(doc: Mapping[str, Any], *, source: str = "<memory>", base_dir: Path | str = ".") -> Case:
    """Validate a parsed case document and build the frozen :class:`~tenure.model.Case`.

    Parameters
    ----------
    doc : mapping
        The parsed TOML document (format version 1).
    source : str
        File name used in messages.
    base_dir : path
        Folder that relative inventory paths are read from.

    Raises
    ------
    CaseError
        With every problem found, each naming file, field path, value and what is allowed.
    """
    chk = _Checker(source)
    base_dir = Path(base_dir)
    chk.keys(doc, TOP_KEYS, "")
    if "format" in doc and doc["format"] != FORMAT_VERSION:
        chk.bad("format", f"= {doc['format']!r}: this version of tenure reads format = {FORMAT_VERSION}")
    study = _study(chk, doc)
    types = _asset_types(chk, doc)
    by_id = {t.id: t for t in types}
    all_ids = {b.get("id") for b in _blocks(_Checker(source), doc, "asset_type") if isinstance(b.get("id"), str)}
    units = _units(chk, doc, by_id, all_ids, base_dir)
    budget = _budget(chk, doc, study)
    classes = {t.class_ for t in types} | {b.get("class") for b in _blocks(_Checker(source), doc, "asset_type")
                                           if isinstance(b.get("class"), str)}
    limits = _limits(chk, doc, classes)
    scenarios = _scenarios(chk, doc)
    uncertain = _uncertain(chk, doc)
    if study is not None and not chk.problems:
        _coverage(chk, study, types, units)
    if chk.problems:
        raise CaseError(chk.problems)
    raw = copy.deepcopy(dict(doc))
    # inline the inventory so that overrides and copies do not depend on the CSV's location
    raw.pop("fleet", None)
    raw["unit"] = [{"id": u.id, "type": u.type, "age": u.age, "count": u.count} for u in units]
    return Case(study=study, types=tuple(types), units=tuple(units), budget=budget, limits=tuple(limits),
                scenarios=tuple(scenarios), uncertain=tuple(uncertain), source=source, raw=raw)


def read_document(path: Path | str) -> dict[str, Any]:
    """Parse a TOML case file; a syntax error becomes a :class:`CaseError`."""
    path = Path(path)
    if not path.is_file():
        raise CaseError([Problem(str(path), "file", "no such case file")])
    try:
        with path.open("rb") as fh:
            return tomllib.load(fh)
    except tomllib.TOMLDecodeError as exc:
        raise CaseError([Problem(str(path), "syntax", f"not valid TOML: {exc}")]) from None
    except UnicodeDecodeError as exc:
        raise CaseError([Problem(str(path), "file", f"not UTF-8 text: {exc}")]) from None


def load_case(path: Path | str) -> Case:
    """Read, validate and build a case from a TOML file (and its CSV inventory)."""
    path = Path(path)
    doc = read_document(path)
    return build_case(doc, source=str(path), base_dir=path.parent)
