"""Run independent tasks serially, on a local Dask cluster, or on an existing one.

The caller hands a function, the data every task shares (scattered once to each worker) and
the list of task items; each result comes back to the calling process as soon as it is done,
in completion order, so the caller can save it at once. A worker lost mid-task is replaced and
its task rerun by the Dask scheduler; results do not depend on where a task ran.
"""

from __future__ import annotations

import contextlib
import logging
import os
import re

from aculink.errors import AculinkError

#: Seconds to wait for an external scheduler before giving up.
CONNECT_TIMEOUT_S = 5.0

_ADDRESS = re.compile(r"^(tcp|tls|inproc|ws|wss)://[^\s/:]+(:\d+)?/?$|^[^\s/:]+:\d+$")


def machine_workers() -> int:
    """Cores this process may use (the default number of local workers)."""
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except AttributeError:  # pragma: no cover - not Linux
        return max(1, os.cpu_count() or 1)


def check_scheduler_address(address: str) -> str:
    """Validate the shape of a scheduler address such as ``tcp://10.0.0.5:8786``."""
    address = str(address).strip()
    if not _ADDRESS.match(address):
        raise AculinkError(f"scheduler = {address!r}: expected an address such as tcp://host:8786")
    return address


@contextlib.contextmanager
def dask_client(*, workers=None, scheduler=None, timeout_s=CONNECT_TIMEOUT_S):
    """A ``distributed.Client`` on a new local cluster or on the scheduler at ``scheduler``.

    The local cluster uses worker processes with one thread each (the numba kernels hold the
    GIL only briefly, but separate processes keep them from contending); it listens on
    127.0.0.1 only (its dashboard too, on a free port).
    """
    from distributed import Client, LocalCluster

    if scheduler is not None:
        address = check_scheduler_address(scheduler)
        try:
            client = Client(address, timeout=f"{timeout_s}s", set_as_default=False)
        except (OSError, TimeoutError) as exc:
            raise AculinkError(f"cannot reach the Dask scheduler at {address} within "
                               f"{timeout_s:g} s ({type(exc).__name__})") from None
        try:
            yield client
        finally:
            client.close()
        return
    n = machine_workers() if workers is None else int(workers)
    try:
        # one numba thread per worker process: the workers already fill the cores, and numba's
        # own pool on top would oversubscribe them
        cluster = LocalCluster(n_workers=n, threads_per_worker=1, processes=True, host="127.0.0.1",
                               dashboard_address="127.0.0.1:0", silence_logs=logging.ERROR,
                               env={"NUMBA_NUM_THREADS": "1", "OMP_NUM_THREADS": "1"})
    except RuntimeError as exc:
        # worker processes re-import the calling script: a script that starts a sweep at module
        # level (no main guard) makes every worker fail to start
        raise AculinkError(f"workers = {n}: the local Dask workers failed to start ({exc}); in a script, "
                           "call run_sweep under 'if __name__ == \"__main__\":', or use workers=1") from None
    client = Client(cluster, set_as_default=False)
    try:
        yield client
    finally:
        client.close()
        cluster.close()


def run_tasks(func, shared, items, on_result, *, workers=None, scheduler=None,
              timeout_s=CONNECT_TIMEOUT_S, name="task"):
    """Call ``func(shared, item)`` for every item and hand each result to ``on_result``.

    Parameters
    ----------
    func : callable
        A module-level function (it is shipped to worker processes).
    shared : object
        Data every task reads (sent to each worker once).
    items : sequence
        One task each.
    on_result : callable
        ``on_result(item, result)``, called in this process as each task finishes.
    workers : int, optional
        Local worker processes; 0 or 1 run serially in this process; None sizes a local
        cluster to the machine.
    scheduler : str, optional
        Address of an existing Dask scheduler (``tcp://host:port``); overrides ``workers``.
    timeout_s : float
        How long to wait for the scheduler.

    Raises
    ------
    AculinkError
        When the scheduler cannot be reached, or workers keep dying on a task.
    """
    items = list(items)
    if workers is not None and int(workers) < 0:
        raise AculinkError(f"workers = {workers}: allowed range is [0, {4 * machine_workers()}]")
    if scheduler is None and workers is not None and int(workers) <= 1:
        for item in items:
            on_result(item, func(shared, item))
        return
    if not items and scheduler is None:
        return
    from distributed import as_completed
    from distributed.client import FutureCancelledError
    from distributed.scheduler import KilledWorker

    with dask_client(workers=workers, scheduler=scheduler, timeout_s=timeout_s) as client, \
            client.as_current():
        shared_future = client.scatter(shared, broadcast=True, hash=False)
        futures = {}
        for k, item in enumerate(items):
            fut = client.submit(func, shared_future, item, pure=False, key=f"aculink-{name}-{k}-{os.getpid()}-{id(items)}")
            futures[fut.key] = (fut, item)
        try:
            for fut in as_completed([f for f, _ in futures.values()]):
                _, item = futures.pop(fut.key)
                try:
                    result = fut.result()
                except KilledWorker:
                    raise AculinkError(f"{name} {item!r}: Dask workers died repeatedly while "
                                       "running it; finished work is saved, rerun to resume") from None
                except FutureCancelledError:
                    raise AculinkError(f"{name} {item!r} was cancelled by the Dask cluster; "
                                       "finished work is saved, rerun to resume") from None
                fut.release()
                on_result(item, result)
        finally:
            for fut, _ in futures.values():
                fut.cancel()
