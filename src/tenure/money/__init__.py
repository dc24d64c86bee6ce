"""Time value of money: discrete compound-interest factors and present worth.

Every function here is pure and vectorised: rate and period arguments are
broadcast against each other with the usual numpy rules. Scalar inputs give
a Python ``float``; any array input gives an ``ndarray``.

Conventions
-----------
* Discrete, end-of-period compounding at an effective rate per period. In
  this package a period is a year, so rates are in [1/year] and periods in
  [years]; nothing in the arithmetic depends on that choice.
* **Sign convention.** Every factor is a positive multiplier that converts
  one cash-flow pattern into an equivalent one, as in the interest tables of
  engineering-economy texts: ``P = F * pf(i, n)``, ``A = P * ap(i, n)``.
  This differs from numpy-financial, whose ``pv``/``fv``/``pmt`` return
  values of the opposite sign to their inputs (cash paid out versus cash
  received); for example ``ap(i, n) == -numpy_financial.pmt(i, n, 1)``.
* A rate of exactly zero gives the exact limiting value (``pa(0, n) == n``
  and so on), never a 0/0, and no floating-point warnings are raised.
* Rates must be finite and greater than -1; period counts must be finite
  and non-negative, and strictly positive for A/P, A/F and A/G, which
  spread an amount over n periods. Violations raise ``ValueError`` naming
  the parameter and the offending value.
* Results that truly exceed the float range (say F/P at 10 % over 10,000
  periods) overflow to ``inf`` with numpy's usual warning; intermediate
  steps do not overflow when the result itself is representable.

Notation follows the standard functional form ``(X/Y, i, n)``: "find X
given Y at rate i over n periods" [1]_, [2]_, [3]_.

References
----------
.. [1] D. G. Newnan, T. G. Eschenbach, J. P. Lavelle, *Engineering Economic
   Analysis*, Oxford University Press (compound interest tables appendix).
.. [2] W. G. Sullivan, E. M. Wicks, C. P. Koelling, *Engineering Economy*,
   Pearson (interest and annuity tables for discrete compounding).
.. [3] C. S. Park, *Contemporary Engineering Economics*, Pearson.

Layout: :mod:`tenure.money.factors` (the factors), :mod:`tenure.money.discount`
(discount factors, present worth, inflation), :mod:`tenure.money.kernels`
(checked inputs and the accurate kernels both use).  Everything public is
importable from ``tenure.money`` and listed in docs/api.md.
"""

from __future__ import annotations

from .discount import discount_factors, nominal_rate, present_worth, real_rate
from .factors import af, ag, ap, fa, fp, pa, pa_geometric, pf, pg

__all__ = [
    "pf",
    "fp",
    "pa",
    "ap",
    "fa",
    "af",
    "ag",
    "pg",
    "pa_geometric",
    "discount_factors",
    "present_worth",
    "real_rate",
    "nominal_rate",
]

# doctest.testmod(tenure.money) runs the examples of every public function
__test__ = {name: globals()[name] for name in __all__}
