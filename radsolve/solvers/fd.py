"""Finite differences: a symmetric tridiagonal matrix, levels selected by index.

The transformed equation -1/(2 mu) w'' + q w = E b w with centred second
differences is the symmetric pencil (A, B), B = diag(b) > 0.  Scaling by
B**-1/2 gives the symmetric tridiagonal matrix

    T = B**-1/2 A B**-1/2,

whose off-diagonal entries are all negative.  For such a (Jacobi) matrix the
k-th eigenvector, counted from the bottom, has exactly k sign changes, and
LAPACK's bisection (stebz) finds eigenvalues by their index through Sturm
counts.  So the level with k nodes is eigenvalue number k: none can be missed
or taken twice.  The discretization error is a series in h**2.
"""

from __future__ import annotations

from typing import Sequence

import numpy as np
from scipy.linalg import eigh_tridiagonal

from .base import RadialSolver

# Bisection to the underflow limit: the matrix is strongly graded (huge
# entries near r = 0, small ones far out), and an absolute tolerance scaled
# by its norm would lose the small eigenvalues.  Graded Jacobi matrices are
# resolved to high relative accuracy by bisection with this setting.
_ABSOLUTE_TOLERANCE = 4.0 * np.finfo(float).tiny


class FiniteDifference(RadialSolver):
    """Second-order finite differences on the mapped grid."""

    name = "fd"
    error_orders = (2, 4, 6, 8, 10)

    def _matrix(self):
        h = self.grid.step
        sl = slice(self.inner + 1, self.grid.size - 1)
        b, q = self.b[sl], self.q[sl]
        kinetic = 1.0 / (2.0 * self.mass * h * h)
        diagonal = (2.0 * kinetic + q) / b
        off = -kinetic / np.sqrt(b[:-1] * b[1:])
        return diagonal, off, b

    def count_below(self, energy: float) -> int:
        d, e, _ = self._matrix()
        values = eigh_tridiagonal(
            d, e, eigvals_only=True, select="v", select_range=(-np.inf, energy),
            lapack_driver="stebz", tol=_ABSOLUTE_TOLERANCE,
        )
        return int(np.size(values))

    def levels(self, indices: Sequence[int], guesses=None) -> tuple[np.ndarray, np.ndarray]:
        indices = list(indices)
        d, e, b = self._matrix()
        lo, hi = min(indices), max(indices)
        values, vectors = eigh_tridiagonal(
            d, e, select="i", select_range=(lo, hi), lapack_driver="stebz", tol=_ABSOLUTE_TOLERANCE,
        )
        take = [i - lo for i in indices]
        w = (vectors[:, take] / np.sqrt(b)[:, None]).T
        return values[take], self.to_u(w, self.inner + 1)
