"""Fits of potential parameters to target (measured) levels.

:func:`fit` adjusts the free parameters of a potential family so that the
computed levels match target levels, by weighted least squares
(:func:`scipy.optimize.least_squares`, trust-region reflective, with bounds)
on the residuals

    r_i = (E_computed,i - E_target,i) / uncertainty_i.

Levels are matched by label: a target ``2p`` is the computed level with l = 1
and no node (n and labels come from node counting, as everywhere in
radsolve).  While the optimizer explores, a target level that is not bound is
given the threshold energy V(inf), which keeps the residuals continuous as a
level unbinds; at the optimum every target must be bound or the fit says so.

Uncertainties of the best-fit parameters come from the Jacobian J of the
residuals at the optimum: covariance C = (J^T J)^-1 (through the singular
value decomposition; directions the targets do not determine get infinite
variance and a warning).  ``standard_errors`` take the target uncertainties
as absolute one-standard-deviation errors and are NOT scaled by chi^2/dof;
``scaled_standard_errors`` multiply them by sqrt(chi^2/dof), the common
practice when the uncertainties are only relative weights.  The correlation
matrix is C_ij / sqrt(C_ii C_jj).

Possible spurious states: after the fit, every level of the fitted potential
below the highest target is looked for (all l, until the lowest level of an l
lies above it); those that are not among the targets are reported.  A
fitted model potential that binds states the real system does not have is a
common failure of effective potentials.

Targets file (CSV): a header row naming the columns ``label``, ``energy``,
``uncertainty`` and ``unit`` (any order, any case; other columns are
ignored), then one row per level; lines starting with ``#`` are comments
(for the sources of the values).  ``unit`` is an energy unit of
:mod:`radsolve.units` (hartree, eV, meV, cm-1, ...) and applies to the energy
and the uncertainty of its row.  Energies are level energies on the scale of
the potential (below V(inf) = 0 for a potential that vanishes far away), not
binding energies.

The fitted parameters describe a model potential; they are not measurements
of the system, and should not be used beyond what the model was fitted for.
"""

from __future__ import annotations

import csv
import math
import os
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Mapping, Sequence

import numpy as np

from radsolve.errors import InputError, RadsolveError
from radsolve.analysis.thresholds import parse_level
from radsolve.core.protocol import Note, Outcome, ResultProtocol, message_of

#: The one-line caveat carried by the fit table and JSON ("note").
MODEL_NOTE = ("model calculation: the fitted values describe a model potential, not measured "
              "properties of the system; for diagnostics or safety work, use established data "
              "and practice.")

#: Columns a targets file must have.
TARGET_COLUMNS = ("label", "energy", "uncertainty", "unit")


# --------------------------------------------------------------------------- #
# Targets
# --------------------------------------------------------------------------- #

@dataclass(frozen=True)
class Target:
    """One target level; energies in hartree whatever the unit system.

    Attributes
    ----------
    label : str
        Canonical label (``"2p"``, ``"1p3/2"``).
    n, l, nodes : int
        As read with the labelling convention of ``units`` (atomic:
        n = nodes + l + 1; nuclear: n = nodes + 1).
    energy, uncertainty : float
        Hartree; uncertainty > 0 (one standard deviation).
    source : str
        Where it came from (``"targets.csv line 4"``), for messages.
    j : float or None
        Total angular momentum when the label gives it.
    units : str
        The labelling convention used (``"atomic"`` or ``"nuclear"``).
    """

    label: str
    n: int
    l: int
    nodes: int
    energy: float
    uncertainty: float
    source: str = ""
    j: float | None = None
    units: str = "atomic"

    def relabelled(self, units: str) -> "Target":
        """The same target read with the labelling convention of ``units``."""
        if units == self.units:
            return self
        key = parse_level(self.label, units, f"{self.source or 'target'}: label")
        return Target(key.label, key.n, key.l, key.nodes, self.energy, self.uncertainty,
                      self.source, key.j, units)


def _number(text: str, column: str, where: str) -> float:
    try:
        value = float(text)
    except (TypeError, ValueError):
        raise InputError(f"{where}: {column} {text!r} is not a number", parameter="targets") from None
    if not math.isfinite(value):
        raise InputError(f"{where}: {column} {text!r} must be a finite number", parameter="targets")
    return value


def _make_target(label, energy, uncertainty, unit, where: str, units: str = "atomic") -> Target:
    from radsolve.units import energy_unit_factor

    if not isinstance(label, str) or not label.strip():
        raise InputError(f"{where}: the label is empty; give a level label such as 1s or 2p",
                         parameter="targets")
    key = parse_level(label.strip(), units, f"{where}: label", parameter="targets")
    energy = _number(energy, "energy", where) if isinstance(energy, str) else energy
    uncertainty = _number(uncertainty, "uncertainty", where) if isinstance(uncertainty, str) else uncertainty
    for column, value in (("energy", energy), ("uncertainty", uncertainty)):
        if isinstance(value, bool) or not isinstance(value, (int, float, np.floating, np.integer)) \
                or not math.isfinite(float(value)):
            raise InputError(f"{where}: {column} must be a finite number, got {value!r}", parameter="targets")
    try:
        factor = energy_unit_factor(str(unit).strip())
    except RadsolveError as exc:
        raise InputError(f"{where}: {exc}", parameter="targets") from None
    if not float(uncertainty) > 0:
        raise InputError(f"{where}: uncertainty must be > 0 (one standard deviation), got {uncertainty!r}",
                         parameter="targets")
    return Target(key.label, key.n, key.l, key.nodes, float(energy) * factor, float(uncertainty) * factor,
                  where, key.j, units)


