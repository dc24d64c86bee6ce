"""O&M forms fitted to unit-years: ``gradient``, ``growth`` and the list form, and the choice among them.

With service year ``a`` (1, 2, …), ``x = a − 1`` and annual cost ``c`` (constant start-year currency):

- ``gradient``: OLS ``c = first + gradient·x``;
- ``growth``: OLS ``ln c = β0 + β1·x``; ``growth = e^β1 − 1`` and ``first = e^β0·φ`` with Duan's
  smearing factor ``φ = mean(e^{residual})``, which corrects the retransformation bias of the mean
  without assuming normal errors (N. Duan, "Smearing estimate: a nonparametric retransformation
  method", JASA 78(383), 1983, 605–610);
- list: the mean cost at each age 1 … max_age, smoothed by a count-weighted 3-point moving average
  (the first and last age unsmoothed), tried only when every age has at least
  :data:`MIN_PER_AGE` unit-years.

The form of least AIC on the original cost scale is chosen (:mod:`tenure.fit.ols`).  Intervals are
the OLS ones at 90 %; ``growth`` and ``first`` of the growth form get theirs by transforming the ends
of the coefficient intervals (and the delta method for the standard errors).
"""

from __future__ import annotations

import numpy as np

from ..model import OMCurve
from . import ols
from .result import FormFit

#: a type needs this many units and distinct service years before a form is fitted
MIN_UNITS = 5
MIN_AGES = 3
#: the list form needs this many unit-years at every age 1 … max_age
MIN_PER_AGE = 5


def fit_gradient(age, cost, max_age: int) -> FormFit:
    """``first + gradient·(a−1)`` by OLS [money/year, money/year per year]."""
    x = np.asarray(age, float) - 1.0
    c = np.asarray(cost, float)
    r = ols.fit(x, c)
    t = r.t
    (b0, b1), (s0, s1) = map(float, r.coef), map(float, r.se)
    curve, note = OMCurve(kind="gradient", first=float(b0), gradient=float(b1)), ""
    if b0 < 0 or b0 + b1 * (max_age - 1) < 0:
        curve, note = None, f"not a valid case curve: O&M below zero within ages 1 … {max_age}"
    return FormFit(form="gradient", params={"first": b0, "gradient": b1}, se={"first": s0, "gradient": s1},
                   low={"first": b0 - t * s0, "gradient": b1 - t * s1},
                   high={"first": b0 + t * s0, "gradient": b1 + t * s1}, n=r.n, df=r.df, sse=r.sse, r2=r.r2,
                   aic=ols.aic_gaussian(r.sse, r.n, 3, float(np.mean(np.abs(c)))), curve=curve, note=note,
                   coef=tuple(r.coef), cov=tuple(map(tuple, r.cov)), t=t)


def fit_growth(age, cost) -> FormFit:
    """``first·(1+growth)^(a−1)`` by OLS of ``ln c`` with Duan's smearing; needs every cost > 0."""
    x = np.asarray(age, float) - 1.0
    c = np.asarray(cost, float)
    y = np.log(c)
    r = ols.fit(x, y)
    t = r.t
    (b0, b1), (s0, s1) = map(float, r.coef), map(float, r.se)
    smear = float(np.mean(np.exp(r.resid)))
    first, growth = float(np.exp(b0) * smear), float(np.expm1(b1))
    pred = first * (1.0 + growth) ** x
    sse = float(np.sum((c - pred) ** 2))
    return FormFit(form="growth", params={"first": first, "growth": growth},
                   se={"first": first * s0, "growth": (1.0 + growth) * s1},
                   low={"first": float(np.exp(b0 - t * s0) * smear), "growth": float(np.expm1(b1 - t * s1))},
                   high={"first": float(np.exp(b0 + t * s0) * smear), "growth": float(np.expm1(b1 + t * s1))},
                   n=r.n, df=r.df, sse=sse, r2=r.r2, aic=ols.aic_lognormal(r.sse, r.n, 3, float(y.sum())),
                   curve=OMCurve(kind="growth", first=first, growth=growth),
                   note=f"Duan smearing factor {smear:.6f}", coef=tuple(r.coef), cov=tuple(map(tuple, r.cov)), t=t)


