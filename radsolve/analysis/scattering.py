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
halving grids (Richardson) and two radii.  r_l comes from the energy
derivative u1 = du/dE of the same solution (integrated beside it): beyond the
potential u1 = A1 r**(l+1) + B1 r**(-l) plus the energy derivatives of the free
solutions, and r_l = (2l+1)!! (2l-1)!! (A1 B - A B1) / (m B**2).  A tail falling as r**-q leaves a_l finite only for q > 2l + 3
and r_l only for q > 2l + 5 (textbook threshold laws); beyond that they are
refused with a note.  For a Coulomb tail the phase shift is the one relative
to Coulomb waves (the Coulomb phase sigma_l is reported beside it).  A
repulsive one keeps Levinson's theorem, and for l = 0 has the Coulomb-modified
expansion C0**2 k cot(delta) + (2/a_B) h(eta) = -1/a_c + r_c k**2/2 (reported as
a_l, r_l; :func:`_coulomb_effective_range`); an attractive one binds infinitely
many levels and is refused.

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
from radsolve.units import stored_energy_factor as _energy_factor
from radsolve.units import stored_energy_unit as _unit_name
from radsolve.errors import InputError

#: The one-line caveat carried by the results.
MODEL_NOTE = ("model calculation: continuum quantities of a model potential (phase shifts, scattering "
              "parameters, cross sections, logarithmic derivatives), not measured data; for safety or "
              "dosimetry work use established data and practice.")
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


def _setup(potential, l, mass, plugins, units, dimension, hard_core, spin_orbit: bool = False):
    from radsolve.core import probe as probing
    from radsolve.core.inputs import validated_dimension, validated_l
    from radsolve.potentials import as_potential
    from radsolve.units import family_unit_system

    ls = validated_l(l)
    dimension = validated_dimension(dimension)
    pot = as_potential(potential, plugins)
    system = family_unit_system(getattr(pot, "family", pot), units)
    mu = system.parse_mass(mass)
    kinetic = system.kinetic_mass(mu)
    if hard_core is not None:
        if not (isinstance(hard_core, (int, float)) and math.isfinite(hard_core) and hard_core > 0):
            raise InputError(f"hard_core must be a radius > 0 (got {hard_core!r})", parameter="hard_core")
        hard_core = float(hard_core)
    if spin_orbit and not getattr(pot, "has_spin_orbit", False):
        raise InputError(f"spin_orbit was asked for, but potential {pot.name!r} has no spin-orbit term "
                         "(families with one define spin_orbit(r, ...))", parameter="spin_orbit")
    channels = []
    shift = 0.5 * (dimension - 3)  # L = l + (d - 3)/2: half-integer in even dimensions
    for li in ls:
        for j in (([0.5] if li == 0 else [li - 0.5, li + 0.5]) if spin_orbit else [None]):
            cpot = pot.channel(li, j) if hasattr(pot, "channel") else pot
            prof = probing.profile(cpot, kinetic)
            if hard_core is None:
                prof.check_bounded_below(li + shift, kinetic)
            channels.append((li, li + shift, cpot, prof) if j is None else _JChannel(li, li + shift, cpot, prof, j))
    return pot, system, mu, kinetic, channels, hard_core


class _JChannel(tuple):
    """(l, L, potential, profile) of one (l, j) channel, with ``j`` as an attribute."""

    def __new__(cls, l, L, cpot, prof, j):
        out = super().__new__(cls, (l, L, cpot, prof))
        out.j = j
        return out


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
    ``grid_limited`` (energies too high for the grids allowed),
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
    js: list | None = None  # j of each row of ``phase`` with spin-orbit, else None
    dimension: int = 3

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

    @property
    def _has_cross_sections(self) -> bool:
        return self.coulomb_phase is None and self.dimension == 3

    def cross_sections(self) -> tuple[np.ndarray, np.ndarray]:
        """Elastic partial cross sections sigma_l = 4 pi (2l+1) sin(delta_l)**2 / k**2 (textbook; with
        spin-orbit, 4 pi (2j+1)/2 sin(delta_lj)**2 / k**2, spin-averaged) and their
        estimates (length**2 of the unit system: bohr**2 or fm**2), arrays l x energy.

        Their sum over the l computed is the total only when the higher l no longer
        contribute.  Not defined for a Coulomb tail (InputError).
        """
        if self.coulomb_phase is not None:
            raise InputError("elastic cross sections of a Coulomb tail diverge (Rutherford scattering); "
                             "only the phase shifts are given", parameter="potential")
        if self.dimension != 3:
            raise InputError(f"elastic cross sections are given in three dimensions only (these phase shifts "
                             f"are of dimension {self.dimension}); only the phase shifts are given",
                             parameter="dimension")
        k = self.wavenumbers
        # spin 1/2 with a spin-orbit term: (2j + 1)/2 per (l, j), summing to 2l + 1 over j (textbook)
        two_l = np.array([2 * l + 1 for l in self.ls] if self.js is None else [j + 0.5 for j in self.js],
                         dtype=float)[:, None]
        sigma = 4.0 * math.pi * two_l * np.sin(self.phase) ** 2 / k[None, :] ** 2
        error = 4.0 * math.pi * two_l * np.abs(np.sin(2.0 * self.phase)) * self.error / k[None, :] ** 2
        return sigma, error

    def records(self, unit: str | None = None) -> list[dict[str, Any]]:
        factor = _energy_factor(self.units, unit)
        k = self.wavenumbers
        partial = self.cross_sections()[0] if self._has_cross_sections else None
        rows = []
        for i, l in enumerate(self.ls):
            for j, e in enumerate(self.energies):
                row = {"l": l} if self.js is None else {"l": l, "j": self.js[i]}
                row |= {"energy": float(e) / factor, "k": float(k[j]), "phase_shift": float(self.phase[i, j]),
                       "error_estimate": float(self.error[i, j]), "converged": bool(self.converged[i, j])}
                if self.coulomb_phase is not None:
                    row["coulomb_phase"] = float(self.coulomb_phase[i, j])
                elif partial is not None:
                    row["cross_section"] = float(partial[i, j])
                rows.append(row)
        return rows

    def to_dict(self, unit: str | None = None) -> dict[str, Any]:
        return {"kind": "phase_shifts", "status": str(self.status), "success": self.success,
                "message": self.message, "notes": [n.to_dict() for n in self.notes],
                "potential": self.potential, "parameters": self.parameters, "units": self.units,
                "energy_unit": _unit_name(self.units, unit), "mass": self.mass, "tol": self.tol,
                "v_infinity": self.v_infinity / _energy_factor(self.units, unit), "tail": self.tail,
                "hard_core": self.hard_core, "dimension": self.dimension, "note": MODEL_NOTE,
                "rows": self.records(unit)}

    def _header(self):
        return [("potential", self.potential), ("l", self.ls), ("energies", int(self.energies.size)),
                ("tail", self.tail), ("tol", self.tol)]

    def to_table(self, unit: str | None = None) -> str:
        """Every phase shift, one line each, under a header; the message and the caveat below."""
        name = _unit_name(self.units, unit)
        head = [f"phase shifts of {self.potential} {_param_text(self.parameters)}".rstrip(),
                f"  mass {self.mass:.10g}, {self.units} units, tail: {self.tail}"
                + (f", hard core r < {self.hard_core:.10g}" if self.hard_core is not None else "")
                + f", tol {self.tol:g} rad"]
        cols = f"{'l':>3}  " + ("" if self.js is None else f"{'j':>4}  ") + f"{'E (' + name + ')':>16}  {'k':>12}  {'delta (rad)':>18}  {'estimate':>8}"
        length = "bohr" if self.units == "atomic" else "fm"
        if self.coulomb_phase is not None:
            cols += f"  {'sigma_l (rad)':>16}"
        elif self._has_cross_sections:
            cols += f"  {'cross section (' + length + '^2)':>22}"
        lines = head + ["", cols]
        for row in self.records(unit):
            text = (f"{row['l']:>3}  " + ("" if self.js is None else f"{row['j']:>4g}  ")
                    + f"{row['energy']:>16.10g}  {row['k']:>12.8g}  {row['phase_shift']:>18.12f}  "
                    f"{row['error_estimate']:>8.1e}")
            if "coulomb_phase" in row:
                text += f"  {row['coulomb_phase']:>16.12f}"
            elif "cross_section" in row:
                text += f"  {row['cross_section']:>22.10g}"
            lines.append(text + ("" if row["converged"] else "  not converged"))
        lines += ["", f"status: {self.status}; {self.message}", f"note: {MODEL_NOTE}"]
        return "\n".join(lines) + "\n"

    def _table_columns(self):
        cols = ["l"] + ([] if self.js is None else ["j"]) + ["energy", "k", "phase_shift", "error_estimate", "converged"]
        return cols + (["coulomb_phase"] if self.coulomb_phase is not None else [])


def _param_text(parameters: dict) -> str:
    return " ".join(f"{k}={v:.10g}" if isinstance(v, float) else f"{k}={v}" for k, v in parameters.items())




