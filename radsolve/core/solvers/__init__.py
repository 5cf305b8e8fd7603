"""Bound-state methods.  Each method is one module with one RadialSolver subclass.

See :mod:`radsolve.core.solvers.base` for the interface and the registry ``METHODS``.
"""

from radsolve.core.solvers.base import METHODS, RadialSolver, solver_class

__all__ = ["METHODS", "RadialSolver", "solver_class"]
