"""Income-tax fields: ``[study] tax_rate`` and ``[[asset_type]] depreciation`` (docs/case-format.md)."""

from __future__ import annotations

from typing import Any, Mapping

from ..model import DEPRECIATION_METHODS, MACRS_RECOVERY_YEARS, Depreciation
from .problems import Checker, blocks

#: keys allowed beside ``method``, by method
METHOD_KEYS = {
    "straight-line": ("method", "life", "salvage"),
    "declining-balance": ("method", "rate", "life", "switch"),
    "table": ("method", "rates"),
    "macrs": ("method", "recovery_years"),
}
FORMS = ('{ method = "straight-line", life, salvage }, { method = "declining-balance", rate, life, switch }, '
         '{ method = "table", rates = [...] } or { method = "macrs", recovery_years }')
#: a table's rates may exceed 1 by this much (rounding of published percentages)
RATES_SLACK = 1e-9


def _tax_rate(chk: Checker, s: Mapping) -> float | None:
    """``[study] tax_rate``: None when absent (a before-tax analysis)."""
    return chk.number(s, "tax_rate", "study", required=False, default=None, lo=0, hi=1, hi_open=True,
                      what="a combined marginal tax rate (a fraction)")


def _depreciation(chk: Checker, b: Mapping, p: str) -> Depreciation | None:
    """The ``depreciation`` table of an ``[[asset_type]]`` block at path ``p`` (None when absent or bad)."""
    if "depreciation" not in b:
        return None
    path = f"{p}.depreciation"
    t = chk.table(b["depreciation"], path)
    if t is None:
        return None
    method = t.get("method")
    if method not in DEPRECIATION_METHODS:
        found = "missing" if "method" not in t else f"= {method!r}"
        allowed = ", ".join(repr(m) for m in DEPRECIATION_METHODS)
        chk.bad(f"{path}.method", f"{found}: must be one of {allowed} (forms: {FORMS})")
        return None
    n_before = len(chk.problems)
    chk.keys(t, METHOD_KEYS[method], path)
    dep = _METHODS[method](chk, t, path)
    return dep if len(chk.problems) == n_before else None


def _straight_line(chk: Checker, t: Mapping, path: str) -> Depreciation | None:
    life = chk.integer(t, "life", path, lo=1, hi=100, what="a whole number of years")
    salvage = chk.number(t, "salvage", path, required=False, default=0.0, lo=0, hi=1, hi_open=True,
                         what="a fraction of the basis")
    if life is None or salvage is None:
        return None
    return Depreciation(method="straight-line", life=life, salvage=salvage)


def _declining_balance(chk: Checker, t: Mapping, path: str) -> Depreciation | None:
    rate = chk.number(t, "rate", path, lo=0, hi=1, lo_open=True, what="a fraction of the book value per year")
    life = chk.integer(t, "life", path, lo=1, hi=100, what="a whole number of years")
    switch = t.get("switch", False)
    if not isinstance(switch, bool):
        chk.bad(f"{path}.switch", f"= {switch!r}: must be true or false")
        return None
    if rate is None or life is None:
        return None
    return Depreciation(method="declining-balance", rate=rate, life=life, switch=switch)


def _table(chk: Checker, t: Mapping, path: str) -> Depreciation | None:
    rates = t.get("rates")
    if not isinstance(rates, list) or not rates:
        found = "missing" if "rates" not in t else f"= {rates!r}"
        chk.bad(f"{path}.rates", f"{found}: must be a list of fractions of the basis, one per service year 1 … n")
        return None
    vals = [chk.number_value(x, f"{path}.rates[{j + 1}]", lo=0, hi=1, what="a fraction of the basis")
            for j, x in enumerate(rates)]
    if any(x is None for x in vals):
        return None
    if sum(vals) > 1 + RATES_SLACK:
        chk.bad(f"{path}.rates", f"sum to {sum(vals):g}: must not exceed 1 (the whole basis)")
        return None
    return Depreciation(method="table", rates=tuple(vals))


def _macrs(chk: Checker, t: Mapping, path: str) -> Depreciation | None:
    allowed = ", ".join(str(n) for n in MACRS_RECOVERY_YEARS)
    n = t.get("recovery_years")
    if isinstance(n, bool) or not isinstance(n, (int, float)) or n not in MACRS_RECOVERY_YEARS:
        found = "missing" if "recovery_years" not in t else f"= {n!r}"
        chk.bad(f"{path}.recovery_years", f"{found}: must be one of {allowed} (the MACRS GDS half-year tables "
                "of IRS Publication 946, Table A-1)")
        return None
    return Depreciation(method="macrs", recovery_years=int(n))


_METHODS = {"straight-line": _straight_line, "declining-balance": _declining_balance, "table": _table,
            "macrs": _macrs}


def _tax_coverage(chk: Checker, doc: Mapping[str, Any], tax_rate: float | None) -> None:
    """With ``tax_rate`` set, every ``[[asset_type]]`` needs a ``depreciation`` method."""
    if tax_rate is None:
        return
    for j, b in enumerate(blocks(Checker(chk.file), doc, "asset_type"), start=1):
        if "depreciation" not in b:
            chk.bad(f"asset_type[{j}].depreciation", f"missing: study.tax_rate = {tax_rate:g} makes the analysis "
                    f"after-tax, so every type needs a depreciation method: {FORMS}")
