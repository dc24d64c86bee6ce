"""The emissions chart of a plan: tonnes CO2e by year with the emission caps drawn.

Tonnes are read back from the plan's unit schedules (:func:`tenure.service.tonnes_by_year`), so the
chart shows what the plan does, whichever solver made it.
"""

from __future__ import annotations

import numpy as np
from matplotlib.figure import Figure

from .. import service
from ..model import Case
from .charts import GREY, OKABE_ITO, VERMILLION, Frame, _render, message_svg

CHART_ID = "chart-emissions"
TITLE = "Emissions by year"


def has_emissions(case: Case) -> bool:
    """True when any type of the case emits."""
    return any(t.emissions.first > 0 for t in case.types)


def emissions_chart(plan, case: Case) -> str:
    """Bars of the fleet's tonnes CO2e per year; the emission caps as a dashed step line."""
    if not has_emissions(case):
        return message_svg(CHART_ID, TITLE, "The case gives no emissions for its asset types.")
    if not plan.units:
        return message_svg(CHART_ID, TITLE, "The plan has no unit schedule to draw.")
    s = case.study
    years = np.array(list(s.years))
    tonnes = service.tonnes_by_year(case, plan)
    caps = np.array([np.nan if case.emission_cap_for(int(y)) is None else case.emission_cap_for(int(y))
                     for y in years])

    def draw(fig: Figure):
        ax = fig.add_subplot()
        over = np.where(np.isfinite(caps), tonnes > caps * (1 + 1e-9) + 1e-6, False)
        ax.bar(years, tonnes, color=[VERMILLION if o else OKABE_ITO[2] for o in over], width=0.75,
               label="tonnes CO2e in service")
        if np.isfinite(caps).any():
            xs = np.concatenate([years - 0.5, [years[-1] + 0.5]])
            ax.stairs(np.where(np.isfinite(caps), caps, np.nan), xs, color="#000000", linestyle="--", linewidth=1.4,
                      label="emission cap")
        ax.set_ylabel("t CO2e per year")
        ax.set_ylim(bottom=0, top=max(float(np.nanmax(np.concatenate([tonnes, caps]))), 1.0) * 1.12)
        ax.set_xlim(years[0] - 0.7, years[-1] + 0.7)
        ax.grid(axis="x", visible=False)
        ax.legend(loc="upper right", frameon=False, fontsize=9, labelcolor=GREY)
        ax.set_title(TITLE, loc="left")

    label = f"Bar chart of fleet emissions by year, {int(years[0])}–{int(years[-1])}"
    return _render(draw, CHART_ID, label, 10.0, 3.4, Frame(left=0.9, right=0.3, bottom=0.5, top=0.4))


def chart_section(plan, case: Case) -> tuple[str, str, str, str]:
    """(id, title, how to read it, svg) for the report's chart list."""
    read = ("Each bar is the fleet's tonnes CO2e in the year, counted over the units in service (held during "
            "the year, after its purchases and sales). The dashed line is the emission cap where one applies; "
            "bars over it would be vermillion.")
    if case.study.carbon_price:
        read += (f" Tonnes are priced at {case.study.carbon_price:,.2f} per tonne (constant {case.study.start_year} "
                 "currency), paid at the end of each service year with the O&M.")
    return CHART_ID, TITLE, read, emissions_chart(plan, case)