def read_targets(path: str | os.PathLike, units: str = "atomic") -> list[Target]:
    """Read a targets CSV file (see the module docstring for its layout).

    ``units`` is the labelling convention (``"nuclear"``: n = nodes + 1);
    energies may be in any energy unit and are stored in hartree.

    Raises
    ------
    InputError
        Missing file or columns, a bad label, unit or number (naming the line),
        a label given twice, or no rows.
    """
    path = Path(path)
    name = str(path)
    try:
        text = path.read_text(encoding="utf-8-sig")
    except FileNotFoundError:
        raise InputError(f"targets file {name!r} does not exist", parameter="targets") from None
    except (OSError, UnicodeDecodeError) as exc:
        raise InputError(f"targets file {name!r} cannot be read: {exc}", parameter="targets") from None
    lines = [(i + 1, line) for i, line in enumerate(text.splitlines())
             if line.strip() and not line.lstrip().startswith("#")]
    if not lines:
        raise InputError(f"targets file {name!r} is empty; it needs a header row "
                         f"({','.join(TARGET_COLUMNS)}) and one row per level", parameter="targets")
    rows = list(csv.reader([line for _, line in lines]))
    header = [cell.strip().lower() for cell in rows[0]]
    missing = [c for c in TARGET_COLUMNS if c not in header]
    if missing:
        raise InputError(f"targets file {name!r}, line {lines[0][0]}: missing column(s) "
                         f"{', '.join(missing)}; the header must name {', '.join(TARGET_COLUMNS)} "
                         f"(found: {', '.join(h for h in header if h) or 'nothing'})", parameter="targets")
    where_col = {c: header.index(c) for c in TARGET_COLUMNS}
    targets: list[Target] = []
    for (lineno, _), cells in zip(lines[1:], rows[1:]):
        where = f"targets file {name!r}, line {lineno}"
        if len(cells) < len(header):
            raise InputError(f"{where}: {len(cells)} cells, but the header has {len(header)} columns",
                             parameter="targets")
        values = {c: cells[i].strip() for c, i in where_col.items()}
        for c in TARGET_COLUMNS:
            if not values[c]:
                raise InputError(f"{where}: the {c} cell is empty", parameter="targets")
        targets.append(_make_target(values["label"], values["energy"], values["uncertainty"],
                                    values["unit"], where, units))
    if not targets:
        raise InputError(f"targets file {name!r} has a header but no rows", parameter="targets")
    _check_unique(targets)
    return targets


def _check_unique(targets: Sequence[Target]) -> None:
    seen: dict[str, Target] = {}
    for t in targets:
        if t.label in seen:
            raise InputError(f"target {t.label} is given twice ({seen[t.label].source or 'first'} and "
                             f"{t.source or 'again'}); give each level once", parameter="targets")
        seen[t.label] = t


def as_targets(targets, units: str = "atomic") -> list[Target]:
    """Targets from a CSV path, or a list of Target / dicts / (label, energy, uncertainty[, unit]).

    Dicts need the keys label, energy, uncertainty and optionally unit
    (default hartree); tuples are (label, energy, uncertainty) in hartree or
    (label, energy, uncertainty, unit).  ``units`` is the labelling convention.
    """
    if isinstance(targets, (str, os.PathLike)):
        return read_targets(targets, units)
    if not isinstance(targets, Sequence) or isinstance(targets, (bytes,)):
        raise InputError("targets must be a CSV file path or a list of (label, energy, uncertainty[, unit])",
                         parameter="targets")
    out: list[Target] = []
    for i, item in enumerate(targets):
        where = f"targets[{i}]"
        if isinstance(item, Target):
            out.append(item.relabelled(units))
        elif isinstance(item, Mapping):
            missing = [c for c in ("label", "energy", "uncertainty") if c not in item]
            if missing:
                raise InputError(f"{where}: missing key(s) {', '.join(missing)}", parameter="targets")
            out.append(_make_target(item["label"], item["energy"], item["uncertainty"],
                                    item.get("unit", "hartree"), where, units))
        elif isinstance(item, (tuple, list)) and len(item) in (3, 4):
            out.append(_make_target(*item[:3], item[3] if len(item) == 4 else "hartree", where, units))
        else:
            raise InputError(f"{where}: expected (label, energy, uncertainty[, unit]) or a dict, got {item!r}",
                             parameter="targets")
    if not out:
        raise InputError("targets: at least one target level is needed", parameter="targets")
    _check_unique(out)
    return out


