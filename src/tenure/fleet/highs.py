"""The HiGHS back end (highspy): the program's arrays passed as they are."""

from __future__ import annotations

import math
import os
import sys
import time

import numpy as np

from .backend import Backend, LPResult, MIPResult, OnIncumbent
from .program import CohortProgram

INF = float("inf")


def new_highs():
    """A silent HiGHS instance (its banner goes to the C-level stdout on first use, so mute fd 1 then)."""
    import highspy

    sys.stdout.flush()
    saved = os.dup(1)
    try:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, 1)
        os.close(devnull)
        h = highspy.Highs()
        h.setOptionValue("output_flag", False)
    finally:
        os.dup2(saved, 1)
        os.close(saved)
    return h


def _load(prog: CohortProgram, lower, upper, integrality, threads: int = 2):
    h = new_highs()
    h.setOptionValue("threads", int(threads))
    h.passModel(prog.n_cols, prog.n_rows, prog.matrix.nnz, 1, 1, 0.0, prog.cost, lower, upper, prog.row_lower,
                prog.row_upper, prog.a_start, prog.a_index, prog.a_value, integrality)
    return h


def watch_improvements(h, t0: float, history: list, floor_bound: float = -INF) -> None:
    """Record (seconds, gap) at each improving MIP solution, the gap taken against the better of
    the solver's dual bound and ``floor_bound`` (the LP bound)."""

    def on_improve(obj, bnd):
        bnd = max(bnd, floor_bound)
        history.append([round(time.perf_counter() - t0, 3), max(0.0, (obj - bnd) / max(abs(obj), 1e-9))])

    _subscribe(h, on_improve)


def _subscribe(h, on_incumbent: OnIncumbent) -> None:
    def cb(e):
        try:
            on_incumbent(float(e.data_out.objective_function_value), float(e.data_out.mip_dual_bound))
        except Exception:  # a callback must never break the solve
            pass

    try:
        h.cbMipImprovingSolution.subscribe(cb)
    except AttributeError:  # older highspy without the callback API
        pass


def _trade(h, exchange, gap: float) -> None:
    """HiGHS's improving points go to ``exchange.found``; ``exchange.offered()`` comes in through the
    user-solution callback, which HiGHS calls many times a second during the solve (measured on the
    demo: 56 calls in its first 7 s) and checks for feasibility before taking.

    The solve is interrupted as soon as the exchange's best plan (``exchange.best``, the cheaper of
    the two sides) is within ``gap`` of HiGHS's dual bound: HiGHS stops on its own incumbent only, and
    a plan of the search reaches that incumbent only at HiGHS's next user-solution call (on the
    1,000-unit benchmark fleet the gap was proven 5 s before HiGHS ended at its time limit)."""

    def interrupt(e):
        try:
            cost = float(exchange.best[0])
            bound = float(e.data_out.mip_dual_bound)
            if math.isfinite(cost) and math.isfinite(bound) and cost - bound <= gap * max(abs(cost), 1e-9):
                e.data_in.user_interrupt = True
        except Exception:  # a callback must never break the solve
            pass

    def improving(e):
        try:
            exchange.found(float(e.data_out.objective_function_value), np.asarray(e.data_out.mip_solution))
        except Exception:  # a callback must never break the solve
            pass

    def user(e):
        try:
            x = exchange.offered()
            if x is not None:
                e.data_in.setSolution(np.asarray(x, dtype=float))
        except Exception:
            pass

    try:
        h.cbMipImprovingSolution.subscribe(improving)
        h.cbMipUserSolution.subscribe(user)
        h.cbMipInterrupt.subscribe(interrupt)
    except AttributeError:  # older highspy without the callback API
        pass


class HighsBackend(Backend):
    label = "HiGHS"
    trades_plans = True

    def __init__(self, prog: CohortProgram, integrality=None):
        super().__init__(prog, integrality)
        self._lp = None

    def _status(self, h) -> str:
        return h.modelStatusToString(h.getModelStatus()).lower()

    def solve_lp(self) -> LPResult:
        if self._lp is None:
            self._lp = _load(self.prog, self.prog.lower, self.prog.upper,
                             np.zeros(self.prog.n_cols, dtype=np.int32), self.threads)
        h = self._lp
        h.run()
        st = self._status(h)
        if st != "optimal":
            return LPResult(st)
        sol = h.getSolution()
        return LPResult(st, np.asarray(sol.col_value), np.asarray(sol.row_dual))

    def set_bounds(self, cols, lower, upper) -> None:
        if self._lp is None:
            self.solve_lp()
        self._lp.changeColsBounds(len(cols), np.asarray(cols, dtype=np.int32), np.asarray(lower, dtype=float),
                                  np.asarray(upper, dtype=float))

    def solve_mip(self, time_limit, gap, start=None, on_incumbent=None, partial_start=None,
                  exchange=None) -> MIPResult:
        h = _load(self.prog, self.prog.lower, self.prog.upper, self.integrality, self.threads)
        h.setOptionValue("time_limit", float(max(time_limit, 1.0)))
        h.setOptionValue("mip_rel_gap", float(gap))
        if on_incumbent is not None:
            _subscribe(h, on_incumbent)
        if exchange is not None:
            _trade(h, exchange, float(gap))
        if start is not None:
            sol = h.getSolution()
            sol.col_value = list(start)
            sol.value_valid = True
            h.setSolution(sol)
        elif partial_start is not None and len(partial_start[0]):
            # HiGHS completes a partial assignment by a sub-MIP over the columns left free
            idx, val = partial_start
            h.setSolution(len(idx), np.asarray(idx, dtype=np.int32), np.asarray(val, dtype=float))
        h.run()
        info = h.getInfo()
        if info.primal_solution_status != 2:
            return MIPResult("infeasible" if self._status(h) == "infeasible" else "none")
        x = np.asarray(h.getSolution().col_value)
        st = "optimal" if self._status(h) == "optimal" else "feasible"
        return MIPResult(st, x, float(info.mip_dual_bound))
