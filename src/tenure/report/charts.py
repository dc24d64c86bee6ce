"""Charts of a plan or a comparison, drawn with matplotlib as inline SVG strings.

Every function takes result objects (a :class:`~tenure.plan.Plan`, a
:class:`~tenure.model.Case`, a comparison dict) and returns one ``<svg>``
element as text, ready to be pasted into ``report.html``.  Nothing here solves
or writes files.

Figures are built with :class:`matplotlib.figure.Figure` and the SVG canvas
directly (no pyplot, no global backend switch), text is kept as text
(``svg.fonttype = "none"``) and every element id is prefixed with the chart's
name so that several charts can share one HTML page.

Palette
-------
Categories (types, scenarios, line roles) use the Okabe–Ito colour-blind-safe
set (Okabe & Ito, "Color Universal Design", 2008) in the order of
:data:`OKABE_ITO`; counts (the age heat map) use matplotlib's ``viridis``
ramp, which stays readable in grey and for the common colour-vision
deficiencies.  Where colours alone would carry meaning, line styles, markers
or hatching carry it too.
"""

from __future__ import annotations

import io
import re
from collections import Counter
from dataclasses import dataclass
from typing import Iterable, Sequence

import matplotlib
import numpy as np
from matplotlib.backends.backend_svg import FigureCanvasSVG
from matplotlib.colors import BoundaryNorm, Normalize
from matplotlib.figure import Figure
from matplotlib.ticker import FuncFormatter, MaxNLocator

from ..model import Case
from ..textutil import money

# Okabe–Ito: blue, orange, bluish green, reddish purple, sky blue, vermillion, yellow, black
OKABE_ITO = ("#0072B2", "#E69F00", "#009E73", "#CC79A7", "#56B4E9", "#D55E00", "#F0E442", "#000000")
BLUE, ORANGE, GREEN, PURPLE, SKY, VERMILLION, YELLOW, BLACK = OKABE_ITO
GREY = "#8c8c8c"
LIGHT = "#e6e6e6"
HATCHES = ("", "//", "..", "xx", "\\\\", "++", "--", "oo")
LINESTYLES = ("-", "--", "-.", ":")
MARKERS = ("o", "s", "^", "D", "v", "P", "X", "*")
HEATMAP = "viridis"

_RC = {
    "svg.fonttype": "none",          # text stays text in the SVG
    "svg.hashsalt": "tenure-report",  # stable clip-path ids between runs
    "font.family": "sans-serif",
    "font.sans-serif": ["DejaVu Sans", "Liberation Sans", "Arial", "Helvetica"],
    "font.size": 10,
    "axes.titlesize": 11,
    "axes.labelsize": 10,
    "axes.spines.top": False,
    "axes.spines.right": False,
    "axes.grid": True,
    "grid.color": "#dddddd",
    "grid.linewidth": 0.6,
    "axes.axisbelow": True,
    "legend.frameon": False,
    "legend.fontsize": 9,
}

#: ids of the charts of a plan report, in page order
PLAN_CHARTS = ("chart-capital", "chart-ages", "chart-types", "chart-eac", "chart-class-cost", "chart-emissions",
               "chart-cap-cost")
#: ids of the charts of a comparison report
COMPARE_CHARTS = ("chart-compare-cost", "chart-compare-capital")


# ---------------------------------------------------------------------------
# money scale and labels
# ---------------------------------------------------------------------------
@dataclass(frozen=True)
class MoneyScale:
    """How money is shown on an axis: divide by ``divisor``, call it ``word``."""

    divisor: float
    word: str

    def label(self, what: str, currency: str) -> str:
        unit = f"{self.word}, " if self.word else ""
        return f"{what}\n({unit}money in constant {currency} currency)"

    def formatter(self) -> FuncFormatter:
        d = self.divisor

        def fmt(x, _pos):
            if d == 1:
                return f"{x:,.0f}"
            out = f"{x / d:,.2f}".rstrip("0").rstrip(".")
            return "0" if out in ("-0", "") else out

        return FuncFormatter(fmt)



#: most panels a multi-panel chart draws (classes in the age map, types in the EAC chart)
MAX_PANELS = 8