# --------------------------------------------------------------------------- #
# Result
# --------------------------------------------------------------------------- #

@dataclass
class FitResidual:
    """One target against the fitted potential; energies in hartree."""

    label: str
    target: float
    uncertainty: float
    computed: float  # NaN if not bound at the optimum
    error_estimate: float
    bound: bool

    @property
    def residual(self) -> float:
        """(computed - target) / uncertainty; NaN if the level is not bound."""
        return (self.computed - self.target) / self.uncertainty if self.bound else math.nan


@dataclass(repr=False)
class FitResult(ResultProtocol):
    """The outcome of :func:`fit`; energies in hartree, parameters in atomic units.

    Attributes
    ----------
    potential : str
    free : tuple of str
        The fitted parameters, in order (rows/columns of the matrices).
    values, standard_errors, scaled_standard_errors : dict of str to float
        Best-fit values; errors with the uncertainties taken as absolute;
        the same times sqrt(chi2/dof) (NaN when dof = 0).
    start : dict of str to float
    bounds : dict of str to (float, float)
    parameters : dict
        Every parameter of the fitted potential.
    covariance, correlation : ndarray, shape (len(free), len(free))
    chi2 : float
    dof : int
        Number of targets minus number of free parameters.
    residuals : list of FitResidual
    spurious : list of (label, energy)
        Levels bound by the fitted potential below the highest target that
        are not targets (possible spurious states).
    notes : tuple of Note
        What to know about the fit, coded: ``not_bound``, ``not_converged``,
        ``uncertain_level``, ``undetermined``, ``at_bound``, ``optimizer``,
        ``no_dof``, ``spurious``, ``spurious_search``.
    warnings : list of str
        The notes' texts.
    status : Outcome
        ``success`` when the optimizer converged and every target is bound
        and converged; ``not converged`` when the optimizer stopped early or a
        target level did not converge; ``incomplete`` when a target is not
        bound by the fitted potential.
    success : bool
        ``status is Outcome.SUCCESS``.
    message : str
        The notes as one text (the optimizer's message when there are none).
    optimizer_message : str
        The optimizer's own message.
    evaluations : int
        Solves made (each a full spectrum).
    mass, tol : float
        Reduced mass (in the unit system's mass unit) and tolerance.
    parameter_units : dict of str to str
    units, energy_unit : str
        The unit system of the potential and its energy unit (the default
        unit of reports; the energies above are in hartree).
    """

    potential: str
    free: tuple[str, ...]
    values: dict[str, float]
    standard_errors: dict[str, float]
    scaled_standard_errors: dict[str, float]
    start: dict[str, float]
    bounds: dict[str, tuple[float, float]]
    parameters: dict[str, Any]
    covariance: np.ndarray
    correlation: np.ndarray
    chi2: float
    dof: int
    residuals: list[FitResidual]
    spurious: list[tuple[str, float]]
    notes: tuple[Note, ...]
    status: Outcome
    optimizer_message: str
    evaluations: int
    mass: float
    tol: float
    parameter_units: dict[str, str] = field(default_factory=dict)
    units: str = "atomic"
    energy_unit: str = "hartree"

    @property
    def warnings(self) -> list[str]:
        return [n.text for n in self.notes]

    @property
    def message(self) -> str:
        return message_of(self.notes, f"fit converged ({self.optimizer_message})")

    def _header(self) -> list[tuple[str, Any]]:
        return [("potential", self.potential), *((k, self.values[k]) for k in self.free),
                ("chi2", self.chi2), ("dof", self.dof)]

    def _table_columns(self):
        return ("label", "target", "computed", "residual", "bound")

    def to_table(self, unit: str | None = None) -> str:
        return format_fit(self, unit)

    def records(self, unit: str | None = None) -> list[dict[str, Any]]:
        """One row per target (the ``residuals`` of :meth:`to_dict`)."""
        doc = self.to_dict(unit)
        return [dict(row, unit=doc["unit"]) for row in doc["residuals"]]

    @property
    def chi2_per_dof(self) -> float:
        """chi^2 / dof; NaN when dof = 0."""
        return self.chi2 / self.dof if self.dof > 0 else math.nan

    def to_dict(self, unit: str | None = None) -> dict[str, Any]:
        """Plain data, energies in ``unit`` (default ``energy_unit``; the JSON output)."""
        from radsolve.units import energy_unit_factor

        unit = unit or self.energy_unit
        f = energy_unit_factor(unit)

        def num(x):
            return float(x) if math.isfinite(x) else None

        return {
            "potential": self.potential,
            "free": list(self.free),
            "parameter_units": {k: self.parameter_units.get(k, "") or "dimensionless" for k in self.free},
            "values": {k: num(v) for k, v in self.values.items()},
            "standard_errors": {k: num(v) for k, v in self.standard_errors.items()},
            "scaled_standard_errors": {k: num(v) for k, v in self.scaled_standard_errors.items()},
            "errors_scaled_by_chi2_per_dof": False,
            "start": dict(self.start),
            "bounds": {k: [num(a), num(b)] for k, (a, b) in self.bounds.items()},
            "correlation": [[num(x) for x in row] for row in self.correlation],
            "chi2": num(self.chi2), "dof": self.dof, "chi2_per_dof": num(self.chi2_per_dof),
            "unit": unit,
            "residuals": [
                {"label": r.label, "target": r.target / f, "uncertainty": r.uncertainty / f,
                 "computed": num(r.computed / f), "error_estimate": num(r.error_estimate / f),
                 "residual": num(r.residual), "bound": r.bound}
                for r in self.residuals
            ],
            "spurious": [{"label": lab, "energy": e / f} for lab, e in self.spurious],
            "warnings": list(self.warnings),
            "note": MODEL_NOTE,
            "success": bool(self.success), "status": str(self.status), "message": self.message,
            "notes": [n.to_dict() for n in self.notes], "optimizer_message": self.optimizer_message,
            "evaluations": self.evaluations, "mass": self.mass, "tol": self.tol, "units": self.units,
            "parameters": dict(self.parameters),
        }


