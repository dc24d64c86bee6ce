"""Cost curves: price by purchase year, O&M by age and vintage, market value by age and sale year.

This is the one implementation of the case file's cost forms; every solver and
report reads costs through these functions.  All functions broadcast over
numpy arrays of ages and years.  Definitions (docs/conventions.md):

- price of a type bought in year ``y``: ``price·(1+price_change)^(y − start_year)``;
- O&M of a unit of vintage ``v`` in service year ``a`` (a = 1, 2, …):
  ``om(a)·(1+om_change)^(v − start_year)``;
- market value of a unit of age ``a`` sold in year ``y`` follows the type's
  *current* new price ``price(y)``; age 0 is worth the price.
"""

from __future__ import annotations

import numpy as np

from .model import AssetType, OMCurve, ValueCurve


def price(t: AssetType, year, start_year: int):
    """First cost of a new unit of type ``t`` bought in calendar ``year`` [money].

    ``price·(1+price_change)^(year − start_year)``.
    """
    y = np.asarray(year, dtype=float)
    out = t.price * (1.0 + t.price_change) ** (y - start_year)
    return out if out.ndim else float(out)


def om_base(curve: OMCurve, age):
    """O&M of service year ``age`` (1, 2, …) for the start-year vintage [money/year].

    Parameters
    ----------
    curve : OMCurve
    age : int or array of int
        Service year counted from 1 (the first year after purchase).

    Notes
    -----
    gradient: ``first + gradient·(a−1)``; growth: ``first·(1+growth)^(a−1)``;
    table: the ``a``-th figure (ages past the list keep its last figure, which
    only a unit already past its max age could reach).
    """
    a = np.asarray(age)
    if curve.kind == "gradient":
        out = curve.first + curve.gradient * (a - 1.0)
    elif curve.kind == "growth":
        out = curve.first * (1.0 + curve.growth) ** (a - 1.0)
    elif curve.kind == "table":
        tab = np.asarray(curve.table, dtype=float)
        out = tab[np.clip(a.astype(int) - 1, 0, len(tab) - 1)]
    else:  # pragma: no cover - model objects are built by tenure.case
        raise ValueError(f"unknown O&M form {curve.kind!r}")
    out = np.asarray(out, dtype=float)
    return out if out.ndim else float(out)


def om(t: AssetType, age, vintage, start_year: int):
    """O&M of a unit of type ``t`` and ``vintage`` in service year ``age`` [money/year].

    ``om(a)·(1+om_change)^(vintage − start_year)``; an existing unit's vintage is
    ``start_year − age at start``.
    """
    v = np.asarray(vintage, dtype=float)
    out = np.asarray(om_base(t.om, age)) * (1.0 + t.om_change) ** (v - start_year)
    return out if out.ndim else float(out)


def value_fraction(curve: ValueCurve, age, list_price: float):
    """Market value at ``age`` as a fraction of the current new price [-].

    retain: ``retain^a``; line: ``1 − (1−floor)·min(a, life)/life``; table: the
    listed value at age ``a`` divided by ``list_price`` (the start-year price),
    ages past the list keeping its last value; age 0 is 1 in every form.
    """
    a = np.asarray(age, dtype=float)
    if curve.kind == "retain":
        out = curve.retain ** a
    elif curve.kind == "line":
        out = 1.0 - (1.0 - curve.floor) * np.minimum(a, curve.life) / curve.life
    elif curve.kind == "table":
        tab = np.concatenate([[list_price], np.asarray(curve.table, dtype=float)]) / list_price
        out = tab[np.clip(a.astype(int), 0, len(tab) - 1)]
    else:  # pragma: no cover
        raise ValueError(f"unknown market-value form {curve.kind!r}")
    out = np.asarray(out, dtype=float)
    return out if out.ndim else float(out)


def market_value(t: AssetType, age, year, start_year: int):
    """Market value of a unit of type ``t`` and ``age`` sold in calendar ``year`` [money].

    ``value_fraction(age) · price(year)``: values follow the type's current new
    price, so a type whose price falls loses resale value with it.
    """
    out = np.asarray(value_fraction(t.salvage, age, t.price)) * np.asarray(price(t, year, start_year))
    return out if out.ndim else float(out)


def tonnes(t: AssetType, vintage, start_year: int):
    """Tonnes CO2e per year of service of a unit of type ``t`` and ``vintage`` [t/year].

    ``first·(1+change)^(vintage − start_year)``; independent of age.
    """
    v = np.asarray(vintage, dtype=float)
    out = t.emissions.first * (1.0 + t.emissions.change) ** (v - start_year)
    out = np.asarray(out, dtype=float)
    return out if out.ndim else float(out)
