"""Discounting: discount factors, present worth of cash-flow vectors, real and nominal rates.

Conventions and references in ``tenure.money``.
"""

from __future__ import annotations

import numpy as np

from .kernels import as_output, check_rate, compound, first_bad

__all__ = ["discount_factors", "present_worth", "real_rate", "nominal_rate"]

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
    r_ = check_rate(rate, "rate")
    t_ = np.asarray(times, dtype=float)
    bad = ~np.isfinite(t_)
    if np.any(bad):
        raise ValueError(f"times must be finite, got times={first_bad(t_, bad)!r}")
    return as_output(compound(r_, -t_), rate, times)


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
    i_ = check_rate(i, "i")
    cf = np.moveaxis(cf, axis, -1)
    t = np.arange(cf.shape[-1], dtype=float)
    v = compound(i_[..., np.newaxis], -t)
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
    n_, f_ = check_rate(nominal, "nominal"), check_rate(inflation, "inflation")
    return as_output((n_ - f_) / (1.0 + f_), nominal, inflation)


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
    r_, f_ = check_rate(real, "real"), check_rate(inflation, "inflation")
    return as_output(r_ + f_ + r_ * f_, real, inflation)
