"""Expectation values of computed states, and diagnostics of whether to trust them.

Every quantity is computed on each grid of the level's refinement sequence
(``Level.samples``) and Richardson-extrapolated across them, exactly as the
energies are (:func:`radsolve.core.extrapolation.richardson`), so each value carries
an error estimate: the larger of the last two changes of the extrapolated
value, plus the estimated effect of the origin power law and of the outer
wall where they matter.

Conventions (atomic units): r in bohr, energies in hartree, u normalized to
integral u**2 dr = 1, psi = R(r) Y_lm with R = u/r.  ⟨T⟩ is the whole kinetic
energy, radial plus centrifugal, computed from u' itself (not as E - ⟨V⟩), so
that the virial ratio and the energy residual E - ⟨T⟩ - ⟨V⟩ are independent
checks of the state.

An observable is marked ``converged`` when its estimated error is at most
``OBSERVABLE_TOL_FACTOR * tol`` relative: expectation values are first order
in the wavefunction's error where the energy is second order, so they are
allowed a looser target than the energies' ``tol``.
"""

from __future__ import annotations

import math
import numbers
import re
from dataclasses import dataclass
from typing import Any, Callable

import numpy as np

from radsolve.errors import InputError, RadsolveError
from radsolve.core.protocol import Note, Outcome, ResultProtocol, message_of
from radsolve.core.wavefunctions import (
    SampleGrid,
    _cumulative,
    _integral_upto,
    _local,
    breakpoints_on,
    build_wavefunction,
    derivative_x,
    prepared_samples,
)

#: Observables may have this many times the energies' tol as relative error.
OBSERVABLE_TOL_FACTOR = 100.0

# First-derivative weights of the sixth-order central difference on offsets
# -3..3 (0 omitted) and of the fourth-order one on -2..2 (common practice).
_D7 = {-3: -1 / 60, -2: 9 / 60, -1: -45 / 60, 1: 45 / 60, 2: -9 / 60, 3: 1 / 60}
_D5 = {-2: 1 / 12, -1: -8 / 12, 1: 8 / 12, 2: -1 / 12}
# One-sided sixth-order first-derivative weights on offsets 0..6 (common practice).
_ONE_SIDED = (-49 / 20, 6.0, -15 / 2, 20 / 3, -15 / 4, 6 / 5, -1 / 6)


@dataclass(frozen=True)
class Estimate:
    """A value with its estimated absolute error.

    Attributes
    ----------
    value : float
    error : float
        Estimated absolute error (non-negative; inf when it could not be
        estimated, e.g. with fewer than three grids).
    unit : str
        Unit of both, e.g. ``"bohr"``, ``"hartree"``, ``"bohr^-3"``.
    order : float or None
        Observed order of convergence in the grid step (None if unknown).
    converged : bool
        Whether ``error`` met the target (see the module docstring).
    """

    value: float
    error: float
    unit: str = ""
    order: float | None = None
    converged: bool = True

    def __float__(self) -> float:
        return float(self.value)

    @property
    def relative_error(self) -> float:
        """``error / |value|`` (inf for a zero value with nonzero error)."""
        if self.value == 0:
            return 0.0 if self.error == 0 else math.inf
        return self.error / abs(self.value)

    def to_dict(self) -> dict[str, Any]:
        return {"value": self.value, "error_estimate": self.error, "unit": self.unit,
                "converged": bool(self.converged)}

    def __str__(self) -> str:
        unit = f" {self.unit}" if self.unit else ""
        return f"{self.value:.12g} +- {self.error:.1e}{unit}"


@dataclass(frozen=True)
class VirialCheck:
    """The virial theorem for a bound state: 2⟨T⟩ = ⟨r dV/dr⟩ (= k⟨V⟩ for V = c r**k).

    Attributes
    ----------
    available : bool
        False when the check does not apply; ``reason`` says why.
    kind : str
        ``"power law"`` (V = c r**k exactly) or ``"general"`` (⟨r dV/dr⟩ from
        a numerical derivative of V).
    exponent : float or None
        k for a power law.
    ratio : Estimate or None
        2⟨T⟩ / (k⟨V⟩) or 2⟨T⟩ / ⟨r dV/dr⟩; 1 for an exact eigenstate.
    reason : str
    """

    available: bool
    kind: str = ""
    exponent: float | None = None
    ratio: Estimate | None = None
    reason: str = ""

    @property
    def deviation(self) -> float | None:
        """``ratio - 1`` (None when not available)."""
        return None if self.ratio is None else self.ratio.value - 1.0

    def to_dict(self) -> dict[str, Any]:
        out: dict[str, Any] = {"available": self.available, "kind": self.kind}
        if self.exponent is not None:
            out["exponent"] = self.exponent
        if self.ratio is not None:
            out["ratio"] = self.ratio.value
            out["ratio_error"] = self.ratio.error
            out["deviation"] = self.deviation
        if self.reason:
            out["reason"] = self.reason
        return out


@dataclass(frozen=True)
class HellmannFeynmanCheck:
    """dE/dp against ⟨∂V/∂p⟩ for a parameter p of the potential.

    Attributes
    ----------
    parameter : str
    value : float
        p, atomic units (``unit``).
    step : float
        The finite-difference step in p.
    derivative : Estimate
        dE/dp from levels re-solved at p + m*step, m = -3..3 (sixth-order
        central difference; estimate: its difference from the fourth-order one
        plus the propagated energy errors), hartree per unit of p.
    expectation : Estimate
        ⟨∂V/∂p⟩ with ∂V/∂p by the same difference of V on the grid.
    """

    parameter: str
    value: float
    unit: str
    step: float
    derivative: Estimate
    expectation: Estimate

    @property
    def difference(self) -> float:
        return self.derivative.value - self.expectation.value

    @property
    def relative_difference(self) -> float:
        scale = max(abs(self.derivative.value), abs(self.expectation.value))
        return abs(self.difference) / scale if scale else 0.0

    @property
    def agrees(self) -> bool:
        """Whether the two agree within twice their combined estimates."""
        return abs(self.difference) <= 2.0 * (self.derivative.error + self.expectation.error)

    def to_dict(self) -> dict[str, Any]:
        return {"parameter": self.parameter, "value": self.value, "unit": self.unit,
                "step": self.step, "dE_dp": self.derivative.to_dict(),
                "expectation_dV_dp": self.expectation.to_dict(),
                "relative_difference": self.relative_difference, "agrees": self.agrees}


