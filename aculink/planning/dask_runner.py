"""Run independent tasks serially, on a local Dask cluster, or on an existing one.

The caller hands a function, the data every task shares (scattered once to each worker) and
the list of task items; each result comes back to the calling process as soon as it is done,
in completion order, so the caller can save it at once. A worker lost mid-task is replaced and
its task rerun by the Dask scheduler; results do not depend on where a task ran.

Everything that can fail is checked when the runner is opened (:func:`open_runner`): the
number of workers, the scheduler's address and whether it answers. A local cluster starts in
a background thread while this process already works through the task list; once the workers
are up they take the rest. So a local run is never slower than a serial one by more than the
cost of the start itself, and when the cluster cannot start the run simply stays serial.

Whether a local cluster pays at all is estimated from the work (:func:`local_workers_for`):
starting one costs :data:`LOCAL_START_S` seconds on these machines, so by default a sweep
runs serially unless the time its extra workers save, estimated from the point count at
:data:`POINT_S` seconds a point, exceeds that cost with a margin.
"""

from __future__ import annotations

import contextlib
import logging
import os
import re
import threading
from collections import deque

from aculink.errors import AculinkError

__all__ = ["CONNECT_TIMEOUT_S", "LOCAL_START_S", "POINT_S", "START_MARGIN", "machine_workers",
           "check_workers", "check_scheduler_address", "local_workers_for", "RunStats", "register_warm_up",
           "open_runner", "run_tasks"]

#: Seconds to wait for an external scheduler before giving up.
CONNECT_TIMEOUT_S = 5.0
#: Seconds a local cluster takes to start, workers ready to run our tasks (10-15 s measured
#: on 2 shared cores; the low end, so the serial choice is never made for a sweep that a
#: cluster would speed up by much).
LOCAL_START_S = 10.0
#: Seconds of one core per receiver position with the real stages: the cheap end of what the
#: bundled and generated sites cost (0.1-0.5 s a point), so the estimate errs towards serial.
POINT_S = 0.1
#: The saving must exceed the start-up cost by this factor before a cluster is started.
START_MARGIN = 1.5

_ADDRESS = re.compile(r"^(tcp|tls|inproc|ws|wss)://[^\s/:]+(:\d+)?/?$|^[^\s/:]+:\d+$")


def machine_workers() -> int:
    """Cores this process may use (the default number of local workers)."""
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except AttributeError:  # pragma: no cover - not Linux
        return max(1, os.cpu_count() or 1)


def check_workers(workers):
    """Validate ``workers`` (None, or a whole number in [0, 4 x cores]); return it as int/None."""
    if workers is None:
        return None
    high = 4 * machine_workers()
    try:
        n = int(workers)
    except (TypeError, ValueError):
        n = None
    if n is None or n != workers or not 0 <= n <= high:
        raise AculinkError(f"workers = {workers!r}: allowed range is [0, {high}] (0 or 1: serial)")
    return n


def check_scheduler_address(address: str) -> str:
    """Validate the shape of a scheduler address such as ``tcp://10.0.0.5:8786``."""
    address = str(address).strip()
    if not _ADDRESS.match(address):
        raise AculinkError(f"scheduler = {address!r}: expected an address such as tcp://host:8786")
    return address


def local_workers_for(n_points: int, n_tasks: int, cores: int | None = None) -> int:
    """Local workers the default (``workers=None``) uses for ``n_points`` in ``n_tasks`` tasks.

    Rule: with ``n = min(cores, n_tasks)`` workers, a cluster saves about
    ``n_points POINT_S (1 - 1/n)`` seconds over a serial run and costs ``LOCAL_START_S`` to
    start; it is used (``n`` returned) only when the saving is at least ``START_MARGIN``
    times the cost, otherwise the run is serial (1 returned). On 2 cores that is 300 points
    and more.
    """
    n = min(machine_workers() if cores is None else int(cores), int(n_tasks))
    if n < 2:
        return 1
    saving = n_points * POINT_S * (1.0 - 1.0 / n)
    return n if saving >= START_MARGIN * LOCAL_START_S else 1


class RunStats:
    """What a run cost, for sizing a cluster (filled by every runner as tasks finish).

    ``task_s``: seconds each task computed, measured where it ran; ``where``: ``"here"`` (this
    process) or the Dask worker's address; ``cluster_wall_s``: seconds from the cluster taking
    its first task to its last result (0 for a serial run); ``cluster_workers``.
    """

    def __init__(self):
        self.task_s = []
        self.where = []
        self.cluster_wall_s = 0.0
        self.cluster_workers = 0

    def add(self, seconds, where):
        self.task_s.append(float(seconds))
        self.where.append(where)

    @property
    def cluster_task_s(self) -> list:
        return [t for t, w in zip(self.task_s, self.where) if w != "here"]

    def overhead_per_task_s(self) -> float:
        """Per task on the cluster: worker-seconds not spent computing (scheduling, transfer,
        idle workers at the end), ``(workers x wall - sum of task times) / tasks``; NaN without
        cluster tasks."""
        done = self.cluster_task_s
        if not done or self.cluster_workers < 1:
            return float("nan")
        return max(0.0, self.cluster_workers * self.cluster_wall_s - sum(done)) / len(done)


