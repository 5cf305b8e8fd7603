"""Long energy grids of the continuum commands: fixed pieces, a progress bar, worker processes.

The energies of one call are cut into consecutive pieces of :data:`PIECE`
energies, whatever the number of workers, and each piece is one independent
computation (its own grids: the continuum solver chooses them from the
energies it is given).  So the rows are the same serially and on any number of
worker processes.  Progress is drawn with the sweeps' bar
(:class:`radsolve.analysis.sweeps.progress.Progress`).
"""

from __future__ import annotations

from radsolve.errors import InputError

#: Energies per piece of work (fixed, so that rows do not depend on the worker count).
PIECE = 512
#: Most worker processes.
WORKERS_MAX = 256


def validated_workers(workers) -> int:
    """``workers`` as a count >= 1 (None: 1, serial)."""
    if workers is None:
        return 1
    if isinstance(workers, bool) or not isinstance(workers, int) or not 1 <= workers <= WORKERS_MAX:
        raise InputError(f"workers must be a whole number from 1 to {WORKERS_MAX} (got {workers!r}); "
                         "1 runs in this process", parameter="workers")
    return int(workers)


def pieces(size: int) -> list[slice]:
    """Consecutive slices of at most :data:`PIECE` of ``size`` energies."""
    return [slice(i, min(i + PIECE, size)) for i in range(0, size, PIECE)]


def run_pieces(function, tasks: list, workers: int, progress: bool | None, what: str,
               weights: list[int] | None = None) -> list:
    """``[function(*task) for task in tasks]``, on ``workers`` processes when more than one.

    ``function`` must be a module-level function and the tasks picklable.  The
    bar counts ``weights`` (energies) per task.  Ctrl-C stops the workers and
    re-raises.
    """
    from radsolve.analysis.sweeps.progress import Progress

    weights = weights or [1] * len(tasks)
    bar = Progress(sum(weights), what, progress)
    out: list = [None] * len(tasks)
    done = 0
    try:
        if workers <= 1 or len(tasks) <= 1:
            for i, task in enumerate(tasks):
                out[i] = function(*task)
                done += weights[i]
                bar.update(done)
            return out
        from concurrent.futures import ProcessPoolExecutor, as_completed

        from radsolve.analysis.sweeps.backends import _ignore_sigint

        executor = ProcessPoolExecutor(max_workers=min(workers, len(tasks)), initializer=_ignore_sigint)
        try:
            futures = {executor.submit(function, *task): i for i, task in enumerate(tasks)}
            for future in as_completed(futures):
                i = futures[future]
                out[i] = future.result()
                done += weights[i]
                bar.update(done)
        except BaseException:
            executor.shutdown(wait=False, cancel_futures=True)
            raise
        executor.shutdown(wait=True)
        return out
    finally:
        bar.close()
