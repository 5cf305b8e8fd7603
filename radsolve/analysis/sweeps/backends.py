"""Where the points run -- this process, worker processes, any map-like executor, a Dask cluster -- behind one interface.

A back end is an object with ``width`` (how many chunks it works on at once, which sets the
chunk size), ``run(settings, chunks, collect)`` and ``close()``; :func:`backend_for` picks one
from ``sweep()``'s ``workers``, ``cluster`` and ``executor``.  ``run`` sends each chunk (a list
of ``(index, values)``) to :func:`points.solve_chunk` somewhere and hands every returned list
of ``(index, block)`` to ``collect``, in any order (the caller writes rows in point order).
On Ctrl-C it stops promptly and still hands over the chunks that had finished, then re-raises.
"""

from __future__ import annotations

import os
import signal
from typing import Callable, Iterable, Protocol


from radsolve.errors import InputError
from radsolve.analysis.sweeps.points import RUN, solve_chunk, solved_in_order


#: Seconds to wait for a Dask scheduler to answer.
CLUSTER_TIMEOUT = 10.0


def _ignore_sigint() -> None:
    # Worker processes leave Ctrl-C to the parent, which stops the sweep cleanly;
    # otherwise every worker would print its own traceback.
    signal.signal(signal.SIGINT, signal.SIG_IGN)


def usable_cores() -> int:
    """Cores this process may run on."""
    try:
        return max(len(os.sched_getaffinity(0)), 1)
    except AttributeError:  # not on every platform
        return max(os.cpu_count() or 1, 1)


def chunks_of(indices: Iterable[int], settings_values: Callable[[int], tuple], size: int):
    chunk = []
    for index in indices:
        chunk.append((index, settings_values(index)))
        if len(chunk) == size:
            yield chunk
            chunk = []
    if chunk:
        yield chunk