def _error_orders(method: str, breakpoints: bool = False) -> tuple[int, ...]:
    from radsolve.core.solvers.base import solver_class

    return solver_class(method).orders(breakpoints)


def _rounding(method: str, size: int) -> float:
    from radsolve.core.solvers.base import solver_class

    return max(float(solver_class(method).relative_rounding(size)), 64 * np.finfo(float).eps)


def _check_positive_int(value, name: str) -> int:
    if isinstance(value, bool) or not isinstance(value, (int, np.integer)):
        raise InputError(f"{name} must be a whole number, got {value!r}", parameter=name)
    return int(value)


class State(ResultProtocol):
    """One computed bound level, with the potential and mass that made it.

    It follows the result protocol (``status``, ``message``, ``to_dict``,
    ``records``, ...): its status is its level's (``success`` when the energy
    converged); :meth:`summary` computes and judges the expectation values.

    Build it with :func:`state` (solves for the level) or
    :meth:`State.from_result` (from a :class:`radsolve.SolveResult`).

    Attributes
    ----------
    level : Level
    potential : Potential
    mass : float
        Reduced mass, electron masses.
    tol : float
        The energy tolerance the level was solved to.
    result : SolveResult or None
        The solve the level came from.
    """

    def __init__(self, level, potential, mass: float, tol: float = 1e-10, result=None):
        from radsolve.core import probe

        check_atomic_3d(result, "expectation values")
        self.level = level
        self.potential = potential
        self.mass = float(mass)
        self.tol = float(tol)
        self.result = result
        #: The potential this level feels: V, or the family's V_l (and spin-orbit term).
        self.channel = channel_potential(potential, level)
        self.profile = probe.profile(self.channel, self.mass)
        self.origin_exponent = float(self.profile.origin_exponent(level.l, self.mass))
        self.grids: list[SampleGrid] = prepared_samples(level, self.origin_exponent,
                                                        correction_power(self.profile))
        self.method = level.sample_method or (level.method if level.method != "both" else "fd")
        self.orders = _error_orders(self.method, breakpoints_on(self.profile, self.grids))
        self._values_cache: dict[int, np.ndarray] = {}

    # ------------------------------------------------------------ construction

    @classmethod
    def from_result(cls, result, label: str) -> "State":
        """The state ``label`` (e.g. ``"2p"``) of a :class:`radsolve.SolveResult`."""
        try:
            level = result.level(label)
        except KeyError:
            known = ", ".join(lev.label for lev in result.levels) or "none"
            raise InputError(f"no level {label!r} in this result; its levels: {known}") from None
        return cls(level, result.potential, result.mass, result.tol, result)

    # ------------------------------------------------------------ basic facts

    @property
    def label(self) -> str:
        return self.level.label

    @property
    def n(self) -> int:
        return self.level.n

    @property
    def l(self) -> int:
        return self.level.l

    @property
    def energy(self) -> Estimate:
        """The level's energy, hartree."""
        lev = self.level
        return Estimate(lev.energy, lev.error_estimate, "hartree", lev.order, bool(lev.converged))

    def __repr__(self) -> str:
        # one line: the observables are computed on demand, never by a repr
        return (f"State({self.label}, {self.potential!r}, mass={self.mass:.10g}, "
                f"E={self.level.energy:.12g} hartree, status={str(self.status)!r})")

    # ------------------------------------------------------------ result protocol

    @property
    def status(self) -> Outcome:
        return Outcome.SUCCESS if self.level.converged else Outcome.NOT_CONVERGED

    @property
    def notes(self) -> tuple[Note, ...]:
        lev = self.level
        if lev.converged:
            return ()
        return (Note("not_converged", f"the energy of {lev.label} did not converge to tol = {self.tol:.1e} "
                     f"({lev.status}); its estimate is what was achieved", lev.label),)

    @property
    def message(self) -> str:
        return message_of(self.notes, f"{self.label} converged to tol = {self.tol:.1e}")

    def _header(self) -> list[tuple[str, Any]]:
        return [("label", self.label), ("energy", self.level.energy), ("mass", self.mass)]

    def to_dict(self, unit: str | None = None) -> dict[str, Any]:
        """The level and where it came from (energies in hartree; :meth:`summary` has the observables)."""
        lev = self.level
        return {"label": lev.label, "n": lev.n, "l": lev.l, "energy": lev.energy,
                "error_estimate": lev.error_estimate, "converged": bool(lev.converged),
                "potential": self.potential.name, "parameters": dict(self.potential.parameters),
                "mass": self.mass, "tol": self.tol, "success": self.success, "status": str(self.status),
                "message": self.message, "notes": [n.to_dict() for n in self.notes]}

    def records(self, unit: str | None = None) -> list[dict[str, Any]]:
        doc = self.to_dict(unit)
        return [{k: v for k, v in doc.items() if k not in ("parameters", "notes", "message")}]

    def summary(self, moments=(), inside=(), hellmann_feynman=()) -> "StateSummary":
        """The energy, :meth:`properties` and the extra quantities asked for, with one verdict.

        ``moments``: powers k of extra ⟨r^k⟩; ``inside``: radii R (bohr) of
        P(r < R); ``hellmann_feynman``: parameter names whose dE/dp and
        ⟨∂V/∂p⟩ are compared.  The summary's status is ``not converged`` when
        the energy or any quantity shown (the virial ratio included) did not
        reach its target.
        """
        return StateSummary(self, self.properties(), self.extra_quantities(moments, inside, hellmann_feynman))

    def extra_quantities(self, moments=(), inside=(), hellmann_feynman=()) -> list[tuple[str, str, Estimate]]:
        """(name, unit, Estimate) of each extra ⟨r^k⟩, P(r < R) and Hellmann–Feynman pair (see :meth:`summary`)."""
        extra: list[tuple[str, str, Estimate]] = []
        for k in moments:
            extra.append((f"<r^{k:g}>", f"bohr^{k:g}", self.moment(k)))
        for radius in inside:
            extra.append((f"P(r < {radius:g})", "", self.probability_inside(radius)))
        for parameter in hellmann_feynman:
            check = self.hellmann_feynman(parameter)
            extra.append((f"dE/d{parameter} (re-solved)", check.derivative.unit, check.derivative))
            extra.append((f"<dV/d{parameter}>", check.expectation.unit, check.expectation))
        return extra

    # ------------------------------------------------------------ machinery

    def _values(self, index: int) -> np.ndarray:
        """V on grid ``index`` (cached), hartree."""
        if index not in self._values_cache:
            from radsolve.core.grids import potential_on_grid

            self._values_cache[index] = potential_on_grid(
                self.channel, self.grids[index].r, self.profile.breakpoints)
        return self._values_cache[index]

    def _target(self, value: float, scale: float) -> float:
        return OBSERVABLE_TOL_FACTOR * self.tol * max(abs(value), scale)

    def _extrapolate(self, values: list[float], unit: str, scale: float, extra: float = 0.0,
                     orders: tuple[int, ...] | None = None) -> Estimate:
        """Richardson across the samples; ``scale`` sets the rounding floor, ``extra`` is added."""
        from radsolve.core.extrapolation import richardson

        rounding = _rounding(self.method, self.grids[-1].r.size)
        value, estimate, observed = richardson(list(values), orders or self.orders, rounding)
        estimate = max(estimate, rounding * scale) + extra
        converged = math.isfinite(estimate) and estimate <= self._target(value, 0.0)
        return Estimate(float(value), float(estimate), unit, observed, bool(converged))

    def _box_share(self, terms: np.ndarray, g: SampleGrid, index: int) -> float:
        """|Contribution| of the last decay length inside the wall: what the wall may cut off."""
        r = g.r
        values = self._values(index)
        l, mu = self.l, self.mass
        v_eff = values[-2] + l * (l + 1) / (2.0 * mu * r[-2] ** 2)
        kappa = math.sqrt(max(2.0 * mu * (v_eff - self.level.energy), 1e-300))
        near_wall = r > r[-1] - 1.0 / kappa
        return float(np.sum(np.abs(terms[near_wall])))

    def _integral(self, integrand: Callable[[SampleGrid, int], np.ndarray], beta: float | None,
                  unit: str, point_terms: Callable[[SampleGrid], float] | None = None) -> Estimate:
        """Integral of ``integrand(grid, index)`` (values at the points, to be weighted) dr.

        ``beta``: the integrand times dr/dx grows like e**(beta x) as r -> 0
        (the origin power law); the sum is continued below the grid on it.
        ``point_terms(grid)``: delta-function contributions added on each grid.
        """
        totals, scale = [], 0.0
        origin_uncertainty = box = 0.0
        for index, g in enumerate(self.grids):
            terms = g.weights * integrand(g, index)
            tail = g.geometric_tail(float(terms[0]), beta) if beta is not None else 0.0
            extra = point_terms(g) if point_terms is not None else 0.0
            totals.append(float(np.sum(terms) + tail + extra))
            if index == len(self.grids) - 1:
                scale = float(np.sum(np.abs(terms)) + abs(tail))
                origin = abs(float(np.sum(terms[: g.j])) + tail)
                origin_uncertainty = origin * 2.0 * g.power_law_spread
                box = self._box_share(terms, g, index)
        return self._extrapolate(totals, unit, scale, origin_uncertainty + box)

    def _moment_beta(self, k: float) -> float:
        return 2.0 * self.origin_exponent + k + 1.0

    # ------------------------------------------------------------ expectation values

    def moment(self, k: float) -> Estimate:
        """⟨r**k⟩ in bohr**k, for real k where it is finite.

        With u ~ r**lambda at the origin (lambda = l + 1 unless V ~ -g/r**2),
        u**2 r**k is integrable at r = 0 only for k > -(2 lambda + 1); at large
        r a bound state decays exponentially, so every larger k is finite.

        Raises
        ------
        InputError
            For k that is not a finite real number, or for which ⟨r**k⟩ diverges.
        """
        if isinstance(k, bool) or not isinstance(k, numbers.Real) or not math.isfinite(float(k)):
            raise InputError(f"k must be a finite real number, got {k!r}", parameter="k")
        k = float(k)
        limit = -(2.0 * self.origin_exponent + 1.0)
        if k <= limit + 1e-12:
            lam = self.origin_exponent
            raise InputError(
                f"<r^{k:g}> diverges for the {self.label} level: u ~ r^{lam:g} at the origin, so "
                f"u^2 r^k ~ r^{2 * lam + k:g} is not integrable at r = 0; allowed: k > {limit:g}",
                parameter="k",
            )
        unit = "" if k == 0 else (f"bohr^{k:g}" if k != 1 else "bohr")
        return self._integral(lambda g, i: g.u**2 * g.r**k, self._moment_beta(k), unit)

    def expectation(self, f: Callable[[np.ndarray], np.ndarray], unit: str = "",
                    small_r_power: float = 0.0) -> Estimate:
        """⟨f(r)⟩ for a function of radius (bohr -> any unit), vectorized over arrays.

        ``small_r_power`` p: f ~ r**p as r -> 0 (0 for a function finite there).
        """
        if not callable(f):
            raise InputError(f"f must be a function of r (bohr), got {f!r}")

        def integrand(g, i):
            values = np.asarray(f(g.r), dtype=float)
            if values.shape != g.r.shape or not np.all(np.isfinite(values)):
                raise InputError("f(r) must return one finite number per radius")
            return g.u**2 * values

        beta = self._moment_beta(small_r_power)
        if beta <= 0:
            raise InputError(f"<f> diverges for the {self.label} level: f ~ r^{small_r_power:g} at the origin")
        return self._integral(integrand, beta, unit)

    def _v_power(self) -> float:
        c, p = self.profile.small_r_coefficient, self.profile.small_r_power
        return min(p, 0.0) if c != 0.0 else 0.0

    def potential_energy(self) -> Estimate:
        """⟨V⟩, hartree."""
        beta = self._moment_beta(self._v_power())
        if beta <= 0:
            raise InputError(f"<V> diverges for the {self.label} level")
        return self._integral(lambda g, i: g.u**2 * self._values(i), beta, "hartree")

    def _kinetic_terms(self, g: SampleGrid) -> np.ndarray:
        lam = g.lam
        below = g.coefficient * g.radius_of(np.arange(-4, 0)) ** lam
        du_dr = derivative_x(g.u, g.step, below) / g.jacobian
        l = self.l
        return (du_dr**2 + l * (l + 1) * (g.u / g.r) ** 2) / (2.0 * self.mass)

    def kinetic_energy(self) -> Estimate:
        """⟨T⟩ = (1/2μ) ∫ [u'² + l(l+1) u²/r²] dr, hartree, from u' itself."""
        beta = 2.0 * self.origin_exponent - 1.0
        if beta <= 0:
            raise InputError(f"<T> diverges for the {self.label} level (u ~ r^1/2 at the origin)")
        return self._integral(lambda g, i: self._kinetic_terms(g), beta, "hartree")

    def energy_residual(self) -> Estimate:
        """E - ⟨T⟩ - ⟨V⟩ per grid, extrapolated, hartree (0 for an exact eigenstate)."""
        per_grid = []
        beta_t = 2.0 * self.origin_exponent - 1.0
        beta_v = self._moment_beta(self._v_power())
        scale = 0.0
        for index, g in enumerate(self.grids):
            t_terms = g.weights * self._kinetic_terms(g)
            v_terms = g.weights * g.u**2 * self._values(index)
            t = np.sum(t_terms) + g.geometric_tail(float(t_terms[0]), beta_t)
            v = np.sum(v_terms) + g.geometric_tail(float(v_terms[0]), beta_v)
            per_grid.append(float(g.energy - t - v))
            scale = float(np.sum(np.abs(t_terms)) + np.sum(np.abs(v_terms)))
        est = self._extrapolate(per_grid, "hartree", scale)
        converged = est.error <= self._target(0.0, abs(self.level.energy))
        return Estimate(est.value, est.error, est.unit, est.order, bool(converged))

    def probability_inside(self, radius) -> Estimate:
        """P(r < radius) = ∫_0^radius u² dr for a radius in bohr (or a length string)."""
        from radsolve.units import parse_quantity

        radius = parse_quantity(radius, "length", name="radius", parameter="radius")
        if not radius > 0:
            raise InputError(f"radius must be > 0 bohr, got {radius!r}", parameter="radius")
        lam = self.origin_exponent
        beta = 2.0 * lam + 1.0
        values = []
        for g in self.grids:
            integrand_x = g.u**2 * g.jacobian  # u**2 dr/dx
            tail = g.geometric_tail(float(g.weights[0] * g.u[0] ** 2), beta)
            total = g.step * float(_cumulative(integrand_x)[-1]) + tail
            if radius <= g.r[0]:
                part = g.coefficient**2 * radius**beta / beta
            elif radius >= g.r[-1]:
                part = total
            else:
                part = g.step * _integral_upto(integrand_x, float(g.index_of(radius))) + tail
            values.append(part / total)
        return self._extrapolate(values, "", 1.0)

    def most_probable_radius(self) -> Estimate:
        """The radius where the radial density u(r)² is largest, bohr."""
        values = []
        for g in self.grids:
            i = int(np.argmax(np.abs(g.u)))
            xi = float(i)
            for _ in range(20):
                d1 = float(_local(g.u, np.array([xi]), 1)[0])
                d2 = float(_local(g.u, np.array([xi]), 2)[0])
                if d2 == 0:
                    break
                step = -d1 / d2
                xi += max(min(step, 1.0), -1.0)
                if abs(step) < 1e-13:
                    break
            values.append(float(g.radius_of(xi)))
        return self._extrapolate(values, "bohr", max(values))

    def turning_points(self) -> list[Estimate]:
        """Classical turning points: radii where V(r) + l(l+1)/(2μr²) = E, bohr, inner first.

        The error of each comes from the energy's: δr = δE / |d(V_eff)/dr|.
        """
        from scipy.optimize import brentq

        g = self.grids[-1]
        r = g.r[g.j:] if g.j < g.r.size - 2 else g.r
        l, mu, energy = self.l, self.mass, self.level.energy

        def excess(radius):
            radius = np.atleast_1d(np.asarray(radius, dtype=float))
            return self.channel(radius) + l * (l + 1) / (2.0 * mu * radius**2) - energy

        f = excess(r)
        points = []
        for i in np.nonzero(np.sign(f[:-1]) * np.sign(f[1:]) < 0)[0]:
            root = brentq(lambda x: float(excess(x)[0]), r[i], r[i + 1], xtol=1e-300, rtol=1e-15)
            eps = 1e-6 * root
            slope = float((excess(root + eps)[0] - excess(root - eps)[0]) / (2 * eps))
            err = self.level.error_estimate / abs(slope) if slope else math.inf
            err = max(err, 4e-16 * root)
            points.append(Estimate(float(root), float(err), "bohr", None, bool(self.level.converged)))
        return points

    def contact_density(self, method: str = "auto") -> Estimate:
        """|ψ(0)|² = R(0)²/(4π), bohr**-3; 0 for l > 0 (u ~ r**(l+1)).

        Parameters
        ----------
        method : {"auto", "sum_rule", "fit"}
            ``"sum_rule"`` (and ``"auto"``): for an s state R(0)² = 2μ⟨dV/dr⟩
            (textbook relation, from the radial equation), an integral that
            converges like the other expectation values; a jump ΔV of V at a
            breakpoint b adds ΔV u(b)².
            ``"fit"``: the r -> 0 limit of u/r from polynomial fits (degrees
            4 and 5) to u/r where it differs from its innermost reliable
            value by less than 5 % and 1 % (and below the first breakpoint);
            twice the spread of the four fits is added to the estimate.  Limited to
            about 1e-8 relative by the solver's pointwise error near the
            origin, and poor for potentials with structure at small r: a
            cross-check, not the default.

        Raises
        ------
        InputError
            When the density diverges (u ~ r**lambda with lambda < 1), or for
            an unknown method.
        """
        if method not in ("auto", "sum_rule", "fit"):
            raise InputError(f"unknown contact-density method {method!r}; allowed: auto, sum_rule, fit",
                             parameter="method")
        lam = self.origin_exponent
        if abs(lam - 1.0) > 1e-12:
            if lam < 1.0:
                raise InputError(f"the contact density diverges for the {self.label} level: "
                                 f"u ~ r^{lam:g} at the origin, so |psi(0)|^2 is infinite")
            return Estimate(0.0, 0.0, "bohr^-3", None, True)
        if method in ("sum_rule", "auto"):
            c, p = self.profile.small_r_coefficient, self.profile.small_r_power
            k = min(p - 1.0, 0.0) if (c != 0.0 and p != 0.0) else 0.0
            slope = self._integral(lambda g, i: g.u**2 * self._r_dv_dr_grid(i) / g.r,
                                   self._moment_beta(k), "hartree/bohr",
                                   lambda g: self._jump_terms(g, 0.0))
            factor = self.mass / (2.0 * math.pi)
            converged = slope.converged
            return Estimate(factor * slope.value, factor * slope.error, "bohr^-3", slope.order, converged)
        values, fit_spread = [], 0.0
        P = np.polynomial.Polynomial
        for g in self.grids:
            R_all = g.u / g.r
            j = g.j
            fits = []
            for change in (0.05, 0.01):
                stop = j + int(np.argmax(np.abs(R_all[j:] / R_all[j] - 1.0) > change))
                if self.profile.breakpoints:  # u/r is smooth only inside the first one
                    stop = min(stop, int(np.searchsorted(g.r, self.profile.breakpoints[0] * (1 - 1e-12))))
                r, R = g.r[j:stop], R_all[j:stop]
                if r.size < 12:
                    continue
                # weights r: the solver's absolute noise in u is a relative noise ~1/r in u/r
                fits += [float(P.fit(r, R, deg, w=r / r[-1])(0.0)) for deg in (4, 5)]
            if not fits:
                raise InputError(f"too few grid points near the origin to extrapolate R(0) "
                                 f"for the {self.label} level; use method='sum_rule'", parameter="method")
            values.append(fits[1] if len(fits) > 1 else fits[0])
            # the spread over fit degrees and windows (doubled) gauges the fit's own error
            fit_spread = 2.0 * (max(fits) - min(fits))
        r0 = self._extrapolate(values, "bohr^-3/2", abs(values[-1]), fit_spread)
        density = r0.value**2 / (4.0 * math.pi)
        error = 2.0 * abs(r0.value) * r0.error / (4.0 * math.pi)
        return Estimate(density, error, "bohr^-3", r0.order, r0.converged)

    # ------------------------------------------------------------ relativistic corrections (issue 11)
    # First-order Breit-Pauli terms of a central potential (textbook, e.g. Bethe and Salpeter 1957,
    # sec. 12), with the reduced mass mu in place of the particle mass, as the Dirac solver has it.

    def _mc2(self) -> float:
        from radsolve.units import unit_system

        return unit_system("atomic").rest_energy(self.mass)

    def mass_velocity(self) -> Estimate:
        """-<p^4>/(8 mu^3 c^2) = -<(E - V)^2>/(2 mu c^2), hartree (using p^2/(2 mu) = E - V on the state)."""
        energy = self.level.energy
        beta = self._moment_beta(2.0 * self._v_power())
        if beta <= 0:
            raise InputError(f"the mass-velocity term diverges for the {self.label} level (<V^2> is infinite)")
        total = self._integral(lambda g, i: g.u**2 * (energy - self._values(i)) ** 2, beta, "hartree")
        factor = -1.0 / (2.0 * self._mc2())
        return Estimate(factor * total.value, abs(factor) * total.error, "hartree", total.order, total.converged)

    def darwin(self) -> Estimate:
        """hbar^2 <laplacian V>/(8 mu^2 c^2), hartree; <laplacian V> = -integral of grad|psi|^2 . grad V.

        The weak form -2 integral (u u' - u^2/r) V' dr holds the delta function of a point charge
        (4 pi Z |psi(0)|^2) without treating it apart.
        """
        def integrand(g, i):
            below = g.coefficient * g.radius_of(np.arange(-4, 0)) ** g.lam
            du_dr = derivative_x(g.u, g.step, below) / g.jacobian
            dv = self._r_dv_dr_grid(i) / g.r
            return -2.0 * (g.u * du_dr - g.u**2 / g.r) * dv

        total = self._integral(integrand, None, "hartree")
        factor = 1.0 / (8.0 * self.mass * self._mc2())  # hbar^2/(8 mu^2 c^2) with mc2 = mu c^2
        # The Richardson estimate of this weak form understated the true error of hydrogen-like s states
        # up to 3-fold (measured against the textbook value, Z = 5 ... 20): widened tenfold.
        error = 10.0 * factor * total.error
        return Estimate(factor * total.value, error, "hartree", total.order,
                        bool(math.isfinite(error) and error <= self._target(factor * total.value, 0.0)))

    def spin_orbit_energy(self, j: float) -> Estimate:
        """hbar^2 <(1/r) dV/dr> <l.s>/(2 mu^2 c^2), hartree, for j = l +- 1/2 (0 for l = 0)."""
        l = self.l
        if j not in ((0.5,) if l == 0 else (l - 0.5, l + 0.5)):
            raise InputError(f"j must be l +- 1/2 (> 0) for the {self.label} level, got {j!r}", parameter="j")
        ls = 0.5 * (j * (j + 1) - l * (l + 1) - 0.75)
        if ls == 0.0:
            return Estimate(0.0, 0.0, "hartree", None, True)
        c, p = self.profile.small_r_coefficient, self.profile.small_r_power
        k = min(p - 2.0, 0.0) if (c != 0.0 and p != 0.0) else 0.0
        total = self._integral(lambda g, i: g.u**2 * self._r_dv_dr_grid(i) / g.r**2, self._moment_beta(k),
                               "hartree/bohr^2")
        factor = ls / (2.0 * self.mass * self._mc2())
        return Estimate(factor * total.value, abs(factor) * total.error, "hartree", total.order, total.converged)

    def breit_pauli(self, j: float) -> Estimate:
        """The first-order relativistic correction of this level for total angular momentum j, hartree.

        Mass-velocity + Darwin + spin-orbit (the Breit-Pauli terms of a central potential), with the
        reduced mass.  Leaves out QED, hyperfine structure and recoil terms.
        """
        parts = [self.mass_velocity(), self.darwin(), self.spin_orbit_energy(j)]
        return Estimate(sum(x.value for x in parts), sum(x.error for x in parts), "hartree",
                        None, all(x.converged for x in parts))

    # ------------------------------------------------------------ diagnostics

    def _power_law(self) -> float | None:
        """k when V = c r**k exactly (V(inf) = 0 for k < 0), else None."""
        c, p = self.profile.small_r_coefficient, self.profile.small_r_power
        if c == 0.0 or p == 0.0:
            return None
        if p < 0 and self.profile.v_infinity != 0.0:
            return None
        r = self.grids[-1].r
        v = self._values(len(self.grids) - 1)
        law = c * r**p
        if np.all(np.abs(v - law) <= 1e-10 * np.abs(law)):
            return float(p)
        return None

    def _r_dv_dr_grid(self, index: int) -> np.ndarray:
        """r dV/dr on grid ``index`` (cached), hartree."""
        key = -1 - index
        if key not in self._values_cache:
            self._values_cache[key] = self._r_dv_dr(self.grids[index].r)
        return self._values_cache[key]

    def _r_dv_dr(self, r: np.ndarray, delta: float = 2e-3) -> np.ndarray:
        """r dV/dr = dV/d(ln r), sixth-order central difference in ln r.

        Within 3.5 delta of a breakpoint the difference is one-sided (sixth
        order, from the side the point lies on; the mean of both at the
        breakpoint itself), so that a kink or a jump of V does not leak into
        it; a jump's delta function is added separately (:meth:`_jump_terms`).
        """
        total = np.zeros_like(r)
        for m, w in _D7.items():
            total += w * self.channel(r * math.exp(m * delta))
        total /= delta
        for b in self.profile.breakpoints:
            distance = np.log(r / b)
            near = np.abs(distance) < 3.5 * delta
            if not near.any():
                continue
            rn, dn = r[near], distance[near]
            # base points nudged off b, so that V(b) on the correct side is used
            up, down = rn * (1 + 1e-12), rn * (1 - 1e-12)
            forward = sum(c * self.channel(up * math.exp(k * delta)) for k, c in enumerate(_ONE_SIDED))
            backward = -sum(c * self.channel(down * math.exp(-k * delta)) for k, c in enumerate(_ONE_SIDED))
            on = np.abs(dn) <= 1e-12
            side = np.where(dn > 0, forward, backward)
            side = np.where(on, 0.5 * (forward + backward), side)
            total[near] = side / delta
        return total

    def _jumps(self) -> list[tuple[float, float]]:
        """(b, V(b+) - V(b-)) for each breakpoint where V itself jumps."""
        if "jumps" not in self.__dict__:
            found = []
            for b in self.profile.breakpoints:
                left, right = self.channel(np.array([b * (1 - 1e-12), b * (1 + 1e-12)]))
                if abs(right - left) > 1e-9 * max(abs(left), abs(right), 1e-300):
                    found.append((float(b), float(right - left)))
            self.__dict__["jumps"] = found
        return self.__dict__["jumps"]

    def _jump_terms(self, g: SampleGrid, power: float) -> float:
        """Sum over jumps of ΔV b**power u(b)**2: the delta-function part of ⟨r**power dV/dr⟩."""
        total = 0.0
        for b, jump in self._jumps():
            if g.r[0] < b < g.r[-1]:
                total += jump * b**power * float(g.values_at(np.array([b]))[0]) ** 2
        return total

    def virial(self) -> VirialCheck:
        """Virial ratio 2⟨T⟩/(k⟨V⟩) for V = c r**k, or 2⟨T⟩/⟨r dV/dr⟩ for any V.

        The general form is the textbook virial theorem for a bound state; at
        a jump ΔV of V at radius b, r dV/dr has the delta-function part
        b ΔV δ(r - b), which adds b ΔV u(b)².
        """
        k = self._power_law()
        beta_t = 2.0 * self.origin_exponent - 1.0
        if beta_t <= 0:
            return VirialCheck(False, reason="<T> diverges (u ~ r^1/2 at the origin)")
        beta_v = self._moment_beta(self._v_power())
        ratios, scale = [], 1.0
        for index, g in enumerate(self.grids):
            t_terms = g.weights * self._kinetic_terms(g)
            t = np.sum(t_terms) + g.geometric_tail(float(t_terms[0]), beta_t)
            if k is not None:
                v_terms = g.weights * g.u**2 * self._values(index) * k
            else:
                v_terms = g.weights * g.u**2 * self._r_dv_dr_grid(index)
            v = np.sum(v_terms) + g.geometric_tail(float(v_terms[0]), beta_v)
            if k is None:
                v += self._jump_terms(g, 1.0)
            if v == 0:
                return VirialCheck(False, reason="<r dV/dr> vanishes")
            ratios.append(float(2.0 * t / v))
        ratio = self._extrapolate(ratios, "", scale)
        converged = ratio.error <= self._target(1.0, 1.0)
        ratio = Estimate(ratio.value, ratio.error, "", ratio.order, bool(converged))
        if k is not None:
            return VirialCheck(True, "power law", k, ratio)
        return VirialCheck(True, "general", None, ratio)

    def hellmann_feynman(self, parameter: str, relative_step: float = 0.01) -> HellmannFeynmanCheck:
        """Check dE/dp = ⟨∂V/∂p⟩ (Hellmann–Feynman theorem) for a numeric parameter p.

        dE/dp comes from six more solves at p + m*step (m = ±1, ±2, ±3), with
        step = ``relative_step`` * |p| (shrunk to stay inside p's allowed
        range); ⟨∂V/∂p⟩ uses the same difference of V on this state's grids.

        Raises
        ------
        InputError
            For an unknown or non-numeric parameter, or one at the edge of its range.
        RadsolveError
            When the level is not bound at one of the shifted values.
        """
        from radsolve.core.spectrum import solve

        family = self.potential.family
        specs = family.parameters
        numeric = [k for k, s in specs.items() if s.is_numeric]
        if parameter not in specs:
            raise InputError(f"potential {self.potential.name!r} has no parameter {parameter!r}; "
                             f"its numeric parameters: {', '.join(numeric) or 'none'}", parameter="parameter")
        spec = specs[parameter]
        if not spec.is_numeric:
            raise InputError(f"parameter {parameter!r} of {self.potential.name} is not a number; "
                             f"numeric parameters: {', '.join(numeric) or 'none'}", parameter="parameter")
        p0 = float(self.potential.parameters[parameter])
        step = relative_step * abs(p0) if p0 != 0 else relative_step

        def inside(value):
            if spec.minimum is not None and (value < spec.minimum or (spec.exclusive_minimum and value <= spec.minimum)):
                return False
            if spec.maximum is not None and (value > spec.maximum or (spec.exclusive_maximum and value >= spec.maximum)):
                return False
            return True

        while not (inside(p0 - 3 * step) and inside(p0 + 3 * step)):
            step /= 2.0
            if step < 1e-6 * max(abs(p0), 1e-300):
                raise InputError(f"parameter {parameter!r} = {p0:g} is at the edge of its allowed "
                                 f"range ({spec.range_text()}); it cannot be varied both ways",
                                 parameter="parameter")
        lev = self.level
        j = getattr(lev, "j", None)
        extra = {"spin_orbit": True} if j is not None else {}
        energies: dict[int, tuple[float, float]] = {}
        all_converged = True
        for m in _D7:
            shifted = self.potential.with_parameters(**{parameter: p0 + m * step})
            res = solve(shifted, l=lev.l, count=lev.nodes + 1, mass=self.mass, tol=self.tol,
                        method=lev.method, **extra)
            match = [x for x in res.levels if x.nodes == lev.nodes and getattr(x, "j", None) == j]
            if not match:
                raise RadsolveError(f"level {lev.label} is not bound at {parameter} = "
                                    f"{p0 + m * step:.10g}; the Hellmann-Feynman check needs it "
                                    "on both sides (try a smaller relative_step)")
            energies[m] = (match[0].energy, match[0].error_estimate)
            all_converged = all_converged and bool(match[0].converged)
        d7 = sum(w * energies[m][0] for m, w in _D7.items()) / step
        d5 = sum(w * energies[m][0] for m, w in _D5.items()) / step
        propagated = sum(abs(w) * energies[m][1] for m, w in _D7.items()) / step
        unit = spec.unit or ""
        per = f"hartree/{unit}" if unit else "hartree"
        derivative = Estimate(float(d7), float(abs(d7 - d5) + propagated), per, None, all_converged)

        shifted_pots = {m: channel_potential(self.potential.with_parameters(**{parameter: p0 + m * step}), lev)
                        for m in _D7}

        def dv_dp(g, index):
            from radsolve.core.grids import potential_on_grid

            total = np.zeros_like(g.r)
            for m, w in _D7.items():
                total += w * potential_on_grid(shifted_pots[m], g.r, self.profile.breakpoints)
            return g.u**2 * total / step

        expectation = self._integral(dv_dp, self._moment_beta(self._v_power()), per)
        return HellmannFeynmanCheck(parameter, p0, unit, step, derivative, expectation)

    # ------------------------------------------------------------ summaries

    def properties(self) -> dict[str, Any]:
        """The state's size, energies and diagnostics, as Estimates (or lists of them).

        Keys: ``energy``, ``r`` (⟨r⟩), ``r2`` (⟨r²⟩), ``inv_r`` (⟨1/r⟩),
        ``inv_r2`` (⟨1/r²⟩, when finite), ``potential_energy``,
        ``kinetic_energy``, ``energy_residual``, ``most_probable_radius``,
        ``turning_points``, ``contact_density`` and ``virial`` (VirialCheck).
        """
        out: dict[str, Any] = {"energy": self.energy}
        for key, k in (("r", 1.0), ("r2", 2.0), ("inv_r", -1.0), ("inv_r2", -2.0)):
            if k > -(2.0 * self.origin_exponent + 1.0):
                out[key] = self.moment(k)
        try:
            out["potential_energy"] = self.potential_energy()
            out["kinetic_energy"] = self.kinetic_energy()
            out["energy_residual"] = self.energy_residual()
        except InputError:
            pass
        out["most_probable_radius"] = self.most_probable_radius()
        out["turning_points"] = self.turning_points()
        try:
            out["contact_density"] = self.contact_density()
        except InputError:
            pass
        out["virial"] = self.virial()
        return out

    def wavefunction(self, r=None):
        """u(r), R(r) on the finest solver grid or at radii ``r`` (bohr); see
        :func:`radsolve.core.wavefunctions.build_wavefunction`."""
        origin = None
        if abs(self.origin_exponent - 1) < 1e-12:
            density = self.contact_density("sum_rule")
            value = math.sqrt(4.0 * math.pi * density.value)
            origin = (value, 2.0 * math.pi * density.error / value if value else math.inf)
        g = self.grids[-1]
        values = self._values(len(self.grids) - 1)
        l, mu = self.l, self.mass
        v_eff = values[-2] + l * (l + 1) / (2.0 * mu * g.r[-2] ** 2)
        kappa = math.sqrt(max(2.0 * mu * (v_eff - self.level.energy), 0.0))
        return build_wavefunction(
            self.level, self.grids, self.orders, r, origin, kappa or None, mass=self.mass,
            potential=self.potential.name, parameters=self.potential.parameters)


