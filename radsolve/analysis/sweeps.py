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
the level below V(inf); a level bound by less than the box resolution that
``solve`` reports in its message counts as unbound.

Execution.  The points are independent, so they run

* serially in this process (``workers=1``);
* on local worker processes (``workers=N``; the default ``None`` means every
  core this process may use), through :mod:`concurrent.futures`;
* on a Dask distributed cluster (``cluster="tcp://host:port"`` for a running
  scheduler, ``cluster="local"`` for a local Dask cluster started here, or a
  ``distributed.Client``), with the optional dependency ``radsolve[cluster]``.
  Every worker must be able to import radsolve and, for plug-in potentials,
  read the plug-in file at the same path.

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

import csv
import io
import json
import math
import os
import signal
import sys
import time
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Callable, Iterable, Iterator, Mapping, Sequence

import numpy as np

from radsolve.core.serialize import plain as _plain
from radsolve.errors import InputError, RadsolveError
from radsolve.core.result import level_designation

#: Columns of a sweep row after the parameter columns, in order (``j`` only
#: with spin-orbit splitting).
LEVEL_COLUMNS = ("l", "j", "n", "nodes", "label", "energy", "error_estimate", "converged", "bound",
                 "v_infinity")

#: Seconds to wait for a Dask scheduler to answer.
CLUSTER_TIMEOUT = 10.0


class SweepPointFailed(RuntimeError):
    """The solver failed unexpectedly at one point (a bug, not bad input); the message names the point."""


class SweepInterrupted(KeyboardInterrupt):
    """Ctrl-C during a sweep; ``partial`` is the :class:`SweepResult` of the points finished.

    When the sweep wrote to a file, that file holds exactly those rows (a JSON
    file is closed properly and says ``"complete": false``).
    """

    def __init__(self, partial: "SweepResult"):
        super().__init__(f"sweep interrupted after {partial.points_done} of "
                         f"{partial.points_total} points")
        self.partial = partial


# --------------------------------------------------------------------------- #
# Parameter values
# --------------------------------------------------------------------------- #

def parameter_values(start: float, stop: float, num: int, log: bool = False, name: str = "value") -> np.ndarray:
    """``num`` values from ``start`` to ``stop`` inclusive, evenly or geometrically spaced.

    Parameters
    ----------
    start, stop : float
        Ends of the range, in the parameter's atomic unit.
    num : int
        Number of values, >= 1 (``num = 1`` gives ``[start]``).
    log : bool
        Geometric spacing (both ends must be nonzero and of one sign).
    name : str
        How the input is called in error messages.

    Raises
    ------
    InputError
        ``num < 1``, non-finite ends, an empty range (``start == stop`` with
        ``num > 1``) or a geometric range through or from zero.
    """
    if isinstance(num, bool) or not isinstance(num, (int, np.integer)):
        raise InputError(f"{name}: the number of values must be a whole number >= 1, got {num!r}")
    if num < 1:
        raise InputError(f"{name}: the number of values must be >= 1, got {num}")
    start, stop = float(start), float(stop)
    if not (math.isfinite(start) and math.isfinite(stop)):
        raise InputError(f"{name}: the range ends must be finite numbers, got {start}:{stop}")
    if num > 1 and start == stop:
        raise InputError(f"{name}: empty range (start = stop = {start:g}); give two different "
                         "ends, or 1 as the number of values")
    if log:
        if start == 0.0 or stop == 0.0 or (start > 0) != (stop > 0):
            raise InputError(f"{name}: a logarithmic range needs two nonzero ends of the same sign, "
                             f"got {start:g}:{stop:g}")
        return np.geomspace(start, stop, int(num))
    return np.linspace(start, stop, int(num))


