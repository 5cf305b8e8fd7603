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
from scipy.linalg.lapack import dstebz, dstein

from radsolve.core.recurrence import three_term
from radsolve.core.solvers.base import RadialSolver

# Bisection to the underflow limit: the matrix is strongly graded (huge
# entries near r = 0, small ones far out), and an absolute tolerance scaled
# by its norm would lose the small eigenvalues.  Graded Jacobi matrices are
# resolved to high relative accuracy by bisection with this setting.
_ABSOLUTE_TOLERANCE = 4.0 * np.finfo(float).tiny


def _clean_small_components(v: np.ndarray, d: np.ndarray, e: np.ndarray, value: float) -> None:
    """Recompute, in place, the tiny leading components of an eigenvector.

    Inverse iteration gives components with absolute rounding errors of
    ~1e-16 of the largest one, which swamps the r**(l+1) rise of u near the
    origin.  There the eigenvector equation read row by row is a recurrence
    that grows outward and is therefore stable; it is run from the wall up to
    the first component above 1e-6 of the peak and matched there.
    """
    peak = np.max(np.abs(v))
    big = np.nonzero(np.abs(v) > 1e-6 * peak)[0]
    if big.size == 0 or big[0] < 2:
        return
    j = int(big[0])
    # row i: e[i-1] v[i-1] + (d[i] - value) v[i] + e[i] v[i+1] = 0
    alpha = (value - d[:j]) / e[:j]
    beta = np.concatenate(([0.0], e[: j - 1] / e[1:j]))
    y = three_term(alpha, beta, 0.0, 1.0)  # v[0..j]
    if y[j] != 0.0 and np.all(np.isfinite(y)):
        v[: j + 1] = y * (v[j] / y[j])


#: Half-width of the window around a coarser grid's energy, relative to it:
#: far more than one grid halving moves a level after the coarsest grids.
_WINDOW = 0.05

#: Eigenvalues closer than this (relative) are inverse-iterated together and
#: orthogonalized against each other; the others one by one.
_CLUSTER_GAP = 1e-6


def _vectors(d: np.ndarray, e: np.ndarray, values: np.ndarray) -> np.ndarray:
    """Eigenvectors for ``values`` (ascending) by inverse iteration (LAPACK stein).

    LAPACK groups eigenvalues into clusters relative to the matrix norm, which
    for this graded matrix (entries ~1e20 near the origin) puts every level in
    one cluster and re-orthogonalizes each vector against all earlier ones:
    O(n k**2).  Only levels that are close relative to their own size can mix,
    so clusters are formed on that scale and each is a separate call.
    """
    n = d.size
    out = np.empty((n, values.size))
    isplit = np.zeros(n, dtype=np.int32)
    isplit[0] = n  # one block: the whole matrix
    iblock = np.ones(n, dtype=np.int32)
    start = 0
    while start < values.size:
        stop = start + 1
        while stop < values.size and values[stop] - values[stop - 1] <= _CLUSTER_GAP * max(
                abs(values[stop]), abs(values[stop - 1]), 1e-300):
            stop += 1
        chunk = values[start:stop]
        z, info = dstein(d, e, chunk, iblock, isplit)
        if info != 0:  # pragma: no cover - inverse iteration failing to converge
            raise RuntimeError(f"LAPACK dstein did not converge for {info} vector(s)")
        out[:, start:stop] = z[:, : chunk.size]
        start = stop
    return out


class FiniteDifference(RadialSolver):
    """Second-order finite differences on the mapped grid."""

    name = "fd"
    error_orders = (2, 4, 6, 8, 10)

    @classmethod
    def relative_rounding(cls, size: int) -> float:
        # Bisection on the graded matrix leaves noise growing like size**1.5:
        # measured as the spread between the eigenvalues of T and of T with
        # its rows reversed, ~4.5e-19 * size**1.5 on the hydrogen spectrum
        # (Z = 1 ... 92); three times that, and never below 1e-13.
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
        if d.size == 0:
            return 0
        # One Sturm count: LAPACK's bisection with a tolerance wider than any
        # interval stops after counting the eigenvalues in (-inf, energy].
        low = float(np.min(d) - 2.0 * np.max(np.abs(e), initial=0.0)) - 1.0
        if energy <= low:
            return 0
        m, *_rest, info = dstebz(d, e, 1, low, float(energy), 1, 1, np.inf, b"E")
        if info != 0:  # pragma: no cover - LAPACK refuses only malformed input
            raise RuntimeError(f"LAPACK dstebz failed (info = {info})")
        return int(m)

    def _eigenvalues(self, d, e, lo: int, hi: int, guesses) -> np.ndarray:
        """Eigenvalues number lo..hi: inside a window around ``guesses`` when it holds them, else by index.

        Bisection by index starts from the Gershgorin interval, which this
        graded matrix makes ~1e20 wide; a window around the coarser grid's
        energies needs a third of the steps.  The window's first index is
        confirmed by a Sturm count at its lower end, so a window that misses
        can only cost a second call, never a wrong level.
        """
        if guesses is not None and len(guesses) == hi - lo + 1 and np.all(np.isfinite(guesses)):
            g = np.asarray(guesses, dtype=float)
            scale = max(abs(g[0]), abs(g[-1]), 1e-300)
            vl, vu = g[0] - _WINDOW * max(abs(g[0]), 1e-3 * scale), g[-1] + _WINDOW * max(abs(g[-1]), 1e-3 * scale)
            first = self.count_below(vl)
            # Only a window that holds the wanted levels and few others is worth
            # bisecting (the coarser grid's energies of unbound box states can
            # be huge, and a window up to them would hold thousands of levels).
            if first <= lo and hi + 1 <= self.count_below(vu) <= first + 2 * (hi - lo + 1) + 8:
                m, w, *_rest, info = dstebz(d, e, 1, vl, vu, 1, 1, _ABSOLUTE_TOLERANCE, b"E")
                if info == 0 and first + m >= hi + 1:
                    self.window_hits = getattr(self, "window_hits", 0) + 1
                    return np.sort(w[:m])[lo - first : hi - first + 1]
            self.window_misses = getattr(self, "window_misses", 0) + 1
        return eigh_tridiagonal(d, e, eigvals_only=True, select="i", select_range=(lo, hi),
                                lapack_driver="stebz", tol=_ABSOLUTE_TOLERANCE)

    def energies(self, indices: Sequence[int], guesses=None) -> np.ndarray:
        """The energies of :meth:`levels` alone (planning needs no eigenvectors, which cost as much again)."""
        d, e, _ = self._cached_matrix()
        return self._energies(d, e, list(indices), guesses)

    def _energies(self, d, e, indices: list[int], guesses) -> np.ndarray:
        if max(indices) >= d.size:
            raise ValueError(f"level {max(indices)} asked of a matrix of size {d.size}")
        lo, hi = min(indices), max(indices)
        window = None
        if guesses is not None and len(guesses) == len(indices) and indices == list(range(lo, hi + 1)):
            window = guesses
        values = self._eigenvalues(d, e, lo, hi, window)
        return values[[i - lo for i in indices]]

    def levels(self, indices: Sequence[int], guesses=None) -> tuple[np.ndarray, np.ndarray]:
        indices = list(indices)
        d, e, b = self._cached_matrix()
        values = self._energies(d, e, indices, guesses)
        vectors = _vectors(d, e, values)
        for j, value in enumerate(values):
            _clean_small_components(vectors[:, j], d, e, value)
        w = (vectors / np.sqrt(b)[:, None]).T
        return values, self.to_u(w, self.inner + 1)