@dataclass(repr=False)
class StateSummary(ResultProtocol):
    """What one state implies, judged once: made by :meth:`State.summary`.

    Attributes
    ----------
    state : State
    properties : dict
        :meth:`State.properties`.
    extra : list of (name, unit, Estimate)
        The moments, probabilities and Hellmann–Feynman pairs asked for.
    quantities : list of (name, Estimate)
        Everything judged: the energy, each converged-or-not property, the
        extras and the virial ratio (when the virial check applies).
    status : Outcome
        ``not converged`` when one of ``quantities`` did not converge.
    """

    state: State
    properties: dict[str, Any]
    extra: list[tuple[str, str, Estimate]]

    @property
    def quantities(self) -> list[tuple[str, Estimate]]:
        props = self.properties
        shown = [("energy", props["energy"])] + [(k, v) for k, v in props.items()
                                                 if isinstance(v, Estimate) and k != "energy"]
        shown += [(k, v) for k, _, v in self.extra]
        virial = props.get("virial")
        if virial is not None and virial.available and virial.ratio is not None:
            shown.append(("virial ratio", virial.ratio))
        return shown

    @property
    def unconverged(self) -> list[str]:
        """Names of the quantities that did not converge."""
        return [k for k, v in self.quantities if not v.converged]

    @property
    def status(self) -> Outcome:
        return Outcome.NOT_CONVERGED if self.unconverged else Outcome.SUCCESS

    @property
    def notes(self) -> tuple[Note, ...]:
        bad = self.unconverged
        if not bad:
            return ()
        return (Note("not_converged", f"not converged: {', '.join(bad)} (their estimates are what was "
                     "achieved)", ", ".join(bad)),)

    @property
    def message(self) -> str:
        return message_of(self.notes, f"{self.state.label}: every quantity converged")

    def _header(self) -> list[tuple[str, Any]]:
        return [("label", self.state.label), ("energy", self.state.level.energy),
                ("quantities", len(self.quantities))]

    def to_table(self, unit: str | None = None) -> str:
        from radsolve.output.report import state_table

        return state_table(self.state, self.properties, unit or "hartree", self.extra)

    def records(self, unit: str | None = None) -> list[dict[str, Any]]:
        """One row per quantity: name, value, error_estimate, unit, converged (energies in hartree)."""
        return [{"quantity": k, "value": v.value, "error_estimate": v.error, "unit": v.unit,
                 "converged": bool(v.converged)} for k, v in self.quantities]

    def to_dict(self, unit: str | None = None) -> dict[str, Any]:
        st = self.state
        props = plain_properties(self.properties)
        props.update({name: est.to_dict() for name, _, est in self.extra})
        return {"label": st.label, "n": st.n, "l": st.l, "potential": st.potential.name,
                "parameters": dict(st.potential.parameters), "mass": st.mass, "tol": st.tol,
                "success": self.success, "status": str(self.status), "message": self.message,
                "notes": [n.to_dict() for n in self.notes], "properties": props}


