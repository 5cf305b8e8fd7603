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
    """``[function(*task) for task in tasks]``, on ``workers`` processes when more than one
    (the sweeps' pool, :func:`radsolve.analysis.sweeps.backends.run_processes`).

    ``function`` must be a module-level function and the tasks picklable.  The
    bar counts ``weights`` (energies) per task.  Ctrl-C stops the workers and
    re-raises.
    """
    from functools import partial

    from radsolve.analysis.sweeps.progress import Progress

    weights = weights or [1] * len(tasks)
    bar = Progress(sum(weights), what, progress)
    out: list = [None] * len(tasks)
    done = 0

    def collect(indexed) -> None:
        nonlocal done
        i, value = indexed
        out[i] = value
        done += weights[i]
        bar.update(done)

    try:
        if workers <= 1 or len(tasks) <= 1:
            for i, task in enumerate(tasks):
                collect((i, function(*task)))
        else:
            from radsolve.analysis.sweeps.backends import run_processes

            run_processes(partial(_indexed, function), list(enumerate(tasks)), min(workers, len(tasks)), collect)
        return out
    finally:
        bar.close()


def _indexed(function, item):
    """(i, function(*task)) of an item (i, task): results keep their place whatever finishes first."""
    i, task = item
    return i, function(*task)
