"""The Python API for notebooks and scripts: cases in, typed results and DataFrames out.

Everything here is a thin wrapper over the modules that do the work
(``case``/``frames``, ``solve``, ``life``, ``chain``, ``scenarios``); the
command line is a client of the same functions.  Examples, executed by the
test suite, are in docs/api.md.  Errors name the parameter, the value and what
is allowed (``ValueError``), or every problem of a case (``CaseError``); they
never mention command-line options.
"""

from __future__ import annotations

from typing import Any, Sequence

from . import frames
from .case import CaseError, load_case
from .life import DEFAULT_TOLERANCE, LifeTable, life_table
from .model import Case
from .plan import Plan
from .solve import solve as _solve  # before tenure/__init__ binds the name ``solve`` to the function below
from .textutil import did_you_mean

#: the command line's defaults (tenure plan, tenure compare / sweep), so a notebook gets the same plans:
#: seconds of a capped solve, seconds per scenario's solve, and the stopping gap (fleet.driver.DEFAULT_GAP)
PLAN_SECONDS = 30.0
SCENARIO_SECONDS = 120.0
GAP = 1e-4

__all__ = ["load_case", "Case", "CaseError", "solve", "economic_life", "life_tables", "policy", "policy_frame",
           "compare", "sweep"]

SOLVERS = ("highs", "cbc")


# ---------------------------------------------------------------------------
# Case <-> frames, attached to model.Case here so that model.py imports nothing above it
# ---------------------------------------------------------------------------
def _from_frames(cls, study, types, inventory, budget=None, limits=None, scenarios=None, uncertain=None, *,
                 source: str = frames.FRAMES_SOURCE) -> Case:
    return frames.case_from_frames(study, types, inventory, budget, limits, scenarios, uncertain, source=source)


_from_frames.__doc__ = frames.case_from_frames.__doc__
Case.from_frames = classmethod(_from_frames)
Case.types_frame = frames.types_frame
Case.inventory_frame = frames.inventory_frame
Case.frames = frames.case_frames


# ---------------------------------------------------------------------------
# checks of API arguments
# ---------------------------------------------------------------------------
def _one_of(name: str, value: str, allowed: Sequence[str], where: str) -> None:
    if value not in allowed:
        raise ValueError(f"{name} = {value!r}: not in {where}{did_you_mean(value, allowed)} "
                         f"(allowed: {', '.join(allowed)})")


def _options(solver: str, time_limit: float, gap: float) -> dict:
    """Solver options for capped cases, checked."""
    _one_of("solver", solver, SOLVERS, "the solvers")
    if not (time_limit > 0):
        raise ValueError(f"time_limit = {time_limit!r}: must be a number of seconds > 0")
    if not (0 <= gap < 1):
        raise ValueError(f"gap = {gap!r}: must be a fraction in [0, 1), e.g. 0.005")
    return {"solver": solver, "time_limit": float(time_limit), "gap": float(gap)}


# ---------------------------------------------------------------------------
# solving
# ---------------------------------------------------------------------------
def solve(case: Case, *, solver: str = "highs", time_limit: float = PLAN_SECONDS, gap: float = GAP,
          progress: bool = False) -> Plan:
    """The least-present-cost plan of the whole fleet (docs/conventions.md, "Present cost").

    Uses the backward recursion when the case has no cap and no limit, the
    fleet integer program otherwise.

    Parameters
    ----------
    case : Case
    solver : str
        Integer-program back end for capped cases: "highs" or "cbc".
    time_limit : float
        Seconds allowed for a capped solve.
    gap : float
        Relative optimality gap at which a capped solve stops.
    progress : bool
        Show progress on a terminal.
    """
    opts = _options(solver, time_limit, gap)
    return _solve(case, progress=progress, **opts)


def life_tables(case: Case, type_id: str | None = None, year: int | None = None,
                tolerance: float = DEFAULT_TOLERANCE) -> list[LifeTable]:
    """EAC by holding period of one type, or of every type buyable in ``year`` (all types if none is).

    ``year`` is the purchase year (default: the study's start year);
    ``tolerance`` the relative width of the near-optimal band (0.02 = 2 %).
    """
    ids = [t.id for t in case.types]
    if type_id is not None:
        _one_of("type_id", type_id, ids, f"the asset types of {case.source}")
    if not (0 <= tolerance < 1):
        raise ValueError(f"tolerance = {tolerance!r}: must be a fraction in [0, 1), e.g. 0.02")
    year = case.study.start_year if year is None else year
    if not (1900 <= year <= 2300):
        raise ValueError(f"year = {year!r}: must be a calendar year (1900 … 2300)")
    s = case.study
    chosen = [case.type(type_id)] if type_id else [t for t in case.types if t.buyable(year)] or list(case.types)
    # a taxed case gives after-tax tables (docs/conventions.md, "Income tax")
    return [life_table(t, s.discount_rate, s.start_year, year, tolerance, tax_rate=s.tax_rate,
                       carbon_price=s.carbon_price) for t in chosen]


