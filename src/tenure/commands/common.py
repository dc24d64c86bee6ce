"""What every command shares: usage errors, option checks, plausibility warnings and the output transaction."""

from __future__ import annotations

import contextlib
import math
import re
from pathlib import Path

from .. import api
from ..interrupts import signals_deferred
from ..textutil import did_you_mean

EXIT_BAD_INPUT = 2
EXIT_INFEASIBLE = 3
PLAN_NAMES = ("plan.json", "units.csv", "years.csv", "buy-list.csv", "report.html", "plan.xlsx")
COMPARE_NAMES = ("compare.json", "compare.csv", "report.html")
SWEEP_NAMES = ("sweep.json", "sweep.csv", "sensitivity.csv")
HEDGE_NAMES = ("hedge.json", "hedge.csv", "report.html")
FIT_NAMES = ("fitted.toml", "fit.json", "fit.html")


class UsageError(Exception):
    """A command-line value that is not allowed; printed as one line, exit 2."""



def _case(path: str):
    return api.load_case(Path(path))



def _near(value: str, allowed: list[str]) -> str:
    return did_you_mean(value, allowed)



def _warn_block(case) -> list:
    from ..plausibility import case_warnings

    found = case_warnings(case)
    if found:
        print()
        for w in found:
            print(f"warning: {w}")
    return found



def _warn(case) -> list:
    """Print the plausibility warnings of a case (stdout: they are findings, not failures); returns them."""
    from ..plausibility import case_warnings

    found = case_warnings(case)
    for w in found:
        print(f"warning: {w}")
    return found



def _seconds(value: float) -> float:
    if not (math.isfinite(value) and 0 < value <= 1e6):
        raise UsageError(f"--time-limit {value!r}: must be a number of seconds in (0, 1e6], e.g. 120")
    return value



_CLUSTER = re.compile(r"^(?:(?:tcp|tls|inproc|ucx|ws|wss)://)?[A-Za-z0-9_.\-\[\]:]+:\d{1,5}$")



def _cluster(address: str | None) -> str | None:
    if address is not None and not _CLUSTER.match(address):
        raise UsageError(f"--cluster {address!r}: not a scheduler address; give e.g. tcp://scheduler-host:8786")
    return address



def _output(out: str | None, command: str, names: tuple[str, ...]):
    """The output transaction of ``--out`` (checked and locked now), or a no-op when nothing is written."""
    if out is None:
        return contextlib.nullcontext(None)
    from ..report.transaction import OutputFolder, check_out

    check_out(Path(out), names)
    return OutputFolder(Path(out), command, names)



_COMMITTED: list = []  # output sets switched in by this process (an interrupt after that says so)



def _commit(tx, meta: dict) -> list[Path]:
    with signals_deferred():
        paths = tx.commit(meta)
        _COMMITTED.append(tx.run_id)
        return paths



def run_options(solver: str, time_limit: float, gap: float, workers: int) -> dict:
    """Checked solver options of ``compare``/``sweep``; ValueError with a one-line message otherwise."""
    if not (time_limit > 0):
        raise ValueError(f"--time-limit {time_limit!r}: must be a number of seconds > 0")
    if not (0 <= gap < 1):
        raise ValueError(f"--gap {gap!r}: must be a fraction in [0, 1), e.g. 0.005")
    if workers < 1:
        raise ValueError(f"--workers {workers!r}: must be a whole number ≥ 1")
    return {"solver": solver, "time_limit": float(time_limit), "gap": float(gap)}



def parse_vary(text: str):
    """``--vary PATH=LOW:HIGH:STEPS`` → :class:`tenure.scenarios.Axis`; ValueError naming the option otherwise."""
    from ..scenarios import axis_from_text

    try:
        return axis_from_text(text)
    except ValueError as exc:
        raise ValueError(f"--vary {exc}") from None