def money_scale(values: Iterable[float | None]) -> MoneyScale:
    """Millions, thousands or plain units, from the largest magnitude shown."""
    vals = [abs(float(v)) for v in values if v is not None and np.isfinite(float(v))]
    top = max(vals, default=0.0)
    if top >= 2e6:
        return MoneyScale(1e6, "millions")
    if top >= 2e4:
        return MoneyScale(1e3, "thousands")
    return MoneyScale(1.0, "")


def short_money(x: float, scale: MoneyScale) -> str:
    """A bar label in the axis' scale: '1.85 M', '372 k', '950'."""
    suffix = {"millions": " M", "thousands": " k"}.get(scale.word, "")
    if not suffix:
        return money(x)
    v = x / scale.divisor
    if abs(v) < 10:
        return f"{v:,.2f}{suffix}"
    if abs(v) < 100:
        return f"{v:,.1f}{suffix}"
    return f"{v:,.0f}{suffix}"


# ---------------------------------------------------------------------------
# SVG plumbing
# ---------------------------------------------------------------------------
@dataclass(frozen=True)
class Frame:
    """Fixed margins and gaps of a figure [inches] (a fixed layout is several times faster than an automatic one)."""

    left: float = 1.05
    right: float = 0.3
    bottom: float = 0.6
    top: float = 0.4
    rows: int = 1
    cols: int = 1
    hgap: float = 0.0
    wgap: float = 0.0


def _figure(width_in: float, height_in: float, frame: Frame) -> Figure:
    fig = Figure(figsize=(width_in, height_in))
    FigureCanvasSVG(fig)
    f = frame
    ax_h = max(0.1, (height_in - f.top - f.bottom - f.hgap * (f.rows - 1)) / f.rows)
    ax_w = max(0.1, (width_in - f.left - f.right - f.wgap * (f.cols - 1)) / f.cols)
    fig.subplots_adjust(left=f.left / width_in, right=1 - f.right / width_in, bottom=f.bottom / height_in,
                        top=1 - f.top / height_in, hspace=f.hgap / ax_h, wspace=f.wgap / ax_w)
    return fig


def to_svg(fig: Figure, chart_id: str, label: str) -> str:
    """The figure as one ``<svg>`` element: ids prefixed, sized to its container, labelled."""
    buf = io.StringIO()
    fig.savefig(buf, format="svg", metadata={"Date": None, "Creator": None})
    svg = buf.getvalue()
    svg = svg[svg.index("<svg"):]
    svg = re.sub(r"\s*<metadata>.*?</metadata>", "", svg, flags=re.S)
    svg = re.sub(r'id="([^"]+)"', lambda m: f'id="{chart_id}-{m.group(1)}"', svg)
    svg = re.sub(r"url\(#([^)]+)\)", lambda m: f"url(#{chart_id}-{m.group(1)})", svg)
    svg = re.sub(r'href="#([^"]+)"', lambda m: f'href="#{chart_id}-{m.group(1)}"', svg)
    head_end = svg.index(">")
    head = svg[:head_end]
    m = re.search(r'width="([\d.]+)pt"', head)
    width_pt = float(m.group(1)) if m else 720.0
    head = re.sub(r'\s(width|height)="[^"]*"', "", head)
    label = (label.replace("&", "&amp;").replace('"', "&quot;").replace("<", "&lt;"))
    head += (f' class="chart-svg" role="img" aria-label="{label}" '
             f'style="width:100%;max-width:{width_pt * 4 / 3:.0f}px;height:auto"')
    return head + svg[head_end:]


def _render(draw, chart_id: str, label: str, width_in: float, height_in: float, frame: Frame = Frame()) -> str:
    with matplotlib.rc_context(_RC):
        fig = _figure(width_in, height_in, frame)
        draw(fig)
        return to_svg(fig, chart_id, label)


def message_svg(chart_id: str, title: str, message: str, width_in: float = 10.0, height_in: float = 1.6) -> str:
    """A small placeholder chart that says why there is nothing to draw."""

    def draw(fig: Figure):
        ax = fig.add_subplot()
        ax.set_axis_off()
        ax.set_title(title, loc="left")
        ax.text(0.0, 0.45, message, transform=ax.transAxes, ha="left", va="center", color="#444444", wrap=True)

    return _render(draw, chart_id, f"{title}: {message}", width_in, height_in, Frame(0.2, 0.2, 0.1, 0.4))


