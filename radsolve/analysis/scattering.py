"""Scattering above the threshold: phase shifts, scattering lengths, effective ranges, Levinson's theorem.

:func:`phase_shifts` gives delta_l(E) on an energy grid (each value with an
error estimate and a status; :mod:`radsolve.core.continuum` integrates and
matches).  :func:`scattering` gives, per partial wave, the scattering length
a_l and effective range r_l of

    k**(2l+1) cot(delta_l) = -1/a_l + r_l k**2 / 2 + O(k**4)

(a_l has units length**(2l+1), r_l length**(1-2l)), and checks Levinson's
theorem: delta_l(0) - delta_l(inf) = pi N_l, N_l the number of bound levels
of the partial wave from :func:`radsolve.core.counting.count_bound` (for l = 0
a level exactly at the threshold adds pi/2).  A disagreement is reported as a
failure, never averaged away.

a_l comes from the zero-energy solution u0 = A r**(l+1) + B r**(-l) beyond
the potential: a_l = -B / (A (2l+1)!! (2l-1)!!) (textbook), computed on
halving grids (Richardson) and two radii.  r_l is read from a polynomial fit
in k**2 of k**(2l+1) cot(delta_l) at low energies; its estimate is the
spread of two fits of different degree plus the effect of the phases'
own errors.  A tail falling as r**-q leaves a_l finite only for q > 2l + 3
and r_l only for q > 2l + 5 (textbook threshold laws); beyond that they are
refused with a note.  For a Coulomb tail the phase shift is the one relative
to Coulomb waves (the Coulomb phase sigma_l is reported beside it) and
scattering lengths and Levinson's theorem do not apply.

Model calculations: phase shifts of a model potential are not measured cross
sections of a real system; for safety or dosimetry work use established data
and practice.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from radsolve.core.protocol import Note, Outcome, ResultProtocol, message_of, worst
from radsolve.errors import InputError

#: The one-line caveat carried by the results.
MODEL_NOTE = ("model calculation: phase shifts and scattering parameters of a model potential, not "
              "measured data; for safety or dosimetry work use established data and practice.")
#: Most energies of one call.
ENERGIES_MAX = 1_000_000
#: Tolerance range of phase shifts (absolute, radians).
PHASE_TOL_RANGE = (1e-12, 0.1)


def validated_energies(energies, v_infinity: float, parameter: str = "energies") -> np.ndarray:
    """``energies`` as a float array: non-empty, finite, each above the threshold ``v_infinity``."""
    try:
        e = np.atleast_1d(np.asarray(energies, dtype=float))
    except (TypeError, ValueError):
        raise InputError(f"{parameter} must be numbers (got {energies!r})", parameter=parameter) from None
    if e.ndim != 1 or e.size == 0:
        raise InputError(f"{parameter}: at least one energy is needed (got none)", parameter=parameter)
    if e.size > ENERGIES_MAX:
        raise InputError(f"{parameter}: at most {ENERGIES_MAX} energies per call (got {e.size})",
                         parameter=parameter)
    if not np.all(np.isfinite(e)):
        raise InputError(f"{parameter} must be finite numbers", parameter=parameter)
    low = e <= v_infinity
    if low.any():
        raise InputError(f"{parameter} must lie above the threshold V(inf) = {v_infinity:.10g} (the continuum); "
                         f"got {e[low][0]:.10g}{' and ' + str(int(low.sum()) - 1) + ' more' if low.sum() > 1 else ''}; "
                         "levels below it are bound: use solve()", parameter=parameter)
    return e


def energy_grid(start: float, stop: float, num: int, log: bool = False, parameter: str = "energies") -> np.ndarray:
    """``num`` energies from ``start`` to ``stop`` (geometric with ``log``); InputError for an empty or inverted range."""
    if not (isinstance(num, (int, np.integer)) and not isinstance(num, bool)) or num < 1:
        raise InputError(f"{parameter}: the number of energies must be a whole number >= 1 (got {num!r})",
                         parameter=parameter)
    if not (math.isfinite(start) and math.isfinite(stop)):
        raise InputError(f"{parameter}: start and stop must be finite (got {start!r}, {stop!r})", parameter=parameter)
    if num > 1 and not start < stop:
        raise InputError(f"{parameter}: the range {start:g} ... {stop:g} is empty or inverted; "
                         "allowed: START < STOP", parameter=parameter)
    if log and start <= 0:
        raise InputError(f"{parameter}: a geometric range needs START > 0 (got {start:g})", parameter=parameter)
    return np.geomspace(start, stop, num) if log else np.linspace(start, stop, num)


def _validated_phase_tol(tol) -> float:
    from radsolve.core.targets import validated_tol

    return validated_tol(tol, limits=PHASE_TOL_RANGE)


def _setup(potential, l, mass, plugins, units, dimension, hard_core):
    from radsolve.core import probe as probing
    from radsolve.core.inputs import validated_dimension, validated_l
    from radsolve.potentials import as_potential
    from radsolve.units import family_unit_system

    ls = validated_l(l)
    dimension = validated_dimension(dimension)
    if dimension % 2 == 0:
        raise InputError(f"dimension {dimension}: phase shifts are matched to Riccati-Bessel functions of whole "
                         "order, so the space dimension must be odd (3, 5, ...)", parameter="dimension")
    pot = as_potential(potential, plugins)
    system = family_unit_system(getattr(pot, "family", pot), units)
    mu = system.parse_mass(mass)
    kinetic = system.kinetic_mass(mu)
    if hard_core is not None:
        if not (isinstance(hard_core, (int, float)) and math.isfinite(hard_core) and hard_core > 0):
            raise InputError(f"hard_core must be a radius > 0 (got {hard_core!r})", parameter="hard_core")
        hard_core = float(hard_core)
    channels = []
    shift = (dimension - 3) // 2
    for li in ls:
        cpot = pot.channel(li, None) if hasattr(pot, "channel") else pot
        prof = probing.profile(cpot, kinetic)
        if hard_core is None:
            prof.check_bounded_below(li + shift, kinetic)
        channels.append((li, li + shift, cpot, prof))
    return pot, system, mu, kinetic, channels, hard_core


def _params(pot) -> dict:
    return dict(getattr(pot, "parameters", {}) or {})


# --------------------------------------------------------------------------- phase shifts


@dataclass(repr=False)
class PhaseShiftResult(ResultProtocol):
    """delta_l(E) of one potential on an energy grid (the result protocol).

    Attributes: ``energies`` (the unit system's energy unit), ``ls``,
    ``phase`` and ``error`` (arrays l x energy, radians), ``converged``,
    ``coulomb_phase`` (sigma_l for a Coulomb tail, else None), ``tail``
    (``"short"`` or ``"coulomb"``), ``v_infinity``.  Note codes:
    ``not_converged`` (some phase did not reach ``tol``), ``tail_limited``
    (matching radius capped, the tail's share is in the estimate),
    ``coulomb`` (the phases are relative to Coulomb waves).
    """

    potential: str
    parameters: dict
    units: str
    mass: float
    tol: float
    v_infinity: float
    energies: np.ndarray
    ls: list
    phase: np.ndarray
    error: np.ndarray
    converged: np.ndarray
    tail: str
    coulomb_phase: np.ndarray | None
    hard_core: float | None
    notes: list = field(default_factory=list)

    @property
    def status(self) -> Outcome:
        return Outcome.SUCCESS if bool(np.all(self.converged)) else Outcome.NOT_CONVERGED

    @property
    def message(self) -> str:
        return message_of(self.notes, f"{self.phase.size} phase shifts converged to tol {self.tol:g}")

    @property
    def wavenumbers(self) -> np.ndarray:
        from radsolve.units import unit_system

        return np.sqrt(2.0 * unit_system(self.units).kinetic_mass(self.mass) * (self.energies - self.v_infinity))

    def records(self, unit: str | None = None) -> list[dict[str, Any]]:
        factor = _energy_factor(self.units, unit)
        k = self.wavenumbers
        rows = []
        for i, l in enumerate(self.ls):
            for j, e in enumerate(self.energies):
                row = {"l": l, "energy": float(e) / factor, "k": float(k[j]), "phase_shift": float(self.phase[i, j]),
                       "error_estimate": float(self.error[i, j]), "converged": bool(self.converged[i, j])}
                if self.coulomb_phase is not None:
                    row["coulomb_phase"] = float(self.coulomb_phase[i, j])
                rows.append(row)
        return rows

    def to_dict(self, unit: str | None = None) -> dict[str, Any]:
        return {"kind": "phase_shifts", "status": str(self.status), "success": self.success,
                "message": self.message, "notes": [n.to_dict() for n in self.notes],
                "potential": self.potential, "parameters": self.parameters, "units": self.units,
                "energy_unit": _unit_name(self.units, unit), "mass": self.mass, "tol": self.tol,
                "v_infinity": self.v_infinity / _energy_factor(self.units, unit), "tail": self.tail,
                "hard_core": self.hard_core, "note": MODEL_NOTE, "rows": self.records(unit)}

    def _header(self):
        return [("potential", self.potential), ("l", self.ls), ("energies", int(self.energies.size)),
                ("tail", self.tail), ("tol", self.tol)]

    def _table_columns(self):
        cols = ["l", "energy", "k", "phase_shift", "error_estimate", "converged"]
        return cols + (["coulomb_phase"] if self.coulomb_phase is not None else [])


def _energy_factor(system: str, unit: str | None) -> float:
    """Stored energy units per output unit (1 when ``unit`` is None)."""
    if unit is None:
        return 1.0
    from radsolve.units import energy_unit_factor, unit_system

    factor = energy_unit_factor(unit)
    return factor if system == "atomic" else factor / unit_system(system).energy_factor()


def _unit_name(system: str, unit: str | None) -> str:
    return unit if unit is not None else ("hartree" if system == "atomic" else "MeV")


def phase_shifts(potential, energies, l=0, *, mass=None, tol: float = 1e-8, hard_core: float | None = None,
                 plugins=None, units: str | None = None, dimension: int = 3) -> PhaseShiftResult:
    """Phase shifts delta_l(E) at ``energies`` (the unit system's energy unit, each above V(inf)).

    Parameters
    ----------
    potential : Potential or str
    energies : sequence of float
        Energies (not measured from the threshold: E, as levels are given).
    l : int or sequence of int
    mass : float or str, optional
        Reduced mass, as for :func:`radsolve.solve`.
    tol : float
        Target absolute error of each phase shift, radians (1e-12 ... 0.1).
    hard_core : float, optional
        A radius inside which the wave vanishes (a hard sphere), added to V.
    units, plugins, dimension
        As for :func:`radsolve.solve` (odd dimensions only).

    Returns
    -------
    PhaseShiftResult
        phase[l, E] continuous in E, tending to 0 as E -> inf for potentials
        regular at the origin; for a Coulomb tail the phase relative to
        Coulomb waves, with ``coulomb_phase`` = arg Gamma(l + 1 + i eta).
    """
    from radsolve.core.continuum import channel_phases

    tol = _validated_phase_tol(tol)
    pot, system, mu, kinetic, channels, hard_core = _setup(potential, l, mass, plugins, units, dimension,
                                                          hard_core)
    v_inf = channels[0][3].v_infinity
    if math.isinf(v_inf):
        from radsolve.core.continuum import channel_tail

        channel_tail(channels[0][2], channels[0][3], kinetic, 1.0, 1.0, tol, 1.0)  # raises: no continuum
    e = validated_energies(energies, v_inf)
    phase, error, conv, coul = [], [], [], []
    notes: list[Note] = []
    tail_kind = "short"
    for li, L, cpot, prof in channels:
        ch = channel_phases(cpot, prof, L, li, kinetic, e - prof.v_infinity, tol, hard_core=hard_core)
        phase.append(ch.phase)
        error.append(ch.error)
        conv.append(ch.converged)
        tail_kind = ch.tail.kind
        if ch.coulomb_phase is not None:
            coul.append(ch.coulomb_phase)
        if ch.tail.limited:
            notes.append(Note("tail_limited", f"l = {li}: {ch.notes[0]}", f"l={li}"))
        bad = int(np.count_nonzero(~ch.converged))
        if bad:
            notes.append(Note("not_converged", f"l = {li}: {bad} of {e.size} phase shifts did not reach tol "
                                               f"{tol:g} (largest estimate {float(np.nanmax(ch.error)):.2g})",
                              f"l={li}"))
    if tail_kind == "coulomb":
        notes.append(Note("coulomb", "Coulomb tail: phase shifts are relative to Coulomb waves; the total is "
                                     "coulomb_phase + phase_shift"))
    return PhaseShiftResult(potential=pot.name, parameters=_params(pot), units=system.name, mass=mu, tol=tol,
                            v_infinity=v_inf, energies=e, ls=[c[0] for c in channels], phase=np.array(phase),
                            error=np.array(error), converged=np.array(conv), tail=tail_kind,
                            coulomb_phase=np.array(coul) if coul else None, hard_core=hard_core, notes=notes)
