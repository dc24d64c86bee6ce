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
- ``cluster="local"``: a Dask ``LocalCluster`` of ``workers`` single-threaded
  worker processes is started for the run and closed after it;
- ``cluster="tcp://host:port"``: the tasks go to an existing Dask
  distributed scheduler through ``dask.distributed.Client(address)`` (given
  up after ``CONNECT_TIMEOUT`` seconds); the workers there need tenure installed.

``progress`` is any object with ``update(n)``, e.g. a :func:`tenure.progress.bar`.
"""

from __future__ import annotations

import logging
import multiprocessing
import os
from concurrent.futures import ProcessPoolExecutor, as_completed
from typing import Any, Callable, Sequence


#: the ``cluster`` value that starts a Dask cluster of local worker processes for the run
LOCAL = "local"


class ClusterError(Exception):
    """The Dask scheduler could not be reached or used (message is one line)."""


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
              progress=None) -> list[Any]:
    """``[fn(t) for t in tasks]``, computed on the chosen back end, in task order.

    Parameters
    ----------
    fn : callable
        A module-level function (it is pickled by reference).
    tasks : sequence
        Picklable task descriptions.
    workers : int
        Local worker processes (1: run in this process); with ``cluster="local"``
        the number of worker processes of the local Dask cluster.
    cluster : str or None
        ``"local"`` (start a Dask ``LocalCluster`` for this run and close it after),
        or the address of a running Dask distributed scheduler, e.g. ``"tcp://scheduler-host:8786"``.
    progress : tqdm-like or None
        ``update(1)`` per finished task.

    Raises
    ------
    ClusterError
        When the scheduler cannot be reached.
    """
    tasks = list(tasks)
    if cluster:
        return _run_dask(fn, tasks, cluster, workers, progress)
    if workers <= 1 or len(tasks) <= 1:
        out = []
        for t in tasks:
            out.append(fn(t))
            if progress is not None:
                progress.update(1)
        return out
    results: list[Any] = [None] * len(tasks)
    with ProcessPoolExecutor(max_workers=min(workers, len(tasks)), mp_context=_context(),
                             initializer=_quiet_worker) as pool:
        futs = {pool.submit(fn, t): j for j, t in enumerate(tasks)}
        for f in as_completed(futs):
            results[futs[f]] = f.result()
            if progress is not None:
                progress.update(1)
    return results


#: seconds to wait for a Dask scheduler before giving up
CONNECT_TIMEOUT = 5


def _client(address: str, workers: int):
    """A Dask client (and the local cluster it owns, or None) for ``address``; ClusterError when unreachable."""
    try:
        from dask.distributed import Client, LocalCluster
    except ImportError as exc:  # pragma: no cover - distributed is a dependency
        raise ClusterError(f"a Dask cluster needs the 'distributed' package: {exc}") from None
    if address == LOCAL:
        # one single-threaded worker process per requested worker: the solves hold the GIL
        try:
            cluster = LocalCluster(n_workers=max(int(workers), 1), threads_per_worker=1, processes=True,
                                   host="127.0.0.1", dashboard_address=None, silence_logs=logging.ERROR)
        except Exception as exc:  # noqa: BLE001 - any start-up failure becomes one clear line
            raise ClusterError(f"cannot start a local Dask cluster of {workers} worker(s): {exc}") from None
        return Client(cluster, set_as_default=False), cluster
    try:
        return Client(address, timeout=f"{CONNECT_TIMEOUT}s", set_as_default=False), None
    except Exception as exc:  # noqa: BLE001 - OSError, TimeoutError, ValueError, comm errors alike
        raise ClusterError(f"cannot reach a Dask scheduler at {address!r} within {CONNECT_TIMEOUT} s "
                           f"({type(exc).__name__}: {exc}); give the address of a running scheduler, "
                           f"e.g. tcp://scheduler-host:8786, or {LOCAL!r} to start one here") from None


def _run_dask(fn, tasks, address: str, workers: int, progress) -> list[Any]:
    from dask.distributed import as_completed as dask_completed

    client, cluster = _client(address, workers)
    try:
        futures = client.map(fn, tasks, pure=False)
        for _ in dask_completed(futures, loop=client.loop):
            if progress is not None:
                progress.update(1)
        return client.gather(futures)
    finally:
        client.close()
        if cluster is not None:
            cluster.close()
