"""``tenure check``: everything any command will use, checked before any command uses it.

Besides the case itself (``tenure.case``), every ``[[scenario]]`` is applied and the overridden case
validated exactly as ``compare`` will (``scenarios.case_with``), and every ``[[uncertain]]`` input is set
at its low and high ends (and its mode or mean) exactly as ``sweep`` will.  All problems are reported
together in one :class:`~tenure.case.CaseError`.
"""

from __future__ import annotations

from .case import CaseError, Problem
from .model import Case


def variant_problems(case: Case) -> list[Problem]:
    """Problems of the scenarios and uncertain inputs of a valid case (empty when every one can be solved)."""
    from . import scenarios as sc

    problems: list[Problem] = []

    def probe(overrides: dict, where: str) -> None:
        try:
            sc.case_with(case, overrides, where=where)
        except CaseError as exc:
            problems.extend(p for p in exc.problems if p not in problems)

    for s in case.scenarios:
        probe(s.set, f"scenario {s.id}")
    for j, u in enumerate(case.uncertain, start=1):
        for name in ("low", "high", "mode", "mean"):
            x = getattr(u, name)
            if x is not None:
                probe({u.path: sc.coerce(u.path, x)}, f"uncertain[{j}] {name}")
    return problems


def check_everything(case: Case) -> None:
    """Raise :class:`CaseError` with every problem of the case's scenarios and uncertain inputs."""
    problems = variant_problems(case)
    if problems:
        raise CaseError(problems)
