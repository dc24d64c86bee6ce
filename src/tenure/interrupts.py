"""Ctrl-C and SIGTERM honoured within a fraction of a second, even while a solver runs in C.

HiGHS and CBC do not return to Python until they finish, so a signal handler
would run only when the solve is over.  :func:`run_interruptible` therefore
runs the solve in a daemon worker thread while the main thread waits in short
joins: Python delivers signals to the main thread between two joins, and
:class:`Interrupted` is raised there at once.  The worker cannot be stopped
from outside; the command ends the process instead (:func:`hard_exit`) after
its ``with`` blocks have removed what the run had staged.
"""

from __future__ import annotations

import os
import signal
import sys
import threading
from contextlib import contextmanager
from typing import Any, Callable

POLL_S = 0.1  # seconds between two joins; a signal waits at most this long
_working: set[int] = set()  # idents of workers not yet finished (Thread.is_alive() is unreliable after an
#                             exception interrupted join() on Python < 3.13: the thread is then marked stopped)


class Interrupted(BaseException):
    """The run was asked to stop (SIGINT or SIGTERM); ``code`` is the exit code 128 + signal number."""

    def __init__(self, signum: int):
        self.signum = signum
        self.code = 128 + signum
        super().__init__(signal.Signals(signum).name)


def _raise(signum, frame):
    raise Interrupted(signum)


def install() -> None:
    """SIGINT and SIGTERM raise :class:`Interrupted` in the main thread (call from the main thread only)."""
    if threading.current_thread() is threading.main_thread():
        signal.signal(signal.SIGINT, _raise)
        signal.signal(signal.SIGTERM, _raise)


def run_interruptible(fn: Callable[..., Any], *args, **kwargs) -> Any:
    """``fn(*args, **kwargs)`` in a worker thread; its result, or its exception re-raised here.

    Outside the main thread (e.g. the Python API run from a thread) ``fn`` is simply called.
    """
    if threading.current_thread() is not threading.main_thread():
        return fn(*args, **kwargs)
    box: dict[str, Any] = {}

    def work():
        _working.add(threading.get_ident())
        try:
            box["value"] = fn(*args, **kwargs)
        except BaseException as exc:  # handed to the main thread
            box["error"] = exc
        finally:
            _working.discard(threading.get_ident())

    t = threading.Thread(target=work, name="tenure-solve", daemon=True)
    t.start()
    while "value" not in box and "error" not in box:
        t.join(POLL_S)
    if "error" in box:
        raise box["error"]
    return box["value"]


@contextmanager
def signals_deferred():
    """Hold SIGINT and SIGTERM while the block runs (a commit is never cut in half); delivered after it."""
    sigs = {signal.SIGINT, signal.SIGTERM}
    if threading.current_thread() is not threading.main_thread():
        yield
        return
    old = signal.pthread_sigmask(signal.SIG_BLOCK, sigs)
    try:
        yield
    finally:
        signal.pthread_sigmask(signal.SIG_SETMASK, old)


def _children() -> list[int]:
    """Process ids whose parent is this process (a CBC run, local workers), read from /proc."""
    me, out = os.getpid(), []
    try:
        entries = os.listdir("/proc")
    except OSError:
        return out
    for e in entries:
        if not e.isdigit():
            continue
        try:
            with open(f"/proc/{e}/stat", "rb") as fh:
                stat = fh.read().decode("ascii", "replace")
        except OSError:
            continue
        fields = stat.rsplit(")", 1)[-1].split()
        if len(fields) > 1 and fields[1] == str(me):
            out.append(int(e))
    return out


def hard_exit(code: int) -> None:
    """End the process now with ``code``: stop this process's own child processes, flush, ``os._exit``.

    Used only when a solve is still running in a worker thread, which no Python call can stop.
    """
    for pid in _children():
        try:
            os.kill(pid, signal.SIGTERM)
        except OSError:
            pass
    for stream in (sys.stdout, sys.stderr):
        try:
            stream.flush()
        except (OSError, ValueError):
            pass
    os._exit(code)


def busy() -> bool:
    """True when a worker thread of :func:`run_interruptible` is still running."""
    return bool(_working)