def fit_list(age, cost, max_age: int) -> FormFit | str:
    """Smoothed means by age 1 … max_age; a reason (str) when some age has too few unit-years."""
    a = np.asarray(age, int)
    c = np.asarray(cost, float)
    ages = np.arange(1, max_age + 1)
    n = np.array([(a == k).sum() for k in ages])
    if (n < MIN_PER_AGE).any():
        short = ages[n < MIN_PER_AGE]
        return (f"list not tried: {len(short)} of ages 1 … {max_age} have fewer than {MIN_PER_AGE} unit-years "
                f"(e.g. age {short[0]})")
    mean = np.array([c[a == k].mean() for k in ages])
    var = np.array([c[a == k].var(ddof=1) for k in ages])
    smooth = mean.copy()
    for j in range(1, max_age - 1):
        w = n[j - 1:j + 2]
        smooth[j] = float(w @ mean[j - 1:j + 2] / w.sum())
    inside = (a >= 1) & (a <= max_age)
    sse = float(np.sum((c[inside] - smooth[a[inside] - 1]) ** 2))
    se = np.sqrt(var / n)
    tq = ols.t_quantile(int(n.min()) - 1)
    keys = [f"age_{k}" for k in ages]
    m = int(inside.sum())
    sst = float(np.sum((c[inside] - c[inside].mean()) ** 2))
    return FormFit(form="list", params=dict(zip(keys, smooth.tolist())), se=dict(zip(keys, se.tolist())),
                   low=dict(zip(keys, (smooth - tq * se).tolist())), high=dict(zip(keys, (smooth + tq * se).tolist())), n=m,
                   df=m - max_age, sse=sse, r2=1 - sse / sst if sst > 0 else 1.0,
                   aic=ols.aic_gaussian(sse, m, max_age + 1, float(np.mean(np.abs(c)))),
                   curve=OMCurve(kind="table", table=tuple(float(v) for v in smooth)),
                   note="count-weighted 3-point moving average of the means by age", t=tq)


def fit_all(age, cost, max_age: int) -> tuple[list[FormFit], list[str]]:
    """Every O&M form that the data allow, and the reasons for those not tried."""
    forms: list[FormFit] = [fit_gradient(age, cost, max_age)]
    notes: list[str] = []
    if np.all(np.asarray(cost) > 0):
        forms.append(fit_growth(age, cost))
    else:
        notes.append("growth not tried: some unit-years cost nothing (the log is undefined)")
    lst = fit_list(age, cost, max_age)
    if isinstance(lst, str):
        notes.append(lst)
    else:
        forms.append(lst)
    return forms, notes


def choose(forms: list[FormFit]) -> FormFit | None:
    """The valid form of least AIC (the first listed on ties), or None."""
    valid = [f for f in forms if f.curve is not None]
    return min(valid, key=lambda f: f.aic) if valid else None


def band(f: FormFit, age) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Fitted mean O&M at ``age`` and its pointwise 90 % confidence band [money/year]."""
    a = np.asarray(age, float)
    if f.form == "list":
        keys = list(f.params)
        idx = np.clip(a.astype(int) - 1, 0, len(keys) - 1)
        mid = np.array([f.params[keys[i]] for i in idx])
        lo = np.array([f.low[keys[i]] for i in idx])
        hi = np.array([f.high[keys[i]] for i in idx])
        return mid, lo, hi
    x = a - 1.0
    cov = np.asarray(f.cov)
    b0, b1 = f.coef
    sd = np.sqrt(cov[0, 0] + 2 * x * cov[0, 1] + x * x * cov[1, 1])
    lin = b0 + b1 * x
    if f.form == "gradient":
        return lin, lin - f.t * sd, lin + f.t * sd
    smear = f.params["first"] / np.exp(b0)
    return np.exp(lin) * smear, np.exp(lin - f.t * sd) * smear, np.exp(lin + f.t * sd) * smear
