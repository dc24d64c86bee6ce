"""Small text helpers shared by messages and writers: money figures and "did you mean" hints.

Imports nothing from tenure, so every layer (case reading, solvers, writers,
the command line) may use it without importing upward.  Money is constant
start-year currency (docs/conventions.md); these helpers only format it.
"""

from __future__ import annotations

import difflib
import math
from typing import Iterable

#: shown for a missing or non-numeric figure
MISSING = "—"


def nearest(value: str, allowed: Iterable[str], cutoff: float = 0.6) -> str | None:
    """The allowed name closest to ``value`` (difflib's ratio ≥ ``cutoff``), or None."""
    near = difflib.get_close_matches(str(value), list(allowed), n=1, cutoff=cutoff)
    return near[0] if near else None


def did_you_mean(value: str, allowed: Iterable[str], cutoff: float = 0.6) -> str:
    """``"; did you mean 'x'?"`` for the nearest allowed name, or ``""`` when none is close.

    >>> did_you_mean("rt-desel", ["rt-diesel", "bus-bev"])
    "; did you mean 'rt-diesel'?"
    >>> did_you_mean("zzz", ["rt-diesel"])
    ''
    """
    near = nearest(value, allowed, cutoff)
    return f"; did you mean '{near}'?" if near else ""


def number_or_none(x) -> float | None:
    """``x`` as a finite float, or None when it is missing, not a number or not finite."""
    if x is None or isinstance(x, bool):
        return None
    try:
        v = float(x)
    except (TypeError, ValueError):
        return None
    return v if math.isfinite(v) else None


def money(x, width: int = 0, *, signed: bool = False, minus: str = "-") -> str:
    """Whole currency units with comma grouping; ``MISSING`` for None or not a number.

    Parameters
    ----------
    x : number or None
        An amount [money].
    width : int
        Right-justify to this many characters (0: no padding).
    signed : bool
        Show ``+`` before positive amounts; an amount that rounds to zero is ``0``.
    minus : str
        The minus sign (``"−"``, U+2212, for typeset pages).

    >>> money(1234567.8), money(-2500, signed=True), money(0.4, signed=True), money(None)
    ('1,234,568', '-2,500', '0', '—')
    """
    v = number_or_none(x)
    if v is None:
        s = MISSING
    elif signed and round(v) == 0:
        s = "0"
    else:
        s = f"{v:+,.0f}" if signed else f"{v:,.0f}"
        s = s.replace("-", minus)
    return s.rjust(width) if width else s


def cent(x) -> float | None:
    """Money rounded to the cent for output files (None passes through)."""
    return None if x is None else round(float(x), 2)


def csv_cell(x):
    """A CSV cell: empty for None, floats to the cent, anything else as it is."""
    if x is None:
        return ""
    if isinstance(x, float):
        return f"{x:.2f}"
    return x