# --------------------------------------------------------------------------- #
# The fit
# --------------------------------------------------------------------------- #

def _free_and_bounds(family, free, bounds) -> tuple[list[str], dict[str, tuple[float, float]]]:
    import difflib

    if isinstance(free, str):
        free = [free]
    if isinstance(free, Mapping):
        bounds = {**dict(free), **dict(bounds or {})}
        free = list(free)
    free = list(free or [])
    if not free:
        raise InputError("free: name at least one parameter to fit", parameter="free")
    if len(set(free)) != len(free):
        raise InputError(f"free: a parameter is named twice ({', '.join(free)})", parameter="free")
    limits: dict[str, tuple[float, float]] = {}
    for key in free:
        if key not in family.parameters:
            near = difflib.get_close_matches(key, list(family.parameters), n=1)
            hint = f" (did you mean {near[0]!r}?)" if near else ""
            raise InputError(f"free parameter {key!r}: potential {family.name!r} has no such parameter{hint}; "
                             f"its parameters: {', '.join(family.parameters) or 'none'}", parameter="free")
        spec = family.parameters[key]
        if not spec.is_numeric:
            raise InputError(f"free parameter {key!r} is a {spec.kind}, not a number; it cannot be fitted",
                             parameter="free")
        lo = -math.inf if spec.minimum is None else float(spec.minimum)
        hi = math.inf if spec.maximum is None else float(spec.maximum)
        # Keep clear of an excluded end (a length > 0, say): the potential cannot be built there.
        if spec.exclusive_minimum and math.isfinite(lo):
            lo = lo + 1e-9 * max(abs(lo), 1.0)
        if spec.exclusive_maximum and math.isfinite(hi):
            hi = hi - 1e-9 * max(abs(hi), 1.0)
        given = (bounds or {}).get(key)
        if given is not None:
            if isinstance(given, str) or len(given) != 2:
                raise InputError(f"bounds[{key!r}] must be (low, high) with None for no bound, got {given!r}",
                                 parameter="bounds")
            g_lo = lo if given[0] is None else spec.parse(given[0], key, family.name)
            g_hi = hi if given[1] is None else spec.parse(given[1], key, family.name)
            if not g_lo < g_hi:
                raise InputError(f"bounds of {key!r}: the low bound {g_lo:g} must be below the high bound {g_hi:g}",
                                 parameter="bounds")
            lo, hi = max(lo, g_lo), min(hi, g_hi)
        limits[key] = (lo, hi)
    for key in bounds or {}:
        if key not in free:
            raise InputError(f"bounds given for {key!r}, which is not a free parameter ({', '.join(free)})",
                             parameter="bounds")
    return free, limits


def parse_free(text: str) -> tuple[str, tuple[str | None, str | None] | None]:
    """Read one free-parameter item: ``KEY``, ``KEY:LO:HI``, ``KEY:LO:`` or ``KEY::HI``.

    The bounds stay text (they may carry units); they are read against the
    parameter's kind by :func:`fit`.

    Raises
    ------
    InputError
        Malformed text.
    """
    parts = [p.strip() for p in text.split(":")]
    if not parts[0]:
        raise InputError(f"free {text!r}: the parameter name is missing; expected KEY or KEY:LO:HI",
                         parameter="free")
    if len(parts) == 1:
        return parts[0], None
    if len(parts) != 3:
        raise InputError(f"free {text!r}: expected KEY or KEY:LO:HI (LO or HI may be left empty "
                         "for no bound), e.g. screening_length:0.5:20", parameter="free")
    return parts[0], (parts[1] or None, parts[2] or None)


