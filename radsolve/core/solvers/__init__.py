"""Bound-state methods.  Each method is one module with one RadialSolver subclass.

See :mod:`radsolve.core.solvers.base` for the interface and :mod:`radsolve.core.solvers.registry` for
the registry ``METHODS``.
"""

from radsolve.core.solvers.base import RadialSolver, solver_class
from radsolve.core.solvers.registry import EVERY_METHOD, METHODS

__all__ = ["EVERY_METHOD", "METHODS", "RadialSolver", "solver_class"]
