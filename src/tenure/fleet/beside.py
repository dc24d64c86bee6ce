"""The local search over classes in a process of its own, beside the integer program.

The integer program of HiGHS keeps about one core busy (measured on the demo and the 1,000-unit
benchmark fleet: 15.1 s and 14.4 s of CPU in 15 s of wall time on a 2-core machine from its start
plan; 25.9 s in 20 s from no start, HiGHS 1.16 using its second thread for part of the time), so
the local search of :mod:`tenure.fleet.localsearch` runs beside it, with one solver thread of its
own, from the same first plan and to the same deadline.  They trade plans as they go: each better
plan of the search is offered to the integer program (a back end that takes plans during its solve
prunes with it; one that does not simply finishes), and each better plan of the integer program replaces the search's own when it
is cheaper.  The cheaper of the two at the end is the plan; the bound is the integer program's
alone, so the search changes no proof.

The search starts only once the integer program has run for a while (``DELAY`` seconds), so that
solves which end sooner pay nothing for it: the solver's own callbacks start it.  With a back end
that makes no calls during its solve (``Backend.trades_plans`` False: CBC, a process of its own),
the search is started at once (:meth:`SearchBeside.start`) and the two meet only at the end.

The process is a fresh interpreter running this module (``python -m tenure.fleet.beside``), with
two pipes: never a copy of the caller's process (a fork inside the solver's callback would copy
the solver's threads mid-solve) and never a re-run of the caller's script (as multiprocessing's
spawn and forkserver do for a script without a ``__main__`` guard).  Messages are pickled
(:class:`multiprocessing.connection.Connection` on the pipes).  POSIX only; elsewhere the integer
program runs alone.
"""

from __future__ import annotations

import os
import pickle
import queue
import subprocess
import sys
import threading
import time
from dataclasses import replace
from multiprocessing.connection import Connection

import numpy as np

from .backend import Backend
from .localsearch import SearchResult, class_of_column, improve
from .program import CohortProgram

#: seconds of the integer program before the search starts beside it
DELAY = 3.0
#: seconds to wait for the search's last word once it is told to stop
CLOSE_SECONDS = 10.0
#: where a search beside the integer program can run (two pipes to a fresh interpreter)
AVAILABLE = os.name == "posix"


def _plan_message(cost: float, x: np.ndarray):
    # plans are whole units: int32 halves the bytes through the pipe
    return float(cost), np.round(x).astype(np.int32)


def _serve(inbox: Connection, outbox: Connection) -> None:
    """The search process: its task from ``inbox`` first, then the integer program's plans (or
    ``None``, stop); its better plans out to ``outbox`` as (cost, plan), last ("done", result).
    A thread reads the inbox all the time, so the caller's writes never wait on the search."""
    try:
        prog, owner, backend, x, seconds, core = inbox.recv()
    except (EOFError, OSError):  # the caller gave up before sending the task
        return
    plans: queue.Queue = queue.Queue()
    stop = threading.Event()

    def read():
        try:
            while True:
                msg = inbox.recv()
                if msg is None:
                    break
                plans.put(msg)
        except (EOFError, OSError):
            pass
        stop.set()

    threading.Thread(target=read, daemon=True).start()

    def outside():
        latest = None
        while not plans.empty():
            latest = plans.get_nowait()
        return None if latest is None else latest[1].astype(float)

    # and a thread writes, so a plan larger than the pipe's buffer never holds the search up
    sends: queue.Queue = queue.Queue()

    def write():
        try:
            while True:
                msg = sends.get()
                outbox.send(msg)
                if msg[0] == "done":
                    break
        except OSError:
            pass

    writer = threading.Thread(target=write, daemon=True)
    writer.start()
    # one thread in this process: the integer program beside it has two (measured on the 1,000-unit
    # benchmark fleet, the search alone in the core for 25 s: 1,109,890,664 with one, 1,109,899,545 with two)
    backend.threads = 1
    found = improve(prog, backend, x, time.perf_counter() + seconds, owner=owner, outside=outside,
                    stopped=stop.is_set, grow=True, core=core,
                    on_better=lambda plan, cost: sends.put(_plan_message(cost, plan)))
    sends.put(("done", found))
    writer.join(timeout=CLOSE_SECONDS)


