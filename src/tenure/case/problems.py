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
