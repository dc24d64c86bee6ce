"""Ordinary least squares of one regressor, with the textbook standard errors.

For ``y_i = b0 + b1·x_i + e_i`` (or ``y_i = b1·x_i + e_i`` through the origin) with independent errors
of equal variance, the estimates, residual variance ``s² = SSE/(n − p)``, covariance
``s²·(XᵀX)⁻¹`` and the two-sided ``1 − α`` interval ``b ± t_{1−α/2, n−p}·se(b)`` are those of any
regression text, e.g. D. C. Montgomery, E. A. Peck & G. G. Vining, *Introduction to Linear
Regression Analysis*, Wiley, chapter 2 (simple linear regression).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import stats

#: two-sided confidence of every interval tenure fit reports
LEVEL = 0.90


@dataclass(frozen=True)
class OLS:
    """One least-squares fit: ``coef`` is (intercept, slope), or (slope,) through the origin."""

    coef: np.ndarray
    cov: np.ndarray
    df: int
    sse: float
    sst: float
    n: int
    resid: np.ndarray

    @property
    def se(self) -> np.ndarray:
        return np.sqrt(np.diag(self.cov))

    @property
    def r2(self) -> float:
        """``1 − SSE/SST`` with SST about the mean (so it may be negative through the origin)."""
        return float(1.0 - self.sse / self.sst) if self.sst > 0 else 1.0

    @property
    def t(self) -> float:
        """The t quantile of a two-sided :data:`LEVEL` interval on ``df`` degrees of freedom."""
        return float(stats.t.ppf(0.5 + LEVEL / 2, self.df))


def fit(x, y, intercept: bool = True) -> OLS:
    """Least squares of ``y`` on ``x`` (arrays of equal length; needs n > number of coefficients)."""
    x = np.asarray(x, dtype=float)
    y = np.asarray(y, dtype=float)
    n = len(y)
    if intercept:
        xm, ym = x.mean(), y.mean()
        sxx = float(np.sum((x - xm) ** 2))
        b1 = float(np.sum((x - xm) * (y - ym)) / sxx)
        b0 = ym - b1 * xm
        coef = np.array([b0, b1])
        resid = y - b0 - b1 * x
        df = n - 2
        s2 = float(resid @ resid) / df
        cov = s2 * np.array([[1.0 / n + xm * xm / sxx, -xm / sxx], [-xm / sxx, 1.0 / sxx]])
    else:
        sxx = float(x @ x)
        b1 = float(x @ y) / sxx
        coef = np.array([b1])
        resid = y - b1 * x
        df = n - 1
        s2 = float(resid @ resid) / df
        cov = np.array([[s2 / sxx]])
    sse = float(resid @ resid)
    sst = float(np.sum((y - y.mean()) ** 2))
    return OLS(coef=coef, cov=cov, df=df, sse=sse, sst=sst, n=n, resid=resid)


def aic_gaussian(sse: float, n: int, k: int, scale: float) -> float:
    """AIC of a normal model of ``y`` with ``k`` parameters (variance included): ``n·ln(2πσ²) + n + 2k``.

    ``σ² = SSE/n`` (the maximum-likelihood variance), held above ``(1e-12·scale)²`` so that an exact fit
    stays finite.  Akaike (1974), IEEE Trans. Automatic Control 19(6); Burnham & Anderson, *Model Selection
    and Multimodel Inference*, Springer (2002), section 2.2.
    """
    s2 = max(sse / n, (1e-12 * scale) ** 2, 1e-300)
    return float(n * np.log(2 * np.pi * s2) + n + 2 * k)


def aic_lognormal(sse_log: float, n: int, k: int, sum_log_y: float) -> float:
    """AIC on the original scale of a model fitted to ``ln y``: the normal AIC of ``ln y`` plus ``2·Σ ln y``.

    The density of ``y`` is that of ``ln y`` times the Jacobian ``1/y``, so this AIC is comparable with
    :func:`aic_gaussian` of a model of ``y`` itself (Burnham & Anderson 2002, section 2.11.3, "data
    transformations").
    """
    s2 = max(sse_log / n, 1e-24)
    return float(n * np.log(2 * np.pi * s2) + n + 2 * k + 2 * sum_log_y)


def t_quantile(df: int) -> float:
    """The t quantile of a two-sided :data:`LEVEL` interval on ``df`` degrees of freedom."""
    return float(stats.t.ppf(0.5 + LEVEL / 2, max(df, 1)))
