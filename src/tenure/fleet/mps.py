"""The cohort program as MPS text, written from its arrays.

MPS is the open, column-oriented exchange format of linear and integer programs (read by HiGHS,
CBC, GLPK and most solvers).  Rows are named ``R<i>`` and columns ``C<j>`` by their index, so a
solver's answer maps back to the arrays without a name table.  Fields are laid out in the
fixed MPS columns (names from column 5 and 15, up to 8 characters: ten million columns), and
values are printed with 17 significant digits so every double is read back exactly:

- ``ROWS``: ``N OBJ``, then one ``E`` (lower = upper), ``L`` (upper only), ``G`` (lower only) or
  ``L`` with a ``RANGES`` entry (both finite) per row; a row free on both sides is ``N``.
- ``COLUMNS``: each column's objective and matrix entries in column order, integer columns
  between ``'MARKER' 'INTORG'`` / ``'INTEND'`` lines.
- ``RHS``, ``RANGES`` and ``BOUNDS``: every column's bounds are written explicitly (``FX``,
  ``LO``/``UP``, ``MI``, ``PL``), because readers differ on the default upper bound of an
  integer column (some take it as binary).

The sections before ``BOUNDS`` do not change when only bounds change, so :func:`mps_body` and
:func:`mps_bounds` are separate: a back end that re-solves with new bounds writes the body once.

Reference: the MPS format as documented with IBM's MPSX and in the lp_solve and HiGHS manuals
(fixed columns, as the older readers require).
"""

from __future__ import annotations

import numpy as np

from .program import CohortProgram

INF = float("inf")


def _num(values) -> list[str]:
    """Each value with 17 significant digits (exact round trip of a double)."""
    return [f"{v:.17g}" for v in np.asarray(values, dtype=float).tolist()]


def row_kinds(lower: np.ndarray, upper: np.ndarray) -> np.ndarray:
    """(m,) one of "E", "L", "G", "R" (ranged: both sides finite and different) or "N" (free)."""
    lo_f, hi_f = np.isfinite(lower), np.isfinite(upper)
    kinds = np.full(len(lower), "N", dtype="<U1")
    kinds[hi_f & ~lo_f] = "L"
    kinds[lo_f & ~hi_f] = "G"
    both = lo_f & hi_f
    kinds[both] = np.where(lower[both] == upper[both], "E", "R")
    return kinds


def mps_body(prog: CohortProgram, integrality: np.ndarray) -> str:
    """``NAME`` to ``RANGES`` of the program (everything but the column bounds)."""
    kinds = row_kinds(prog.row_lower, prog.row_upper)
    n = prog.n_cols
    out = ["NAME          cohort_flow", "ROWS", " N  OBJ"]
    out += [f" {'L' if k == 'R' else k}  R{i}" for i, k in enumerate(kinds.tolist())]
    out.append("COLUMNS")
    csc = prog.matrix.tocsc()
    csc.sort_indices()
    counts = np.diff(csc.indptr)
    # an objective entry for every column with a cost, and for empty columns (so each is declared)
    obj = np.flatnonzero((prog.cost != 0.0) | (counts == 0))
    cols = np.concatenate([obj, np.repeat(np.arange(n), counts)])
    rows = np.concatenate([np.full(len(obj), -1), csc.indices])
    vals = np.concatenate([prog.cost[obj], csc.data])
    order = np.lexsort((rows, cols))  # by column; the objective (row −1) before the matrix rows
    cols, rows, vals = cols[order], rows[order], vals[order]
    lines = [f"    {'C' + str(j):<8}  {'OBJ' if r < 0 else 'R' + str(r):<8}  {v}" for j, r, v in zip(cols.tolist(), rows.tolist(), _num(vals))]
    # runs of columns with the same integrality, integer runs between markers
    integ = np.asarray(integrality, dtype=bool)
    cuts = np.concatenate([[0], np.flatnonzero(np.diff(integ.astype(np.int8))) + 1, [n]])
    for marker, (j0, j1) in enumerate(zip(cuts[:-1].tolist(), cuts[1:].tolist())):
        a, b = np.searchsorted(cols, [j0, j1])
        if integ[j0]:
            out.append(f"    {'M' + str(2 * marker):<8}  'MARKER'                 'INTORG'")
        out.extend(lines[a:b])
        if integ[j0]:
            out.append(f"    {'M' + str(2 * marker + 1):<8}  'MARKER'                 'INTEND'")
    out.append("RHS")
    rhs = np.where(kinds == "G", prog.row_lower, np.where(kinds == "N", 0.0, prog.row_upper))
    nz = np.flatnonzero((rhs != 0.0) & (kinds != "N"))
    out += [f"    RHS       {'R' + str(i):<8}  {v}" for i, v in zip(nz.tolist(), _num(rhs[nz]))]
    ranged = np.flatnonzero(kinds == "R")
    if len(ranged):
        out.append("RANGES")
        out += [f"    RNG       {'R' + str(i):<8}  {v}" for i, v in zip(ranged.tolist(),
                                                 _num(prog.row_upper[ranged] - prog.row_lower[ranged]))]
    return "\n".join(out) + "\n"


def mps_bounds(lower: np.ndarray, upper: np.ndarray) -> str:
    """``BOUNDS`` (every column explicitly) and ``ENDATA``."""
    out = ["BOUNDS"]
    lo_s, hi_s = _num(lower), _num(upper)
    for j, (lo, hi) in enumerate(zip(np.asarray(lower, dtype=float).tolist(), np.asarray(upper, dtype=float).tolist())):
        if lo == hi:
            out.append(f" FX BND       {'C' + str(j):<8}  {lo_s[j]}")
            continue
        if lo == -INF:
            out.append(f" MI BND       {'C' + str(j):<8}")
        elif lo != 0.0:
            out.append(f" LO BND       {'C' + str(j):<8}  {lo_s[j]}")
        out.append(f" PL BND       {'C' + str(j):<8}" if hi == INF else f" UP BND       {'C' + str(j):<8}  {hi_s[j]}")
    out.append("ENDATA")
    return "\n".join(out) + "\n"


def write_mps(prog: CohortProgram, path, integrality: np.ndarray | None = None, lower=None, upper=None) -> None:
    """Write the program (with ``lower``/``upper`` in place of its column bounds when given) to ``path``."""
    integ = np.ones(prog.n_cols, dtype=np.int32) if integrality is None else integrality
    with open(path, "w", encoding="ascii") as fh:
        fh.write(mps_body(prog, integ))
        fh.write(mps_bounds(prog.lower if lower is None else lower, prog.upper if upper is None else upper))
