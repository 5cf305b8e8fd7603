"""The mapped radial grid shared by all solvers.

Points are uniform in a mapping variable x with

    x(r) = ln(r) + r / s,

logarithmic (constant relative spacing) for r << s, where bound states vary
on the scale of r itself, and linear (spacing s*h) for r >> s, where they
oscillate and decay on a fixed scale.  Under the Liouville substitution
u(r) = sqrt(r'(x)) w(x) the radial equation becomes, with g = r(x),

    -1/(2 mu) w'' + q(x) w = E b(x) w,
    b = g'**2,
    q = g'**2 [V + l(l+1)/(2 mu r**2)] - {g, x} / (4 mu),

where {g, x} = g'''/g' - 3/2 (g''/g')**2 is the Schwarzian derivative.  There
is no first-derivative term, so centred differences and Numerov's method keep
their even-power error expansions in h, which Richardson extrapolation needs.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np


@dataclass(frozen=True)
class RadialGrid:
    """A log-linear grid, including both boundary points (where w = 0).

    Attributes
    ----------
    step : float
        Uniform step h in x (dimensionless).
    scale : float
        The crossover radius s of the mapping, bohr.
    x : ndarray
        Mapping variable at the points.
    r : ndarray
        Radii, bohr; ``r[0]`` and ``r[-1]`` carry the Dirichlet conditions.
    jacobian : ndarray
        dr/dx at the points, bohr.
    schwarzian : ndarray
        The Schwarzian derivative {r, x} at the points (dimensionless).
    """

    step: float
    scale: float
    x: np.ndarray
    r: np.ndarray
    jacobian: np.ndarray
    schwarzian: np.ndarray

    @property
    def size(self) -> int:
        return self.r.size

    @property
    def weights(self) -> np.ndarray:
        """Trapezoid weights in x mapped to r: sum(weights * f) ~ integral f dr, bohr."""
        return self.step * self.jacobian

    def liouville_coefficients(self, potential_values: np.ndarray, l: int, mass: float, centrifugal: float | None = None):
        """Return (b, q) of the transformed equation for angular momentum ``l``.

        Parameters
        ----------
        potential_values : ndarray
            V(r) at ``self.r``, hartree.
        l : int
            Orbital angular momentum.
        mass : float
            Reduced mass, electron masses.
        centrifugal : float, optional
            The factor in the centrifugal term c/(2 mu r**2); l(l+1) by
            default, L(L+1) with L = l + (d-3)/2 in d dimensions.
        """
        b = self.jacobian**2
        factor = l * (l + 1) if centrifugal is None else centrifugal
        centrifugal = factor / (2.0 * mass * self.r**2)
        q = b * (potential_values + centrifugal) - self.schwarzian / (4.0 * mass)
        return b, q


def mapping_x(r, scale: float):
    """x(r) = ln r + r/s."""
    r = np.asarray(r, dtype=float)
    return np.log(r) + r / scale


def radius_from_x(x, scale: float) -> np.ndarray:
    """Invert x = ln r + r/s:  r = s W(e^x / s), with W the Lambert function.

    Evaluated through log-space Newton steps so that very negative x (tiny r)
    and large x (where e^x overflows) are both exact to rounding.
    """
    x = np.asarray(x, dtype=float)
    log_s = np.log(scale)
    # The root t = ln r of f(t) = t + e^t/s - x lies below both x (the log
    # regime) and ln(s (x - ln s)) (the linear regime); starting from the
    # smaller, f is convex and increasing, so Newton steps approach the root
    # without overflowing e^t.
    linear_guess = log_s + np.log(np.maximum(x - log_s, 1e-300))
    t = np.minimum(x, np.where(x - log_s > 0, np.maximum(linear_guess, log_s), x))
    for _ in range(100):
        et = np.exp(t - log_s)  # e^t / s
        delta = (t + et - x) / (1.0 + et)
        t = t - delta
        if np.max(np.abs(delta)) < 1e-15 * max(1.0, float(np.max(np.abs(t)))):
            break
    return np.exp(t)


@dataclass(frozen=True)
class GridSpan:
    """Where a family of nested grids starts and ends in x, and its mapping.

    ``x_lo`` and ``x_hi`` are fixed for the whole refinement sequence so that
    every grid of step ``coarse_step / 2**k`` contains all points of the
    coarser ones, and the Dirichlet boundaries stay at the same radii.
    """

    x_lo: float
    x_hi: float
    scale: float
    coarse_step: float

    @classmethod
    def covering(cls, r_min: float, r_max: float, coarse_step: float, scale: float, anchor: float | None = None):
        """Span from about ``r_min`` to at least ``r_max`` (bohr).

        The inner boundary moves inward by less than one coarse step so that
        ``anchor`` (bohr, e.g. the edge of a uniformly charged nucleus, where
        V is not smooth) is a point of every grid; the outer one moves outward
        to a whole number of coarse steps.
        """
        x_lo = float(mapping_x(r_min, scale))
        x_hi = float(mapping_x(r_max, scale))
        if anchor is not None and r_min < anchor < r_max:
            x_a = float(mapping_x(anchor, scale))
            x_lo = x_a - np.ceil((x_a - x_lo) / coarse_step) * coarse_step
        intervals = int(np.ceil((x_hi - x_lo) / coarse_step - 1e-9))
        return cls(x_lo=x_lo, x_hi=x_lo + intervals * coarse_step, scale=scale, coarse_step=coarse_step)

    @property
    def r_min(self) -> float:
        return float(radius_from_x(self.x_lo, self.scale))

    @property
    def r_max(self) -> float:
        return float(radius_from_x(self.x_hi, self.scale))

    def grid(self, refinement: int = 0) -> RadialGrid:
        """The grid of step ``coarse_step / 2**refinement``."""
        intervals = int(round((self.x_hi - self.x_lo) / self.coarse_step)) * 2**refinement
        step = self.coarse_step / 2**refinement
        x = self.x_lo + step * np.arange(intervals + 1)
        s = self.scale
        r = radius_from_x(x, s)
        jac = r * s / (r + s)
        schwarz = -(s**3) * (0.5 * s + 2.0 * r) / (r + s) ** 4
        return RadialGrid(step=step, scale=s, x=x, r=r, jacobian=jac, schwarzian=schwarz)
