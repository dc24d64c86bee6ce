"""The CBC back end, through pulp: a pulp model built from the program's arrays."""

from __future__ import annotations

import math
import os
import tempfile

import numpy as np

from .backend import Backend, LPResult, MIPResult
from .program import CohortProgram


def _bound(v: float):
    return float(v) if math.isfinite(v) else None


def _problem(prog: CohortProgram, integrality: np.ndarray | None):
    """(problem, variables, constraints in row order); integer columns where ``integrality`` is 1."""
    import pulp

    prob = pulp.LpProblem("cohort_flow", pulp.LpMinimize)
    xs = [pulp.LpVariable(f"x{j}", lowBound=_bound(prog.lower[j]), upBound=_bound(prog.upper[j]),
                          cat=pulp.LpInteger if integrality is not None and integrality[j] else pulp.LpContinuous)
          for j in range(prog.n_cols)]
    prob += pulp.LpAffineExpression(zip(xs, prog.cost.tolist()))
    rows = prog.matrix.tocsr()
    cons = []
    for r in range(prog.n_rows):
        lo, hi = rows.indptr[r], rows.indptr[r + 1]
        expr = pulp.LpAffineExpression([(xs[j], float(v)) for j, v in zip(rows.indices[lo:hi], rows.data[lo:hi])])
        lo_b, hi_b = prog.row_lower[r], prog.row_upper[r]
        if lo_b == hi_b:
            c = expr == lo_b
        elif np.isfinite(hi_b):
            c = expr <= hi_b
        else:
            c = expr >= lo_b
        prob += c, f"r{r}"
        cons.append(prob.constraints[f"r{r}"])
    return prob, xs, cons


def _read_bound(log: str) -> float | None:
    for ln in log.splitlines():
        if ln.startswith("Lower bound:"):
            try:
                return float(ln.split(":", 1)[1])
            except ValueError:
                return None
    return None


class CbcBackend(Backend):
    label = "CBC"

    def __init__(self, prog: CohortProgram, integrality=None):
        super().__init__(prog, integrality)
        self._lp = None

    def _lp_model(self):
        if self._lp is None:
            self._lp = _problem(self.prog, None)
        return self._lp

    def solve_lp(self) -> LPResult:
        import pulp

        prob, xs, cons = self._lp_model()
        prob.solve(pulp.PULP_CBC_CMD(msg=False))
        st = pulp.LpStatus[prob.status].lower()
        if st != "optimal":
            return LPResult(st)
        x = np.array([v.value() or 0.0 for v in xs])
        duals = np.array([c.pi if c.pi is not None else 0.0 for c in cons])
        return LPResult(st, x, duals)

    def set_bounds(self, cols, lower, upper) -> None:
        _, xs, _ = self._lp_model()
        for j, lo, hi in zip(np.asarray(cols).tolist(), np.asarray(lower).tolist(), np.asarray(upper).tolist()):
            xs[j].lowBound, xs[j].upBound = _bound(lo), _bound(hi)

    def solve_mip(self, time_limit, gap, start=None, on_incumbent=None, partial_start=None) -> MIPResult:
        """pulp reports "Optimal" also when CBC stopped within its gap tolerance, so the proof is read
        from CBC's log: "optimal" only when CBC proved the point optimal; otherwise the bound is the
        "Lower bound" CBC logs (None when it logs none).  CBC offers no incumbent callback here."""
        import pulp

        prob, xs, _ = _problem(self.prog, self.integrality)
        if start is not None:
            for v, val in zip(xs, start):
                v.setInitialValue(float(val))
        elif partial_start is not None and len(partial_start[0]):
            for j, val in zip(np.asarray(partial_start[0]).tolist(), np.asarray(partial_start[1]).tolist()):
                xs[j].setInitialValue(float(val))
        with tempfile.TemporaryDirectory(prefix="tenure-cbc-") as tmp:
            log_path = os.path.join(tmp, "cbc.log")
            solver = pulp.PULP_CBC_CMD(msg=False, timeLimit=max(1, int(time_limit)), gapRel=gap,
                                       warmStart=start is not None or partial_start is not None, logPath=log_path)
            prob.solve(solver)
            try:
                with open(log_path, encoding="utf-8", errors="replace") as fh:
                    log = fh.read()
            except OSError:
                log = ""
        status = pulp.LpStatus[prob.status]
        if status != "Optimal" and prob.sol_status not in (1, 2):
            return MIPResult("infeasible" if status == "Infeasible" else "none")
        x = np.array([v.value() or 0.0 for v in xs])
        result = next((ln for ln in log.splitlines() if ln.startswith("Result - ")), "")
        if prob.sol_status == 1 and "Optimal solution found" in result and "tolerance" not in result:
            return MIPResult("optimal", x, float(self.prog.cost @ np.where(self.integrality == 1, np.round(x), x)))
        return MIPResult("feasible", x, _read_bound(log))
