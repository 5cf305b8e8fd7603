"""What a solve returns: :class:`Level` and :class:`SolveResult`.

All energies here are in hartree and all lengths in bohr; conversion to other
units happens only in :meth:`SolveResult.to_dict` and in the command line.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np

from radsolve.core.protocol import Note, Outcome, ResultProtocol, message_of

SPECTROSCOPIC_LETTERS = "spdfghiklmnoqrtuvwxyz"  # j is skipped by convention


def certificate_key(l: int, j: float | None):
    """The key of a partial wave in ``SolveResult.certificates`` and ``bound_counts``: l, or ``"l=1,j=3/2"``."""
    return l if j is None else f"l={l},j={int(round(2 * j))}/2"


def orbital_letter(l: int) -> str:
    """Spectroscopic letter of orbital angular momentum ``l`` (s, p, d, f, g, h, i, k, ...)."""
    if l < len(SPECTROSCOPIC_LETTERS):
        return SPECTROSCOPIC_LETTERS[l]
    return f"[l={l}]"


def level_label(n: int, l: int) -> str:
    """Spectroscopic label such as ``"3d"`` for principal number ``n`` and ``l``."""
    return f"{n}{orbital_letter(l)}"


def level_designation(nodes: int, l: int, j: float | None = None, units: str = "atomic") -> tuple[int, str]:
    """(n, label) of the level with ``nodes`` nodes.

    Atomic physics: n = nodes + l + 1 (``"2p"``, ``"2p3/2"``).  Nuclear
    physics (``units="nuclear"``): the shell-model n = nodes + 1
    (``"1p3/2"``, ``"2s1/2"``).
    """
    n = nodes + 1 if units == "nuclear" else nodes + l + 1
    label = level_label(n, l)
    if j is not None:
        label += f"{int(round(2 * j))}/2"
    return n, label


@dataclass(frozen=True)
class GridSample:
    """One wavefunction on one grid of the refinement sequence.

    Attributes
    ----------
    step : float
        Uniform step ``h`` of the mapping variable x of this grid.
    r : ndarray
        Radii of the grid points, bohr.
    weights : ndarray
        Quadrature weights, bohr, so that ``sum(weights * f(r))`` approximates
        the integral of f over r (trapezoid rule in x, which is spectrally
        accurate for the decaying integrands met here).
    u : ndarray
        Reduced radial function u(r) = r R(r) at ``r``, normalized so that
        ``sum(weights * u**2) == 1``, positive near the origin; bohr**-1/2.
    energy : float
        The energy on this grid before extrapolation, hartree.
    mapping : radsolve.core.grids.Mapping or None
        The map between the grid variable (uniform, step ``step``) and r.
    """

    step: float
    r: np.ndarray
    weights: np.ndarray
    u: np.ndarray
    energy: float
    mapping: Any = None

    def __repr__(self) -> str:
        return f"GridSample(step={self.step:.4g}, points={len(self.r)}, energy={self.energy!r})"


@dataclass
class Level:
    """One bound level.

    Attributes
    ----------
    n, l, nodes : int
        Principal number n = nodes + l + 1, orbital angular momentum, number
        of interior zeros of u.
    label : str
        Spectroscopic label, e.g. ``"2p"``.
    energy : float
        Best energy estimate (Richardson-extrapolated), hartree.
    error_estimate : float
        Estimated absolute error of ``energy``, hartree (non-negative).
    converged : bool
        Whether ``error_estimate <= tol * |energy|`` was reached.
    method : str
        ``"fd"``, ``"numerov"`` or ``"both"``.
    order : float or None
        Observed order of convergence in the grid step (None if fewer than
        three grids were used).
    samples : tuple of GridSample
        The state on each grid of the refinement sequence, coarsest first.
        ``samples[-1]`` is the finest; observables extrapolate across them.
    exact : float or None
        The exact energy, hartree, when the potential knows it (pure Coulomb,
        harmonic, ...).
    method_energies : dict
        For ``method="both"``: each method's own energy, hartree.
    method_errors : dict
        For ``method="both"``: each method's own error estimate, hartree.
    j : float or None
        Total angular momentum l +- 1/2 when a spin-orbit term was included.
    degeneracy : int
        Number of states in the level: 2j+1 with spin-orbit, else the
        orbital multiplicity (2l+1 in three dimensions; spin not counted).
    sample_method : str
        The method that produced ``samples`` (for ``"both"``, the one with
        the smaller estimate); its error expansion is
        ``radsolve.core.solvers.solver_class(sample_method).error_orders``.
    status : radsolve.core.targets.Status
        Why the refinement ended: ``converged``, or the cause it did not
        (rounding floor, finest grid, potential accuracy, box, order not
        established, near-degenerate, count uncertain).
    scale : float
        What the relative error is relative to: |E|, or |E - V(inf)| when
        that is larger.
    convergence : dict
        The record behind ``status``: grids used, observed order and whether
        it is the expected one, the wall and inner-boundary shifts, the
        rounding floor, the potential's own accuracy, near-degeneracy.
    """

    n: int
    l: int
    nodes: int
    label: str
    energy: float
    error_estimate: float
    converged: bool
    method: str
    order: float | None = None
    samples: tuple[GridSample, ...] = ()
    exact: float | None = None
    method_energies: dict[str, float] = field(default_factory=dict)
    method_errors: dict[str, float] = field(default_factory=dict)
    sample_method: str = ""
    j: float | None = None
    degeneracy: int = 1
    status: Any = None
    scale: float | None = None
    convergence: dict[str, Any] = field(default_factory=dict)

    def __repr__(self) -> str:
        status = "" if self.status is None else f", status={str(self.status)!r}"
        return (f"Level({self.label!r}, n={self.n}, l={self.l}, energy={self.energy!r}, "
                f"error_estimate={self.error_estimate:.2e}{status})")

    @property
    def r(self) -> np.ndarray:
        """Radii of the finest grid, bohr."""
        return self.samples[-1].r

    @property
    def u(self) -> np.ndarray:
        """Normalized u(r) on the finest grid, bohr**-1/2, positive near r = 0."""
        return self.samples[-1].u

    @property
    def R(self) -> np.ndarray:
        """Radial function R(r) = u(r)/r on the finest grid, bohr**-3/2."""
        return self.samples[-1].u / self.samples[-1].r

    @property
    def deviation(self) -> float | None:
        """``energy - exact`` in hartree, when the exact value is known."""
        return None if self.exact is None else self.energy - self.exact

    @property
    def relative_error_estimate(self) -> float:
        """``error_estimate`` relative to :attr:`scale` (|E| when no scale was recorded)."""
        scale = abs(self.energy) if self.scale is None else self.scale
        return self.error_estimate / scale if scale else float("inf")

    def to_dict(self, unit_factor: float = 1.0) -> dict[str, Any]:
        """Plain-data view; energies divided by ``unit_factor`` (hartree per unit)."""
        out: dict[str, Any] = {
            "n": self.n,
            "l": self.l,
            "nodes": self.nodes,
            "label": self.label,
            "energy": self.energy / unit_factor,
            "error_estimate": self.error_estimate / unit_factor,
            "converged": bool(self.converged),
        }
        if self.status is not None:
            out["status"] = str(self.status)
        if self.j is not None:
            out["j"] = self.j
            out["degeneracy"] = self.degeneracy
        if self.exact is not None:
            out["exact"] = self.exact / unit_factor
            out["deviation"] = (self.energy - self.exact) / unit_factor
        if self.method_energies:
            out["method_energies"] = {k: v / unit_factor for k, v in self.method_energies.items()}
        if self.convergence:
            out["convergence"] = {k: (v / unit_factor if k in _ENERGY_RECORD_KEYS and v is not None else v)
                                  for k, v in self.convergence.items()}
        return out


#: The entries of a level's convergence record that are energies (converted with the level's energy).
_ENERGY_RECORD_KEYS = frozenset({"wall", "inner_boundary", "rounding_floor", "potential_limit", "near_degenerate"})

#: Columns of a level's record (CSV, pandas), in order; optional ones appear only when some level has them.
LEVEL_COLUMNS = ("n", "l", "nodes", "label", "energy", "error_estimate", "converged")
OPTIONAL_LEVEL_COLUMNS = (("status",), ("j", "degeneracy"), ("exact", "deviation"),
                          ("bound_count", "bound_count_certain"))


@dataclass(repr=False)
class SolveResult(ResultProtocol):
    """The bound levels of one potential, as returned by :func:`radsolve.solve`.

    Attributes
    ----------
    levels : list of Level
        Sorted by l, then by n.
    status : radsolve.core.protocol.Outcome
        ``success`` when every level the counts promise (up to ``count`` per
        partial wave) is listed and converged to ``tol``; ``not converged``
        when some level did not reach ``tol``; ``incomplete`` when a level the
        count says is bound is missing or a count is uncertain.
    success : bool
        ``status is Outcome.SUCCESS``.
    notes : tuple of Note
        What the user should know, each with a code (``no_bound``,
        ``fewer_bound``, ``levels_missing``, ``count_uncertain``,
        ``count_disagreement``, ``not_listed``, ``not_converged``,
        ``potential_accuracy``, ``near_degenerate``, ``box``, ...).
    message : str
        The notes as one human-readable text.
    potential : Potential
        The potential solved.
    mass : float
        Reduced mass, electron masses.
    tol : float
        Target relative error of each energy.
    method : str
        Method used.
    bound_counts : dict
        For each l asked, the number of bound levels returned when fewer than
        ``count`` are; ``None`` when ``count`` of them are.
    certificates : dict
        For each l asked (or "l=1,j=3/2" keys with spin-orbit), a
        :class:`radsolve.core.counting.BoundCount`: how many levels that partial
        wave binds (``count``; None for infinitely many), established without
        a box from the threshold-energy solution or the potential's tail,
        ``certain``, and a ``note`` on how it was found.
    v_infinity : float
        The continuum threshold lim V(r), r -> inf (inf if confining).
    units : str
        The unit system of all energies, lengths and the mass: ``"atomic"``
        (hartree, bohr, electron masses) or ``"nuclear"`` (MeV, fm, MeV/c^2).
    dimension : int
        The space dimension d.
    statistics : dict
        What the eigenvalue searches did, summed over methods and grids
        (``confirmed`` predicted windows, ``missed`` ones found again by
        bisection, ``bisected`` levels, ``sturm_counts``, ``solves``): a
        debug statistic for benchmarks, not part of the serialised result.
    """

    levels: list[Level]
    potential: Any
    mass: float
    tol: float
    method: str
    bound_counts: dict
    v_infinity: float
    units: str = "atomic"
    dimension: int = 3
    certificates: dict = field(default_factory=dict)
    status: Outcome = Outcome.SUCCESS
    notes: tuple[Note, ...] = ()
    statistics: dict = field(default_factory=dict)
    equation: str = "schrodinger"
    #: relativistic solves: True when the family's Lorentz-scalar potential was added (``scalar=True``)
    scalar: bool = False

    @property
    def convention(self) -> str | None:
        """For a relativistic result, the equation's conventions (mass, potential, energy zero); else None."""
        if self.equation == "schrodinger":
            return None
        from radsolve.core.relativistic.front import CONVENTIONS

        return CONVENTIONS.get(self.equation)

    @property
    def message(self) -> str:
        if self.levels:
            default = f"all {len(self.levels)} levels converged to tol = {self.tol:.1e}"
        else:
            default = "no level"
        return message_of(self.notes, default)

    def _header(self) -> list[tuple[str, Any]]:
        params = ", ".join(f"{k}={v}" for k, v in self.potential.parameters.items())
        name = f"{self.potential.name}({params})"
        if not params and getattr(getattr(self.potential, "family", None), "formula", None):
            name = self.potential.family.formula  # a formula or table says what it is by its expression
        header = [("potential", name), ("method", self.method), ("tol", self.tol),
                  ("unit", self._unit(None)[0]), ("levels", len(self.levels))]
        if self.equation != "schrodinger":
            header.insert(1, ("equation", self.equation))
        return header

    def _table_columns(self):
        return ("label", "energy", "error_estimate", "status") if any(
            lev.status is not None for lev in self.levels) else ("label", "energy", "error_estimate", "converged")

    def _count_cells(self, lev: Level) -> tuple[Any, Any]:
        cert = (self.certificates or {}).get(certificate_key(lev.l, lev.j))
        if cert is None:
            return None, None
        return ("inf" if cert.count is None else cert.count), bool(cert.certain)

    def records(self, unit: str | None = None) -> list[dict[str, Any]]:
        """One flat dict per level (energies in ``unit``), with the columns of the CSV output."""
        unit, factor = self._unit(unit)
        wanted = list(LEVEL_COLUMNS)
        present = {
            ("status",): any(lev.status is not None for lev in self.levels),
            ("j", "degeneracy"): any(lev.j is not None for lev in self.levels),
            ("exact", "deviation"): any(lev.exact is not None for lev in self.levels),
            ("bound_count", "bound_count_certain"): bool(self.certificates),
        }
        for group in OPTIONAL_LEVEL_COLUMNS:
            if present[group]:
                wanted.extend(group)
        wanted.append("unit")
        rows = []
        for lev in self.levels:
            d = lev.to_dict(factor)
            d["unit"] = unit
            d["bound_count"], d["bound_count_certain"] = self._count_cells(lev)
            rows.append({c: d.get(c) for c in wanted})
        return rows

    def _unit(self, unit: str | None) -> tuple[str, float]:
        from radsolve.units import energy_unit_factor, unit_system

        system = unit_system(self.units)
        unit = system.energy_unit if unit is None else unit
        # energies are stored in the system's unit: factor = (system unit) per (unit)
        return unit, energy_unit_factor(unit) / system.energy_factor()

    def level(self, label: str) -> Level:
        """The level with spectroscopic ``label`` (e.g. ``"2p"``); KeyError if absent."""
        for lev in self.levels:
            if lev.label == label:
                return lev
        raise KeyError(label)

    @property
    def energies(self) -> np.ndarray:
        """Energies of ``levels`` in order, hartree."""
        return np.array([lev.energy for lev in self.levels])

    def to_dict(self, unit: str | None = None) -> dict[str, Any]:
        """The JSON document of the command line, energies in ``unit``.

        ``unit`` defaults to the unit system's energy unit (hartree or MeV).
        """
        from radsolve.units import unit_system

        system = unit_system(self.units)
        unit, factor = self._unit(unit)
        return {
            "potential": self.potential.name,
            "parameters": dict(self.potential.parameters),
            "units": self.units,
            "dimension": self.dimension,
            "mass": self.mass,
            "mass_unit": system.mass_unit,
            "unit": unit,
            "method": self.method,
            "tol": self.tol,
            **({} if self.equation == "schrodinger" else {"equation": self.equation,
                                                          "convention": self.convention,
                                                          "scalar": bool(self.scalar)}),
            "success": bool(self.success),
            "status": str(self.status),
            "message": self.message,
            "notes": [n.to_dict() for n in self.notes],
            "certificates": {str(k): v.to_dict() for k, v in self.certificates.items()},
            "levels": [lev.to_dict(factor) for lev in self.levels],
        }
