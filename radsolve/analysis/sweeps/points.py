"""One sweep point: the settings every point shares and the solve of one point (run in any process)."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Sequence

import numpy as np

from radsolve.core.result import certificate_key
from radsolve.errors import RadsolveError
from radsolve.analysis.sweeps.result import MISSING, UNBOUND, UNCERTAIN, SweepPointFailed, describe_values


@dataclass(frozen=True)
class Settings:
    """What every point of a sweep shares; sent to the workers."""

    base: Any  # Potential
    keys: tuple[str, ...]
    ls: tuple[int, ...]
    channels: tuple[tuple[int, float | None], ...]
    count: int
    mass: float
    tol: float
    method: str
    spin_orbit: bool
    dimension: int
    units: str
    equation: str = "schrodinger"


def describe_point(keys, values) -> str:
    return describe_values(keys, values)


#: Points are solved in runs of this many consecutive points (after the first point,
#: which is solved alone), each continuing from the one before it
#: (``solve(continue_from=...)``).  Runs start at fixed indices and every back end's
#: chunks hold whole runs, so a point's row does not depend on the back end.  The
#: first point of a run plans its box from scratch (about half a dozen continued
#: points' worth of work), so runs are long; a chunk of one or two runs is still
#: well under a second of work.
RUN = 32


def run_of(index: int) -> int:
    """The run a point belongs to (point 0 is alone, run -1)."""
    return (index - 1) // RUN if index > 0 else -1


def solve_point(settings: Settings, values: tuple, neighbour=None) -> tuple:
    """Energies, errors, converged and bound flags (shape (len(ls), count)) and V(inf)."""
    return _solved(settings, values, neighbour)[0]


def _solved(settings: Settings, values: tuple, neighbour=None):
    """(the point's block, its SolveResult)."""
    from radsolve.core.spectrum import solve

    try:
        pot = settings.base.with_parameters(**dict(zip(settings.keys, values)))
        result = solve(pot, l=list(settings.ls), count=settings.count, mass=settings.mass,
                       tol=settings.tol, method=settings.method, spin_orbit=settings.spin_orbit,
                       dimension=settings.dimension, units=settings.units, continue_from=neighbour,
                       equation=settings.equation)
    except RadsolveError as exc:
        raise type(exc)(f"sweep point {describe_point(settings.keys, values)}: {exc}") from None
    except (KeyboardInterrupt, MemoryError):
        raise
    except Exception as exc:  # a solver bug: say where, so that it can be reproduced
        raise SweepPointFailed(f"sweep point {describe_point(settings.keys, values)}: the solver "
                               f"failed with {type(exc).__name__}: {exc}") from exc
    return level_block(result, settings.channels, settings.count), result


def channel_keys(ls: Sequence[int], spin_orbit: bool) -> tuple[tuple[int, float | None], ...]:
    """The partial waves (l, j) solved, in the order of their rows (j = None without spin-orbit)."""
    keys: list[tuple[int, float | None]] = []
    for l in ls:
        js = ([0.5] if l == 0 else [l - 0.5, l + 0.5]) if spin_orbit else [None]
        keys += [(l, j) for j in js]
    return tuple(keys)


def level_block(result, channels: Sequence[tuple[int, float | None]], count: int) -> tuple:
    """One point's arrays (shape (len(channels), count)) and what its solve said about itself.

    ``(energy, error, converged, bound, v_inf, state, outcome, notes)``: ``state`` is each level's
    :data:`LEVEL_STATES` entry -- the refinement status of a level found, else why it has no
    energy (``unbound`` only when the count of bound levels proves it); ``outcome`` the solve's
    status and ``notes`` its notes.
    """
    shape = (len(channels), count)
    energy = np.full(shape, np.nan)
    error = np.full(shape, np.nan)
    converged = np.zeros(shape, dtype=bool)
    bound = np.zeros(shape, dtype=bool)
    state = np.empty(shape, dtype=object)
    row_of = {key: i for i, key in enumerate(channels)}
    for lev in result.levels:
        i, k = row_of[(lev.l, getattr(lev, "j", None))], lev.nodes
        energy[i, k] = lev.energy
        error[i, k] = lev.error_estimate
        converged[i, k] = lev.converged
        bound[i, k] = True
        state[i, k] = str(lev.status) if lev.status is not None else ("converged" if lev.converged
                                                                      else "not converged")
    certificates = getattr(result, "certificates", None) or {}
    for i, (l, j) in enumerate(channels):
        cert = certificates.get(certificate_key(l, j))
        for k in range(count):
            if not bound[i, k]:
                state[i, k] = _missing_state(cert, k)
    outcome = str(getattr(result, "status", "success"))
    return energy, error, converged, bound, float(result.v_infinity), state, outcome, \
        tuple(getattr(result, "notes", ()))


def _missing_state(cert, nodes: int) -> str:
    """Why the level with ``nodes`` nodes has no energy, from its partial wave's count of bound levels."""
    if cert is None or not cert.certain:
        return UNCERTAIN
    if cert.count is not None and nodes >= cert.count:
        return UNBOUND  # proven: the count says fewer are bound
    return MISSING  # bound by the count, but not resolved (too weakly bound for the largest box)


def solve_chunk(settings: Settings, chunk: Sequence[tuple[int, tuple]]) -> list[tuple[int, tuple]]:
    """``solve_point`` for each ``(index, values)`` of ``chunk`` (see :func:`solved_in_order`)."""
    return list(solved_in_order(settings, chunk))


def solved_in_order(settings: Settings, chunk: Sequence[tuple[int, tuple]]):
    """Yield ``(index, block)`` for each point of ``chunk`` as it is solved, each continuing
    from the point before it when both are in the same run (see :data:`RUN`)."""
    previous, previous_index = None, None
    for index, values in chunk:
        neighbour = previous if (previous_index == index - 1 and run_of(index) == run_of(previous_index)) else None
        block, previous = _solved(settings, values, neighbour)
        previous_index = index
        yield index, block
