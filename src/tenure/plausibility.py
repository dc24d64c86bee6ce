"""Plausibility checks of cost curves, shared by ``tenure check`` and ``tenure fit``.

Each check is a fact of the trade about what a credible curve looks like (common practice), not a
rule of the case format, so a failed check is a warning, never an error:

- O&M that falls with age (repairs and wear grow as a unit ages);
- a market value above the new price at some age (a used unit rarely sells above a new one);
- an economic life of 1 year when the type may serve longer (usually a value curve that drops too
  steeply or an O&M curve typed in the wrong units);
- too few points behind a fitted curve (when the caller gives the counts).
"""

from __future__ import annotations

from typing import Iterable, Mapping

import numpy as np

from . import curves
from .model import AssetType, Case

#: fewer points than this behind a fitted curve draws a warning
MIN_POINTS = 10


def warnings(case: Case, types: Iterable[AssetType] | None = None,
             points: Mapping[str, int] | None = None, min_points: int = MIN_POINTS) -> list[str]:
    """Warnings about the curves of ``types`` (default: every type of ``case``).

    Parameters
    ----------
    case : Case
        Gives the discount rate and start year for the economic life.
    types : iterable of AssetType, optional
        Types to check instead of the case's own (e.g. with fitted curves).
    points : mapping, optional
        Type id → number of records behind its fitted curve.
    min_points : int
        Fewest points that draw no warning.

    Returns
    -------
    list of str
        One line per finding, each naming the type.
    """
    from .life import life_table

    out: list[str] = []
    for t in (case.types if types is None else types):
        ages = np.arange(1, t.max_age + 1)
        om = np.atleast_1d(curves.om_base(t.om, ages))
        falls = np.flatnonzero(np.diff(om) < -1e-9 * max(1.0, float(np.max(np.abs(om)))))
        if falls.size:
            a = int(falls[0]) + 1
            out.append(f"{t.id}: O&M falls with age (service year {a}: {om[a - 1]:,.0f}, year {a + 1}: "
                       f"{om[a]:,.0f}); check the curve")
        vf = np.atleast_1d(curves.value_fraction(t.salvage, np.arange(0, t.max_age + 1), t.price))
        above = np.flatnonzero(vf > 1 + 1e-9)
        if above.size:
            out.append(f"{t.id}: market value above the new price at age {int(above[0])} "
                       f"({vf[above[0]]:.0%} of it); check the value curve")
        if t.max_age > 1:
            lt = life_table(t, case.study.discount_rate, case.study.start_year)
            if lt.economic_life == 1:
                out.append(f"{t.id}: economic life of 1 year (of up to {t.max_age}); the value curve may drop "
                           "too steeply or the O&M may be in the wrong units")
        if points is not None and t.id in points and points[t.id] < min_points:
            out.append(f"{t.id}: only {points[t.id]} point(s) behind the fitted curve (fewer than {min_points})")
    return out
