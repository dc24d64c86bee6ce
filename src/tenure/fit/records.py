"""Reading and validating the record files of ``tenure fit``: costs, sales, units, price index.

Each file is a CSV (the separator — comma, semicolon or tab — is taken from the header line) or an
``.xlsx`` workbook (first sheet, read with openpyxl).  Headers are matched case-insensitively after
trimming; columns that are not used are ignored and listed.  Every problem is collected before
anything is reported, each naming the file, the row (the spreadsheet line, the header being line 1),
the column, the value found and what is allowed, as :class:`tenure.case.Problem` objects inside one
:class:`tenure.case.CaseError`.

Dates are ISO (``YYYY-MM-DD`` or ``YYYY-MM``); a record may give a calendar ``year`` instead of a
``date``.  Units are named as in every output: an inventory row ``id`` with ``count = n`` holds units
``id#1 … id#n`` (a row with count 1 may also be named ``id``).  A case unit of age *a* is taken to
have entered service on 1 January of ``start_year − a``; ``--units FILE`` gives exact in-service
(and out-of-service) dates, and types and dates of units no longer in the inventory.
"""

from __future__ import annotations

import difflib
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd

from ..case import CaseError, Problem
from ..model import Case

#: at most this many problems are listed per file (the rest are counted)
MAX_PROBLEMS = 25
COST_COLUMNS = ("unit", "date", "year", "amount", "kind")
SALE_COLUMNS = ("type", "unit", "date", "year", "price", "age")
UNIT_COLUMNS = ("id", "type", "in_service", "out_of_service")
INDEX_COLUMNS = ("year", "index")
DATE_HELP = "a date YYYY-MM-DD (or YYYY-MM)"


@dataclass(frozen=True)
class Table:
    """One record file read as text: ``frame`` has normalised column names and a ``_row`` line number."""

    path: str
    frame: pd.DataFrame
    unused: tuple[str, ...]


class _Problems:
    """Problems of one file, kept in row order and capped at :data:`MAX_PROBLEMS`."""

    def __init__(self, path: str):
        self.path = path
        self.items: list[tuple[int, str, str]] = []

    def add(self, row: int, column: str, message: str) -> None:
        self.items.append((row, column, message))

    def rows(self, frame: pd.DataFrame, mask, column: str, message) -> None:
        """One problem per row where ``mask`` holds; ``message(value)`` says what was found and allowed."""
        mask = np.asarray(mask, dtype=bool)
        if not mask.any():
            return
        sub = frame.loc[mask]
        vals = sub[column] if column in sub else pd.Series([""] * len(sub), index=sub.index)
        for row, val in zip(sub["_row"].to_numpy()[: MAX_PROBLEMS + 1], vals.to_numpy()[: MAX_PROBLEMS + 1]):
            self.add(int(row), column, message(val))

    def problems(self) -> list[Problem]:
        items = sorted(self.items)
        out = [Problem(self.path, f"row {r}, column {c}", m) for r, c, m in items[:MAX_PROBLEMS]]
        if len(items) > MAX_PROBLEMS:
            out.append(Problem(self.path, "rows", f"… and {len(items) - MAX_PROBLEMS} more problem(s) of the same kinds"))
        return out

    def raise_if_any(self) -> None:
        if self.items:
            raise CaseError(self.problems())


def _separator(header_line: str) -> str:
    counts = {sep: header_line.count(sep) for sep in (",", ";", "\t")}
    return max(counts, key=counts.get) if max(counts.values()) > 0 else ","


