"""Market-value forms fitted to sales: ``retain`` and the straight line ``life``/``floor``.

Each sale gives an age ``a`` [years] and a ratio ``r`` = price received / the type's new price in the
sale year (both constant currency).  Age 0 is worth the price in every case form, so:

- ``retain``: OLS through the origin of ``ln r = a·ln(retain)``; ``retain = e^b``, its interval the
  transformed ends of ``b``'s;
- ``line``: ``r = 1 − (1−floor)·min(a, life)/life``.  For a life between two consecutive sale ages the
  model is linear in the slope ``s = (1−floor)/life`` (ages before it) and the drop ``1−floor`` (ages
  after), so each gap between sale ages is solved exactly by least squares (at its ends when the
  unconstrained solution falls outside) and the best is kept.  Standard errors come from the
  Gauss–Newton covariance ``s²·(JᵀJ)⁻¹`` of (life, floor) at that optimum (Seber & Wild, *Nonlinear
  Regression*, Wiley, 1989, section 2.1), with ``n − 2`` degrees of freedom.

The form of least AIC on the ratio scale is chosen, as for O&M.  ``retain`` fitted on the log scale is
the *median* ratio at each age: a constant retransformation factor (as Duan's for O&M) cannot be
written in the form, whose value at age 0 is fixed at 1; with a log-scale spread σ the mean price is
``e^{σ²/2}`` times higher (0.5 % at σ = 0.1).
"""

from __future__ import annotations

import numpy as np

from ..model import ValueCurve
from . import ols
from .result import FormFit

#: a type needs this many sales at this many distinct whole ages before a form is fitted
MIN_SALES = 5
MIN_SALE_AGES = 3


def fit_retain(age, ratio) -> FormFit:
    """``retain^a`` by OLS of ``ln r`` on ``a`` through the origin."""
    a = np.asarray(age, float)
    r = np.asarray(ratio, float)
    y = np.log(r)
    f = ols.fit(a, y, intercept=False)
    b, s = float(f.coef[0]), float(f.se[0])
    t = f.t
    retain = float(np.exp(b))
    pred = retain ** a
    curve, note = ValueCurve(kind="retain", retain=retain), ""
    if retain > 1:
        curve, note = None, "not a valid case curve: retain > 1 (value rising with age)"
    return FormFit(form="retain", params={"retain": retain}, se={"retain": retain * s},
                   low={"retain": float(np.exp(b - t * s))}, high={"retain": float(np.exp(b + t * s))},
                   n=f.n, df=f.df, sse=float(np.sum((r - pred) ** 2)), r2=f.r2,
                   aic=ols.aic_lognormal(f.sse, f.n, 2, float(y.sum())), curve=curve, note=note,
                   coef=(b,), cov=((s * s,),), t=t)


def _fixed_life(a, d, life):
    """Least squares of the drop ``d = 1 − r`` on ``s·min(a, life)``: (slope, SSE)."""
    x = np.minimum(a, life)
    s = float(x @ d / (x @ x))
    return s, float(np.sum((d - s * x) ** 2))


def _best_life(a, d) -> tuple[float, float, float]:
    """(life, slope, SSE) of least SSE over lives between the smallest positive and the largest sale age."""
    ages = np.unique(a[a > 0])
    best = None
    for lo, hi in zip(ages[:-1], ages[1:]):
        left, right = a <= lo, a > lo
        s = float(a[left] @ d[left] / (a[left] @ a[left]))
        p = float(d[right].mean())
        cands = []
        if s > 0 and lo <= p / s <= hi:
            cands.append(p / s)
        cands += [lo, hi]
        for life in cands:
            slope, sse = _fixed_life(a, d, life)
            if best is None or sse < best[2] - 1e-15 * max(1.0, best[2]):
                best = (float(life), slope, sse)
    return best


def fit_line(age, ratio, max_age: int) -> FormFit:
    """Straight line to ``floor`` at ``life`` years, flat after (see the module notes)."""
    a = np.asarray(age, float)
    r = np.asarray(ratio, float)
    d = 1.0 - r
    life, slope, sse = _best_life(a, d)
    floor = 1.0 - slope * life
    n = len(a)
    df = n - 2
    s2 = sse / df
    before = a < life
    jac = np.column_stack([np.where(before, (1 - floor) * a / life ** 2, 0.0),  # ∂r/∂life
                           np.where(before, a / life, 1.0)])                    # ∂r/∂floor
    try:
        cov = s2 * np.linalg.inv(jac.T @ jac)
    except np.linalg.LinAlgError:
        cov = np.full((2, 2), np.nan)
    se_life, se_floor = (float(v) for v in np.sqrt(np.maximum(np.diag(cov), 0.0)))
    t = ols.t_quantile(df)
    curve, note = ValueCurve(kind="line", life=life, floor=floor), ""
    if not (0 <= floor < 1) or life <= 0:
        curve, note = None, f"not a valid case curve: floor {floor:.3f} outside [0, 1)"
    if not (a > life).any():
        note = (note + "; " if note else "") + "no sale past the line's end: life and floor are weakly identified"
    sst = float(np.sum((r - r.mean()) ** 2))
    return FormFit(form="line", params={"life": life, "floor": floor}, se={"life": se_life, "floor": se_floor},
                   low={"life": life - t * se_life, "floor": floor - t * se_floor},
                   high={"life": life + t * se_life, "floor": floor + t * se_floor}, n=n, df=df, sse=sse,
                   r2=1 - sse / sst if sst > 0 else 1.0,
                   aic=ols.aic_gaussian(sse, n, 3, float(np.mean(np.abs(r)))), curve=curve, note=note,
                   coef=(life, floor), cov=tuple(map(tuple, cov)), t=t)


def fit_all(age, ratio, max_age: int) -> tuple[list[FormFit], list[str]]:
    """Both market-value forms, and the reasons for any not tried."""
    forms, notes = [fit_retain(age, ratio)], []
    if len(np.unique(np.asarray(age)[np.asarray(age) > 0])) >= 2:
        forms.append(fit_line(age, ratio, max_age))
    else:
        notes.append("line not tried: sales at fewer than two ages above 0")
    return forms, notes


def band(f: FormFit, age) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Fitted value ratio at ``age`` and its pointwise 90 % confidence band [-]."""
    a = np.asarray(age, float)
    if f.form == "retain":
        b = f.coef[0]
        sd = np.sqrt(f.cov[0][0])
        return np.exp(b * a), np.exp((b - f.t * sd) * a), np.exp((b + f.t * sd) * a)
    life, floor = f.params["life"], f.params["floor"]
    mid = 1 - (1 - floor) * np.minimum(a, life) / life
    g = np.column_stack([np.where(a < life, (1 - floor) * a / life ** 2, 0.0), np.where(a < life, a / life, 1.0)])
    sd = np.sqrt(np.maximum(np.einsum("ij,jk,ik->i", g, np.asarray(f.cov), g), 0.0))
    return mid, mid - f.t * sd, mid + f.t * sd