# ---------------------------------------------------------------------------
# what each unit is in each year
# ---------------------------------------------------------------------------
@dataclass(frozen=True)
class FleetState:
    """What each unit of ``plan.units`` is in each planning year, as arrays of shape (units, horizon).

    ``type_code[u, k]`` indexes ``types`` (−1: not in service) and ``age[u, k]`` is the age during the
    year (−1: not in service); see :func:`unit_years` for the convention.
    """

    types: tuple[str, ...]
    type_code: np.ndarray
    age: np.ndarray


def fleet_state(plan, case: Case) -> FleetState:
    """The type held and the age of every unit in every year, from the plan's events (no per-year loop).

    Each unit starts a run of ages at year 0 (its start type and age) and again at each event other than
    an overhaul (age 0 in the type bought, or out of service after a sale without a replacement); within a
    run the age grows by one a year.
    """
    s = case.study
    H, U = s.horizon, len(plan.units)
    types = [t.id for t in case.types]
    index = {t: j for j, t in enumerate(types)}
    base_code = np.full((U, H), -1, dtype=np.int64)
    base_age = np.full((U, H), -1, dtype=np.int64)
    reset = np.zeros((U, H), dtype=bool)
    reset[:, 0] = True
    for i, u in enumerate(plan.units):
        if u.start_type not in index:
            index[u.start_type] = len(types)
            types.append(u.start_type)
        base_code[i, 0] = index[u.start_type]
        base_age[i, 0] = -1 if u.start_age is None else u.start_age
        for e in u.events:
            k = e.year - s.start_year
            if e.action == "overhaul" or not 0 <= k < H:  # an overhauled unit keeps its age
                continue
            reset[i, k] = True
            if e.type:
                if e.type not in index:
                    index[e.type] = len(types)
                    types.append(e.type)
                base_code[i, k], base_age[i, k] = index[e.type], 0
            else:
                base_code[i, k], base_age[i, k] = -1, -1
    ks = np.arange(H)
    last = np.maximum.accumulate(np.where(reset, ks, 0), axis=1)   # the year each run started
    rows = np.arange(U)[:, None]
    start_age, code = base_age[rows, last], base_code[rows, last]
    age = np.where(start_age >= 0, start_age + (ks - last), -1)
    code = np.where(age >= 0, code, -1) if U else code
    return FleetState(types=tuple(types), type_code=code, age=age)


def unit_years(plan, case: Case) -> list[list[tuple[str, int]]]:
    """Per unit of ``plan.units``, per planning year: (type held, age during the year).

    The age is the completed years of service at the start of the year after
    that year's replacement, so a unit bought in the year has age 0; a unit
    kept from the year before is one year older (docs/conventions.md).  A unit not in
    service in a year (bought later, or sold without a replacement) has ("", −1) there.
    """
    st = fleet_state(plan, case)
    names = list(st.types) + [""]   # code −1 → ""
    return [[(names[c], a) for c, a in zip(cr, ar)] for cr, ar in zip(st.type_code.tolist(), st.age.tolist())]