class _Model:
    """Residuals of the targets for given free-parameter values, with a cache.

    ``options`` go to :func:`radsolve.solve` (mass, tol, method, spin_orbit,
    dimension, units); ``to_hartree`` converts the unit system's energies.
    """

    def __init__(self, base, free, targets, options, to_hartree: float):
        self.base, self.free, self.targets = base, free, targets
        self.options, self.to_hartree = options, to_hartree
        self.ls = sorted({t.l for t in targets})
        self.count = max(t.nodes for t in targets) + 1
        self.cache: dict[tuple, tuple] = {}
        self.evaluations = 0
        self.last = None  # the latest solve: the next one continues from it (its box and energies)

    def solve(self, x):
        from radsolve.core.spectrum import solve

        key = tuple(float(v) for v in x)
        if key not in self.cache:
            pot = self.base.with_parameters(**dict(zip(self.free, key)))
            try:
                result = solve(pot, l=self.ls, count=self.count, continue_from=self.last, **self.options)
            except RadsolveError as exc:
                if isinstance(exc, InputError) and exc.parameter is not None and exc.family is None:
                    raise  # about an argument (tol, dimension, ...), the same at every point
                point = ", ".join(f"{k} = {v:.10g}" for k, v in zip(self.free, key))
                raise type(exc)(f"fit at {point}: {exc}") from None
            self.evaluations += 1
            self.last = result
            found = {(lev.l, getattr(lev, "j", None), lev.nodes): lev for lev in result.levels}
            self.cache[key] = (result, found)
        return self.cache[key]

    def jacobian(self, x, lo, hi, diff_step: float) -> np.ndarray:
        """d residuals / d x: by the Hellmann-Feynman theorem where it applies
        (:meth:`_hellmann_feynman`, no extra solve), else by central differences."""
        rows = self._hellmann_feynman(x)
        return rows if rows is not None else self._differences(x, lo, hi, diff_step)

    def _hellmann_feynman(self, x) -> np.ndarray | None:
        """dE/dp = <u|dV/dp|u> with each target's state on its finest grid, or None where that does not hold.

        Exact for the discrete eigenvalue problem of that grid (Hellmann-Feynman
        theorem, textbook), so the Jacobian differs from that of the
        extrapolated energies only by the grid error, far below what an
        optimizer's step needs.  Not used -- None -- for a relativistic
        equation (its samples are not the states of V alone), a target that
        is not bound here (its residual is V(inf)'s), or a channel potential
        with breakpoints (a jump or kink whose place may move with p: dV/dp
        is then not a function a grid can carry).
        """
        from radsolve.analysis.observables import channel_potential
        from radsolve.core import probe
        from radsolve.core.grids import potential_on_grid

        if self.options.get("equation", "schrodinger") != "schrodinger":
            return None
        result, found = self.solve(x)
        levels = [found.get((t.l, t.j, t.nodes)) for t in self.targets]
        if any(lev is None or not lev.samples for lev in levels):
            return None
        key = tuple(float(v) for v in x)
        out = np.empty((len(self.targets), len(self.free)))
        profiles: dict = {}
        for j, name in enumerate(self.free):
            step = 1e-6 * max(abs(key[j]), 1e-3)
            shifted = []
            for sign in (1.0, -1.0):
                values = dict(zip(self.free, key))
                values[name] = key[j] + sign * step
                try:
                    shifted.append(self.base.with_parameters(**values))
                except RadsolveError:
                    return None  # p +- step leaves the parameter's range: differences decide
            for i, (t, lev) in enumerate(zip(self.targets, levels)):
                channel = channel_potential(result.potential, lev)
                channel_key = (lev.l, getattr(lev, "j", None))
                if channel_key not in profiles:
                    profiles[channel_key] = probe.profile(channel, float(result.mass))
                if profiles[channel_key].breakpoints:
                    return None
                sample = lev.samples[-1]
                plus = potential_on_grid(channel_potential(shifted[0], lev), sample.r, ())
                minus = potential_on_grid(channel_potential(shifted[1], lev), sample.r, ())
                dv = (plus - minus) / (2.0 * step)
                out[i, j] = float(np.sum(sample.weights * sample.u**2 * dv)) * self.to_hartree / t.uncertainty
        return out if np.all(np.isfinite(out)) else None

    def _differences(self, x, lo, hi, diff_step: float) -> np.ndarray:
        """Central differences of the residuals (one-sided at a bound), relative step ``diff_step``."""
        x = np.asarray(x, dtype=float)
        f0 = self.residuals(x)
        out = np.empty((f0.size, x.size))
        for j in range(x.size):
            step = diff_step * max(abs(x[j]), 1.0)
            up, down = x.copy(), x.copy()
            up[j] = min(x[j] + step, hi[j])
            down[j] = max(x[j] - step, lo[j])
            if up[j] == down[j]:
                out[:, j] = 0.0
                continue
            out[:, j] = (self.residuals(up) - self.residuals(down)) / (up[j] - down[j])
        return out

    def residuals(self, x) -> np.ndarray:
        result, found = self.solve(x)
        out = np.empty(len(self.targets))
        for i, t in enumerate(self.targets):
            lev = found.get((t.l, t.j, t.nodes))
            # An unbound target sits at the threshold: continuous as it unbinds.
            energy = (lev.energy if lev is not None else result.v_infinity) * self.to_hartree
            if not math.isfinite(energy):
                energy = t.energy + 1e6 * t.uncertainty  # confining: every level exists; not reached
            out[i] = (energy - t.energy) / t.uncertainty
        return out


