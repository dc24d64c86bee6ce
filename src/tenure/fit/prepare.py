"""The prepared tables of a fit: O&M per unit and service year, and market-value ratios of sales.

O&M (docs/fitting.md, "Preparing the records"):

1. every record is brought to constant start-year currency by its calendar year
   (:class:`~tenure.fit.deflate.PriceLevel`);
2. it is divided by ``(1+om_change)^(vintage − start_year)`` of its type, so the fitted curve is the
   start-year vintage's curve that the case format describes (docs/conventions.md);
3. its service year is ``⌊months since the in-service month / 12⌋ + 1`` (dates are taken to the month;
   with a ``year`` column, the calendar year counted from the in-service year);
4. records are summed per unit and service year; a service year is kept only when it lies wholly inside
   every cost file's observed window and wholly before the unit's out-of-service month — partial first
   and last years are dropped, not pro-rated.

Market value: each sale price (constant currency) is divided by the type's new price in the sale year,
``price·(1+price_change)^(year − start_year)``, giving the ratio the case's value forms describe.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from .. import curves
from ..model import Case
from .deflate import PriceLevel


def unit_years(costs: list[pd.DataFrame], reg: pd.DataFrame, case: Case, level: PriceLevel) -> pd.DataFrame:
    """One row per unit and complete service year: unit, type, service_year, cost, records, vintage.

    ``cost`` is constant start-year currency for the start-year vintage [money/year]; the frame's
    ``attrs`` count the records and the unit-years dropped as partial.
    """
    start = case.study.start_year
    if not costs:
        return pd.DataFrame(columns=["unit", "type", "service_year", "cost", "records", "vintage"])
    w0 = max(c.attrs["window"][0] for c in costs)
    w1 = min(c.attrs["window"][1] for c in costs)
    parts = []
    for c in costs:
        ins = c["unit"].map(reg["in_service"])
        out = c["unit"].map(reg["out_of_service"])
        mi = (ins.dt.year * 12 + ins.dt.month - 1).to_numpy()
        if c.attrs["when"] == "date":
            m = (c["date"].dt.year * 12 + c["date"].dt.month - 1).to_numpy()
            s = (m - mi) // 12 + 1
            first_m = mi + 12 * (s - 1)
        else:
            late = ((ins.dt.month > 1) | (ins.dt.day > 1)).to_numpy().astype(int)
            s = c["year"].to_numpy() - ins.dt.year.to_numpy() + 1 - late
            first_m = c["year"].to_numpy() * 12
        last_m = first_m + 11
        out_m = (out.dt.year * 12 + out.dt.month - 1).to_numpy(dtype=float, na_value=np.inf)
        complete = (s >= 1) & (first_m >= w0) & (last_m <= w1) & (last_m < out_m)
        vintage = ins.dt.year.to_numpy()
        om_change = c["type"].map({t.id: t.om_change for t in case.types}).to_numpy(dtype=float)
        real = c["amount"].to_numpy() * level.factors(c["year"].to_numpy())
        real = real / (1.0 + om_change) ** (vintage - start)
        parts.append(pd.DataFrame({"unit": c["unit"].to_numpy(), "type": c["type"].to_numpy(), "service_year": s,
                                   "cost": real, "complete": complete, "vintage": vintage}))
    rec = pd.concat(parts, ignore_index=True)
    g = rec.groupby(["unit", "service_year"], sort=True)
    table = g.agg(type=("type", "first"), cost=("cost", "sum"), records=("cost", "size"),
                  complete=("complete", "all"), vintage=("vintage", "first")).reset_index()
    kept = table.loc[table["complete"]].drop(columns="complete").reset_index(drop=True)
    kept = kept[["unit", "type", "service_year", "cost", "records", "vintage"]]
    kept.attrs.update(records=int(len(rec)), unit_years_partial=int((~table["complete"]).sum()),
                      window=(int(w0), int(w1)))
    return kept


def sale_ratios(sales: pd.DataFrame | None, case: Case, level: PriceLevel) -> pd.DataFrame:
    """One row per sale: type, year, age [years], price (constant currency), new_price, ratio [-]."""
    if sales is None or sales.empty:
        return pd.DataFrame(columns=["type", "year", "age", "price", "new_price", "ratio"])
    start = case.study.start_year
    real = sales["price"].to_numpy() * level.factors(sales["year"].to_numpy())
    new = np.empty(len(sales))
    for t in case.types:
        m = (sales["type"] == t.id).to_numpy()
        new[m] = curves.price(t, sales["year"].to_numpy()[m], start)
    return pd.DataFrame({"type": sales["type"].to_numpy(), "year": sales["year"].to_numpy(),
                         "age": sales["age"].to_numpy(), "price": real, "new_price": new, "ratio": real / new})