def parse_vary(text: str, family, log: bool = False) -> tuple[str, np.ndarray]:
    """Read one ``--vary`` item: ``KEY=START:STOP:NUM`` or ``KEY=V1,V2,...``.

    ``START``, ``STOP`` and the listed values may carry units of the
    parameter's kind (``screening_length=1angstrom:1nm:20``).  ``log`` makes
    a ``START:STOP:NUM`` range geometric.

    Returns
    -------
    (key, values)
        The parameter name and its values in the family's units.

    Raises
    ------
    InputError
        Malformed text, an unknown or non-numeric parameter, a bad value or
        range; the message quotes the item.
    """
    where = f"--vary {text!r}"
    key, sep, spec = text.partition("=")
    key, spec = key.strip(), spec.strip()
    if not sep or not key or not spec:
        raise InputError(f"{where}: expected KEY=START:STOP:NUM (e.g. screening_length=1:10:50) "
                         "or KEY=V1,V2,...")
    param = _numeric_parameter(family, key, where)
    if "," in spec:
        if log:
            raise InputError(f"{where}: --log applies to START:STOP:NUM ranges, not to a list of values")
        items = [item.strip() for item in spec.split(",")]
        if any(not item for item in items):
            raise InputError(f"{where}: empty value in the list")
        return key, np.array([param.parse(item, key, family.name) for item in items])
    parts = spec.split(":")
    if len(parts) == 1:
        return key, np.array([param.parse(parts[0].strip(), key, family.name)])
    if len(parts) != 3 or any(not p.strip() for p in parts):
        raise InputError(f"{where}: expected START:STOP:NUM with three parts, e.g. 1:10:50")
    try:
        num = int(parts[2].strip())
    except ValueError:
        raise InputError(f"{where}: NUM must be a whole number >= 1, got {parts[2].strip()!r}") from None
    start = param.parse(parts[0].strip(), key, family.name)
    stop = param.parse(parts[1].strip(), key, family.name)
    return key, parameter_values(start, stop, num, log, name=where)


def _numeric_parameter(family, key: str, where: str):
    import difflib

    if key not in family.parameters:
        known = list(family.parameters)
        near = difflib.get_close_matches(key, known, n=1)
        hint = f" (did you mean {near[0]!r}?)" if near else ""
        raise InputError(f"{where}: potential {family.name!r} has no parameter {key!r}{hint}; "
                         f"its parameters: {', '.join(known) if known else 'none'}")
    param = family.parameters[key]
    if not param.is_numeric:
        raise InputError(f"{where}: parameter {key!r} of {family.name} is a {param.kind}, not a "
                         "number; only numeric parameters can be swept over a range")
    return param


# --------------------------------------------------------------------------- #
# One point
# --------------------------------------------------------------------------- #

@dataclass(frozen=True)
class _Settings:
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


def _describe_point(keys, values) -> str:
    return ", ".join(f"{k} = {v:.10g}" if isinstance(v, float) else f"{k} = {v}"
                     for k, v in zip(keys, values))


def _solve_point(settings: _Settings, values: tuple) -> tuple:
    """Energies, errors, converged and bound flags (shape (len(ls), count)) and V(inf)."""
    from radsolve.core.spectrum import solve

    try:
        pot = settings.base.with_parameters(**dict(zip(settings.keys, values)))
        result = solve(pot, l=list(settings.ls), count=settings.count, mass=settings.mass,
                       tol=settings.tol, method=settings.method, spin_orbit=settings.spin_orbit,
                       dimension=settings.dimension, units=settings.units)
    except RadsolveError as exc:
        raise type(exc)(f"sweep point {_describe_point(settings.keys, values)}: {exc}") from None
    except (KeyboardInterrupt, MemoryError):
        raise
    except Exception as exc:  # a solver bug: say where, so that it can be reproduced
        raise SweepPointFailed(f"sweep point {_describe_point(settings.keys, values)}: the solver "
                               f"failed with {type(exc).__name__}: {exc}") from exc
    return _block(result, settings.channels, settings.count)


def _channel_keys(ls: Sequence[int], spin_orbit: bool) -> tuple[tuple[int, float | None], ...]:
    """The partial waves (l, j) solved, in the order of their rows (j = None without spin-orbit)."""
    keys: list[tuple[int, float | None]] = []
    for l in ls:
        js = ([0.5] if l == 0 else [l - 0.5, l + 0.5]) if spin_orbit else [None]
        keys += [(l, j) for j in js]
    return tuple(keys)


def _block(result, channels: Sequence[tuple[int, float | None]], count: int) -> tuple:
    shape = (len(channels), count)
    energy = np.full(shape, np.nan)
    error = np.full(shape, np.nan)
    converged = np.zeros(shape, dtype=bool)
    bound = np.zeros(shape, dtype=bool)
    row_of = {key: i for i, key in enumerate(channels)}
    for lev in result.levels:
        i, k = row_of[(lev.l, getattr(lev, "j", None))], lev.nodes
        energy[i, k] = lev.energy
        error[i, k] = lev.error_estimate
        converged[i, k] = lev.converged
        bound[i, k] = True
    return energy, error, converged, bound, float(result.v_infinity)


