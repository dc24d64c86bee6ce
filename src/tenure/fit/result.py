"""The typed result of ``tenure fit``: one :class:`FitResult`, one :class:`TypeFit` per asset type.

Every object is frozen; ``to_dict()`` gives the JSON of ``fit.json`` and ``*_frame()`` the tables
behind it (pandas DataFrames).  Writers only read these objects.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Mapping

import pandas as pd

from ..model import OMCurve, ValueCurve


def _num(x):
    if x is None:
        return None
    x = float(x)
    return x if math.isfinite(x) else None


@dataclass(frozen=True)
class FormFit:
    """One form fitted to one type's records.

    Attributes
    ----------
    form : str
        ``gradient``, ``growth``, ``list`` (O&M) or ``retain``, ``line`` (market value).
    params : mapping
        The case-format parameters (``first``, ``gradient``, ``growth``, ``retain``, ``life``,
        ``floor``; the list form gives ``age_1 … age_n``) [money/year, rates, years, fractions].
    se, low, high : mapping
        Standard error and the 90 % interval of each parameter.
    n : int
        Points fitted (unit-years or sales).
    df : int
        Residual degrees of freedom.
    sse : float
        Residual sum of squares on the original scale (cost, or price ratio).
    r2 : float
        ``1 − SSE/SST`` on the scale fitted (log scale for ``growth`` and ``retain``).
    aic : float
        AIC on the original scale (the selection criterion).
    curve : OMCurve or ValueCurve or None
        The fitted curve as a model object; None when it is not a valid case curve.
    note : str
        E.g. the smearing factor, or why the curve is not valid.
    cov : tuple of tuples
        Covariance of the regression coefficients ``coef`` (scale as fitted).
    """

    form: str
    params: Mapping[str, float]
    se: Mapping[str, float]
    low: Mapping[str, float]
    high: Mapping[str, float]
    n: int
    df: int
    sse: float
    r2: float
    aic: float
    curve: OMCurve | ValueCurve | None
    note: str = ""
    coef: tuple[float, ...] = ()
    cov: tuple[tuple[float, ...], ...] = ()
    t: float = float("nan")

    def to_dict(self) -> dict:
        return {"form": self.form, "params": {k: _num(v) for k, v in self.params.items()},
                "se": {k: _num(v) for k, v in self.se.items()},
                "interval_90": {k: [_num(self.low[k]), _num(self.high[k])] for k in self.params},
                "n": self.n, "df": self.df, "sse": _num(self.sse), "r2": _num(self.r2), "aic": _num(self.aic),
                "valid": self.curve is not None, "note": self.note}


@dataclass(frozen=True)
class TypeFit:
    """The fit of one asset type: forms tried, the chosen ones, counts, flags and the curves to use.

    ``om_chosen``/``value_chosen`` are a form name or None (the case curve is kept); ``om``/``salvage``
    are the curves written to fitted.toml; ``life_case``/``life_fitted`` the economic lives [years]
    with the case's and the fitted curves (None when not computed).
    """

    type: str
    class_: str
    om_forms: tuple[FormFit, ...]
    value_forms: tuple[FormFit, ...]
    om_chosen: str | None
    value_chosen: str | None
    om: OMCurve
    salvage: ValueCurve
    n_units: int
    n_unit_years: int
    n_ages: int
    n_sales: int
    flags: tuple[str, ...]
    life_case: int | None = None
    life_fitted: int | None = None

    def form(self, name: str) -> FormFit | None:
        for f in self.om_forms + self.value_forms:
            if f.form == name:
                return f
        return None

    @property
    def chosen_om(self) -> FormFit | None:
        return self.form(self.om_chosen) if self.om_chosen else None

    @property
    def chosen_value(self) -> FormFit | None:
        return self.form(self.value_chosen) if self.value_chosen else None

    def to_dict(self) -> dict:
        return {"type": self.type, "class": self.class_,
                "om": {"tried": [f.to_dict() for f in self.om_forms], "chosen": self.om_chosen},
                "market_value": {"tried": [f.to_dict() for f in self.value_forms], "chosen": self.value_chosen},
                "n_units": self.n_units, "n_unit_years": self.n_unit_years, "n_ages": self.n_ages,
                "n_sales": self.n_sales, "flags": list(self.flags),
                "economic_life": {"case": self.life_case, "fitted": self.life_fitted}}


@dataclass(frozen=True)
class FitResult:
    """Everything ``tenure fit`` found: per type fits, the prepared tables and how they were prepared."""

    source: str
    start_year: int
    types: tuple[TypeFit, ...]
    price_level: Mapping
    method: Mapping[str, str]
    inputs: Mapping
    warnings: tuple[str, ...]
    unit_years: pd.DataFrame = field(repr=False, compare=False, default_factory=pd.DataFrame)
    sales: pd.DataFrame = field(repr=False, compare=False, default_factory=pd.DataFrame)

    def type(self, type_id: str) -> TypeFit:
        for t in self.types:
            if t.type == type_id:
                return t
        raise KeyError(type_id)

    def to_dict(self) -> dict:
        return {"case": self.source, "start_year": self.start_year, "price_level": dict(self.price_level),
                "method": dict(self.method), "inputs": dict(self.inputs), "warnings": list(self.warnings),
                "types": [t.to_dict() for t in self.types]}

    def unit_years_frame(self) -> pd.DataFrame:
        """The prepared O&M table: unit, type, service_year, cost [constant money], records, vintage."""
        return self.unit_years.copy()

    def sales_frame(self) -> pd.DataFrame:
        """The prepared sales: type, year, age, price [constant money], new_price, ratio."""
        return self.sales.copy()

    def forms_frame(self) -> pd.DataFrame:
        """One row per type and form tried: parameters, standard errors, AIC, R², whether chosen."""
        rows = []
        for t in self.types:
            for f in t.om_forms + t.value_forms:
                chosen = f.form in (t.om_chosen, t.value_chosen)
                for k, v in f.params.items():
                    rows.append({"type": t.type, "form": f.form, "param": k, "value": v, "se": f.se.get(k),
                                 "low": f.low.get(k), "high": f.high.get(k), "n": f.n, "r2": f.r2, "aic": f.aic,
                                 "chosen": chosen})
        return pd.DataFrame(rows)