def read_table(path: Path | str, known: tuple[str, ...], what: str) -> Table:
    """Read a CSV or .xlsx file as text cells with normalised headers.

    Parameters
    ----------
    path : path
        The file.
    known : tuple of str
        Column names this reader uses (others are ignored and reported as unused).
    what : str
        What the file holds, for messages ("cost records", …).
    """
    path = Path(path)
    name = str(path)
    if not path.is_file():
        raise CaseError([Problem(name, "file", f"no such {what} file")])
    try:
        if path.suffix.lower() in (".xlsx", ".xlsm"):
            frame = pd.read_excel(path, dtype=str, engine="openpyxl")
        else:
            with path.open(encoding="utf-8-sig") as fh:
                first = fh.readline()
            frame = pd.read_csv(path, sep=_separator(first), dtype=str, keep_default_na=False,
                                skip_blank_lines=False, encoding="utf-8-sig")
    except (UnicodeDecodeError, pd.errors.ParserError, pd.errors.EmptyDataError, ValueError, OSError) as exc:
        raise CaseError([Problem(name, "file", f"cannot be read as CSV or .xlsx {what}: {exc}")]) from None
    frame.columns = [str(c).strip().lower() for c in frame.columns]
    dup = sorted({c for c in frame.columns if list(frame.columns).count(c) > 1})
    if dup:
        raise CaseError([Problem(name, "header", f"column(s) {', '.join(dup)} appear more than once "
                                                 "(headers are matched ignoring case and spaces)")])
    frame = frame.fillna("").astype(str).apply(lambda s: s.str.strip())
    frame["_row"] = np.arange(2, len(frame) + 2)
    cells = frame.drop(columns="_row")
    frame = frame.loc[(cells != "").any(axis=1)].reset_index(drop=True)
    unused = tuple(c for c in frame.columns if c not in known and c != "_row")
    return Table(name, frame, unused)


def _require(table: Table, groups: list[tuple[str, ...]], layout: str) -> None:
    """Each group needs at least one of its columns; a missing one is reported with the nearest unused name."""
    missing = [g for g in groups if not any(c in table.frame.columns for c in g)]
    if not missing:
        return
    probs = []
    for g in missing:
        near = difflib.get_close_matches(g[0], table.unused, n=1, cutoff=0.6)
        hint = f"; is '{near[0]}' meant to be '{g[0]}'?" if near else ""
        probs.append(Problem(table.path, "header", f"missing column {' or '.join(g)}{hint} (columns: {layout})"))
    raise CaseError(probs)


def _dates(frame: pd.DataFrame, column: str) -> pd.Series:
    return pd.to_datetime(frame[column], format="ISO8601", errors="coerce")


def _numbers(frame: pd.DataFrame, column: str, decimal_comma: bool = False) -> pd.Series:
    text = frame[column]
    if decimal_comma:
        text = text.str.replace(",", ".", regex=False)
    return pd.to_numeric(text.str.replace(" ", "", regex=False), errors="coerce")


def _when(frame: pd.DataFrame, probs: _Problems) -> tuple[pd.Series, pd.Series, str]:
    """Date and calendar year of each row (from ``date``, else ``year``); the column used."""
    if "date" in frame.columns:
        d = _dates(frame, "date")
        probs.rows(frame, d.isna().to_numpy(), "date", lambda v: f"= {v!r}: not a date; must be {DATE_HELP}")
        return d, d.dt.year, "date"
    y = _numbers(frame, "year")
    bad = y.isna() | (y % 1 != 0) | (y < 1900) | (y > 2300)
    probs.rows(frame, bad.to_numpy(), "year", lambda v: f"= {v!r}: must be a calendar year (1900 … 2300)")
    return pd.Series(pd.NaT, index=frame.index), y, "year"


# ---------------------------------------------------------------------------
# the units: the case inventory and --units
# ---------------------------------------------------------------------------
def case_units(case: Case) -> pd.DataFrame:
    """Units of the case inventory, by name: type, in-service date (1 January of start_year − age)."""
    rows = []
    for u in case.units:
        names = u.names()  # a single unit is named by its id, a block of n by id#1 … id#n
        ins = pd.Timestamp(year=case.study.start_year - u.age, month=1, day=1)
        rows += [(n, u.type, ins, pd.NaT, f"{case.source} inventory row {u.id!r}") for n in names]
    return pd.DataFrame(rows, columns=["unit", "type", "in_service", "out_of_service", "origin"]).set_index("unit")


