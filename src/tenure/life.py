"""Economic life: stationary EAC by holding period, marginal cost, and the capitalised chain.

For a unit bought at time 0 for ``P``, held ``N`` years and sold for ``S_N``,
with O&M ``c_a`` of service year ``a`` paid at the end of that year, at
discount rate ``i`` (docs/conventions.md):

    EAC_capital(N) = P·(A/P,i,N) − S_N·(A/F,i,N)
    EAC_om(N)      = [Σ_{a=1..N} c_a·(P/F,i,a)]·(A/P,i,N)
    EAC(N)         = EAC_capital(N) + EAC_om(N)

The *economic life* is the ``N`` of least EAC (the shortest on ties).  The
*marginal cost* of year ``N`` is the defender's cost of keeping one more year,
valued at the end of that year:

    MC(N) = (S_{N−1} − S_N) + i·S_{N−1} + c_N,      S_0 = P

(lost market value, interest on the value held, that year's O&M).

After tax (``tax_rate`` τ given; docs/conventions.md, "Income tax") the same
formulas hold with the after-tax sale value ``S'_N = S_N − τ·(S_N − BV_N)``,
the after-tax O&M ``(1−τ)·c_a`` and the depreciation shield ``τ·d_a·P``
received at the end of service year ``a``:

    EAC(N) = P·(A/P,i,N) − S'_N·(A/F,i,N)
             − [Σ τ·d_a·P·(P/F,i,a)]·(A/P,i,N) + [Σ (1−τ)·c_a·(P/F,i,a)]·(A/P,i,N)

References
----------
.. [1] W. G. Sullivan, E. M. Wicks, C. P. Koelling, *Engineering Economy*,
   Pearson, chapter on replacement analysis (economic life of a new asset,
   marginal cost of the defender).
.. [2] C. S. Park, *Contemporary Engineering Economics*, Pearson, chapter on
   replacement decisions (economic service life).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from . import curves, money, tax
from .model import AssetType

DEFAULT_TOLERANCE = 0.02


@dataclass(frozen=True)
class LifeTable:
    """EAC of a type by holding period (one result object per computation).

    Attributes
    ----------
    type, year : str, int
        Type id and purchase year.
    years : ndarray of int
        Holding periods N = 1 … n [years].
    eac_capital, eac_om, eac_total, marginal : ndarray
        [money/year], one per N.
    economic_life : int
        N of least EAC (shortest on ties).
    min_eac : float
        [money/year].
    band : tuple[int, int]
        The run of N around the economic life whose EAC is within
        ``tolerance`` (relative) of the minimum.
    tolerance : float
    tax_rate : float or None
        Set for an after-tax table; ``eac_capital`` then uses the after-tax
        sale value and ``eac_om`` the after-tax O&M.
    eac_shield : ndarray or None
        EAC of the depreciation tax shields (negative: a saving) [money/year],
        included in ``eac_total`` (after tax only).
    """

    type: str
    year: int
    years: np.ndarray
    eac_capital: np.ndarray
    eac_om: np.ndarray
    eac_total: np.ndarray
    marginal: np.ndarray
    economic_life: int
    min_eac: float
    band: tuple[int, int]
    tolerance: float
    tax_rate: float | None = None
    eac_shield: np.ndarray | None = None

    def to_dict(self) -> dict:
        rows = [
            {"years": int(n), "eac_capital": float(c), "eac_om": float(o), "eac_total": float(t), "marginal": float(m)}
            for n, c, o, t, m in zip(self.years, self.eac_capital, self.eac_om, self.eac_total, self.marginal)
        ]
        if self.eac_shield is not None:
            for row, sh in zip(rows, self.eac_shield):
                row["eac_shield"] = float(sh)
        d = {"type": self.type, "year": int(self.year), "rows": rows, "economic_life": int(self.economic_life),
             "min_eac": float(self.min_eac), "band": [int(self.band[0]), int(self.band[1])]}
        if self.tax_rate is not None:
            d["tax_rate"] = float(self.tax_rate)
        return d

    def to_frame(self):
        """The table as a DataFrame, one row per holding period N [years].

        Columns: ``holding_years``, ``eac_capital``, ``eac_om``, ``eac_total``
        [money/year], ``marginal_cost`` [money, at the end of year N],
        ``economic_life`` (True on the least-EAC row) and ``near_optimal``
        (True inside the band).  ``attrs`` holds ``type``, ``year``,
        ``economic_life``, ``min_eac``, ``band`` and ``tolerance``.
        """
        import pandas as pd

        n = np.asarray(self.years, dtype=int)
        df = pd.DataFrame({"holding_years": n, "eac_capital": self.eac_capital, "eac_om": self.eac_om,
                           "eac_total": self.eac_total, "marginal_cost": self.marginal,
                           "economic_life": n == self.economic_life,
                           "near_optimal": (n >= self.band[0]) & (n <= self.band[1])})
        df.attrs.update(type=self.type, year=int(self.year), economic_life=int(self.economic_life),
                        min_eac=float(self.min_eac), band=(int(self.band[0]), int(self.band[1])),
                        tolerance=float(self.tolerance))
        return df


def eac_components(price: float, salvage, om, rate: float):
    """EAC of capital, of O&M and in total for holding periods N = 1 … n.

    Parameters
    ----------
    price : float
        First cost at time 0 [money].
    salvage : array, shape (n,)
        Market value received at the end of year N, for N = 1 … n [money].
    om : array, shape (n,)
        O&M of service years 1 … n, each paid at the end of its year [money].
    rate : float
        Discount rate [1/year].

    Returns
    -------
    eac_capital, eac_om, eac_total : ndarray, shape (n,)
        [money/year].

    Examples
    --------
    With no interest and no resale, the capital EAC is the price spread evenly
    (common practice):

    >>> cap, _, _ = eac_components(1000.0, [0.0, 0.0, 0.0, 0.0], [0, 0, 0, 0], 0.0)
    >>> [round(x, 6) for x in cap]
    [1000.0, 500.0, 333.333333, 250.0]
    """
    s = np.asarray(salvage, dtype=float)
    c = np.asarray(om, dtype=float)
    n = np.arange(1, len(s) + 1)
    ap = money.ap(rate, n)
    eac_cap = price * ap - s * money.af(rate, n)
    pw_om = np.cumsum(c * money.pf(rate, n))
    eac_om = pw_om * ap
    return eac_cap, eac_om, eac_cap + eac_om


def marginal_costs(price: float, salvage, om, rate: float) -> np.ndarray:
    """Marginal cost of keeping a unit through year N, valued at the end of year N [money].

    ``MC(N) = S_{N−1}·(1+i) − S_N + c_N`` with ``S_0 = price``.
    """
    s = np.asarray(salvage, dtype=float)
    prev = np.concatenate([[price], s[:-1]])
    return prev * (1.0 + rate) - s + np.asarray(om, dtype=float)


def _band(eac: np.ndarray, best: int, tolerance: float) -> tuple[int, int]:
    limit = eac[best] + abs(eac[best]) * tolerance
    lo = best
    while lo > 0 and eac[lo - 1] <= limit:
        lo -= 1
    hi = best
    while hi < len(eac) - 1 and eac[hi + 1] <= limit:
        hi += 1
    return lo + 1, hi + 1


def _argmin_first(x: np.ndarray) -> int:
    """Index of the least value, the first on ties (within rounding noise)."""
    m = np.min(x)
    return int(np.flatnonzero(x <= m + 1e-9 * max(1.0, abs(m)))[0])


def life_table(t: AssetType, rate: float, start_year: int, year: int | None = None,
               tolerance: float = DEFAULT_TOLERANCE, frozen: bool = False, tax_rate: float | None = None,
               carbon_price: float = 0.0) -> LifeTable:
    """EAC by holding period for a unit of type ``t`` bought in ``year``.

    Parameters
    ----------
    t : AssetType
    rate : float
        Discount rate [1/year].
    start_year : int
        The study's start year (base of price and O&M changes).
    year : int, optional
        Purchase year (default ``start_year``).
    tolerance : float
        Relative width of the band of near-optimal lives (0.02 = 2 %).
    frozen : bool
        When True the sale after N years is valued at the purchase year's
        prices (prices frozen, as for the "continuing" end value); otherwise a
        sale in year ``year+N`` follows that year's new price.
    tax_rate : float, optional
        Income-tax rate; when given the table is after tax (the type needs a
        depreciation method) and ``rate`` is the after-tax discount rate.
    carbon_price : float
        Money per tonne CO2e [money/t]; the unit's priced tonnes are added to each
        service year's O&M ``c_a``.

    A type's ``min_age`` N₀ removes holding periods shorter than N₀ from the
    choice: the economic life and its band start at N₀ (the rows are still listed).
    """
    year = start_year if year is None else year
    n = np.arange(1, t.max_age + 1)
    p = curves.price(t, year, start_year)
    sale_year = np.full(n.shape, year) if frozen else year + n
    s = np.asarray(curves.market_value(t, n, sale_year, start_year))
    c = np.asarray(curves.om(t, n, year, start_year)) + carbon_price * curves.tonnes(t, year, start_year)
    shield_eac = None
    if tax_rate is not None:
        # the basis is the purchase price p, also when later sales follow later prices
        s = np.asarray(tax.sale_cash(t, tax_rate, s, n, year, start_year))
        shield = np.asarray(tax.shield(t, tax_rate, n, year, start_year))
        c = np.asarray(tax.after_tax_om(c, tax_rate))
        shield_eac = -np.cumsum(shield * money.pf(rate, n)) * money.ap(rate, n)
        c_net = c - shield
    cap, om_eac, total = eac_components(p, s, c, rate)
    mc = marginal_costs(p, s, c, rate)
    if tax_rate is not None:
        total = total + shield_eac
        mc = marginal_costs(p, s, c_net, rate)
    first = max(t.min_age, 1) - 1  # holding periods shorter than min_age are not allowed
    best = first + _argmin_first(total[first:])
    lo, hi = _band(total[first:], best - first, tolerance)
    return LifeTable(type=t.id, year=year, years=n, eac_capital=cap, eac_om=om_eac, eac_total=total, marginal=mc,
                     economic_life=best + 1, min_eac=float(total[best]), band=(lo + first, hi + first),
                     tolerance=tolerance, tax_rate=tax_rate, eac_shield=shield_eac)


def capitalised_chain_cost(t: AssetType, rate: float, start_year: int, year: int,
                           tax_rate: float | None = None, carbon_price: float = 0.0) -> tuple[float, int]:
    """Present cost at time ``year`` of an endless chain of new units of ``t`` [money].

    All prices, values and O&M frozen at ``year``; each unit is kept for its
    economic life ``N*``; the cost of the chain, first purchase included, is
    the capitalised cost ``EAC*/i`` (common practice: the infinite identical
    chain).  Needs ``rate > 0``.  With ``tax_rate`` the EAC is after tax.

    Returns
    -------
    cost : float
        [money], at time ``year``.
    life : int
        The economic life used [years].
    """
    if rate <= 0:
        raise ValueError(f"capitalised cost needs discount rate > 0, got {rate!r}")
    lt = life_table(t, rate, start_year, year, frozen=True, tax_rate=tax_rate, carbon_price=carbon_price)
    return lt.min_eac / rate, lt.economic_life


def continuing_cost(held: AssetType, age: int, vintage: int, chain_cost: float, rate: float, start_year: int,
                    year: int, tax_rate: float | None = None, carbon_price: float = 0.0) -> float:
    """Least present cost, at time ``year``, of a held unit under the "continuing" end value [money].

    The unit of type ``held`` and ``age`` is kept ``n`` more years
    (0 ≤ n ≤ max_age − age), paying its own vintage's O&M, then sold at the
    frozen market value and replaced by an endless chain costing
    ``chain_cost`` (from :func:`capitalised_chain_cost`):

        min_n  Σ_{j=1..n} c(age+j)·v^j − S(age+n)·v^n + v^n·chain_cost,   v = 1/(1+i)

    with every market value valued at ``year``'s prices.  With ``tax_rate``,
    ``c`` is the after-tax O&M less the depreciation shield of the unit's own
    vintage and ``S`` the after-tax sale value (docs/conventions.md); ``carbon_price`` [money/t] adds
    the unit's priced tonnes to ``c``.
    """
    return float(continuing_costs(held, np.array([age]), vintage_of(year, np.array([age])), chain_cost, rate,
                                  start_year, year, tax_rate=tax_rate, carbon_price=carbon_price)[0])


def vintage_of(year: int, age):
    """Purchase year of a unit of ``age`` at the start of ``year``."""
    return year - np.asarray(age)


def continuing_costs(held: AssetType, ages, vintages, chain_cost: float, rate: float, start_year: int,
                     year: int, tax_rate: float | None = None, carbon_price: float = 0.0) -> np.ndarray:
    """Vector form of :func:`continuing_cost` over ``ages`` (with their ``vintages``) [money].

    Evaluated on an (age × years kept) grid at once; cells past the max age are
    masked out of the minimum, and so are sales before the type's ``min_age``.
    ``carbon_price`` [money/t] adds the unit's priced tonnes to each year's O&M.
    """
    ages = np.asarray(ages, dtype=int)
    vintages = np.asarray(vintages)
    a = ages.ravel()[:, None]
    v = vintages.ravel()[:, None]
    n = np.arange(0, held.max_age + 1)[None, :]
    ok = (a + n <= held.max_age) & (a + n >= held.min_age)
    served = np.minimum(a + n, held.max_age)  # service year a+n, clipped where masked
    disc = np.asarray(money.pf(rate, np.arange(0, held.max_age + 1)))[None, :]
    # O&M of service year a+j paid j years on (j = 1 … n): cumulative over the grid's columns
    om_year = np.asarray(curves.om(held, np.maximum(served, 1), v, start_year)) + carbon_price * np.asarray(
        curves.tonnes(held, v, start_year))
    if tax_rate is not None:
        om_year = np.asarray(tax.keep_cash(held, tax_rate, om_year, np.maximum(served, 1), v, start_year))
    om_pw = np.where(n >= 1, om_year * disc, 0.0)
    om_pw = np.where(ok, om_pw, 0.0).cumsum(axis=1)
    sale = np.asarray(curves.market_value(held, served, year, start_year))
    if tax_rate is not None:
        sale = np.asarray(tax.sale_cash(held, tax_rate, sale, served, v, start_year))
    total = np.where(ok, om_pw + disc * (chain_cost - sale), np.inf)
    return total.min(axis=1).reshape(ages.shape)
