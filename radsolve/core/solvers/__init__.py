"""Bound-state methods.  Each method is one module with one RadialSolver subclass.

See :mod:`radsolve.core.solvers.base` for the interface and :mod:`radsolve.core.solvers.registry` for
the registry ``METHODS``.  ``RadialSolver`` and ``solver_class`` are imported on first use, so that
reading the registry (the command line does, at start-up) does not import numpy.
"""

from radsolve.core.solvers.registry import EVERY_METHOD, METHODS

__all__ = ["EVERY_METHOD", "METHODS", "RadialSolver", "solver_class"]


def __getattr__(name):
    if name in ("RadialSolver", "solver_class"):
        from radsolve.core.solvers import base

        return getattr(base, name)
    raise AttributeError(f"module 'radsolve.core.solvers' has no attribute {name!r}")
