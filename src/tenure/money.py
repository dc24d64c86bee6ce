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
"""

from __future__ import annotations

import numpy as np

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

# Below these magnitudes of i and n*ln(1+i) the closed form of A/G loses
# digits to cancellation (1/i minus a number close to 1/i); a series is used
# instead. See ``_ag``.
_AG_SERIES_LIMIT = 1e-3


# --------------------------------------------------------------------------
# validation and output helpers
# --------------------------------------------------------------------------


def _first_bad(arr: np.ndarray, mask: np.ndarray) -> float:
    return float(arr[mask].flat[0]) if arr.ndim else float(arr)


def _rate(value, name: str) -> np.ndarray:
    """Return ``value`` as a float array, checking it is a usable rate."""
    arr = np.asarray(value, dtype=float)
    bad = ~np.isfinite(arr)
    if np.any(bad):
        raise ValueError(f"{name} must be finite, got {name}={_first_bad(arr, bad)!r}")
    bad = arr <= -1.0
    if np.any(bad):
        raise ValueError(
            f"{name} must be greater than -1 (a rate of -100 % or less has no "
            f"discount factor), got {name}={_first_bad(arr, bad)!r}"
        )
    return arr


def _periods(value, name: str, *, positive: bool = False) -> np.ndarray:
    """Return ``value`` as a float array, checking it is a usable period count."""
    arr = np.asarray(value, dtype=float)
    bad = ~np.isfinite(arr)
    if np.any(bad):
        raise ValueError(f"{name} must be finite, got {name}={_first_bad(arr, bad)!r}")
    bad = arr <= 0.0 if positive else arr < 0.0
    if np.any(bad):
        need = "greater than 0" if positive else "non-negative"
        raise ValueError(f"{name} must be {need}, got {name}={_first_bad(arr, bad)!r}")
    return arr


def _out(result, *inputs):
    """Give a float when every input was a scalar, else an ndarray."""
    if all(np.ndim(x) == 0 for x in inputs):
        return float(result)
    return np.asarray(result, dtype=float)


# --------------------------------------------------------------------------
# kernels on validated float arrays (no checks, no output conversion)
# --------------------------------------------------------------------------


def _log_growth(i: np.ndarray, n: np.ndarray) -> np.ndarray:
    """n * ln(1 + i), accurate for small i."""
    return n * np.log1p(i)


def _compound(i: np.ndarray, t: np.ndarray) -> np.ndarray:
    """(1 + i)^t to within a few ulps.

    When 1 + i is exactly representable (e.g. i = 0.25, or i = 0) the power
    is taken directly; otherwise the rounding of 1 + i would cost about
    |t| ulps, so exp(t ln(1+i)) is used with ``log1p``.
    """
    one_plus = 1.0 + i
    exact = (one_plus - 1.0) == i
    return np.where(exact, np.power(one_plus, t), np.exp(t * np.log1p(i)))


def _exprel(x: np.ndarray) -> np.ndarray:
    """(e^x - 1)/x, equal to 1 at x = 0."""
    safe_x = np.where(x == 0.0, 1.0, x)
    return np.where(x == 0.0, 1.0, np.expm1(safe_x) / safe_x)


def _log1p_rel(i: np.ndarray) -> np.ndarray:
    """ln(1 + i)/i, equal to 1 at i = 0."""
    safe_i = np.where(i == 0.0, 1.0, i)
    return np.where(i == 0.0, 1.0, np.log1p(safe_i) / safe_i)


def _pa(i: np.ndarray, n: np.ndarray) -> np.ndarray:
    # (1 - (1+i)^-n)/i = n * [ln(1+i)/i] * [(1 - e^-L)/L] with L = n ln(1+i).
    # Each bracket is computed to full precision for any i > -1, including
    # tiny and subnormal i, and both are exactly 1 at i = 0.
    return n * _log1p_rel(i) * _exprel(-_log_growth(i, n))


def _fa(i: np.ndarray, n: np.ndarray) -> np.ndarray:
    # ((1+i)^n - 1)/i = n * [ln(1+i)/i] * [(e^L - 1)/L] with L = n ln(1+i).
    return n * _log1p_rel(i) * _exprel(_log_growth(i, n))


def _ag(i: np.ndarray, n: np.ndarray) -> np.ndarray:
    """A/G for n > 0 (n == 0 gives 0 here; callers decide whether to allow it)."""
    safe_n = np.where(n == 0.0, 1.0, n)
    big_l = _log_growth(i, safe_n)
    use_series = (np.abs(i) < _AG_SERIES_LIMIT) & (np.abs(big_l) < _AG_SERIES_LIMIT)

    # Closed form 1/i - n/((1+i)^n - 1), on inputs made safe where another
    # branch is taken (i = 0, or i tiny enough for 1/i to overflow). The term
    # n/expm1(L) goes through e = expm1(-|L|), which lies in (-1, 0], so it
    # cannot overflow for long horizons at positive or negative rates:
    #   L > 0:  n/expm1(L) = n (1 + e) / (-e)   with e = expm1(-L)
    #   L < 0:  n/expm1(L) = n / e              with e = expm1(L)
    other = use_series | (i == 0.0)
    ci = np.where(other, 1.0, i)
    cl = np.where(other, _log_growth(1.0, safe_n), big_l)
    e = np.expm1(-np.abs(cl))
    n_over_growth = np.where(cl > 0.0, safe_n * (1.0 + e) / -e, safe_n / e)
    closed = 1.0 / ci - n_over_growth

    # Series for small i and small L (both tend to 0 together as i -> 0):
    #   A/G = [1/i - 1/ln(1+i)] + (n/L) [1 - L/(e^L - 1)]
    # with 1/ln(1+i) = 1/i + 1/2 - i/12 + i^2/24 - 19 i^3/720 + 3 i^4/160 - ...
    # and  [1 - L/(e^L - 1)]/L = 1/2 - L/12 + L^3/720 - L^5/30240 + ...
    # Inside the switch-over region the first omitted terms are below 1e-16
    # relative; the closed form's own rounding (about 2 eps / |L|) is larger.
    x = np.where(use_series, i, 0.0)
    lx = np.where(use_series, big_l, 0.0)
    head = -0.5 + x * (1 / 12 + x * (-1 / 24 + x * (19 / 720 + x * (-3 / 160))))
    tail = 0.5 + lx * (-1 / 12 + lx * lx * (1 / 720 - lx * lx / 30240))
    series = head + safe_n * tail

    value = np.where(use_series, series, closed)
    value = np.where(i == 0.0, (safe_n - 1.0) / 2.0, value)
    # One period: the gradient series is a single zero payment.
    return np.where((n == 0.0) | (n == 1.0), 0.0, value)


# --------------------------------------------------------------------------
# single payment
# --------------------------------------------------------------------------


def pf(i, n):
    """Single-payment present worth factor (P/F, i, n).

    Present worth at time 0 of one unit paid at the end of period ``n``.

    Parameters
    ----------
    i : float or array_like
        Discount rate per period [1/year]; must be > -1.
    n : float or array_like
        Number of periods [years]; must be >= 0. Non-integer values are
        accepted (the formula is continuous in n).

    Returns
    -------
    float or ndarray
        (P/F, i, n), broadcast over ``i`` and ``n``.

    Notes
    -----
    .. math:: (P/F, i, n) = (1 + i)^{-n}

    At i = 0 the factor is exactly 1.

    References
    ----------
    .. [1] Newnan, Eschenbach & Lavelle, *Engineering Economic Analysis*,
       single-payment compound interest formulas.

    Examples
    --------
    >>> round(pf(0.10, 10), 4)
    0.3855
    """
    i_, n_ = _rate(i, "i"), _periods(n, "n")
    return _out(_compound(i_, -n_), i, n)


def fp(i, n):
    """Single-payment compound amount factor (F/P, i, n).

    Future worth at the end of period ``n`` of one unit held at time 0.

    Parameters
    ----------
    i : float or array_like
        Interest rate per period [1/year]; must be > -1.
    n : float or array_like
        Number of periods [years]; must be >= 0.

    Returns
    -------
    float or ndarray
        (F/P, i, n), broadcast over ``i`` and ``n``.

    Notes
    -----
    .. math:: (F/P, i, n) = (1 + i)^{n} = 1 / (P/F, i, n)

    References
    ----------
    .. [1] Sullivan, Wicks & Koelling, *Engineering Economy*, single-payment
       compound amount factor.

    Examples
    --------
    >>> round(fp(0.10, 10), 4)
    2.5937
    """
    i_, n_ = _rate(i, "i"), _periods(n, "n")
    return _out(_compound(i_, n_), i, n)


# --------------------------------------------------------------------------
# uniform series
# --------------------------------------------------------------------------


def pa(i, n):
    """Uniform-series present worth factor (P/A, i, n).

    Present worth at time 0 of one unit paid at the end of each of periods
    1 .. n.

    Parameters
    ----------
    i : float or array_like
        Discount rate per period [1/year]; must be > -1.
    n : float or array_like
        Number of periods [years]; must be >= 0.

    Returns
    -------
    float or ndarray
        (P/A, i, n), broadcast over ``i`` and ``n``.

    Notes
    -----
    .. math:: (P/A, i, n) = \\frac{(1 + i)^n - 1}{i (1 + i)^n}

    evaluated as n [ln(1+i)/i] [(1 - e^{-L})/L] with L = n ln(1+i), using
    ``log1p`` and ``expm1`` so that small rates keep their precision. At
    i = 0 the factor is exactly n.

    References
    ----------
    .. [1] Newnan, Eschenbach & Lavelle, *Engineering Economic Analysis*,
       uniform-series present worth factor.

    Examples
    --------
    >>> round(pa(0.10, 10), 4)
    6.1446
    """
    i_, n_ = _rate(i, "i"), _periods(n, "n")
    return _out(_pa(i_, n_), i, n)


def ap(i, n):
    """Capital recovery factor (A/P, i, n).

    Uniform end-of-period amount over periods 1 .. n equivalent to one unit
    at time 0; multiplying a present worth by it gives the equivalent
    annual cost (EAC).

    Parameters
    ----------
    i : float or array_like
        Discount rate per period [1/year]; must be > -1.
    n : float or array_like
        Number of periods [years]; must be > 0.

    Returns
    -------
    float or ndarray
        (A/P, i, n), broadcast over ``i`` and ``n``.

    Notes
    -----
    .. math:: (A/P, i, n) = \\frac{i (1 + i)^n}{(1 + i)^n - 1}
              = 1 / (P/A, i, n) = (A/F, i, n) + i

    At i = 0 the factor is exactly 1/n.

    References
    ----------
    .. [1] Park, *Contemporary Engineering Economics*, capital recovery
       factor.

    Examples
    --------
    >>> round(ap(0.10, 5), 5)
    0.2638
    """
    i_, n_ = _rate(i, "i"), _periods(n, "n", positive=True)
    return _out(1.0 / _pa(i_, n_), i, n)


def fa(i, n):
    """Uniform-series compound amount factor (F/A, i, n).

    Future worth at the end of period ``n`` of one unit paid at the end of
    each of periods 1 .. n.

    Parameters
    ----------
    i : float or array_like
        Interest rate per period [1/year]; must be > -1.
    n : float or array_like
        Number of periods [years]; must be >= 0.

    Returns
    -------
    float or ndarray
        (F/A, i, n), broadcast over ``i`` and ``n``.

    Notes
    -----
    .. math:: (F/A, i, n) = \\frac{(1 + i)^n - 1}{i}

    evaluated as n [ln(1+i)/i] [(e^L - 1)/L] with L = n ln(1+i). At i = 0
    the factor is exactly n.

    References
    ----------
    .. [1] Sullivan, Wicks & Koelling, *Engineering Economy*, uniform-series
       compound amount factor.

    Examples
    --------
    >>> round(fa(0.10, 10), 4)
    15.9374
    """
    i_, n_ = _rate(i, "i"), _periods(n, "n")
    return _out(_fa(i_, n_), i, n)


def af(i, n):
    """Sinking fund factor (A/F, i, n).

    Uniform end-of-period amount over periods 1 .. n that accumulates to one
    unit at the end of period ``n``.

    Parameters
    ----------
    i : float or array_like
        Interest rate per period [1/year]; must be > -1.
    n : float or array_like
        Number of periods [years]; must be > 0.

    Returns
    -------
    float or ndarray
        (A/F, i, n), broadcast over ``i`` and ``n``.

    Notes
    -----
    .. math:: (A/F, i, n) = \\frac{i}{(1 + i)^n - 1} = 1 / (F/A, i, n)

    At i = 0 the factor is exactly 1/n.

    References
    ----------
    .. [1] Newnan, Eschenbach & Lavelle, *Engineering Economic Analysis*,
       sinking fund factor.

    Examples
    --------
    >>> round(af(0.10, 10), 5)
    0.06275
    """
    i_, n_ = _rate(i, "i"), _periods(n, "n", positive=True)
    return _out(1.0 / _fa(i_, n_), i, n)


# --------------------------------------------------------------------------
# arithmetic gradient
# --------------------------------------------------------------------------


def ag(i, n):
    """Arithmetic gradient uniform series factor (A/G, i, n).

    Uniform end-of-period amount over periods 1 .. n equivalent to the
    gradient series 0, G, 2G, ..., (n-1)G paid at the ends of periods
    1 .. n, per unit of G.

    Parameters
    ----------
    i : float or array_like
        Interest rate per period [1/year]; must be > -1.
    n : float or array_like
        Number of periods [years]; must be > 0.

    Returns
    -------
    float or ndarray
        (A/G, i, n), broadcast over ``i`` and ``n``.

    Notes
    -----
    .. math:: (A/G, i, n) = \\frac{1}{i} - \\frac{n}{(1 + i)^n - 1}

    At i = 0 the factor is exactly (n - 1)/2. The closed form subtracts two
    numbers close to 1/i when i and n ln(1+i) are both small, so below
    1e-3 in magnitude a power series in i and n ln(1+i) is used instead.
    Checked against exact rational arithmetic, the relative error is at
    worst about 2e-13 (just outside the switch-over) and near 1e-15 at
    ordinary rates.

    References
    ----------
    .. [1] Newnan, Eschenbach & Lavelle, *Engineering Economic Analysis*,
       arithmetic gradient uniform series factor.

    Examples
    --------
    >>> round(ag(0.10, 10), 4)
    3.7255
    """
    i_, n_ = _rate(i, "i"), _periods(n, "n", positive=True)
    return _out(_ag(i_, n_), i, n)


def pg(i, n):
    """Arithmetic gradient present worth factor (P/G, i, n).

    Present worth at time 0 of the gradient series 0, G, 2G, ..., (n-1)G
    paid at the ends of periods 1 .. n, per unit of G.

    Parameters
    ----------
    i : float or array_like
        Discount rate per period [1/year]; must be > -1.
    n : float or array_like
        Number of periods [years]; must be >= 0.

    Returns
    -------
    float or ndarray
        (P/G, i, n), broadcast over ``i`` and ``n``.

    Notes
    -----
    .. math:: (P/G, i, n) = \\frac{(1 + i)^n - i n - 1}{i^2 (1 + i)^n}
              = (P/A, i, n) \\, (A/G, i, n)

    evaluated as the product on the right. At i = 0 the factor is exactly
    n (n - 1)/2.

    References
    ----------
    .. [1] Sullivan, Wicks & Koelling, *Engineering Economy*, gradient to
       present equivalent conversion factor.

    Examples
    --------
    >>> round(pg(0.10, 10), 4)
    22.8913
    """
    i_, n_ = _rate(i, "i"), _periods(n, "n")
    value = _pa(i_, n_) * _ag(i_, n_)
    value = np.where(i_ == 0.0, n_ * (n_ - 1.0) / 2.0, value)
    return _out(value, i, n)


# --------------------------------------------------------------------------
# geometric gradient
# --------------------------------------------------------------------------


def pa_geometric(i, g, n):
    """Geometric gradient present worth factor (P/A1, g, i, n).

    Present worth at time 0 of a series whose first payment, one unit, falls
    at the end of period 1 and which then grows by the fraction ``g`` each
    period: payments (1+g)^(t-1) at the ends of periods t = 1 .. n.

    Parameters
    ----------
    i : float or array_like
        Discount rate per period [1/year]; must be > -1.
    g : float or array_like
        Growth rate of the payments per period [1/year]; must be > -1.
        Negative values describe a declining series.
    n : float or array_like
        Number of periods [years]; must be >= 0.

    Returns
    -------
    float or ndarray
        The factor, broadcast over ``i``, ``g`` and ``n``.

    Notes
    -----
    .. math:: (P/A_1, g, i, n) = \\frac{1 - \\left(\\frac{1+g}{1+i}\\right)^n}{i - g}
              \\quad (i \\ne g), \\qquad \\frac{n}{1+i} \\quad (i = g)

    Writing d = (g - i)/(1 + i), the factor equals (F/A, d, n)/(1 + i); it
    is evaluated that way, which stays accurate as g approaches i and gives
    exactly n/(1+i) when g equals i. With g = 0 it reduces to (P/A, i, n).

    References
    ----------
    .. [1] Newnan, Eschenbach & Lavelle, *Engineering Economic Analysis*,
       geometric gradient present worth factor.
    .. [2] Park, *Contemporary Engineering Economics*, geometric gradient
       series.

    Examples
    --------
    >>> round(pa_geometric(0.10, 0.05, 10), 4)
    7.4398
    >>> pa_geometric(0.08, 0.08, 5) == 5 / 1.08
    True
    """
    i_, g_, n_ = _rate(i, "i"), _rate(g, "g"), _periods(n, "n")
    d = (g_ - i_) / (1.0 + i_)
    value = _fa(d, n_) / (1.0 + i_)
    value = np.where(d == 0.0, n_ / (1.0 + i_), value)
    return _out(value, i, g, n)


# --------------------------------------------------------------------------
# cash-flow vectors
# --------------------------------------------------------------------------


def discount_factors(rate, times):
    """Discount factors (1 + rate)^-times.

    Parameters
    ----------
    rate : float or array_like
        Discount rate per period [1/year]; must be > -1.
    times : float or array_like
        Times at which the amounts fall, measured from time 0 [years]. Any
        finite real value is allowed; negative times give compounding
        factors (amounts moved forward to time 0).

    Returns
    -------
    float or ndarray
        Factors broadcast over ``rate`` and ``times``.

    Notes
    -----
    .. math:: v(t) = (1 + r)^{-t}

    For integer t >= 0 this is (P/F, r, t).

    References
    ----------
    .. [1] Park, *Contemporary Engineering Economics*, present worth of a
       single cash flow.

    Examples
    --------
    >>> discount_factors(0.25, [0, 1, 2]).tolist()
    [1.0, 0.8, 0.64]
    """
    r_ = _rate(rate, "rate")
    t_ = np.asarray(times, dtype=float)
    bad = ~np.isfinite(t_)
    if np.any(bad):
        raise ValueError(f"times must be finite, got times={_first_bad(t_, bad)!r}")
    return _out(_compound(r_, -t_), rate, times)


def present_worth(cash_flows, i, axis=-1):
    """Present worth at time 0 of a sequence of end-of-period cash flows.

    Element ``t`` along ``axis`` is the amount at time t, t = 0, 1, 2, ...;
    element 0 is therefore taken at face value (not discounted). This is
    the same timing convention as ``numpy_financial.npv``; note that it
    differs from spreadsheet NPV functions, which discount the first value
    by one period.

    Parameters
    ----------
    cash_flows : array_like
        Amounts [currency], indexed by period along ``axis``. Signs are kept
        as given: costs and revenues may be mixed.
    i : float or array_like
        Discount rate per period [1/year]; must be > -1. It is broadcast
        against the shape of ``cash_flows`` with ``axis`` removed, so one
        rate per series (or a grid of rates) may be given.
    axis : int, optional
        Axis of ``cash_flows`` that indexes time. Default -1.

    Returns
    -------
    float or ndarray
        Present worth [currency]; a float when ``cash_flows`` is 1-D and
        ``i`` is a scalar.

    Notes
    -----
    .. math:: PW = \\sum_{t=0}^{T-1} c_t (1 + i)^{-t}

    References
    ----------
    .. [1] Sullivan, Wicks & Koelling, *Engineering Economy*, present worth
       method.

    Examples
    --------
    An outlay of 100 now, then receipts of 60 at the ends of years 1 and 2,
    at 10 %:

    >>> round(present_worth([-100.0, 60.0, 60.0], 0.10), 6)
    4.132231
    """
    cf = np.asarray(cash_flows, dtype=float)
    if cf.ndim == 0:
        raise ValueError("cash_flows must have at least one dimension (time)")
    i_ = _rate(i, "i")
    cf = np.moveaxis(cf, axis, -1)
    t = np.arange(cf.shape[-1], dtype=float)
    v = _compound(i_[..., np.newaxis], -t)
    value = np.sum(cf * v, axis=-1)
    if value.ndim == 0:
        return float(value)
    return value


# --------------------------------------------------------------------------
# inflation
# --------------------------------------------------------------------------


def real_rate(nominal, inflation):
    """Real (constant-money) rate from a nominal rate and an inflation rate.

    Parameters
    ----------
    nominal : float or array_like
        Market (nominal, actual-money) rate [1/year]; must be > -1.
    inflation : float or array_like
        General inflation rate [1/year]; must be > -1.

    Returns
    -------
    float or ndarray
        Real rate [1/year], broadcast over the inputs.

    Notes
    -----
    The exact Fisher relation, not the additive approximation i - f:

    .. math:: i' = \\frac{1 + i}{1 + f} - 1

    References
    ----------
    .. [1] Newnan, Eschenbach & Lavelle, *Engineering Economic Analysis*,
       inflation and the combined (market) interest rate.
    .. [2] I. Fisher, *The Theory of Interest*, Macmillan, 1930.

    Examples
    --------
    >>> round(real_rate(0.1025, 0.05), 10)
    0.05
    """
    n_, f_ = _rate(nominal, "nominal"), _rate(inflation, "inflation")
    return _out((n_ - f_) / (1.0 + f_), nominal, inflation)


def nominal_rate(real, inflation):
    """Nominal (actual-money) rate from a real rate and an inflation rate.

    Parameters
    ----------
    real : float or array_like
        Real (constant-money) rate [1/year]; must be > -1.
    inflation : float or array_like
        General inflation rate [1/year]; must be > -1.

    Returns
    -------
    float or ndarray
        Nominal rate [1/year], broadcast over the inputs.

    Notes
    -----
    .. math:: i = (1 + i')(1 + f) - 1 = i' + f + i' f

    References
    ----------
    .. [1] Newnan, Eschenbach & Lavelle, *Engineering Economic Analysis*,
       inflation and the combined (market) interest rate.
    .. [2] I. Fisher, *The Theory of Interest*, Macmillan, 1930.

    Examples
    --------
    >>> round(nominal_rate(0.05, 0.03), 10)
    0.0815
    """
    r_, f_ = _rate(real, "real"), _rate(inflation, "inflation")
    return _out(r_ + f_ + r_ * f_, real, inflation)
