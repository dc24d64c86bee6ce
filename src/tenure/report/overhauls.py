"""Where a plan overhauls units (HTML section and terminal lines), and the text of ``life --usage``.

Reads only the plan's events (``action == "overhaul"``); it never solves.
"""

from __future__ import annotations

from html import escape

from ..model import Case
from ..rebuild import RebuildLife


def overhaul_groups(plan) -> list[tuple]:
    """(year, class, type, age, units, total cost [money, undiscounted]) per group of overhauls, by year."""
    groups: dict[tuple, list] = {}
    for u in plan.units:
        for ev in u.events:
            if ev.action == "overhaul":
                g = groups.setdefault((ev.year, u.class_, ev.from_type, ev.from_age), [[], 0.0])
                g[0].append(u.unit)
                g[1] += ev.price
    return [(y, c, t, a, names, cost) for (y, c, t, a), (names, cost) in sorted(groups.items())]


def overhauls_html(plan, case: Case) -> str:
    """The report's "Overhauls" section ("" when no type of the case has an overhaul option)."""
    if not any(t.overhaul is not None for t in case.types):
        return ""
    rows = overhaul_groups(plan)
    head = "<h3>Overhauls</h3>"
    if not rows:
        return head + "<p>The plan overhauls no unit: replacing (or keeping) costs less wherever an overhaul is allowed.</p>"
    body = "".join(
        f"<tr><td class=\"num\">{y}</td><td>{escape(c)}</td><td>{escape(t)}</td><td class=\"num\">{a}</td>"
        f"<td class=\"num\">{len(n)}</td><td class=\"num\">{cost:,.0f}</td>"
        f"<td>{escape(', '.join(n[:4]))}{f' and {len(n) - 4} more' if len(n) > 4 else ''}</td></tr>"
        for y, c, t, a, n, cost in rows)
    return (head + f"<p class=\"money-note\">Units overhauled instead of replaced, by year. Costs are totals, "
            f"undiscounted, in constant {case.study.start_year} currency, counted as capital against the cap. "
            "An overhaul never overrides an inspection or a manufacturer's or regulator's retirement limit.</p>"
            "<table><thead><tr><th>year</th><th>class</th><th>type</th><th>age</th><th>units</th>"
            "<th>overhaul cost</th><th>which</th></tr></thead><tbody>" + body + "</tbody></table>")


def overhaul_lines(plan) -> list[str]:
    """Terminal lines: overhauls per year ([] when none)."""
    rows = overhaul_groups(plan)
    if not rows:
        return []
    by_year: dict[int, int] = {}
    for y, _, _, _, n, _ in rows:
        by_year[y] = by_year.get(y, 0) + len(n)
    return ["overhauls: " + ", ".join(f"{y}: {n}" for y, n in sorted(by_year.items()))]


def rebuild_text(r: RebuildLife) -> str:
    """The economic life at this usage without the overhaul, and the best schedule with it."""
    at = "the reference usage" if r.usage is None else f"usage {r.usage:,.0f} per year"
    if r.tax_rate is not None:
        at += f", after tax at {r.tax_rate:.1%} (the overhaul capitalised and depreciated)"
    out = [f"at {at}: max age {r.max_age}; without overhaul: economic life {r.life_without} years, "
           f"least EAC {r.min_without:,.2f} per year"]
    if r.best_with is not None:
        ao, n = r.best_with
        verdict = "the overhaul pays" if r.min_with < r.min_without else "the overhaul does not pay"
        out.append(f"with overhaul: overhaul at age {ao}, keep {n} years, least EAC {r.min_with:,.2f} per year "
                   f"({verdict}: {r.min_with - r.min_without:+,.2f} per year)")
    return "\n".join(out)