def _solve_chunk(settings: _Settings, chunk: Sequence[tuple[int, tuple]]) -> list[tuple[int, tuple]]:
    """``_solve_point`` for each ``(index, values)`` of ``chunk``."""
    return [(index, _solve_point(settings, values)) for index, values in chunk]


def _ignore_sigint() -> None:
    # Worker processes leave Ctrl-C to the parent, which stops the sweep cleanly;
    # otherwise every worker would print its own traceback.
    signal.signal(signal.SIGINT, signal.SIG_IGN)


# --------------------------------------------------------------------------- #
# The result
# --------------------------------------------------------------------------- #

@dataclass
class LevelTrack:
    """One level (fixed l and node count) across the points of a sweep.

    Attributes
    ----------
    label : str
        Spectroscopic label, e.g. ``"2p"``.
    n, l, nodes : int
    j : float or None
        Total angular momentum (with spin-orbit splitting), else None.
    points : ndarray of int
        Indices of the points (in sweep order) that finished.
    values : dict of str to ndarray
        The varied parameters at those points, in the family's units.
    energy, error_estimate : ndarray
        In the sweep's ``energy_unit``; NaN where the level is not bound.
    converged, bound : ndarray of bool
    v_infinity : ndarray
        The continuum threshold V(inf) at each point, same unit.
    """

    label: str
    n: int
    l: int
    j: float | None
    nodes: int
    points: np.ndarray
    values: dict[str, np.ndarray]
    energy: np.ndarray
    error_estimate: np.ndarray
    converged: np.ndarray
    bound: np.ndarray
    v_infinity: np.ndarray