def read_units(path: Path | str, case: Case) -> pd.DataFrame:
    """``--units FILE``: id, type, in_service[, out_of_service] → the same layout as :func:`case_units`."""
    table = read_table(path, UNIT_COLUMNS, "units")
    _require(table, [("id",), ("type",), ("in_service",)], "id,type,in_service[,out_of_service]")
    f, probs = table.frame, _Problems(table.path)
    types = [t.id for t in case.types]
    probs.rows(f, (f["id"] == "").to_numpy(), "id", lambda v: "missing: every row needs a unit id")
    probs.rows(f, f["id"].duplicated(keep="first").to_numpy() & (f["id"] != ""), "id",
               lambda v: f"= {v!r}: duplicate unit id; each unit once")
    _type_problems(f, "type", types, probs)
    ins = _dates(f, "in_service")
    probs.rows(f, ins.isna().to_numpy(), "in_service", lambda v: f"= {v!r}: not a date; must be {DATE_HELP}")
    out = _dates(f, "out_of_service") if "out_of_service" in f else pd.Series(pd.NaT, index=f.index)
    if "out_of_service" in f:
        given = (f["out_of_service"] != "").to_numpy()
        probs.rows(f, given & out.isna().to_numpy(), "out_of_service",
                   lambda v: f"= {v!r}: not a date; must be {DATE_HELP} or empty (still in service)")
        probs.rows(f, given & (out < ins).to_numpy(), "out_of_service",
                   lambda v: f"= {v!r}: is before the unit's in_service date")
    probs.raise_if_any()
    origin = [f"{table.path} row {r}" for r in f["_row"]]
    return pd.DataFrame({"type": f["type"].to_numpy(), "in_service": ins.to_numpy(), "out_of_service": out.to_numpy(),
                         "origin": origin}, index=pd.Index(f["id"].to_numpy(), name="unit"))


def unit_register(case: Case, units_file: Path | str | None) -> pd.DataFrame:
    """Case units, overridden and extended by ``--units`` rows (exact dates; units that left the fleet)."""
    reg = case_units(case)
    if units_file is None:
        return reg
    extra = read_units(units_file, case)
    clash = [n for n in extra.index if n in reg.index and reg.at[n, "type"] != extra.at[n, "type"]]
    if clash:
        raise CaseError([Problem(str(units_file), f"id {n!r}", f"type {extra.at[n, 'type']!r} differs from "
                                 f"{reg.at[n, 'type']!r} in {reg.at[n, 'origin']}") for n in clash[:MAX_PROBLEMS]])
    return pd.concat([reg.drop(index=[n for n in extra.index if n in reg.index]), extra])


def _type_problems(f: pd.DataFrame, column: str, types: list[str], probs: _Problems, mask=None) -> None:
    bad = ~f[column].isin(types)
    if mask is not None:
        bad &= mask
    def msg(v):
        near = difflib.get_close_matches(v, types, n=1, cutoff=0.5)
        hint = f"; did you mean '{near[0]}'?" if near else ""
        return f"= {v!r}: unknown asset type{hint} (types: {', '.join(types)})"
    probs.rows(f, bad.to_numpy(), column, msg)


def _unit_problems(f: pd.DataFrame, reg: pd.DataFrame, probs: _Problems, mask=None) -> np.ndarray:
    known = f["unit"].isin(reg.index).to_numpy()
    bad = ~known if mask is None else (~known & np.asarray(mask))
    probs.rows(f, bad, "unit", lambda v: f"= {v!r}: not a unit of the case inventory (names id, or id#1 … id#n "
                                         "for a row with count n) nor of --units FILE (id,type,in_service)")
    return known


def _service_dates(f: pd.DataFrame, reg: pd.DataFrame, when: pd.Series, column: str, probs: _Problems,
                   ok: np.ndarray, what: str) -> tuple[pd.Series, pd.Series]:
    """In-service and out-of-service dates of each row's unit; records outside them are problems."""
    ins = f["unit"].map(reg["in_service"])
    out = f["unit"].map(reg["out_of_service"])
    before = ok & (when < ins).to_numpy()
    probs.rows(f, before, column, lambda v: f"= {v!r}: {what} is before the unit's in-service date")
    after = ok & (when > out).to_numpy()
    probs.rows(f, after, column, lambda v: f"= {v!r}: {what} is after the unit's out-of-service date")
    return ins, out


