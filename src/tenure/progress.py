"""Progress bars on the terminal, through tqdm.

One place decides when a bar is drawn: only when asked for, only when the
stream (stderr by default) is a terminal, and only after ``delay`` seconds,
so short runs, pipes, captured output and log files stay clean.  Every long
step (the solves of a sweep or a comparison, report writing on large
fleets) uses :func:`bar`.
"""

from __future__ import annotations

import sys

from tqdm.auto import tqdm


def _is_terminal(stream) -> bool:
    try:
        return bool(stream.isatty())
    except (AttributeError, ValueError):
        return False


def bar(total: int, label: str = "", *, enabled: bool = True, stream=None, delay: float = 1.0,
        force: bool = False) -> tqdm:
    """A tqdm bar of ``total`` steps labelled ``label``; a silent one unless enabled and on a terminal.

    ``force=True`` draws on any stream (for tests).  Use as a context manager
    and call ``update(n)`` per finished step.
    """
    stream = sys.stderr if stream is None else stream
    show = enabled and (force or _is_terminal(stream))
    return tqdm(total=max(int(total), 0), desc=label or None, file=stream, disable=not show, delay=delay,
                leave=False, dynamic_ncols=True, unit="step")
