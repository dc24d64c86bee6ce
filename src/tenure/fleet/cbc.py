"""The CBC back end: the program written as MPS (:mod:`tenure.fleet.mps`) and handed to the CBC
binary that pulp ships, its answer read back by row and column index.

Each solve is one CBC process reading one file, so nothing is kept between LP re-solves but the
MPS text before the bounds (written once per back end; a bound change rewrites only ``BOUNDS``).
pulp is used for one thing only: finding its bundled CBC executable.
"""

from __future__ import annotations

import os
import subprocess
import tempfile
import warnings

import numpy as np

from .backend import Backend, LPResult, MIPResult
from .mps import mps_body, mps_bounds
from .program import CohortProgram


def cbc_path() -> str:
    """The CBC executable pulp ships (pulp 3 marks its class deprecated; the binary is what we use)."""
    import pulp

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        path = pulp.PULP_CBC_CMD(msg=False).path
    if not path or not os.access(path, os.X_OK):
        raise RuntimeError(f"the CBC executable was not found (pulp's bundled path: {path!r})")
    return path


def _read_bound(log: str) -> float | None:
    for ln in log.splitlines():
        if ln.startswith("Lower bound:"):
            try:
                return float(ln.split(":", 1)[1])
            except ValueError:
                return None
    return None


def read_solution(path: str, n_rows: int, n_cols: int) -> tuple[str, np.ndarray, np.ndarray]:
    """(first line, column values, row duals) of a CBC solution file (``-printingOptions all``):
    after the status line one line per row (``R<i>``) then per column (``C<j>``): index, name,
    value, dual or reduced cost; lines of infeasible entries start with ``**``."""
    x, duals = np.zeros(n_cols), np.zeros(n_rows)
    with open(path, encoding="ascii", errors="replace") as fh:
        head = fh.readline().strip()
        for line in fh:
            f = line.split()
            if f and f[0] == "**":
                f = f[1:]
            if len(f) < 4:
                continue
            name, value, dual = f[1], float(f[2]), float(f[3])
            if name[0] == "C":
                x[int(name[1:])] = value
            elif name[0] == "R":
                duals[int(name[1:])] = dual
    return head, x, duals


def has_point(head: str) -> bool:
    """Whether CBC's status line reports an integral point: "Optimal - objective value …" or
    "Stopped on time - objective value …" (stopped with a point; without one CBC writes
    "Stopped on time (no integer solution - continuous used) …")."""
    words = head.split()
    return bool(words) and (words[0] == "Optimal" or (words[0] == "Stopped" and len(words) >= 5
                                                       and words[4] == "objective"))


class CbcBackend(Backend):
    label = "CBC"

    def __init__(self, prog: CohortProgram, integrality=None):
        super().__init__(prog, integrality)
        self._lower, self._upper = prog.lower.copy(), prog.upper.copy()
        self._body: dict[bool, str] = {}

    def _run(self, integer: bool, lower, upper, args: list[str], start_lines: list[str] | None = None):
        """Write the model (and a start), run CBC with ``args``; (status line, x, duals, log)."""
        if integer not in self._body:
            integ = self.integrality if integer else np.zeros(self.prog.n_cols, dtype=np.int32)
            self._body[integer] = mps_body(self.prog, integ)
        with tempfile.TemporaryDirectory(prefix="tenure-cbc-") as tmp:
            model, sol, log = (os.path.join(tmp, f) for f in ("model.mps", "model.sol", "cbc.log"))
            with open(model, "w", encoding="ascii") as fh:
                fh.write(self._body[integer])
                fh.write(mps_bounds(lower, upper))
            cmd = [cbc_path(), model]
            if start_lines is not None:
                mst = os.path.join(tmp, "start.mst")
                with open(mst, "w", encoding="ascii") as fh:
                    fh.write("Stopped on time - objective value 0\n" + "\n".join(start_lines) + "\n")
                cmd += ["-mips", mst]
            cmd += args + ["-printingOptions", "all", "-solution", sol]
            with open(log, "w", encoding="utf-8") as fh:
                subprocess.run(cmd, stdout=fh, stderr=subprocess.STDOUT, stdin=subprocess.DEVNULL, check=False)
            with open(log, encoding="utf-8", errors="replace") as fh:
                text = fh.read()
            if not os.path.exists(sol):
                return "", None, None, text
            head, x, duals = read_solution(sol, self.prog.n_rows, self.prog.n_cols)
        return head, x, duals, text

    def solve_lp(self) -> LPResult:
        head, x, duals, _ = self._run(False, self._lower, self._upper, ["-initialSolve"])
        word = head.split()[0].lower() if head else "error"
        if word != "optimal":
            return LPResult("infeasible" if word == "infeasible" else word)
        return LPResult("optimal", x, duals)

    def set_bounds(self, cols, lower, upper) -> None:
        cols = np.asarray(cols, dtype=np.int64)
        self._lower[cols] = lower
        self._upper[cols] = upper

    def solve_mip(self, time_limit, gap, start=None, on_incumbent=None, partial_start=None,
                  exchange=None) -> MIPResult:
        """The proof is read from CBC's log: "optimal" only when CBC proved the point optimal (its
        "Result - Optimal solution found" without "tolerance"); otherwise the bound is the "Lower
        bound" CBC logs (None when it logs none).  CBC offers no incumbent callback here, and runs
        as a process of its own, so ``exchange`` is not used: a search beside it runs on alone."""
        lines = None
        if start is not None:
            lines = [f"{j} C{j} {v:.17g} 0" for j, v in enumerate(np.asarray(start, dtype=float).tolist())]
        elif partial_start is not None and len(partial_start[0]):
            idx, val = (np.asarray(a).tolist() for a in partial_start)
            lines = [f"{j} C{j} {float(v):.17g} 0" for j, v in zip(idx, val)]
        args = ["-sec", str(max(1, int(time_limit))), "-ratio", f"{gap:.17g}", "-timeMode", "elapsed", "-solve"]
        head, x, _, log = self._run(True, self.prog.lower, self.prog.upper, args, lines)
        if not has_point(head):
            words = head.split()
            proven = bool(words) and (words[0] == "Infeasible" or head.startswith("Integer infeasible"))
            return MIPResult("infeasible" if proven else "none")
        result = next((ln for ln in log.splitlines() if ln.startswith("Result - ")), "")
        if head.startswith("Optimal") and "Optimal solution found" in result and "tolerance" not in result:
            return MIPResult("optimal", x, float(self.prog.cost @ np.where(self.integrality == 1, np.round(x), x)))
        return MIPResult("feasible", x, _read_bound(log))
