"""Plausibility warnings: inputs that are allowed but are almost surely mistakes.

A warning never stops a run; ``tenure check`` and ``tenure plan`` print them and the report lists them.
Each check is a fact of the trade (common practice), not a rule of the case format:

- ``market-value-above-price``: a used unit is worth more than a new one, so the cheapest plan replaces
  it every year;
- ``om-list-too-long``: O&M figures past ``max_age`` are never used;
- ``om-falling``: running costs usually rise with age (wear); a falling O&M curve hides the reason to
  replace;
- ``economic-life-1``: an economic life of one year usually means a price far below the running costs;
- ``discount-rate``: real discount rates are almost always between 0 and 20 % a year;
- ``duplicate-column``: a CSV header names a column twice (only one of them is read);
- ``past-max-age``: units that start older than ``max_age`` must all be replaced in the first year.
"""

from __future__ import annotations

import csv
import tomllib
from collections import Counter
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from .life import life_table
from .model import AssetType, Case

RATE_LOW, RATE_HIGH = 0.0, 0.20


@dataclass(frozen=True)
class Warning:  # noqa: A001 - a record, never raised or filtered; the name other commands import
    """One likely mistake: a short ``code``, ``where`` (a field path or file) and a ``message`` for the user."""

    code: str
    where: str
    message: str

    def __str__(self) -> str:
        return f"{self.where}: {self.message}"


def _type_path(case: Case, t: AssetType) -> str:
    return f"asset_type[{[x.id for x in case.types].index(t.id) + 1}] ({t.id})"


def type_warnings(case: Case, t: AssetType) -> list[Warning]:
    """Warnings of one asset type: market value, O&M list length and shape, economic life."""
    out, where = [], _type_path(case, t)
    sv, om = t.salvage, t.om
    if sv.kind == "table" and max(sv.table) > t.price:
        age = int(np.argmax(np.asarray(sv.table) > t.price)) + 1
        out.append(Warning("market-value-above-price", f"{where}.salvage",
                           f"the market value at age {age} ({sv.table[age - 1]:,.0f}) is above the price "
                           f"{t.price:,.0f}; the plan would then replace these units every year"))
    if om.kind == "table":
        if len(om.table) > t.max_age:
            out.append(Warning("om-list-too-long", f"{where}.om",
                               f"has {len(om.table)} figures but max_age = {t.max_age}; figures past age "
                               f"{t.max_age} are ignored"))
        used = np.asarray(om.table[: t.max_age])
        drops = np.flatnonzero(np.diff(used) < 0)
        if drops.size:
            out.append(Warning("om-falling", f"{where}.om",
                               f"O&M falls with age (from {used[drops[0]]:,.0f} at age {drops[0] + 1} to "
                               f"{used[drops[0] + 1]:,.0f} at age {drops[0] + 2}); running costs usually rise"))
    elif (om.kind == "gradient" and om.gradient < 0) or (om.kind == "growth" and om.growth < 0):
        field = "gradient" if om.kind == "gradient" else "growth"
        out.append(Warning("om-falling", f"{where}.om.{field}",
                           f"= {getattr(om, field):g}: O&M falls with age; running costs usually rise"))
    s = case.study
    if t.max_age > 1:
        year = s.start_year if t.buyable(s.start_year) else (t.buy_from or s.start_year)
        with np.errstate(all="ignore"):
            lt = life_table(t, s.discount_rate, s.start_year, year)
        if lt.economic_life == 1:
            out.append(Warning("economic-life-1", where,
                               f"the economic life is 1 year (of max_age {t.max_age}); check the price, the "
                               "market values and the O&M figures"))
    return out


def past_max_age(case: Case) -> list[Warning]:
    """One warning per type whose inventory holds units already older than ``max_age``."""
    at_max: Counter = Counter()
    for u in case.units:
        if u.age > case.type(u.type).max_age:
            at_max[u.type] += u.count
    return [Warning("past-max-age", f"units of type {tid!r}",
                    f"{n:,} unit(s) already past max_age = {case.type(tid).max_age}; they must all be replaced "
                    f"in {case.study.start_year}") for tid, n in at_max.items()]


def duplicate_columns(csv_path: Path) -> list[Warning]:
    """A warning when the header row of ``csv_path`` names a column twice (case and spaces ignored)."""
    try:
        with open(csv_path, newline="", encoding="utf-8-sig") as fh:
            header = next(csv.reader(fh), [])
    except (OSError, UnicodeDecodeError, csv.Error):
        return []
    counts = Counter(h.strip().lower() for h in header if h.strip())
    dup = [h for h, n in counts.items() if n > 1]
    return [Warning("duplicate-column", str(csv_path),
                    f"the header names column(s) {', '.join(repr(h) for h in dup)} more than once; only one of "
                    "each is read")] if dup else []


def _inventory_file(case: Case) -> Path | None:
    """The ``[fleet] file`` of the case's TOML file, when the case came from one."""
    src = Path(case.source)
    try:
        with open(src, "rb") as fh:
            doc = tomllib.loads(fh.read().decode("utf-8-sig"))
    except (OSError, UnicodeDecodeError, tomllib.TOMLDecodeError):
        return None
    fleet = doc.get("fleet")
    name = fleet.get("file") if isinstance(fleet, dict) else None
    if not isinstance(name, str):
        return None
    p = Path(name)
    return p if p.is_absolute() else src.parent / p


def case_warnings(case: Case) -> list[Warning]:
    """Every plausibility warning of a validated case, in case-file order."""
    out: list[Warning] = []
    r = case.study.discount_rate
    if not (RATE_LOW <= r <= RATE_HIGH):
        out.append(Warning("discount-rate", "study.discount_rate",
                           f"= {r:g}: outside the usual 0–20 % a year for a real discount rate"))
    for t in case.types:
        out += type_warnings(case, t)
    inv = _inventory_file(case)
    if inv is not None:
        out += duplicate_columns(inv)
    out += past_max_age(case)
    return out