def phase_shifts(potential, energies, l=0, *, mass=None, tol: float = 1e-8, hard_core: float | None = None,
                 plugins=None, units: str | None = None, dimension: int = 3,
                 spin_orbit: bool = False, workers: int | None = None,
                 progress: bool | None = None) -> PhaseShiftResult:
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
    spin_orbit : bool
        One phase shift per (l, j = l -+ 1/2) with the family's V_so(r) <l.s>.
    units, plugins, dimension
        As for :func:`radsolve.solve` (any dimension >= 2; a Coulomb tail in odd ones only).
    workers : int, optional
        Worker processes (default 1: this process).  The energies are cut into
        fixed pieces (:mod:`radsolve.analysis.energy_pieces`) whatever the count,
        so the rows do not depend on it.
    progress : bool, optional
        A progress bar on stderr (None: only when stderr is a terminal).

    Returns
    -------
    PhaseShiftResult
        phase[l, E] continuous in E, tending to 0 as E -> inf for potentials
        regular at the origin; for a Coulomb tail the phase relative to
        Coulomb waves, with ``coulomb_phase`` = arg Gamma(l + 1 + i eta).
    """
    from radsolve.analysis.energy_pieces import pieces, run_pieces, validated_workers
    from radsolve.core.continuum import channel_phases, joined_pieces

    tol = _validated_phase_tol(tol)
    workers = validated_workers(workers)
    pot, system, mu, kinetic, channels, hard_core = _setup(potential, l, mass, plugins, units, dimension,
                                                          hard_core, bool(spin_orbit))
    v_inf = channels[0][3].v_infinity
    if math.isinf(v_inf):
        from radsolve.core.continuum import channel_tail

        channel_tail(channels[0][2], channels[0][3], kinetic, 1.0, 1.0, tol, 1.0)  # raises: no continuum
    e = validated_energies(energies, v_inf)
    phase, error, conv, coul = [], [], [], []
    notes: list[Note] = []
    tail_kind = "short"
    slices = pieces(e.size)
    tasks = [(cpot, prof, L, li, kinetic, e[sl] - prof.v_infinity, tol, hard_core)
             for li, L, cpot, prof in channels for sl in slices]
    done = run_pieces(channel_phases, tasks, workers, progress, "phase shifts",
                      [t[5].size for t in tasks])
    for c, (li, L, cpot, prof) in enumerate(channels):
        ch = joined_pieces(done[c * len(slices):(c + 1) * len(slices)], slices, e.size)
        phase.append(ch.phase)
        error.append(ch.error)
        conv.append(ch.converged)
        tail_kind = ch.tail.kind
        if ch.coulomb_phase is not None:
            coul.append(ch.coulomb_phase)
        for text in ch.notes:
            code = "tail_limited" if text.startswith("the tail") else "grid_limited"
            notes.append(Note(code, f"l = {li}: {text}", f"l={li}"))
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
                            coulomb_phase=np.array(coul) if coul else None, hard_core=hard_core, notes=notes,
                            js=[c.j for c in channels] if spin_orbit else None, dimension=dimension)


# --------------------------------------------------------------------------- scattering parameters




@dataclass(frozen=True)
class PartialWaveScattering:
    """Low-energy scattering of one partial wave (lengths in the unit system's length unit).

    ``levinson`` is ``"agrees"``, ``"disagrees"``, ``"uncertain"`` (the bound
    count is uncertain or a level sits at the threshold) or
    ``"not applicable"`` (hard core, repulsive core or c/r**2 at the origin:
    delta(inf) is not 0 there); ``levinson_count`` is (delta(0) - delta(inf))/pi
    rounded, ``bound_levels`` the count of :func:`radsolve.core.counting.count_bound`.
    """

    l: int
    scattering_length: float | None  # None: a Coulomb tail with l >= 1 (see why_no_range)
    scattering_length_error: float | None
    effective_range: float | None
    effective_range_error: float | None
    bound_levels: int | None
    bound_count_certain: bool
    delta_low: float
    energy_low: float
    delta_high: float
    energy_high: float
    levinson_count: float | None
    levinson: str
    converged: bool
    why_no_range: str | None = None


@dataclass(repr=False)
class ScatteringResult(ResultProtocol):
    """Scattering lengths, effective ranges and Levinson's theorem per partial wave (the result protocol).

    Note codes: ``levinson_failed`` (delta(0) - delta(inf) is not pi times the
    bound count: one of the two is wrong; status ``failed``),
    ``levinson_uncertain`` (status ``incomplete``), ``not_converged``,
    ``no_effective_range`` (the tail is too long for r_l, or a_l = 0).
    """

    potential: str
    parameters: dict
    units: str
    mass: float
    tol: float
    v_infinity: float
    waves: list
    hard_core: float | None
    notes: list = field(default_factory=list)

    @property
    def status(self) -> Outcome:
        outs = [Outcome.SUCCESS]
        for w in self.waves:
            if w.levinson == "disagrees":
                outs.append(Outcome.FAILED)
            elif w.levinson == "uncertain":
                outs.append(Outcome.INCOMPLETE)
            if not w.converged:
                outs.append(Outcome.NOT_CONVERGED)
        return worst(outs)

    @property
    def message(self) -> str:
        return message_of(self.notes, "scattering lengths and effective ranges converged; Levinson's theorem holds")

    def records(self, unit: str | None = None) -> list[dict[str, Any]]:
        factor = _energy_factor(self.units, unit)
        rows = []
        for w in self.waves:
            rows.append({"l": w.l, "scattering_length": w.scattering_length,
                         "scattering_length_error": w.scattering_length_error,
                         "effective_range": w.effective_range, "effective_range_error": w.effective_range_error,
                         "bound_levels": w.bound_levels, "levinson_count": w.levinson_count,
                         "levinson": w.levinson, "delta_low": w.delta_low, "energy_low": w.energy_low / factor,
                         "delta_high": w.delta_high, "energy_high": w.energy_high / factor,
                         "converged": w.converged})
        return rows

    def to_dict(self, unit: str | None = None) -> dict[str, Any]:
        length = "bohr" if self.units == "atomic" else "fm"
        return {"kind": "scattering", "status": str(self.status), "success": self.success,
                "message": self.message, "notes": [n.to_dict() for n in self.notes],
                "potential": self.potential, "parameters": self.parameters, "units": self.units,
                "length_unit": length, "energy_unit": _unit_name(self.units, unit), "mass": self.mass,
                "tol": self.tol, "hard_core": self.hard_core,
                "convention": "k**(2l+1) cot(delta_l) = -1/a_l + r_l k**2/2; a_l in length**(2l+1), "
                              "r_l in length**(1-2l); with a repulsive Coulomb tail (l = 0): C0(eta)**2 k "
                              "cot(delta) + (2/a_B) h(eta) = -1/a_l + r_l k**2/2, delta relative to Coulomb waves",
                "note": MODEL_NOTE, "rows": self.records(unit)}

    def _header(self):
        return [("potential", self.potential), ("l", [w.l for w in self.waves]), ("tol", self.tol)]

    def to_table(self, unit: str | None = None) -> str:
        """One line per partial wave under a header; the message and the caveat below."""
        length = "bohr" if self.units == "atomic" else "fm"
        lines = [f"low-energy scattering of {self.potential} {_param_text(self.parameters)}".rstrip(),
                 f"  mass {self.mass:.10g}, {self.units} units, tol {self.tol:g}"
                 + (f", hard core r < {self.hard_core:.10g}" if self.hard_core is not None else ""),
                 f"  k^(2l+1) cot(delta_l) = -1/a_l + r_l k^2/2;  a_l in {length}^(2l+1), r_l in {length}^(1-2l)",
                 "", f"{'l':>3}  {'a_l':>18}  {'estimate':>8}  {'r_l':>18}  {'estimate':>8}  {'bound':>5}  "
                     f"{'delta(0)/pi':>11}  Levinson"]
        for w in self.waves:
            r_text = f"{w.effective_range:>18.12g}" if w.effective_range is not None else f"{'-':>18}"
            re_text = f"{w.effective_range_error:>8.1e}" if w.effective_range_error is not None else f"{'-':>8}"
            bound = "inf" if w.bound_levels is None else str(w.bound_levels)
            a_text = f"{w.scattering_length:>18.12g}" if w.scattering_length is not None else f"{'-':>18}"
            ae_text = (f"{w.scattering_length_error:>8.1e}" if w.scattering_length_error is not None
                       else f"{'-':>8}")
            lines.append(f"{w.l:>3}  {a_text}  {ae_text}  {r_text}  "
                         f"{re_text}  {bound:>5}  {w.delta_low / math.pi:>11.4f}  {w.levinson}")
        lines += ["", f"status: {self.status}; {self.message}", f"note: {MODEL_NOTE}"]
        return "\n".join(lines) + "\n"

    def _table_columns(self):
        return ["l", "scattering_length", "scattering_length_error", "effective_range", "effective_range_error",
                "bound_levels", "levinson_count", "levinson"]


@dataclass
class _CoulombRange:
    length: float
    error: float
    effective_range: float
    effective_range_error: float


#: Coulomb-modified expansion: phases at eta <= this (the barrier leaves delta ~ exp(-2 pi eta): below
#: that the phase's absolute precision is no relative precision of cot(delta)).
_COULOMB_ETA_MAX = 1.0
#: ... up to k times the range of the short-range part.
_COULOMB_K_RANGE = 0.3


def _coulomb_effective_range(cpot, prof, L, li, kinetic, tol, hard_core, size):
    """a_c and r_c of the Coulomb-modified expansion (l = 0), or a reason why not.

    K(k**2) = C0(eta)**2 k cot(delta) + (2/a_B) h(eta) = -1/a_c + r_c k**2/2 + ..., with
    C0**2 = 2 pi eta / (exp(2 pi eta) - 1), h(eta) = Re psi(1 + i eta) - ln(eta), eta = 1/(k a_B),
    a_B = 1/(m C) (Bethe, Phys. Rev. 76, 38, 1949; Jackson and Blatt, Rev. Mod. Phys. 22, 77, 1950),
    delta the phase relative to Coulomb waves.  K is fitted in k**2 on Chebyshev points of
    [k_lo**2, k_hi**2], k_lo where eta = 1 (below, delta is too small to give cot(delta)), k_hi =
    0.3 / range, with degrees 3 and 4 (their difference is the estimate, with the phases' own).
    Needs a_B well above the range (a proton-proton-like system): returns a reason otherwise.
    """
    from scipy.special import psi

    from radsolve.core.continuum import channel_phases

    if li != 0:
        return "the Coulomb-modified effective-range expansion is implemented for l = 0 only"
    a_b = 1.0 / (kinetic * prof.tail.coefficient)
    k_lo = 1.0 / (_COULOMB_ETA_MAX * a_b)
    k_hi = _COULOMB_K_RANGE / size
    if not k_lo < k_hi / 3.0:
        return (f"the Coulomb barrier is too strong for the Coulomb-modified expansion: a_B = {a_b:.3g} is not "
                f"well above the range {size:.3g} of the short-range part")
    m = 16
    x = 0.5 * (1.0 - np.cos(np.pi * (np.arange(m) + 0.5) / m))
    k2 = k_lo**2 + (k_hi**2 - k_lo**2) * x
    k = np.sqrt(k2)
    ch = channel_phases(cpot, prof, L, li, kinetic, k2 / (2.0 * kinetic), min(tol, 1e-11) * 1e-2,
                        hard_core=hard_core)
    eta = 1.0 / (k * a_b)
    c2 = 2.0 * np.pi * eta / np.expm1(2.0 * np.pi * eta)
    h = np.real(psi(1.0 + 1j * eta)) - np.log(eta)
    big_k = c2 * k / np.tan(ch.phase) + 2.0 / a_b * h
    d_k = c2 * k * ch.error / np.sin(ch.phase) ** 2
    fits = []
    for degree in (3, 4):
        V = np.vander(k2 / k_hi**2, degree + 1, increasing=True)
        pinv = np.linalg.pinv(V)
        fits.append((pinv @ big_k / k_hi ** (2 * np.arange(degree + 1)), (np.abs(pinv) @ d_k)
                     / k_hi ** (2 * np.arange(degree + 1))))
    (c3, _), (c4, s4) = fits
    if not (np.all(np.isfinite(c4)) and c4[0] != 0):
        return "the low-energy fit of the Coulomb-modified function failed (a_c near 0 or infinite?)"
    a_c = -1.0 / c4[0]
    a_err = (abs(c4[0] - c3[0]) + s4[0]) * a_c**2
    return _CoulombRange(float(a_c), float(a_err), float(2.0 * c4[1]), float(2.0 * (abs(c4[1] - c3[1]) + s4[1])))


def scattering(potential, l=0, *, mass=None, tol: float = 1e-8, hard_core: float | None = None, plugins=None,
               units: str | None = None, dimension: int = 3) -> ScatteringResult:
    """Scattering length, effective range and the Levinson check of each partial wave ``l``.

    ``tol`` is the target relative error of a_l and r_l (1e-12 ... 0.1).
    Lengths are in the unit system's length unit (bohr or fm).  See the
    module docstring for the conventions and :class:`ScatteringResult` for
    what is reported.
    """
    from radsolve.core.continuum import channel_phases, channel_tail, scattering_length, strength_radius
    from radsolve.core.counting import count_bound

    tol = _validated_phase_tol(tol)
    pot, system, mu, kinetic, channels, hard_core = _setup(potential, l, mass, plugins, units, dimension,
                                                          hard_core)
    if int(dimension) % 2 == 0:  # a valid dimension by now (_setup checked it)
        raise InputError(f"dimension {dimension}: the low-energy expansion (scattering length, effective "
                         "range, Levinson's theorem) differs in even dimensions (logarithms at l = 0) and is "
                         "implemented for odd ones (3, 5, ...); phase shifts take any dimension >= 2",
                         parameter="dimension")
    waves = []
    notes: list[Note] = []
    v_inf = channels[0][3].v_infinity
    for li, L, cpot, prof in channels:
        if prof.confining:
            channel_tail(cpot, prof, kinetic, 1.0, 1.0, tol, 1.0)  # raises: no continuum
        tail = prof.tail
        coulomb = tail.coulomb
        if coulomb and tail.coefficient < 0:
            raise InputError("an attractive Coulomb tail binds infinitely many levels: Levinson's theorem does "
                             "not apply and there is no scattering length; use phase_shifts() (a repulsive "
                             "Coulomb tail is allowed)", parameter="potential")
        q = tail.power if tail.kind == "short" else 2.0
        if not coulomb and (tail.kind in ("inverse_square", "long", "irregular") or q <= 2 * L + 3):
            raise InputError(f"l = {li}: V - V(inf) falls off like r**-{q:.3g}; a scattering length exists "
                             f"only for tails faster than r**-{2 * L + 3:g} (textbook threshold law)",
                             parameter="l")
        size = max(strength_radius(cpot, prof, kinetic, coulomb=tail.coefficient if coulomb else 0.0),
                   hard_core or 0.0)
        why = None
        if coulomb:  # the Coulomb-modified expansion (l = 0), fitted
            zero = _coulomb_effective_range(cpot, prof, L, li, kinetic, tol, hard_core, size)
            if isinstance(zero, str):
                why, zero = zero, None
        else:
            zero = scattering_length(cpot, prof, L, kinetic, tol, hard_core=hard_core)
        a_l = None if zero is None else zero.length
        r_l = r_err = None
        ok = zero is None or zero.error <= tol * abs(a_l)
        if zero is None:
            pass
        elif coulomb:
            r_l, r_err = zero.effective_range, zero.effective_range_error
            ok = ok and r_err <= tol * max(abs(r_l), size)
        elif q <= 2 * L + 5:
            why = f"the tail r**-{q:.3g} is too long for an effective range (needs faster than r**-{2 * L + 5:g})"
        elif zero.effective_range is not None:
            r_l, r_err = zero.effective_range, zero.effective_range_error
            ok = ok and r_err <= tol * max(abs(r_l), size ** (1 - 2 * L))
        else:
            why = "a_l = 0 to the precision reached: k**(2l+1) cot(delta) has no finite expansion at k = 0"
        if why is not None:
            notes.append(Note("no_effective_range", f"l = {li}: {why}", f"l={li}"))
        if not ok:
            notes.append(Note("not_converged", f"l = {li}: a_l or r_l did not reach tol {tol:g} "
                                               f"(estimates {zero.error:.2g}, {r_err if r_err is None else f'{r_err:.2g}'})",
                              f"l={li}"))
        # Levinson: delta(0+) - delta(inf) against the bound count
        length = max(size, abs(a_l) ** (1.0 / (2 * L + 1)) if a_l is not None and math.isfinite(a_l) else size)
        k_low = 1e-3 / length
        if coulomb:
            # below the barrier the phase relative to Coulomb waves has settled to N pi to within
            # exp(-2 pi eta) (the barrier's penetrability; textbook): eta = 12 at E_low
            k_low = kinetic * tail.coefficient / 12.0
        r_in = prof.inner_length if math.isfinite(prof.inner_length) else size
        r_grid = np.geomspace(max(r_in * 1e-3, 1e-12), size * 4.0, 4000)
        with np.errstate(all="ignore"):
            v_signed = cpot(r_grid) - prof.v_infinity - (tail.coefficient / r_grid if coulomb else 0.0)
        vv = np.abs(v_signed)
        born = 2.0 * kinetic * float(np.trapezoid(vv, r_grid))
        k_high = max(min(20.0 * born, 300.0 / size), 10.0 / size, 4.0 * k_low)
        # at a high energy delta approaches the eikonal phase int (sqrt(k**2 - 2 m V) - k) dr (textbook
        # semiclassical limit), which a deep well keeps large long after the levels are resolved
        with np.errstate(all="ignore"):
            eikonal = float(np.trapezoid(np.sqrt(np.maximum(k_high**2 - 2.0 * kinetic * v_signed, 0.0)) - k_high,
                                         r_grid))
        if not math.isfinite(eikonal):
            eikonal = 0.0
        e_pair = np.array([k_low, k_high]) ** 2 / (2.0 * kinetic)
        ch = channel_phases(cpot, prof, L, li, kinetic, e_pair, 1e-6, hard_core=hard_core)
        d_low, d_high = float(ch.phase[0]), float(ch.phase[1])
        inner = prof.inner_cutoff(L, kinetic, 1e-3 * tol) if hard_core is None else hard_core
        with np.errstate(all="ignore"):
            cert = count_bound(cpot, prof, L, kinetic, inner, 1e30)
        # delta(inf) = 0 by construction (the phase is fixed by the zeros of u, see
        # radsolve.core.continuum); d_high checks that it approaches 0 as the eikonal phase does
        n_lev = round(d_low / math.pi)
        applicable = hard_core is None and prof.origin.kind == "regular"
        if not applicable:
            verdict = "not applicable"
        elif cert.count is None or not cert.certain:
            verdict = "uncertain"
            notes.append(Note("levinson_uncertain", f"l = {li}: the bound count is uncertain ({cert.note})", f"l={li}"))
        elif abs(d_low - math.pi * n_lev) > 0.25 or abs(d_high - eikonal) > 0.5 * math.pi:
            verdict = "uncertain"
            notes.append(Note("levinson_uncertain",
                              f"l = {li}: delta(0) = {d_low / math.pi:.3f} pi is not close to a whole multiple of "
                              f"pi, or delta = {d_high:.3g} at E = {e_pair[1]:.4g} is not near its eikonal value "
                              f"{eikonal:.3g} (a level at the threshold, or energies not low or high enough)",
                              f"l={li}"))
        elif coulomb and n_lev > cert.count:
            verdict = "uncertain"
            notes.append(Note("levinson_uncertain",
                              f"l = {li}: delta(0) = {n_lev} pi but {cert.count} bound level(s): with a Coulomb "
                              f"barrier, a quasi-bound level below E = {e_pair[0]:.4g} also adds pi", f"l={li}"))
        elif n_lev != cert.count:
            verdict = "disagrees"
            notes.append(Note("levinson_failed",
                              f"l = {li}: LEVINSON'S THEOREM FAILS: delta(0) - delta(inf) = {n_lev} pi but "
                              f"{cert.count} bound level(s) counted: the phase shifts or the count are wrong",
                              f"l={li}"))
        else:
            verdict = "agrees"
        waves.append(PartialWaveScattering(
            l=li, scattering_length=a_l, scattering_length_error=None if zero is None else zero.error,
            effective_range=r_l,
            effective_range_error=r_err, bound_levels=cert.count, bound_count_certain=cert.certain,
            delta_low=d_low, energy_low=float(e_pair[0] + prof.v_infinity), delta_high=d_high,
            energy_high=float(e_pair[1] + prof.v_infinity),
            levinson_count=float(n_lev) if applicable else None, levinson=verdict, converged=ok,
            why_no_range=why))
    return ScatteringResult(potential=pot.name, parameters=_params(pot), units=system.name, mass=mu, tol=tol,
                            v_infinity=v_inf, waves=waves, hard_core=hard_core, notes=notes)


# --------------------------------------------------------------------------- photoionization


@dataclass(repr=False)
class PhotoionizationResult(ResultProtocol):
    """Photoionization cross sections of one bound level (the result protocol).

    sigma(omega) = (4 pi**2 alpha omega / 3) sum_l' (l_> / (2l + 1)) |R_l'|**2 a0**2
    (textbook, e.g. Bethe and Salpeter 1957, sec. 69), R_l' = int u_E,l' r u_nl dr
    with u_E normalized per unit energy: the length form; the velocity form
    R_l' = int u_E,l' (d/dr -+ ...) u_nl dr / (m omega) is printed beside it as
    a check (equal for a local potential).  Cross sections in cm**2 (and Mb =
    1e-18 cm**2).  ``threshold_cross_section`` is sigma at a photoelectron
    energy of 1e-6 of the binding energy.  Note codes: ``not_converged``,
    ``forms_differ`` (length and velocity forms differ by more than their
    estimates).
    """

    potential: str
    parameters: dict
    level: str
    binding_energy: float
    mass: float
    tol: float
    photon_energies: np.ndarray
    final_ls: list
    sigma_l: np.ndarray  # (final l, energies), cm**2, length form
    sigma_l_error: np.ndarray
    sigma_velocity: np.ndarray  # total, cm**2
    converged: np.ndarray
    threshold_cross_section: float
    threshold_error: float
    notes: list = field(default_factory=list)
    units: str = "atomic"

    @property
    def sigma(self) -> np.ndarray:
        return self.sigma_l.sum(axis=0)

    @property
    def sigma_error(self) -> np.ndarray:
        return self.sigma_l_error.sum(axis=0)

    @property
    def status(self) -> Outcome:
        return Outcome.SUCCESS if bool(np.all(self.converged)) else Outcome.NOT_CONVERGED

    @property
    def message(self) -> str:
        return message_of(self.notes, f"{self.photon_energies.size} cross sections from {self.level} converged "
                                      f"to tol {self.tol:g}")

    def records(self, unit: str | None = None) -> list[dict[str, Any]]:
        factor = _energy_factor("atomic", unit)
        rows = []
        for j, w in enumerate(self.photon_energies):
            row = {"photon_energy": float(w) / factor,
                   "electron_energy": float(w - self.binding_energy) / factor,
                   "sigma_cm2": float(self.sigma[j]), "sigma_Mb": float(self.sigma[j]) / 1e-18,
                   "error_estimate_cm2": float(self.sigma_error[j]),
                   "sigma_velocity_cm2": float(self.sigma_velocity[j])}
            for i, lf in enumerate(self.final_ls):
                row[f"sigma_l{lf}_cm2"] = float(self.sigma_l[i, j])
            row["converged"] = bool(self.converged[j])
            rows.append(row)
        return rows

    def to_dict(self, unit: str | None = None) -> dict[str, Any]:
        factor = _energy_factor("atomic", unit)
        return {"kind": "photoionization", "status": str(self.status), "success": self.success,
                "message": self.message, "notes": [n.to_dict() for n in self.notes],
                "potential": self.potential, "parameters": self.parameters, "level": self.level,
                "ionization_energy": self.binding_energy / factor, "energy_unit": _unit_name("atomic", unit),
                "mass": self.mass, "tol": self.tol, "threshold_cross_section_cm2": self.threshold_cross_section,
                "threshold_error_cm2": self.threshold_error, "note": MODEL_NOTE, "rows": self.records(unit)}

    def _header(self):
        return [("potential", self.potential), ("level", self.level), ("energies", int(self.photon_energies.size)),
                ("threshold_cm2", self.threshold_cross_section)]

    def _table_columns(self):
        return ["photon_energy", "sigma_cm2", "error_estimate_cm2", "sigma_velocity_cm2", "converged"]

    def to_table(self, unit: str | None = None) -> str:
        name = _unit_name("atomic", unit)
        factor = _energy_factor("atomic", unit)
        lines = [f"photoionization of {self.level} of {self.potential} {_param_text(self.parameters)}".rstrip(),
                 f"  ionization energy {self.binding_energy / factor:.10g} {name}, mass {self.mass:.10g}, "
                 f"tol {self.tol:g}",
                 f"  at threshold: {self.threshold_cross_section:.6e} cm^2 "
                 f"({self.threshold_cross_section / 1e-18:.6g} Mb) +- {self.threshold_error:.1e}", "",
                 f"{'photon (' + name + ')':>18}  {'sigma (cm^2)':>14}  {'sigma (Mb)':>12}  {'estimate':>8}  "
                 f"{'velocity form':>14}  " + "  ".join(f"{'l=' + str(lf):>12}" for lf in self.final_ls)]
        for row in self.records(unit):
            lines.append(f"{row['photon_energy']:>18.10g}  {row['sigma_cm2']:>14.8e}  {row['sigma_Mb']:>12.8g}  "
                         f"{row['error_estimate_cm2']:>8.1e}  {row['sigma_velocity_cm2']:>14.8e}  "
                         + "  ".join(f"{row[f'sigma_l{lf}_cm2']:>12.6e}" for lf in self.final_ls)
                         + ("" if row["converged"] else "  not converged"))
        lines += ["", f"status: {self.status}; {self.message}", f"note: {MODEL_NOTE}"]
        return "\n".join(lines) + "\n"


def _radial_derivative(grid, values: np.ndarray) -> np.ndarray:
    """d/dr of samples on a mapped grid: fourth-order central differences in xi over dr/dxi."""
    d = np.gradient(values, grid.step, edge_order=2)
    d[2:-2] = (values[:-4] - 8.0 * values[1:-3] + 8.0 * values[3:-1] - values[4:]) / (12.0 * grid.step)
    return d / grid.jacobian


def photoionization(potential, level: str = "1s", photon_energies=None, *, mass=None, tol: float = 1e-8,
                    plugins=None, workers: int | None = None, progress: bool | None = None) -> PhotoionizationResult:
    """Photoionization cross sections sigma(omega) of a bound ``level`` at ``photon_energies`` (hartree).

    Atomic units only.  Each photon energy must exceed the level's ionization
    energy V(inf) - E_nl.  ``tol`` is the target relative error of the radial
    integrals.  ``workers`` and ``progress`` as for :func:`phase_shifts`.  See
    :class:`PhotoionizationResult`.
    """
    return _photoionization(potential, level, photon_energies, mass=mass, tol=tol, plugins=plugins,
                            workers=workers, progress=progress)


class _BoundDipole:
    """The integrands r u_nl and (d/dr + shift/r) u_nl of the photoionization integrals on a grid.

    A class (not a closure) so that worker processes receive it.  Beyond r_c the
    level's tail is the decaying solution at E_nl integrated inward (see
    :func:`photoionization`).
    """

    def __init__(self, st, r_c, l, kinetic, e_b, bound_pot, bound_prof, shift):
        self.st, self.r_c, self.l, self.kinetic, self.e_b = st, r_c, l, kinetic, e_b
        self.bound_pot, self.bound_prof, self.shift = bound_pot, bound_prof, shift

    def bound_on(self, grid):
        from radsolve.core.grids import potential_on_grid

        u = np.zeros(grid.size)
        near = grid.r <= self.r_c
        u[near] = self.st.wavefunction(grid.r[near]).u
        ic = int(np.count_nonzero(near)) - 1
        if ic < grid.size - 1:
            values = potential_on_grid(self.bound_pot, grid.r, ()) - self.bound_prof.v_infinity
            _, q = grid.liouville_coefficients(values, self.l, self.kinetic)
            t = grid.step**2 * 2.0 * self.kinetic * (q - (self.e_b - self.bound_prof.v_infinity)
                                                     * grid.jacobian**2) / 12.0
            t = np.minimum(t, 0.9)
            d = 2.0 + 12.0 * t / (1.0 - t)
            y = np.zeros(grid.size)
            y[-2] = 1e-300
            for i in range(grid.size - 2, ic, -1):  # y[i - 1] = d[i] y[i] - y[i + 1]
                y[i - 1] = d[i] * y[i] - y[i + 1]
                if abs(y[i - 1]) > 1e250:
                    y[i - 1:] *= 1e-250
            tail = np.sqrt(grid.jacobian) * y / (1.0 - t)
            u[ic:] = tail[ic:] * (u[ic] / tail[ic])
        return u

    def __call__(self, grid):
        u = self.bound_on(grid)
        return np.vstack((grid.r * u, _radial_derivative(grid, u) + self.shift * u / grid.r))


def _photo_piece(cpot, prof, L, lf, kinetic, electron, tol, integrand, reach):
    from radsolve.core.continuum import channel_phases

    return channel_phases(cpot, prof, L, lf, kinetic, electron, tol, integrand=integrand, min_radius=reach)


def _photoionization(potential, level, photon_energies, *, mass, tol, plugins, electron_energies=None,
                     bound_state=None, workers=None, progress=False) -> PhotoionizationResult:
    """:func:`photoionization`; with ``electron_energies`` (a function of the ionization energy giving
    photoelectron energies) in place of ``photon_energies``, and ``bound_state`` a State already solved."""
    from scipy.constants import alpha, physical_constants

    from radsolve.analysis.observables import state
    from radsolve.analysis.thresholds import parse_level

    tol = _validated_phase_tol(tol)
    key = parse_level(level, "atomic", parameter="level")
    n, l = key.n, key.l
    pot, system, mu, kinetic, channels, _ = _setup(potential, [max(l - 1, 0), l, l + 1], mass, plugins, None, 3,
                                                   None)
    if system.name != "atomic":
        raise InputError("photoionization is computed in atomic units only (units 'atomic')", parameter="units")
    if channels[0][3].confining:
        from radsolve.core.continuum import channel_tail

        channel_tail(channels[0][2], channels[0][3], kinetic, 1.0, 1.0, tol, 1.0)  # raises: no continuum
    try:
        st = bound_state or state(pot, n, l, mass=mass, tol=max(min(0.01 * tol, 1e-10), 1e-12))
    except InputError as exc:
        if exc.parameter is not None:
            raise
        raise InputError(str(exc), parameter="level") from None  # e.g. the level is not bound
    e_b = float(st.energy.value)
    v_inf = channels[0][3].v_infinity
    ionization = v_inf - e_b
    if electron_energies is not None:
        photon_energies = ionization + np.asarray(electron_energies(ionization), dtype=float)
    if photon_energies is None:
        raise InputError("photon_energies: give the photon energies (hartree), each above the ionization "
                         f"energy {ionization:.10g}", parameter="photon_energies")
    try:
        w = np.atleast_1d(np.asarray(photon_energies, dtype=float))
    except (TypeError, ValueError):
        raise InputError(f"photon_energies must be numbers (got {photon_energies!r})",
                         parameter="photon_energies") from None
    if w.size == 0 or not np.all(np.isfinite(w)):
        raise InputError("photon_energies: at least one finite energy is needed", parameter="photon_energies")
    if np.any(w <= ionization):
        raise InputError(f"photon_energies must exceed the ionization energy of {level}, {ionization:.10g} "
                         f"hartree (got {float(w.min()):.10g}): below it no electron is freed",
                         parameter="photon_energies")
    from radsolve.analysis.energy_pieces import pieces, run_pieces, validated_workers
    from radsolve.core import probe as probing
    from radsolve.core.continuum import joined_pieces

    workers = validated_workers(workers)
    wave = st.wavefunction()
    big = np.abs(wave.u)
    peak = int(np.argmax(big))
    u_scale = float(big[peak])
    # The level's box is sized for its energy: its far tail is cut by the wall.  Beyond r_c, where u
    # has fallen to 1e-3 of its peak and is still accurate, u is continued by the decaying solution at
    # E_nl, integrated inward (stable) from where it has decayed by many e-folds (WKB).
    beyond = np.nonzero((np.arange(big.size) > peak) & (big < 1e-3 * u_scale))[0]
    r_c = float(wave.r[beyond[0]]) if beyond.size else float(wave.r[-1])
    bound_pot, bound_prof = channels[[c[0] for c in channels].index(l)][2:4]
    nepers = 0.5 * math.log(1.0 / tol) + 12.0
    reach = probing.decay_radius(bound_pot, l, kinetic, e_b, r_c, nepers)
    inside = big[: beyond[0] if beyond.size else big.size]
    u_rel = float(np.max(wave.u_error[: inside.size])) / u_scale if u_scale > 0 else math.inf
    electron = np.concatenate((w - ionization, [1e-6 * ionization]))  # last: the threshold value

    a0_cm = physical_constants["Bohr radius"][0] * 100.0
    final = [lf for lf in (l - 1, l + 1) if lf >= 0]
    sig, sig_err, sig_v, conv = [], [], [], []
    notes: list[Note] = []
    omega = electron + ionization
    slices = pieces(electron.size)
    tasks = []
    for lf in final:
        _, L, cpot, prof = next(c for c in channels if c[0] == lf)
        shift = -(l + 1) if lf == l + 1 else l  # d/dr - (l+1)/r  or  d/dr + l/r
        integrand = _BoundDipole(st, r_c, l, kinetic, e_b, bound_pot, bound_prof, shift)
        tasks += [(cpot, prof, L, lf, kinetic, electron[sl], tol, integrand, reach) for sl in slices]
    done = run_pieces(_photo_piece, tasks, workers, progress, "cross sections", [t[5].size for t in tasks])
    for i, lf in enumerate(final):
        ch = joined_pieces(done[i * len(slices):(i + 1) * len(slices)], slices, electron.size)
        length, velocity = ch.integrals
        factor = 4.0 * math.pi**2 * alpha * omega / 3.0 * max(l, lf) / (2 * l + 1) * a0_cm**2
        s_len = factor * length**2
        rel = 2.0 * (ch.integral_error[0] / np.maximum(np.abs(length), 1e-300) + u_rel)
        sig.append(s_len)
        sig_err.append(s_len * rel)
        sig_v.append(factor * (velocity / (kinetic * omega)) ** 2)
        conv.append(ch.converged)
    sig, sig_err, sig_v = np.array(sig), np.array(sig_err), np.array(sig_v).sum(axis=0)
    converged = np.all(np.array(conv), axis=0) & (sig_err.sum(axis=0) <= 2.0 * tol * sig.sum(axis=0) + 1e-300)
    total = sig.sum(axis=0)
    differ = np.abs(sig_v - total) > 10.0 * (sig_err.sum(axis=0) + 1e-6 * total)
    if np.any(differ[:-1]):
        notes.append(Note("forms_differ", f"length and velocity forms differ beyond their estimates at "
                                          f"{int(differ[:-1].sum())} energies (non-local potential, or a "
                                          "bound level not converged)"))
    bad = int(np.count_nonzero(~converged[:-1]))
    if bad:
        notes.append(Note("not_converged", f"{bad} of {w.size} cross sections did not reach tol {tol:g}"))
    return PhotoionizationResult(potential=pot.name, parameters=_params(pot), level=level, binding_energy=ionization,
                                 mass=mu, tol=tol, photon_energies=w, final_ls=final, sigma_l=sig[:, :-1],
                                 sigma_l_error=sig_err[:, :-1], sigma_velocity=sig_v[:-1],
                                 converged=converged[:-1], threshold_cross_section=float(total[-1]),
                                 threshold_error=float(sig_err[:, -1].sum()), notes=notes)


#: Gauss-Legendre orders of the two rules of :func:`continuum_strength` (their difference is the estimate).
STRENGTH_RULES = (56, 80)
#: Photoelectron energies above this many ionization energies are not computed: a power law fitted
#: below carries the integrand there (a share of order CAP**-(5/2) of the whole for an s level).
STRENGTH_CAP = 2000.0


@dataclass
class ContinuumStrength:
    """The bound-free oscillator strength of one level: the integral of df/dE over the continuum.

    df/dE = (2/3) omega (l_> / (2l + 1)) R_E**2 (electron-mass convention, R_E the
    radial integral with the continuum normalized per unit energy; textbook, e.g.
    Bethe and Salpeter 1957, sec. 69), summed over l' = l +- 1 and integrated over
    the photoelectron energy E in (0, inf).  ``by_l`` maps l' to its share.
    """

    level: str
    value: float
    error: float
    by_l: dict
    converged: bool
    notes: list = field(default_factory=list)

    def to_dict(self) -> dict[str, Any]:
        return {"level": self.level, "value": self.value, "error": self.error,
                "by_l": {str(k): v for k, v in self.by_l.items()}, "converged": self.converged,
                "notes": [n.to_dict() for n in self.notes]}


def _strength_tail(dfde, errors, computed, capped):
    """df/dE at the ``capped`` energies (rows: final l), from the ``computed`` ones.

    A power law through the two highest nodes whose values stand above their
    own estimates carries the tail, when it falls faster than 1/E (the sum
    converges, so the integrand must; textbook).  Nodes at the rounding floor
    (estimate above the value: a short-range well's integrand falls faster
    than any power and reaches it early) would give a rising, exploding law:
    they are passed over.  Where no such law exists, the tail is taken at the
    size of the highest nodes (noise), and the caller counts the whole tail
    in the estimate.
    """
    out = np.empty((dfde.shape[0], capped.size))
    for i in range(dfde.shape[0]):
        resolved = np.flatnonzero((dfde[i] > 2.0 * errors[i]) & np.isfinite(dfde[i]))[-2:]
        slope = math.nan
        if resolved.size == 2:
            a, b = resolved
            with np.errstate(all="ignore"):
                slope = math.log(dfde[i, b] / dfde[i, a]) / math.log(computed[b] / computed[a])
        if math.isfinite(slope) and slope < -1.0:
            out[i] = dfde[i, resolved[1]] * (capped / computed[resolved[1]]) ** slope
        else:
            out[i] = np.max(np.abs(dfde[i, -2:]))
    return out


def continuum_strength(potential, level: str = "1s", *, mass=None, tol: float = 1e-8, plugins=None,
                       bound_state=None) -> ContinuumStrength:
    """The integral of df/dE over the continuum of a bound ``level`` (atomic units), with its estimate.

    The photoelectron energy is mapped as E = I (x / (1 - x))**2, I the ionization
    energy, x in (0, 1): the integrand then vanishes smoothly at both ends (df/dE is
    finite at threshold for a Coulomb tail and grows like E**(l'+1/2) for a short one;
    it falls like a power of E far out).  Two Gauss-Legendre rules
    (:data:`STRENGTH_RULES`) give the value and the estimate (their difference, plus
    the integrals' own estimates); nodes above :data:`STRENGTH_CAP` I use the power
    law through the two highest nodes computed, and that part's size is added to
    the estimate.  ``tol`` is handed to :func:`photoionization`.
    """
    from scipy.constants import alpha, physical_constants

    rules = [np.polynomial.legendre.leggauss(m) for m in STRENGTH_RULES]
    xs = np.concatenate([0.5 * (x + 1.0) for x, _ in rules])

    capped = (xs / (1.0 - xs)) ** 2 > STRENGTH_CAP  # the same nodes whatever I

    def energies(ionization):
        return ionization * (xs[~capped] / (1.0 - xs[~capped])) ** 2

    res = _photoionization(potential, level, None, mass=mass, tol=tol, plugins=plugins,
                           electron_energies=energies, bound_state=bound_state)
    ionization = res.binding_energy
    a0_cm = physical_constants["Bohr radius"][0] * 100.0
    to_f = 1.0 / (2.0 * math.pi**2 * alpha * a0_cm**2)  # sigma = 2 pi**2 alpha a0**2 df/dE
    e = ionization * (xs / (1.0 - xs)) ** 2
    jac = 2.0 * ionization * xs / (1.0 - xs) ** 3  # dE/dx
    sigma_l = np.zeros((len(res.final_ls), xs.size))
    sigma_err = np.zeros_like(sigma_l)
    sigma_l[:, ~capped], sigma_err[:, ~capped] = res.sigma_l, res.sigma_l_error
    by_l, err_l = {}, {}
    tail_total = 0.0
    start = 0
    totals = []
    for (x, wts), m in zip(rules, STRENGTH_RULES):
        sl = slice(start, start + m)
        start += m
        dfde = sigma_l[:, sl] * to_f
        # a node whose estimate exceeds its own (positive) value, or is not finite, counts its whole
        # value as the estimate (far out, where the integrand is small)
        ddfde = np.where(np.isfinite(sigma_err[:, sl]), np.minimum(sigma_err[:, sl], np.abs(sigma_l[:, sl])),
                         np.abs(sigma_l[:, sl])) * to_f
        cap = capped[sl]
        ee = e[sl]
        if cap.any():
            dfde[:, cap] = _strength_tail(dfde[:, ~cap], ddfde[:, ~cap], ee[~cap], ee[cap])
            dfde = np.where(np.isfinite(dfde), dfde, 0.0)
        w = 0.5 * wts * jac[sl]
        totals.append(dfde @ w)
        tail_total = max(tail_total, float(np.sum(dfde[:, cap] @ w[cap])))
        for i, lf in enumerate(res.final_ls):
            by_l[lf] = float(totals[-1][i])
            err_l[lf] = float(ddfde[i] @ w)
    value = float(np.sum(totals[-1]))
    error = float(abs(np.sum(totals[-1]) - np.sum(totals[0])) + sum(err_l.values()) + tail_total)
    notes = list(res.notes)
    # oscillator strengths sum to order 1: the estimate is judged against that scale, not against a
    # continuum share that may be tiny (a deeply bound level of a short-range well)
    converged = error <= max(10.0 * tol, 1e-12) * max(abs(value), 1.0)
    if not converged:
        notes.append(Note("not_converged", f"continuum strength of {level}: estimate {error:.2g}"))
    return ContinuumStrength(level=level, value=value, error=error, by_l=by_l, converged=converged, notes=notes)


# --------------------------------------------------------------------------- logarithmic derivatives


@dataclass(repr=False)
class LogDerivativeResult(ResultProtocol):
    """L_l(E) = u'/u at a radius r_c, for a model potential and optionally a reference (the result protocol).

    ``nodes`` counts the zeros of u on (0, r_c]: each pole of L_l(E) below E
    adds one (oscillation theory, textbook).  A model whose count changes
    between two energies where the reference's does not has a pole the
    reference lacks: a ghost state (note ``ghost_state``); the other way round,
    a missing state (``missing_state``).  A constant offset of the counts is
    no defect (a pseudopotential drops the core's nodes).  A ghost or missing
    state makes the status ``failed`` (the model's verdict).  Note codes also:
    ``not_converged``, ``differs`` (|L_model - L_ref| above ``tolerance`` at
    some energies, with the largest gap).
    """

    potential: str
    parameters: dict
    reference: str | None
    reference_parameters: dict | None
    units: str
    mass: float
    tol: float
    radius: float
    energies: np.ndarray
    ls: list
    model: np.ndarray  # (l, E)
    model_error: np.ndarray
    model_nodes: np.ndarray
    ref: np.ndarray | None
    ref_error: np.ndarray | None
    ref_nodes: np.ndarray | None
    converged: np.ndarray
    ghosts: list  # (l, E_low, E_high, "ghost" | "missing")
    notes: list = field(default_factory=list)

    @property
    def status(self) -> Outcome:
        if self.ghosts:
            return Outcome.FAILED  # the model fails the comparison: a pole too many or too few
        return Outcome.SUCCESS if bool(np.all(self.converged)) else Outcome.NOT_CONVERGED

    @property
    def message(self) -> str:
        return message_of(self.notes, f"{self.model.size} logarithmic derivatives converged"
                                      + ("; no ghost state between the energies" if self.ref is not None else ""))

    def records(self, unit: str | None = None) -> list[dict[str, Any]]:
        factor = _energy_factor(self.units, unit)
        rows = []
        for i, l in enumerate(self.ls):
            for j, e in enumerate(self.energies):
                row = {"l": l, "energy": float(e) / factor, "log_derivative": float(self.model[i, j]),
                       "error_estimate": float(self.model_error[i, j]), "nodes": int(self.model_nodes[i, j])}
                if self.ref is not None:
                    row.update({"reference": float(self.ref[i, j]), "reference_error": float(self.ref_error[i, j]),
                                "reference_nodes": int(self.ref_nodes[i, j]),
                                "difference": float(self.model[i, j] - self.ref[i, j])})
                row["converged"] = bool(self.converged[i, j])
                rows.append(row)
        return rows

    def to_dict(self, unit: str | None = None) -> dict[str, Any]:
        factor = _energy_factor(self.units, unit)
        return {"kind": "log_derivatives", "status": str(self.status), "success": self.success,
                "message": self.message, "notes": [n.to_dict() for n in self.notes],
                "potential": self.potential, "parameters": self.parameters, "reference": self.reference,
                "reference_parameters": self.reference_parameters, "units": self.units,
                "energy_unit": _unit_name(self.units, unit), "mass": self.mass, "tol": self.tol,
                "radius": self.radius,
                "ghosts": [{"l": g[0], "from": g[1] / factor, "to": g[2] / factor, "kind": g[3]} for g in self.ghosts],
                "note": MODEL_NOTE, "rows": self.records(unit)}

    def _header(self):
        return [("potential", self.potential), ("reference", self.reference), ("radius", self.radius),
                ("l", self.ls), ("ghosts", len(self.ghosts))]

    def _table_columns(self):
        cols = ["l", "energy", "log_derivative", "error_estimate", "nodes"]
        return cols + (["reference", "reference_nodes", "difference"] if self.ref is not None else [])

    def to_table(self, unit: str | None = None) -> str:
        name = _unit_name(self.units, unit)
        length = "bohr" if self.units == "atomic" else "fm"
        lines = [f"logarithmic derivative u'/u at r_c = {self.radius:.10g} {length}",
                 f"  model: {self.potential} {_param_text(self.parameters)}".rstrip()]
        if self.reference is not None:
            lines.append(f"  reference: {self.reference} {_param_text(self.reference_parameters or {})}".rstrip())
        head = f"{'l':>3}  {'E (' + name + ')':>16}  {'L model':>16}  {'estimate':>8}  {'nodes':>5}"
        if self.ref is not None:
            head += f"  {'L reference':>16}  {'nodes':>5}  {'difference':>12}"
        lines += ["", head]
        for row in self.records(unit):
            text = (f"{row['l']:>3}  {row['energy']:>16.10g}  {row['log_derivative']:>16.10g}  "
                    f"{row['error_estimate']:>8.1e}  {row['nodes']:>5}")
            if self.ref is not None:
                text += f"  {row['reference']:>16.10g}  {row['reference_nodes']:>5}  {row['difference']:>12.4e}"
            lines.append(text + ("" if row["converged"] else "  not converged"))
        lines += ["", f"status: {self.status}; {self.message}", f"note: {MODEL_NOTE}"]
        return "\n".join(lines) + "\n"


def log_derivatives(potential, energies, l=0, *, radius: float, reference=None, mass=None, tol: float = 1e-8,
                    tolerance: float | None = None, plugins=None, units: str | None = None,
                    workers: int | None = None, progress: bool | None = None) -> LogDerivativeResult:
    """L_l(E) = u'(r_c)/u(r_c) of ``potential`` (and of ``reference``, when given) at ``energies``.

    Energies are absolute (any finite values: below and above the threshold).
    ``radius`` is r_c in the length unit of the unit system; ``tolerance``
    (default 10 ``tol``, relative to max(|L|, 1/r_c)) is the gap between model
    and reference reported as a difference.  Ghost states are found from the
    node counts (see :class:`LogDerivativeResult`), which do not depend on how
    fine the energy grid is between two energies.  ``workers`` and ``progress`` as
    for :func:`phase_shifts`.
    """
    from radsolve.analysis.energy_pieces import pieces, run_pieces, validated_workers
    from radsolve.core.continuum import log_derivatives as channel_log_derivatives

    tol = _validated_phase_tol(tol)
    workers = validated_workers(workers)
    if not (isinstance(radius, (int, float)) and not isinstance(radius, bool) and math.isfinite(radius) and radius > 0):
        raise InputError(f"radius must be a radius > 0 (got {radius!r})", parameter="radius")
    pot, system, mu, kinetic, channels, _ = _setup(potential, l, mass, plugins, units, 3, None)
    try:
        e = np.atleast_1d(np.asarray(energies, dtype=float))
    except (TypeError, ValueError):
        raise InputError(f"energies must be numbers (got {energies!r})", parameter="energies") from None
    if e.ndim != 1 or e.size == 0 or not np.all(np.isfinite(e)):
        raise InputError("energies: at least one energy is needed, all finite", parameter="energies")
    order = np.argsort(e, kind="stable")
    if np.any(order != np.arange(e.size)):
        raise InputError("energies must be in increasing order (the ghost-state search follows them)",
                         parameter="energies")
    gap = 10.0 * tol if tolerance is None else float(tolerance)
    ref_channels = None
    ref_pot = None
    if reference is not None:
        ref_pot, ref_system, _, _, ref_channels, _ = _setup(reference, l, mass, plugins, units, 3, None)
        if ref_system.name != system.name:
            raise InputError(f"the reference is in {ref_system.name} units, the model in {system.name}: "
                             "both must use one unit system", parameter="reference")

    slices = pieces(e.size)

    def run(chs, what):
        tasks = [(cpot, prof, L, kinetic, e[sl] - (0.0 if prof.confining else prof.v_infinity), float(radius), tol)
                 for li, L, cpot, prof in chs for sl in slices]
        done = run_pieces(channel_log_derivatives, tasks, workers, progress, what, [t[4].size for t in tasks])
        per = len(slices)
        vals, errs, nods, convs = [], [], [], []
        for c in range(len(chs)):
            part = done[c * per:(c + 1) * per]
            vals.append(np.concatenate([p.value for p in part]))
            errs.append(np.concatenate([p.error for p in part]))
            nods.append(np.concatenate([p.nodes for p in part]))
            convs.append(np.concatenate([p.converged for p in part]))
        return np.array(vals), np.array(errs), np.array(nods), np.array(convs)

    model, model_err, model_nodes, conv = run(channels, "log derivatives")
    ref = ref_err = ref_nodes = None
    notes: list[Note] = []
    ghosts = []
    ls = [c[0] for c in channels]
    if ref_channels is not None:
        ref, ref_err, ref_nodes, ref_conv = run(ref_channels, "reference")
        conv = conv & ref_conv
        for i, li in enumerate(ls):
            d = model_nodes[i] - ref_nodes[i]
            for j in np.nonzero(np.diff(d))[0]:
                kind = "ghost" if d[j + 1] > d[j] else "missing"
                ghosts.append((li, float(e[j]), float(e[j + 1]), kind))
                what = ("a GHOST STATE: the model's L has a pole the reference lacks"
                        if kind == "ghost" else "a MISSING STATE: the reference's L has a pole the model lacks")
                notes.append(Note(f"{kind}_state", f"l = {li}: {what} between E = {e[j]:.6g} and {e[j + 1]:.6g}",
                                  f"l={li}"))
            scale = np.maximum(np.maximum(np.abs(model[i]), np.abs(ref[i])), 1.0 / radius)
            off = np.abs(model[i] - ref[i]) > gap * scale
            if off.any():
                worst_j = int(np.argmax(np.abs(model[i] - ref[i]) / scale))
                notes.append(Note("differs", f"l = {li}: model and reference differ beyond {gap:g} (relative) at "
                                             f"{int(off.sum())} of {e.size} energies, most at E = {e[worst_j]:.6g}",
                                  f"l={li}"))
    bad = int(np.count_nonzero(~conv))
    if bad:
        notes.append(Note("not_converged", f"{bad} logarithmic derivatives did not reach tol {tol:g}"))
    return LogDerivativeResult(potential=pot.name, parameters=_params(pot),
                               reference=None if ref_pot is None else ref_pot.name,
                               reference_parameters=None if ref_pot is None else _params(ref_pot),
                               units=system.name, mass=mu, tol=tol, radius=float(radius), energies=e, ls=ls,
                               model=model, model_error=model_err, model_nodes=model_nodes, ref=ref,
                               ref_error=ref_err, ref_nodes=ref_nodes, converged=conv, ghosts=ghosts, notes=notes)


# --------------------------------------------------------------------------- resonances


@dataclass(frozen=True)
class Resonance:
    """One resonance of one partial wave, found two ways (energies from the unit system's energy unit).

    ``phase_*``: Breit-Wigner with a linear background fitted to delta_l(E)
    (position and width, each with the spread of two fit windows as estimate);
    ``pole_*``: the Siegert pole E_r - i Gamma/2 of the outgoing-wave condition
    (Richardson over grids).  ``agree``: the two within three times their summed
    estimates.  ``label``: the label the level had while bound (from the nodes of
    u at E_r inside the barrier), or None.
    """

    l: int
    phase_energy: float
    phase_energy_error: float
    phase_width: float
    phase_width_error: float
    pole_energy: float
    pole_width: float
    pole_error: float
    agree: bool
    label: str | None = None


def _resonance_label(cpot, prof, L, l, kinetic, energy, units, tol):
    """The label of a quasi-bound level: from the zeros of u at E_r inside the barrier.

    Inside the barrier's inner edge the quasi-bound state looks like the bound level
    it continues (oscillation theory), so n from its node count there gives the same
    label as the level had while bound (a level followed through a sweep keeps it).
    None when no well-then-barrier shape is seen at E_r.
    """
    from radsolve.core import probe as probing
    from radsolve.core.continuum import log_derivatives as channel_log_derivatives
    from radsolve.core.result import level_designation

    r = np.geomspace(max(prof.inner_length, 1e-12) * 1e-3, max(prof.inner_length, 1e-12) * 1e4, 6000)
    with np.errstate(all="ignore"):
        above = probing.effective_potential(cpot, L, kinetic, r) - prof.v_infinity > energy
    allowed = np.nonzero(~above)[0]
    if allowed.size == 0:
        return None
    barrier = np.nonzero(above[allowed[0]:])[0]
    if barrier.size == 0:
        return None
    edge = float(r[allowed[0] + barrier[0]])
    try:
        ld = channel_log_derivatives(cpot, prof, L, kinetic, np.array([energy]), edge, max(tol, 1e-8))
    except InputError:
        return None
    return level_designation(int(ld.nodes[0]), l, None, units)[1]


@dataclass(repr=False)
class ResonanceResult(ResultProtocol):
    """Resonances (quasi-bound levels) in an energy window (the result protocol).

    Note codes: ``methods_disagree`` (status ``incomplete``: the phase-shift
    fit and the pole differ beyond their estimates), ``none_found`` (no
    resonance in the window: a statement about the scan, whose spacing is
    given, not a proof).
    """

    potential: str
    parameters: dict
    units: str
    mass: float
    tol: float
    window: tuple
    scan_points: int
    resonances: list
    notes: list = field(default_factory=list)

    @property
    def status(self) -> Outcome:
        return Outcome.SUCCESS if all(r.agree for r in self.resonances) else Outcome.INCOMPLETE

    @property
    def message(self) -> str:
        return message_of(self.notes, f"{len(self.resonances)} resonance(s); phase-shift fit and pole agree")

    def records(self, unit: str | None = None) -> list[dict[str, Any]]:
        f = _energy_factor(self.units, unit)
        return [{"l": r.l, "label": r.label, "energy_pole": r.pole_energy / f, "width_pole": r.pole_width / f,
                 "pole_error": r.pole_error / f, "energy_phase": r.phase_energy / f,
                 "energy_phase_error": r.phase_energy_error / f, "width_phase": r.phase_width / f,
                 "width_phase_error": r.phase_width_error / f, "agree": r.agree} for r in self.resonances]

    def to_dict(self, unit: str | None = None) -> dict[str, Any]:
        f = _energy_factor(self.units, unit)
        return {"kind": "resonances", "status": str(self.status), "success": self.success, "message": self.message,
                "notes": [n.to_dict() for n in self.notes], "potential": self.potential,
                "parameters": self.parameters, "units": self.units, "energy_unit": _unit_name(self.units, unit),
                "mass": self.mass, "tol": self.tol, "window": [self.window[0] / f, self.window[1] / f],
                "scan_points": self.scan_points, "note": MODEL_NOTE, "rows": self.records(unit)}

    def _header(self):
        return [("potential", self.potential), ("window", list(self.window)), ("found", len(self.resonances))]


def _breit_wigner_fit(energies, phase):
    """E_r, Gamma of delta = a + b (E - E_r) + atan2(Gamma/2, E_r - E) fitted to (energies, phase)."""
    from scipy.optimize import least_squares

    j = int(np.argmax(np.gradient(phase, energies)))
    slope = np.gradient(phase, energies)[j]
    e0, g0 = energies[j], 2.0 / max(slope, 1e-300)

    def residual(p):
        e_r, gamma, a, b = p
        return a + b * (energies - e_r) + np.arctan2(0.5 * gamma, e_r - energies) - phase

    a0 = phase[j] - 0.5 * math.pi
    fit = least_squares(residual, [e0, g0, a0, 0.0], x_scale=[g0, g0, 1.0, 1.0 / g0])
    return float(fit.x[0]), abs(float(fit.x[1]))


def resonances(potential, l=0, *, window, mass=None, tol: float = 1e-8, scan_points: int = 400, plugins=None,
               units: str | None = None) -> ResonanceResult:
    """Resonances of each partial wave ``l`` with positions in ``window`` = (E_low, E_high) above V(inf).

    Found where delta_l(E) rises fastest on a scan of ``scan_points`` energies,
    then located two ways (see :class:`Resonance`).  A resonance narrower than
    the scan spacing can be missed: the scan spacing is reported.
    """
    from radsolve.core.continuum import channel_phases, siegert_pole

    tol = _validated_phase_tol(tol)
    pot, system, mu, kinetic, channels, _ = _setup(potential, l, mass, plugins, units, 3, None)
    v_inf = channels[0][3].v_infinity
    try:
        lo, hi = (float(x) for x in window)
    except (TypeError, ValueError):
        raise InputError(f"window must be two energies (E_low, E_high) (got {window!r})", parameter="window") from None
    validated_energies([lo, hi], v_inf, parameter="window")
    grid = energy_grid(lo, hi, int(scan_points), parameter="window")
    found = []
    notes: list[Note] = []
    for li, L, cpot, prof in channels:
        scan = channel_phases(cpot, prof, L, li, kinetic, grid - v_inf, max(tol, 1e-8))
        slope = np.gradient(scan.phase, grid)
        typical = float(np.median(np.abs(slope)))
        peaks = [j for j in range(1, grid.size - 1) if slope[j] >= slope[j - 1] and slope[j] > slope[j + 1]
                 and slope[j] > 5.0 * typical and slope[j] > 2.0 / (hi - lo)]
        for j in peaks:
            gamma0 = 2.0 / slope[j]
            fits = []
            for half in (3.0, 1.5):
                e_fit = np.linspace(max(grid[j] - half * gamma0, v_inf + 1e-3 * gamma0), grid[j] + half * gamma0, 41)
                ph = channel_phases(cpot, prof, L, li, kinetic, e_fit - v_inf, min(tol, 1e-10)).phase
                fits.append(_breit_wigner_fit(e_fit, ph))
            (e_a, g_a), (e_b, g_b) = fits
            pole, pole_err, _ = siegert_pole(cpot, prof, L, kinetic, complex(e_b - v_inf, -0.5 * g_b), tol)
            e_pole, g_pole = pole.real + v_inf, -2.0 * pole.imag
            e_err, g_err = abs(e_a - e_b), abs(g_a - g_b)
            agree = abs(e_pole - e_b) <= 3.0 * (e_err + pole_err) and abs(g_pole - g_b) <= 3.0 * (g_err + 2 * pole_err)
            label = _resonance_label(cpot, prof, L, li, kinetic, e_pole - v_inf, system.name, tol)
            found.append(Resonance(li, e_b, e_err, g_b, g_err, e_pole, g_pole, pole_err, agree, label))
            if not agree:
                notes.append(Note("methods_disagree", f"l = {li}: the phase-shift fit (E = {e_b:.8g}, Gamma = "
                                                      f"{g_b:.4g}) and the pole (E = {e_pole:.8g}, Gamma = "
                                                      f"{g_pole:.4g}) differ beyond their estimates", f"l={li}"))
    if not found:
        notes.append(Note("none_found", f"no resonance found between {lo:.6g} and {hi:.6g} on a scan of "
                                        f"{grid.size} energies (spacing {(hi - lo) / max(grid.size - 1, 1):.3g}); "
                                        "a narrower one may have been missed"))
    return ResonanceResult(potential=pot.name, parameters=_params(pot), units=system.name, mass=mu, tol=tol,
                           window=(lo, hi), scan_points=grid.size, resonances=found, notes=notes)


# --------------------------------------------------------------------------- along a parameter


@dataclass(repr=False)
class ScatteringSweepResult(ResultProtocol):
    """:func:`scattering` at every value of one parameter (the result protocol).

    ``points`` holds one :class:`ScatteringResult` per value.  a_l passes
    through infinity where a level of l crosses the threshold (the critical
    values :func:`radsolve.threshold` finds), and Levinson's count steps
    there.  The status is the worst of the points'; each note of a point
    appears once, with the first value it concerns.
    """

    potential: str
    parameter: str
    values: np.ndarray
    points: list

    @property
    def status(self) -> Outcome:
        return worst([p.status for p in self.points])

    @property
    def notes(self) -> list:
        seen, out = set(), []
        for value, point in zip(self.values, self.points):
            for note in point.notes:
                if note.code not in seen:
                    seen.add(note.code)
                    count = sum(any(n.code == note.code for n in p.notes) for p in self.points)
                    out.append(Note(note.code, f"{note.text} (at {self.parameter} = {value:.6g}; "
                                               f"{count} of {len(self.points)} points)", note.subject))
        return out

    @property
    def message(self) -> str:
        return message_of(self.notes, f"{len(self.points)} points: scattering lengths converged; "
                                      "Levinson's theorem holds at every point")

    def records(self, unit: str | None = None) -> list[dict[str, Any]]:
        return [{self.parameter: float(v), **row} for v, p in zip(self.values, self.points) for row in p.records(unit)]

    def to_dict(self, unit: str | None = None) -> dict[str, Any]:
        first = self.points[0]
        return {"kind": "scattering_sweep", "status": str(self.status), "success": self.success,
                "message": self.message, "notes": [n.to_dict() for n in self.notes], "potential": self.potential,
                "parameter": self.parameter, "units": first.units,
                "length_unit": "bohr" if first.units == "atomic" else "fm", "mass": first.mass, "tol": first.tol,
                "note": MODEL_NOTE, "rows": self.records(unit)}

    def _header(self):
        return [("potential", self.potential), ("parameter", self.parameter), ("points", len(self.points))]

    def _table_columns(self):
        return [self.parameter, "l", "scattering_length", "scattering_length_error", "bound_levels", "levinson"]


def scattering_sweep(potential, parameter: str, values, l=0, *, fixed=None, mass=None, tol: float = 1e-8,
                     hard_core: float | None = None, plugins=None, units: str | None = None) -> ScatteringSweepResult:
    """:func:`scattering` of ``potential`` (a family name or Potential) at each of ``values`` of ``parameter``.

    ``fixed`` sets other parameters.  Values in the family's units.
    """
    from radsolve.potentials import as_potential

    base = as_potential(potential, plugins)
    params = {**base.parameters, **(fixed or {})}
    if parameter not in params:
        raise InputError(f"potential {base.name!r} has no parameter {parameter!r}; its parameters: "
                         + ", ".join(params), parameter="parameter")
    try:
        vals = np.atleast_1d(np.asarray(values, dtype=float))
    except (TypeError, ValueError):
        raise InputError(f"values must be numbers (got {values!r})", parameter="values") from None
    if vals.ndim != 1 or vals.size == 0 or not np.all(np.isfinite(vals)):
        raise InputError("values: at least one finite value is needed", parameter="values")
    points = []
    for v in vals:
        pot = base.family.bind(**{**params, parameter: float(v)})
        points.append(scattering(pot, l, mass=mass, tol=tol, hard_core=hard_core, units=units))
    return ScatteringSweepResult(potential=base.name, parameter=parameter, values=vals, points=points)


# --------------------------------------------------------------------------- one continuum state


@dataclass(repr=False)
class ContinuumWave(ResultProtocol):
    """u_E,l(r) of one continuum state, normalized per unit energy (the result protocol).

    u ~ sqrt(2 m / (pi k)) sin(k r - l pi/2 + delta) far out (free waves), or
    sqrt(2 m / (pi k)) (F cos(delta) + G sin(delta)) for a Coulomb tail, so that
    int u_E u_E' dr = delta(E - E') (textbook).  ``u`` is the finest grid's
    value and ``u_error`` its change from the grid before (at ``r``, the
    radii asked, by cubic interpolation).  Note codes: ``not_converged``.
    """

    potential: str
    parameters: dict
    units: str
    mass: float
    tol: float
    energy: float
    l: int
    phase_shift: float
    phase_error: float
    r: np.ndarray
    u: np.ndarray
    u_error: np.ndarray
    converged: bool
    notes: list = field(default_factory=list)

    @property
    def status(self) -> Outcome:
        return Outcome.SUCCESS if self.converged else Outcome.NOT_CONVERGED

    @property
    def message(self) -> str:
        return message_of(self.notes, f"continuum state at E = {self.energy:.8g}, l = {self.l}: converged")

    def records(self, unit: str | None = None) -> list[dict[str, Any]]:
        return [{"r": float(r), "u": float(u), "u_error": float(e)} for r, u, e in zip(self.r, self.u, self.u_error)]

    def to_dict(self, unit: str | None = None) -> dict[str, Any]:
        factor = _energy_factor(self.units, unit)
        return {"kind": "continuum_wave", "status": str(self.status), "success": self.success, "message": self.message,
                "notes": [n.to_dict() for n in self.notes], "potential": self.potential, "parameters": self.parameters,
                "units": self.units, "energy": self.energy / factor, "energy_unit": _unit_name(self.units, unit),
                "l": self.l, "phase_shift": self.phase_shift, "phase_error": self.phase_error, "mass": self.mass,
                "normalization": "per unit energy", "note": MODEL_NOTE, "rows": self.records(unit)}

    def _header(self):
        return [("potential", self.potential), ("energy", self.energy), ("l", self.l),
                ("phase_shift", self.phase_shift), ("points", int(self.r.size))]


def continuum_wave(potential, energy: float, l: int = 0, *, r=None, mass=None, tol: float = 1e-8,
                   hard_core: float | None = None, plugins=None, units: str | None = None) -> ContinuumWave:
    """The continuum state u_E,l(r) per unit energy at ``energy`` (above V(inf)), on the grid or at radii ``r``."""
    from radsolve.core.continuum import channel_phases

    tol = _validated_phase_tol(tol)
    pot, system, mu, kinetic, channels, hard_core = _setup(potential, l, mass, plugins, units, 3, hard_core)
    (li, L, cpot, prof), = channels
    if prof.confining:
        from radsolve.core.continuum import channel_tail

        channel_tail(cpot, prof, kinetic, 1.0, 1.0, tol, 1.0)  # raises: no continuum
    e = validated_energies([energy], prof.v_infinity, parameter="energy")
    radii = None
    if r is not None:
        radii = np.atleast_1d(np.asarray(r, dtype=float))
        if radii.size == 0 or not np.all(np.isfinite(radii)) or np.any(radii < 0):
            raise InputError("r must be radii >= 0", parameter="r")
    ch = channel_phases(cpot, prof, L, li, kinetic, e - prof.v_infinity, tol, hard_core=hard_core, keep_waves=True,
                        min_radius=0.0 if radii is None else float(radii.max()) / 1.6)
    r_f, u_f, _ = ch.waves[-1]
    u_f = u_f[:, 0]
    if len(ch.waves) >= 2:
        r_c, u_c, _ = ch.waves[-2]
        diff = np.abs(u_f[::2][: u_c.shape[0]] - u_c[:, 0])
        err = np.interp(r_f, r_c[: diff.size], diff)
    else:
        err = np.full(u_f.shape, np.inf)
    if radii is not None:
        from scipy.interpolate import CubicSpline

        inside = radii >= r_f[0]
        u_at = np.zeros(radii.shape)  # below the first point the wave is negligible (origin law)
        u_at[inside] = CubicSpline(r_f, u_f)(radii[inside])
        err_at = np.interp(radii, r_f, err)
        r_out, u_out, e_out = radii, u_at, err_at
    else:
        r_out, u_out, e_out = r_f, u_f, err
    notes = []
    if not bool(ch.converged[0]):
        notes.append(Note("not_converged", f"the phase shift did not reach tol {tol:g} (estimate {ch.error[0]:.2g})"))
    return ContinuumWave(potential=pot.name, parameters=_params(pot), units=system.name, mass=mu, tol=tol,
                         energy=float(e[0]), l=li, phase_shift=float(ch.phase[0]), phase_error=float(ch.error[0]),
                         r=r_out, u=u_out, u_error=e_out, converged=bool(ch.converged[0]), notes=notes)
