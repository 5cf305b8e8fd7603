"""Numerical probing of a potential: what the grid and box choice need to know.

A plug-in may give only V(r).  Before solving we learn from V itself (or from
the family's optional hooks, when present):

* the continuum threshold V(inf), or that V confines (V -> +inf);
* the small-r power law V ~ c r**p, which decides whether the Hamiltonian is
  bounded below (fall to the centre when p < -2, or p = -2 with
  2 mu |c| > (l + 1/2)**2) and how u ~ r**lambda behaves at the origin;
* the inner length where the potential first matters, which sets the inner
  boundary of the grid;
* the range beyond which V is negligibly different from V(inf).

Everything here is in atomic units.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .errors import InputError, PluginError, UnboundedBelowError

#: Radii probed (bohr in atomic units, fm in nuclear ones): from far inside a
#: nucleus to macroscopic distances.
PROBE_RADII = np.logspace(-24, 12, 721)


@dataclass(frozen=True)
class PotentialProfile:
    """What probing learned about V; all in atomic units.

    Attributes
    ----------
    v_infinity : float
        lim V(r) for r -> inf, hartree (``math.inf`` when V confines).
    small_r_coefficient, small_r_power : float
        V(r) ~ c * r**p as r -> 0.
    inner_length : float
        The smallest radius at which the potential energy becomes comparable
        to the kinetic scale, 2 mu r**2 |V(r) - V(inf)| >= 0.01, bohr.
    range : float
        Beyond this radius 2 mu r**2 |V(r) - V(inf)| < 1e-3, so V can no
        longer bind a new level (``math.inf`` for long-range or confining V).
    breakpoints : tuple of float
        Radii where V is not smooth, bohr.
    """

    v_infinity: float
    small_r_coefficient: float
    small_r_power: float
    inner_length: float
    range: float
    breakpoints: tuple[float, ...]

    @property
    def confining(self) -> bool:
        return math.isinf(self.v_infinity)

    def origin_exponent(self, l: float, mass: float) -> float:
        """lambda in u ~ r**lambda as r -> 0 for (effective) angular momentum l.

        In d dimensions pass L = l + (d-3)/2.
        """
        p, c = self.small_r_power, self.small_r_coefficient
        if abs(p + 2.0) < 1e-3:
            return 0.5 + math.sqrt(max((l + 0.5) ** 2 + 2.0 * mass * c, 0.0))
        return l + 1.0

    def check_bounded_below(self, l: float, mass: float) -> None:
        """Raise UnboundedBelowError when V collapses the state into the origin."""
        p, c = self.small_r_power, self.small_r_coefficient
        if c >= 0.0 or p > -2.0 + 1e-3:
            return
        if p < -2.0 - 1e-3:
            raise UnboundedBelowError(
                f"the potential behaves like {c:.4g}*r**({p:.3g}) as r -> 0, more attractive "
                "than -1/r**2: the Hamiltonian is unbounded below (fall to the centre) for every l. "
                "Allowed: potentials less singular than r**-2 at the origin, or -g/r**2 with "
                "2*mu*g <= (l + 1/2)**2."
            )
        g = -c
        if 2.0 * mass * g > (l + 0.5) ** 2:
            raise UnboundedBelowError(
                f"the potential behaves like -g/r**2 with g = {g:.6g} hartree*bohr**2 as r -> 0; "
                f"for l = {l} and reduced mass {mass:.6g}, 2*mu*g = {2 * mass * g:.6g} exceeds "
                f"(l + 1/2)**2 = {(l + 0.5) ** 2:.6g}: the Hamiltonian is unbounded below "
                "(fall to the centre). Allowed: 2*mu*g <= (l + 1/2)**2."
            )

    def inner_cutoff(self, l: int, mass: float, tol: float) -> float:
        """Radius (bohr) where the grid may start for angular momentum l.

        The solvers impose u ~ r**lambda at the first point.  Neglecting the
        potential's correction to that power law there shifts a level by
        about (a/inner_length)**(2 lambda) relative, so a is chosen to make
        that 1e-3 * tol.
        """
        lam = self.origin_exponent(l, mass)
        return self.inner_length * (1e-3 * tol) ** (1.0 / max(2.0 * lam, 0.5))


def _values(potential, r):
    with np.errstate(all="ignore"):
        return potential(r)


def _tail_limit(potential) -> float:
    """V(inf) from the far tail, or inf when V keeps rising."""
    r = np.array([1e5, 1e6, 1e7])
    try:
        v = _values(potential, r)
    except PluginError:
        # Overflow at huge radii: treat a potential that is large and rising
        # at moderate radii as confining.
        v_mod = _values(potential, np.array([1e2, 1e3]))
        if v_mod[1] > v_mod[0] and v_mod[1] > 0:
            return math.inf
        raise
    d1, d2 = v[1] - v[0], v[2] - v[1]
    if d2 > 0 and d1 > 0 and d2 > 2.0 * d1:
        return math.inf  # growing at least like a positive power of r
    if d2 > 0 and d1 > 0 and v[2] > 1e3:
        return math.inf  # slow (e.g. logarithmic) confinement
    # Assume V = V(inf) + a/r for the last two points (exact for a Coulomb
    # tail, conservative for faster decays).
    limit = float((r[2] * v[2] - r[1] * v[1]) / (r[2] - r[1]))
    # below this the difference of the tail values is rounding, not a threshold
    return 0.0 if abs(limit) < 1e-200 else limit


def _small_r_law(potential) -> tuple[float, float]:
    r = np.array([1e-16, 1e-15, 1e-14])
    v = _values(potential, r)
    if np.all(v == 0.0):
        return 0.0, 0.0
    if np.all(np.abs(v - v[-1]) <= 1e-6 * np.abs(v[-1])):
        return float(v[0]), 0.0
    if np.any(v == 0.0) or np.sign(v[0]) != np.sign(v[1]) or np.sign(v[1]) != np.sign(v[2]):
        return float(v[0]), 0.0
    p1 = math.log(abs(v[1] / v[0])) / math.log(10.0)
    p2 = math.log(abs(v[2] / v[1])) / math.log(10.0)
    p = 0.5 * (p1 + p2)
    if abs(p - round(p)) < 1e-3:
        p = float(round(p))
    return float(v[1] / r[1] ** p), p


def profile(potential, mass: float) -> PotentialProfile:
    """Probe ``potential`` for reduced ``mass`` (electron masses)."""
    hooks_vinf = potential.v_infinity()
    v_inf = _tail_limit(potential) if hooks_vinf is None else float(hooks_vinf)
    hooks_small = potential.small_r()
    c, p = _small_r_law(potential) if hooks_small is None else (float(hooks_small[0]), float(hooks_small[1]))

    r = PROBE_RADII
    v = _values(potential, r)
    reference = 0.0 if math.isinf(v_inf) else v_inf
    strength = 2.0 * mass * r**2 * np.abs(v - reference)
    if math.isinf(v_inf):
        strength = 2.0 * mass * r**2 * np.abs(v - v[0])
    above = np.nonzero(strength >= 1e-2)[0]
    if above.size and above[0] == 0 and not (abs(p + 2.0) < 1e-3 or p < -2.0):
        raise InputError(
            f"potential {potential.name!r} is already {abs(v[0] - reference):.3g} (energy units) away "
            f"from V(inf) at r = {r[0]:g}, the smallest radius probed, for reduced mass {mass:.6g}: "
            "the bound states would be smaller than the grid can start; check the parameters and the mass"
        )
    inner = float(r[above[0]]) if above.size else float(r[-1])
    weak = strength < 1e-3
    if math.isinf(v_inf) or not weak[-1]:
        rng = math.inf
    else:
        strong = np.nonzero(~weak)[0]
        rng = float(r[strong[-1] + 1]) if strong.size else float(r[0])
    bps = tuple(sorted(float(b) for b in potential.breakpoints() if b > 0))
    return PotentialProfile(
        v_infinity=v_inf,
        small_r_coefficient=c,
        small_r_power=p,
        inner_length=inner,
        range=rng,
        breakpoints=bps,
    )


def effective_potential(potential, l: float, mass: float, r: np.ndarray) -> np.ndarray:
    """V(r) + l(l+1)/(2 mu r**2), hartree (l may be the effective L of d dimensions)."""
    return _values(potential, r) + l * (l + 1) / (2.0 * mass * r**2)


def decay_radius(potential, l: float, mass: float, energy: float, start: float, nepers: float) -> float:
    """Radius (bohr) beyond the outer turning point where a level at ``energy`` has decayed.

    Returns the R at which the WKB amplitude exp(-int kappa dr), integrated
    from the outer classical turning point, has fallen by ``nepers`` e-folds,
    with kappa = sqrt(2 mu (V_eff - E)).  ``start`` (bohr) is a radius inside
    the classically allowed region (or near the inner scale).
    """
    first = max(start, 1e-16)
    r = np.geomspace(first, max(first * 1e12, 1e9), 12000)
    u = effective_potential(potential, l, mass, r) - energy
    allowed = np.nonzero(u < 0)[0]
    i_turn = allowed[-1] if allowed.size else 0
    rr = r[i_turn:]
    kappa = np.sqrt(np.maximum(2.0 * mass * u[i_turn:], 0.0))
    integral = np.concatenate(([0.0], np.cumsum(0.5 * (kappa[1:] + kappa[:-1]) * np.diff(rr))))
    beyond = np.nonzero(integral >= nepers)[0]
    if beyond.size == 0:
        return float(rr[-1])
    return float(rr[beyond[0]])
