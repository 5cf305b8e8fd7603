"""Bound-state methods.  Each method is one module with one RadialSolver subclass.

See :mod:`radsolve.solvers.base` for the interface and the registry ``METHODS``.
"""

from .base import METHODS, RadialSolver, solver_class

__all__ = ["METHODS", "RadialSolver", "solver_class"]
