"""The relativistic branch of :func:`radsolve.solve` (``equation="dirac"`` or ``"klein-gordon"``).

Each channel (Dirac kappa, or Klein-Gordon l) is turned into its exact
second-order form (:mod:`.effective`) and solved by the Schrodinger machinery
of :mod:`radsolve.core.spectrum` (probe, certificate, box, nested grids,
Richardson, statuses) with methods made self-consistent in the energy
(:mod:`.selfconsistent`); the per-channel results are then labelled n l j and
joined into one :class:`SolveResult`.

Convention (say it wherever a result is shown): the particle's mass in the
equation is the reduced mass mu of the pair (``mass=``), energies are
W = E - mu c^2; no further recoil correction is made.  For a hydrogen-like
system this reproduces the nonrelativistic reduced-mass levels exactly and
the fine structure up to recoil terms of relative order (Z alpha)^2 m/M
(Barker and Glover, Phys. Rev. 99, 317 (1955); from memory), which are left
out.  The speed of light is scipy.constants' (c = 1/alpha in atomic units).
"""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np

from radsolve.core import probe as probing
from radsolve.core.protocol import Note, Outcome
from radsolve.core.relativistic import DIRAC, KLEIN_GORDON
from radsolve.core.relativistic.effective import RelativisticChannel, coulomb_strength, kappa_of
from radsolve.core.relativistic.exact import dirac_coulomb, klein_gordon_coulomb
from radsolve.core.result import SolveResult, certificate_key, level_designation
from radsolve.errors import InputError

#: What a relativistic result says about its equation (SolveResult.convention).
CONVENTIONS = {
    DIRAC: "Dirac equation with the reduced mass mu in place of the particle mass (no further recoil "
           "correction); V is the time component of a vector potential; energies are E - mu c^2",
    KLEIN_GORDON: "Klein-Gordon equation (spin 0) with the reduced mass mu in place of the particle mass "
                  "(no further recoil correction); V is the time component of a vector potential; energies "
                  "are E - mu c^2",
}

_OUTCOME_RANK = {Outcome.SUCCESS: 0, Outcome.NOT_CONVERGED: 1, Outcome.INCOMPLETE: 2, Outcome.FAILED: 3}


def solve_relativistic(equation, potential, l, *, count, mass, tol, method, plugins, spin_orbit, dimension,
                       units, scalar) -> SolveResult:
    from radsolve.core import spectrum
    from radsolve.core.relativistic.selfconsistent import self_consistent
    from radsolve.core.solvers.base import solver_class
    from radsolve.potentials import as_potential

    name = "Dirac" if equation == DIRAC else "Klein-Gordon"
    own = _own_methods(equation, method)
    ls, count, tol, classes, dimension = spectrum._validate(l, count, tol, "fd" if own else method, dimension)
    if dimension != 3:
        raise InputError(f"the {name} equation is solved in three dimensions only; dimension must be 3 with "
                         f"equation={equation!r}", parameter="dimension")
    if spin_orbit:
        why = ("the spin-orbit coupling is already inside the Dirac equation (levels come split into j = l +- 1/2); "
               "adding the family's V_so would count it twice") if equation == DIRAC else \
            "a Klein-Gordon particle has spin 0 and no spin-orbit coupling"
        raise InputError(f"spin_orbit cannot be used with equation={equation!r}: {why}", parameter="spin_orbit")
    pot = as_potential(potential, plugins)
    system = spectrum._unit_system(pot, units)
    mu = system.parse_mass(mass)
    kinetic = system.kinetic_mass(mu)
    hc = system.hbar_c()
    rest = system.rest_energy(mu)
    scalar_fn = _scalar_function(pot, scalar)
    confining = _scalar_confines(pot, scalar_fn)

    channels = []
    for l_ in ls:
        raw = pot.channel(l_, None) if getattr(pot, "l_dependent", False) else pot
        prof = probing.profile(raw, kinetic)
        z_alpha = _check_potential(raw, prof, name, hc, rest, scalar_fn)
        if equation == DIRAC and own != [FIRST_ORDER]:  # the first-order shooting takes steps and kinks
            _check_continuous(raw, prof, scalar_fn)
        js = [None] if equation == KLEIN_GORDON else ([0.5] if l_ == 0 else [l_ - 0.5, l_ + 0.5])
        for j in js:
            kappa = None if j is None else kappa_of(l_, j)
            _check_point_charge(z_alpha, l_, kappa, name)
            channels.append((RelativisticChannel(
                equation=equation, l=l_, j=j, kappa=kappa, rest=rest, hbar_c=hc,
                vector=raw, scalar=scalar_fn, threshold=0.0 if confining else prof.v_infinity,
                breakpoints=tuple(prof.breakpoints), confining=confining), z_alpha))

    results = []
    for ch, z_alpha in channels:
        eff = _effective_potential(ch, system.name)
        if own is None:
            made = [self_consistent(cls, ch) for cls in classes]
        else:
            from radsolve.core.relativistic.firstorder import first_order

            made = [self_consistent(solver_class(name_), ch) if name_ != FIRST_ORDER else first_order(ch, z_alpha)
                    for name_ in own]
        res = spectrum.solve(eff, ch.l, count=count, mass=mu, tol=tol, method=made if len(made) > 1 else made[0],
                             units=system.name)
        results.append((ch, z_alpha, res))
    method_name = method if isinstance(method, str) else getattr(method, "name", "custom")
    return replace(_joined(equation, pot, results, system.name, mu, tol, method_name, rest),
                   scalar=scalar_fn is not None)


