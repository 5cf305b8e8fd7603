"""Electric-dipole (E1) radiative transitions between computed bound levels.

(The module is called ``radiative`` so that ``radsolve.transitions`` stays
the function: a submodule of that name would replace it on import.)

For two levels (n l) and (n' l') with l' = l ± 1 the radial matrix element
is d = ∫ u_nl(r) r u_n'l'(r) dr (bohr), computed on every grid the two levels
share and Richardson-extrapolated like the energies.  With l> = max(l, l'),
ω = |E - E'| (hartree, ħ = 1) and degeneracies g = 2l + 1 (spinless levels;
spin multiplies every g and S by the same factor and changes neither f nor
A), in atomic units (textbook formulas, e.g. Bethe & Salpeter, Quantum
Mechanics of One- and Two-Electron Atoms, 1957, §59-63):

* line strength            S = l> d²                          (e² a0²)
* absorption oscillator    f(lower -> upper) = (2/3) ω S / g_lower
  strength, electron-mass convention (the one spectroscopic tables use, so
  that A = 2 α³ ω² (g_lower/g_upper) f holds);
* Einstein A               A(upper -> lower) = (4/3) α³ ω³ S / g_upper
  per atomic unit of time ħ/E_h, converted to s⁻¹ with scipy.constants;
* lifetime                 τ = 1 / Σ A over every lower level;
* branching ratio          A_i / Σ A.

Dipole operator convention: -e r with r the relative coordinate of the
two-body system (exact for a neutral pair such as hydrogen, muonic hydrogen
or positronium-like systems; ``dipole_charge`` scales it, e.g. to
(M + Z m)/(M + m) for a hydrogen-like ion of nuclear charge Z and mass M).
The reduced mass enters through the computed energies (ω) and wavefunctions
(d).  Wavelengths are vacuum wavelengths, λ = h c / ΔE.

Two levels whose energies agree within their error estimates (the 2s and 2p
levels of a pure Coulomb potential, say) are treated as degenerate: no line
is drawn between them and each lists the other under ``degenerate_with``.
A level with no lower E1 partner is reported as metastable (no E1 decay),
with lifetime None, never as an infinite or zero number.

This is a model calculation (nonrelativistic, spinless, E1 only, no
hyperfine, QED or field effects); for rates used in diagnostics or safety
assessments, use evaluated data compilations.

``equation="dirac"`` gives the same tables for j levels
(:func:`radsolve.analysis.relativistic.dirac_transitions_from`: g = 2j + 1,
radial integrals of G G + F F in the long-wavelength length form).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from radsolve.errors import InputError
from radsolve.analysis.observables import Estimate, channel_potential, check_atomic_3d, correction_power
from radsolve.core.protocol import Note, Outcome, ResultProtocol, message_of, worst, write_text
from radsolve.core.serialize import records_to_csv
from radsolve.core.wavefunctions import SampleGrid, breakpoints_on, prepared_samples

#: Largest nmax accepted: every level's wavefunction on every grid is kept in
#: memory (about nmax**2 levels).
NMAX_LIMIT = 25

MODEL_NOTE = ("model calculation: nonrelativistic, spinless, electric-dipole only; "
              "for rates used in diagnostics or safety work use evaluated compilations")
CONVENTIONS = {
    "wavelengths": "vacuum wavelengths, lambda = h c / dE",
    "oscillator_strength": "absorption f(lower -> upper), electron-mass convention",
    "einstein_A": "spontaneous emission rate upper -> lower, s^-1",
    "line_strength": "S = max(l, l') d^2, atomic units (e^2 bohr^2), spinless",
    "radial_integral": "d = integral of u_upper r u_lower dr, bohr; both u > 0 as r -> 0",
    "dipole_operator": "-e r, r the relative coordinate, times dipole_charge",
    "lifetime": "1 / sum of A over all lower levels; null when metastable (no E1 decay)",
}


DIRAC_MODEL_NOTE = ("model calculation: Dirac levels of one electron, electric-dipole only in the "
                    "long-wavelength limit; for rates used in diagnostics or safety work use evaluated "
                    "compilations")


KLEIN_GORDON_MODEL_NOTE = ("model calculation: Klein-Gordon (spin-0) levels, electric-dipole only in the "
                           "long-wavelength limit; for rates used in diagnostics or safety work use evaluated "
                           "compilations")


def klein_gordon_conventions() -> dict[str, str]:
    """CONVENTIONS of the Klein-Gordon E1 tables: the mixed-density dipole named."""
    from radsolve.analysis.relativistic import KG_GAUGE

    return dict(CONVENTIONS, radial_integral="R = integral of u_u u_l r (W_u + W_l + 2 mc^2 - 2 V)/(2 mc^2) dr, "
                "bohr; u normalized with the charge density, both > 0 as r -> 0", gauge=KG_GAUGE)


def dirac_conventions() -> dict[str, str]:
    """CONVENTIONS of the Dirac E1 tables: j levels, the gauge named."""
    from radsolve.analysis.relativistic import GAUGE

    return dict(CONVENTIONS, line_strength="S = (2j_u+1)(2j_l+1) (j_l j_u 1; -1/2 1/2 0)^2 R^2, atomic units "
                "(e^2 bohr^2), spin included", radial_integral="R = integral of (G_u G_l + F_u F_l) r dr, bohr; "
                "both G > 0 as r -> 0", gauge=GAUGE)


#: Per equation: (the model note of the JSON, the short note's parenthesis, the conventions).
_EQUATION_TEXT = {
    "schrodinger": (MODEL_NOTE, "nonrelativistic, spinless, E1 only", lambda: dict(CONVENTIONS)),
    "dirac": (DIRAC_MODEL_NOTE, "Dirac levels of one electron, E1 only, long-wavelength length form",
              dirac_conventions),
    "klein-gordon": (KLEIN_GORDON_MODEL_NOTE, "Klein-Gordon spin-0 levels, E1 only, long-wavelength length form",
                     klein_gordon_conventions),
}


def _constants() -> dict[str, float]:
    from scipy.constants import c, fine_structure, h, physical_constants

    return {
        "alpha": fine_structure,
        "time_au": physical_constants["atomic unit of time"][0],
        "hartree_J": physical_constants["Hartree energy"][0],
        "h": h,
        "c": c,
    }


@dataclass
class Line:
    """One E1 line, upper -> lower.

    Energies in hartree, ``einstein_A`` in s⁻¹, wavelengths in nm (vacuum),
    ``frequency`` in Hz; each ``*_error`` is the estimated absolute error.
    """

    upper: str
    lower: str
    energy: float
    energy_error: float
    radial_integral: Estimate
    line_strength: float
    oscillator_strength: float
    oscillator_strength_error: float
    einstein_A: float
    einstein_A_error: float
    wavelength_nm: float
    frequency_hz: float
    branching_ratio: float = 0.0

    def to_dict(self, unit_factor: float = 1.0) -> dict[str, Any]:
        return {
            "upper": self.upper,
            "lower": self.lower,
            "energy": self.energy / unit_factor,
            "energy_error": self.energy_error / unit_factor,
            "wavelength_nm": self.wavelength_nm,
            "frequency_hz": self.frequency_hz,
            "oscillator_strength": self.oscillator_strength,
            "oscillator_strength_error": self.oscillator_strength_error,
            "einstein_A": self.einstein_A,
            "einstein_A_error": self.einstein_A_error,
            "line_strength": self.line_strength,
            "radial_integral": self.radial_integral.value,
            "radial_integral_error": self.radial_integral.error,
            "branching_ratio": self.branching_ratio,
        }


@dataclass
class StateDecay:
    """How one level decays by E1.

    Attributes
    ----------
    label, n, l : str, int, int
    energy, energy_error : float
        Hartree.
    total_A : float
        Σ A over lower levels, s⁻¹ (0.0 when metastable).
    lifetime_s, lifetime_error_s : float or None
        τ = 1/ΣA and its estimate, s; None when metastable.
    metastable : bool
        True when no lower level is reachable by an E1 transition.
    ground : bool
        True for the lowest level of the spectrum (which cannot decay at all).
    branching : dict
        Lower label -> A_i / ΣA, largest first.
    degenerate_with : list of str
        E1 partners whose energy agrees with this level's within the estimates.
    complete : bool
        False when a lower level might exist that was not computed (see
        ``TransitionResult.message``).
    """

    label: str
    n: int
    l: int
    energy: float
    energy_error: float
    total_A: float
    lifetime_s: float | None
    lifetime_error_s: float | None
    metastable: bool
    ground: bool
    branching: dict[str, float] = field(default_factory=dict)
    degenerate_with: list[str] = field(default_factory=list)
    complete: bool = True
    j: float | None = None

    @property
    def status(self) -> str:
        if self.ground:
            return "ground level (stable)"
        if self.metastable:
            return "metastable (no E1 decay)"
        return "decays by E1"

    def to_dict(self, unit_factor: float = 1.0) -> dict[str, Any]:
        return {
            "label": self.label,
            "n": self.n,
            "l": self.l,
            **({} if self.j is None else {"j": self.j}),
            "energy": self.energy / unit_factor,
            "energy_error": self.energy_error / unit_factor,
            "lifetime_s": self.lifetime_s,
            "lifetime_error_s": self.lifetime_error_s,
            "total_A": self.total_A,
            "metastable": self.metastable,
            "ground": self.ground,
            "status": self.status,
            "branching": dict(self.branching),
            "degenerate_with": list(self.degenerate_with),
            "complete": self.complete,
        }


@dataclass(repr=False)
class TransitionResult(ResultProtocol):
    """Every E1 line among the levels with n <= nmax (and the lower levels they reach).

    Attributes
    ----------
    lines : list of Line
        Sorted by upper level (n, l), then lower level.
    states : list of StateDecay
        Sorted by (n, l).
    result : SolveResult
        The solve the levels came from (one call, shared grids).
    nmax : int
    dipole_charge : float
    occupied : list of str
        Levels treated as filled (left out).
    status : Outcome
        ``success`` when every level and every radial integral converged and
        every lifetime is complete; ``not converged`` when a level or a radial
        integral did not reach ``tol``; ``incomplete`` when a lifetime may
        miss a decay channel or the solve itself was incomplete.
    success : bool
        ``status is Outcome.SUCCESS``.
    notes : tuple of Note
        Codes ``occupied``, ``lower_levels_added``, ``not_converged``,
        ``lifetime_incomplete``, ``solve`` (the solve's own message).
    message : str
        The notes as one text.
    """

    lines: list[Line]
    states: list[StateDecay]
    result: Any
    nmax: int
    dipole_charge: float
    status: Outcome = Outcome.SUCCESS
    notes: tuple[Note, ...] = ()
    occupied: list[str] = field(default_factory=list)
    equation: str = "schrodinger"
    #: With ``transitions(continuum=True)``: one :func:`sum_rules` record per level.
    sum_rules: list[dict] = field(default_factory=list)

    @property
    def short_note(self) -> str:
        """The model-calculation caveat in one line (CSV comment, table footer)."""
        return (f"model calculation ({_EQUATION_TEXT[self.equation][1]}); for rates used in "
                "diagnostics or safety work, use evaluated data compilations.")

    @property
    def message(self) -> str:
        return message_of(self.notes, f"{len(self.lines)} E1 line{'s' if len(self.lines) != 1 else ''} among "
                          f"{len(self.states)} level{'s' if len(self.states) != 1 else ''}, all converged")

    def _header(self) -> list[tuple[str, Any]]:
        res = self.result
        params = ", ".join(f"{k}={v}" for k, v in res.potential.parameters.items())
        return [("potential", f"{res.potential.name}({params})"), ("nmax", self.nmax),
                ("lines", len(self.lines)), ("states", len(self.states))]

    def _table_columns(self):
        return ("record", "upper", "lower", "label", "wavelength_nm", "einstein_A", "lifetime_s")

    def records(self, unit: str | None = None) -> list[dict[str, Any]]:
        """One row per line (``record`` 'line'), then one per level (``record`` 'state'); see the CSV output."""
        from radsolve.units import energy_unit_factor

        unit = "hartree" if unit is None else unit
        factor = energy_unit_factor(unit)
        rows: list[dict[str, Any]] = []
        for x in self.lines:
            rows.append(dict(record="line", upper=x.upper, lower=x.lower, label=None, energy=x.energy / factor,
                             energy_error=x.energy_error / factor, wavelength_nm=x.wavelength_nm,
                             oscillator_strength=x.oscillator_strength, einstein_A=x.einstein_A,
                             branching_ratio=x.branching_ratio, lifetime_s=None, metastable=None, ground=None,
                             unit=unit))
        for st in self.states:
            rows.append(dict(record="state", upper=None, lower=None, label=st.label, energy=st.energy / factor,
                             energy_error=st.energy_error / factor, wavelength_nm=None, oscillator_strength=None,
                             einstein_A=None, branching_ratio=None, lifetime_s=st.lifetime_s,
                             metastable=str(st.metastable).lower(), ground=str(st.ground).lower(), unit=unit))
        return rows

    def to_csv(self, path=None, unit: str | None = None) -> str:
        """:meth:`records` as CSV, after a ``#`` comment line saying these are model rates."""
        text = f"# Note: {self.short_note}\n" + records_to_csv(self.records(unit))
        return write_text(path, text)

    # ------------------------------------------------------------ arrays

    @property
    def einstein_A(self) -> np.ndarray:
        """A of each line, s⁻¹."""
        return np.array([x.einstein_A for x in self.lines])

    @property
    def oscillator_strengths(self) -> np.ndarray:
        """Absorption f of each line."""
        return np.array([x.oscillator_strength for x in self.lines])

    @property
    def wavelengths_nm(self) -> np.ndarray:
        """Vacuum wavelength of each line, nm."""
        return np.array([x.wavelength_nm for x in self.lines])

    @property
    def line_energies(self) -> np.ndarray:
        """Transition energy of each line, hartree."""
        return np.array([x.energy for x in self.lines])

    @property
    def lifetimes_s(self) -> np.ndarray:
        """τ of each state, s; NaN where metastable (see ``metastable``)."""
        return np.array([math.nan if s.lifetime_s is None else s.lifetime_s for s in self.states])

    @property
    def metastable(self) -> np.ndarray:
        return np.array([s.metastable for s in self.states])

    # ------------------------------------------------------------ look-up

    def state(self, label: str) -> StateDecay:
        for s in self.states:
            if s.label == label:
                return s
        known = ", ".join(s.label for s in self.states)
        raise InputError(f"no state {label!r}; states: {known}")

    def line(self, upper: str, lower: str) -> Line:
        for x in self.lines:
            if x.upper == upper and x.lower == lower:
                return x
        raise InputError(f"no E1 line {upper} -> {lower} among the computed lines")

    # ------------------------------------------------------------ plain data

    def to_dict(self, unit: str | None = None) -> dict[str, Any]:
        """The JSON document of ``radsolve transitions``, energies in ``unit`` (default hartree)."""
        from radsolve.units import energy_unit_factor

        unit = "hartree" if unit is None else unit
        factor = energy_unit_factor(unit)
        res = self.result
        return {
            "potential": res.potential.name,
            "parameters": dict(res.potential.parameters),
            "mass": res.mass,
            "unit": unit,
            "nmax": self.nmax,
            "method": res.method,
            "tol": res.tol,
            "dipole_charge": self.dipole_charge,
            **({} if self.equation == "schrodinger" else {"equation": self.equation}),
            "occupied": list(self.occupied),
            "success": bool(self.success),
            "status": str(self.status),
            "message": self.message,
            "notes": [n.to_dict() for n in self.notes],
            "conventions": _EQUATION_TEXT[self.equation][2](),
            "note": _EQUATION_TEXT[self.equation][0],
            "lines": [x.to_dict(factor) for x in self.lines],
            "states": [s.to_dict(factor) for s in self.states],
            **({"sum_rules": [dict(r) for r in self.sum_rules]} if self.sum_rules else {}),
        }


# ---------------------------------------------------------------- matrix elements


def _orders(*methods: str, breakpoints: bool = False) -> tuple[int, ...]:
    from radsolve.core.solvers.base import solver_class

    orders: set[int] = set()
    for m in methods:
        orders |= set(solver_class(m).orders(breakpoints))
    return tuple(sorted(orders))



def _rounding(method: str, size: int) -> float:
    from radsolve.core.solvers.base import solver_class

    return max(float(solver_class(method).relative_rounding(size)), 64 * np.finfo(float).eps)


def common_samples(a: list[SampleGrid], b: list[SampleGrid]) -> int:
    """How many leading samples of two levels lie on identical grids."""
    count = 0
    for ga, gb in zip(a, b):
        if ga.r.shape != gb.r.shape or not np.array_equal(ga.r, gb.r):
            break
        count += 1
    return count


def _dipole(level_a, grids_a: list[SampleGrid], level_b, grids_b: list[SampleGrid], tol: float,
            breakpoints: bool = False) -> Estimate:
    from radsolve.core.extrapolation import richardson

    k = common_samples(grids_a, grids_b)
    if k == 0:
        raise InputError(f"levels {level_a.label} and {level_b.label} were not solved on the same "
                         "grids; solve them in one call, e.g. solve(..., l=[0, 1])")
    values, scale = [], 0.0
    for ga, gb in zip(grids_a[:k], grids_b[:k]):
        terms = ga.weights * ga.u * gb.u * ga.r
        values.append(float(np.sum(terms)))
        scale = float(np.sum(np.abs(terms)))
    ma = level_a.sample_method or "fd"
    mb = level_b.sample_method or "fd"
    rounding = max(_rounding(ma, grids_a[k - 1].r.size), _rounding(mb, grids_b[k - 1].r.size))
    value, estimate, observed = richardson(values, _orders(ma, mb, breakpoints=breakpoints), rounding)
    estimate = max(estimate, rounding * scale)
    converged = math.isfinite(estimate) and estimate <= 100.0 * tol * max(abs(value), 1e-3 * scale)
    return Estimate(float(value), float(estimate), "bohr", observed, bool(converged))


def radial_dipole(state_a, state_b) -> Estimate:
    """⟨a|r|b⟩ = ∫ u_a r u_b dr (bohr) of two :class:`radsolve.State` objects.

    Both must come from one solve (shared grids), e.g. ``State.from_result``
    on a result with several l.  Sign convention: both u > 0 as r -> 0.
    """
    if state_a.mass != state_b.mass or state_a.potential != state_b.potential:
        raise InputError("the two states belong to different potentials or masses")
    return _dipole(state_a.level, state_a.grids, state_b.level, state_b.grids,
                   min(state_a.tol, state_b.tol),
                   breakpoints_on(state_a.profile, state_a.grids) or breakpoints_on(state_b.profile, state_b.grids))


# ---------------------------------------------------------------- the whole set


def _check_nmax(nmax) -> int:
    if isinstance(nmax, bool) or not isinstance(nmax, (int, np.integer)):
        raise InputError(f"nmax must be a whole number from 1 to {NMAX_LIMIT}, got {nmax!r}",
                         parameter="nmax")
    if not 1 <= nmax <= NMAX_LIMIT:
        raise InputError(f"nmax must be from 1 to {NMAX_LIMIT} (every level's wavefunction on "
                         f"every grid is kept in memory), got {nmax}", parameter="nmax")
    return int(nmax)


def _check_dipole_charge(dipole_charge) -> None:
    if not (isinstance(dipole_charge, (int, float)) and not isinstance(dipole_charge, bool)
            and math.isfinite(dipole_charge) and dipole_charge > 0):
        raise InputError(f"dipole_charge must be a positive number, got {dipole_charge!r}",
                         parameter="dipole_charge")


def _degenerate(a, b) -> bool:
    threshold = 10.0 * (a.error_estimate + b.error_estimate) + 64 * np.finfo(float).eps * max(
        abs(a.energy), abs(b.energy))
    return abs(a.energy - b.energy) <= threshold


def _occupied_labels(occupied) -> list[str]:
    return _labels(occupied, "occupied")


def _labels(value, parameter: str) -> list[str]:
    """Level labels from ``"1s,2p"`` or a sequence of strings."""
    if value is None:
        return []
    if isinstance(value, str):
        value = [part for part in value.replace(" ", ",").split(",") if part]
    labels = []
    for item in value:
        if not isinstance(item, str) or not item.strip():
            raise InputError(f"{parameter} must be level labels such as '1s', got {item!r}",
                             parameter=parameter)
        labels.append(item.strip())
    return labels


def transitions_from(result, nmax: int | None = None, *, dipole_charge: float = 1.0,
                     occupied=()) -> TransitionResult:
    """E1 lines and lifetimes among the levels of one :class:`radsolve.SolveResult`.

    Parameters
    ----------
    result : SolveResult
        From one :func:`radsolve.solve` call (levels of different l then
        share their grids).
    nmax : int, optional
        Report the levels with n <= nmax (and every lower level they decay
        to); default: every level of ``result``.
    dipole_charge : float
        Factor multiplying the dipole operator -e r (see the module docstring).
    occupied : sequence of str or str
        Labels of levels filled by other electrons (the core of a model
        potential that binds core-like states, e.g. ``"1s,2s,2p"`` for
        sodium): no line ends on them and they are not reported.
    """
    from radsolve.core import probe

    _check_dipole_charge(dipole_charge)
    if getattr(result, "equation", "schrodinger") == "dirac":
        from radsolve.analysis.relativistic import dirac_transitions_from

        return dirac_transitions_from(result, nmax, dipole_charge=dipole_charge, occupied=occupied)
    if getattr(result, "equation", "schrodinger") == "klein-gordon":
        from radsolve.analysis.relativistic import klein_gordon_transitions_from

        return klein_gordon_transitions_from(result, nmax, dipole_charge=dipole_charge, occupied=occupied)
    check_atomic_3d(result, "radiative transitions")
    levels = list(result.levels)
    if not levels:
        raise InputError(f"potential {result.potential.name!r} has no bound level to connect "
                         f"({result.message})")
    if any(getattr(lev, "j", None) is not None for lev in levels):
        raise InputError("E1 transitions between spin-orbit (l, j) levels are not implemented; "
                         "solve without spin_orbit")
    if nmax is None:
        nmax = max(lev.n for lev in levels)
    levels, filled = unoccupied_levels(levels, occupied)
    profiles: dict[int, Any] = {}
    for lev in levels:
        if lev.l not in profiles:
            profiles[lev.l] = probe.profile(channel_potential(result.potential, lev), result.mass)
    grids = {id(lev): prepared_samples(lev, profiles[lev.l].origin_exponent(lev.l, result.mass),
                                       correction_power(profiles[lev.l]))
             for lev in levels}
    by_l: dict[int, list] = {l: [] for l in result.bound_counts}
    for lev in levels:
        by_l.setdefault(lev.l, []).append(lev)

    def partners(lev):
        return lower_and_degenerate(lev, [o for c in (lev.l - 1, lev.l + 1) for o in by_l.get(c, [])])

    chosen = levels_reached(levels, nmax, lambda lev: partners(lev)[0])
    chosen.sort(key=lambda x: (x.n, x.l))

    k = _constants()
    ground_energy = min(lev.energy for lev in levels)
    asked = result.bound_counts
    lines: list[Line] = []
    states: list[StateDecay] = []
    notes: list[Note] = []
    all_ok = bool(result.success)
    for lev in chosen:
        lower, degenerate = partners(lev)
        complete = True
        for c in (lev.l - 1, lev.l + 1):
            if c < 0:
                continue
            if c not in by_l:
                # a partner in an uncomputed channel l+1 needs n' <= n (see DEVELOPERS.md)
                if c == lev.l + 1 and lev.n >= c + 1 and c not in asked:
                    complete = False
                continue
            more_may_exist = asked.get(c, None) is None
            if not by_l[c]:
                if more_may_exist:  # every computed level of the channel is occupied
                    complete = False
                continue
            highest = max(by_l[c], key=lambda x: x.energy)
            if more_may_exist and highest.energy < lev.energy and not _degenerate(highest, lev):
                complete = False
        own: list[Line] = []
        for other in sorted(lower, key=lambda x: (x.n, x.l)):
            d = _dipole(lev, grids[id(lev)], other, grids[id(other)], result.tol,
                        breakpoints_on(profiles[lev.l], grids[id(lev)])
                        or breakpoints_on(profiles[other.l], grids[id(other)]))
            all_ok &= d.converged
            d_val = dipole_charge * d.value
            d_err = dipole_charge * d.error
            omega = lev.energy - other.energy
            omega_err = lev.error_estimate + other.error_estimate
            l_big = max(lev.l, other.l)
            own.append(e1_line(lev, other, omega, omega_err, Estimate(d_val, d_err, "bohr", d.order, d.converged),
                               l_big * d_val**2, 2 * lev.l + 1, 2 * other.l + 1, k,
                               no_f_error=float(omega * l_big * 2 * abs(d_val) * d_err)))
        if not complete:
            all_ok = False
            notes.append(Note("lifetime_incomplete", f"{lev.label}: a lower level with l = {lev.l - 1} or "
                              f"{lev.l + 1} may be missing from the computed set, so its lifetime is an upper "
                              "bound", lev.label))
        states.append(decay_of(lev, own, degenerate, complete, ground=lev.energy == ground_energy))
        lines.extend(own)
    return assembled_transitions(lines, states, result, nmax, dipole_charge, chosen, filled, notes, all_ok)


def e1_line(upper, lower, omega: float, omega_err: float, radial: Estimate, strength: float, g_up: float,
            g_low: float, k: dict, no_f_error: float = math.inf) -> Line:
    """One E1 line from its radial dipole (e bohr, with its estimate) and line strength S:
    f = (2/3) omega S / g_lower, A = (4/3) alpha**3 omega**3 S / g_upper (atomic units,
    textbook), their estimates from those of omega and the dipole; ``no_f_error`` stands
    for f's estimate where f is 0."""
    d_val, d_err = radial.value, radial.error
    f = (2.0 / 3.0) * omega * strength / g_low
    rate = (4.0 / 3.0) * k["alpha"] ** 3 * omega**3 * strength / g_up / k["time_au"]
    rel_d = 2.0 * d_err / abs(d_val) if d_val else math.inf
    rel_w = omega_err / omega
    energy_J = omega * k["hartree_J"]
    return Line(
        upper=upper.label, lower=lower.label, energy=float(omega), energy_error=float(omega_err),
        radial_integral=radial, line_strength=float(strength), oscillator_strength=float(f),
        oscillator_strength_error=float(f * (rel_w + rel_d)) if f else no_f_error,
        einstein_A=float(rate), einstein_A_error=float(rate * (3.0 * rel_w + rel_d)) if rate else 0.0,
        wavelength_nm=float(k["h"] * k["c"] / energy_J * 1e9), frequency_hz=float(energy_J / k["h"]))


def decay_of(level, own: list, degenerate: list, complete: bool, ground: bool, j=None) -> StateDecay:
    """The decay of ``level`` by its lines ``own`` (their branching ratios are set here)."""
    total = math.fsum(x.einstein_A for x in own)
    total_err = math.fsum(x.einstein_A_error for x in own)
    branching: dict[str, float] = {}
    if own and total > 0:
        for x in own:
            x.branching_ratio = x.einstein_A / total
        for x in sorted(own, key=lambda y: -y.einstein_A):
            branching[x.lower] = x.branching_ratio
    metastable = not own
    return StateDecay(
        label=level.label, n=level.n, l=level.l, energy=level.energy, energy_error=level.error_estimate,
        total_A=float(total), lifetime_s=None if metastable or total <= 0 else float(1.0 / total),
        lifetime_error_s=None if metastable or total <= 0 else float(total_err / total**2),
        metastable=metastable, ground=bool(ground), branching=branching,
        degenerate_with=[x.label for x in degenerate], complete=complete, **({} if j is None else {"j": j}))


def lower_and_degenerate(level, others) -> tuple[list, list]:
    """(the ``others`` below ``level``, those degenerate with it): its possible E1 partners split."""
    lower, degenerate = [], []
    for other in others:
        if _degenerate(level, other):
            degenerate.append(other)
        elif other.energy < level.energy:
            lower.append(other)
    return lower, degenerate


def levels_reached(levels: list, nmax: int, lower_of) -> list:
    """The levels with n <= nmax, then every level below one of them that a line reaches
    (``lower_of(level)``: its lower E1 partners), each once."""
    chosen = [lev for lev in levels if lev.n <= nmax]
    seen = {id(lev) for lev in chosen}
    queue = list(chosen)
    while queue:
        for other in lower_of(queue.pop()):
            if id(other) not in seen:
                seen.add(id(other))
                chosen.append(other)
                queue.append(other)
    return chosen


def unoccupied_levels(levels: list, occupied) -> tuple[list, list[str]]:
    """(the levels no core electron fills, the labels filled); InputError for a label not computed
    or when every level is filled."""
    filled = _occupied_labels(occupied)
    known = {lev.label for lev in levels}
    unknown = [x for x in filled if x not in known]
    if unknown:
        raise InputError(f"occupied: no computed level {unknown[0]!r}; computed levels: "
                         + ", ".join(lev.label for lev in levels), parameter="occupied")
    levels = [lev for lev in levels if lev.label not in filled]
    if not levels:
        raise InputError("occupied: every computed level is marked occupied", parameter="occupied")
    return levels, filled


def assembled_transitions(lines, states, result, nmax, dipole_charge, chosen, filled, notes, all_ok,
                          equation: str = "schrodinger") -> "TransitionResult":
    """The :class:`TransitionResult` of lines and states, with the notes and status every
    table carries (occupied levels, lower levels added, unconverged integrals, the solve's
    own verdict, incomplete lifetimes); shared by the Schrodinger and Dirac tables."""

    if filled:
        notes.append(Note("occupied", "treated as occupied (no line ends on them): " + ", ".join(filled)))
    extra = [lev.label for lev in chosen if lev.n > nmax]
    if extra:
        notes.append(Note("lower_levels_added", "included as lower levels of n <= nmax: " + ", ".join(extra)))
    unconverged = sorted({x.upper + "->" + x.lower for x in lines if not x.radial_integral.converged})
    if unconverged:
        notes.append(Note("not_converged", "radial integrals NOT CONVERGED: " + ", ".join(unconverged[:8]),
                          ", ".join(unconverged)))
    if not result.success:
        notes.append(Note("solve", result.message))
    outcomes = [result.status]
    if unconverged or not all_ok:
        outcomes.append(Outcome.NOT_CONVERGED)
    if not all(st.complete for st in states):
        outcomes.append(Outcome.INCOMPLETE)
    return TransitionResult(lines=lines, states=states, result=result, nmax=int(nmax),
                            dipole_charge=float(dipole_charge), status=worst(outcomes),
                            notes=tuple(notes), occupied=filled, equation=equation)


def _rydberg_tail(points: list[tuple[float, float]]) -> tuple[float, float]:
    """Sum of f over the levels above the computed ones of a Coulomb series, and its estimate.

    ``points`` are (nu, f) of the highest computed levels, nu the effective quantum
    number.  f nu**3 tends to a constant with corrections in 1/nu**2 (the Rydberg
    series' oscillator strengths; textbook), and the levels beyond lie at nu + 1,
    nu + 2, ...: the tail is c0 zeta(3, nu + 1) + c1 zeta(5, nu + 1) + ...
    (Hurwitz zeta, scipy.special).  Fits through the last four and the last three
    levels (or three and two); their difference is the estimate.
    """
    from scipy.special import zeta

    pts = sorted(points)[-4:]
    nu_top = pts[-1][0]
    sums = []
    for m in (len(pts), len(pts) - 1):
        use = pts[-m:]
        a = np.array([[nu ** (-2 * j) for j in range(m)] for nu, _ in use])
        c = np.linalg.solve(a, np.array([f * nu**3 for nu, f in use]))
        sums.append(float(sum(cj * zeta(3 + 2 * j, nu_top + 1.0) for j, cj in enumerate(c))))
    return sums[0], abs(sums[0] - sums[1])


def sum_rules(tr: TransitionResult, tol: float = 1e-8, levels=None) -> list[dict]:
    """Bound and bound-free oscillator strengths of each level against the Thomas-Reiche-Kuhn sum.

    For a level i: the bound part sum_j f(i -> j) over the computed E1 partners
    (absorption positive, emission f = -(g_j/g_i) f(j -> i) negative), plus for a
    Coulomb tail the Rydberg series beyond the computed levels (:func:`_rydberg_tail`),
    plus the continuum integral of df/dE
    (:func:`radsolve.analysis.scattering.continuum_strength`).  The total is
    dipole_charge**2 m_e/mu for one electron (Thomas-Reiche-Kuhn; textbook).  A level
    whose partner channels were not all computed, or whose channel binds levels that
    were not, is marked ``complete: false`` and its continuum is not computed (null).
    ``levels``: labels to check (default every level of ``tr``).
    """
    from radsolve.analysis.observables import State
    from radsolve.analysis.scattering import continuum_strength
    from radsolve.core import probe

    res = tr.result
    q2 = tr.dipole_charge**2
    by_label = {lev.label: lev for lev in res.levels}
    out = []
    wanted = None if levels is None else set(levels)
    for st in tr.states:
        if wanted is not None and st.label not in wanted:
            continue
        lev = by_label[st.label]
        prof = probe.profile(channel_potential(res.potential, lev), res.mass)
        record: dict[str, Any] = {"level": st.label, "expected": q2 / res.mass}
        why = []
        bound = 0.0
        bound_err = 0.0
        ups: dict[int, list] = {}
        for x in tr.lines:
            if x.lower == st.label:
                bound += x.oscillator_strength
                bound_err += x.oscillator_strength_error
                ups.setdefault(by_label[x.upper].l, []).append((by_label[x.upper], x.oscillator_strength))
            elif x.upper == st.label:
                g = (2 * by_label[x.lower].l + 1) / (2 * lev.l + 1)
                bound -= g * x.oscillator_strength
                bound_err += g * x.oscillator_strength_error
        tail = tail_err = 0.0
        coulomb = prof.tail.coulomb and prof.tail.coefficient < 0
        left_out = [x for x in tr.occupied if x in by_label and abs(by_label[x].l - lev.l) == 1]
        if left_out:
            why.append("E1 partners treated as occupied are left out (" + ", ".join(left_out)
                       + "): the sum rule counts every level of the model")
        for lf in (lev.l - 1, lev.l + 1):
            if lf < 0:
                continue
            if lf not in res.bound_counts:
                why.append(f"l = {lf} was not computed")
                continue
            reached = ups.get(lf, [])
            if coulomb:
                if len(reached) < 3:
                    why.append(f"fewer than three levels of l = {lf} above {st.label} to continue the Rydberg "
                               "series (use a larger nmax)")
                    continue
                pts = [(-prof.tail.coefficient * math.sqrt(res.mass / (2.0 * (prof.v_infinity - other.energy))), f)
                       for other, f in reached]
                t, e = _rydberg_tail(pts)
                tail += t
                tail_err += e
                continue
            cert = res.certificates.get(lf)
            above = [x for x in res.levels if x.l == lf and x.energy > lev.energy]
            if cert is None or cert.count is None or not cert.certain:
                why.append(f"the number of bound levels of l = {lf} is uncertain")
            elif cert.count > len([x for x in res.levels if x.l == lf]) or len(reached) < len(above):
                why.append(f"l = {lf} binds levels that were not computed or reached (use a larger nmax)")
        record.update(bound=bound, bound_error=bound_err, rydberg_tail=tail, rydberg_tail_error=tail_err,
                      continuum=None, continuum_error=None, continuum_by_l=None, total=None, total_error=None,
                      complete=not why, converged=False, why=("; ".join(why) or None))
        if not why:  # the continuum is the costly part: only where the sum can be checked
            cs = continuum_strength(res.potential, st.label, mass=res.mass, tol=tol,
                                    bound_state=State.from_result(res, st.label))
            continuum = q2 * cs.value
            record.update(continuum=continuum, continuum_error=q2 * cs.error,
                          continuum_by_l={str(k): q2 * v for k, v in cs.by_l.items()},
                          total=bound + tail + continuum, total_error=bound_err + tail_err + q2 * cs.error,
                          converged=cs.converged and bound_err + tail_err <= max(10.0 * tol, 1e-6))
        out.append(record)
    return out


def transitions(potential, nmax: int, *, mass=None, tol: float = 1e-10, method: str = "fd",
                plugins=None, dipole_charge: float = 1.0, occupied=(),
                equation: str = "schrodinger", continuum: bool = False) -> TransitionResult:
    """Every E1 line, lifetime and branching ratio among the bound levels with n <= nmax.

    One :func:`radsolve.solve` call computes l = 0 ... nmax-1 with nmax
    levels each, so that all levels share their grids; levels with n > nmax
    are kept only as lower levels of those asked for.  If a lower level could
    lie beyond that set (possible only for l-1 partners of potentials whose
    spectrum depends strongly on l), the solve is repeated with two more
    levels per l (twice at most), and a state whose lifetime still may miss
    a channel is marked incomplete.

    Parameters
    ----------
    potential : Potential or str
        As for :func:`radsolve.solve`.
    nmax : int
        Largest principal number n reported (1 ... NMAX_LIMIT).
    mass : float or str
        Reduced mass (electron masses, or ``"electron+proton"``).
    tol, method, plugins
        As for :func:`radsolve.solve`.
    dipole_charge : float
        Factor multiplying the dipole operator -e r.
    occupied : sequence of str or str
        Levels filled by core electrons, left out (see :func:`transitions_from`).
    equation : str
        ``"schrodinger"`` (default) or ``"dirac"``: levels (n, l, j) with g = 2j + 1, radial integrals
        of G G + F F in the long-wavelength length form (see
        :func:`radsolve.analysis.relativistic.dirac_transitions_from`); ``"klein-gordon"``: spin-0
        levels (n, l), the dipole of the charge-normalized states with the weight
        (W_u + W_l + 2 mc^2 - 2 V)/(2 mc^2) (see ``klein_gordon_transitions_from``).
    continuum : bool, "all" or sequence of str
        Also the bound-free oscillator strength of each level (True or ``"all"``) or
        of the levels named (``"1s,2p"`` or a list), and the Thomas-Reiche-Kuhn check
        (``sum_rules``; see :func:`sum_rules`).  Schrodinger levels in atomic units; seconds per level.

    Returns
    -------
    TransitionResult
    """
    from radsolve.core.relativistic import SCHRODINGER, validated_equation
    from radsolve.core.spectrum import solve

    equation = validated_equation(equation)

    nmax = _check_nmax(nmax)
    _check_dipole_charge(dipole_charge)  # before anything is solved
    _occupied_labels(occupied)
    if isinstance(continuum, str) and continuum.strip().lower() == "all":
        continuum = True
    wanted = None if continuum is True or continuum is False or continuum is None else _labels(continuum, "continuum")
    if wanted is not None and not wanted:
        raise InputError("continuum: name at least one level (e.g. '1s'), or 'all' for every level",
                         parameter="continuum")
    if (continuum is True or wanted) and equation != SCHRODINGER:
        raise InputError(f"continuum (the bound-free strength and the sum rule) is implemented for "
                         f"Schrodinger levels only, not {equation} levels; leave it out or solve the "
                         "Schrodinger equation", parameter="continuum")
    count = nmax
    for attempt in range(3):
        result = solve(potential, l=list(range(nmax)), count=count, mass=mass, tol=tol,
                       method=method, plugins=plugins, equation=equation)
        found = transitions_from(result, nmax, dipole_charge=dipole_charge, occupied=occupied)
        if all(s.complete for s in found.states) or attempt == 2:
            break
        # the next levels of the l-1 channels are what a lifetime may miss
        count += 2
    if continuum is True or wanted:
        _add_sum_rules(found, tol, wanted)
    return found


def _add_sum_rules(found: TransitionResult, tol: float, levels) -> None:
    """``found.sum_rules``, and their verdict in its notes and status."""
    known = {s.label for s in found.states}
    unknown = [x for x in (levels or ()) if x not in known]
    if unknown:
        raise InputError(f"continuum: no computed level {unknown[0]!r}; levels: " + ", ".join(sorted(known)),
                         parameter="continuum")
    found.sum_rules = sum_rules(found, tol=min(max(100.0 * tol, 1e-10), 1e-6), levels=levels)
    off = [r["level"] for r in found.sum_rules
           if r["total"] is not None and abs(r["total"] - r["expected"]) > 10.0 * r["total_error"] + 1e-9]
    bad = [r["level"] for r in found.sum_rules if not (r["complete"] and r["converged"])]
    notes = list(found.notes)
    if off:
        notes.append(Note("sum_rule_fails", "the oscillator strengths of " + ", ".join(off) + " miss the "
                          "Thomas-Reiche-Kuhn sum beyond their estimates (a non-local potential, or levels not "
                          "resolved)"))
        found.status = worst([found.status, Outcome.FAILED])
    if bad:
        notes.append(Note("sum_rule_incomplete", "sum rule incomplete or not converged for " + ", ".join(bad)))
        found.status = worst([found.status, Outcome.INCOMPLETE])
    found.notes = tuple(notes)
