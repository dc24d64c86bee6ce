"""The rules a plan was drawn under, as the reports show them: one line per target (whether and from
when it is met), class sizes, tonnes and emission caps, and capital and cap in constant and nominal
money, for the terminal, ``report.html`` and ``plan.xlsx``.

Everything is read back from the plan (:mod:`tenure.service`); money conversion follows
docs/conventions.md ("Nominal money").
"""

from __future__ import annotations

import html as _html

from .. import service
from ..model import Case


def relevant(case: Case) -> bool:
    """True when the case has any rule or money basis this view shows."""
    s = case.study
    b = case.budget
    return bool(case.coupled or s.inflation or s.carbon_price or s.rate_basis == "nominal"
                or (b is not None and b.money == "nominal") or any(t.emissions.first > 0 for t in case.types))


def rate_line(case: Case) -> str | None:
    """The Fisher conversion, when the case states a nominal rate."""
    s = case.study
    if s.rate_basis != "nominal":
        return None
    return (f"real discount rate {s.discount_rate:.4%} = (1 + {s.nominal_rate:.2%} nominal) / "
            f"(1 + {s.inflation:.2%} inflation) − 1 (Fisher relation)")


def target_lines(case: Case, plan) -> list[str]:
    """One line per target: met from which year, or the first year it falls short."""
    out = []
    for tg in case.targets:
        st = service.target_status(case, plan, tg)
        parts = []
        if tg.share_of_buys is not None:
            parts.append(f"{tg.share_of_buys:.0%} of purchases")
        if tg.share_in_service is not None:
            parts.append(f"{tg.share_in_service:.0%} of units in service")
        what = f"target {tg.label}: {' and '.join(parts)} of {', '.join(tg.types)} from {tg.from_}"
        if st.met:
            out.append(f"{what} — met (every year from {st.first_met})")
        else:
            out.append(f"{what} — NOT met in {st.first_short}"
                       + (f"; met from {st.first_met}" if st.first_met is not None else ""))
    return out


def summary_lines(case: Case, plan) -> list[str]:
    """Lines for the terminal summary (empty when the case has no such rule)."""
    if not relevant(case):
        return []
    s = case.study
    out = []
    r = rate_line(case)
    if r:
        out.append(r)
    if any(t.emissions.first > 0 for t in case.types) and plan.years:
        tonnes = [y.tonnes for y in plan.years]
        out.append(f"emissions: {tonnes[0]:,.1f} t CO2e in {s.start_year}, {tonnes[-1]:,.1f} t in "
                   f"{s.start_year + s.horizon - 1}")
        if s.carbon_price:
            v = 1.0 / (1.0 + s.discount_rate)
            pw = sum(y.carbon * v ** (k + 1) for k, y in enumerate(plan.years))
            out.append(f"carbon at {s.carbon_price:,.2f} per tonne: present cost {pw:,.0f} (included above)")
    out += target_lines(case, plan) if plan.units else []
    for cap in case.emission_caps:
        bad = [y.year for y in plan.years if case.emission_cap_for(y.year) is not None
               and y.tonnes > case.emission_cap_for(y.year) * (1 + 1e-9) + 1e-6]
        out.append(f"emission cap {cap.tonnes:,.0f} t from {cap.from_}: " + (f"exceeded in {bad[0]}" if bad else "kept"))
        break
    return out


def _cell(x, fmt="{:,.0f}") -> str:
    return "—" if x is None else fmt.format(x)


def rules_html(plan, case: Case) -> str:
    """A ``<section id="rules">`` with the targets, emissions and money in both bases ("" when none)."""
    if not relevant(case):
        return ""
    e = _html.escape
    s = case.study
    rows = []
    for y in plan.years:
        cap = case.emission_cap_for(y.year)
        rows.append(f"<tr><td>{y.year}</td><td>{y.in_service}</td><td>{_cell(y.capital)}</td>"
                    f"<td>{_cell(y.capital_nominal)}</td><td>{_cell(y.cap)}</td><td>{_cell(y.cap_nominal)}</td>"
                    f"<td>{y.tonnes:,.1f}</td><td>{_cell(cap, '{:,.1f}')}</td><td>{_cell(y.carbon)}</td></tr>")
    basis = case.budget.money if case.budget is not None else "constant"
    items = "".join(f"<li>{e(line)}</li>" for line in summary_lines(case, plan))
    return ('<section id="rules"><h2>Rules: targets, emissions and nominal money</h2>'
            f"<ul>{items}</ul>"
            f'<p class="money-note">Capital and cap in constant {s.start_year} currency and in then-year (nominal) '
            f"currency at {s.inflation:.2%} inflation a year; the case states its caps in {e(basis)} money. "
            "Units in service are held during the year, after its purchases and sales.</p>"
            "<table><thead><tr><th>year</th><th>units in service</th><th>capital (constant)</th>"
            "<th>capital (nominal)</th><th>cap (constant)</th><th>cap (nominal)</th><th>t CO2e</th>"
            "<th>emission cap [t]</th><th>carbon cost</th></tr></thead><tbody>"
            + "".join(rows) + "</tbody></table></section>")


RULES_HEAD = ("year", "units in service", "capital (constant)", "capital (nominal)", "cap (constant)",
              "cap (nominal)", "t CO2e", "emission cap [t]", "carbon cost")


def rules_sheet(wb, plan, case: Case) -> None:
    """A "rules" sheet in workbook ``wb`` (a ``sheetxml.Book``; only when the case has such rules)."""
    if not relevant(case):
        return
    ws = wb.sheet("rules")
    ws.append(list(RULES_HEAD))
    for y in plan.years:
        ws.append([y.year, y.in_service, round(y.capital, 2), round(y.capital_nominal, 2),
                   None if y.cap is None else round(y.cap, 2), None if y.cap_nominal is None else round(y.cap_nominal, 2),
                   round(y.tonnes, 3), case.emission_cap_for(y.year), round(y.carbon, 2)])
    ws.skip()
    for line in summary_lines(case, plan):
        ws.append([line])
    ws.freeze = "A2"
    for j in range(1, len(RULES_HEAD) + 1):
        ws.width[j] = 18
