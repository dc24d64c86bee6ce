"""The operations every solver back end offers the fleet layer, and the registry of back ends.

A back end is loaded with one :class:`~tenure.fleet.program.CohortProgram` and then offers:
an LP solve with row duals (:meth:`Backend.solve_lp`), bound changes on columns
(:meth:`Backend.set_bounds`, which the next LP solve sees), and an integer solve from a start
with a time limit and a relative gap (:meth:`Backend.solve_mip`, of the program with its
original bounds).  Results are plain arrays with a status word, so the rounding heuristic, the
shortfall program and the driver never know which solver runs.  Only the back-end modules and
the CLI's option parsing know solvers by name; :func:`get_backend` maps a name to its class.
"""

from __future__ import annotations

from abc import ABC, abstractmethod
from dataclasses import dataclass
from typing import Callable, ClassVar

import numpy as np

from .program import CohortProgram


@dataclass(frozen=True)
class LPResult:
    """``status`` "optimal", "infeasible" or the solver's other word; ``x`` and ``row_duals``
    (present-cost change per unit of each row's right-hand side) only when optimal."""

    status: str
    x: np.ndarray | None = None
    row_duals: np.ndarray | None = None


@dataclass(frozen=True)
class MIPResult:
    """``status``: "optimal" (proven), "feasible" (a point, not proven optimal), "infeasible"
    (proven) or "none" (no point found); ``x`` the integral point [units]; ``bound`` a proven lower
    bound on the optimum [money, time 0] or None."""

    status: str
    x: np.ndarray | None = None
    bound: float | None = None


#: called at each improving MIP point with (objective, the solver's dual bound) [money, time 0]
OnIncumbent = Callable[[float, float], None]


class Backend(ABC):
    """One solver loaded with one program (see the module docstring)."""

    #: how reports name the solver, e.g. "HiGHS"
    label: ClassVar[str] = ""
    #: True when :meth:`solve_mip` uses its ``exchange`` (calls it during the solve)
    trades_plans: ClassVar[bool] = False
    #: the threads a solve may use; the search beside the integer program sets 1 in its own process,
    #: so that it and the integer program's two threads share two cores rather than three
    threads: ClassVar[int] = 2

    def __init__(self, prog: CohortProgram, integrality: np.ndarray | None = None):
        """``integrality`` (n_cols,) 1 for integer columns in :meth:`solve_mip` (default: all)."""
        self.prog = prog
        self.integrality = (np.ones(prog.n_cols, dtype=np.int32) if integrality is None
                            else np.asarray(integrality, dtype=np.int32))

    @abstractmethod
    def solve_lp(self) -> LPResult:
        """Solve the relaxation with the current column bounds."""

    @abstractmethod
    def set_bounds(self, cols: np.ndarray, lower: np.ndarray, upper: np.ndarray) -> None:
        """Change the bounds of columns ``cols`` for later LP solves."""

    @abstractmethod
    def solve_mip(self, time_limit: float, gap: float, start: np.ndarray | None = None,
                  on_incumbent: OnIncumbent | None = None, partial_start=None, exchange=None) -> MIPResult:
        """Integer solve of the program (original bounds) for at most ``time_limit`` [s], stopping at
        relative gap ``gap``, from the integral point ``start`` when given; else from
        ``partial_start`` ``(columns, values)`` when given, values for some columns only, which the
        solver completes if it can (a hint: it changes no bound and no proof).

        ``exchange`` (optional) trades plans with a search running beside the solve
        (:class:`~tenure.fleet.beside.SearchBeside`): a back end that can reports each improving
        point to ``exchange.found(cost, x)`` and takes ``exchange.offered()`` (a point or None) as a
        new incumbent during the solve; one that cannot ignores it."""


def confirming_backends(name: str) -> tuple[str, ...]:
    """The back ends that must agree before a verdict of ``name`` that no plan exists reaches the
    user: every registered back end other than ``name`` that is the default (the default confirms
    the others' proofs; its own proofs stand)."""
    return () if name == DEFAULT_BACKEND else (DEFAULT_BACKEND,)


_REGISTRY: dict[str, str] = {"highs": "tenure.fleet.highs:HighsBackend", "cbc": "tenure.fleet.cbc:CbcBackend"}
BACKENDS = tuple(_REGISTRY)
#: the back end used when none is named
DEFAULT_BACKEND = BACKENDS[0]


def get_backend(name: str) -> type[Backend]:
    """The back-end class registered as ``name`` (imported on first use)."""
    import importlib

    if name not in _REGISTRY:
        raise ValueError(f"unknown solver back end {name!r}; the back ends are {', '.join(BACKENDS)}")
    module, cls = _REGISTRY[name].split(":")
    return getattr(importlib.import_module(module), cls)
