"""Human-facing documents of a plan or a comparison: ``report.html`` and ``plan.xlsx``.

:func:`write_all` is what ``tenure plan`` calls after the machine-readable
files (``report.tables``); :func:`write_compare_report` renders a comparison
of scenarios.  Each document is rendered whole in memory and then written
atomically (``report.files``), so a failed run leaves no half-written file.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from ..life import life_table
from ..model import Case
from . import charts, files, html, notes, xlsx


def life_tables(case: Case) -> list:
    """EAC tables of every type buyable in the study, each bought in its first buyable planning year."""
    s = case.study
    return [life_table(t, s.discount_rate, s.start_year, year) for t, year in charts.buyable_types(case)]


def policies(case: Case) -> dict:
    """Uncapped policy (``chain.backward``) of every class that holds units."""
    from .. import chain

    out = {}
    for cls in case.classes:
        if case.units_of(cls):
            out[cls] = chain.backward(chain.build_class_graph(case, cls))
    return out


def plan_html(plan, case: Case, run_id: str | None = None, warnings=()) -> str:
    """The text of ``report.html`` for a plan (with the output set's run id and the case's warnings)."""
    with np.errstate(all="ignore"):
        return html.plan_report(plan, case, life_tables(case), notes=notes.run_notes_html(run_id, warnings))


def plan_xlsx(plan, case: Case, run_id: str | None = None, warnings=()) -> bytes:
    """The bytes of ``plan.xlsx`` for a plan."""
    return xlsx.workbook_bytes(plan, case, policies(case), run_id=run_id, warnings=warnings)


def write_all(plan, case: Case, out_dir, run_id: str | None = None, warnings=()) -> list[Path]:
    """Write ``report.html`` and ``plan.xlsx`` into ``out_dir``; returns the paths.

    Both documents are rendered before either is written.  ``run_id`` names the output set
    (``report.transaction``); ``warnings`` are the case's plausibility warnings, listed in both.
    """
    out = Path(out_dir)
    page = plan_html(plan, case, run_id, warnings)
    book = plan_xlsx(plan, case, run_id, warnings)
    return [files.write_text(out / "report.html", page), files.write_bytes(out / "plan.xlsx", book)]


def compare_html(compare: dict, case: Case) -> str:
    """The text of ``report.html`` for a comparison of scenarios."""
    return html.compare_report(compare, case, notes=notes.run_notes_html(compare.get("run_id")))


def write_compare_report(compare: dict, case: Case, out_dir) -> Path:
    """Write the comparison's ``report.html`` into ``out_dir``; returns its path.

    ``compare`` has ``scenarios`` (each with id, note, status, present_cost,
    difference, capital_by_year, buys_by_type, first_year_actions), ``regret``
    (matrix, ids, least_max_regret) and ``safe_now``; missing keys are shown
    as "—" or left out.
    """
    return files.write_text(Path(out_dir) / "report.html", compare_html(compare, case))
