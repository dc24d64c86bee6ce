"""Intervals by a bootstrap over units (``tenure fit --intervals bootstrap``).

Units are resampled with replacement (all service years of a drawn unit come with it), the OLS fit
is repeated on each of :data:`REPLICATES` resamples, and the 90 % interval of each parameter is the
5th … 95th percentile of its replicates; the standard error is their standard deviation (B. Efron &
R. J. Tibshirani, *An Introduction to the Bootstrap*, Chapman & Hall, 1993, chapters 6 and 13; resampling
whole clusters: A. C. Cameron, J. B. Gelbach & D. L. Miller, "Bootstrap-based improvements for inference
with clustered errors", *Rev. Econ. Stat.* 90(3), 2008).  Unlike the OLS formulae it needs neither
equal variances nor independent years of one unit.  Sales are resampled one by one.  The life/floor
form keeps its Gauss–Newton intervals.

Every replicate is computed at once from per-unit sums: with resampling counts ``W`` (replicates ×
units) and per-unit sums ``S`` of ``1, x, y, x², x·y``, the replicate sums are ``W·S``; for the growth
form's smearing factor, per-unit sums of ``e^y`` by service year are weighted the same way.
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pandas as pd

from . import ols
from .result import FormFit

REPLICATES = 999
SEED = 20260


def _counts(n_clusters: int, rng) -> np.ndarray:
    return rng.multinomial(n_clusters, np.full(n_clusters, 1.0 / n_clusters), size=REPLICATES).astype(float)


def _line(T: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    n, sx, sy, sxx, sxy = T.T
    den = n * sxx - sx * sx
    with np.errstate(invalid="ignore", divide="ignore"):
        b1 = (n * sxy - sx * sy) / den
        b0 = (sy - b1 * sx) / n
    return b0, b1


def om_replicates(unit, age, cost, log: bool, seed: int = SEED) -> dict[str, np.ndarray]:
    """Replicates of (first, gradient) or (first, growth) over resampled units."""
    codes, uniq = pd.factorize(np.asarray(unit))
    x = np.asarray(age, float) - 1.0
    c = np.asarray(cost, float)
    y = np.log(c) if log else c
    k = len(uniq)
    stats = np.column_stack([np.ones_like(x), x, y, x * x, x * y])
    per_unit = np.zeros((k, 5))
    np.add.at(per_unit, codes, stats)
    W = _counts(k, np.random.default_rng(seed))
    b0, b1 = _line(W @ per_unit)
    if not log:
        return {"first": b0, "gradient": b1}
    xs = np.unique(x)
    col = np.searchsorted(xs, x)
    ey = np.zeros((k, len(xs)))
    np.add.at(ey, (codes, col), c)  # Σ e^y = Σ cost, per unit and service year
    n = W @ per_unit[:, 0]
    # first = e^b0 · mean(e^{y − b0 − b1 x}) = Σ_x e^{−b1 x}·(W·E)[x] / n
    first = np.sum(np.exp(-np.outer(b1, xs)) * (W @ ey), axis=1) / n
    return {"first": first, "growth": np.expm1(b1)}


def retain_replicates(age, ratio, seed: int = SEED) -> dict[str, np.ndarray]:
    """Replicates of retain over resampled sales (OLS of ln r on age through the origin)."""
    a = np.asarray(age, float)
    y = np.log(np.asarray(ratio, float))
    W = _counts(len(a), np.random.default_rng(seed))
    with np.errstate(invalid="ignore", divide="ignore"):
        b = (W @ (a * y)) / (W @ (a * a))
    return {"retain": np.exp(b)}


def apply(f: FormFit, reps: dict[str, np.ndarray]) -> FormFit:
    """``f`` with its standard errors and 90 % intervals taken from bootstrap replicates."""
    lo_q, hi_q = 50 - ols.LEVEL * 50, 50 + ols.LEVEL * 50
    se, low, high = dict(f.se), dict(f.low), dict(f.high)
    for k, r in reps.items():
        r = r[np.isfinite(r)]
        se[k] = float(np.std(r, ddof=1))
        low[k], high[k] = (float(v) for v in np.percentile(r, [lo_q, hi_q]))
    note = (f.note + "; " if f.note else "") + f"intervals: bootstrap over units, {REPLICATES} replicates"
    return dataclasses.replace(f, se=se, low=low, high=high, note=note)