def correction_power(profile) -> float:
    """q in u = C r**lambda (1 + O(r**q)) near the origin: p + 2 for V ~ c r**p, capped to [0.25, 1]."""
    c, p = profile.small_r_coefficient, profile.small_r_power
    if c == 0.0:
        return 1.0
    return min(max(p + 2.0, 0.25), 1.0)


def channel_potential(potential, level):
    """The potential felt by ``level``: its (l, j) channel when the family has
    l-dependent parts or the level has a j, else ``potential`` itself."""
    j = getattr(level, "j", None)
    if hasattr(potential, "channel") and (j is not None or getattr(potential, "l_dependent", False)):
        return potential.channel(level.l, j)
    return potential


def check_atomic_3d(result, what: str) -> None:
    """Refuse results in other unit systems or dimensions (not implemented here)."""
    if result is None:
        return
    units = getattr(result, "units", "atomic")
    dimension = getattr(result, "dimension", 3)
    if units != "atomic" or dimension != 3:
        raise InputError(f"{what} are implemented for atomic units in three dimensions; this "
                         f"result is in {units} units with dimension {dimension}")
    equation = getattr(result, "equation", "schrodinger")
    if equation != "schrodinger":
        # a relativistic level's samples are u of the second-order form, not (G, F)
        raise InputError(f"{what} of {equation} levels are not implemented yet; only their energies are",
                         parameter="equation")