@dataclass
class SweepResult:
    """The levels of a potential family over a grid of parameter values.

    Points are the Cartesian product of the ``axes`` in the order the
    parameters were given, the last varying fastest; point ``i`` has grid
    index ``np.unravel_index(i, shape)``.  Per point, levels are ordered by
    partial wave (``channels``: l, then j) and then by node count.

    Attributes
    ----------
    potential : str
        Family name.
    parameters : tuple of str
        The varied parameters.
    axes : dict of str to ndarray
        The values of each varied parameter, in the family's units.
    fixed : dict
        Every other parameter of the family, in the family's units.
    parameter_units : dict of str to str
        The unit of each parameter (``"bohr"``, ``"fm"``, ``""`` when dimensionless).
    ls : tuple of int
    channels : tuple of (l, j)
        The partial waves; j is None without spin-orbit splitting.
    count : int
        Levels per partial wave asked at every point.
    mass, tol, method, spin_orbit, dimension :
        As passed to :func:`radsolve.solve` (mass in the unit system's mass unit).
    units, energy_unit : str
        The unit system (``"atomic"``, ``"nuclear"``) and its energy unit
        (``"hartree"``, ``"MeV"``), in which the arrays below are.
    energy, error_estimate : ndarray, shape (points, len(channels), count)
        NaN where not bound or not computed.
    converged, bound : ndarray of bool, same shape
    v_infinity : ndarray, shape (points,)
        V(inf) at each point (``inf`` for a confining potential).
    done : ndarray of bool, shape (points,)
        Which points were computed (all of them unless interrupted).
    """

    potential: str
    parameters: tuple[str, ...]
    axes: dict[str, np.ndarray]
    fixed: dict[str, Any]
    parameter_units: dict[str, str]
    ls: tuple[int, ...]
    channels: tuple[tuple[int, float | None], ...]
    count: int
    mass: float
    tol: float
    method: str
    spin_orbit: bool
    dimension: int
    units: str
    energy_unit: str
    energy: np.ndarray
    error_estimate: np.ndarray
    converged: np.ndarray
    bound: np.ndarray
    v_infinity: np.ndarray
    done: np.ndarray
    log_spaced: dict[str, bool] = field(default_factory=dict)
    base: Any = field(default=None, repr=False)  # the Potential swept (with the fixed values)

    # -- shape and points ----------------------------------------------------

    @property
    def shape(self) -> tuple[int, ...]:
        """Length of each axis, in parameter order."""
        return tuple(len(self.axes[k]) for k in self.parameters)

    @property
    def points_total(self) -> int:
        return int(np.prod(self.shape))

    @property
    def points_done(self) -> int:
        return int(np.count_nonzero(self.done))

    @property
    def complete(self) -> bool:
        """True when every point was computed."""
        return bool(self.done.all())

    def point_values(self, index: int) -> tuple:
        """The varied parameters' values at point ``index``, in parameter order."""
        grid_index = np.unravel_index(index, self.shape)
        return tuple(float(self.axes[k][i]) for k, i in zip(self.parameters, grid_index))

    def point_table(self) -> dict[str, np.ndarray]:
        """Every point's parameter values: name -> array of length ``points_total``."""
        mesh = np.meshgrid(*(self.axes[k] for k in self.parameters), indexing="ij")
        return {k: m.ravel() for k, m in zip(self.parameters, mesh)}

    @property
    def success(self) -> bool:
        """Every point computed and every bound level converged."""
        return self.complete and bool(np.all(self.converged[self.done] | ~self.bound[self.done]))

    @property
    def unconverged(self) -> int:
        """Number of (point, level) rows that are bound but did not converge to ``tol``."""
        return int(np.count_nonzero(self.bound & ~self.converged))

    # -- levels --------------------------------------------------------------

    def level_keys(self) -> list[tuple[int, float | None, int]]:
        """``(l, j, nodes)`` of every level row per point, in row order."""
        return [(l, j, k) for l, j in self.channels for k in range(self.count)]

    def labels(self) -> list[str]:
        """Labels of the level rows per point, in row order (as :func:`radsolve.solve` gives them)."""
        return [level_designation(k, l, j, self.units)[1] for l, j, k in self.level_keys()]

    def _find(self, label: str) -> tuple[int, int]:
        labels = self.labels()
        if label not in labels:
            raise KeyError(f"level {label!r} is not in this sweep; its levels: {', '.join(labels)}")
        l, j, k = self.level_keys()[labels.index(label)]
        return self.channels.index((l, j)), k

    def level(self, label: str) -> LevelTrack:
        """The level ``label`` (e.g. ``"2p"``) across the finished points."""
        i, k = self._find(label)
        l, j = self.channels[i]
        pts = np.flatnonzero(self.done)
        table = self.point_table()
        return LevelTrack(
            label=label, n=level_designation(k, l, j, self.units)[0], l=l, j=j, nodes=k, points=pts,
            values={p: table[p][pts] for p in self.parameters},
            energy=self.energy[pts, i, k], error_estimate=self.error_estimate[pts, i, k],
            converged=self.converged[pts, i, k], bound=self.bound[pts, i, k],
            v_infinity=self.v_infinity[pts],
        )

    def grid(self, label: str, what: str = "energy") -> np.ndarray:
        """``energy`` (or ``error_estimate``, ``bound``, ``converged``) of ``label`` on the grid.

        An array of shape :attr:`shape`; NaN (or False) at points not computed.
        """
        i, k = self._find(label)
        array = {"energy": self.energy, "error_estimate": self.error_estimate,
                 "bound": self.bound, "converged": self.converged}[what]
        return array[:, i, k].reshape(self.shape)

    # -- rows and export -----------------------------------------------------

    @property
    def columns(self) -> tuple[str, ...]:
        """Column names of a row: ``point``, the varied parameters, then the level columns."""
        level = LEVEL_COLUMNS if self.spin_orbit else tuple(c for c in LEVEL_COLUMNS if c != "j")
        return ("point", *self.parameters, *level)

    def unit_factor(self, unit: str | None) -> float:
        """Energies in ``energy_unit`` divided by this give energies in ``unit``."""
        return _unit_factor(self.energy_unit, unit)

    def rows(self, unit: str | None = None) -> Iterator[dict[str, Any]]:
        """One dict per (finished point, level), energies in ``unit`` (default
        ``energy_unit``); NaN where unbound."""
        factor = self.unit_factor(unit)
        for index in np.flatnonzero(self.done):
            yield from _point_rows(self, int(index), self.point_values(int(index)),
                                   (self.energy[index], self.error_estimate[index],
                                    self.converged[index], self.bound[index],
                                    self.v_infinity[index]), factor)

    def __len__(self) -> int:
        return self.points_done * len(self.channels) * self.count

    def to_csv(self, path: str | os.PathLike | None = None, unit: str | None = None) -> str:
        """CSV text (and, given ``path``, that file): a header row, then one row per level.

        Columns: :attr:`columns` and a final ``unit`` column (the energy unit,
        by default ``energy_unit``).  Parameters are in the family's units;
        floats carry every digit; an unbound level's energy and error estimate
        are empty cells.
        """
        return self._render(_CsvSink, path, unit)

    def _render(self, sink_class, path, unit) -> str:
        """Write every row through a sink into text (and, given ``path``, that file)."""
        unit = unit or self.energy_unit
        buf = io.StringIO()
        sink = sink_class(buf, self.columns, unit)
        sink.start(self)
        for row in self.rows(unit):
            sink.write_row(row)
        sink.finish(self)
        text = buf.getvalue()
        if path is not None:
            _write_text(path, text)
        return text

    def metadata(self, unit: str | None = None) -> dict[str, Any]:
        """The settings of the sweep as plain data (the head of the JSON document)."""
        return {
            "potential": self.potential,
            "varied": list(self.parameters),
            "axes": {k: [float(v) for v in self.axes[k]] for k in self.parameters},
            "fixed": {k: v for k, v in self.fixed.items()},
            "parameter_units": {k: u or "dimensionless" for k, u in self.parameter_units.items()},
            "l": list(self.ls),
            "spin_orbit": self.spin_orbit,
            "dimension": self.dimension,
            "count": self.count,
            "mass": self.mass,
            "tol": self.tol,
            "method": self.method,
            "units": self.units,
            "unit": unit or self.energy_unit,
            "points_total": self.points_total,
        }

    def to_json(self, path: str | os.PathLike | None = None, unit: str | None = None) -> str:
        """JSON text (and, given ``path``, that file).

        One object: the settings of :meth:`metadata`, ``rows`` (one object per
        level with the keys of :attr:`columns`; an unbound level's energy is
        ``null``), then ``points_done`` and ``complete``.
        """
        return self._render(_JsonSink, path, unit)

    def to_pandas(self, unit: str | None = None):
        """A pandas DataFrame with one row per level (needs the optional dependency pandas)."""
        try:
            import pandas as pd
        except ImportError:
            raise InputError("to_pandas needs pandas: pip install pandas "
                             "(or pip install 'radsolve[pandas]')") from None
        data = {c: [] for c in self.columns}
        for row in self.rows(unit):
            for c in self.columns:
                data[c].append(row[c])
        frame = pd.DataFrame(data, columns=list(self.columns))
        frame.attrs.update(self.metadata(unit))
        return frame


