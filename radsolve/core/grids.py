"""The mapped radial grid shared by all solvers.

Points are uniform in a grid variable xi.  The base mapping is

    x(r) = ln(r) + r / s,

logarithmic (constant relative spacing) for r << s, where bound states vary
on the scale of r itself, and linear (spacing s*h) for r >> s, where they
oscillate and decay on a fixed scale.  To put every breakpoint of V (a step,
a kink) on a point of every grid, xi = x + delta(x), where delta is constant
outside the breakpoints and moves smoothly (a polynomial step whose first
SMOOTHNESS derivatives vanish at the breakpoints) from one breakpoint's
shift to the next one's in between.  With one breakpoint or none, delta is a constant and
xi is x itself up to an offset.

Under the Liouville substitution u(r) = sqrt(r'(xi)) w(xi) the radial
equation becomes, with g = r(xi),

    -1/(2 m) w'' + q(xi) w = E b(xi) w,
    b = g'**2,
    q = g'**2 [V + l(l+1)/(2 m r**2)] - {g, xi} / (4 m),

where {g, xi} = g'''/g' - 3/2 (g''/g')**2 is the Schwarzian derivative.
There is no first-derivative term, so centred differences and Numerov's
method keep their power-series error expansions in h, which Richardson
extrapolation needs.
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass, field
from typing import Iterable

import numpy as np

#: Breakpoints closer than this many coarse steps (in xi) cannot both be
#: grid points: the smooth shift between them would vary faster than the
#: coarsest grid resolves.
MIN_GAP_STEPS = 8.0
#: The coarsest step is made at most this many times finer to fit close breakpoints.
MAX_STEP_DIVISION = 64.0


@dataclass(frozen=True)
class RadialGrid:
    """A grid uniform in xi, including both boundary points (where w = 0).

    Attributes
    ----------
    step : float
        Uniform step h in xi (dimensionless).
    scale : float
        The crossover radius s of the base mapping.
    x : ndarray
        The grid variable xi at the points.
    r : ndarray
        Radii; ``r[0]`` and ``r[-1]`` carry the boundary conditions.
    jacobian : ndarray
        dr/dxi at the points.
    schwarzian : ndarray
        The Schwarzian derivative {r, xi} at the points.
    mapping : Mapping
        The map xi <-> r (for interpolation between points).
    """

    step: float
    scale: float
    x: np.ndarray
    r: np.ndarray
    jacobian: np.ndarray
    schwarzian: np.ndarray
    mapping: "Mapping | None" = field(default=None, repr=False)

    @property
    def size(self) -> int:
        return self.r.size

    @functools.cached_property
    def weights(self) -> np.ndarray:
        """Trapezoid weights in xi mapped to r: sum(weights * f) ~ integral of f dr (read-only,
        computed once: every state sampled on this grid shares it)."""
        weights = self.step * self.jacobian
        weights.flags.writeable = False
        return weights

    @functools.cached_property
    def jacobian_squared(self) -> np.ndarray:
        """(dr/dxi)**2, the b of :meth:`liouville_coefficients` (read-only, computed once)."""
        return _read_only(self.jacobian**2)

    @functools.cached_property
    def r_squared(self) -> np.ndarray:
        """r**2 at the points (read-only, computed once)."""
        return _read_only(self.r**2)

    @functools.cached_property
    def sqrt_jacobian(self) -> np.ndarray:
        """sqrt(b / (dr/dxi)) = sqrt(dr/dxi), which turns a state u into a vector of the
        symmetric finite-difference matrix (read-only, computed once)."""
        return _read_only(np.sqrt(self.jacobian_squared / self.jacobian))

    @functools.cached_property
    def unit_state_scale(self) -> np.ndarray:
        """1 / sqrt(h dr/dxi): a unit eigenvector of that matrix times this is a normalized u
        (read-only, computed once)."""
        return _read_only(1.0 / np.sqrt(self.step * self.jacobian))

    def liouville_coefficients(self, potential_values: np.ndarray, l: int, mass: float, centrifugal: float | None = None):
        """Return (b, q) of the transformed equation.

        Parameters
        ----------
        potential_values : ndarray
            V(r) at ``self.r``.
        l : int
            Orbital angular momentum.
        mass : float
            The kinetic mass m of -u''/(2m).
        centrifugal : float, optional
            The factor in the centrifugal term c/(2 m r**2); l(l+1) by
            default, L(L+1) with L = l + (d-3)/2 in d dimensions.
        """
        b = self.jacobian_squared
        factor = l * (l + 1) if centrifugal is None else centrifugal
        centrifugal = factor / (2.0 * mass * self.r_squared)
        q = b * (potential_values + centrifugal) - self.schwarzian / (4.0 * mass)
        return b, q


def _read_only(values: np.ndarray) -> np.ndarray:
    values.flags.writeable = False
    return values


def mapping_x(r, scale: float):
    """x(r) = ln r + r/s."""
    r = np.asarray(r, dtype=float)
    return np.log(r) + r / scale


def radius_from_x(x, scale: float, start=None) -> np.ndarray:
    """Invert x = ln r + r/s:  r = s W(e^x / s), with W the Lambert function.

    Evaluated through log-space Newton steps so that very negative x (tiny r)
    and large x (where e^x overflows) are both exact to rounding.  ``start``:
    ln r at each x when known roughly (a neighbouring grid's), else None.
    """
    x = np.asarray(x, dtype=float)
    log_s = np.log(scale)
    if start is not None:
        # t(x) is concave (dx/dt = 1 + e^t/s grows): the mean of ln r at the two
        # neighbours lies just below the root, where Newton steps stay monotone.
        t = np.minimum(np.asarray(start, dtype=float), x)
    else:
        # The root t = ln r of f(t) = t + e^t/s - x lies below both x (the log
        # regime) and ln(s (x - ln s)) (the linear regime); starting from the
        # smaller, f is convex and increasing, so Newton steps approach the root
        # without overflowing e^t.
        linear_guess = log_s + np.log(np.maximum(x - log_s, 1e-300))
        t = np.minimum(x, np.where(x - log_s > 0, np.maximum(linear_guess, log_s), x))
    # the root's size is at most |x| + |ln s|: the scale of the stopping test
    settled = 1e-15 * max(1.0, float(np.max(np.abs(x), initial=0.0)) + abs(log_s))
    for _ in range(100):
        et = np.exp(t - log_s)  # e^t / s
        delta = (t + et - x) / (1.0 + et)
        t -= delta
        if np.max(np.abs(delta), initial=0.0) < settled:
            break
    return np.exp(t)


def _base_schwarzian(r: np.ndarray, s: float) -> np.ndarray:
    """{r, x} for the base mapping x = ln r + r/s."""
    return -(s**3) * (0.5 * s + 2.0 * r) / (r + s) ** 4


#: Smoothness of the shift between breakpoints: C**SMOOTHNESS at the knots.
SMOOTHNESS = 6


def _smoothstep_coefficients(order: int) -> np.ndarray:
    """Polynomial S(t) rising from 0 to 1 on [0, 1] with its first ``order`` derivatives zero at both ends."""
    from math import comb

    coeffs = np.zeros(2 * order + 2)
    for k in range(order + 1):
        coeffs[order + 1 + k] = comb(order + k, k) * comb(2 * order + 1, order - k) * (-1) ** k
    return coeffs  # coefficients of t**0, t**1, ...


_STEP = np.polynomial.Polynomial(_smoothstep_coefficients(SMOOTHNESS))
_STEP_D = (_STEP.deriv(1), _STEP.deriv(2), _STEP.deriv(3))


def _smooth_step(t: np.ndarray):
    """S(t) rising from 0 (t <= 0) to 1 (t >= 1), and S', S'', S'''.

    A polynomial smoothstep whose first SMOOTHNESS derivatives vanish at t = 0
    and t = 1: smooth enough that the knots, which are grid points where V
    itself is not smooth, add no lower order to the discretization error, and
    with no essential singularity (a C-infinity step built from exp(-1/t)
    makes the error fall faster than any power of h over the grids used,
    which Richardson extrapolation misreads as convergence).
    """
    t = np.asarray(t, dtype=float)
    inside = (t > 0.0) & (t < 1.0)
    S = np.where(t >= 1.0, 1.0, 0.0)
    d1 = np.zeros_like(t)
    d2 = np.zeros_like(t)
    d3 = np.zeros_like(t)
    if inside.any():
        ti = t[inside]
        S[inside] = _STEP(ti)
        d1[inside] = _STEP_D[0](ti)
        d2[inside] = _STEP_D[1](ti)
        d3[inside] = _STEP_D[2](ti)
    return S, d1, d2, d3


@dataclass(frozen=True)
class Mapping:
    """xi(r) = x(r) + delta(x(r)): the base log-linear map with breakpoints moved onto the grid.

    ``knots`` are the base-map values x_k of the breakpoints and ``shifts``
    the delta_k that move them to grid points; between consecutive knots
    delta changes by a C-infinity step, outside them it is constant.
    """

    scale: float
    knots: tuple[float, ...] = ()
    shifts: tuple[float, ...] = ()

    def _delta(self, x: np.ndarray):
        """delta and its first three derivatives with respect to x."""
        x = np.asarray(x, dtype=float)
        d0 = np.zeros_like(x)
        d1 = np.zeros_like(x)
        d2 = np.zeros_like(x)
        d3 = np.zeros_like(x)
        if not self.knots:
            return d0, d1, d2, d3
        k, dk = self.knots, self.shifts
        d0[:] = dk[0]
        for i in range(len(k) - 1):
            width = k[i + 1] - k[i]
            jump = dk[i + 1] - dk[i]
            sel = x > k[i]
            if not sel.any() or jump == 0.0:
                continue
            S, S1, S2, S3 = _smooth_step((x[sel] - k[i]) / width)
            d0[sel] = dk[i] + jump * S
            d1[sel] = jump * S1 / width
            d2[sel] = jump * S2 / width**2
            d3[sel] = jump * S3 / width**3
        return d0, d1, d2, d3

    def xi_of_x(self, x):
        return np.asarray(x, dtype=float) + self._delta(x)[0]

    def x_of_xi(self, xi) -> np.ndarray:
        xi = np.asarray(xi, dtype=float)
        if not self.knots:
            return xi.copy()
        x = xi - self._delta(xi)[0]
        for _ in range(60):
            d0, d1, _, _ = self._delta(x)
            step = (x + d0 - xi) / (1.0 + d1)
            x = x - step
            if np.max(np.abs(step), initial=0.0) < 1e-15 * max(1.0, float(np.max(np.abs(x), initial=0.0))):
                break
        # the knots themselves are exact
        for xk, dk in zip(self.knots, self.shifts):
            x = np.where(np.abs(xi - (xk + dk)) <= 1e-13 * max(1.0, abs(xk)), xk, x)
        return x

    def xi_of_r(self, r):
        return self.xi_of_x(mapping_x(r, self.scale))

    def r_of_xi(self, xi) -> np.ndarray:
        return radius_from_x(self.x_of_xi(xi), self.scale)

    def points(self, xi: np.ndarray, breakpoints: Iterable[float] = (), every_other=None):
        """(r, dr/dxi, {r, xi}) at grid values ``xi``; breakpoints land exactly.

        ``every_other``: r at xi[0::2] when known (the grid this one halves);
        only the points between are then solved for.
        """
        x = self.x_of_xi(xi)
        if every_other is not None and 2 * (len(every_other) - 1) == x.size - 1:
            r = np.empty(x.size)
            r[0::2] = every_other
            log_known = np.log(every_other)
            r[1::2] = radius_from_x(x[1::2], self.scale, start=0.5 * (log_known[:-1] + log_known[1:]))
        else:
            r = radius_from_x(x, self.scale)
        for b, xk in zip(breakpoints, self.knots):
            r = np.where(x == xk, b, r)
        s = self.scale
        if not self.knots:  # no breakpoint moved: xi = x (the expressions below with delta = 0)
            return r, r * s / (r + s), _base_schwarzian(r, s)
        _, d1, d2, d3 = self._delta(x)
        xi1 = 1.0 + d1
        dx_dxi = 1.0 / xi1
        jac = r * s / (r + s) * dx_dxi
        schwarz_xi_x = d3 / xi1 - 1.5 * (d2 / xi1) ** 2
        schwarz = dx_dxi**2 * (_base_schwarzian(r, s) - schwarz_xi_x)
        return r, jac, schwarz


@dataclass(frozen=True)
class GridSpan:
    """Where a family of nested grids starts and ends in xi, and its mapping.

    ``x_lo`` and ``x_hi`` (values of xi) are fixed for the whole refinement
    sequence so that every grid of step ``coarse_step / 2**k`` contains all
    points of the coarser ones, and the boundaries stay at the same radii.
    ``anchors`` are the breakpoints that are points of every grid.
    """

    x_lo: float
    x_hi: float
    scale: float
    coarse_step: float
    mapping: Mapping = None  # type: ignore[assignment]
    anchors: tuple[float, ...] = ()
    left_out: tuple[float, ...] = ()
    #: The grids already built, by refinement (a memo of this span's own pure results).
    _built: dict = field(default_factory=dict, compare=False, hash=False, repr=False)

    def __post_init__(self):
        if self.mapping is None:
            object.__setattr__(self, "mapping", Mapping(self.scale))

    @classmethod
    def covering(cls, r_min: float, r_max: float, coarse_step: float, scale: float, anchor=None):
        """Span from about ``r_min`` to at least ``r_max``.

        ``anchor`` is a breakpoint radius or a sequence of them (where V is
        not smooth, e.g. the edge of a uniformly charged nucleus); each one
        inside the span becomes a point of every grid.  The inner boundary
        moves inward by less than one coarse step so that the first one is a
        grid point; the outer one moves outward to a whole number of coarse
        steps.  Breakpoints closer together than MIN_GAP_STEPS coarse steps make
        the coarse step finer (at most MAX_STEP_DIVISION times); those still
        too close cannot all be grid points: the later ones of such a cluster
        are left out (``left_out``).
        """
        if anchor is None:
            wanted: list[float] = []
        elif isinstance(anchor, (int, float, np.floating)):
            wanted = [float(anchor)]
        else:
            wanted = sorted(float(a) for a in anchor)
        wanted = [a for a in wanted if r_min < a < r_max]
        x_lo = float(mapping_x(r_min, scale))
        x_hi = float(mapping_x(r_max, scale))
        # Close breakpoints need a finer coarsest grid, for the shift between
        # them to vary slowly on it (down to 1/MAX_STEP_DIVISION of the step
        # asked; closer ones than that cannot all be grid points).
        xs = [float(mapping_x(a, scale)) for a in wanted]
        gaps = np.diff(xs) if len(xs) > 1 else np.array([])
        if gaps.size and gaps.min() < MIN_GAP_STEPS * coarse_step:
            coarse_step = max(gaps.min() / MIN_GAP_STEPS, coarse_step / MAX_STEP_DIVISION)
        kept: list[float] = []
        skipped: list[float] = []
        for a in wanted:
            xa = float(mapping_x(a, scale))
            if kept and xa - float(mapping_x(kept[-1], scale)) < MIN_GAP_STEPS * coarse_step:
                skipped.append(a)
            else:
                kept.append(a)
        if not kept:
            intervals = int(np.ceil((x_hi - x_lo) / coarse_step - 1e-9))
            return cls(x_lo=x_lo, x_hi=x_lo + intervals * coarse_step, scale=scale,
                       coarse_step=coarse_step, left_out=tuple(skipped))
        knots = [float(mapping_x(a, scale)) for a in kept]
        start = knots[0] - np.ceil((knots[0] - x_lo) / coarse_step) * coarse_step
        shifts = []
        for xk in knots:
            m = round((xk - start) / coarse_step)
            shifts.append(start + m * coarse_step - xk)
        mapping = Mapping(scale, tuple(knots), tuple(shifts))
        xi_hi = float(mapping.xi_of_x(np.array([x_hi]))[0])
        intervals = int(np.ceil((xi_hi - start) / coarse_step - 1e-9))
        return cls(x_lo=start, x_hi=start + intervals * coarse_step, scale=scale, coarse_step=coarse_step,
                   mapping=mapping, anchors=tuple(kept), left_out=tuple(skipped))

    @property
    def r_min(self) -> float:
        return float(self.grid(0).r[0])

    @property
    def r_max(self) -> float:
        return float(self.grid(0).r[-1])

    def intervals(self, refinement: int = 0) -> int:
        return int(round((self.x_hi - self.x_lo) / self.coarse_step)) * 2**refinement

    def grid(self, refinement: int = 0) -> RadialGrid:
        """The grid of step ``coarse_step / 2**refinement`` (built once per span)."""
        built = self._built.get(refinement)
        if built is None:
            built = self._built[refinement] = self._make_grid(refinement)
        return built

    def _make_grid(self, refinement: int) -> RadialGrid:
        intervals = self.intervals(refinement)
        step = self.coarse_step / 2**refinement
        x = self.x_lo + step * np.arange(intervals + 1)
        # Always from the grid this one halves (built first if need be), so that a
        # grid's radii do not depend on the order in which grids were asked for.
        coarser = self.grid(refinement - 1) if refinement > 0 else None
        r, jac, schwarz = self.mapping.points(x, self.anchors, None if coarser is None else coarser.r)
        return RadialGrid(step=step, scale=self.scale, x=x, r=r, jacobian=jac, schwarzian=schwarz,
                          mapping=self.mapping)


#: Boundary radii are moved to powers of this factor (see :func:`shared_radius`).
RADIUS_QUANTUM = 2.0 ** 0.125


def shared_radius(radius: float, *, outward: bool) -> float:
    """``radius`` moved to the nearest power of :data:`RADIUS_QUANTUM` inward (or outward).

    Used where a boundary may move that way without loss (an inner boundary
    further in, an integration further out): neighbouring problems -- the
    points of a sweep or a fit -- then land on the same boundaries, so on the
    same grids, which :func:`box_span` builds once.
    """
    if not (math.isfinite(radius) and radius > 0.0):
        return radius
    power = math.log(radius) / math.log(RADIUS_QUANTUM)
    whole = math.ceil(power - 1e-9) if outward else math.floor(power + 1e-9)
    return RADIUS_QUANTUM ** whole


def box_span(r_min: float, radius: float, step: float, anchors=()) -> GridSpan:
    """Grids from r_min to radius, with the crossover scale s = R / ln(R / r_min).

    That s balances the points spent on the logarithmic and the linear part
    for a fixed accuracy of the states that fill the box.
    """
    return _box_span(float(r_min), float(radius), float(step), tuple(float(a) for a in (anchors or ())))


@functools.lru_cache(maxsize=8)
def _box_span(r_min: float, radius: float, step: float, anchors: tuple) -> GridSpan:
    # A memo of a pure function: neighbouring points of a sweep or a fit solve
    # and count on the same spans, so on the same grids (each built once).
    scale = radius / max(math.log(radius / r_min), 1.0)
    return GridSpan.covering(r_min, radius, step, scale, anchors)


def potential_on_grid(pot, r: np.ndarray, breakpoints) -> np.ndarray:
    """V at the grid radii, with the mean of the one-sided limits at breakpoints.

    Where V jumps at a grid point, the mean of its two limits keeps the
    discretization error a regular power series in the step.
    """
    values = pot(r)
    for b in breakpoints:
        i = int(np.searchsorted(r, b))
        for j in (i - 1, i):
            if 0 <= j < r.size and abs(r[j] - b) <= 1e-12 * b:
                sides = pot(np.array([b * (1.0 - 1e-12), b * (1.0 + 1e-12)]))
                values[j] = 0.5 * (sides[0] + sides[1])
    return values
