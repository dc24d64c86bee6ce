"""``tenure fit`` from files to a :class:`~tenure.fit.result.FitResult`: read, prepare, fit, choose, flag.

Nothing here writes files (see :mod:`tenure.fit.writers`).
"""

from __future__ import annotations

import dataclasses
from pathlib import Path
from typing import Sequence

import numpy as np
import pandas as pd

from .. import plausibility
from ..case import CaseError
from ..life import life_table
from ..model import AssetType, Case
from . import bootstrap
from . import om as om_forms
from . import prepare, records
from . import value as value_forms
from .deflate import PriceLevel
from .result import FitResult, TypeFit

METHOD = {
    "om": "per type, OLS of annual O&M on service year (gradient), OLS of its log with Duan's smearing "
          "(growth), and smoothed means by age (list) when every age has enough unit-years",
    "market_value": "per type, OLS through the origin of the log price ratio on age (retain) and the "
                    "least-squares straight line to a floor (life/floor), ratio = price / new price in the sale year",
    "criterion": "least AIC on the original scale (cost, or price ratio); log-scale fits include the Jacobian",
    "intervals": "90 % two-sided t intervals from the OLS standard errors (Gauss-Newton for life/floor); "
                 "unit-years are taken as independent",
    "partial_years": "service years not wholly inside every cost file's window, or that end after the unit's "
                     "out-of-service month, are dropped (not pro-rated)",
    "vintage": "costs are divided by (1+om_change)^(vintage - start_year) so the fit is the start-year vintage",
    "minimums": f"O&M: {om_forms.MIN_UNITS} units and {om_forms.MIN_AGES} service years; list form: "
                f"{om_forms.MIN_PER_AGE} unit-years at every age; market value: {value_forms.MIN_SALES} sales at "
                f"{value_forms.MIN_SALE_AGES} whole ages; below them the case curve is kept",
}


def price_level(case: Case, index: str | Path | None = None, inflation: float | None = None) -> PriceLevel:
    """The price level of ``--index FILE`` or ``--inflation R`` (or none)."""
    start = case.study.start_year
    if index is not None:
        return PriceLevel(start, "index", index=records.read_index(index), source=str(index))
    if inflation is not None:
        return PriceLevel(start, "inflation", rate=float(inflation))
    return PriceLevel(start)


BOOTSTRAP_TEXT = (f"90 % percentile intervals and standard errors from a bootstrap over units ({bootstrap.REPLICATES} "
                  "replicates; sales resampled one by one; life/floor keeps its Gauss-Newton intervals); the "
                  "bands in fit.html are the OLS ones")


def fit_case(case: Case, costs: Sequence[str | Path], sales: str | Path | None = None,
             units: str | Path | None = None, level: PriceLevel | None = None,
             intervals: str = "ols") -> FitResult:
    """Fit O&M and market-value curves of every type of ``case`` from record files.

    ``intervals`` is ``"ols"`` (the OLS formulae) or ``"bootstrap"`` (over units, :mod:`.bootstrap`).

    Raises
    ------
    CaseError
        With every problem of the record files (file, row, column, value, what is allowed).
    """
    level = level or PriceLevel(case.study.start_year)
    reg = records.unit_register(case, units)
    cost_frames, problems = [], []
    for path in costs:
        try:
            cost_frames.append(records.read_costs(path, reg))
        except CaseError as exc:
            problems += exc.problems
    sale_frame = None
    if sales is not None:
        try:
            sale_frame = records.read_sales(sales, reg, case)
        except CaseError as exc:
            problems += exc.problems
    if problems:
        raise CaseError(problems)
    for c in cost_frames:
        level.check_years(c["year"].to_numpy(), f"cost records of {c.attrs['file']}")
    if sale_frame is not None:
        level.check_years(sale_frame["year"].to_numpy(), f"sale records of {sale_frame.attrs['file']}")
    uy = prepare.unit_years(cost_frames, reg, case, level)
    sr = prepare.sale_ratios(sale_frame, case, level)
    fits = tuple(fit_type(case, t, uy.loc[uy["type"] == t.id], sr.loc[sr["type"] == t.id], intervals)
                 for t in case.types)
    inputs = {"costs": [{"file": c.attrs["file"], "records": c.attrs["rows"], "dated_by": c.attrs["when"],
                         "unused_columns": list(c.attrs["unused"])} for c in cost_frames],
              "sales": None if sale_frame is None else {"file": sale_frame.attrs["file"], "records": len(sale_frame),
                                                        "unused_columns": list(sale_frame.attrs["unused"])},
              "units": None if units is None else str(units),
              "unit_years_kept": int(len(uy)), "unit_years_dropped_partial": int(uy.attrs.get("unit_years_partial", 0))}
    warn = tuple(f for tf in fits for f in tf.flags)
    return FitResult(source=case.source, start_year=case.study.start_year, types=fits, price_level=level.to_dict(),
                     method=dict(METHOD, **({"intervals": BOOTSTRAP_TEXT} if intervals == "bootstrap" else {})),
                     inputs=inputs, warnings=warn, unit_years=uy, sales=sr)