def _unit_factor(energy_unit: str, unit: str | None) -> float:
    """Energies in ``energy_unit`` divided by this are in ``unit``."""
    from radsolve.units import energy_unit_factor

    if unit is None or unit == energy_unit:
        return 1.0
    return energy_unit_factor(unit) / energy_unit_factor(energy_unit)


def _point_rows(meta: SweepResult, index: int, values: tuple, block: tuple, factor: float) -> list[dict]:
    energy, error, converged, bound, v_inf = block
    rows = []
    for i, (l, j) in enumerate(meta.channels):
        for k in range(meta.count):
            row = {"point": index}
            row.update(zip(meta.parameters, values))
            n, label = level_designation(k, l, j, meta.units)
            row.update(
                l=l, j=j, n=n, nodes=k, label=label,
                energy=float(energy[i, k]) / factor if bound[i, k] else math.nan,
                error_estimate=float(error[i, k]) / factor if bound[i, k] else math.nan,
                converged=bool(converged[i, k]), bound=bool(bound[i, k]),
                v_infinity=float(v_inf) / factor,
            )
            rows.append(row)
    return rows


def _write_text(path, text: str) -> None:
    try:
        Path(path).write_text(text, encoding="utf-8")
    except OSError as exc:
        raise InputError(f"cannot write {str(path)!r}: {exc.strerror}") from None


# --------------------------------------------------------------------------- #
# Incremental writers
# --------------------------------------------------------------------------- #

def _cell(value: Any) -> str:
    if isinstance(value, float):
        return repr(value) if math.isfinite(value) else ""
    return str(value)


class _CsvSink:
    def __init__(self, stream, columns, unit: str):
        self.stream, self.columns, self.unit = stream, tuple(columns), unit
        self.writer = csv.writer(stream, lineterminator="\n")

    def start(self, meta) -> None:
        self.writer.writerow([*self.columns, "unit"])

    def write_row(self, row: dict) -> None:
        self.writer.writerow([_cell(row[c]) for c in self.columns] + [self.unit])

    def flush(self) -> None:
        self.stream.flush()

    def finish(self, meta) -> None:
        self.stream.flush()


