"""Text, CSV and HTML views of a hedge (:class:`tenure.hedge.Hedge`), written as one set."""

from __future__ import annotations

import csv
import io
from pathlib import Path

from markupsafe import Markup

from ..hedge import Hedge
from ..model import Case
from . import charts, files
from .compare import csv_cell, text_money
from .html import assumptions_html, footer_html, money, pct, render
from .text import CAUTION


def hedge_text(h: Hedge) -> str:
    """The terminal summary: commitment by year and type, the scenario table, EVPI and VSS."""
    lines = [f"Hedged commitment of {h.commit_years} year(s) ({h.objective}; {h.method}; gap {h.gap:.3%})", ""]
    by = _buys_by_year_type(h)
    others = [f"  {y} {act:<8} {len(us):>4} × {t}" for (y, act, t), us in _others_by_year(h).items()]
    lines += ([f"  {y} {'buy':<8} {len(us):>4} × {t}" for (y, t), us in by.items()]
              or ["  commit no purchase" + ("" if others else ": keep every unit")])
    lines += others
    lines += ["", f"  {'scenario':<16}{'prob.':>7}{'cost':>16}{'own best':>16}{'regret':>14}"]
    for s in h.scenarios:
        lines.append(f"  {s.id:<16}{s.probability:>7.3f}{text_money(s.cost):>16}{text_money(s.own_optimum):>16}"
                     f"{text_money(s.regret):>14}")
    lines += ["", f"  expected cost {text_money(h.expected_cost)}   largest regret {text_money(h.max_regret)}",
              f"  EVPI {text_money(h.evpi)}   VSS {text_money(h.vss)}"]
    lines += [f"  note: {n}" for n in h.notes]
    return "\n".join(lines)


def _buys_by_year_type(h: Hedge) -> dict:
    out: dict = {}
    for c in h.buys:
        out.setdefault((c.year, c.type), []).append(c.unit)
    return dict(sorted(out.items()))


def _others_by_year(h: Hedge) -> dict:
    out: dict = {}
    for c in h.other_actions:
        out.setdefault((c.year, c.action, c.type), []).append(c.unit)
    return dict(sorted(out.items()))


def _which(units: list) -> str:
    """The first dozen unit names, and how many more."""
    return ", ".join(units[:12]) + (f" and {len(units) - 12} more" if len(units) > 12 else "")


def hedge_csv(h: Hedge) -> str:
    """``hedge.csv``: one row per committed purchase (unit, year, type)."""
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(["unit", "year", "type"])
    for c in h.buys:
        w.writerow([csv_cell(c.unit), c.year, c.type])
    return buf.getvalue()


def hedge_report(h: Hedge, case: Case) -> str:
    """The whole ``report.html`` of a hedge (templates/hedge.html.j2)."""
    s = case.study
    cur = str(s.start_year)
    buy_rows = [(y, t, len(us), _which(us)) for (y, t), us in _buys_by_year_type(h).items()]
    other_rows = [(y, "sold, not replaced" if act == "sell" else act, t, len(us), _which(us))
                  for (y, act, t), us in _others_by_year(h).items()]
    rows = [(r.id, f"{r.probability:.3f}", money(r.cost), money(r.own_optimum), money(r.regret), money(r.base_cost))
            for r in h.scenarios]
    words = {"expected": "least expected present cost", "regret": "least largest regret"}[h.objective]
    return render("hedge.html.j2", page_title=f"{s.title or 'Hedge'} — hedged commitment", title=s.title or "Hedge",
                  cur=cur, first=s.start_year, n=h.commit_years, objective_words=words, buy_rows=buy_rows,
                  other_rows=other_rows, scenario_rows=rows, expected=money(h.expected_cost),
                  max_regret=money(h.max_regret),
                  gap=pct(h.gap, 3), method=h.method, evpi=money(h.evpi), vss=money(h.vss),
                  vss_missing=h.vss is None, notes=list(h.notes) + [CAUTION],
                  capital_svg=Markup(charts.compare_capital_chart(h.scenarios, cur)),
                  assumptions=Markup(assumptions_html(case)), footer=Markup(footer_html(case)))


def write_hedge(h: Hedge, case: Case, out_dir: Path | str) -> list[Path]:
    """``hedge.json``, ``hedge.csv`` and ``report.html`` into ``out_dir`` (the staging folder of the output
    transaction, ``report.transaction``, whose manifest carries the run id: hedge.json keeps exactly the
    keys of ``Hedge.to_dict``)."""
    out = Path(out_dir)
    return [files.write_json(out / "hedge.json", h.to_dict()),
            files.write_text(out / "hedge.csv", hedge_csv(h)),
            files.write_text(out / "report.html", hedge_report(h, case))]
