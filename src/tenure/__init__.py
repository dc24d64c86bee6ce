"""tenure: long-horizon fleet and asset renewal planning.

Data flows one way: case file → model (``tenure.model``) → economics
(``money``, ``curves``, ``life``) → solvers (``chain``, ``fleet``) → plan
(``tenure.plan``) → writers (``tenure.report``) → command line (``tenure.cli``).

The Python API (``tenure.api``, docs/api.md) is re-exported here:
``load_case``, ``Case.from_frames``, ``solve``, ``economic_life``,
``policy_frame``, ``compare``, ``sweep``.
"""

__version__ = "0.1.0"

from .api import (  # noqa: E402  (the version is set before the API loads)
    Case,
    CaseError,
    compare,
    economic_life,
    life_tables,
    load_case,
    policy,
    policy_frame,
    solve,
    sweep,
)

__all__ = ["__version__", "Case", "CaseError", "compare", "economic_life", "life_tables", "load_case", "policy",
           "policy_frame", "solve", "sweep"]