def economic_life(case: Case, type_id: str, year: int | None = None, tolerance: float = DEFAULT_TOLERANCE):
    """EAC of capital, O&M and in total, and the marginal cost, by holding period, as a DataFrame.

    See :meth:`tenure.life.LifeTable.to_frame` for the columns; the economic
    life (least EAC, shortest on ties) is flagged and in ``attrs``.
    Formulas: docs/conventions.md, "Economic life".
    """
    return life_tables(case, type_id, year, tolerance)[0].to_frame()


def policy(case: Case, class_: str):
    """The optimal keep/replace policy of one class by year and age, ignoring caps (a ``ChainSolution``)."""
    from . import chain

    _one_of("class_", class_, case.classes, f"the classes of {case.source}")
    return chain.backward(chain.build_class_graph(case, class_))


def policy_frame(case: Case, class_: str, type_id: str | None = None):
    """The policy of :func:`policy` as a DataFrame: one row per year, held type and age.

    Columns ``year``, ``held_type``, ``age`` [years, at the start of the year]
    and ``action`` ("keep", or the type to buy in place of the unit).
    """
    import pandas as pd

    from .chain import KEEP

    sol = policy(case, class_)
    g = sol.graph
    ids = list(g.types)
    if type_id is not None:
        _one_of("type_id", type_id, ids, f"the types of class {class_!r}")
    rows = []
    for tid in [type_id] if type_id else ids:
        t = g.type_index(tid)
        for k in range(g.horizon):
            for a in range(int(g.max_age[t]) + 1):
                act = int(sol.policy[k, t, a])
                rows.append((g.start_year + k, tid, a, "keep" if act == KEEP else ids[act]))
    return pd.DataFrame(rows, columns=["year", "held_type", "age", "action"])


# ---------------------------------------------------------------------------
# scenarios and sweeps (results as the scenario layer returns them)
# ---------------------------------------------------------------------------
def compare(case: Case, scenarios: Sequence[Any] | None = None, *, solver: str = "highs", time_limit: float = SCENARIO_SECONDS,
            gap: float = GAP, workers: int = 1, cluster: str | None = None, progress: bool = False):
    """Solve the base case and each scenario; regret and the decisions safe to commit now.

    ``scenarios``: scenario ids of the case, ``Scenario`` objects, or None for
    every scenario of the case.  Returns the comparison of
    :func:`tenure.scenarios.compare`.
    """
    from . import scenarios as sc
    from .model import Scenario

    options, workers = _options(solver, time_limit, gap), _workers(workers)
    objs = [s for s in scenarios or [] if isinstance(s, Scenario)]
    ids = [s for s in scenarios or [] if not isinstance(s, Scenario)]
    if ids:
        chosen = sc.select_scenarios(case, ids, objs) + [s for s in objs if s.id not in ids]
    else:
        chosen = objs or list(case.scenarios)
    if not chosen:
        raise ValueError(f"scenarios: nothing to compare ({case.source} has no [[scenario]] blocks)")
    return sc.compare(case, chosen, options=options, workers=workers, cluster=cluster, progress=progress)


def sweep(case: Case, *, vary: Sequence[str] = (), samples: int | None = None, seed: int = 0, uncertain=None,
          solver: str = "highs", time_limit: float = SCENARIO_SECONDS, gap: float = GAP, workers: int = 1,
          cluster: str | None = None, progress: bool = False):
    """Present cost over a grid (``vary``: ``"PATH=LOW:HIGH:STEPS"`` strings or ``Axis`` objects) or ``samples`` Monte Carlo draws.

    Exactly one of ``vary`` and ``samples`` is given; draws use ``uncertain``
    (default: the case's ``[[uncertain]]`` inputs) with ``seed``.  Returns
    the sweep of :func:`tenure.scenarios.sweep`.
    """
    from . import scenarios as sc

    options, workers = _options(solver, time_limit, gap), _workers(workers)
    if bool(vary) == (samples is not None):
        raise ValueError("sweep: give either vary (a grid) or samples (Monte Carlo draws), exactly one of them")
    axes = [v if isinstance(v, sc.Axis) else sc.axis_from_text(v) for v in vary]
    return sc.sweep(case, axes=axes, samples=samples, seed=seed,
                    uncertain=list(case.uncertain) if uncertain is None else list(uncertain),
                    options=options, workers=workers, cluster=cluster, progress=progress)


def _workers(workers: int) -> int:
    if not (isinstance(workers, int) and workers >= 1):
        raise ValueError(f"workers = {workers!r}: must be a whole number ≥ 1")
    return workers
