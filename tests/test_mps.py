"""The MPS text of a program (tenure.fleet.mps) read back by two independent readers.

References outside the project: HiGHS's MPS reader (``Highs.readModel``) and the CBC binary pulp
ships, each solving the file; the same program passed to HiGHS as arrays gives the answer they
must reproduce.  MPS itself is the open exchange format (IBM MPSX; the HiGHS manual).
"""

from __future__ import annotations

import math
import subprocess

import numpy as np
import pytest
import scipy.sparse as sp

from tenure.fleet.cbc import CbcBackend, cbc_path, has_point, read_solution
from tenure.fleet.highs import _load, new_highs
from tenure.fleet.mps import row_kinds, write_mps
from tenure.fleet.program import CohortProgram, build_program

INF = math.inf


def tiny(integer: bool) -> tuple[CohortProgram, np.ndarray]:
    """Every row kind (E, L, G, ranged, free) and bound kind (fixed, negative lower, free below,
    integer without an upper bound), and a column with no entries at all.

    min  −x0 − 2 x1 + x2 + 0.5 x3 − x5
    s.t. x0 + x1 + x2      = 7      (E)
         x0 − x3          ≤ 4.5    (L)
         x1 + x3          ≥ 1.25   (G)
         2 ≤ x2 + x5      ≤ 9.5    (ranged)
         x0 + x5          free     (N)
         0 ≤ x0 ≤ 3, x1 ≥ 0 (no upper bound), x2 = 1 (fixed), −2 ≤ x3 ≤ 5, x4 free below ≤ 0, 0 ≤ x5 ≤ 100
    """
    a = sp.csc_matrix(np.array([[1, 1, 1, 0, 0, 0],
                                [1, 0, 0, -1, 0, 0],
                                [0, 1, 0, 1, 0, 0],
                                [0, 0, 1, 0, 0, 1],
                                [1, 0, 0, 0, 0, 1]], dtype=float))
    prog = CohortProgram(cost=np.array([-1.0, -2.0, 1.0, 0.5, 0.0, -1.0]),
                         lower=np.array([0.0, 0.0, 1.0, -2.0, -INF, 0.0]),
                         upper=np.array([3.0, INF, 1.0, 5.0, 0.0, 100.0]),
                         row_lower=np.array([7.0, -INF, 1.25, 2.0, -INF]),
                         row_upper=np.array([7.0, 4.5, INF, 9.5, INF]),
                         matrix=a, cap_rows=np.array([-1]), cols={}, starts={}, graphs={})
    integ = np.array([1, 1, 0, 1, 1, 0] if integer else [0] * 6, dtype=np.int32)
    return prog, integ


def highs_direct(prog, integ):
    h = _load(prog, prog.lower, prog.upper, integ)
    h.setOptionValue("mip_rel_gap", 0.0)
    h.run()
    return h.getInfo().objective_function_value, np.asarray(h.getSolution().col_value)


def highs_from_file(path):
    h = new_highs()
    h.readModel(str(path))
    h.setOptionValue("mip_rel_gap", 0.0)
    h.run()
    return h.getInfo().objective_function_value, np.asarray(h.getSolution().col_value)


def test_row_kinds_follow_the_bounds():
    lo = np.array([1.0, -INF, 2.0, 0.0, -INF])
    hi = np.array([1.0, 3.0, INF, 4.0, INF])
    assert row_kinds(lo, hi).tolist() == ["E", "L", "G", "R", "N"]


@pytest.mark.parametrize("integer", [False, True])
def test_highs_reads_the_file_as_the_arrays(tmp_path, integer):
    prog, integ = tiny(integer)
    write_mps(prog, tmp_path / "tiny.mps", integ)
    z_direct, x_direct = highs_direct(prog, integ)
    z_file, x_file = highs_from_file(tmp_path / "tiny.mps")
    assert z_file == pytest.approx(z_direct, abs=1e-9)
    assert np.allclose(x_file, x_direct, atol=1e-9)
    if integer:
        # by hand: x2 = 1 fixed; x0 + x1 = 6 with x0 ≤ 3 → x1 ≥ 3; −x0 − 2x1 least at x0 = 0, x1 = 6;
        # x3 at its lower bound −2 (x1 + x3 = 4 ≥ 1.25), x5 = 8.5 (x2 + x5 ≤ 9.5), x4 ≤ 0 costs nothing
        assert z_direct == pytest.approx(-12.0 + 1.0 - 1.0 - 8.5)
        assert x_direct[1] == pytest.approx(6.0)  # an integer column with no upper bound is not binary


def test_cbc_reads_the_file_and_its_answer_maps_back(tmp_path):
    prog, integ = tiny(True)
    z_direct, _ = highs_direct(prog, integ)
    res = CbcBackend(prog, integ).solve_mip(10, 0.0)
    assert res.status == "optimal"
    assert float(prog.cost @ res.x) == pytest.approx(z_direct, abs=1e-9)
    lp = CbcBackend(prog, integ).solve_lp()
    z_lp, _ = highs_direct(prog, np.zeros(6, dtype=np.int32))
    assert lp.status == "optimal" and float(prog.cost @ lp.x) == pytest.approx(z_lp, abs=1e-9)


def test_demo_program_read_back_by_highs_has_the_same_lp_optimum(tmp_path):
    from pathlib import Path

    from tenure.case import load_case

    case = load_case(Path(__file__).resolve().parents[1] / "cases" / "quillmere-fleet.toml")
    prog = build_program(case)
    lp = np.zeros(prog.n_cols, dtype=np.int32)
    write_mps(prog, tmp_path / "demo.mps", lp)
    z_direct, _ = highs_direct(prog, lp)
    z_file, _ = highs_from_file(tmp_path / "demo.mps")
    assert z_file == pytest.approx(z_direct, rel=1e-12)


def test_cbc_status_lines(tmp_path):
    """CBC's own status lines: an infeasible program has no point, a solved one has."""
    prog, integ = tiny(True)
    bad = CohortProgram(**{**prog.__dict__, "row_lower": prog.row_lower.copy(), "row_upper": prog.row_upper.copy()})
    bad.row_upper[1] = -10.0  # x0 − x3 ≤ −10 with x0 ≥ 0, x3 ≤ 5: impossible
    for p, expect in ((prog, True), (bad, False)):
        write_mps(p, tmp_path / "m.mps", integ)
        subprocess.run([cbc_path(), str(tmp_path / "m.mps"), "-solve", "-printingOptions", "all", "-solution",
                        str(tmp_path / "m.sol")], capture_output=True, check=False)
        head, _, _ = read_solution(str(tmp_path / "m.sol"), p.n_rows, p.n_cols)
        assert has_point(head) is expect, head
    assert CbcBackend(bad, integ).solve_mip(10, 0.0).status == "infeasible"
    assert has_point("Stopped on time - objective value 12.5")
    assert not has_point("Stopped on time (no integer solution - continuous used) - objective value 3")
