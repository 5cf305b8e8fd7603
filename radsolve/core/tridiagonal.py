"""Selected eigenpairs of a symmetric tridiagonal (Jacobi) matrix, by index.

The finite-difference matrix of the radial equation is a Jacobi matrix
(negative off-diagonal), strongly graded: ~1e20 on the diagonal near the
origin, ~1 far out.  Its eigenvalue number k (from the bottom) is the level
with k nodes, so every level must be found *by its index*.  Two ways are used:

- **Index bisection** (LAPACK ``stebz``, Sturm counts): robust, and accurate
  to high relative precision on graded matrices, but every level costs ~50
  (narrow range) to ~130 (whole Gershgorin interval) Sturm counts.
- **Predicted windows** (:func:`eigenpairs` with ``predictions``): the coarser
  grids of a refinement predict each level on the next grid very well
  (Richardson), so a Rayleigh quotient iteration started there converges in
  two or three tridiagonal solves (LAPACK ``gtsv``, O(n)), and its last solve
  *is* the eigenvector.  Each converged value carries a residual bound rho
  (some eigenvalue lies within rho of it), and with it a narrow window.
  The indices are proven by two Sturm counts, below the first and above the
  last window, which must differ by the number of windows (:func:`_proven`);
  when they do not (a prediction that converged to a neighbour, a
  near-degenerate pair), each window is tried alone (two counts each,
  :func:`_proven_each`) and the levels whose windows fail are found by index
  bisection.  A window can cost a second try, never a wrong level.  Where a
  quotient's rounding noise is not well below the precision asked, the value
  is bisected inside its proven window (~25 Sturm steps instead of ~130),
  which gives it bisection's full relative accuracy.

Eigenvectors come from inverse iteration with ``gtsv`` at the converged
value.  Its back substitution runs the recurrence of the eigenvector equation
in the direction in which the state decays (towards the origin and towards
the wall), so the tiny components near both ends come out with small
*relative* errors, which the wall and origin error terms and the observables
need.  Levels closer than :data:`CLUSTER_GAP` (relative) are inverse-iterated
together and orthogonalized (LAPACK ``stein``).

:class:`EigenStatistics` counts what was done (predictions confirmed, windows
that missed, bisections, Sturm counts, solves); the benchmarks print it.
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass, fields

import numpy as np
from scipy.linalg import eigh_tridiagonal, eigvalsh_tridiagonal
from scipy.linalg.lapack import dgtsv, dpttrf, dstebz, dstein

#: Bisection to the underflow limit: an absolute tolerance scaled by the norm
#: of this graded matrix would lose the small eigenvalues.
ABSOLUTE_TOLERANCE = 4.0 * np.finfo(float).tiny
#: Eigenvalues closer than this (relative) are inverse-iterated together and
#: orthogonalized against each other; the others one by one.
CLUSTER_GAP = 1e-6
#: Seed of the start vector of a search without a hint (fixed: results do not vary from run to run).
_START_SEED = 20261202
#: Rayleigh quotient iterations at most (cubic convergence: two or three
#: suffice from a prediction good to 1e-2).
_MAX_RAYLEIGH = 6
#: A Rayleigh quotient's rounding noise, in units of :func:`rounding_sensitivity`:
#: measured against bisection on the same matrices (hydrogen, oscillator,
#: Morse, Yukawa, Lennard-Jones, inverse-square core), the quotients differ by
#: at most 8 eps * rms |T_ij z_i z_j|, bisection itself by 6.4.
RAYLEIGH_NOISE_FACTOR = 2.0
#: A Rayleigh quotient is kept when its noise is below this share of the precision asked.
_NOISE_SHARE_OF_PRECISION = 0.1
#: The bisection window around a Rayleigh quotient: at least this wide (relative),
#: far beyond the quotient's rounding noise -- except for a value near zero, whose
#: window is then as wide as that noise (:func:`eigenpairs`).
_POLISH_WINDOW = 1e-9
#: Computed residual bounds are widened by this factor before they prove anything.
_RESIDUAL_SAFETY = 8.0
#: A Rayleigh iteration may stop once its residual bound is this share of the
#: precision asked (the value is then within it of the eigenvalue).
_RESIDUAL_SHARE_OF_PRECISION = 1e-2
#: A second (or later) Rayleigh step this small (relative) ends the iteration.
_SETTLED_STEP = 1e-8
#: The largest relative residual bound of an accepted Rayleigh quotient.
_RESIDUAL = 1e-8
#: A Rayleigh step this small (relative) is at the rounding level.
_TINY_STEP = 64.0 * float(np.finfo(float).eps)


@dataclass
class EigenStatistics:
    """What the eigenvalue searches of one solve did (a debug statistic).

    ``confirmed``: levels whose predicted window was proven by Sturm counts
    (``polished`` of them bisected inside it, where the precision asked
    needed more than a Rayleigh quotient gives);
    ``missed``: levels of windows that were not (found again by bisection);
    ``bisected``: levels found by index without a prediction (bisection, or all
    eigenvalues of a small matrix when no vector is wanted);
    ``sturm_counts``: single Sturm counts; ``solves``: tridiagonal solves.
    """

    confirmed: int = 0
    polished: int = 0
    missed: int = 0
    bisected: int = 0
    sturm_counts: int = 0
    solves: int = 0

    def add(self, other: "EigenStatistics") -> None:
        for f in fields(self):
            setattr(self, f.name, getattr(self, f.name) + getattr(other, f.name))

    def as_dict(self) -> dict:
        return {f.name: getattr(self, f.name) for f in fields(self)}


#: The rounding noise of an eigenvalue, in units of eps * rms_ij |T_ij z_i z_j| (see
#: :func:`rounding_sensitivity`).
NOISE_FACTOR = 8.0


def rounding_sensitivity(d: np.ndarray, e: np.ndarray, vectors: np.ndarray) -> np.ndarray:
    """The rounding noise of each eigenvalue, from its unit eigenvector z (columns).

    When every entry of T carries an independent relative rounding error
    (as forming T, and the Sturm counts of bisection, do), the eigenvalue
    moves by sum_ij delta_ij T_ij z_i z_j to first order: a random sum whose
    size is eps * sqrt(sum_ij (T_ij z_i z_j)**2).  On the hydrogen (Z = 1, 92;
    3 and 2 dimensions), oscillator, Morse, Yukawa and inverse-square-core
    matrices, eight draws of T with every entry perturbed by a random ulp
    moved the eigenvalues by 1 to 6.4 times that; :data:`NOISE_FACTOR` times
    it is returned.  Unlike a rule in the matrix size alone, it follows the
    grading (a grid reaching deep into r -> 0 makes the kinetic entries, and
    the noise of an s state, large).
    """
    # sum_i (z_i**2 d_i)**2 and sum_i (z_i z_i+1 e_i)**2 as products with d**2, e**2,
    # squaring in place (these arrays are as large as all the states together)
    fourth = vectors * vectors
    np.square(fourth, out=fourth)
    pairs = vectors[:-1] * vectors[1:]
    np.square(pairs, out=pairs)
    total = (d * d) @ fourth
    total += 2.0 * ((e * e) @ pairs)
    return NOISE_FACTOR * np.finfo(float).eps * np.sqrt(total)


#: Negative pivots a count by pivot runs (:func:`_count_by_pivots`) follows before
#: it leaves the count to stebz (each one restarts the factorization).
_PIVOT_RESTARTS = 24
_TINY = float(np.finfo(float).tiny)


def sturm_count(d: np.ndarray, e: np.ndarray, x: float, stats: EigenStatistics | None = None) -> int:
    """Number of eigenvalues of tridiag(e, d, e) below ``x`` (one Sturm count; one
    exactly at ``x`` counts, as in LAPACK stebz)."""
    if d.size == 0:
        return 0
    if stats is not None:
        stats.sturm_counts += 1
    count = _count_by_pivots(d, e, x)
    if count is not None:
        return count
    low = float(np.min(d) - 2.0 * np.max(np.abs(e), initial=0.0)) - 1.0
    if x <= low:
        return 0
    # stebz with a tolerance wider than any interval stops after counting.
    m, *_rest, info = dstebz(d, e, 1, low, float(x), 1, 1, np.inf, b"E")
    if info != 0:  # pragma: no cover - LAPACK refuses only malformed input
        raise RuntimeError(f"LAPACK dstebz failed (info = {info})")
    return int(m)


def _count_by_pivots(d: np.ndarray, e: np.ndarray, x: float) -> int | None:
    """The Sturm count as the number of negative pivots of T - x = L D L**T, or None.

    LAPACK pttrf runs exactly the Sturm recurrence p_i = d_i - x - e_(i-1)**2 / p_(i-1),
    stopping at the first pivot that is not positive; the count goes on from
    there, the next pivot formed by hand (a zero pivot taken as a tiny negative
    one, as stebz does).  The levels wanted lie at the bottom of the spectrum,
    so a count passes few negative pivots: one pass over the matrix in a few
    calls, where stebz makes three.  None (the caller counts with stebz) after
    :data:`_PIVOT_RESTARTS` negative pivots, or when a pivot is not a number.
    """
    n = d.size
    pivots = d - x
    offdiagonal = e.copy()
    count = start = 0
    for _ in range(_PIVOT_RESTARTS + 1):
        if start == n - 1:  # one row left (pttrf wants at least one off-diagonal entry)
            last = float(pivots[-1])
            return count + (last <= 0.0) if math.isfinite(last) else None
        # in place on the tails of the two working copies: nothing is copied again
        _, _, info = dpttrf(pivots[start:], offdiagonal[start:], overwrite_d=1, overwrite_e=1)
        if info == 0:
            return count if math.isfinite(pivots[-1]) else None
        k = start + info - 1
        p = float(pivots[k])
        if not p <= 0.0:  # pragma: no cover - pttrf stops only at a pivot <= 0
            return None
        count += 1
        if k == n - 1:
            return count
        ek = float(offdiagonal[k])  # not yet touched: the factorization stopped before it
        pivots[k + 1] -= ek * ek / min(p, -_TINY * max(1.0, ek * ek))
        if not math.isfinite(pivots[k + 1]):
            return None
        start = k + 1
    return None


def none_below(d: np.ndarray, e: np.ndarray, x: float, stats: EigenStatistics | None = None) -> bool:
    """Whether no eigenvalue of tridiag(e, d, e) lies below ``x``: T - x factors as
    L D L**T with positive pivots (LAPACK pttrf).  Its pivots are the Sturm count's
    recurrence, stopped at the first one not positive: one pass, where a count
    through stebz makes two and more."""
    if d.size == 0:
        return True
    if stats is not None:
        stats.sturm_counts += 1
    if d.size == 1:
        return bool(d[0] - x > 0.0)
    pivots, _, info = dpttrf(d - x, e)
    # a NaN entry passes the pivot test but reaches the last pivot: no proof then
    return info == 0 and bool(np.isfinite(pivots[-1]))


#: Energies without vectors come from all eigenvalues (LAPACK sterf, ~n**2 work)
#: rather than bisection (~110 Sturm counts of n rows per level) while the matrix
#: has fewer rows than this many per level asked: the two cost the same there.
_ALL_VALUES_ROWS_PER_LEVEL = 50


def lowest_values(d: np.ndarray, e: np.ndarray, lo: int, hi: int) -> np.ndarray:
    """Eigenvalues number lo..hi (ascending), for when no vector is needed: from all of them
    (LAPACK sterf, QR without vectors) for a small matrix, else by index bisection.  On
    these graded matrices sterf agrees with bisection to ~1e-14 relative (not to bisection's
    last bit: the values that need it come from :func:`eigenpairs` with vectors)."""
    if d.size < _ALL_VALUES_ROWS_PER_LEVEL * (hi + 1):
        values = eigvalsh_tridiagonal(d, e, lapack_driver="sterf")
        if np.all(np.isfinite(values)):
            return values[lo : hi + 1]
    return bisect_by_index(d, e, lo, hi)


def bisect_by_index(d: np.ndarray, e: np.ndarray, lo: int, hi: int) -> np.ndarray:
    """Eigenvalues number lo..hi (ascending) by LAPACK index bisection."""
    return eigh_tridiagonal(d, e, eigvals_only=True, select="i", select_range=(lo, hi),
                            lapack_driver="stebz", tol=ABSOLUTE_TOLERANCE)


def _solve_shifted(d, e, x: float, rhs: np.ndarray) -> np.ndarray:
    """z with (T - x) z = rhs (LAPACK gtsv, partial pivoting)."""
    _, _, _, z, info = dgtsv(e, d - x, e, rhs)
    if info > 0:  # T - x singular to working precision: x is an eigenvalue; shift by an ulp
        _, _, _, z, info = dgtsv(e, d - x * (1.0 + 4.0 * np.finfo(float).eps) - 1e-300, e, rhs)
    return z


def _start_vector(n: int, row) -> np.ndarray:
    """e_row where a coarser grid says the state is large; else positive entries of
    pseudo-random size (fixed seed), which no state is orthogonal to in practice --
    unlike a unit vector at a row where the state happens to be negligible, or a
    constant vector, which every state odd about the middle of a symmetric matrix is
    orthogonal to."""
    if row is None:
        return _default_start(n).copy()
    start = np.zeros(n)
    start[int(row)] = 1.0
    return start


@functools.lru_cache(maxsize=16)
def _default_start(n: int) -> np.ndarray:
    start = np.random.default_rng(_START_SEED).uniform(0.5, 1.5, n)
    start /= np.linalg.norm(start)
    start.flags.writeable = False
    return start


def _rayleigh(d, e, x: float, row, stats: EigenStatistics, start=None, enough: float = 0.0):
    """Rayleigh quotient iteration from ``x``: (value, unit vector, residual bound).

    ``start``: a start vector (an interpolated state of a coarser grid), else
    e_row or the default of :func:`_start_vector`.  ``enough``: a residual
    bound at which the iteration may stop after any step -- the quotient is
    then within that bound of an eigenvalue (the residual bound of a
    symmetric matrix), which the caller's precision does not resolve.
    """
    size = float(start @ start) if start is not None and start.size == d.size else 0.0
    if 0.0 < size < math.inf:  # finite and not all zero
        rhs = start * (1.0 / math.sqrt(size))
    else:
        rhs = _start_vector(d.size, row)
    rho = math.inf
    first = True
    for _ in range(_MAX_RAYLEIGH):
        _, _, _, y, info = dgtsv(e, d - x, e, rhs, overwrite_d=1)  # d - x is ours to overwrite
        stats.solves += 1
        size = float(y @ y)
        if info > 0 or not math.isfinite(size) or size == 0.0:
            return x, None, math.inf  # exactly singular or overflowing: let bisection decide
        overlap = float(rhs @ y)
        step = overlap / size
        x += step
        # ||(T - x) y|| / ||y|| with x the new quotient: sqrt(1 - overlap**2/|y|**2) / |y| <= 1/|y|
        rho = math.sqrt(max(1.0 - overlap * overlap / size, 0.0) / size)
        y *= 1.0 / math.sqrt(size)  # y is the solver's own output array
        rhs = y
        # Converged: the step is at the rounding level, or no longer shrinks as a
        # converging iteration's does (cubically), which only rounding noise does;
        # or the residual already bounds the value within what is asked.
        if abs(step) <= _TINY_STEP * abs(x) or (not first and abs(step) <= _SETTLED_STEP * abs(x)) or rho <= enough:
            # Convergence is cubic: after a second step this small the next would be below
            # rounding, and the vector, iterated twice with shifts this close, is as good as it gets.
            break
        first = False
    else:
        return x, None, math.inf  # did not settle: let bisection decide
    if rho > _RESIDUAL * abs(x):
        # The value is a Rayleigh quotient, exact to ~rho**2 / gap: a large
        # residual leaves it less accurate than bisection would be.
        return x, None, math.inf
    return x, rhs, max(rho, _TINY_STEP * abs(x))


def _proven(d, e, lo: int, hi: int, windows: list, stats: EigenStatistics) -> bool:
    """The windows prove that the j-th holds eigenvalue number lo + j, at most one each.

    They must be disjoint and ascending, and the Sturm counts below the first
    and above the last must differ by their number.  Each window holds an
    eigenvalue (a Rayleigh quotient +- its widened residual bound does), so
    with k disjoint windows and exactly k eigenvalues between their ends,
    each holds exactly one, in order.
    """
    for (_, top), (bottom, _) in zip(windows[:-1], windows[1:]):
        if top >= bottom:
            return False
    return (_count_is(d, e, windows[0][0], lo, stats)
            and sturm_count(d, e, windows[-1][1], stats) == hi + 1)


def _count_is(d, e, x: float, count: int, stats: EigenStatistics) -> bool:
    """Exactly ``count`` eigenvalues lie below ``x`` (for none, the cheaper :func:`none_below`)."""
    return none_below(d, e, x, stats) if count == 0 else sturm_count(d, e, x, stats) == count


def _bisected_in(d, e, window: tuple, stats: EigenStatistics, noise: float = 0.0) -> float | None:
    """The eigenvalue inside ``window`` by bisection (LAPACK stebz), or None if it holds not exactly one.

    ``noise``: the rounding noise of bisection's value on this matrix; the
    bisection stops once the interval is below half of it (further steps only
    move the value within its noise)."""
    low, high = window
    m, w, *_rest, info = dstebz(d, e, 1, low, high, 1, 1, max(ABSOLUTE_TOLERANCE, 0.5 * noise), b"E")
    stats.sturm_counts += 2
    return float(w[0]) if info == 0 and m == 1 else None


def vectors_at(d: np.ndarray, e: np.ndarray, values: np.ndarray,
               stats: EigenStatistics | None = None) -> np.ndarray:
    """Unit eigenvectors (columns) for accurate eigenvalues ``values`` (ascending)."""
    stats = stats if stats is not None else EigenStatistics()
    n, k = d.size, values.size
    out = np.empty((n, k), order="F")  # filled column by column
    guess = _start_vector(n, None)  # one start for every level (it is the same each time)
    start = 0
    while start < k:
        stop = start + 1
        while stop < k and values[stop] - values[stop - 1] <= CLUSTER_GAP * max(
                abs(values[stop]), abs(values[stop - 1]), 1e-300):
            stop += 1
        if stop - start > 1:
            out[:, start:stop] = _stein(d, e, values[start:stop])
        else:
            z = _solve_shifted(d, e, float(values[start]), guess)
            stats.solves += 1
            out[:, start] = z / np.linalg.norm(z)
        start = stop
    return out


def _stein(d, e, values) -> np.ndarray:
    """Orthonormal eigenvectors of a cluster of close eigenvalues (LAPACK stein)."""
    n = d.size
    isplit = np.zeros(n, dtype=np.int32)
    isplit[0] = n
    iblock = np.ones(n, dtype=np.int32)
    z, info = dstein(d, e, values, iblock, isplit)
    if info != 0:  # pragma: no cover - inverse iteration failing to converge
        raise RuntimeError(f"LAPACK dstein did not converge for {info} vector(s)")
    return z[:, : values.size]


def eigenpairs(d: np.ndarray, e: np.ndarray, lo: int, hi: int, predictions=None, *, vectors: bool = True,
               rows=None, precision=None, stats: EigenStatistics | None = None, starts=None):
    """Eigenvalues number lo..hi of tridiag(e, d, e), their unit eigenvectors and rounding noise.

    ``predictions`` (hi - lo + 1 values, ascending) start a Rayleigh quotient
    iteration for each level; the indices are then proven by two Sturm counts
    (:func:`_proven`), and index bisection takes over when they are not.
    ``rows``: for each level a row where its state is large (from a coarser
    grid), or None.  ``starts``: for each level a start vector (its state on a
    coarser grid, interpolated), or None; it takes the place of the row.
    ``precision``: the absolute accuracy each value needs
    (None: as accurate as bisection).  A Rayleigh quotient, computed with a
    pivoted solve, is noisier than bisection on this graded matrix
    (:data:`RAYLEIGH_NOISE_FACTOR`); where its noise is not well below the
    precision asked, the value is bisected inside its proven window.

    Returns ``(values, vectors, noise)``: ``vectors`` (n, hi - lo + 1) or
    None when not asked for; ``noise`` each value's rounding noise
    (:func:`rounding_sensitivity`), or None without vectors.
    """
    stats = stats if stats is not None else EigenStatistics()
    count = hi - lo + 1
    if predictions is None or len(predictions) != count or not np.all(np.isfinite(predictions)):
        stats.bisected += count
        if not vectors:
            return lowest_values(d, e, lo, hi), None, None
        values = bisect_by_index(d, e, lo, hi)
        vecs = vectors_at(d, e, values, stats)
        return values, vecs, rounding_sensitivity(d, e, vecs)
    vecs = np.zeros((d.size, count), order="F")  # filled column by column
    values = np.full(count, np.nan)
    windows: list = [None] * count
    if precision is None:
        needed = None
    elif np.ndim(precision) == 0:
        needed = [float(precision)] * count
    else:
        needed = [float(p) for p in precision]
        if len(needed) != count:
            raise ValueError(f"{len(needed)} precisions for {count} levels")
    residuals = [math.inf] * count
    for j, guess in enumerate(predictions):
        enough = 0.0 if needed is None or not math.isfinite(needed[j]) else _RESIDUAL_SHARE_OF_PRECISION * needed[j]
        x, z, rho = _rayleigh(d, e, float(guess), None if rows is None else rows[j], stats,
                              start=None if starts is None else starts[j], enough=enough)
        if z is not None:
            values[j], vecs[:, j], residuals[j] = x, z, rho
    noise = RAYLEIGH_NOISE_FACTOR * rounding_sensitivity(d, e, vecs)
    for j in range(count):
        if math.isfinite(residuals[j]):
            # Never narrower than the value's rounding noise: the Sturm counts at the ends
            # are exact only for a matrix perturbed by rounding, whose eigenvalue moves as much
            # (a level just below threshold in a large box: the counts missed a window 1e-9 wide).
            x = float(values[j])
            half = max(_RESIDUAL_SAFETY * residuals[j], _POLISH_WINDOW * abs(x), float(noise[j]))
            windows[j] = (x - half, x + half)
    if None not in windows and _proven(d, e, lo, hi, windows, stats):
        good = np.ones(count, dtype=bool)
    else:
        good = _proven_each(d, e, lo, windows, stats)
    for j in range(count):
        if good[j] and (needed is None or noise[j] > _NOISE_SHARE_OF_PRECISION * needed[j]):
            polished = _bisected_in(d, e, windows[j], stats, noise[j] / RAYLEIGH_NOISE_FACTOR)
            if polished is None:
                good[j] = False
                continue
            values[j] = polished
            noise[j] /= RAYLEIGH_NOISE_FACTOR
            stats.polished += 1
    confirmed = int(np.count_nonzero(good))
    stats.confirmed += confirmed
    stats.missed += count - confirmed
    for j in np.flatnonzero(~good):
        # the window missed or was not proven: this level by index, never a neighbour
        values[j] = bisect_by_index(d, e, lo + j, lo + j)[0]
        vecs[:, j] = vectors_at(d, e, values[j : j + 1], stats)[:, 0]
        noise[j] = rounding_sensitivity(d, e, vecs[:, j : j + 1])[0]
    if vectors and count > 1 and any(values[j + 1] - values[j] <= CLUSTER_GAP * abs(values[j + 1])
                                     for j in range(count - 1)):
        vecs = vectors_at(d, e, values, stats)  # close pairs: orthogonalized together
        noise = rounding_sensitivity(d, e, vecs)
    return values, (vecs if vectors else None), (noise if vectors else None)


def _proven_each(d, e, lo: int, windows: list, stats: EigenStatistics) -> np.ndarray:
    """For each window, whether it holds exactly eigenvalue number lo + j (two Sturm counts each)."""
    good = np.zeros(len(windows), dtype=bool)
    for j, window in enumerate(windows):
        if window is not None:
            good[j] = (_count_is(d, e, window[0], lo + j, stats)
                       and sturm_count(d, e, window[1], stats) == lo + j + 1)
    return good