def _covariance(jac: np.ndarray) -> tuple[np.ndarray, list[int]]:
    """(J^T J)^-1 through the SVD; returns it and the indices of undetermined directions."""
    _, s, vt = np.linalg.svd(jac, full_matrices=False)
    n = jac.shape[1]
    cutoff = np.finfo(float).eps * max(jac.shape) * (s[0] if s.size else 0.0)
    good = s > cutoff
    inv = np.zeros_like(s)
    inv[good] = 1.0 / s[good] ** 2
    cov = (vt.T * inv) @ vt
    weak = []
    if not good.all() or s.size < n:
        for j in range(n):
            # A parameter with weight in a dropped direction is not determined.
            if np.any(np.abs(vt[~good, j]) > 1e-6) or s.size < n:
                weak.append(j)
                cov[j, j] = math.inf
    return cov, weak


def _spurious(pot, targets: Sequence[Target], options, to_hartree: float) -> tuple[list[tuple[str, float]], list[str]]:
    """Levels below the highest target that are not targets (energies in hartree); and notes.

    Without spin-orbit the lowest level of each l rises with l (the
    centrifugal term grows; variational principle, textbook), so the search
    stops at the first l above the targets' with no level below the highest
    target.  With spin-orbit, which can pull j = l + 1/2 levels down, it stops
    only after three such l in a row.
    """
    from radsolve.core.spectrum import solve

    top = max(t.energy for t in targets)
    wanted = {(t.l, t.j, t.nodes) for t in targets}
    lmax_target = max(t.l for t in targets)
    patience = 3 if options.get("spin_orbit") or options.get("equation") == "dirac" else 1
    extra: list[tuple[str, float]] = []
    notes: list[str] = []
    empty_run = 0
    opts = dict(options, tol=max(options["tol"], 1e-8))
    for l in range(0, 61):
        count = max([t.nodes + 1 for t in targets if t.l == l] + [0]) + 3
        while True:
            result = solve(pot, l=l, count=count, **opts)
            below = [lev for lev in result.levels if lev.energy * to_hartree < top]
            full = all(v is None for v in result.bound_counts.values())
            if len(below) < len(result.levels) or not full or count >= 400:
                break
            count *= 2
        if count >= 400 and below and len(below) == len(result.levels):
            notes.append(f"the search for levels below the highest target stopped at {count} levels of l = {l}")
        extra += [(lev.label, lev.energy * to_hartree) for lev in below
                  if (lev.l, getattr(lev, "j", None), lev.nodes) not in wanted]
        empty_run = 0 if below else empty_run + 1
        if l >= lmax_target and empty_run >= patience:
            break
    return extra, notes


