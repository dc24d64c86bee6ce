"""What the outputs say about income tax: the after-tax note, depreciation labels, life tables.

Small text and HTML pieces used by ``report.text``, ``report.html`` and the
``tenure life`` command; each returns nothing (an empty string or list) for a
before-tax case, so before-tax outputs are unchanged.  The timing of the tax
cash flows is in docs/conventions.md ("Income tax").
"""

from __future__ import annotations

from html import escape

from ..life import LifeTable
from ..model import AssetType, Case


def depreciation_label(t: AssetType) -> str:
    """The type's depreciation method in words, or "none given"."""
    return t.depreciation.describe() if t.depreciation is not None else "none given"


def tax_line(case: Case) -> str:
    """One line for summaries: "after-tax at rate X …"; empty for a before-tax case."""
    tau = case.study.tax_rate
    if tau is None:
        return ""
    return (f"after-tax at rate {tau:.1%} (combined marginal rate); the discount rate "
            f"{case.study.discount_rate:.2%} is the after-tax rate; capital caps are on purchase prices")


def assumption_rows(case: Case) -> list[tuple[str, str]]:
    """Rows for the study-frame table of a report (none for a before-tax case)."""
    if case.study.tax_rate is None:
        return []
    return [("Income tax", tax_line(case))]


def depreciation_html(case: Case) -> str:
    """A small table of each type's depreciation method, for the assumptions of an after-tax report."""
    if case.study.tax_rate is None:
        return ""
    rows = "".join(f"<tr><td>{escape(t.id)}</td><td>{escape(t.class_)}</td><td>{escape(depreciation_label(t))}"
                   "</td></tr>" for t in case.types)
    return ("<h3>Tax depreciation</h3>"
            f'<p class="money-note">{escape(tax_line(case))}. The basis is the purchase price (for units held '
            "at the start, the type's price in their purchase year); a sale ends depreciation after the "
            "completed service years, and tax on market value less book value is paid at the sale. "
            "Defer to a licensed tax professional for the rules that apply to your firm.</p>"
            "<table><thead><tr><th>type</th><th>class</th><th>depreciation</th></tr></thead>"
            f"<tbody>{rows}</tbody></table>")


def summary_html(case: Case) -> str:
    """One paragraph for the summary of an after-tax report (empty before tax)."""
    line = tax_line(case)
    return f'<p class="money-note">Present cost is {escape(line)}.</p>' if line else ""


def life_text_after_tax(lt: LifeTable, title: str = "") -> str:
    """The after-tax EAC table: capital (after-tax sale), depreciation shield, after-tax O&M, total."""
    lo, hi = lt.band
    width = 89
    out = [title or f"After-tax economic life of {lt.type}, bought {lt.year}", "─" * width,
           f"{'hold N':>6} {'EAC capital':>14} {'EAC shield':>14} {'EAC O&M':>14} {'EAC total':>14} "
           f"{'marginal':>14}"]
    for n, c, sh, o, t, m in zip(lt.years, lt.eac_capital, lt.eac_shield, lt.eac_om, lt.eac_total, lt.marginal):
        mark = "  ◆ least EAC" if n == lt.economic_life else ("  · in band" if lo <= n <= hi else "")
        out.append(f"{n:>6} {c:>14,.2f} {sh:>14,.2f} {o:>14,.2f} {t:>14,.2f} {m:>14,.2f}{mark}")
    out.append("─" * width)
    out.append(f"after tax at {lt.tax_rate:.1%}: economic life {lt.economic_life} years, least EAC "
               f"{lt.min_eac:,.2f} per year; within {lt.tolerance:.1%}: {lo}–{hi} years")
    out.append("capital = price less the after-tax sale value (market value less tax on market value − book "
               "value); shield = tax × depreciation (a saving); O&M after tax = O&M × (1 − tax)")
    return "\n".join(out)


def life_compare_text(before: LifeTable, after: LifeTable, title: str = "") -> str:
    """Before-tax and after-tax EAC by holding period side by side."""
    width = 74
    out = [title or f"Economic life of {after.type}, bought {after.year}: before and after tax", "─" * width,
           f"{'hold N':>6} {'EAC before tax':>16} {'EAC after tax':>16} {'after / before':>16}"]
    for n, b, a in zip(after.years, before.eac_total, after.eac_total):
        marks = ("B" if n == before.economic_life else " ") + ("A" if n == after.economic_life else " ")
        ratio = f"{a / b:.3f}" if b else "—"
        out.append(f"{n:>6} {b:>16,.2f} {a:>16,.2f} {ratio:>16}  {marks.strip()}")
    out.append("─" * width)
    out.append(f"economic life before tax {before.economic_life} years (B), after tax at {after.tax_rate:.1%} "
               f"{after.economic_life} years (A); the same discount rate is used for both")
    return "\n".join(out)