def type_colours(case: Case) -> dict[str, tuple[str, str]]:
    """Type id → (colour, hatch), in case order."""
    n = len(OKABE_ITO)
    return {t.id: (OKABE_ITO[j % n], HATCHES[(j // n) % len(HATCHES)]) for j, t in enumerate(case.types)}


def _years_axis(ax, years: Sequence[int]):
    ax.xaxis.set_major_locator(MaxNLocator(integer=True, nbins=min(16, max(2, len(years)))))
    ax.set_xlabel("calendar year")


# ---------------------------------------------------------------------------
# plan charts
# ---------------------------------------------------------------------------
def capital_chart(plan, case: Case) -> str:
    """Capital per year as bars, the cap as a step line; over-cap years and shortfalls marked."""
    cid = "chart-capital"
    cur = case.study.start_year
    years = [y.year for y in plan.years]
    if not years:
        return message_svg(cid, "Capital per year", "The plan has no yearly figures to draw.")
    net = plan.basis == "net"
    capital = np.array([y.capital for y in plan.years])
    salvage = np.array([y.salvage for y in plan.years])
    spend = capital - salvage if net else capital
    caps = np.array([np.nan if y.cap is None else y.cap for y in plan.years], dtype=float)
    short = {int(y): float(x) for y, x in (plan.shortfall or ())}
    over = np.where(np.isfinite(caps), spend > caps + np.maximum(0.5, 1e-9 * np.abs(caps)), False)
    tops = list(spend) + list(capital) + [c for c in caps if np.isfinite(c)]
    tops += [caps[years.index(y)] + x if y in years and np.isfinite(caps[years.index(y)]) else x
             for y, x in short.items()]
    sc = money_scale(tops)

    def draw(fig: Figure):
        ax = fig.add_subplot()
        x = np.array(years)
        if net:
            ax.bar(x, capital, width=0.8, color="white", edgecolor=GREY, linewidth=0.8,
                   label="purchase prices (gross)")
        ax.bar(x[~over], spend[~over], width=0.8, color=BLUE,
               label="net spend (purchases less market value received)" if net else "capital spent (purchase prices)")
        if over.any():
            ax.bar(x[over], spend[over], width=0.8, color=VERMILLION, hatch="//", edgecolor="white",
                   label="over the cap")
        if np.isfinite(caps).any():
            xs = np.concatenate([x - 0.5, [x[-1] + 0.5]])
            ys = np.concatenate([caps, [caps[-1]]])
            ax.step(xs, ys, where="post", color=BLACK, linewidth=1.6, linestyle="--",
                    label=f"cap ({plan.basis} basis)")
        if short:
            sx = np.array(sorted(short))
            base = np.array([caps[years.index(y)] if y in years and np.isfinite(caps[years.index(y)]) else 0.0
                             for y in sx])
            need = np.array([short[y] for y in sx])
            ax.bar(sx, need, bottom=base, width=0.8, color="white", edgecolor=VERMILLION, hatch="xx",
                   linewidth=1.2, label="shortfall: extra capital needed")
            for xx, b, n in zip(sx, base, need):
                ax.annotate(f"+{short_money(n, sc)}", (xx, b + n), xytext=(0, 3), textcoords="offset points",
                            ha="center", va="bottom", fontsize=8, color=VERMILLION)
        for xx, v in zip(x[over], spend[over]):
            ax.annotate("over", (xx, v), xytext=(0, 3), textcoords="offset points", ha="center", va="bottom",
                        fontsize=8, color=VERMILLION)
        ax.yaxis.set_major_formatter(sc.formatter())
        ax.set_ylabel(sc.label("Capital per year", str(cur)))
        _years_axis(ax, years)
        ax.set_xlim(x[0] - 0.8, x[-1] + 0.8)
        ax.set_ylim(bottom=min(0.0, float(np.min(spend)) * 1.1))
        ax.set_title("Capital per year" + (" against the cap" if np.isfinite(caps).any() else " (no cap)"),
                     loc="left")
        fig.legend(loc="lower left", bbox_to_anchor=(1.05 / 10.0, 0.01), ncol=3)

    return _render(draw, cid, "Bar chart of capital per year" + (" with the cap" if np.isfinite(caps).any() else ""),
                   10.0, 4.6, Frame(bottom=1.0))


def age_heatmap(plan, case: Case) -> str:
    """Units by age (rows) and year (columns), one panel per class, with each type's max age."""
    cid = "chart-ages"
    s = case.study
    if not plan.units:
        return message_svg(cid, "Fleet age by year", "The plan has no unit schedule to draw.")
    st = fleet_state(plan, case)
    counts: dict[str, int] = {}
    for u in plan.units:
        counts[u.class_] = counts.get(u.class_, 0) + 1
    # a page holds a few panels; a large fleet shows its largest classes (the caption says so)
    largest = sorted(counts, key=lambda c: -counts[c])[:MAX_PANELS]
    classes = [c for c in case.classes if c in largest]
    unit_class = np.array([u.class_ for u in plan.units], dtype=object)
    ks = np.broadcast_to(np.arange(s.horizon), st.age.shape)
    grids, max_ages = {}, {}
    for c in classes:
        types = case.types_of(c)
        mine = unit_class == c
        code, age = st.type_code[mine], st.age[mine]
        held = {st.types[j] for j in np.unique(code[code >= 0])} | {u.start_type for u in plan.units if u.class_ == c}
        by_age: dict[int, list[str]] = {}
        for t in types:
            if t.id in held:
                by_age.setdefault(t.max_age, []).append(t.id)
        max_ages[c] = sorted(by_age.items(), reverse=True)
        top = max([t.max_age for t in types] + ([int(age.max())] if (age >= 0).any() else []))
        g = np.zeros((top + 1, s.horizon), dtype=int)
        on = age >= 0
        np.add.at(g, (age[on], ks[mine][on]), 1)
        grids[c] = g
    vmax = max(int(g.max()) for g in grids.values()) or 1
    heights = [max(1.7, 0.15 * g.shape[0] + 0.8) for g in grids.values()]
    years = list(s.years)

    def draw(fig: Figure):
        axes = fig.subplots(len(classes), 1, sharex=True, squeeze=False, height_ratios=heights)[:, 0]
        fig.subplots_adjust(hspace=0.3 / (sum(heights) / len(heights)))
        if vmax <= 12:   # few distinct counts: one colour per count
            cmap = matplotlib.colormaps[HEATMAP].resampled(vmax)
            norm = BoundaryNorm(np.arange(0.5, vmax + 1.0), cmap.N)
        else:
            cmap = matplotlib.colormaps[HEATMAP]
            norm = Normalize(0.5, vmax + 0.5)
        cmap = cmap.with_extremes(bad="white")
        im = None
        for ax, c in zip(axes, classes):
            g = grids[c]
            data = np.ma.masked_equal(g, 0)
            im = ax.imshow(data, cmap=cmap, norm=norm, origin="lower", aspect="auto",
                           extent=(years[0] - 0.5, years[-1] + 0.5, -0.5, g.shape[0] - 0.5),
                           interpolation="nearest")
            ax.grid(False)
            for j, (ma, tids) in enumerate(max_ages[c]):
                ax.axhline(ma - 0.5, color=VERMILLION, linewidth=1.4, linestyle=LINESTYLES[j % len(LINESTYLES)])
                ax.text(years[0] - 0.3, ma - 0.5, f"max age {ma}: {', '.join(tids)}", va="bottom", ha="left",
                        fontsize=8, color=VERMILLION,
                        bbox={"facecolor": "white", "edgecolor": "none", "pad": 0.8, "alpha": 0.85})
            ax.set_ylabel(f"{c}\nage (years)")
            ax.yaxis.set_major_locator(MaxNLocator(integer=True, nbins=6))
            ax.set_ylim(-0.5, max(g.shape[0] - 0.5, max(ma for ma, _ in max_ages[c]) + 1.6 if max_ages[c] else 0))
        axes[0].set_title("Fleet age by year: number of units of each age (0 = bought that year)", loc="left")
        _years_axis(axes[-1], years)
        if im is not None:
            x1 = axes[0].get_position().x1
            y0, y1 = axes[-1].get_position().y0, axes[0].get_position().y1
            cax = fig.add_axes((x1 + 0.25 / 10.0, y0 + 0.1 * (y1 - y0), 0.18 / 10.0, 0.8 * (y1 - y0)))
            cb = fig.colorbar(im, cax=cax)
            cb.set_label("units (count)")
            if vmax <= 12:
                cb.set_ticks(np.arange(1, vmax + 1))
            else:
                cb.locator = MaxNLocator(integer=True)
                cb.update_ticks()

    return _render(draw, cid, "Heat map of units by age and year for each class", 10.0,
                   sum(heights) + 0.3 * (len(heights) - 1) + 1.0, Frame(right=1.15, bottom=0.6))


def types_chart(plan, case: Case) -> str:
    """Units of each type in service per year, as stacked areas."""
    cid = "chart-types"
    s = case.study
    if not plan.units:
        return message_svg(cid, "Units in service by type", "The plan has no unit schedule to draw.")
    st = fleet_state(plan, case)
    held = st.type_code[st.type_code >= 0]
    ks = np.broadcast_to(np.arange(s.horizon), st.type_code.shape)[st.type_code >= 0]
    per = np.zeros((len(st.types), s.horizon), dtype=int)   # units of each type in service, by year
    np.add.at(per, (held, ks), 1)
    code = {t: j for j, t in enumerate(st.types)}
    counts = [Counter({t: int(per[code[t], k]) for t in st.types if per[code[t], k]}) for k in range(s.horizon)]
    ids = [t.id for t in case.types if any(c[t.id] for c in counts)]
    colours = type_colours(case)
    years = np.array(list(s.years))

    def draw(fig: Figure):
        ax = fig.add_subplot()
        xs = np.concatenate([years - 0.5, [years[-1] + 0.5]])
        bottom = np.zeros(len(years))
        for tid in ids:
            n = np.array([c[tid] for c in counts], dtype=float)
            col, hatch = colours[tid]
            top = bottom + n
            ax.fill_between(xs, np.append(bottom, bottom[-1]), np.append(top, top[-1]), step="post",
                            facecolor=col, hatch=hatch, edgecolor="white", linewidth=0.6,
                            label=f"{tid} ({case.type(tid).class_})")
            bottom = top
        ax.set_ylabel("units in service (count)")
        ax.yaxis.set_major_locator(MaxNLocator(integer=True))
        _years_axis(ax, list(years))
        ax.set_xlim(xs[0], xs[-1])
        ax.set_ylim(0, max(1.0, float(bottom.max())) * 1.05)
        ax.set_title("Units in service by type, each year", loc="left")
        h, lab = ax.get_legend_handles_labels()
        ax.legend(h[::-1], lab[::-1], loc="upper left", bbox_to_anchor=(1.01, 1.0), ncol=1, title="type (class)")

    return _render(draw, cid, "Stacked area chart of units in service by type and year", 10.0, 4.0,
                   Frame(left=0.85, right=2.9))


def buyable_types(case: Case) -> list[tuple[object, int]]:
    """(type, first planning year it can be bought) for each type buyable in the study."""
    out = []
    for t in case.types:
        for y in case.study.years:
            if t.buyable(y):
                out.append((t, y))
                break
    return out


def eac_chart(case: Case, life_tables: Sequence) -> str:
    """EAC of capital, O&M and in total by holding period, one panel per buyable type."""
    cid = "chart-eac"
    cur = case.study.start_year
    if not life_tables:
        return message_svg(cid, "Equivalent annual cost", "No type can be bought during the study.")
    life_tables = list(life_tables)[:MAX_PANELS]
    n = len(life_tables)
    cols = 2 if n > 1 else 1
    rows = (n + cols - 1) // cols
    allv = [v for lt in life_tables for v in np.concatenate([lt.eac_total, lt.eac_capital, lt.eac_om])]
    sc = money_scale(allv)

    def draw(fig: Figure):
        axes = fig.subplots(rows, cols, squeeze=False)
        for j, lt in enumerate(life_tables):
            ax = axes[j // cols][j % cols]
            lo, hi = lt.band
            ax.axvspan(lo - 0.5, hi + 0.5, color=YELLOW, alpha=0.35, linewidth=0,
                       label=f"within {lt.tolerance:.0%} of the least EAC")
            ax.plot(lt.years, lt.eac_capital, color=BLUE, linestyle="--", marker="s", markersize=3,
                    label="capital (price less resale)")
            ax.plot(lt.years, lt.eac_om, color=ORANGE, linestyle=":", marker="^", markersize=3,
                    label="O&M")
            ax.plot(lt.years, lt.eac_total, color=BLACK, linewidth=2.0, marker="o", markersize=3.5, label="total")
            ax.axvline(lt.economic_life, color=VERMILLION, linewidth=1.2)
            right_half = lt.economic_life > (lt.years[0] + lt.years[-1]) / 2
            ax.annotate(f"economic life {lt.economic_life} year{'s' if lt.economic_life != 1 else ''}\n"
                        f"least EAC {short_money(lt.min_eac, sc)} a year",
                        (lt.economic_life, 0.0), xycoords=("data", "axes fraction"),
                        xytext=(-5 if right_half else 5, 6), textcoords="offset points", fontsize=8,
                        ha="right" if right_half else "left", va="bottom", color=VERMILLION,
                        bbox={"facecolor": "white", "edgecolor": "none", "pad": 1.0, "alpha": 0.85})
            t = case.type(lt.type)
            ax.set_title(f"{lt.type} ({t.class_}), bought {lt.year}", loc="left", fontsize=10)
            ax.set_xlabel("years kept before resale, N (years)")
            ax.set_ylabel(sc.label("EAC per year", str(cur)), fontsize=8.5)
            ax.yaxis.set_major_formatter(sc.formatter())
            ax.xaxis.set_major_locator(MaxNLocator(integer=True))
            ax.set_xlim(0.5, lt.years[-1] + 0.5)
            ax.set_ylim(bottom=0.0)
        for j in range(n, rows * cols):
            axes[j // cols][j % cols].set_axis_off()
        h, lab = axes[0][0].get_legend_handles_labels()
        fig.legend(h, lab, loc="lower center", bbox_to_anchor=(0.5, 0.005), ncol=4)

    return _render(draw, cid, "Line charts of equivalent annual cost by holding period for each buyable type",
                   10.0, 2.6 * rows + 0.95 * (rows - 1) + 1.1,
                   Frame(left=1.0, right=0.3, bottom=0.8, top=0.35, rows=rows, cols=cols, hgap=0.95, wgap=1.2))


def class_cost_chart(plan, case: Case) -> str:
    """Present cost by class as horizontal bars."""
    cid = "chart-class-cost"
    cur = case.study.start_year
    items = [(c, float(v)) for c, v in (plan.by_class or {}).items() if v is not None]
    if not items:
        return message_svg(cid, "Present cost by class", "No present cost by class is available.")
    sc = money_scale([v for _, v in items])

    def draw(fig: Figure):
        ax = fig.add_subplot()
        names = [c for c, _ in items][::-1]
        vals = [v for _, v in items][::-1]
        bars = ax.barh(names, vals, color=BLUE, height=0.6)
        for b, v in zip(bars, vals):
            ax.annotate(short_money(v, sc), (v, b.get_y() + b.get_height() / 2), xytext=(4, 0),
                        textcoords="offset points", va="center", ha="left" if v >= 0 else "right", fontsize=9)
        ax.xaxis.set_major_formatter(sc.formatter())
        ax.set_xlabel(sc.label(f"Present cost at the start of {cur}", str(cur)).replace("\n", " "))
        ax.grid(axis="y", visible=False)
        ax.set_xlim(left=min(0.0, min(vals) * 1.15), right=max(0.0, max(vals)) * 1.15 or 1.0)
        ax.set_title("Present cost by class", loc="left")

    left = 0.3 + 0.075 * max(len(c) for c, _ in items)
    return _render(draw, cid, "Bar chart of present cost by class", 10.0, 1.2 + 0.45 * len(items),
                   Frame(left=left, right=0.4, bottom=0.6, top=0.35))


def cap_cost_chart(plan, case: Case) -> str | None:
    """The cost of each cap year (its shadow price) as bars; None when the plan has no cap."""
    cid = "chart-cap-cost"
    capped = [y for y in plan.years if y.cap is not None]
    if not capped:
        return None
    priced = [(y.year, float(y.shadow_price)) for y in capped if y.shadow_price is not None]
    if not priced:
        return message_svg(cid, "Cost of each year's cap",
                           "The solver reported no shadow prices for this plan, so the cost of each cap year "
                           "is not shown.")
    years = [y.year for y in plan.years]

    def draw(fig: Figure):
        ax = fig.add_subplot()
        x = np.array([p[0] for p in priced])
        v = np.array([p[1] for p in priced])
        pos = v > 1e-9
        ax.bar(x[pos], v[pos], width=0.8, color=PURPLE, label="binding cap: money would lower the present cost")
        if (~pos).any():
            ax.plot(x[~pos], np.zeros((~pos).sum()), linestyle="none", marker="o", markersize=4,
                    markerfacecolor="white", markeredgecolor=GREY, clip_on=False, label="cap not binding (0)")
        for xx, vv in zip(x[pos], v[pos]):
            ax.annotate(f"{vv:.2f}" if vv >= 0.01 else f"{vv:.3f}", (xx, vv), xytext=(0, 2),
                        textcoords="offset points", ha="center",
                        va="bottom", fontsize=7.5)
        ax.set_ylabel("present-cost saving per 1 of\nextra cap (money per money)")
        _years_axis(ax, years)
        ax.set_xlim(years[0] - 0.8, years[-1] + 0.8)
        ax.set_ylim(bottom=0.0, top=max(0.05, float(v.max()) * 1.2))
        ax.set_title("Cost of each year's cap (shadow price)", loc="left")
        fig.legend(loc="lower left", bbox_to_anchor=(1.05 / 10.0, 0.01), ncol=2)

    return _render(draw, cid, "Bar chart of the shadow price of each year's cap", 10.0, 3.8, Frame(bottom=1.0))


# ---------------------------------------------------------------------------
# comparison charts
# ---------------------------------------------------------------------------
def compare_cost_chart(scenarios: Sequence, currency: str) -> str:
    """Present cost of each scenario (``ScenarioResult``) as horizontal bars, with its difference from the first."""
    cid = "chart-compare-cost"
    rows = [(s.id, s.present_cost, s.difference) for s in scenarios if s.present_cost is not None]
    if not rows:
        return message_svg(cid, "Present cost by scenario", "No scenario reported a present cost.")
    sc = money_scale([r[1] for r in rows])

    def draw(fig: Figure):
        ax = fig.add_subplot()
        names = [r[0] for r in rows][::-1]
        vals = [r[1] for r in rows][::-1]
        diffs = [r[2] for r in rows][::-1]
        bars = ax.barh(names, vals, color=[OKABE_ITO[(len(rows) - 1 - j) % len(OKABE_ITO)] for j in range(len(rows))],
                       height=0.6)
        for b, v, d in zip(bars, vals, diffs):
            txt = short_money(v, sc)
            if d is not None:
                txt += "  (reference)" if abs(d) < 0.005 else f"  ({'+' if d > 0 else '−'}{short_money(abs(d), sc)})"
            ax.annotate(txt, (v, b.get_y() + b.get_height() / 2), xytext=(4, 0), textcoords="offset points",
                        va="center", ha="left", fontsize=9)
        ax.xaxis.set_major_formatter(sc.formatter())
        ax.set_xlabel(sc.label("Present cost", currency).replace("\n", " "))
        ax.grid(axis="y", visible=False)
        ax.set_xlim(left=min(0.0, min(vals)), right=max(vals) * 1.3 or 1.0)
        ax.set_title("Present cost by scenario (difference in brackets)", loc="left")

    left = 0.3 + 0.075 * max(len(r[0]) for r in rows)
    return _render(draw, cid, "Bar chart of present cost by scenario", 10.0, 1.3 + 0.45 * len(rows),
                   Frame(left=left, right=0.4, bottom=0.6, top=0.35))


def compare_capital_chart(scenarios: Sequence, currency: str, cap_by_year: dict | None = None) -> str:
    """Capital per year of each scenario (``ScenarioResult``) as overlaid lines (colour, line style and marker differ)."""
    cid = "chart-compare-capital"
    series = [(s.id, sorted((int(y), float(v)) for y, v in s.capital_by_year.items()))
              for s in scenarios if s.capital_by_year]
    if not series:
        return message_svg(cid, "Capital per year by scenario", "No scenario reported capital by year.")
    caps = sorted((int(y), float(v)) for y, v in (cap_by_year or {}).items())
    sc = money_scale([v for _, pts in series for _, v in pts] + [v for _, v in caps])

    def draw(fig: Figure):
        ax = fig.add_subplot()
        for j, (sid, pts) in enumerate(series):
            ax.plot([p[0] for p in pts], [p[1] for p in pts], color=OKABE_ITO[j % len(OKABE_ITO)],
                    linestyle=LINESTYLES[j % len(LINESTYLES)], marker=MARKERS[j % len(MARKERS)], markersize=4,
                    linewidth=1.6, label=sid)
        if caps:
            xs = np.array([c[0] for c in caps], dtype=float)
            ys = np.array([c[1] for c in caps])
            ax.step(np.append(xs - 0.5, xs[-1] + 0.5), np.append(ys, ys[-1]), where="post", color=GREY,
                    linewidth=2.4, alpha=0.7, label="cap (base case)")
        ax.yaxis.set_major_formatter(sc.formatter())
        ax.set_ylabel(sc.label("Capital per year", currency))
        ax.set_xlabel("calendar year")
        ax.xaxis.set_major_locator(MaxNLocator(integer=True, nbins=16))
        xs_all = [p[0] for _, pts in series for p in pts] + [c[0] for c in caps]
        ax.set_xlim(min(xs_all) - 0.8, max(xs_all) + 0.8)
        ax.set_ylim(bottom=0.0)
        ax.set_title("Capital per year, scenarios overlaid", loc="left")
        ax.legend(loc="upper left", bbox_to_anchor=(1.01, 1.0), title="scenario")

    return _render(draw, cid, "Line chart of capital per year for each scenario", 10.0, 4.2, Frame(right=2.2))
