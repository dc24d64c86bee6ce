"""SVG charts of a fit, one figure per asset type, drawn with matplotlib (no pyplot).

Panels: O&M records by service year with the fitted curve and its 90 % band; O&M residuals by
service year; price ratios of sales by age with the fitted value curve and its band; their residuals.
Colours are the Okabe–Ito set used by the plan report.  At most :data:`MAX_POINTS` records are drawn
per panel (a seeded random subset; the caption says so).
"""

from __future__ import annotations

import io

import matplotlib
import numpy as np
import pandas as pd
from matplotlib.backends.backend_svg import FigureCanvasSVG
from matplotlib.figure import Figure

from ..report.charts import BLUE, GREY, ORANGE, VERMILLION
from . import om as om_forms
from . import value as value_forms
from .result import TypeFit

MAX_POINTS = 2000
_RC = {"svg.fonttype": "none", "svg.hashsalt": "tenure-fit", "font.size": 9, "axes.spines.top": False,
       "axes.spines.right": False, "axes.grid": True, "grid.color": "#dddddd", "grid.linewidth": 0.6}


def _subset(frame: pd.DataFrame, seed: int) -> pd.DataFrame:
    if len(frame) <= MAX_POINTS:
        return frame
    return frame.sample(MAX_POINTS, random_state=seed)


def _jitter(x, seed):
    return np.asarray(x, float) + np.random.default_rng(seed).uniform(-0.15, 0.15, len(x))


def type_chart(tf: TypeFit, uy: pd.DataFrame, sales: pd.DataFrame, case_om, case_value, max_age: int) -> str:
    """One ``<svg>`` of the records and fitted curves of a type (see the module notes)."""
    with matplotlib.rc_context(_RC):
        fig = Figure(figsize=(9.0, 5.6))
        axes = fig.subplots(2, 2, gridspec_kw={"height_ratios": [2.2, 1]})
        ages = np.linspace(0.5, max(max_age, 1) + 0.5, 120)
        _panel(axes[0, 0], axes[1, 0], uy, "service_year", "cost", tf.chosen_om, om_forms.band, case_om,
               np.clip(ages, 1, None), "O&M per unit-year", seed=1)
        _panel(axes[0, 1], axes[1, 1], sales, "age", "ratio", tf.chosen_value, value_forms.band, case_value,
               np.linspace(0, max(max_age, 1), 120), "sale price / new price", seed=2)
        axes[1, 0].set_xlabel("service year")
        axes[1, 1].set_xlabel("age at sale [years]")
        fig.tight_layout()
        buf = io.StringIO()
        FigureCanvasSVG(fig).print_svg(buf)
    svg = buf.getvalue()
    return svg[svg.index("<svg"):]


def _panel(ax, rax, frame, xcol, ycol, fit, band, case_curve, grid, title, seed) -> None:
    ax.set_title(title, loc="left")
    pts = _subset(frame, seed)
    if len(pts):
        ax.scatter(_jitter(pts[xcol], seed), pts[ycol], s=7, color=GREY, alpha=0.55, linewidths=0,
                   label="records")
    if case_curve is not None:
        ax.plot(grid, case_curve(grid), color=ORANGE, linestyle="--", linewidth=1.4, label="case curve")
    if fit is not None:
        mid, lo, hi = band(fit, grid)
        ax.fill_between(grid, lo, hi, color=BLUE, alpha=0.18, linewidth=0, label="90 % band")
        ax.plot(grid, mid, color=BLUE, linewidth=1.8, label=f"fitted ({fit.form})")
        if len(pts):
            res = pts[ycol].to_numpy(float) - band(fit, pts[xcol].to_numpy(float))[0]
            rax.scatter(_jitter(pts[xcol], seed), res, s=6, color=VERMILLION, alpha=0.5, linewidths=0)
    rax.axhline(0, color="#555555", linewidth=0.8)
    rax.set_ylabel("residual")
    if not len(pts):
        ax.text(0.5, 0.5, "no records", transform=ax.transAxes, ha="center", color=GREY)
    ax.legend(fontsize=8, frameon=False)