def fit(potential, targets, *, free, bounds=None, fixed=None, mass=None, tol: float = 1e-10,
        method: str = "fd", plugins=None, max_evaluations: int = 400, dimension: int = 3,
        units: str | None = None, equation: str = "schrodinger") -> FitResult:
    """Fit free parameters of a potential family to target levels.

    Parameters
    ----------
    potential : str or Potential
        A family name or a Potential.
    targets : path or list
        A targets CSV file (columns label, energy, uncertainty, unit) or a
        list of :class:`Target`, dicts or (label, energy, uncertainty[, unit]).
        Labels with j (``1p3/2``) fit the spin-orbit split levels of a family
        with a spin-orbit term (then every target needs its j); nuclear
        families label n = nodes + 1.
    free : sequence of str, or dict of str to (low, high)
        The parameters to fit.
    bounds : dict of str to (low, high), optional
        Bounds of free parameters (None for no bound on a side; strings with
        units allowed); the parameters' own allowed ranges always apply.
    fixed : dict, optional
        Values of the other parameters, and the starting values of free ones;
        the rest take their defaults.
    mass, tol, method, plugins, dimension, units :
        As for :func:`radsolve.solve` (``tol`` is the relative accuracy
        asked of each computed energy).
    max_evaluations : int
        Most residual evaluations the optimizer may make.

    Returns
    -------
    FitResult

    Raises
    ------
    InputError
        Bad targets, free parameters or bounds, a start outside the bounds,
        fewer targets than free parameters.
    """
    from scipy.optimize import least_squares

    from radsolve.potentials import as_potential
    from radsolve.units import family_unit_system

    base = as_potential(potential, plugins, fixed)
    family = base.family
    free, limits = _free_and_bounds(family, free, bounds)
    system = family_unit_system(family, units)
    mass = system.parse_mass(mass)
    target_list = as_targets(targets, system.name)
    with_j = {t.j is not None for t in target_list}
    if len(with_j) > 1:
        raise InputError("targets: give j for every target (as in 1p3/2) or for none", parameter="targets")
    spin_orbit = with_j == {True}
    from radsolve.core.relativistic import DIRAC, KLEIN_GORDON, validated_equation

    equation = validated_equation(equation)
    if equation == DIRAC:  # Dirac levels carry j by themselves: every target names it, no spin-orbit term
        if with_j != {True}:
            raise InputError("targets: Dirac levels are labelled with j (as in 2p3/2); give j for every target",
                             parameter="targets")
        spin_orbit = False
    elif equation == KLEIN_GORDON and spin_orbit:
        raise InputError("targets: Klein-Gordon levels (spin 0) have no j; give labels such as 2p",
                         parameter="targets")
    if len(target_list) < len(free):
        raise InputError(f"{len(target_list)} target level(s) cannot determine {len(free)} free parameters; "
                         "give at least as many targets as free parameters")
    if isinstance(max_evaluations, bool) or not isinstance(max_evaluations, int) or max_evaluations < 1:
        raise InputError(f"max_evaluations must be a whole number >= 1, got {max_evaluations!r}",
                         parameter="max_evaluations")
    x0 = np.array([float(base.parameters[k]) for k in free])
    lo = np.array([limits[k][0] for k in free])
    hi = np.array([limits[k][1] for k in free])
    for k, v, a, b in zip(free, x0, lo, hi):
        if not a <= v <= b:
            raise InputError(f"the start value {k} = {v:.10g} is outside its bounds [{a:.10g}, {b:.10g}]; "
                             "give a start inside (fixed / -p)")
    # least_squares needs a start strictly inside the bounds.
    with np.errstate(invalid="ignore"):
        x0 = np.clip(x0, np.where(np.isfinite(lo), lo + 1e-10 * np.maximum(np.abs(lo), 1.0), lo),
                     np.where(np.isfinite(hi), hi - 1e-10 * np.maximum(np.abs(hi), 1.0), hi))

    options = dict(mass=mass, tol=tol, method=method, spin_orbit=spin_orbit, dimension=dimension,
                   units=units, **({} if equation == "schrodinger" else {"equation": equation}))
    to_hartree = system.energy_factor()
    model = _Model(base, free, target_list, options, to_hartree)
    start_result, start_found = model.solve(x0)
    mu = float(start_result.mass)
    v_inf = start_result.v_infinity * to_hartree
    for t in target_list:
        if math.isfinite(v_inf) and t.energy >= v_inf:
            raise InputError(f"target {t.label} ({t.source or 'given'}) has energy {t.energy:.10g} hartree, "
                             f"not below the continuum threshold V(inf) = {v_inf:.6g} hartree of "
                             f"{family.name}; targets are level energies (negative for a bound level "
                             "of a potential that vanishes far away), not binding energies")
    # Where differences are needed, a relative step of tol**(1/3) balances the
    # truncation error of central differences against the solver's noise (~tol).
    diff_step = max(tol ** (1.0 / 3.0), 1e-6)
    solution = least_squares(model.residuals, x0, bounds=(lo, hi),
                             jac=lambda x: model.jacobian(x, lo, hi, diff_step),
                             x_scale="jac", method="trf", max_nfev=max_evaluations,
                             xtol=1e-12, ftol=1e-12, gtol=1e-12)
    best = solution.x
    jac = np.atleast_2d(solution.jac)
    cov, weak = _covariance(jac)
    result, found = model.solve(best)
    residual_vector = model.residuals(best)
    chi2 = float(np.sum(residual_vector**2))
    dof = len(target_list) - len(free)
    errors = np.sqrt(np.clip(np.diag(cov), 0.0, math.inf))
    scale = math.sqrt(chi2 / dof) if dof > 0 else math.nan
    with np.errstate(invalid="ignore", divide="ignore"):
        corr = cov / np.outer(errors, errors)
    corr[~np.isfinite(corr)] = math.nan
    np.fill_diagonal(corr, 1.0)

    notes: list[Note] = []
    residuals: list[FitResidual] = []
    for t in target_list:
        lev = found.get((t.l, t.j, t.nodes))
        residuals.append(FitResidual(t.label, t.energy, t.uncertainty,
                                     lev.energy * to_hartree if lev else math.nan,
                                     lev.error_estimate * to_hartree if lev else math.nan, lev is not None))
        if lev is None:
            notes.append(Note("not_bound", f"target {t.label} is not bound by the fitted potential", t.label))
        elif not lev.converged:
            notes.append(Note("not_converged", f"{t.label} did not converge to tol = {tol:g}", t.label))
        elif lev.error_estimate * to_hartree > 0.1 * t.uncertainty:
            notes.append(Note("uncertain_level", f"the computed {t.label} is uncertain by {lev.error_estimate * to_hartree:.2g} hartree, "
                            f"more than a tenth of its target uncertainty; use a smaller tol", t.label))
    for j in weak:
        notes.append(Note("undetermined", f"{free[j]} is not determined by these targets (singular Jacobian): "
                        "its standard error is infinite", free[j]))
    for k, v, a, b in zip(free, best, lo, hi):
        span = max(abs(v), 1e-30)
        if (math.isfinite(a) and v - a <= 1e-6 * span) or (math.isfinite(b) and b - v <= 1e-6 * span):
            notes.append(Note("at_bound", f"{k} = {v:.10g} is at a bound: its standard error from the Jacobian is not "
                            "meaningful, and a better fit may lie beyond the bound", k))
    if not solution.success:
        notes.append(Note("optimizer", f"the optimizer stopped without converging: {solution.message}"))
    if dof == 0:
        notes.append(Note("no_dof", "as many targets as free parameters: chi^2/dof is undefined and the fit "
                        "cannot be judged by it"))
    pot = base.with_parameters(**dict(zip(free, (float(v) for v in best))))
    spurious, search_notes = _spurious(pot, target_list, options, to_hartree)
    if spurious:
        highest = max(target_list, key=lambda t: t.energy).label
        notes.append(Note("spurious", f"possible spurious states: the fitted potential binds "
                        f"{', '.join(lab for lab, _ in spurious)} below the highest target ({highest}), "
                        "and they are not among the targets"))
    notes += [Note("spurious_search", text) for text in search_notes]
    all_bound = all(r.bound for r in residuals)
    all_converged = all(found[(t.l, t.j, t.nodes)].converged for t in target_list if (t.l, t.j, t.nodes) in found)
    # The optimizer stopping early is "not converged" (the fit's own iteration), like a level's.
    status = (Outcome.INCOMPLETE if not all_bound else
              Outcome.NOT_CONVERGED if not (solution.success and all_converged) else Outcome.SUCCESS)
    return FitResult(
        potential=family.name, free=tuple(free),
        values={k: float(v) for k, v in zip(free, best)},
        standard_errors={k: float(e) for k, e in zip(free, errors)},
        scaled_standard_errors={k: float(e * scale) for k, e in zip(free, errors)},
        start={k: float(v) for k, v in zip(free, x0)},
        bounds={k: limits[k] for k in free},
        parameters=dict(pot.parameters),
        covariance=cov, correlation=corr, chi2=chi2, dof=dof,
        residuals=residuals, spurious=spurious, notes=tuple(notes), status=status,
        optimizer_message=str(solution.message), evaluations=model.evaluations, mass=mu, tol=tol,
        parameter_units={k: family.parameters[k].unit for k in free},
        units=system.name, energy_unit=system.energy_unit,
    )