def plain_properties(props: dict[str, Any]) -> dict[str, Any]:
    """:meth:`State.properties` as plain data (for JSON)."""
    out: dict[str, Any] = {}
    for key, value in props.items():
        if isinstance(value, (Estimate, VirialCheck)):
            out[key] = value.to_dict()
        elif isinstance(value, list):
            out[key] = [v.to_dict() for v in value]
        else:
            out[key] = value
    return out


def state(potential, n: int, l: int, *, mass=None, tol: float = 1e-10, method: str = "fd",
          plugins=None, equation: str = "schrodinger") -> State:
    """Solve for the single level (n, l) of ``potential`` and return it as a :class:`State`.

    Parameters
    ----------
    potential : Potential or str
        As for :func:`radsolve.solve`.
    n, l : int
        Principal number (n = nodes + l + 1) and orbital angular momentum.
    mass, tol, method, plugins
        As for :func:`radsolve.solve`.
    equation : str
        Only ``"schrodinger"`` so far (a relativistic one is refused with a message).

    Raises
    ------
    InputError
        When n <= l, or the level is not bound.
    """
    from radsolve.core.result import level_label
    from radsolve.core.relativistic import SCHRODINGER, validated_equation
    from radsolve.core.spectrum import solve

    equation = validated_equation(equation)
    if equation != SCHRODINGER:
        raise InputError(f"states of {equation} levels are not implemented yet; only "
                         "equation='schrodinger' (from Python, radsolve.analysis.relativistic.dirac_state "
                         "judges a Dirac level's <r^k>; dirac_components gives (G, F))", parameter="equation")

    n = _check_positive_int(n, "n")
    l = _check_positive_int(l, "l")
    if l < 0:
        raise InputError(f"l must be >= 0, got {l}", parameter="l")
    if n < l + 1:
        raise InputError(f"no level with n = {n} and l = {l}: n must be at least l + 1 = {l + 1}",
                         parameter="n")
    result = solve(potential, l=l, count=n - l, mass=mass, tol=tol, method=method, plugins=plugins)
    label = level_label(n, l)
    for lev in result.levels:
        if lev.n == n and lev.l == l:
            return State(lev, result.potential, result.mass, result.tol, result)
    found = [lev.label for lev in result.levels]
    bound = f"only {len(found)} bound level{'s' if len(found) != 1 else ''} for l = {l}" + (
        f" ({', '.join(found)})" if found else "")
    raise InputError(f"level {label} is not bound in potential {result.potential.name!r}: {bound}; "
                     f"{result.message}")


