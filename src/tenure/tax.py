"""Income tax: depreciation schedules, book values and the after-tax pieces of arc costs.

The cash-flow timing is stated once in ``docs/conventions.md`` ("Income
tax").  In short, with tax rate ``τ``, basis ``B`` (the purchase price; for a
unit held at the start, its type's price in its purchase year) and ``d_j`` the
fraction of the basis depreciated in service year ``j``:

- O&M after tax: ``(1 − τ)·c_j``, paid at the end of service year ``j``;
- depreciation tax shield: ``τ·d_j·B``, received at the end of service year ``j``;
- a sale after ``a`` completed service years ends the depreciation (no
  further half-year); book value ``BV_a = B·(1 − Σ_{j≤a} d_j)``; the tax on
  the sale ``τ·(MV − BV_a)`` is paid at the sale (a credit when negative).
  The same rule values the units held at the end of the horizon.

Every function broadcasts over numpy arrays of ages and purchase years.

References
----------
.. [1] Internal Revenue Service, Publication 946, *How to Depreciate
   Property*, Appendix A, Table A-1 (3-, 5-, 7-, 10-, 15- and 20-year
   property, half-year convention).
.. [2] W. G. Sullivan, E. M. Wicks, C. P. Koelling, *Engineering Economy*,
   Pearson, chapters on depreciation and income taxes (after-tax cash flows,
   depreciation recapture) and on replacement analysis (after-tax economic life).
"""

from __future__ import annotations

import numpy as np

from . import curves
from .model import AssetType, Case, Depreciation

#: MACRS GDS percentages of the basis by recovery year, half-year convention: IRS Publication 946,
#: "How to Depreciate Property", Appendix A, Table A-1.  200 % declining balance switching to straight
#: line for 3-, 5-, 7- and 10-year property, 150 % for 15- and 20-year property; one more year than the
#: recovery period because the first and the last year are half years.
MACRS_HALF_YEAR: dict[int, tuple[float, ...]] = {
    3: (33.33, 44.45, 14.81, 7.41),
    5: (20.00, 32.00, 19.20, 11.52, 11.52, 5.76),
    7: (14.29, 24.49, 17.49, 12.49, 8.93, 8.92, 8.93, 4.46),
    10: (10.00, 18.00, 14.40, 11.52, 9.22, 7.37, 6.55, 6.55, 6.56, 6.55, 3.28),
    15: (5.00, 9.50, 8.55, 7.70, 6.93, 6.23, 5.90, 5.90, 5.91, 5.90, 5.91, 5.90, 5.91, 5.90, 5.91, 2.95),
    20: (3.750, 7.219, 6.677, 6.177, 5.713, 5.285, 4.888, 4.522, 4.462, 4.461, 4.462, 4.461, 4.462, 4.461,
         4.462, 4.461, 4.462, 4.461, 4.462, 4.461, 2.231),
}


def schedule(dep: Depreciation) -> np.ndarray:
    """Fractions of the basis depreciated in service years 1 … n [-] (n: the schedule's length).

    straight-line: ``(1 − salvage)/life`` for ``life`` years; declining-balance:
    ``d_j = rate·BV_{j−1}`` (with ``switch``, ``max(rate·BV_{j−1}, BV_{j−1}/(life−j+1))``,
    the straight line over the remaining life) for ``life`` years, ``BV_0 = 1``;
    table: ``rates``; macrs: :data:`MACRS_HALF_YEAR` of ``recovery_years`` / 100.
    """
    if dep.method == "straight-line":
        return np.full(dep.life, (1.0 - dep.salvage) / dep.life)
    if dep.method == "declining-balance":
        out = np.empty(dep.life)
        book = 1.0
        for j in range(dep.life):
            d = dep.rate * book
            if dep.switch:
                d = max(d, book / (dep.life - j))
            out[j] = min(d, book)
            book -= out[j]
        return out
    if dep.method == "table":
        return np.asarray(dep.rates, dtype=float)
    if dep.method == "macrs":
        return np.asarray(MACRS_HALF_YEAR[dep.recovery_years], dtype=float) / 100.0
    raise ValueError(f"unknown depreciation method {dep.method!r}")  # pragma: no cover - validated by tenure.case