class _JsonSink:
    def __init__(self, stream, columns, unit: str):
        self.stream, self.columns, self.unit = stream, tuple(columns), unit
        self.first = True

    def start(self, meta) -> None:
        head = json.dumps(_plain(meta.metadata(self.unit)), indent=1, allow_nan=False)
        self.stream.write(head[:-2] + ',\n "rows": [')

    def write_row(self, row: dict) -> None:
        doc = {c: _plain(row[c]) for c in self.columns}
        self.stream.write(("\n  " if self.first else ",\n  ") + json.dumps(doc, allow_nan=False))
        self.first = False

    def flush(self) -> None:
        self.stream.flush()

    def finish(self, meta) -> None:
        tail = {"points_done": meta.points_done, "complete": meta.complete}
        self.stream.write(("\n ],\n" if not self.first else "],\n")
                          + ",\n".join(f" {json.dumps(k)}: {json.dumps(v)}" for k, v in tail.items())
                          + "\n}\n")
        self.stream.flush()


def _open_sink(out, columns, unit: str):
    """A writer for ``out`` (a path ending .csv or .json, or an open text stream for CSV)."""
    if out is None:
        return None, None
    if hasattr(out, "write"):
        return _CsvSink(out, columns, unit), None
    path = Path(out)
    suffix = path.suffix.lower()
    if suffix not in (".csv", ".json"):
        raise InputError(f"output file {str(path)!r}: the name must end in .csv or .json", parameter="out")
    if not (path.parent if str(path.parent) else Path(".")).is_dir():
        raise InputError(f"output file {str(path)!r}: folder {str(path.parent)!r} does not exist", parameter="out")
    try:
        stream = open(path, "w", encoding="utf-8", newline="")
    except OSError as exc:
        raise InputError(f"output file {str(path)!r}: cannot write: {exc.strerror}", parameter="out") from None
    sink = _CsvSink(stream, columns, unit) if suffix == ".csv" else _JsonSink(stream, columns, unit)
    return sink, stream


# --------------------------------------------------------------------------- #
# Progress
# --------------------------------------------------------------------------- #

class _Progress:
    """A one-line progress bar on stderr, drawn only when stderr is a terminal."""

    def __init__(self, total: int, what: str, enabled: bool | None):
        stream = sys.stderr
        self.enabled = stream.isatty() if enabled is None else bool(enabled)
        self.stream, self.total, self.what = stream, total, what
        self.start = time.monotonic()
        self.last_draw = 0.0
        self.done = 0

    def update(self, done: int) -> None:
        self.done = done
        if not self.enabled:
            return
        now = time.monotonic()
        if now - self.last_draw < 0.2 and done < self.total:
            return
        self.last_draw = now
        elapsed = max(now - self.start, 1e-9)
        rate = done / elapsed
        width = 24
        filled = int(width * done / max(self.total, 1))
        left = (self.total - done) / rate if rate > 0 else math.inf
        eta = ("done" if done >= self.total else f"{max(left, 1.0):.0f} s left") if math.isfinite(left) else "..."
        self.stream.write(f"\r{self.what} [{'#' * filled}{'.' * (width - filled)}] "
                          f"{done}/{self.total} points, {rate:.3g}/s, {eta}   ")
        self.stream.flush()

    def close(self) -> None:
        if self.enabled:
            self.stream.write("\n")
            self.stream.flush()


# --------------------------------------------------------------------------- #
# Runners
# --------------------------------------------------------------------------- #

def usable_cores() -> int:
    """Cores this process may run on."""
    try:
        return max(len(os.sched_getaffinity(0)), 1)
    except AttributeError:  # not on every platform
        return max(os.cpu_count() or 1, 1)


def _chunks(indices: Iterable[int], settings_values: Callable[[int], tuple], size: int):
    chunk = []
    for index in indices:
        chunk.append((index, settings_values(index)))
        if len(chunk) == size:
            yield chunk
            chunk = []
    if chunk:
        yield chunk