#: The Dirac method that shoots the first-order equations for G and F (``firstorder.py``).
FIRST_ORDER = "first-order"


def _own_methods(equation, method):
    """Method names the relativistic branch resolves itself (None: the registry's, made self-consistent).

    For Dirac, ``"both"`` means the two independent methods: finite differences on the second-order
    form and shooting of the first-order equations; ``"first-order"`` is the latter alone.
    """
    if method == FIRST_ORDER:
        if equation != DIRAC:
            raise InputError(f"method {FIRST_ORDER!r} is the Dirac equation's own; with equation={equation!r} "
                             "use fd, numerov or both", parameter="method")
        return [FIRST_ORDER]
    if method == "both" and equation == DIRAC:
        return ["fd", FIRST_ORDER]
    return None


def _scalar_function(pot, scalar):
    if not scalar:
        return None
    if not getattr(pot, "has_scalar", False):
        raise InputError(f"scalar was asked for, but potential {pot.name!r} has no Lorentz-scalar part "
                         "(families with one define the hook scalar_potential(r, ...))", parameter="scalar")

    def scalar_fn(r):
        return pot.scalar(r)

    return scalar_fn


def _scalar_confines(pot, scalar_fn) -> bool:
    """True when the Lorentz scalar grows without bound (it confines every level); refuses one that falls.

    A scalar S -> +inf adds to the mass: V_eff ~ S^2 / (2 mc^2), every level is bound and A = W - V + S + 2mc^2
    stays positive.  S -> -inf would make the mass term negative (A crosses zero): refused.
    """
    if scalar_fn is None:
        return False
    with np.errstate(all="ignore"):
        far = pot.scalar(probing.PROBE_RADII[-400:], finite=False)
        near = float(np.max(np.abs(pot.scalar(probing.PROBE_RADII[:1], finite=False))))
    grows = not np.all(np.isfinite(far)) or abs(float(far[-1])) > 1e3 * max(abs(float(far[0])), near, 1.0)
    if grows and not (np.nan_to_num(far[-1], posinf=1.0, neginf=-1.0) > 0):
        raise InputError(f"the scalar potential of {pot.name!r} falls without bound at large r: the effective mass "
                         "mc^2 + S turns negative and no bound level is defined. Allowed: scalar potentials with a "
                         "finite limit, or growing to +infinity (confining)", parameter="scalar")
    return bool(grows)


def _check_potential(raw, prof, name, hc, rest, scalar_fn) -> float | None:
    """Refuse what the relativistic equations cannot bind; return Z alpha of a point-Coulomb origin (else None)."""
    origin = prof.origin
    c, p = origin.coefficient, origin.power
    if math.isinf(prof.v_infinity) or origin.kind == "core" or (c > 0 and p < 0):
        where = "as r -> infinity" if math.isinf(prof.v_infinity) else "at the origin"
        raise InputError(f"{raw.name!r} grows without bound {where}: a vector potential that does so has no "
                         f"normalisable {name} bound levels (Klein's paradox: the particle tunnels into "
                         "negative-energy states). Allowed: vector potentials finite except for an attractive "
                         "Coulomb point -Z/r at the origin", parameter="potential")
    z_alpha = coulomb_strength(c, p, hc) if origin.kind == "regular" else None
    if c < 0 and (origin.kind != "regular" or p < -1.0 - 1e-9):
        raise InputError(f"{raw.name!r} behaves like {c:.4g}*r**({p:.3g}) at the origin, more singular than "
                         f"-Z/r: the {name} equation has no bound levels there. Use a potential that is finite "
                         "at the origin (e.g. finite_nucleus) or at most Coulomb-singular", parameter="potential")
    r = probing.PROBE_RADII
    with np.errstate(all="ignore"):
        v = np.asarray(raw.raw(r), dtype=float)
        s = np.zeros_like(v) if scalar_fn is None else scalar_fn(r)
    barrier = np.nanmax(np.where(np.isfinite(v - s), v - s, -np.inf)) - prof.v_infinity
    if barrier >= 2.0 * rest:
        raise InputError(f"{raw.name!r} rises {barrier:.6g} above its limit at infinity, more than 2mc^2 = "
                         f"{2 * rest:.6g}: beyond such a barrier the {name} equation couples to negative-energy "
                         "states (Klein's paradox) and a bound level is not defined. Allowed: barriers below "
                         "2mc^2", parameter="potential")
    return z_alpha


