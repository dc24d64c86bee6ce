"""Price level: bring amounts of any calendar year to constant start-year currency.

Every amount of calendar year ``y`` is multiplied by ``L(start_year) / L(y)``, where the level ``L`` is
a price index read from a file (``year,index``, any base year) or a constant inflation rate ``r``
(``L(y) = (1+r)^y``, so the factor is ``(1+r)^(start_year − y)``).  A monthly record is deflated by
the index of its calendar year.  Without either, amounts are taken to be in start-year currency
already.  This is the usual conversion from actual (then-current) to constant (real) currency; see
e.g. Sullivan, Wicks & Koelling, *Engineering Economy*, the chapter on price changes and exchange
rates (actual and real dollars).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Mapping

import numpy as np

from ..case import CaseError, Problem


@dataclass(frozen=True)
class PriceLevel:
    """How amounts are brought to constant ``start_year`` currency.

    ``kind`` is ``"none"`` (already constant), ``"index"`` (``index`` maps calendar year → level,
    from ``source``) or ``"inflation"`` (constant ``rate`` per year).
    """

    start_year: int
    kind: str = "none"
    rate: float = 0.0
    index: Mapping[int, float] = field(default_factory=dict)
    source: str = ""

    def factors(self, years) -> np.ndarray:
        """Multipliers ``L(start_year)/L(year)`` for an array of calendar years [-]."""
        y = np.asarray(years, dtype=float)
        if self.kind == "inflation":
            return (1.0 + self.rate) ** (self.start_year - y)
        if self.kind == "index":
            keys = np.array(sorted(self.index), dtype=float)
            vals = np.array([self.index[int(k)] for k in keys])
            pos = np.searchsorted(keys, y)
            return self.index[self.start_year] / vals[np.clip(pos, 0, len(keys) - 1)]
        return np.ones_like(y)

    def check_years(self, years, what: str) -> None:
        """An index must cover the start year and every year of the records (no silent extrapolation)."""
        if self.kind != "index":
            return
        need = sorted({int(y) for y in np.unique(np.asarray(years))} | {self.start_year})
        missing = [y for y in need if y not in self.index]
        if missing:
            have = f"{min(self.index)} … {max(self.index)}" if self.index else "none"
            raise CaseError([Problem(self.source, "year", f"no index for {', '.join(map(str, missing[:12]))}"
                                     f"{' …' if len(missing) > 12 else ''}, needed by the {what} and the start "
                                     f"year {self.start_year} (years in the file: {have})")])

    def describe(self) -> str:
        """One sentence for the summary and the report."""
        if self.kind == "inflation":
            return (f"amounts of year y were multiplied by (1 + {self.rate:g})^({self.start_year} − y) "
                    f"to constant {self.start_year} currency")
        if self.kind == "index":
            return (f"amounts of year y were multiplied by index({self.start_year}) / index(y) from "
                    f"{self.source} to constant {self.start_year} currency")
        return f"amounts were taken as constant {self.start_year} currency (no --index or --inflation given)"

    def to_dict(self) -> dict:
        return {"kind": self.kind, "start_year": self.start_year, "rate": self.rate,
                "index": {str(k): v for k, v in sorted(self.index.items())}, "source": self.source,
                "method": self.describe()}
