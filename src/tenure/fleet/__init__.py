"""Fleet plan under annual capital caps: the cohort-flow integer program.

- :mod:`.program`   the program's arrays, built from the state graphs;
- :mod:`.backend`   the operations every solver back end offers, and the registry;
- :mod:`.highs`, :mod:`.cbc`  the back ends (HiGHS through highspy, CBC as a process on an MPS file);
- :mod:`.mps`       the program as MPS text;
- :mod:`.rounding`  fix-and-relax by year, guided by the LP;
- :mod:`.localsearch` a plan improved by re-planning two classes at a time;
- :mod:`.beside`    that search in a process of its own beside the MIP, trading plans with it;
- :mod:`.shortfall` the elastic program for caps that no plan fits;
- :mod:`.flows`     integral flows to unit paths;
- :mod:`.driver`    :func:`solve_capped`, the same sequence for every back end.
"""

from ..plan import InfeasibleLimits, NoPlanError, NoPlanFound
from .backend import BACKENDS, DEFAULT_BACKEND, Backend, LPResult, MIPResult, get_backend
from .driver import solve_capped
from .flows import fits_caps, flows_to_groups
from .highs import new_highs, watch_improvements
from .program import CohortProgram, ColumnIndex, build_program
from .rounding import fix_and_relax

SOLVERS = BACKENDS

__all__ = ["BACKENDS", "DEFAULT_BACKEND", "SOLVERS", "Backend", "CohortProgram", "ColumnIndex", "InfeasibleLimits", "LPResult",
           "MIPResult", "NoPlanError", "NoPlanFound", "build_program", "fits_caps", "fix_and_relax",
           "flows_to_groups", "get_backend", "new_highs", "solve_capped", "watch_improvements"]