# ---------------------------------------------------------------------------
# cost records
# ---------------------------------------------------------------------------
def read_costs(path: Path | str, reg: pd.DataFrame, decimal_comma: bool | None = None) -> pd.DataFrame:
    """Cost records → rows of unit, type, kind, calendar year, date (or NaT), amount [money of that year].

    The frame's ``attrs`` hold the file name, whether dates or years were given, and the observed window
    as month indices ``year·12 + month − 1`` (first, last).
    """
    table = read_table(path, COST_COLUMNS, "cost records")
    _require(table, [("unit",), ("date", "year"), ("amount",)], "unit,date|year,amount[,kind]")
    f, probs = table.frame, _Problems(table.path)
    probs.rows(f, (f["unit"] == "").to_numpy(), "unit", lambda v: "missing: every record needs a unit")
    known = _unit_problems(f, reg, probs, mask=(f["unit"] != "").to_numpy())
    date, year, used = _when(f, probs)
    comma = decimal_comma if decimal_comma is not None else _separator_is_semicolon(table)
    amount = _numbers(f, "amount", comma)
    probs.rows(f, amount.isna().to_numpy(), "amount", lambda v: f"= {v!r}: not a number; must be money ≥ 0")
    probs.rows(f, (amount < 0).to_numpy(), "amount", lambda v: f"= {v!r}: negative; must be money ≥ 0 (net a credit "
                                                              "or refund against its work order before fitting)")
    good_when = (date.notna() if used == "date" else year.notna()).to_numpy()
    if used == "date":
        _service_dates(f, reg, date, "date", probs, known & good_when, "the date")
    else:
        ins_year = f["unit"].map(reg["in_service"]).dt.year
        out_year = f["unit"].map(reg["out_of_service"]).dt.year
        probs.rows(f, known & good_when & (year < ins_year).to_numpy(), "year",
                   lambda v: f"= {v!r}: the year is before the unit's in-service year")
        probs.rows(f, known & good_when & (year > out_year).to_numpy(), "year",
                   lambda v: f"= {v!r}: the year is after the unit's out-of-service year")
    probs.raise_if_any()
    kind = f["kind"].where(f["kind"] != "", "unspecified") if "kind" in f else pd.Series("unspecified", index=f.index)
    out = pd.DataFrame({"unit": f["unit"], "type": f["unit"].map(reg["type"]), "kind": kind,
                        "year": year.astype(int), "date": date, "amount": amount.astype(float)})
    if used == "date":
        m = (date.dt.year * 12 + date.dt.month - 1).to_numpy()
        window = (int(m.min()), int(m.max())) if len(m) else (0, -1)
    else:
        window = (int(year.min()) * 12, int(year.max()) * 12 + 11) if len(year) else (0, -1)
    out.attrs.update(file=table.path, when=used, window=window, unused=table.unused, rows=len(out))
    return out


def _separator_is_semicolon(table: Table) -> bool:
    """Semicolon files come from spreadsheets that write a decimal comma."""
    p = Path(table.path)
    if p.suffix.lower() in (".xlsx", ".xlsm"):
        return False
    with p.open(encoding="utf-8-sig") as fh:
        return _separator(fh.readline()) == ";"