def fraction(dep: Depreciation, service_year):
    """Fraction of the basis depreciated in service year ``j`` (1, 2, …) [-]; 0 outside the schedule."""
    d = np.concatenate([[0.0], schedule(dep), [0.0]])
    j = np.asarray(service_year).astype(int)
    out = d[np.clip(j, 0, len(d) - 1)]
    return out if out.ndim else float(out)


def book_fraction(dep: Depreciation, age):
    """Book value after ``age`` completed service years as a fraction of the basis [-].

    ``1 − Σ_{j ≤ age} d_j``; 1 at age 0, the schedule's remainder past its end.
    """
    cum = np.concatenate([[0.0], np.cumsum(schedule(dep))])
    a = np.asarray(age).astype(int)
    out = 1.0 - cum[np.clip(a, 0, len(cum) - 1)]
    out = np.maximum(out, 0.0)  # rounding of a table summing to 1 must not leave a negative book value
    return out if out.ndim else float(out)


def basis(t: AssetType, vintage, start_year: int):
    """Depreciable basis of a unit of type ``t`` bought in calendar year ``vintage`` [money]: its price then."""
    return curves.price(t, vintage, start_year)


def book_value(t: AssetType, age, vintage, start_year: int):
    """Book value of a unit of ``t`` and ``vintage`` after ``age`` completed service years [money]."""
    out = np.asarray(book_fraction(t.depreciation, age)) * np.asarray(basis(t, vintage, start_year))
    return out if out.ndim else float(out)


def shield(t: AssetType, tax_rate: float, service_year, vintage, start_year: int):
    """Depreciation tax shield of service year ``j`` [money], received at that year's end.

    ``τ·d_j·B(vintage)``.
    """
    out = tax_rate * np.asarray(fraction(t.depreciation, service_year)) * np.asarray(basis(t, vintage, start_year))
    return out if out.ndim else float(out)


def after_tax_om(om, tax_rate: float):
    """O&M after tax [money]: ``(1 − τ)·c``, paid when the O&M is."""
    out = (1.0 - tax_rate) * np.asarray(om, dtype=float)
    return out if out.ndim else float(out)


def tax_on_sale(market_value, book, tax_rate: float):
    """Tax paid on a sale [money]: ``τ·(MV − BV)``; negative (a credit) for a sale below book value."""
    out = tax_rate * (np.asarray(market_value, dtype=float) - np.asarray(book, dtype=float))
    return out if out.ndim else float(out)


def keep_cash(t: AssetType, tax_rate: float, om, service_year, vintage, start_year: int):
    """After-tax cost of service year ``j`` of a unit [money], paid at the year's end.

    ``(1 − τ)·c_j − τ·d_j·B(vintage)``; ``om`` is the before-tax ``c_j``.
    """
    out = np.asarray(after_tax_om(om, tax_rate)) - np.asarray(shield(t, tax_rate, service_year, vintage, start_year))
    return out if out.ndim else float(out)


def sale_cash(t: AssetType, tax_rate: float, market_value, age, vintage, start_year: int):
    """After-tax proceeds of selling a unit of ``age`` and ``vintage`` at ``market_value`` [money].

    ``MV − τ·(MV − BV_age)``.
    """
    bv = book_value(t, age, vintage, start_year)
    out = np.asarray(market_value, dtype=float) - np.asarray(tax_on_sale(market_value, bv, tax_rate))
    return out if out.ndim else float(out)


def keep_pw(t: AssetType, tax_rate: float, om, service_year, vintage, start_year: int, discount):
    """Present worth of :func:`keep_cash` [money], ``discount`` the factor of the year's end."""
    return np.asarray(keep_cash(t, tax_rate, om, service_year, vintage, start_year)) * np.asarray(discount)


def shield_pw(t: AssetType, tax_rate: float, service_year, vintage, start_year: int, discount):
    """Present worth of :func:`shield` [money], ``discount`` the factor of the year's end."""
    return np.asarray(shield(t, tax_rate, service_year, vintage, start_year)) * np.asarray(discount)


def sale_tax_pw(t: AssetType, tax_rate: float, market_value, age, vintage, start_year: int, discount):
    """Present worth of the tax on a sale [money], ``discount`` the factor of the sale time."""
    bv = book_value(t, age, vintage, start_year)
    return np.asarray(tax_on_sale(market_value, bv, tax_rate)) * np.asarray(discount)


