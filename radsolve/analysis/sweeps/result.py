"""What a sweep returns: :class:`SweepResult` (the result protocol, CSV/JSON/pandas/xarray/NetCDF) and :class:`LevelTrack`."""

from __future__ import annotations

import io
import itertools
import math
import os
from dataclasses import dataclass, field
from typing import Any, Iterator

import numpy as np

from radsolve.core.protocol import Note, Outcome, ResultProtocol, message_of, write_text
from radsolve.core.result import level_designation
from radsolve.errors import InputError
from radsolve.analysis.sweeps.sinks import CsvSink, JsonSink


#: Columns of a sweep row after the parameter columns, in order (``j`` only
#: with spin-orbit splitting).
LEVEL_COLUMNS = ("l", "j", "n", "nodes", "label", "energy", "error_estimate", "converged", "bound",
                 "status", "v_infinity")

#: A level's ``status`` when it has no energy at a point.  ``unbound`` is a claim, made only when the
#: partial wave's count of bound levels (certain) says fewer are bound; ``missing``: bound by that
#: count but not resolved (too weakly bound for the largest box); ``unknown``: the count is
#: uncertain, so bound or not is not known.  A level found has its refinement status
#: (``converged``, ``finest grid``, ..., as :class:`radsolve.core.targets.Status`).
UNBOUND, MISSING, UNCERTAIN = "unbound", "missing", "unknown"

#: Codes of a point's solve notes that are expected in a sweep (levels crossing the threshold) and are
#: not repeated in the sweep's notes; ``not_converged`` is summed over the points instead.
_ROUTINE_CODES = frozenset({"no_bound", "fewer_bound", "not_listed", "not_converged"})


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