def _check_continuous(raw, prof, scalar_fn):
    """Refuse a step in V - S for Dirac: its second-order form (u = G / sqrt(A)) needs A continuous."""
    for b in prof.breakpoints:
        sides = np.array([b * (1.0 - 1e-10), b * (1.0 + 1e-10)])
        with np.errstate(all="ignore"):
            p = np.asarray(raw.raw(sides), dtype=float) - (0.0 if scalar_fn is None else scalar_fn(sides))
        jump = abs(p[1] - p[0])
        if not jump <= 1e-7 * max(abs(p[0]), abs(p[1]), 1e-300):
            raise InputError(f"{raw.name!r} jumps by {jump:.6g} at r = {b:.6g}: the Dirac solver (the exact "
                             "second-order form of the Dirac equation) needs V continuous; use "
                             "method='first-order' (shooting of G and F), which accepts a step",
                             parameter="potential")
        # A kink (dV/dr jumps) would put a delta function into the second-order form's potential (A''),
        # which is not implemented: refuse it rather than miss it.  One-sided three-point slopes.
        h = 1e-4 * b
        pts = np.array([b - 2 * h, b - h, b, b + h, b + 2 * h])
        pts[2] = b * (1.0 - 1e-12)
        with np.errstate(all="ignore"):
            q = np.asarray(raw.raw(pts), dtype=float) - (0.0 if scalar_fn is None else scalar_fn(pts))
            right_b = float(np.asarray(raw.raw(np.array([b * (1.0 + 1e-12)])), dtype=float)[0]) - (
                0.0 if scalar_fn is None else float(scalar_fn(np.array([b * (1.0 + 1e-12)]))[0]))
        left = (3 * q[2] - 4 * q[1] + q[0]) / (2 * h)
        right = (-3 * right_b + 4 * q[3] - q[4]) / (2 * h)
        if not abs(right - left) <= 1e-4 * max(abs(left), abs(right), abs(q[2]) / b, 1e-300):
            raise InputError(f"{raw.name!r} has a kink at r = {b:.6g} (dV/dr jumps from {left:.6g} to "
                             f"{right:.6g}): the Dirac solver (the exact second-order form of the Dirac "
                             "equation) needs dV/dr continuous; use method='first-order' (shooting of G and F), "
                             "which accepts a kink",
                             parameter="potential")


def _check_point_charge(z_alpha, l, kappa, name):
    if z_alpha is None:
        return
    limit = abs(kappa) if kappa is not None else l + 0.5
    if z_alpha >= limit:
        what = f"kappa = {kappa} needs Z alpha < {limit}" if kappa is not None else \
            f"l = {l} needs Z alpha < l + 1/2 = {limit}"
        raise InputError(
            f"Z alpha = {z_alpha:.6g} is beyond the point-nucleus limit of the {name} equation ({what}): the "
            "levels of a point charge do not exist there. Use the finite_nucleus family (a nucleus of finite "
            "size), which has levels up to far larger Z", parameter="potential")


def _effective_potential(ch: RelativisticChannel, system_name: str):
    from radsolve.potentials.protocol import make_family

    v_eff = ch.effective_function(ch.threshold)
    tag = f"{ch.equation}_" + (f"l{ch.l}" if ch.kappa is None else f"kappa{ch.kappa}".replace("-", "m"))
    hooks = {"v_infinity": (lambda: math.inf) if ch.confining else (lambda: ch.threshold)}
    if ch.breakpoints:
        hooks["breakpoints"] = lambda: list(ch.breakpoints)
    family = make_family(f"{getattr(ch.vector, 'name', 'potential')}_{tag}", lambda r: v_eff(r), {},
                         units=system_name, description=f"{ch.equation} effective potential", **hooks)
    return family.bind()


