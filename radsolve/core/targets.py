"""One place that turns ``tol`` into every target derived from it.

A solve asks for levels with a relative error ``tol``.  Everything else that
depends on it — how close to the origin the grid starts, how far out the
wall goes, how far the state must have decayed there, when a level counts
as converged — is derived here, by name, so that no other module multiplies
``tol`` by a bare factor.  Relative means relative to :meth:`Targets.scale`,
the same scale everywhere: |E|, or |E - V(inf)| when that is larger.

Convergence is decided by :meth:`Targets.decide` alone, which also names the
cause when a level did not converge (see :class:`Status`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from enum import Enum

#: Smallest and largest tolerance a solve accepts.
TOL_RANGE = (1e-14, 0.1)
#: ... and a threshold search (critical parameter values are found by root
#: finding on a grid quantity, which cannot promise the last digit).
THRESHOLD_TOL_RANGE = (1e-13, 1e-2)
#: ... and the convergence check, which judges levels against its tol: any
#: 0 < tol < 1 (open at both ends); one the solver refuses makes the check
#: fail with the solver's reason.
JUDGED_TOL_RANGE = (0.0, 1.0)


def validated_tol(tol, name: str = "tol", limits: tuple[float, float] = TOL_RANGE) -> float:
    """``tol`` as a float inside ``limits``, or an InputError naming ``name`` and the range.

    The one check of every tolerance radsolve accepts (solve and everything
    built on it, thresholds, the convergence check); ``name`` is the API
    argument, also set as the error's ``parameter``.  The limits are
    inclusive, except for :data:`JUDGED_TOL_RANGE`, whose ends are open.
    """
    from radsolve.errors import InputError

    low, high = limits
    if limits == JUDGED_TOL_RANGE:
        allowed, inside = f"a relative tolerance with {low:g} < tol < {high:g}", lambda v: low < v < high
    else:
        allowed, inside = f"between {low:g} and {high:g}", lambda v: low <= v <= high
    try:
        if isinstance(tol, bool):
            raise TypeError
        value = float(tol)
    except (TypeError, ValueError):
        raise InputError(f"{name} must be a number {allowed} (got {tol!r})", parameter=name) from None
    if not inside(value):  # NaN fails too
        raise InputError(f"{name} must be {allowed} (got {tol!r}), e.g. 1e-10", parameter=name)
    return value


class Status(str, Enum):
    """Why a level's refinement ended.

    ``CONVERGED``: the estimate meets tol.  The others are reasons it does
    not: rounding noise of the method is above tol (``ROUNDING``), the
    finest affordable grid was reached (``FINEST_GRID``), the potential
    itself is known less well than tol (``POTENTIAL_ACCURACY``, e.g. a
    table's interpolation error), the box could not be made large enough
    (``BOX``), the grids do not show the convergence order the method
    should have (``ORDER``, e.g. an undeclared jump in V), the level is
    nearly degenerate with a neighbour so that the grids cannot tell the two
    apart (``NEAR_DEGENERATE``), or the number of bound levels is uncertain
    near this one (``COUNT_UNCERTAIN``).
    """

    CONVERGED = "converged"
    ROUNDING = "rounding floor"
    FINEST_GRID = "finest grid"
    POTENTIAL_ACCURACY = "potential accuracy"
    BOX = "box"
    ORDER = "order not established"
    NEAR_DEGENERATE = "near-degenerate"
    COUNT_UNCERTAIN = "count uncertain"

    def __str__(self) -> str:
        return self.value


@dataclass(frozen=True)
class Targets:
    """The targets derived from one ``tol``.

    Attributes
    ----------
    tol : float
        Target relative error of each energy.
    boundary_share : float
        The share of ``tol`` that each boundary error (the outer wall, the
        inner power-law condition) may use.  Each boundary is placed so that
        its own shift of a level stays below ``boundary_share * tol``
        relative; its measured shift is then added to the estimate anyway.
    """

    tol: float
    boundary_share: float = 1e-3
    #: e-folds of decay beyond the demanded ones, for the prefactor WKB leaves out.
    decay_margin: float = 3.0
    #: e-folds of growth from the inner boundary to a core's turning point
    #: beyond the demanded ones.
    core_margin: float = 6.0

    def scale(self, energy: float, v_infinity: float) -> float:
        """What 'relative' is relative to: |E|, or |E - V(inf)| when that is larger."""
        if math.isinf(v_infinity):
            return abs(energy)
        return max(abs(energy), abs(energy - v_infinity))

    def energy_target(self, energy: float, v_infinity: float) -> float:
        """The absolute error a level may have: tol times its scale."""
        return self.tol * self.scale(energy, v_infinity)

    def boundary_target(self, energy: float, v_infinity: float) -> float:
        """The absolute shift each boundary may cause."""
        return self.boundary_share * self.energy_target(energy, v_infinity)

    @property
    def boundary_tol(self) -> float:
        """The relative shift each boundary may cause."""
        return self.boundary_share * self.tol

    @property
    def decay_nepers(self) -> float:
        """e-folds the weakest level must have decayed by at the wall.

        The wall shifts a level by ~|u(R)|**2, so e**(-2 N) = boundary_tol,
        plus a margin for the WKB prefactor.
        """
        return 0.5 * math.log(1.0 / self.boundary_tol) + self.decay_margin

    @property
    def core_nepers(self) -> float:
        """e-folds a level must have grown by from the inner boundary to its turning point."""
        return 0.5 * math.log(1.0 / self.boundary_tol) + self.core_margin

    def wall_growth(self, shift: float, target: float, kappa: float) -> float:
        """How far to move the wall so that a shift ~ e**(-2 kappa R) falls below ``target``."""
        if shift <= target:
            return 0.0
        return (math.log(shift / target) + 1.0) / (2.0 * kappa)

    def met(self, error: float, energy: float, v_infinity: float) -> bool:
        return error <= self.energy_target(energy, v_infinity)

    def decide(self, *, error: float, energy: float, v_infinity: float, grids: int,
               order_ok: bool, rounding: float, potential_limit: float, at_finest: bool,
               box_limited: bool, near_degenerate: bool = False,
               count_uncertain: bool = False) -> Status:
        """The one convergence decision.

        ``error`` is the level's full estimate; ``rounding`` the method's
        rounding floor for it and ``potential_limit`` how well V itself pins
        it down (both absolute).  A level converges when it was seen on at
        least three grids, its grids show the expected order, nothing makes
        it ambiguous, and its estimate meets tol.
        """
        target = self.energy_target(energy, v_infinity)
        if count_uncertain:
            return Status.COUNT_UNCERTAIN
        if near_degenerate:
            return Status.NEAR_DEGENERATE
        if grids >= 3 and order_ok and error <= target:
            return Status.CONVERGED
        if box_limited:
            return Status.BOX
        if potential_limit > target and error <= 10.0 * potential_limit:
            return Status.POTENTIAL_ACCURACY
        if rounding > 0.3 * target:
            return Status.ROUNDING
        if not order_ok and grids >= 3:
            return Status.ORDER
        return Status.FINEST_GRID if at_finest else Status.FINEST_GRID
