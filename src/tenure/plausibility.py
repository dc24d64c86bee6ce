"""Plausibility warnings: inputs that are allowed but are almost surely mistakes.

Units already past max age (overdue) are reported with the case summary, one line per type
(``Case.overdue``, ``report.text.overdue_lines``), not here.  A warning never stops a run; ``tenure check`` and ``tenure plan`` print them and the report lists them.
Each check is a fact of the trade (common practice), not a rule of the case format:

- ``market-value-above-price``: a used unit is worth more than a new one, so the cheapest plan replaces
  it every year;
- ``om-list-too-long``: O&M figures past ``max_age`` are never used;
- ``om-falling``: running costs usually rise with age (wear); a falling O&M curve hides the reason to
  replace;
- ``economic-life-1``: an economic life of one year usually means a price far below the running costs;
- ``discount-rate``: real discount rates are almost always between 0 and 20 % a year;
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Iterable, Mapping

import numpy as np

from . import curves
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
    ids = [x.id for x in case.types]
    return f"asset_type[{ids.index(t.id) + 1}] ({t.id})" if t.id in ids else f"asset_type ({t.id})"


def type_warnings(case: Case, t: AssetType) -> list[Warning]:
    """Warnings of one asset type: market value, O&M list length and shape, economic life."""
    out, where = [], _type_path(case, t)
    sv, om = t.salvage, t.om
    vf = np.atleast_1d(curves.value_fraction(sv, np.arange(1, t.max_age + 1), t.price))
    above = np.flatnonzero(vf > 1 + 1e-9)
    if above.size:
        age = int(above[0]) + 1
        out.append(Warning("market-value-above-price", f"{where}.salvage",
                           f"the market value at age {age} ({vf[above[0]] * t.price:,.0f}) is above the price "
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


def case_warnings(case: Case) -> list[Warning]:
    """Every plausibility warning of a validated case, in case-file order."""
    out: list[Warning] = []
    r = case.study.discount_rate
    if not (RATE_LOW <= r <= RATE_HIGH):
        out.append(Warning("discount-rate", "study.discount_rate",
                           f"= {r:g}: outside the usual 0–20 % a year for a real discount rate"))
    for t in case.types:
        out += type_warnings(case, t)
    return out


#: fewer points than this behind a fitted curve draws a warning (tenure fit)
MIN_POINTS = 10


def warnings(case: Case, types: Iterable[AssetType] | None = None,
             points: Mapping[str, int] | None = None, min_points: int = MIN_POINTS) -> list[str]:
    """The curve warnings of ``types`` (default: every type of ``case``) as lines of text, for ``tenure fit``.

    Parameters
    ----------
    case : Case
        Gives the discount rate and start year for the economic life.
    types : iterable of AssetType, optional
        Types to check instead of the case's own (e.g. with fitted curves).
    points : mapping, optional
        Type id → number of records behind its fitted curve; fewer than ``min_points`` draws a warning.
    """
    out = [f"{t.id}: {w.message}" for t in (case.types if types is None else types) for w in type_warnings(case, t)]
    for tid, n in (points or {}).items():
        if n < min_points and (types is None or any(t.id == tid for t in types)):
            out.append(f"{tid}: only {n} point(s) behind the fitted curve (fewer than {min_points})")
    return out
