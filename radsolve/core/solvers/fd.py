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

from radsolve.core.solvers.base import RadialSolver, positive_near_origin
from radsolve.core.tridiagonal import eigenpairs, sturm_count


class FiniteDifference(RadialSolver):
    """Second-order finite differences on the mapped grid."""

    name = "fd"
    error_orders = (2, 4, 6, 8, 10)

    @classmethod
    def relative_rounding(cls, size: int) -> float:
        # Bisection on the graded matrix leaves noise growing like size**1.5:
        # measured as the spread between the eigenvalues of T and of T with
        # its rows reversed, ~4.5e-19 * size**1.5 on the hydrogen spectrum
        # (Z = 1 ... 92); three times that, and never below 1e-13.  (Windows
        # predicted from coarser grids are bisected too, radsolve.core.tridiagonal.)
        return max(1e-13, 1.5e-18 * size**1.5)

    def _matrix(self):
        h = self.grid.step
        sl = slice(self.inner + 1, self.grid.size - 1)
        b, q = self.b[sl], self.q[sl]
        kinetic = 1.0 / (2.0 * self.mass * h * h)
        diagonal = (2.0 * kinetic + q) / b
        # inner boundary: the ghost value w[inner] = ghost_ratio * w[inner+1]
        diagonal[0] -= kinetic * self.ghost_ratio / b[0]
        off = -kinetic / np.sqrt(b[:-1] * b[1:])
        return diagonal, off, b

    def _cached_matrix(self):
        if getattr(self, "_tridiagonal", None) is None:
            self._tridiagonal = self._matrix()
        return self._tridiagonal

    def count_below(self, energy: float) -> int:
        d, e, _ = self._cached_matrix()
        return sturm_count(d, e, float(energy), self.statistics)

    def level_noise(self) -> list:
        return getattr(self, "_noise", [])

    def energies(self, indices: Sequence[int], guesses=None) -> np.ndarray:
        """The energies of :meth:`levels` alone, as accurate as cheap (planning needs no more)."""
        return self._solve(list(indices), guesses, vectors=False, precision=np.inf)[0]

    def _solve(self, indices: list[int], guesses, vectors: bool, rows=None, precision=None, starts=None):
        d, e, b = self._cached_matrix()
        if max(indices) >= d.size:
            raise ValueError(f"level {max(indices)} asked of a matrix of size {d.size}")
        lo, hi = min(indices), max(indices)
        contiguous = indices == list(range(lo, hi + 1))
        predictions = guesses if contiguous and guesses is not None and len(guesses) == len(indices) else None
        if predictions is None:
            precision = None
        values, z, noise = eigenpairs(d, e, lo, hi, predictions, vectors=vectors, rows=rows,
                                      precision=precision, stats=self.statistics,
                                      starts=starts if predictions is not None else None)
        pick = [i - lo for i in indices]
        return values[pick], (None if z is None else z[:, pick]), (None if noise is None else noise[pick])

    def levels(self, indices: Sequence[int], guesses=None, peaks=None, precision=None,
               previous=None) -> tuple[np.ndarray, np.ndarray]:
        indices = list(indices)
        rows = None
        if peaks is not None and guesses is not None and len(peaks) == len(indices):
            # rows of this grid's matrix nearest to the radii where the states peaked before
            r = self.grid.r[self.inner + 1 : self.grid.size - 1]
            at = np.minimum(np.searchsorted(r, [0.0 if p is None else p for p in peaks]), r.size - 1)
            rows = [None if p is None else int(i) for p, i in zip(peaks, at)]
        starts = self._starts(previous) if previous is not None and len(previous) == len(indices) else None
        values, z, noise = self._solve(indices, guesses, vectors=True, rows=rows, precision=precision,
                                       starts=starts)
        self._noise = list(noise)
        return values, self._states(z)

    def _states(self, z: np.ndarray) -> np.ndarray:
        """u (rows, whole grid) from unit eigenvectors z (columns) of T.

        w = z / sqrt(b) and u = sqrt(r') w with b = r'**2, so u = z / sqrt(r'),
        and sum(weights * u**2) = h sum(z**2) = h: u = z / sqrt(h r') is
        normalized by construction (as :meth:`to_u` would normalize it).
        """
        n = self.grid.size
        sl = slice(self.inner + 1, n - 1)
        u = np.zeros((z.shape[1], n))
        u[:, sl] = z.T * self.grid.unit_state_scale[sl]
        return positive_near_origin(u)

    def _starts(self, previous) -> list | None:
        """States of the grid this one halves, or of a grid of this size, as start vectors of this matrix.

        Every other point of this grid is a point of the one it halves; the
        points between take the mean of their neighbours (good to the step
        squared, which one inverse iteration makes good to rounding).  States
        of a grid of this size (a neighbouring point of a sweep, on the same
        span) are taken as they are.  None for states of any other grid.
        A start vector only speeds the search up: the levels' indices are
        proven whatever it is.
        """
        n = self.grid.size
        sl = slice(self.inner + 1, n - 1)
        scale = self.grid.sqrt_jacobian[sl]  # z = u sqrt(b / (dr/dx)) on this matrix's rows
        out = []
        for u in previous:
            u = np.asarray(u, dtype=float)
            if u.ndim == 1 and u.size == n:
                fine = u
            elif u.ndim == 1 and 2 * (u.size - 1) == n - 1:
                fine = np.empty(n)
                fine[0::2] = u
                fine[1::2] = 0.5 * (u[:-1] + u[1:])
            else:
                return None
            out.append(fine[sl] * scale)
        return out
