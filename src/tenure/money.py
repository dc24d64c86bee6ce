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
  and non-negative (strictly positive for the factors that divide by the
  period count's effect: A/P, A/F and A/G). Violations raise ``ValueError``
  naming the parameter and the offending value.

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


def _pa(i: np.ndarray, n: np.ndarray) -> np.ndarray:
    # (1 - (1+i)^-n) / i, written with expm1 so that small i keeps its digits.
    safe_i = np.where(i == 0.0, 1.0, i)
    value = -np.expm1(-_log_growth(i, n)) / safe_i
    return np.where(i == 0.0, n, value)


def _fa(i: np.ndarray, n: np.ndarray) -> np.ndarray:
    # ((1+i)^n - 1) / i
    safe_i = np.where(i == 0.0, 1.0, i)
    value = np.expm1(_log_growth(i, n)) / safe_i
    return np.where(i == 0.0, n, value)


def _ag(i: np.ndarray, n: np.ndarray) -> np.ndarray:
    """A/G for n > 0 (n == 0 gives 0 here; callers decide whether to allow it)."""
    safe_n = np.where(n == 0.0, 1.0, n)
    big_l = _log_growth(i, safe_n)

    # Closed form 1/i - n/((1+i)^n - 1). The term n/expm1(L) is evaluated
    # through e = expm1(-|L|), which lies in (-1, 0], so it cannot overflow
    # for long horizons at positive rates or for negative rates:
    #   L > 0:  n/expm1(L) = n (1 + e) / (-e)   with e = expm1(-L)
    #   L < 0:  n/expm1(L) = n / e              with e = expm1(L)
    e = np.expm1(-np.abs(big_l))
    safe_e = np.where(e == 0.0, -1.0, e)
    n_over_growth = np.where(big_l > 0.0, safe_n * (1.0 + e) / -safe_e, safe_n / safe_e)
    safe_i = np.where(i == 0.0, 1.0, i)
    closed = 1.0 / safe_i - n_over_growth

    # Series for small i and small L (both tend to 0 together as i -> 0):
    #   A/G = [1/i - 1/ln(1+i)] + (n/L) [1 - L/(e^L - 1)]
    # with 1/ln(1+i) = 1/i + 1/2 - i/12 + i^2/24 - 19 i^3/720 + 3 i^4/160 - ...
    # and  [1 - L/(e^L - 1)]/L = 1/2 - L/12 + L^3/720 - L^5/30240 + ...
    # Truncation error is below 1e-16 relative inside the switch-over region.
    x = np.where(np.abs(i) < _AG_SERIES_LIMIT, i, 0.0)
    lx = np.where(np.abs(big_l) < _AG_SERIES_LIMIT, big_l, 0.0)
    head = -0.5 + x * (1 / 12 + x * (-1 / 24 + x * (19 / 720 + x * (-3 / 160))))
    tail = 0.5 + lx * (-1 / 12 + lx * lx * (1 / 720 - lx * lx / 30240))
    series = head + safe_n * tail

    use_series = (np.abs(i) < _AG_SERIES_LIMIT) & (np.abs(big_l) < _AG_SERIES_LIMIT)
    value = np.where(use_series, series, closed)
    value = np.where(i == 0.0, (safe_n - 1.0) / 2.0, value)
    return np.where(n == 0.0, 0.0, value)


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
    return _out(np.power(1.0 + i_, -n_), i, n)


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
    return _out(np.power(1.0 + i_, n_), i, n)


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

    evaluated as ``-expm1(-n*log1p(i)) / i`` to keep precision for small i.
    At i = 0 the factor is exactly n.

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

    evaluated as ``expm1(n*log1p(i)) / i``. At i = 0 the factor is exactly n.

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
    return _out(np.power(1.0 + r_, -t_), rate, times)


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
    >>> present_worth([-100.0, 60.0, 60.0], 0.10) == -100 + 60 / 1.1 + 60 / 1.21
    True
    """
    cf = np.asarray(cash_flows, dtype=float)
    if cf.ndim == 0:
        raise ValueError("cash_flows must have at least one dimension (time)")
    i_ = _rate(i, "i")
    cf = np.moveaxis(cf, axis, -1)
    t = np.arange(cf.shape[-1], dtype=float)
    v = np.power(1.0 + i_[..., np.newaxis], -t)
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