@dataclass(repr=False)
class SweepResult(ResultProtocol):
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
        ``bound``: the level was found below V(inf) at that point.
    level_status : ndarray of str (object), same shape
        Each level's status at each point: its refinement status when found
        (``"converged"``, ``"finest grid"``, ...), else ``"unbound"`` (proven
        by the count of bound levels), ``"missing"`` (bound by the count but
        not resolved) or ``"unknown"`` (the count is uncertain); None where
        the point was not computed.
    v_infinity : ndarray, shape (points,)
        V(inf) at each point (``inf`` for a confining potential).
    done : ndarray of bool, shape (points,)
        Which points were computed (all of them unless interrupted).
    point_status : ndarray of str (object), shape (points,)
        The status of the solve at each point (an :class:`Outcome` value; None where not computed).
    point_notes : list of tuple of Note, length points
        The notes of the solve at each point.
    status : Outcome
        ``success`` when every point was computed and every level is either
        converged or proven unbound; ``incomplete`` when points are missing (an
        interrupted sweep) or a point's solve was incomplete (a level the count
        says is bound not resolved, an uncertain count); ``not converged`` when
        some bound level did not reach ``tol``.
    notes : tuple of Note
        Codes ``points_missing``, ``levels_unresolved``, ``not_converged``, and the codes of the
        points' own notes that say something is missing or uncertain
        (``levels_missing``, ``count_uncertain``, ``count_disagreement``, ...),
        each once with the number of points and the first of them.
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
    level_status: np.ndarray
    point_status: np.ndarray
    point_notes: list
    log_spaced: dict[str, bool] = field(default_factory=dict)
    base: Any = field(default=None, repr=False)  # the Potential swept (with the fixed values)
    equation: str = "schrodinger"  # the wave equation solved at every point

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

    # -- result protocol -----------------------------------------------------

    @property
    def status(self) -> Outcome:
        outcomes = set(self.point_status[self.done])
        if not self.complete or self.unresolved or outcomes & {str(Outcome.INCOMPLETE), str(Outcome.FAILED)}:
            return Outcome.INCOMPLETE
        if self.unconverged or str(Outcome.NOT_CONVERGED) in outcomes:
            return Outcome.NOT_CONVERGED
        return Outcome.SUCCESS

    @property
    def notes(self) -> tuple[Note, ...]:
        notes = []
        if not self.complete:
            notes.append(Note("points_missing", f"{self.points_total - self.points_done} of {self.points_total} "
                              "points were not computed (the sweep was interrupted)"))
        if self.unresolved:
            notes.append(Note("levels_unresolved", f"{self.unresolved} level row(s) have no energy but are not "
                              f"proven unbound (status '{MISSING}': bound by the count of bound levels but not "
                              f"resolved; '{UNCERTAIN}': the count is uncertain)"))
        notes.extend(self._point_notes())
        if self.unconverged:
            notes.append(Note("not_converged", f"{self.unconverged} bound level(s) did not converge to tol = "
                              f"{self.tol:.1e} (converged = False in their rows)"))
        return tuple(notes)

    def _point_notes(self) -> list[Note]:
        """Each code of the points' notes that is not routine, once: how many points, and the first one."""
        first: dict[str, tuple[int, Note]] = {}
        points: dict[str, int] = {}
        for index in np.flatnonzero(self.done):
            for code in {n.code for n in self.point_notes[index]} - _ROUTINE_CODES:
                points[code] = points.get(code, 0) + 1
                if code not in first:
                    first[code] = (int(index), next(n for n in self.point_notes[index] if n.code == code))
        out = []
        for code, (index, note) in first.items():
            where = describe_values(self.parameters, self.point_values(index))
            out.append(Note(code, f"at {points[code]} of {self.points_total} point(s), first at {where}: "
                                  f"{note.text}", where))
        return out

    @property
    def message(self) -> str:
        return message_of(self.notes, f"{self.points_done} points, every bound level converged to tol = "
                          f"{self.tol:.1e}")

    def _header(self) -> list[tuple[str, Any]]:
        axes = ", ".join(f"{k}[{len(self.axes[k])}]" for k in self.parameters)
        return [("potential", self.potential), ("axes", axes), ("points", self.points_done),
                ("levels", len(self.channels) * self.count)]

    def _table_columns(self):
        return ("point", *self.parameters, "label", "energy", "error_estimate", "status")

    def records(self, unit: str | None = None) -> list[dict[str, Any]]:
        """One flat dict per (finished point, level): the CSV columns (energies in ``unit``)."""
        return list(self._records(unit))

    def _records(self, unit: str | None = None) -> Iterator[dict[str, Any]]:
        unit = unit or self.energy_unit
        return ({**{c: row[c] for c in self.columns}, "unit": unit} for row in self.rows(unit))

    def _first_records(self, n: int) -> tuple[list[dict[str, Any]], int]:
        # a map of millions of points shows its repr without building every row
        return list(itertools.islice(self._records(), n)), len(self)

    def to_dict(self, unit: str | None = None) -> dict[str, Any]:
        """The JSON document: :meth:`metadata`, ``rows``, then how far it got and its status."""
        return {**self.metadata(unit), "rows": [{c: row[c] for c in self.columns} for row in self.rows(unit)],
                **self._tail()}

    def _tail(self) -> dict[str, Any]:
        return {"points_done": self.points_done, "complete": self.complete, "success": self.success,
                "status": str(self.status), "message": self.message,
                "notes": [n.to_dict() for n in self.notes]}

    @property
    def unresolved(self) -> int:
        """Number of (point, level) rows without an energy that are not proven unbound."""
        return int(np.count_nonzero((self.level_status == MISSING) | (self.level_status == UNCERTAIN)))

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
        """``energy`` (or ``error_estimate``, ``bound``, ``converged``, ``status``) of ``label`` on the grid.

        An array of shape :attr:`shape`; NaN (or False, or None) at points not computed.
        """
        i, k = self._find(label)
        array = {"energy": self.energy, "error_estimate": self.error_estimate,
                 "bound": self.bound, "converged": self.converged, "status": self.level_status}[what]
        return array[:, i, k].reshape(self.shape)

    # -- rows and export -----------------------------------------------------

    @property
    def columns(self) -> tuple[str, ...]:
        """Column names of a row: ``point``, the varied parameters, then the level columns."""
        has_j = self.spin_orbit or self.equation == "dirac"
        level = LEVEL_COLUMNS if has_j else tuple(c for c in LEVEL_COLUMNS if c != "j")
        return ("point", *self.parameters, *level)

    def unit_factor(self, unit: str | None) -> float:
        """Energies in ``energy_unit`` divided by this give energies in ``unit``."""
        return unit_factor_between(self.energy_unit, unit)

    def rows(self, unit: str | None = None) -> Iterator[dict[str, Any]]:
        """One dict per (finished point, level), energies in ``unit`` (default
        ``energy_unit``); NaN where unbound."""
        factor = self.unit_factor(unit)
        for index in np.flatnonzero(self.done):
            yield from point_rows(self, int(index), self.point_values(int(index)), self.block(int(index)), factor)

    def block(self, index: int) -> tuple:
        """Point ``index``'s arrays, in the form the points are computed in (see :func:`points.level_block`)."""
        return (self.energy[index], self.error_estimate[index], self.converged[index], self.bound[index],
                self.v_infinity[index], self.level_status[index], self.point_status[index],
                self.point_notes[index])

    def store(self, index: int, block: tuple) -> None:
        """Put one computed point's block in place and mark it done."""
        (self.energy[index], self.error_estimate[index], self.converged[index], self.bound[index],
         self.v_infinity[index], self.level_status[index], self.point_status[index],
         self.point_notes[index]) = block
        self.done[index] = True

    def __len__(self) -> int:
        return self.points_done * len(self.channels) * self.count

    def to_csv(self, path: str | os.PathLike | None = None, unit: str | None = None) -> str:
        """CSV text (and, given ``path``, that file): a header row, then one row per level.

        Columns: :attr:`columns` and a final ``unit`` column (the energy unit,
        by default ``energy_unit``).  Parameters are in the family's units;
        floats carry every digit; an unbound level's energy and error estimate
        are empty cells.
        """
        return self._render(CsvSink, path, unit)

    def _render(self, sink_class, path, unit) -> str:
        """Write every row through a sink into text (and, given ``path``, that file)."""
        unit = unit or self.energy_unit
        buf = io.StringIO()
        sink = sink_class(buf, self.columns, unit)
        sink.start(self)
        for row in self.rows(unit):
            sink.write_row(row)
        sink.finish(self)
        return write_text(path, buf.getvalue())

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
            **({} if self.equation == "schrodinger" else {"equation": self.equation}),
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
        return self._render(JsonSink, path, unit)

    def to_xarray(self, unit: str | None = None):
        """The sweep as an :class:`xarray.Dataset` (needs the optional ``xarray`` extra).

        Dimensions: one per varied parameter (coordinates: its values, with
        the parameter's unit as the ``units`` attribute), then ``level``
        (coordinates: the labels, with ``l``, ``j`` -- NaN without spin-orbit
        -- ``n`` and ``nodes`` beside them).  Data variables: ``energy`` and
        ``error_estimate`` (in ``unit``, default ``energy_unit``; NaN where
        not bound or not computed), ``bound`` and ``converged`` (bool) and
        ``status`` (text, as :attr:`level_status`; ``""`` where not computed) on
        (parameters..., level); ``v_infinity``, ``done`` and ``point_status``
        on the parameters.
        Attributes: the potential, its fixed parameters (``fixed_<name>``),
        the settings of the solve, and the sweep's status and message.
        """
        try:
            import xarray as xr
        except ImportError:
            raise InputError("to_xarray() needs xarray: pip install 'radsolve[xarray]'") from None
        unit = unit or self.energy_unit
        factor = self.unit_factor(unit)
        levels = len(self.channels) * self.count
        dims = (*self.parameters, "level")

        def per_level(array, scale=None):
            values = array.reshape(*self.shape, levels)
            return (dims, values / scale if scale is not None else values)

        keys = self.level_keys()
        coords = {k: (k, np.asarray(self.axes[k], dtype=float), {"units": self.parameter_units.get(k, "") or "1"})
                  for k in self.parameters}
        coords["level"] = ("level", np.array(self.labels(), dtype=object))
        coords["l"] = ("level", np.array([l for l, _, _ in keys], dtype=int))
        coords["j"] = ("level", np.array([np.nan if j is None else j for _, j, _ in keys], dtype=float))
        coords["nodes"] = ("level", np.array([k for _, _, k in keys], dtype=int))
        coords["n"] = ("level", np.array([level_designation(k, l, j, self.units)[0] for l, j, k in keys], dtype=int))
        data = {
            "energy": per_level(self.energy, factor),
            "error_estimate": per_level(self.error_estimate, factor),
            "bound": per_level(self.bound),
            "converged": per_level(self.converged),
            "v_infinity": (self.parameters, self.v_infinity.reshape(self.shape) / factor),
            "done": (self.parameters, self.done.reshape(self.shape)),
            # text for NetCDF: "" where a point was not computed
            "status": per_level(_text(self.level_status)),
            "point_status": (self.parameters, _text(self.point_status).reshape(self.shape)),
        }
        dataset = xr.Dataset(data, coords=coords)
        for name in ("energy", "error_estimate", "v_infinity"):
            dataset[name].attrs["units"] = unit
        attrs = {"potential": self.potential, "units_system": self.units, "energy_unit": unit,
                 "mass": self.mass, "tol": self.tol, "method": self.method, "count": self.count,
                 "dimension": self.dimension, "spin_orbit": int(self.spin_orbit), "equation": self.equation,
                 "status": str(self.status),
                 "message": self.message}
        for k, v in self.fixed.items():
            attrs[f"fixed_{k}"] = v if isinstance(v, (int, float, str)) and not isinstance(v, bool) else str(v)
        dataset.attrs.update(attrs)
        return dataset

    def to_netcdf(self, path, unit: str | None = None) -> None:
        """Write :meth:`to_xarray` to the NetCDF file ``path`` (the first engine xarray finds)."""
        dataset = self.to_xarray(unit)
        try:
            dataset.to_netcdf(path)
        except OSError as exc:
            raise InputError(f"cannot write {str(path)!r}: {exc.strerror or exc}") from None

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


def unit_factor_between(energy_unit: str, unit: str | None) -> float:
    """Energies in ``energy_unit`` divided by this are in ``unit``."""
    from radsolve.units import energy_unit_factor

    if unit is None or unit == energy_unit:
        return 1.0
    return energy_unit_factor(unit) / energy_unit_factor(energy_unit)


def _text(array: np.ndarray) -> np.ndarray:
    """An object array of str or None as a plain str array ("" for None)."""
    return np.array(["" if v is None else str(v) for v in array.ravel()], dtype=str).reshape(array.shape)


def describe_values(keys, values) -> str:
    """``Z = 2, screening_length = 1.5``: a point in messages."""
    return ", ".join(f"{k} = {v:.10g}" if isinstance(v, float) else f"{k} = {v}" for k, v in zip(keys, values))


def point_rows(meta: SweepResult, index: int, values: tuple, block: tuple, factor: float) -> list[dict]:
    energy, error, converged, bound, v_inf, state = block[:6]
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
                converged=bool(converged[i, k]), bound=bool(bound[i, k]), status=state[i, k],
                v_infinity=float(v_inf) / factor,
            )
            rows.append(row)
    return rows