def _bootstrapped(forms, uy: pd.DataFrame | None, sr: pd.DataFrame | None):
    """Forms with bootstrap intervals where the bootstrap applies (gradient, growth, retain)."""
    out = []
    for f in forms:
        if f.form in ("gradient", "growth"):
            f = bootstrap.apply(f, bootstrap.om_replicates(uy["unit"], uy["service_year"], uy["cost"],
                                                           log=f.form == "growth"))
        elif f.form == "retain":
            f = bootstrap.apply(f, bootstrap.retain_replicates(sr["age"], sr["ratio"]))
        out.append(f)
    return out


def fit_type(case: Case, t: AssetType, uy: pd.DataFrame, sr: pd.DataFrame, intervals: str = "ols") -> TypeFit:
    """Fit one type; too few units, ages or sales keep its case curve, with a flag saying so."""
    flags: list[str] = []
    n_units, n_ages = int(uy["unit"].nunique()), int(uy["service_year"].nunique())
    om_tried, om_pick = [], None
    if n_units >= om_forms.MIN_UNITS and n_ages >= om_forms.MIN_AGES:
        om_tried, notes = om_forms.fit_all(uy["service_year"].to_numpy(), uy["cost"].to_numpy(), t.max_age)
        if intervals == "bootstrap":
            om_tried = _bootstrapped(om_tried, uy, None)
        flags += [f"{t.id}: {n}" for n in notes if not n.startswith("list not tried")]
        om_pick = om_forms.choose(om_tried)
        if om_pick is None:
            flags.append(f"{t.id}: no fitted O&M form is a valid case curve; the case O&M is kept")
    else:
        flags.append(f"{t.id}: too few O&M records ({n_units} units, {n_ages} service years; minimum "
                     f"{om_forms.MIN_UNITS} and {om_forms.MIN_AGES}); the case O&M is kept")
    n_sales = len(sr)
    whole_ages = int(np.unique(np.round(sr["age"].to_numpy(float))).size) if n_sales else 0
    v_tried, v_pick = [], None
    if n_sales >= value_forms.MIN_SALES and whole_ages >= value_forms.MIN_SALE_AGES:
        v_tried, notes = value_forms.fit_all(sr["age"].to_numpy(float), sr["ratio"].to_numpy(float), t.max_age)
        if intervals == "bootstrap":
            v_tried = _bootstrapped(v_tried, None, sr)
        flags += [f"{t.id}: {n}" for n in notes]
        v_pick = om_forms.choose(v_tried)
        if v_pick is None:
            flags.append(f"{t.id}: no fitted market-value form is a valid case curve; the case curve is kept")
    else:
        flags.append(f"{t.id}: too few sales ({n_sales} at {whole_ages} ages; minimum {value_forms.MIN_SALES} at "
                     f"{value_forms.MIN_SALE_AGES}); the case market-value curve is kept")
    above = int((sr["ratio"] > 1).sum()) if n_sales else 0
    if above:
        flags.append(f"{t.id}: {above} sale(s) above the new price of their sale year")
    fitted = dataclasses.replace(t, om=om_pick.curve if om_pick else t.om,
                                 salvage=v_pick.curve if v_pick else t.salvage)
    if om_pick or v_pick:
        points = {t.id: min(x for x in (len(uy) if om_pick else None, n_sales if v_pick else None) if x is not None)}
        flags += plausibility.warnings(case, [fitted], points=points)
    rate, start = case.study.discount_rate, case.study.start_year
    return TypeFit(type=t.id, class_=t.class_, om_forms=tuple(om_tried), value_forms=tuple(v_tried),
                   om_chosen=om_pick.form if om_pick else None, value_chosen=v_pick.form if v_pick else None,
                   om=fitted.om, salvage=fitted.salvage, n_units=n_units, n_unit_years=int(len(uy)), n_ages=n_ages,
                   n_sales=n_sales, flags=tuple(flags), life_case=life_table(t, rate, start).economic_life,
                   life_fitted=life_table(fitted, rate, start).economic_life)
