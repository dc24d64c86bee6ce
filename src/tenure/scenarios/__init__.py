"""Scenarios, regret and sweeps: how the plan moves when the assumptions do.

- :mod:`.overrides` — dotted override paths, applying them, scenario files;
- :mod:`.tasks`     — picklable solve tasks (run here, in worker processes or on Dask);
- :mod:`.recost`    — a fixed schedule costed under another case; the regret table;
- :mod:`.compare`   — base case and scenarios side by side, safe-to-commit actions;
- :mod:`.sweep`     — grids and Monte Carlo draws, quantiles and one-at-a-time sensitivity.

Renderers of comparisons and sweeps (text, CSV, HTML) live in :mod:`tenure.report`;
command-line option parsing in :mod:`tenure.cli`.
"""

from .compare import BASE_NOTE, Comparison, EarlyDifference, SafeAction, ScenarioResult, compare, select_scenarios
from .overrides import (INTEGER_FIELDS, SCENARIO_FILE_KEYS, apply_overrides, case_with, coerce,
                        read_scenario_file, valid_paths)
from .recost import CAP_TOL, Recost, RegretTable, recost, regret_table
from .sweep import (AXIS_SYNTAX, QUANTILES, Axis, axis_from_text, CostSummary, Sensitivity, Sweep, SweepBase, SweepDraw, SweepInput, draw,
                    sweep)
from .tasks import first_year_actions, make_task, run_task

__all__ = ["AXIS_SYNTAX", "axis_from_text", "BASE_NOTE", "CAP_TOL", "INTEGER_FIELDS", "QUANTILES", "SCENARIO_FILE_KEYS", "Axis", "Comparison",
           "CostSummary", "EarlyDifference", "Recost", "RegretTable", "SafeAction", "ScenarioResult", "Sensitivity",
           "Sweep", "SweepBase", "SweepDraw", "SweepInput",
           "apply_overrides", "case_with", "coerce", "compare", "draw", "first_year_actions", "make_task",
           "read_scenario_file", "recost", "regret_table", "run_task", "select_scenarios", "sweep", "valid_paths"]