def _joined(equation, pot, results, system_name, mu, tol, method_name, rest) -> SolveResult:
    from radsolve.core.targets import Targets

    targets = Targets(tol)
    levels, notes, certificates, bound_counts = [], [], {}, {}
    statistics: dict = {}
    outcome = Outcome.SUCCESS
    v_inf = math.inf
    for ch, z_alpha, res in results:
        for lev in res.levels:
            n, label = level_designation(lev.nodes, ch.l, ch.j, system_name)
            exact = _exact(pot, equation, lev.nodes + ch.l + 1, ch, z_alpha, rest)
            degeneracy = int(round(2 * ch.j + 1)) if ch.j is not None else 2 * ch.l + 1
            lev = _with_derivative_error(lev, ch, targets, res.v_infinity)
            levels.append(replace(lev, n=n, label=label, j=ch.j, degeneracy=degeneracy, exact=exact,
                                  method=method_name))
        prefix = f"{ch.text}: " if ch.kappa is not None else ""
        notes.extend(Note(note.code, prefix + note.text, note.subject) for note in res.notes
                     if note.code not in _PER_LEVEL_NOTES)
        key = certificate_key(ch.l, ch.j)
        certificates[key] = res.certificates[certificate_key(ch.l, None)]
        bound_counts[key] = res.bound_counts[certificate_key(ch.l, None)]
        if _OUTCOME_RANK[res.status] > _OUTCOME_RANK[outcome]:
            outcome = res.status
        v_inf = min(v_inf, res.v_infinity)
        for name, value in (getattr(res, "statistics", None) or {}).items():  # summed over the channels
            if isinstance(value, (int, float)):
                statistics[name] = statistics.get(name, 0) + value
    notes.extend(_level_notes(levels, tol))
    if outcome is Outcome.SUCCESS and not all(lev.converged for lev in levels):
        outcome = Outcome.NOT_CONVERGED
    return SolveResult(levels=levels, potential=pot, mass=mu, tol=tol, method=method_name,
                       bound_counts=bound_counts, v_infinity=v_inf, units=system_name, dimension=3,
                       certificates=certificates, status=outcome, notes=tuple(notes), equation=equation,
                       **({"statistics": statistics} if statistics else {}))


#: Notes of the per-channel solves that name levels: written again with the relativistic labels.
_PER_LEVEL_NOTES = {"not_converged", "potential_accuracy", "near_degenerate"}


def _level_notes(levels, tol) -> list[Note]:
    from radsolve.core.targets import Status

    from radsolve.core.spectrum import not_converged_notes

    out = not_converged_notes(levels, tol)
    limited = [lev.label for lev in levels if lev.status is Status.POTENTIAL_ACCURACY]
    if limited:
        out.append(Note("potential_accuracy", "the potential (or, for Dirac, the numerical derivatives of V "
                        "its second-order form needs) limits " + ", ".join(limited[:8]) + " to above tol",
                        ", ".join(limited)))
    degenerate = [lev.label for lev in levels if lev.status is Status.NEAR_DEGENERATE]
    if degenerate:
        out.append(Note("near_degenerate", "nearly degenerate levels whose splitting the grids did not "
                        "resolve: " + ", ".join(degenerate), ", ".join(degenerate)))
    return out


def _exact(pot, equation, n, ch, z_alpha, rest) -> float | None:
    """The textbook value when the potential is the built-in point Coulomb charge."""
    family = getattr(pot, "family", None)
    if z_alpha is None or getattr(family, "name", None) != "coulomb" or getattr(family, "origin", "") != "built-in" \
            or ch.scalar is not None:
        return None
    if equation == DIRAC:
        return dirac_coulomb(n, ch.kappa, z_alpha, rest)
    return klein_gordon_coulomb(n, ch.l, z_alpha, rest)


def _with_derivative_error(lev, ch: RelativisticChannel, targets, v_infinity):
    """Add the error of the numerical P', P'' (Dirac) to the level's estimate; re-judge it against tol."""
    from radsolve.core.targets import Status

    if not ch.dirac or not lev.samples or (lev.sample_method == FIRST_ORDER and not lev.method_energies):
        return lev  # the first-order shooting uses no derivative of V
    sample = lev.samples[-1]
    extra = ch.derivative_error(lev.energy, sample.r, sample.weights, sample.u)
    error = lev.error_estimate + extra
    convergence = dict(lev.convergence, derivative_error=extra)
    if lev.converged and not targets.met(error, lev.energy, v_infinity):
        return replace(lev, error_estimate=error, converged=False, status=Status.POTENTIAL_ACCURACY,
                       convergence=convergence)
    return replace(lev, error_estimate=error, convergence=convergence)