_MOMENT_RE = re.compile(r"^\s*(?:(1\s*/\s*)?r(?:\s*(?:\^|\*\*)\s*([+-]?\d+(?:\.\d*)?(?:[eE][+-]?\d+)?))?)\s*$")


def expectation(state_: State, observable) -> Estimate:
    """⟨observable⟩ of a state.

    ``observable``: a number k (⟨r**k⟩), a text ``"r"``, ``"r^2"``, ``"r**-1.5"``,
    ``"1/r"``, ``"1/r^2"``, ``"V"`` (potential energy), ``"T"`` (kinetic
    energy), or a function f(r) of radius in bohr.
    """
    if isinstance(observable, numbers.Real) and not isinstance(observable, bool):
        return state_.moment(float(observable))
    if callable(observable):
        return state_.expectation(observable)
    if isinstance(observable, str):
        text = observable.strip()
        if text in ("V", "potential"):
            return state_.potential_energy()
        if text in ("T", "kinetic"):
            return state_.kinetic_energy()
        match = _MOMENT_RE.match(text)
        if match:
            k = float(match.group(2)) if match.group(2) else 1.0
            return state_.moment(-k if match.group(1) else k)
    raise InputError(f"unknown observable {observable!r}; allowed: a number k (<r^k>), 'r^k', "
                     "'1/r^k', 'V', 'T' or a function of r")
