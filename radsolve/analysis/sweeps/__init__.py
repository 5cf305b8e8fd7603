"""Parameter sweeps: the bound levels of a potential family over a grid of parameter values.

:func:`sweep` solves the potential at every point of a grid of parameter values
(one parameter, or the full Cartesian product of two or more) and gathers the
levels in a :class:`SweepResult`: one row per (point, level).

Level identity.  At every point :func:`radsolve.solve` is asked for the same
``count`` lowest levels of each l.  A level is the pair (l, nodes), and its n
and label follow exactly from the node count, so row ``(l, nodes)`` means the
same state at every point.  A level that is not bound at a point (fewer than
``count`` levels exist there) still has its row, with ``bound = False``, no
energy (NaN in memory, an empty cell in CSV, ``null`` in JSON) and
``converged = False``: nothing is dropped.  "Bound" means that ``solve`` found
the level below V(inf).  A level without energy is called ``unbound`` (its
``status``) only when the partial wave's count of bound levels proves it;
otherwise its status is ``missing`` (bound by the count, not resolved) or
``unknown`` (the count is uncertain), and the sweep's status is
``incomplete``, as is that point's solve.

Execution.  The points are independent, so they run

* serially in this process (``workers=1``);
* on local worker processes (``workers=N``; the default ``None`` means every
  core this process may use), through :mod:`concurrent.futures`;
* on a Dask distributed cluster (``cluster="tcp://host:port"`` for a running
  scheduler, ``cluster="local"`` for a local Dask cluster started here, or a
  ``distributed.Client``), with the optional dependency ``radsolve[cluster]``.
  Every worker must be able to import radsolve and, for plug-in potentials,
  read the plug-in file at the same path.
* on an executor of the caller's (``executor=``: threads, processes, an MPI
  pool, or any object with ``map(function, iterable)``).

Each is a back end of :mod:`radsolve.analysis.sweeps.backends`, all behind one interface.

Whatever runs the points, the rows are assembled (and written) in point
order, so the result is identical to the serial run.  The first point is
always solved in this process, so that bad input fails before any worker
starts.  Rows are written to ``out`` as the points finish; on Ctrl-C the
sweep stops, finishes the file with the rows already done and raises
:class:`SweepInterrupted`, which carries the partial result.

Everything is in the family's unit system: atomic (parameters in bohr,
hartree, 1/bohr; energies in hartree) or, for a nuclear family, fm and MeV;
``unit`` converts energies in the exported files only.  With
``spin_orbit=True`` a level is (l, j, nodes) and the rows carry j.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any, Mapping, Sequence

import numpy as np

from radsolve.errors import InputError, RadsolveError
from radsolve.analysis.sweeps.backends import CLUSTER_TIMEOUT, Backend, backend_for, chunk_size, chunks_of, usable_cores
from radsolve.analysis.sweeps.points import Settings, channel_keys, describe_point, level_block
from radsolve.analysis.sweeps.progress import Progress
from radsolve.analysis.sweeps.ranges import axes_of, looks_geometric, parameter_values, parse_vary
from radsolve.analysis.sweeps.result import (LEVEL_COLUMNS, LevelTrack, SweepInterrupted, SweepPointFailed,
                                            SweepResult, point_rows)
from radsolve.analysis.sweeps.sinks import check_out_path, open_sink

__all__ = ["CLUSTER_TIMEOUT", "LEVEL_COLUMNS", "LevelTrack", "SweepInterrupted", "SweepPointFailed", "SweepResult",
           "parameter_values", "parse_vary", "sweep", "usable_cores"]


def sweep(potential, vary: Mapping[str, Sequence], *, fixed: Mapping[str, Any] | None = None, l=0,
          count: int = 5, mass=None, tol: float = 1e-10, method: str = "fd", plugins=None,
          workers: int | None = None, cluster=None, executor=None, out=None, unit: str | None = None,
          progress: bool | None = None, spin_orbit: bool = False, dimension: int = 3,
          units: str | None = None, equation: str = "schrodinger") -> SweepResult:
    """Solve a potential family at every point of a grid of parameter values.

    Parameters
    ----------
    potential : str or Potential
        A family name (``"yukawa"``) or a Potential whose parameters are the
        starting point.
    vary : dict of str to sequence
        Parameter name -> values (numbers in the family's units -- atomic,
        or MeV and fm for a nuclear family -- or strings with units such as
        ``"2angstrom"``).  Two or more parameters make the full grid
        (Cartesian product; the last parameter varies fastest).
    fixed : dict, optional
        Other parameters; the rest take their defaults.
    l : int or sequence of int
        Orbital angular momenta.
    count : int
        Levels per l (per (l, j) with spin-orbit) at every point; each has a
        row at every point, bound or not.
    mass, tol, method, plugins, spin_orbit, dimension, units, equation :
        As for :func:`radsolve.solve` (mass in the unit system's mass unit or
        particle names; tol the relative error asked of each energy; with
        ``equation="dirac"`` a level is (l, j, nodes) and the rows carry j).
    workers : int, optional
        Local worker processes; ``None`` = every usable core, 1 = serial in
        this process.  With ``cluster="local"``: the number of Dask workers.
    cluster : str or distributed.Client, optional
        ``"tcp://host:port"`` of a running Dask scheduler, ``"local"`` for a
        local Dask cluster started (and stopped) here, or a Client.
    executor : optional
        Run the points on an executor of your own instead: a
        :class:`concurrent.futures.Executor` (threads, processes, an MPI pool)
        or any object with ``map(function, iterable)``; it is left open.
        Not together with ``cluster``; ``workers`` is then ignored.
    out : path or text stream, optional
        Write the rows there as the points finish: ``.csv`` or ``.json`` by
        the file name, a stream gets CSV; ``.nc`` writes a NetCDF file of
        :meth:`SweepResult.to_xarray` at the end (needs ``radsolve[xarray]``).
    unit : str, optional
        The output energy unit (of ``out``; the name ``unit`` means that
        everywhere in radsolve, ``units`` the unit system); default the unit
        system's (hartree, or MeV for a nuclear family), in which the result
        itself is.
    progress : bool, optional
        Progress bar on stderr; default: only when stderr is a terminal.

    Returns
    -------
    SweepResult
        Energies in the unit system's energy unit (``result.energy_unit``).

    Raises
    ------
    InputError, PluginError, UnboundedBelowError
        Bad input, or a point where the potential cannot be solved (the
        message names the point).
    SweepInterrupted
        On Ctrl-C; ``.partial`` holds the points finished, which are also in ``out``.
    """
    from radsolve.potentials import as_potential
    from radsolve.units import energy_unit_factor

    base = as_potential(potential, plugins, fixed)
    axes = axes_of(base, vary)
    both = sorted(set(axes) & set(fixed or {}))
    if both:
        raise InputError(f"parameter {both[0]!r} is given both in vary and in fixed; a swept parameter "
                         "takes its values from vary only", parameter="fixed")
    if workers is not None and (isinstance(workers, bool) or not isinstance(workers, (int, np.integer))
                                or workers < 1):
        raise InputError(f"workers must be a whole number >= 1 (or None for every core), got {workers!r}",
                         parameter="workers")
    if unit is not None:
        energy_unit_factor(unit)  # checks the unit before anything is solved
    from radsolve.units import unit_system

    declared = getattr(base.family, "units", "atomic")
    mass = unit_system(declared if units is None else units).parse_mass(mass)
    from radsolve.core.relativistic import validated_equation

    options = dict(mass=mass, tol=tol, method=method, spin_orbit=bool(spin_orbit), dimension=dimension,
                   units=units, equation=validated_equation(equation))

    path = None if out is None or hasattr(out, "write") else check_out_path(out)
    netcdf = path is not None and path.suffix.lower() == ".nc"
    if netcdf:
        _check_netcdf_engine(path)
    # Chosen (and a cluster connected) first, so that an unreachable scheduler is reported at once.
    backend = backend_for(workers, cluster, executor, int(np.prod([len(v) for v in axes.values()])),
                          timeout=CLUSTER_TIMEOUT)
    try:
        try:
            result = _sweep_points(base, axes, l, count, options, backend, None if netcdf else out, unit,
                                   progress)
        except SweepInterrupted as stop:
            if netcdf:
                stop.partial.to_netcdf(out, unit=unit)
            raise
        if netcdf:
            result.to_netcdf(out, unit=unit)
        return result
    finally:
        backend.close()


def _check_netcdf_engine(path: Path) -> None:
    import importlib.util

    if importlib.util.find_spec("xarray") is None:
        raise InputError(f"output file {str(path)!r}: NetCDF needs xarray: pip install 'radsolve[xarray]'",
                         parameter="out")


def _sweep_points(base, axes, l, count, options, backend: Backend, out, unit, progress) -> SweepResult:
    from radsolve.core.spectrum import solve

    keys = tuple(axes)
    family = base.family
    bar = Progress(int(np.prod([len(axes[k]) for k in keys])), f"sweep {family.name}", progress)
    # The first point, solved here, checks l, count, mass, tol, method and the
    # unit system with solve's own messages before any worker starts.
    first_values = tuple(float(axes[k][0]) for k in keys)
    try:
        first = solve(base.with_parameters(**dict(zip(keys, first_values))), l=l, count=count, **options)
    except RadsolveError as exc:
        if isinstance(exc, InputError) and exc.parameter is not None and exc.family is None:
            raise  # about an argument (tol, count, ...), the same at every point
        raise type(exc)(f"sweep point {describe_point(keys, first_values)}: {exc}") from None
    from radsolve.units import unit_system

    ls = _solved_ls(l)
    channels = channel_keys(ls, options["spin_orbit"] or options["equation"] == "dirac")
    system = unit_system(first.units)
    settings = Settings(base=base, keys=keys, ls=tuple(ls), channels=channels, count=int(count),
                         mass=float(first.mass), tol=float(first.tol), method=options["method"],
                         spin_orbit=options["spin_orbit"], dimension=int(first.dimension),
                         units=system.name, equation=options["equation"])
    shape = tuple(len(axes[k]) for k in keys)
    total = int(np.prod(shape))
    nl = len(channels)
    result = SweepResult(
        potential=family.name, parameters=keys, axes=axes,
        fixed={k: v for k, v in base.parameters.items() if k not in keys},
        parameter_units={k: family.parameters[k].unit for k in family.parameters},
        ls=tuple(ls), channels=channels, count=int(count), mass=settings.mass, tol=settings.tol,
        method=settings.method, spin_orbit=settings.spin_orbit, dimension=settings.dimension,
        units=system.name, energy_unit=system.energy_unit,
        energy=np.full((total, nl, count), np.nan), error_estimate=np.full((total, nl, count), np.nan),
        converged=np.zeros((total, nl, count), dtype=bool), bound=np.zeros((total, nl, count), dtype=bool),
        v_infinity=np.full(total, np.nan), done=np.zeros(total, dtype=bool),
        level_status=np.full((total, nl, count), None, dtype=object),
        point_status=np.full(total, None, dtype=object), point_notes=[()] * total,
        log_spaced={k: looks_geometric(axes[k]) for k in keys}, base=base, equation=options["equation"],
    )

    unit = unit or system.energy_unit
    factor = result.unit_factor(unit)
    sink, stream = open_sink(out, result.columns, unit)
    if sink is not None:
        sink.start(result)
    waiting: dict[int, tuple] = {}
    state = {"next": 0}

    def write(index: int, block: tuple) -> None:
        if sink is not None:
            for row in point_rows(result, index, result.point_values(index), block, factor):
                sink.write_row(row)

    def collect(pairs) -> None:
        for index, block in pairs:
            result.store(index, block)
            waiting[index] = block
        # Rows go out in point order, so the file does not depend on who finished first.
        while state["next"] in waiting:
            write(state["next"], waiting.pop(state["next"]))
            state["next"] += 1
        if sink is not None:
            sink.flush()
        bar.update(result.points_done)

    def values_of(index: int) -> tuple:
        return result.point_values(index)

    try:
        try:
            collect([(0, level_block(first, channels, int(count)))])
            size = chunk_size(total, backend.width)
            backend.run(settings, chunks_of(range(1, total), values_of, size), collect)
        except KeyboardInterrupt:
            for index in sorted(waiting):  # finished out of order: keep them too
                write(index, waiting.pop(index))
            raise SweepInterrupted(result) from None
        finally:
            bar.close()
            if sink is not None:
                sink.finish(result)
    finally:
        if stream is not None:
            stream.close()
    return result


def _solved_ls(l) -> list[int]:
    """The l values solve() accepted (it validated and sorted them)."""
    if isinstance(l, (int, np.integer)):
        return [int(l)]
    return sorted({int(v) for v in l})
