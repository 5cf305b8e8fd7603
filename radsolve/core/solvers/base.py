"""The interface every bound-state method implements, and the method registry.

A method sees one grid at a time.  It is handed the Liouville coefficients of
the transformed radial equation (see :mod:`radsolve.core.grids`)

    -1/(2 mu) w'' + q w = E b w,   w = 0 at the boundary points,

and answers two questions: how many levels lie below an energy (its own node
or Sturm count), and what are the energies and normalized wavefunctions of
the levels with given node numbers.  Choosing grids, refining them,
extrapolating and labelling are done once for all methods in
:mod:`radsolve.core.spectrum`.

Adding a method: write ``radsolve/core/solvers/mymethod.py`` with a subclass
of :class:`RadialSolver` and add ``"mymethod": "radsolve.core.solvers.mymethod:MyClass"``
to :data:`radsolve.core.solvers.registry.METHODS`.  ``solve(method=MyClass)``
also takes an unregistered subclass directly.
"""

from __future__ import annotations

import importlib
from typing import Sequence

import numpy as np

from radsolve.errors import InputError
from radsolve.core.grids import RadialGrid
from radsolve.core.tridiagonal import EigenStatistics

from radsolve.core.solvers.registry import EVERY_METHOD, METHODS


def solver_class(method: str) -> type["RadialSolver"]:
    """The RadialSolver subclass registered as ``method``."""
    try:
        target = METHODS[method]
    except KeyError:
        raise InputError(f"unknown method {method!r}; allowed: {', '.join(sorted(METHODS))} or "
                         f"{EVERY_METHOD!r}") from None
    module_name, class_name = target.split(":")
    return getattr(importlib.import_module(module_name), class_name)


class RadialSolver:
    """Base class of the bound-state methods.

    Parameters
    ----------
    grid : RadialGrid
        The grid; ``grid.r[-1]`` is a Dirichlet wall, and ``grid.r[inner]``
        carries the inner boundary condition (see ``origin_exponent``).
    potential_values : ndarray
        V at ``grid.r``, hartree.
    l : int
        Orbital angular momentum.
    mass : float
        Reduced mass, electron masses.
    inner : int
        Index of the inner boundary point (points below it are outside the
        problem).
    origin_exponent : float, optional
        lambda in u ~ r**lambda as r -> 0 (default l + 1).  The inner
        boundary condition is that power law: with r ~ e**x there,
        w ~ e**((lambda - 1/2) x), so w[inner] = ghost_ratio * w[inner + 1]
        with ghost_ratio = exp(-(lambda - 1/2) h).  This keeps the error of
        cutting the grid at r[inner] second order in r[inner], instead of
        first order for a hard wall, and is what makes lambda = 1/2 (two
        dimensions, l = 0) solvable at all.
    centrifugal : float, optional
        The factor c of the centrifugal term c / (2 mu r**2): l(l+1) by
        default; L(L+1) with L = l + (d-3)/2 in d dimensions.

    Class attributes
    ----------------
    name : str
        Registry name.
    error_orders : tuple of int
        Powers of the step h in the asymptotic error expansion of the
        energies, leading first (used by Richardson extrapolation).
    error_orders_at_breakpoints : tuple of int or None
        The same where V or one of its derivatives jumps at a grid point (V
        there the mean of its one-sided limits, ``grids.potential_on_grid``);
        None: ``error_orders``.  See :meth:`orders`.
    relative_rounding(size) : classmethod
        Relative rounding noise of the energies; the floor of every estimate.
    """

    name = "base"
    error_orders: tuple[int, ...] = (2, 4, 6, 8)
    error_orders_at_breakpoints: tuple[int, ...] | None = None

    @classmethod
    def orders(cls, breakpoints: bool) -> tuple[int, ...]:
        """The error expansion to extrapolate with: ``error_orders``, or, when V has
        breakpoints on the grid, ``error_orders_at_breakpoints`` where the method has one."""
        if breakpoints and cls.error_orders_at_breakpoints is not None:
            return tuple(cls.error_orders_at_breakpoints)
        return tuple(cls.error_orders)

    @classmethod
    def relative_rounding(cls, size: int) -> float:
        """Relative rounding noise of this method's energies on a grid of ``size`` points.

        No error estimate is smaller than this.
        """
        return 3e-14

    def __init__(
        self,
        grid: RadialGrid,
        potential_values: np.ndarray,
        l: int,
        mass: float,
        inner: int = 0,
        origin_exponent: float | None = None,
        centrifugal: float | None = None,
    ):
        self.grid = grid
        self.l = l
        self.mass = mass
        self.inner = inner
        self.origin_exponent = float(l + 1 if origin_exponent is None else origin_exponent)
        self.ghost_ratio = float(np.exp(-(self.origin_exponent - 0.5) * grid.step))
        self.b, self.q = grid.liouville_coefficients(potential_values, l, mass, centrifugal)
        #: What this solver's searches did (windows confirmed or missed, counts, solves).
        self.statistics = EigenStatistics()

    def count_below(self, energy: float) -> int:
        """Number of levels of this discrete problem with energy below ``energy`` (hartree)."""
        raise NotImplementedError

    def levels(self, indices: Sequence[int], guesses: Sequence[float] | None = None,
               peaks: Sequence[float] | None = None,
               precision: Sequence[float] | None = None,
               previous: Sequence[np.ndarray] | None = None) -> tuple[np.ndarray, np.ndarray]:
        """Energies (hartree) and wavefunctions of the levels with these node numbers.

        ``guesses`` are predictions of the same levels on this grid from this
        method's coarser grids (hartree; Richardson-extrapolated once two are
        known), which a method may use to start its search; ``peaks`` the
        radii where the states were largest on the previous grid.  Both are
        None on the first grid.  ``precision``: the absolute accuracy each
        energy needs on this grid (None: the method's best), which a method
        may use to stop early.  ``previous``: the same levels' u on the grid
        this one halves (every other point of this grid), or None; a start
        for an iterative method.  A method must find the levels by their node
        numbers whatever the guesses are: a guess may speed it up, never
        change which level is returned.

        Returns
        -------
        energies : ndarray, shape (k,)
        u : ndarray, shape (k, grid.size)
            u(r) = sqrt(dr/dx) w on the whole grid, zero outside the walls,
            normalized with ``grid.weights`` and positive near the origin.
        """
        raise NotImplementedError

    def level_noise(self) -> list:
        """Absolute rounding noise of each level of the last :meth:`levels` call, where the
        method can measure it (None entries where it cannot: ``relative_rounding`` applies)."""
        return []

    # Shared helpers --------------------------------------------------------

    def to_u(self, w_interior: np.ndarray, start: int) -> np.ndarray:
        """Embed w (rows) given from grid index ``start`` on, convert to normalized u."""
        w_interior = np.atleast_2d(w_interior)
        u = np.zeros((w_interior.shape[0], self.grid.size))
        stop = start + w_interior.shape[1]
        u[:, start:stop] = w_interior * np.sqrt(self.grid.jacobian[start:stop])
        norm = np.sqrt((u * u) @ self.grid.weights)
        u /= norm[:, None]
        return positive_near_origin(u)


def positive_near_origin(u: np.ndarray) -> np.ndarray:
    """The sign convention of every state (rows of ``u``, changed in place): positive
    where |u| first exceeds a small fraction of its maximum."""
    size = np.abs(u)
    first = np.argmax(size > 1e-3 * np.max(size, axis=1, keepdims=True), axis=1)
    u *= np.where(u[np.arange(u.shape[0]), first] < 0, -1.0, 1.0)[:, None]
    return u