def _timed_call(func, shared, item):
    """``func(shared, item)`` with the seconds it took and the worker that ran it."""
    import time

    t0 = time.perf_counter()
    result = func(shared, item)
    seconds = time.perf_counter() - t0
    try:
        from distributed import get_worker

        where = get_worker().address
    except (ImportError, ValueError):
        where = "here"
    return result, seconds, where


def _run_here(func, shared, item, stats):
    import time

    t0 = time.perf_counter()
    result = func(shared, item)
    stats.add(time.perf_counter() - t0, "here")
    return result


class _Serial:
    kind = "serial"
    n_workers = 1

    def __init__(self):
        self.stats = RunStats()

    def run(self, func, shared, items, on_result, *, name="task"):
        for item in items:
            on_result(item, _run_here(func, shared, item, self.stats))


class _External:
    """An existing Dask cluster (connected when opened)."""

    kind = "external"

    def __init__(self, client, warm_up=None):
        self.client = client
        self.n_workers = max(1, len(client.scheduler_info().get("workers", {})))
        self.warm_up = warm_up
        self.stats = RunStats()

    def run(self, func, shared, items, on_result, *, name="task"):
        items = list(items)
        if not items:
            return
        if self.warm_up is not None:
            register_warm_up(self.client, self.warm_up)
        _run_on_client(self.client, func, shared, deque(items), on_result, name, threading.Event(),
                       stats=self.stats)


class _Local:
    """A local cluster started in a background thread while this process works serially."""

    kind = "local"

    def __init__(self, n_workers, warm_up=None):
        self.n_workers = int(n_workers)
        self.warm_up = warm_up
        self.start_error = None
        self.stats = RunStats()

    def run(self, func, shared, items, on_result, *, name="task"):
        queue = deque(items)
        lock = threading.Lock()
        ready = threading.Event()       # the workers are up and own the queue
        stop = threading.Event()        # the run is over (or failed): stop handing out work
        failure = []

        def deliver(item, result):
            with lock:
                on_result(item, result)

        def cluster_side():
            try:
                with _local_client(self.n_workers) as client:
                    if self.warm_up is not None:
                        register_warm_up(client, self.warm_up)
                    if stop.is_set():
                        return
                    ready.set()
                    _run_on_client(client, func, shared, queue, deliver, name, stop, lock=lock,
                                   stats=self.stats)
            except BaseException as exc:  # noqa: BLE001 - handed to the calling thread
                failure.append(exc)
            finally:
                ready.set()

        thread = threading.Thread(target=cluster_side, name="aculink-local-cluster", daemon=True)
        thread.start()
        try:
            while not ready.is_set():
                with lock:
                    item = queue.popleft() if queue else None
                if item is None:
                    break
                deliver(item, _run_here(func, shared, item, self.stats))
            if not queue and not ready.is_set():
                stop.set()  # all done here before the cluster came up: do not wait for it to work
            thread.join()
        except BaseException:
            stop.set()
            thread.join(timeout=30.0)  # let the cluster thread cancel its tasks and close
            raise
        if failure:
            exc = failure[0]
            if isinstance(exc, _StartFailed):
                self.start_error = str(exc)
                # the cluster never ran a task: finish what is left here
                while queue:
                    item = queue.popleft()
                    deliver(item, _run_here(func, shared, item, self.stats))
            else:
                raise exc


class _StartFailed(Exception):
    pass


@contextlib.contextmanager
def _local_client(n):
    """A ``distributed.Client`` on a new local cluster of ``n`` single-threaded processes.

    It listens on 127.0.0.1 only (its dashboard too, on a free port). One numba and BLAS
    thread per worker process: the workers already fill the cores.
    """
    from distributed import Client, LocalCluster

    try:
        cluster = LocalCluster(n_workers=n, threads_per_worker=1, processes=True, host="127.0.0.1",
                               dashboard_address="127.0.0.1:0", silence_logs=logging.ERROR,
                               env={"NUMBA_NUM_THREADS": "1", "OMP_NUM_THREADS": "1"})
    except (RuntimeError, OSError) as exc:
        # worker processes re-import the calling script: a script that starts a sweep at module
        # level (no main guard) makes every worker fail to start
        raise _StartFailed(f"the local Dask workers failed to start ({exc}); in a script, call "
                           "run_sweep under 'if __name__ == \"__main__\":'") from None
    client = Client(cluster, set_as_default=False)
    try:
        yield client
    finally:
        client.close()
        cluster.close()


