"""Economic life at a usage level, with and without the type's mid-life overhaul.

For a unit of type ``t`` bought in ``year`` for ``P``, doing a job of yearly usage
``u`` (ratio ρ = u/usage_reference), held ``N`` years (N ≤ the usage-limited max age
``m``; ``m + adds_years`` with an overhaul), docs/conventions.md ("Usage", "Overhaul"):

    PW(N)          = P + Σ_{a=1..N} c_a·(P/F,i,a) − S_N·(P/F,i,N)
    PW(N; a_o)     = PW(N) with c_a = om(om_age_after + a − a_o)·ρ for a > a_o,
                     plus the overhaul cost C·(P/F,i,a_o)
    EAC            = PW·(A/P,i,N)

with ``c_a = om(a)·ρ`` (vintage ``year``) and ``S_N`` the value curve at equivalent
age N·ρ times the price of year ``year + N``.  The schedule of least EAC with the
overhaul is compared with the economic life without it: the stationary
defender/challenger comparison of the engineering-economy texts (e.g. W. G. Sullivan,
E. M. Wicks, C. P. Koelling, *Engineering Economy*, replacement analysis).  With a tax
rate the same schedules are priced after tax, the overhaul capitalised and depreciated
(docs/conventions.md, "Income tax").
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from . import curves, derived, money, tax
from .model import AssetType


@dataclass(frozen=True)
class RebuildLife:
    """EAC by holding period without and with the overhaul (one result per computation).

    ``eac_without[N−1]`` [money/year] for N = 1 … ``max_age``; ``eac_with[(a_o, N)]`` for
    each allowed overhaul age and holding period; ``best_with`` the (a_o, N) of least EAC with
    the overhaul (None without an overhaul option); ``tax_rate`` set when the EACs are after tax.
    """

    type: str
    year: int
    usage: float | None
    max_age: int
    eac_without: np.ndarray
    life_without: int
    min_without: float
    eac_with: dict
    best_with: tuple[int, int] | None
    min_with: float | None
    tax_rate: float | None = None

    def to_dict(self) -> dict:
        return {"type": self.type, "year": self.year, "usage": self.usage, "max_age": self.max_age,
                "eac_without": [float(x) for x in self.eac_without], "economic_life_without": self.life_without,
                "min_eac_without": self.min_without,
                "best_with_overhaul": None if self.best_with is None else
                {"overhaul_age": self.best_with[0], "years": self.best_with[1], "eac": self.min_with},
                **({} if self.tax_rate is None else {"tax_rate": self.tax_rate})}


def _pw(t: AssetType, rate: float, start_year: int, year: int, usage, n: int, ao: int | None,
        tax_rate: float | None = None) -> float:
    """Present worth at purchase of holding N = ``n`` years (overhauled at ``ao`` or never) [money].

    After tax (docs/conventions.md, "Income tax") each year costs ``(1−τ)·c_a − τ·d_a·P`` less the
    overhaul's shield ``τ·d_(a−a_o)·C`` after it, and the sale brings ``S_N − τ·(S_N − BV_N)``, the
    book value of the unit and of the overhaul.
    """
    rho = derived.ratio(t, usage)
    a = np.arange(1, n + 1)
    served = a if ao is None else np.where(a > ao, t.overhaul.om_age_after + a - ao, a)
    c = np.asarray(curves.om(t, served, year, start_year)) * rho
    v = np.asarray(money.pf(rate, a))
    s = float(derived.value_at(t, n, year + n, start_year, rho))
    if tax_rate is not None:
        c = np.asarray(tax.keep_cash(t, tax_rate, c, a, year, start_year))
        book = tax.book_value(t, n, year, start_year)
        if ao is not None:
            c = c - np.where(a > ao, tax.overhaul_shield(t, tax_rate, a - ao), 0.0)
            book += tax.overhaul_book(t, n - ao)
        s -= float(tax.tax_on_sale(s, book, tax_rate))
    pw = float(curves.price(t, year, start_year)) + float((c * v).sum()) - s * float(v[-1])
    if ao is not None:
        pw += t.overhaul.cost * float(money.pf(rate, ao))
    return pw


def rebuild_life(t: AssetType, rate: float, start_year: int, year: int | None = None,
                 usage: float | None = None, tax_rate: float | None = None) -> RebuildLife:
    """EAC by holding period of ``t`` bought in ``year`` at yearly ``usage``, without and with the overhaul.

    With ``tax_rate`` the EACs are after tax (``rate`` the after-tax rate; see :func:`_pw`).
    """
    year = start_year if year is None else year
    m = derived.row_max_age(t, usage, False)
    eac0 = np.array([_pw(t, rate, start_year, year, usage, n, None, tax_rate) * float(money.ap(rate, n))
                     for n in range(1, m + 1)])
    best0 = int(np.argmin(eac0))
    with_: dict = {}
    if t.overhaul is not None:
        top = derived.row_max_age(t, usage, True)
        for ao in t.overhaul.ages:
            if ao >= m:
                continue
            for n in range(ao + 1, top + 1):
                with_[(ao, n)] = _pw(t, rate, start_year, year, usage, n, ao, tax_rate) * float(money.ap(rate, n))
    best = min(with_, key=lambda key: (with_[key], key)) if with_ else None
    return RebuildLife(type=t.id, year=year, usage=usage, max_age=m, eac_without=eac0, life_without=best0 + 1,
                       min_without=float(eac0[best0]), eac_with=with_, best_with=best,
                       min_with=None if best is None else float(with_[best]), tax_rate=tax_rate)
