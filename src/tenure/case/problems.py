"""Problems of a case and the checker that collects them instead of raising.

Every problem of a case is collected before anything is reported, so a user fixes a file in one pass.  Each
problem names the file, the field path (for example ``asset_type[2].salvage.retain``; blocks are counted from
1), the value found and what is allowed.
"""

from __future__ import annotations

import difflib
import math
import re
from dataclasses import dataclass
from typing import Any, Mapping


#: the sane ranges of numeric inputs (docs/case-format.md, "Limits"): inside them no finite input can
#: overflow the arithmetic, and every derived money figure stays far below the 1e20 a solver takes as infinite
MONEY_MAX = 1e12        # money per unit: a price, an O&M figure, a market value
CAP_MAX = 1e17          # money per year of the whole fleet (MONEY_MAX × 100,000)
RATE_MIN, RATE_MAX = -1.0, 1.0  # open interval of a discount rate, price or O&M change per year
GROWTH_MAX = 1e3        # the most any compounding (price_change, om_change, growth, a negative discount rate)
#                         may multiply a figure by over the study
UNITS_MAX = 200_000     # units in the whole inventory (count included)


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


class Checker:
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
            self.bad(where, f"= {v!r}: must be {_allowed(what, lo, hi, lo_open, hi_open, True)}")
            return None
        if lo is not None and (v < lo or (lo_open and v == lo)) and _BOUND_SUFFIX.search(what):
            # below the bound written in ``what``: that bound is the one to state
            self.bad(where, f"= {v!r}: must be {_allowed(what, lo, None, lo_open, False)}")
            return None
        if (lo is not None and (v < lo or (lo_open and v == lo))) or (
            hi is not None and (v > hi or (hi_open and v == hi))
        ):
            self.bad(where, f"= {v!r}: must be {_allowed(what, lo, hi, lo_open, hi_open, True)}")
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


    def growth(self, where: str, rate: float | None, years: int | None, what: str, shown=None) -> None:
        """Refuse a rate that compounds to more than :data:`GROWTH_MAX` (or less than its inverse) over ``years``.

        ``shown`` is the value the user wrote when ``rate`` is derived from it (a discount factor's rate).
        """
        if rate is None or years is None or rate == 0:
            return
        shown = rate if shown is None else shown
        factor = math.exp(years * math.log1p(rate))
        if not (1 / GROWTH_MAX <= factor <= GROWTH_MAX):
            worst = math.expm1(math.log(GROWTH_MAX if rate > 0 else 1 / GROWTH_MAX) / years)
            self.bad(where, f"= {shown!r}: compounds to ×{factor:.3g} over {years} years ({what}); at most "
                     f"×{GROWTH_MAX:g} is allowed, i.e. a rate {'≤' if rate > 0 else '≥'} {worst:.4g} for {years} years")


_BOUND_SUFFIX = re.compile(r"\s*[≥>≤<]\s*-?[0-9.]+$")


def _allowed(what: str, lo, hi, lo_open, hi_open, keep_lower: bool = False) -> str:
    """``what`` with the allowed range; a lower bound already written in ``what`` ("money ≥ 0") is kept and
    the upper bound added to it ("money ≥ 0 and ≤ 1e12")."""
    if keep_lower and _BOUND_SUFFIX.search(what) and hi is not None and lo is not None:
        return f"{what} and {'<' if hi_open else '≤'} {_num(hi)}"
    rng = _range_text(lo, hi, lo_open, hi_open)
    return _BOUND_SUFFIX.sub("", what) + rng if rng else what


def _num(x) -> str:
    return f"{x:g}".replace("e+", "e")


def _range_text(lo, hi, lo_open, hi_open) -> str:
    if lo is None and hi is None:
        return ""
    if hi is None:
        return f" {'>' if lo_open else '≥'} {_num(lo)}"
    if lo is None:
        return f" {'<' if hi_open else '≤'} {_num(hi)}"
    return f" in {'(' if lo_open else '['}{_num(lo)}, {_num(hi)}{')' if hi_open else ']'}"


def blocks(chk: Checker, doc: Mapping, key: str) -> list[dict]:
    """An array of tables (``[[key]]``) as a list; a single table is accepted too."""
    v = doc.get(key, [])
    if isinstance(v, dict):
        v = [v]
    if not isinstance(v, list) or not all(isinstance(b, dict) for b in v):
        chk.bad(key, f"must be one or more [[{key}]] blocks")
        return []
    return v


def year_runs(years: list[int]) -> str:
    parts, start, prev = [], years[0], years[0]
    for y in years[1:] + [None]:
        if y is not None and y == prev + 1:
            prev = y
            continue
        parts.append(str(start) if start == prev else f"{start}–{prev}")
        if y is not None:
            start = prev = y
    return ", ".join(parts)
