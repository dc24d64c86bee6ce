"""Checked inputs and accurate kernels shared by the interest factors and discounting.

Validation turns rates and period counts into float arrays (``ValueError``
naming the parameter otherwise); the kernels compute (1+i)^t, (P/A), (F/A)
and (A/G) on validated arrays without cancellation at small rates and with
exact limits at a zero rate.  Conventions and references: ``tenure.money``.
"""

from __future__ import annotations

import numpy as np

# Below these magnitudes of i and n*ln(1+i) the closed form of A/G loses
# digits to cancellation (1/i minus a number close to 1/i); a series is used
# instead. See ``ag_kernel``.
_AG_SERIES_LIMIT = 1e-3


# --------------------------------------------------------------------------
# validation and output helpers
# --------------------------------------------------------------------------


def first_bad(arr: np.ndarray, mask: np.ndarray) -> float:
    return float(arr[mask].flat[0]) if arr.ndim else float(arr)


def check_rate(value, name: str) -> np.ndarray:
    """Return ``value`` as a float array, checking it is a usable rate."""
    arr = np.asarray(value, dtype=float)
    bad = ~np.isfinite(arr)
    if np.any(bad):
        raise ValueError(f"{name} must be finite, got {name}={first_bad(arr, bad)!r}")
    bad = arr <= -1.0
    if np.any(bad):
        raise ValueError(
            f"{name} must be greater than -1 (a rate of -100 % or less has no "
            f"discount factor), got {name}={first_bad(arr, bad)!r}"
        )
    return arr


def check_periods(value, name: str, *, positive: bool = False) -> np.ndarray:
    """Return ``value`` as a float array, checking it is a usable period count."""
    arr = np.asarray(value, dtype=float)
    bad = ~np.isfinite(arr)
    if np.any(bad):
        raise ValueError(f"{name} must be finite, got {name}={first_bad(arr, bad)!r}")
    bad = arr <= 0.0 if positive else arr < 0.0
    if np.any(bad):
        need = "greater than 0" if positive else "non-negative"
        raise ValueError(f"{name} must be {need}, got {name}={first_bad(arr, bad)!r}")
    return arr


def as_output(result, *inputs):
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


def compound(i: np.ndarray, t: np.ndarray) -> np.ndarray:
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


def pa_kernel(i: np.ndarray, n: np.ndarray) -> np.ndarray:
    # (1 - (1+i)^-n)/i = n * [ln(1+i)/i] * [(1 - e^-L)/L] with L = n ln(1+i).
    # Each bracket is computed to full precision for any i > -1, including
    # tiny and subnormal i, and both are exactly 1 at i = 0.
    return n * _log1p_rel(i) * _exprel(-_log_growth(i, n))


def fa_kernel(i: np.ndarray, n: np.ndarray) -> np.ndarray:
    # ((1+i)^n - 1)/i = n * [ln(1+i)/i] * [(e^L - 1)/L] with L = n ln(1+i).
    return n * _log1p_rel(i) * _exprel(_log_growth(i, n))


def ag_kernel(i: np.ndarray, n: np.ndarray) -> np.ndarray:
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