def _chunk_size(points: int, workers: int) -> int:
    # Small chunks keep Ctrl-C prompt and the load balanced; big enough that the
    # cost of sending a task (~1 ms) is small against a point (~10-300 ms).
    return int(min(max(points // (workers * 32), 1), 16))


def _run_pool(settings, chunks, workers: int, collect) -> None:
    from concurrent.futures import FIRST_COMPLETED, ProcessPoolExecutor, wait

    executor = ProcessPoolExecutor(max_workers=workers, initializer=_ignore_sigint)
    pending: set = set()
    try:
        window = 4 * workers
        for chunk in chunks:
            pending.add(executor.submit(_solve_chunk, settings, chunk))
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
        # Chunks already running finish (they are small); keep their rows.
        executor.shutdown(wait=True, cancel_futures=True)
        for future in pending:
            if future.done() and not future.cancelled() and future.exception() is None:
                collect(future.result())
        raise
    except BaseException:
        executor.shutdown(wait=False, cancel_futures=True)
        raise
    executor.shutdown(wait=True)


def _dask_client(cluster, workers: int | None):
    """``(client, close_client, local_cluster)`` for ``cluster``: an address, ``"local"`` or a Client."""
    try:
        import distributed
    except ImportError:
        raise InputError("--cluster needs Dask distributed, the optional dependency of "
                         "radsolve[cluster]: pip install 'radsolve[cluster]'") from None
    if isinstance(cluster, distributed.Client):
        return cluster, False, None
    if not isinstance(cluster, str) or not cluster.strip():
        raise InputError(f"cluster must be 'local', a scheduler address such as tcp://host:8786, "
                         f"or a distributed.Client; got {cluster!r}")
    address = cluster.strip()
    import logging

    if address == "local":
        n = workers if workers is not None else usable_cores()
        # No dashboard, and the scheduler's small HTTP server on a free loopback
        # port, so that a second cluster on this machine does not clash.
        local = distributed.LocalCluster(n_workers=n, threads_per_worker=1, processes=True,
                                         host="127.0.0.1", dashboard_address=None,
                                         scheduler_kwargs={"dashboard_address": "127.0.0.1:0"},
                                         silence_logs=logging.ERROR)
        return distributed.Client(local), True, local
    if "://" not in address:
        raise InputError(f"--cluster {address!r}: expected 'local' or a scheduler address "
                         "such as tcp://host:8786")
    try:
        client = distributed.Client(address, timeout=CLUSTER_TIMEOUT)
    except (OSError, TimeoutError, ValueError) as exc:
        raise InputError(f"--cluster {address!r}: no Dask scheduler answered there within "
                         f"{CLUSTER_TIMEOUT:g} s ({type(exc).__name__}: {exc}); start one "
                         "(dask scheduler) or use --cluster local") from None
    return client, True, None


def _run_dask(settings, chunks, client, collect) -> None:
    from distributed import as_completed

    window = 4 * max(sum(client.nthreads().values()), 1)
    futures = as_completed()
    live: list = []
    try:
        for chunk in chunks:
            future = client.submit(_solve_chunk, settings, chunk, pure=False)
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


# --------------------------------------------------------------------------- #
# The sweep
# --------------------------------------------------------------------------- #

def _axes(base, vary) -> dict[str, np.ndarray]:
    family = base.family
    if not isinstance(vary, Mapping) or not vary:
        raise InputError("vary must be a dict of at least one parameter name -> sequence of values, "
                         "e.g. vary={'screening_length': [1, 2, 5]}")
    axes: dict[str, np.ndarray] = {}
    for key, values in vary.items():
        where = f"vary[{key!r}]"
        param = _numeric_parameter(family, key, where)
        if isinstance(values, (str, bytes)):
            raise InputError(f"{where} must be a sequence of values, got the text {values!r}")
        if isinstance(values, (int, float, np.number)) or not isinstance(values, Iterable):
            values = [values]
        items = list(values)
        if not items:
            raise InputError(f"{where}: no values given (at least one is needed)")
        axes[key] = np.array([param.parse(v.item() if isinstance(v, np.generic) else v, key, family.name)
                              for v in items], dtype=float)
        # Bind each value once here so that a value the family rejects (its
        # validate hook) is reported before anything is solved.
        for v in axes[key][: min(len(axes[key]), 1000)]:
            base.with_parameters(**{key: float(v)})
    return axes


def sweep(potential, vary: Mapping[str, Sequence], fixed: Mapping[str, Any] | None = None, l=0,
          count: int = 5, mass=None, tol: float = 1e-10, method: str = "fd", plugins=None,
          workers: int | None = None, cluster=None, out=None, unit: str | None = None,
          progress: bool | None = None, spin_orbit: bool = False, dimension: int = 3,
          units: str | None = None) -> SweepResult:
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
    mass, tol, method, plugins, spin_orbit, dimension, units :
        As for :func:`radsolve.solve` (mass in the unit system's mass unit or
        particle names; tol the relative error asked of each energy).
    workers : int, optional
        Local worker processes; ``None`` = every usable core, 1 = serial in
        this process.  With ``cluster="local"``: the number of Dask workers.
    cluster : str or distributed.Client, optional
        ``"tcp://host:port"`` of a running Dask scheduler, ``"local"`` for a
        local Dask cluster started (and stopped) here, or a Client.
    out : path or text stream, optional
        Write the rows there as the points finish: ``.csv`` or ``.json`` by
        the file name; a stream gets CSV.
    unit : str, optional
        Energy unit of ``out``; default the unit system's (hartree, or MeV
        for a nuclear family), in which the result itself is.
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
    axes = _axes(base, vary)
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
    options = dict(mass=mass, tol=tol, method=method, spin_orbit=bool(spin_orbit), dimension=dimension,
                   units=units)

    # Connect first, so that an unreachable scheduler is reported at once.
    dask = _dask_client(cluster, workers) if cluster is not None else None
    try:
        return _sweep_points(base, axes, l, count, options, workers, dask, out, unit, progress)
    finally:
        if dask is not None:
            client, close_client, local_cluster = dask
            if close_client:
                client.close()
            if local_cluster is not None:
                local_cluster.close()


def _sweep_points(base, axes, l, count, options, workers, dask, out, unit, progress) -> SweepResult:
    from radsolve.core.spectrum import solve

    keys = tuple(axes)
    family = base.family
    bar = _Progress(int(np.prod([len(axes[k]) for k in keys])), f"sweep {family.name}", progress)
    # The first point, solved here, checks l, count, mass, tol, method and the
    # unit system with solve's own messages before any worker starts.
    first_values = tuple(float(axes[k][0]) for k in keys)
    try:
        first = solve(base.with_parameters(**dict(zip(keys, first_values))), l=l, count=count, **options)
    except RadsolveError as exc:
        if isinstance(exc, InputError) and exc.parameter is not None and exc.family is None:
            raise  # about an argument (tol, count, ...), the same at every point
        raise type(exc)(f"sweep point {_describe_point(keys, first_values)}: {exc}") from None
    from radsolve.units import unit_system

    ls = _solved_ls(l)
    channels = _channel_keys(ls, options["spin_orbit"])
    system = unit_system(first.units)
    settings = _Settings(base=base, keys=keys, ls=tuple(ls), channels=channels, count=int(count),
                         mass=float(first.mass), tol=float(first.tol), method=options["method"],
                         spin_orbit=options["spin_orbit"], dimension=int(first.dimension),
                         units=system.name)
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
        log_spaced={k: _looks_geometric(axes[k]) for k in keys}, base=base,
    )

    unit = unit or system.energy_unit
    factor = result.unit_factor(unit)
    sink, stream = _open_sink(out, result.columns, unit)
    if sink is not None:
        sink.start(result)
    waiting: dict[int, tuple] = {}
    state = {"next": 0}

    def store(index: int, block: tuple) -> None:
        energy, error, converged, bound, v_inf = block
        result.energy[index], result.error_estimate[index] = energy, error
        result.converged[index], result.bound[index] = converged, bound
        result.v_infinity[index] = v_inf
        result.done[index] = True

    def write(index: int, block: tuple) -> None:
        if sink is not None:
            for row in _point_rows(result, index, result.point_values(index), block, factor):
                sink.write_row(row)

    def collect(pairs) -> None:
        for index, block in pairs:
            store(index, block)
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
            collect([(0, _block(first, channels, int(count)))])
            rest = range(1, total)
            if dask is not None:
                client = dask[0]
                n_threads = max(sum(client.nthreads().values()), 1)
                _run_dask(settings, _chunks(rest, values_of, _chunk_size(total, n_threads)), client, collect)
            else:
                n = usable_cores() if workers is None else int(workers)
                n = min(n, max(total - 1, 1))
                if n <= 1:
                    for index in rest:
                        collect([(index, _solve_point(settings, values_of(index)))])
                else:
                    _run_pool(settings, _chunks(rest, values_of, _chunk_size(total, n)), n, collect)
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


def _looks_geometric(values: np.ndarray) -> bool:
    v = np.asarray(values, dtype=float)
    if v.size < 3 or np.any(v <= 0):
        return False
    ratios = v[1:] / v[:-1]
    steps = np.diff(v)
    return bool(np.allclose(ratios, ratios[0], rtol=1e-9) and not np.allclose(steps, steps[0], rtol=1e-9))