# ---------------------------------------------------------------------------
# sale records
# ---------------------------------------------------------------------------
def read_sales(path: Path | str, reg: pd.DataFrame, case: Case) -> pd.DataFrame:
    """Sale records → rows of type, calendar year, age [years, may be fractional], price [money of that year].

    The age is the ``age`` column when given, else the years from the unit's in-service date to the sale
    date (or, with only a ``year``, the whole years from the in-service year).
    """
    table = read_table(path, SALE_COLUMNS, "sale records")
    _require(table, [("type", "unit"), ("date", "year"), ("price",)], "type|unit,date|year,price[,age]")
    f, probs = table.frame, _Problems(table.path)
    types = [t.id for t in case.types]
    has_unit = (f["unit"] != "").to_numpy() if "unit" in f else np.zeros(len(f), bool)
    has_type = (f["type"] != "").to_numpy() if "type" in f else np.zeros(len(f), bool)
    probs.rows(f, ~has_unit & ~has_type, "type", lambda v: "missing: give the sold unit's type or unit id")
    if "type" in f:
        _type_problems(f, "type", types, probs, mask=has_type)
    known = _unit_problems(f, reg, probs, mask=has_unit) & has_unit if "unit" in f else np.zeros(len(f), bool)
    if "unit" in f and "type" in f:
        mismatch = known & has_type & (f["type"] != f["unit"].map(reg["type"])).to_numpy()
        probs.rows(f, mismatch, "type", lambda v: f"= {v!r}: differs from the type of the sold unit")
    date, year, used = _when(f, probs)
    price = _numbers(f, "price", _separator_is_semicolon(table))
    probs.rows(f, (price.isna() | (price <= 0)).to_numpy(), "price", lambda v: f"= {v!r}: must be money > 0")
    tid = f["type"].where(pd.Series(has_type, index=f.index), "") if "type" in f else pd.Series("", index=f.index)
    if "unit" in f:
        tid = tid.where(tid != "", f["unit"].map(reg["type"]).fillna(""))
    age = _sale_ages(f, reg, date, year, used, known, probs)
    probs.raise_if_any()
    out = pd.DataFrame({"type": tid, "year": year.astype(int), "age": age.astype(float), "price": price.astype(float)})
    out.attrs.update(file=table.path, unused=table.unused, rows=len(out))
    return out


def _sale_ages(f, reg, date, year, used, known, probs) -> pd.Series:
    age = pd.Series(np.nan, index=f.index)
    given = (f["age"] != "").to_numpy() if "age" in f else np.zeros(len(f), bool)
    if "age" in f:
        a = _numbers(f, "age")
        probs.rows(f, given & (a.isna() | (a < 0)).to_numpy(), "age",
                   lambda v: f"= {v!r}: must be a number of years ≥ 0")
        age = age.where(~given, a)
    need = ~given
    probs.rows(f, need & ~known, "age", lambda v: "missing: give the age at sale, or a unit whose in-service "
                                                  "date is known (case inventory or --units)")
    m = need & known
    if "unit" in f and m.any():
        ins = f["unit"].map(reg["in_service"])
        if used == "date":
            _service_dates(f, reg, date, "date", probs, m & date.notna().to_numpy(), "the sale date")
            derived = (date - ins).dt.days / 365.25
        else:
            probs.rows(f, m & (year < ins.dt.year).to_numpy(), "year",
                       lambda v: f"= {v!r}: the sale year is before the unit's in-service year")
            derived = year - ins.dt.year
        age = age.where(~m, derived)
    return age


# ---------------------------------------------------------------------------
# price index
# ---------------------------------------------------------------------------
def read_index(path: Path | str) -> dict[int, float]:
    """``--index FILE``: year,index (any base) → {calendar year: index > 0}."""
    table = read_table(path, INDEX_COLUMNS, "price index")
    _require(table, [("year",), ("index",)], "year,index")
    f, probs = table.frame, _Problems(table.path)
    y = _numbers(f, "year")
    probs.rows(f, (y.isna() | (y % 1 != 0)).to_numpy(), "year", lambda v: f"= {v!r}: must be a calendar year")
    probs.rows(f, y.duplicated().to_numpy() & y.notna().to_numpy(), "year", lambda v: f"= {v!r}: a second row for this year")
    v = _numbers(f, "index", _separator_is_semicolon(table))
    probs.rows(f, (v.isna() | (v <= 0)).to_numpy(), "index", lambda x: f"= {x!r}: must be a number > 0")
    probs.raise_if_any()
    return {int(a): float(b) for a, b in zip(y, v)}
