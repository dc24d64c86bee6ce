"""``tenure fit``: O&M and market-value curves fitted from work-order, fuel and sale records.

Modules: :mod:`records` (read and validate files), :mod:`deflate` (price level), :mod:`prepare`
(unit-years and sale ratios), :mod:`ols`, :mod:`om`, :mod:`value` (forms and their choice),
:mod:`result` (the typed result), :mod:`pipeline` (files → result), :mod:`writers` (fitted.toml,
fit.json, fit.html).  The method is stated in docs/fitting.md.
"""

from .pipeline import fit_case, price_level
from .result import FitResult, FormFit, TypeFit

__all__ = ["fit_case", "price_level", "FitResult", "FormFit", "TypeFit"]