def _connect(address, timeout_s):
    from distributed import Client

    try:
        return Client(address, timeout=f"{timeout_s}s", set_as_default=False)
    except (OSError, TimeoutError) as exc:
        raise AculinkError(f"cannot reach the Dask scheduler at {address} within "
                           f"{timeout_s:g} s ({type(exc).__name__})") from None


def register_warm_up(client, warm_up) -> None:
    """Have every worker, present or joining later, call ``warm_up()`` once when it starts.

    A worker then loads (or compiles, with a cold cache) the numba kernels once, before its
    first task, and never again: a worker process lives for the whole run.
    """
    from distributed.diagnostics.plugin import WorkerPlugin

    class WarmUp(WorkerPlugin):
        name = "aculink-warm-up"

        def setup(self, worker):
            warm_up()

    client.register_plugin(WarmUp(), name="aculink-warm-up")


def _run_on_client(client, func, shared, queue, on_result, name, stop, *, lock=None, stats=None):
    """Submit every queued item to ``client`` (shared data scattered once) and collect them."""
    with client.as_current():
        _submit_and_collect(client, func, shared, queue, on_result, name, stop,
                            lock or contextlib.nullcontext(), RunStats() if stats is None else stats)


def _submit_and_collect(client, func, shared, queue, on_result, name, stop, lock, stats):
    import time

    from distributed import as_completed
    from distributed.client import FutureCancelledError
    from distributed.scheduler import KilledWorker

    shared_future = client.scatter(shared, broadcast=True, hash=False)
    futures = {}
    with lock:
        items = list(queue)
        queue.clear()
    t0 = time.perf_counter()
    stats.cluster_workers = max(1, len(client.scheduler_info().get("workers", {})))
    for k, item in enumerate(items):
        fut = client.submit(_timed_call, func, shared_future, item, pure=False,
                            key=f"aculink-{name}-{k}-{os.getpid()}-{id(items)}")
        futures[fut.key] = (fut, item)
    try:
        for fut in as_completed([f for f, _ in futures.values()]):
            if stop.is_set():
                break
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
            result, seconds, where = result
            stats.add(seconds, where)
            stats.cluster_wall_s = time.perf_counter() - t0
            on_result(item, result)
    finally:
        for fut, _ in futures.values():
            fut.cancel()


@contextlib.contextmanager
def open_runner(*, workers=None, scheduler=None, n_points=0, n_tasks=0, timeout_s=CONNECT_TIMEOUT_S,
                warm_up=None):
    """Check the options, connect, and yield a runner with ``run(func, shared, items, on_result)``.

    Parameters
    ----------
    workers : int, optional
        Local worker processes; 0 or 1 run serially in this process; None chooses from the
        work (:func:`local_workers_for`).
    scheduler : str, optional
        Address of an existing Dask scheduler (``tcp://host:port``); excludes ``workers``.
    n_points, n_tasks : int
        The work to do (receiver positions, tasks), for the default choice.
    timeout_s : float
        How long to wait for the scheduler.
    warm_up : callable, optional
        Called once on every Dask worker when it starts (see :func:`register_warm_up`).

    Raises
    ------
    AculinkError
        A bad ``workers``, a malformed or unreachable scheduler, both options given; raised
        before the caller has done anything, so it can refuse before writing.
    """
    n = check_workers(workers)
    if scheduler is not None:
        if n is not None:
            raise AculinkError("workers and scheduler together: give one (workers for a local "
                               "cluster, scheduler for an existing one)")
        client = _connect(check_scheduler_address(scheduler), timeout_s)
        try:
            yield _External(client, warm_up)
        finally:
            client.close()
        return
    if n is None:
        n = local_workers_for(n_points, n_tasks)
    n = min(n, max(1, int(n_tasks)))
    yield _Serial() if n <= 1 else _Local(n, warm_up)


def run_tasks(func, shared, items, on_result, *, workers=None, scheduler=None,
              timeout_s=CONNECT_TIMEOUT_S, name="task", n_points=None, warm_up=None):
    """Call ``func(shared, item)`` for every item and hand each result to ``on_result``.

    ``on_result(item, result)`` is called in this process as each task finishes. ``func``
    must be a module-level function (it is shipped to worker processes); ``shared`` is sent
    to each worker once. ``n_points`` (default: one per item) sizes the default choice of
    workers; see :func:`open_runner` for the other arguments. Returns the run's
    :class:`RunStats`.
    """
    items = list(items)
    with open_runner(workers=workers, scheduler=scheduler, timeout_s=timeout_s, warm_up=warm_up,
                     n_points=len(items) if n_points is None else n_points, n_tasks=len(items)) as runner:
        runner.run(func, shared, items, on_result, name=name)
    return runner.stats
