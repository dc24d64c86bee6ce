"""Command line: ``tenure check | life | fit | plan | policy | compare | sweep | hedge``.

Exit codes: 0 done; 2 bad input or an output that cannot be written (every problem printed, no traceback);
3 no plan fits the caps (the shortfall is printed and written); 130 / 143 interrupted by SIGINT / SIGTERM
(nothing written, earlier outputs unchanged).

Commands that write files write them as one transaction (``report.transaction``): the output folder is
checked and locked before any work, and always holds one complete set of one run.
"""

from __future__ import annotations

import os
import signal
import sys


def _early_exit(signum, frame):  # pragma: no cover - exercised by tests/test_faults.py
    os.write(2, f"tenure: interrupted by {signal.Signals(signum).name}; stopped, nothing written\n".encode())
    os._exit(128 + signum)


if os.path.basename(sys.argv[0] if sys.argv else "") in ("tenure", "cli.py"):
    # run as the command: a signal during the imports below ends the run with one line, not a traceback
    signal.signal(signal.SIGINT, _early_exit)
    signal.signal(signal.SIGTERM, _early_exit)

import contextlib  # noqa: E402
import warnings  # noqa: E402

from . import interrupts  # noqa: E402
from .case import CaseError  # noqa: E402
from .commands.common import (COMPARE_NAMES, EXIT_BAD_INPUT, EXIT_INFEASIBLE, PLAN_NAMES, SWEEP_NAMES,  # noqa: E402,F401
                              UsageError, _COMMITTED, parse_vary, run_options)
from .commands.parser import build_parser  # noqa: E402
from .interrupts import Interrupted  # noqa: E402
from .plan import NoPlanError  # noqa: E402
from .report.files import OutputError, describe_os_error  # noqa: E402


def main(argv: list[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    if not getattr(args, "func", None):
        parser.print_help()
        return EXIT_BAD_INPUT
    saved = {s: signal.getsignal(s) for s in (signal.SIGINT, signal.SIGTERM)}
    _COMMITTED.clear()
    interrupts.install()
    try:
        with warnings.catch_warnings():
            # the numeric limits keep every figure finite; a floating-point notice is never the user's business
            warnings.filterwarnings("ignore", category=RuntimeWarning, message=".*(overflow|invalid value|divide)")
            return _run(args)
    finally:
        with contextlib.suppress(ValueError):  # not the main thread: nothing was installed
            for s, handler in saved.items():
                signal.signal(s, handler)


def _run(args) -> int:
    """Run the command; every failure becomes one message and an exit code, never a traceback."""
    try:
        return int(args.func(args) or 0)
    except (Interrupted, KeyboardInterrupt) as exc:
        code = exc.code if isinstance(exc, Interrupted) else 128 + signal.SIGINT
        name = signal.Signals(code - 128).name
        done = (f"the outputs of run {_COMMITTED[-1]} had already been written whole" if _COMMITTED
                else "nothing written (the output folder keeps its earlier set)")
        print(f"tenure {args.command}: interrupted by {name}; stopped, {done}", file=sys.stderr)
        if interrupts.busy():
            interrupts.hard_exit(code)
        return code
    except CaseError as exc:
        print(f"tenure {args.command}: the case has {len(exc.problems)} problem(s):", file=sys.stderr)
        for prob in exc.problems:
            print(f"  {prob}", file=sys.stderr)
        return EXIT_BAD_INPUT
    except (UsageError, NoPlanError) as exc:
        print(f"tenure {args.command}: {exc}", file=sys.stderr)
        return EXIT_INFEASIBLE if isinstance(exc, NoPlanError) else EXIT_BAD_INPUT
    except BrokenPipeError:  # e.g. piped into `head`
        return 0
    except OutputError as exc:
        print(f"tenure {args.command}: cannot write the outputs: {exc}", file=sys.stderr)
        return EXIT_BAD_INPUT
    except OSError as exc:
        print(f"tenure {args.command}: {describe_os_error(exc)}", file=sys.stderr)
        return EXIT_BAD_INPUT
    except MemoryError:
        print(f"tenure {args.command}: out of memory; the case is too large for this machine "
              "(see the size limits in docs/case-format.md)", file=sys.stderr)
        return EXIT_BAD_INPUT


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
