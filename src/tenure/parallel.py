"""Run many independent solves: in this process, in local worker processes, or on a Dask cluster.

Every task is a small, picklable description (a case document plus the
overrides to apply, see :mod:`tenure.scenarios`), never a model object, so
the same task list can go to any of the three back ends.  Results come back
in task order whatever the back end, the number of workers, or the order in
which the workers finish, so a run is reproducible from its inputs alone.

Back ends
---------
- ``workers == 1`` and no cluster: a plain loop in this process;
- ``workers > 1``: a :class:`concurrent.futures.ProcessPoolExecutor` whose
  processes are started fresh ("forkserver" where the platform has it, else
  "spawn"), so no thread state of this process is copied into them;
- ``cluster="tcp://host:port"``: the tasks go to an existing Dask
  distributed scheduler through ``dask.distributed.Client(address)``; the
  workers there need tenure installed.

:class:`Progress` is the terminal progress bar used while the tasks run.
"""

from __future__ import annotations

import multiprocessing
import os
import sys
import time
from concurrent.futures import ProcessPoolExecutor, as_completed
from typing import Any, Callable, Sequence


class ClusterError(Exception):
    """The Dask scheduler could not be reached or used (message is one line)."""


# ---------------------------------------------------------------------------
# progress bar
# ---------------------------------------------------------------------------
class Progress:
    """A one-line progress bar on a terminal stream (stderr by default).

    Nothing is drawn unless the stream is a terminal, and nothing is drawn
    during the first ``delay`` seconds, so short runs and piped or captured
    output stay clean.  Redraws are limited to ``interval`` seconds apart.
    ``force=True`` draws on any stream (for tests).
    """

    WIDTH = 28

    def __init__(self, total: int, label: str = "", *, stream=None, delay: float = 1.0,
                 interval: float = 0.1, force: bool = False, enabled: bool = True):
        self.total = max(int(total), 0)
        self.label = label
        self.stream = sys.stderr if stream is None else stream
        self.delay = delay
        self.interval = interval
        self.done = 0
        self.t0 = time.perf_counter()
        self._last = 0.0
        self._drawn = False
        tty = False
        try:
            tty = bool(self.stream.isatty())
        except (AttributeError, ValueError):
            tty = False
        self.enabled = enabled and (force or tty)

    def advance(self, n: int = 1) -> None:
        self.done += n
        self._maybe_draw()

    def _maybe_draw(self, final: bool = False) -> None:
        if not self.enabled:
            return
        now = time.perf_counter()
        elapsed = now - self.t0
        if elapsed < self.delay:
            return
        if not final and self._drawn and now - self._last < self.interval:
            return
        self._last = now
        self._drawn = True
        self.stream.write("\r" + self.line(elapsed))
        self.stream.flush()

    def line(self, elapsed: float) -> str:
        """The text of the bar after ``elapsed`` seconds."""
        frac = self.done / self.total if self.total else 1.0
        full = int(frac * self.WIDTH)
        bar = "█" * full + ("▌" if frac * self.WIDTH - full >= 0.5 else "")
        bar = bar.ljust(self.WIDTH, "·")
        left = ""
        if 0 < self.done < self.total:
            left = f"  ~{elapsed / self.done * (self.total - self.done):.0f} s left"
        head = f"{self.label} " if self.label else ""
        return f"{head}[{bar}] {self.done}/{self.total} {frac:4.0%}  {elapsed:.0f} s{left}   "

    def close(self) -> None:
        """Draw the final state (if anything was drawn) and end the line."""
        if self.enabled and self._drawn:
            self._maybe_draw(final=True)
            self.stream.write("\n")
            self.stream.flush()


# ---------------------------------------------------------------------------
# back ends
# ---------------------------------------------------------------------------
def _quiet_worker() -> None:
    """Worker-process initialiser: drop the process's own stdout (solver banners)."""
    try:
        fd = os.open(os.devnull, os.O_WRONLY)
        os.dup2(fd, 1)
        os.close(fd)
    except OSError:  # pragma: no cover - best effort only
        pass


def _context():
    methods = multiprocessing.get_all_start_methods()
    return multiprocessing.get_context("forkserver" if "forkserver" in methods else "spawn")


def run_tasks(fn: Callable[[Any], Any], tasks: Sequence[Any], *, workers: int = 1, cluster: str | None = None,
              progress: Progress | None = None) -> list[Any]:
    """``[fn(t) for t in tasks]``, computed on the chosen back end, in task order.

    Parameters
    ----------
    fn : callable
        A module-level function (it is pickled by reference).
    tasks : sequence
        Picklable task descriptions.
    workers : int
        Local worker processes (1: run in this process).  Ignored with ``cluster``.
    cluster : str or None
        Address of a running Dask distributed scheduler, e.g. ``"tcp://scheduler-host:8786"``.
    progress : Progress or None
        Advanced by one per finished task.

    Raises
    ------
    ClusterError
        When the scheduler cannot be reached.
    """
    tasks = list(tasks)
    if cluster:
        return _run_dask(fn, tasks, cluster, progress)
    if workers <= 1 or len(tasks) <= 1:
        out = []
        for t in tasks:
            out.append(fn(t))
            if progress is not None:
                progress.advance()
        return out
    results: list[Any] = [None] * len(tasks)
    with ProcessPoolExecutor(max_workers=min(workers, len(tasks)), mp_context=_context(),
                             initializer=_quiet_worker) as pool:
        futs = {pool.submit(fn, t): j for j, t in enumerate(tasks)}
        for f in as_completed(futs):
            results[futs[f]] = f.result()
            if progress is not None:
                progress.advance()
    return results


def _run_dask(fn, tasks, address: str, progress: Progress | None) -> list[Any]:
    try:
        from dask.distributed import Client
        from dask.distributed import as_completed as dask_completed
    except ImportError as exc:  # pragma: no cover - distributed is a dependency
        raise ClusterError(f"--cluster needs the 'distributed' package: {exc}") from None
    try:
        client = Client(address, timeout="15s", set_as_default=False)
    except (OSError, TimeoutError, ValueError) as exc:
        raise ClusterError(f"cannot reach the Dask scheduler at {address!r}: {exc}") from None
    try:
        futures = client.map(fn, tasks, pure=False)
        for _ in dask_completed(futures, loop=client.loop):
            if progress is not None:
                progress.advance()
        return client.gather(futures)
    finally:
        client.close()
