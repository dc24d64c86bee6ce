"""tenure: long-horizon fleet and asset renewal planning.

Data flows one way: case file → model (``tenure.model``) → economics
(``money``, ``curves``, ``life``) → solvers (``chain``, ``fleet``) → plan
(``tenure.plan``) → writers (``tenure.report``) → command line (``tenure.cli``).

The Python API (``tenure.api``, docs/api.md) is re-exported here:
``load_case``, ``Case.from_frames``, ``solve``, ``economic_life``,
``policy_frame``, ``compare``, ``sweep``.
"""

__version__ = "0.1.0"


def _early_interrupts() -> None:
    """Run as the command (the ``tenure`` script, or ``python -m tenure.cli`` while its package loads): a
    signal during the heavy imports below ends the run with one line and nothing written, not a traceback.
    ``tenure.cli.main`` installs the real handlers once it runs."""
    import os
    import signal
    import sys

    if os.path.basename(sys.argv[0] if sys.argv else "") not in ("tenure", "-m"):
        return

    def _exit(signum, frame):  # pragma: no cover - exercised by tests/test_faults.py
        os.write(2, f"tenure: interrupted by {signal.Signals(signum).name}; stopped, nothing written\n".encode())
        os._exit(128 + signum)

    signal.signal(signal.SIGINT, _exit)
    signal.signal(signal.SIGTERM, _exit)


_early_interrupts()

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