def format_fit(result: FitResult, unit: str | None = None) -> str:
    """A text report of a fit: parameters, correlation, residuals, warnings."""
    from radsolve.output.report import format_columns
    from radsolve.units import energy_unit_factor

    unit = unit or result.energy_unit
    f = energy_unit_factor(unit)
    mass_unit = "MeV/c^2" if result.units == "nuclear" else "electron masses"
    lines = [f"fit of {result.potential} to {len(result.residuals)} target levels "
             f"(reduced mass {result.mass:.10g} {mass_unit}; {result.evaluations} spectra solved)", ""]
    header = ["parameter", "value", "std.err", "scaled", "unit", "start"]
    rows = []
    for k in result.free:
        rows.append([k, f"{result.values[k]:.10g}", f"{result.standard_errors[k]:.3g}",
                     f"{result.scaled_standard_errors[k]:.3g}",
                     result.parameter_units.get(k, "") or "-", f"{result.start[k]:.6g}"])
    lines += format_columns(header, rows, {1, 2, 3})
    lines.append("std.err: from the Jacobian with the target uncertainties as absolute (not scaled); "
                 "scaled: times sqrt(chi2/dof)")
    chi = "undefined (dof = 0)" if result.dof == 0 else f"{result.chi2_per_dof:.4g}"
    lines += ["", f"chi2 = {result.chi2:.6g}, dof = {result.dof}, chi2/dof = {chi}"]
    if len(result.free) > 1:
        lines += ["", "correlation:"]
        corr_rows = [[k] + [f"{result.correlation[i, j]:+.3f}" for j in range(len(result.free))]
                     for i, k in enumerate(result.free)]
        lines += format_columns([""] + list(result.free), corr_rows, set(range(1, len(result.free) + 1)))
    lines += ["", f"levels (energies in {unit}):"]
    rows = []
    for r in result.residuals:
        rows.append([r.label, f"{r.target / f:.10g}", f"{r.uncertainty / f:.2g}",
                     f"{r.computed / f:.10g}" if r.bound else "not bound",
                     f"{r.residual:+.3f}" if r.bound else ""])
    lines += format_columns(["level", "target", "uncert.", "computed", "resid/sigma"], rows, {1, 2, 3, 4})
    if result.spurious:
        lines += ["", f"bound by the fitted potential below the highest target, not targets ({unit}):"]
        lines += [f"  {lab}  {e / f:.10g}" for lab, e in result.spurious]
    if result.warnings:
        lines.append("")
        lines += [f"WARNING: {w}" for w in result.warnings]
    lines += ["", "Note: " + MODEL_NOTE]
    return "\n".join(lines) + "\n"
