"""Discrete compound-interest factors (X/Y, i, n): single payment, uniform series, gradients.

Positive multipliers as in the interest tables of engineering-economy texts;
conventions, sign rule and references in ``tenure.money``.
"""

from __future__ import annotations

import numpy as np

from .kernels import ag_kernel, as_output, check_periods, check_rate, compound, fa_kernel, pa_kernel

__all__ = ["pf", "fp", "pa", "ap", "fa", "af", "ag", "pg", "pa_geometric"]

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
    i_, n_ = check_rate(i, "i"), check_periods(n, "n")
    return as_output(compound(i_, -n_), i, n)


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
    i_, n_ = check_rate(i, "i"), check_periods(n, "n")
    return as_output(compound(i_, n_), i, n)


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
    i_, n_ = check_rate(i, "i"), check_periods(n, "n")
    return as_output(pa_kernel(i_, n_), i, n)


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
    i_, n_ = check_rate(i, "i"), check_periods(n, "n", positive=True)
    return as_output(1.0 / pa_kernel(i_, n_), i, n)


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
    i_, n_ = check_rate(i, "i"), check_periods(n, "n")
    return as_output(fa_kernel(i_, n_), i, n)


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
    i_, n_ = check_rate(i, "i"), check_periods(n, "n", positive=True)
    return as_output(1.0 / fa_kernel(i_, n_), i, n)


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
    i_, n_ = check_rate(i, "i"), check_periods(n, "n", positive=True)
    return as_output(ag_kernel(i_, n_), i, n)


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
    i_, n_ = check_rate(i, "i"), check_periods(n, "n")
    value = pa_kernel(i_, n_) * ag_kernel(i_, n_)
    value = np.where(i_ == 0.0, n_ * (n_ - 1.0) / 2.0, value)
    return as_output(value, i, n)


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
    i_, g_, n_ = check_rate(i, "i"), check_rate(g, "g"), check_periods(n, "n")
    d = (g_ - i_) / (1.0 + i_)
    value = fa_kernel(d, n_) / (1.0 + i_)
    value = np.where(d == 0.0, n_ / (1.0 + i_), value)
    return as_output(value, i, g, n)
