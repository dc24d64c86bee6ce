"""Human-facing documents of a plan or a comparison: ``report.html`` and ``plan.xlsx``.

:func:`write_all` is what ``tenure plan`` calls after the machine-readable
files (``report.tables``); :func:`write_compare_report` renders a comparison
of scenarios.  Each document is rendered whole in memory and then written
atomically (``report.files``), so a failed run leaves no half-written file.
"""

from __future__ import annotations

import contextlib
from pathlib import Path

import numpy as np

from ..life import life_table
from ..model import Case
from ..progress import bar
from ..scenarios import Comparison
from . import buylist, charts, files, grouped_html, groups, html, notes, tables, xlsx


def life_tables(case: Case) -> list:
    """EAC tables of every type buyable in the study, each bought in its first buyable planning year."""
    s = case.study
    return [life_table(t, s.discount_rate, s.start_year, year, tax_rate=s.tax_rate, carbon_price=s.carbon_price)
            for t, year in charts.buyable_types(case)]


def policies(case: Case) -> dict:
    """Uncapped policy (``chain.backward``) of every class that holds units."""
    from .. import chain

    out = {}
    for cls in case.classes:
        if case.units_of(cls):
            out[cls] = chain.backward(chain.build_class_graph(case, cls))
    return out


def _grouping(case: Case, by: str | None) -> str | None:
    """The kept column that buy lists and summaries are grouped by: ``by`` (``--by``) or ``[fleet] group_by``."""
    return by if by is not None else case.group_by


def plan_html(plan, case: Case, list_years: int = buylist.DEFAULT_YEARS, by: str | None = None,
              run_id: str | None = None, warnings=()) -> str:
    """The text of ``report.html`` for a plan: buy list of ``list_years`` years, summaries by the column ``by``,
    the output set's run id and the case's plausibility warnings."""
    col = _grouping(case, by)
    extra = {"summary": grouped_html.overdue_html(case),
             "first_years": grouped_html.first_years_html(plan, case, col) if col else None,
             "tables": grouped_html.buy_list_html(buylist.buy_list(plan, list_years, col))
             + (grouped_html.group_html(groups.group_summary(plan, col)) if col else "")}
    with np.errstate(all="ignore"):
        return html.plan_report(plan, case, life_tables(case), extra, notes=notes.run_notes_html(run_id, warnings))


def plan_xlsx(plan, case: Case, list_years: int = buylist.DEFAULT_YEARS, by: str | None = None,
              run_id: str | None = None, warnings=()) -> bytes:
    """The bytes of ``plan.xlsx`` for a plan, with the "buy list" sheet (and "by COLUMN" when grouped)."""
    col = _grouping(case, by)
    bl = buylist.buy_list(plan, list_years, col)
    sheets = [("buy list", lambda ws: buylist.buy_list_sheet(ws, bl))]
    if col:
        gs = groups.group_summary(plan, col)
        sheets.append((f"by {col}", lambda ws: groups.group_sheet(ws, gs)))
    return xlsx.workbook_bytes(plan, case, policies(case), extra_sheets=sheets, run_id=run_id, warnings=warnings)


def write_all(plan, case: Case, out_dir, *, list_years: int = buylist.DEFAULT_YEARS, by: str | None = None,
              run_id: str | None = None, warnings=(), progress: bool = True, done=None) -> list[Path]:
    """Write ``report.html`` and ``plan.xlsx`` into ``out_dir``; returns the paths.

    Both documents are rendered before either is written.  ``run_id`` names the output set
    (``report.transaction``); ``warnings`` are the case's plausibility warnings, listed in both.
    On large fleets rendering takes a while: a progress bar (``tenure.progress``) shows the
    step on a terminal, unless ``done(name)`` is given, which is then called after each document
    is rendered instead (the one bar of :func:`write_plan_files`).
    """
    out = Path(out_dir)
    with (bar(2, "report", enabled=progress) if done is None else contextlib.nullcontext()) as b:
        step = done or (lambda name: (b.set_postfix_str(name), b.update()))
        page = plan_html(plan, case, list_years, by, run_id, warnings)
        step("report.html")
        book = plan_xlsx(plan, case, list_years, by, run_id, warnings)
        step("plan.xlsx")
    return [files.write_text(out / "report.html", page), files.write_bytes(out / "plan.xlsx", book)]


def write_plan_files(plan, case: Case, out_dir, *, list_years: int = buylist.DEFAULT_YEARS, by: str | None = None,
                     group_by: str | None = None, run_id: str | None = None, warnings=(),
                     progress: bool = True) -> list[Path]:
    """Every file of ``tenure plan`` into ``out_dir`` (the staging folder of its transaction): plan.json,
    units.csv, years.csv and buy-list.csv (grouped by ``group_by``), then report.html and plan.xlsx
    (summaries by ``by``); one progress bar over the six files, drawn on a terminal after a second."""
    with bar(6, "writing", enabled=progress) as b:
        def done(name: str) -> None:
            b.set_postfix_str(f"{name} done")
            b.update()

        paths = tables.write_plan(plan, out_dir, run_id=run_id, list_years=list_years, group_by=group_by, done=done)
        return paths + write_all(plan, case, out_dir, list_years=list_years, by=by, run_id=run_id,
                                 warnings=warnings, progress=progress, done=done)


def compare_html(compare: Comparison, case: Case, run_id: str | None = None) -> str:
    """The text of ``report.html`` for a comparison of scenarios (with the output set's run id)."""
    return html.compare_report(compare, case, notes=notes.run_notes_html(run_id))


def write_compare_report(compare: Comparison, case: Case, out_dir, run_id: str | None = None) -> Path:
    """Write the comparison's ``report.html`` into ``out_dir``; returns its path."""
    return files.write_text(Path(out_dir) / "report.html", compare_html(compare, case, run_id))