class SearchBeside:
    """The local search running beside the integer program, with the exchange the back end uses.

    ``offered()`` is the search's newest plan not yet offered, cheaper than any the integer
    program has reported (or None); ``found(cost, plan)`` reports one of the integer program's;
    ``close()`` stops the search and returns its :class:`~tenure.fleet.localsearch.SearchResult`
    (None when it gave no last word in time).  ``best`` is the cheapest plan either side has
    reported so far, as ``(cost, plan)``.
    """

    def __init__(self, prog: CohortProgram, backend: type[Backend], x: np.ndarray, seconds: float,
                 on_plan=None, delay: float = 0.0, core: list | None = None):
        """The search starts ``delay`` seconds after this object is made, at the first call of
        :meth:`offered` or :meth:`found` after that, from the best plan then and for the seconds left
        of ``seconds``: a solve that ends sooner never pays for a process.  ``on_plan(cost)`` is called
        for each better plan the search hands over [money, time 0]; ``core`` (column masks, each
        inside the next, :func:`~tenure.fleet.localsearch.core_columns`) is where the search starts."""
        x = np.round(np.asarray(x, dtype=float))
        self.best = (float(prog.cost @ x), x)
        self._prog, self._backend, self._on_plan, self._core = prog, backend, on_plan, core
        self._t0, self._delay, self._seconds = time.perf_counter(), delay, seconds
        self._proc = None
        self._lock = threading.Lock()
        self._fresh: np.ndarray | None = None  # the search's newest plan not yet offered
        self.result: SearchResult | None = None

    def start(self) -> None:
        """Start the search now, whatever the delay."""
        self._delay = 0.0
        self._start_when_due()

    def _start_when_due(self) -> None:
        if self._proc is not None or not AVAILABLE:
            return
        now = time.perf_counter()
        left = self._t0 + self._seconds - now
        if now - self._t0 < self._delay or left < 1.0:
            return
        try:
            pickle.dumps(self._backend)
        except (pickle.PicklingError, AttributeError, TypeError):
            # a back end defined where no other process can import it: the MIP runs alone
            self._seconds = 0.0
            return
        down_r, down_w = os.pipe()  # caller -> search
        up_r, up_w = os.pipe()  # search -> caller
        self._proc = subprocess.Popen([sys.executable, "-m", "tenure.fleet.beside", str(down_r), str(up_w)],
                                      pass_fds=(down_r, up_w), stdin=subprocess.DEVNULL)
        os.close(down_r)
        os.close(up_w)
        self._down, self._up = Connection(down_w, readable=False), Connection(up_r, writable=False)
        # one thread sends everything, in order, so the solver's callbacks never wait on a pipe (the
        # task is sent while the new interpreter is still importing)
        self._sends: queue.Queue = queue.Queue()
        threading.Thread(target=self._send_all, daemon=True).start()
        self._receiver = threading.Thread(target=self._receive_all, daemon=True)
        self._receiver.start()
        slim = replace(self._prog, cols={}, starts={}, graphs={}, market_rhs={})
        self._sends.put((slim, class_of_column(self._prog), self._backend, self.best[1], left, self._core))

    def _send_all(self) -> None:
        try:
            while True:
                msg = self._sends.get()
                self._down.send(msg)
                if msg is None:
                    break
        except (OSError, pickle.PicklingError, AttributeError, TypeError):
            pass  # the search has gone (or a message would not pickle): it ends on EOF
        finally:
            self._down.close()

    def _receive_all(self) -> None:
        # a thread of its own: the solver calls offered() often early in the solve and seldom later,
        # and the search must never wait on a full pipe meanwhile
        try:
            while True:
                msg = self._up.recv()
                if msg[0] == "done":
                    self.result = msg[1]
                    return
                cost, plan = msg
                with self._lock:
                    if cost < self.best[0]:
                        self.best = (cost, plan.astype(float))
                        self._fresh = self.best[1]
                        if self._on_plan is not None:
                            self._on_plan(cost)
        except (EOFError, OSError, pickle.UnpicklingError):  # the search has gone: the MIP goes on alone
            pass

    def offered(self) -> np.ndarray | None:
        self._start_when_due()
        with self._lock:
            fresh, self._fresh = self._fresh, None
        return fresh

    def found(self, cost: float, plan: np.ndarray) -> None:
        with self._lock:
            if cost < self.best[0]:
                self.best = (cost, np.round(np.asarray(plan, dtype=float)))
                self._fresh = None
                if self._proc is not None:
                    self._sends.put(_plan_message(*self.best))
        self._start_when_due()

    def close(self) -> SearchResult | None:
        """Stop the search (if it ever started) and return its result."""
        if self._proc is None:
            return None
        self._sends.put(None)
        self._receiver.join(timeout=CLOSE_SECONDS)
        try:
            self._proc.wait(timeout=2.0)
        except subprocess.TimeoutExpired:
            self._proc.kill()
            self._proc.wait()
        self._up.close()
        return self.result


if __name__ == "__main__":
    import signal

    # Ctrl-C is the caller's to handle; the search ends when the caller's pipe closes
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    _serve(Connection(int(sys.argv[1]), writable=False), Connection(int(sys.argv[2]), readable=False))