def chunk_size(points: int, workers: int) -> int:
    """Points per chunk: whole runs of continued points (:data:`points.RUN`), so that a
    point's row does not depend on the back end.  Small chunks keep Ctrl-C prompt and
    the load balanced; big enough that sending a task (~1 ms) costs little."""
    runs = min(max(points // (workers * 32 * RUN), 1), 2)
    return int(runs * RUN)


class Backend(Protocol):
    """What runs a sweep's chunks (see the module docstring)."""

    width: int

    def run(self, settings, chunks, collect) -> None: ...

    def close(self) -> None: ...


class Serial:
    """Every point in this process, one after the other."""

    width = 1

    def run(self, settings, chunks, collect) -> None:
        for chunk in chunks:
            for pair in solved_in_order(settings, chunk):
                collect([pair])  # each row as soon as it is done (Ctrl-C keeps it)

    def close(self) -> None:
        pass


class ProcessPool:
    """``workers`` local processes, started for the sweep and stopped after it."""

    def __init__(self, workers: int):
        self.width = workers

    def run(self, settings, chunks, collect) -> None:
        run_pool(settings, chunks, self.width, collect)

    def close(self) -> None:
        pass


class OwnExecutor:
    """The caller's executor (left open): a ``concurrent.futures.Executor`` or anything with ``map``."""

    def __init__(self, executor):
        from concurrent.futures import Executor

        if not isinstance(executor, Executor) and not callable(getattr(executor, "map", None)):
            raise InputError(f"executor must be a concurrent.futures.Executor or have a map(function, "
                             f"iterable) method; got {type(executor).__name__}", parameter="executor")
        self.executor = executor
        self.width = int(getattr(executor, "_max_workers", None) or usable_cores())

    def run(self, settings, chunks, collect) -> None:
        run_executor(settings, chunks, self.executor, collect)

    def close(self) -> None:
        pass


class DaskCluster:
    """A Dask distributed cluster: a scheduler's address, ``"local"`` (started here), or a Client."""

    def __init__(self, cluster, workers: int | None, timeout: float = CLUSTER_TIMEOUT):
        self.client, self._close_client, self._local = dask_client(cluster, workers, timeout)

    @property
    def width(self) -> int:
        return max(sum(self.client.nthreads().values()), 1)

    def run(self, settings, chunks, collect) -> None:
        run_dask(settings, chunks, self.client, collect)

    def close(self) -> None:
        if self._close_client:
            self.client.close()
        if self._local is not None:
            self._local.close()


def backend_for(workers: int | None, cluster, executor, points: int,
                timeout: float = CLUSTER_TIMEOUT) -> Backend:
    """The back end for ``sweep(workers=..., cluster=..., executor=...)`` of ``points`` points.

    A cluster is connected here, so that an unreachable scheduler is reported before anything is solved.
    """
    if executor is not None and cluster is not None:
        raise InputError("executor and cluster: give one or the other", parameter="executor")
    if executor is not None:
        return OwnExecutor(executor)
    if cluster is not None:
        return DaskCluster(cluster, workers, timeout)
    # The first point is solved in the calling process, so the others need at most points - 1 workers.
    n = min(usable_cores() if workers is None else int(workers), max(points - 1, 1))
    return Serial() if n <= 1 else ProcessPool(n)



def run_pool(settings, chunks, workers: int, collect) -> None:
    """The chunks on ``workers`` local processes (started and stopped here)."""
    from functools import partial

    run_processes(partial(solve_chunk, settings), chunks, workers, collect)


def run_processes(function, items, workers: int, collect) -> None:
    """``collect(function(item))`` for every item, on ``workers`` local processes (started and
    stopped here), in the order they finish.  ``function`` must be picklable (a module-level
    function or a partial of one); Ctrl-C lets the running items finish, collects them and re-raises."""
    from concurrent.futures import ProcessPoolExecutor

    executor = ProcessPoolExecutor(max_workers=workers, initializer=_ignore_sigint)
    try:
        _run_windowed(executor, function, items, 4 * workers, collect)
    except KeyboardInterrupt:
        # Chunks already running finish (they are small); their rows were kept.
        executor.shutdown(wait=True, cancel_futures=True)
        raise
    except BaseException:
        executor.shutdown(wait=False, cancel_futures=True)
        raise
    executor.shutdown(wait=True)


def run_executor(settings, chunks, executor, collect) -> None:
    """The chunks on a caller's executor, which stays open.

    A :class:`concurrent.futures.Executor` (threads, processes, MPI pools, ...)
    gets a bounded window of ``submit`` calls; any other object with a
    ``map(function, iterable)`` method (multiprocessing pools, a cluster's
    map) gets one ``map`` call and must return the results in order.
    """
    from concurrent.futures import Executor
    from functools import partial

    if isinstance(executor, Executor):
        width = getattr(executor, "_max_workers", None) or usable_cores()
        _run_windowed(executor, partial(solve_chunk, settings), chunks, 4 * int(width), collect)
    elif callable(getattr(executor, "map", None)):
        for pairs in executor.map(partial(solve_chunk, settings), chunks):
            collect(pairs)
    else:
        raise InputError(f"executor must be a concurrent.futures.Executor or have a map(function, iterable) "
                         f"method; got {type(executor).__name__}", parameter="executor")


def _run_windowed(executor, function, items, window: int, collect) -> None:
    """Submit ``function(item)`` keeping at most ``window`` in flight; collect each as it finishes."""
    from concurrent.futures import FIRST_COMPLETED, wait

    pending: set = set()
    try:
        for item in items:
            pending.add(executor.submit(function, item))
            if len(pending) >= window:
                done, pending = wait(pending, return_when=FIRST_COMPLETED)
                for future in done:
                    collect(future.result())
        while pending:
            done, pending = wait(pending, return_when=FIRST_COMPLETED)
            for future in done:
                collect(future.result())
    except KeyboardInterrupt:
        for future in pending:
            future.cancel()
        wait(pending)
        for future in pending:
            if future.done() and not future.cancelled() and future.exception() is None:
                collect(future.result())
        raise


def dask_client(cluster, workers: int | None, timeout: float = CLUSTER_TIMEOUT):
    """``(client, close_client, local_cluster)`` for ``cluster``: an address, ``"local"`` or a Client."""
    # An address that cannot be one is refused before Dask is looked for.
    if isinstance(cluster, str) and cluster.strip() and cluster.strip() != "local" and "://" not in cluster:
        raise InputError(f"--cluster {cluster.strip()!r}: expected 'local' or a scheduler address "
                         "such as tcp://host:8786", parameter="cluster")
    try:
        import distributed
    except ImportError:
        raise InputError("--cluster needs Dask distributed, the optional dependency of "
                         "radsolve[cluster]: pip install 'radsolve[cluster]'", parameter="cluster") from None
    if isinstance(cluster, distributed.Client):
        return cluster, False, None
    if not isinstance(cluster, str) or not cluster.strip():
        raise InputError(f"cluster must be 'local', a scheduler address such as tcp://host:8786, "
                         f"or a distributed.Client; got {cluster!r}", parameter="cluster")
    address = cluster.strip()
    import logging

    if address == "local":
        n = workers if workers is not None else usable_cores()
        # No dashboard, and the scheduler's small HTTP server on a free loopback
        # port, so that a second cluster on this machine does not clash.  Its logs
        # only at CRITICAL: a worker whose heartbeat meets the scheduler already
        # closing logs a traceback at ERROR when we shut the cluster down; a task's
        # own failure reaches us through its future, not through the log.
        local = distributed.LocalCluster(n_workers=n, threads_per_worker=1, processes=True,
                                         host="127.0.0.1", dashboard_address=None,
                                         scheduler_kwargs={"dashboard_address": "127.0.0.1:0"},
                                         silence_logs=logging.CRITICAL)
        return distributed.Client(local), True, local
    try:
        client = distributed.Client(address, timeout=timeout)
    except (OSError, TimeoutError, ValueError) as exc:
        raise InputError(f"--cluster {address!r}: no Dask scheduler answered there within "
                         f"{timeout:g} s ({type(exc).__name__}: {exc}); start one "
                         "(dask scheduler) or use --cluster local") from None
    return client, True, None


def run_dask(settings, chunks, client, collect) -> None:
    from distributed import as_completed

    window = 4 * max(sum(client.nthreads().values()), 1)
    futures = as_completed()
    live: list = []
    try:
        for chunk in chunks:
            future = client.submit(solve_chunk, settings, chunk, pure=False)
            futures.add(future)
            live.append(future)
            if futures.count() >= window:
                finished = next(futures)
                live.remove(finished)
                collect(finished.result())
        for finished in futures:
            live.remove(finished)
            collect(finished.result())
    except BaseException:
        client.cancel(live)
        raise