def overhaul_book(t: AssetType, since):
    """Book value of a unit's capitalised overhaul ``since`` completed years after it [money].

    ``C·(1 − Σ_{j ≤ since} d_j)`` with ``C`` the overhaul cost and ``d_j`` the
    type's own depreciation (docs/conventions.md, "Income tax": an overhaul is
    an improvement depreciated as separate property of the unit's class,
    from the year it is done; IRS Publication 946, "Improvements"); 0 for a
    type without an overhaul.
    """
    cost = 0.0 if t.overhaul is None else t.overhaul.cost
    out = cost * np.asarray(book_fraction(t.depreciation, since))
    return out if out.ndim else float(out)


def overhaul_shield(t: AssetType, tax_rate: float, service_year):
    """Tax shield of the overhaul's depreciation in its service year ``j`` [money]: ``τ·d_j·C``."""
    cost = 0.0 if t.overhaul is None else t.overhaul.cost
    out = tax_rate * cost * np.asarray(fraction(t.depreciation, service_year))
    return out if out.ndim else float(out)


def arc_cash(case: Case, types, om_keep, om_new, value, valid, overhauled_at=None, om_overhaul=None):
    """After-tax cash of every arc (docs/conventions.md, "Income tax"), undiscounted [money].

    Returns ``keep_cash (H, T, A+1)`` = (1−τ)·O&M − τ·d_(a+1)·B paid at k+1,
    ``new_cash (H, T)`` = the same for service year 1 of a unit bought at k,
    ``sale_cash (H+1, T, A+1)`` = MV − τ·(MV − BV_a) received at k, and the
    book values ``book (H+1, T, A+1)``; the basis ``B`` is the type's price in
    the vintage ``start_year + k − a``.  ``types`` has one entry per row (a
    type may repeat, as for the usage rows of ``tenure.derived``); the O&M
    arguments are before tax.

    With ``overhauled_at`` (per row, −1: not overhauled) a row overhauled at
    age a_o also carries the overhaul's depreciation: ``− τ·d_(a+1−a_o)·C`` on
    its keep arcs and ``C·(1 − Σ_{j≤a−a_o} d_j)`` in its book value; with
    ``om_overhaul (H, T, A+1)`` (the before-tax O&M of the year after an
    overhaul done at age a) a fifth table ``overhaul_cash`` is returned:
    (1−τ)·O&M − τ·(d_(a+1)·B + d_1·C) paid at k+1 (the cost C itself is
    capital, paid at k with no tax effect then).
    """
    s = case.study
    tau, y0, H = s.tax_rate, s.start_year, s.horizon
    ages = np.arange(valid.shape[1])
    kk = np.arange(H + 1)
    vint = (y0 + kk)[:, None] - ages[None, :]
    ao = np.full(len(types), -1) if overhauled_at is None else np.asarray(overhauled_at)
    keep = np.empty_like(om_keep)
    sale = np.empty_like(value)
    book = np.empty_like(value)
    new = np.empty_like(om_new)
    ov = None if om_overhaul is None else np.empty_like(om_overhaul)
    with np.errstate(invalid="ignore"):  # inf O&M marks arcs that do not exist; they stay inf
        for j, t in enumerate(types):
            keep[:, j] = keep_cash(t, tau, om_keep[:, j], ages[None, :] + 1, vint[:H], y0)
            new[:, j] = keep_cash(t, tau, om_new[:, j], 1, y0 + kk[:H], y0)
            bv = book_value(t, ages[None, :], vint, y0)
            if ao[j] >= 0:
                since = np.maximum(ages - ao[j], 0)[None, :]
                keep[:, j] -= overhaul_shield(t, tau, since + 1)
                bv = bv + overhaul_book(t, since)
            book[:, j] = np.where(valid[j][None, :], bv, 0.0)
            sale[:, j] = value[:, j] - tax_on_sale(value[:, j], book[:, j], tau)
            if ov is not None:
                ov[:, j] = keep_cash(t, tau, om_overhaul[:, j], ages[None, :] + 1, vint[:H], y0) \
                    - overhaul_shield(t, tau, 1)
    keep = np.where(np.isfinite(om_keep), keep, np.inf)
    if ov is None:
        return keep, new, sale, book
    return keep, new, sale, book, ov
