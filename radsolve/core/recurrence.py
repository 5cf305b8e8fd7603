"""Three-term linear recurrences run in compiled code.

Both solvers meet recurrences y[k+1] = alpha[k] y[k] - beta[k] y[k-1]: Numerov
shooting is one, and so is the eigenvector equation of a tridiagonal matrix
read row by row.  A Python loop over 10**4..10**5 points would dominate the
run time; a recurrence is a banded lower-triangular linear system, which
LAPACK's dtbtrs solves by forward substitution.
"""

from __future__ import annotations

import numpy as np
import math

from scipy.linalg.lapack import dtbtrs

_CHUNK = 8192
#: Largest growth (natural log) allowed within one chunk.
_GROWTH = 600.0
_GROWTH_FACTOR = math.exp(_GROWTH)


def three_term(alpha: np.ndarray, beta: np.ndarray | None, y_prev: float, y_cur: float,
               local: bool = False):
    """Run y[k+1] = alpha[k] y[k] - beta[k] y[k-1] from y[-1] = y_prev, y[0] = y_cur.

    Parameters
    ----------
    alpha : ndarray, shape (n,)
    beta : ndarray, shape (n,), or None for all ones
    y_prev, y_cur : float

    local : bool
        Return each chunk on its own scale (see below) instead of one common
        one, so that nothing underflows however much y grows.

    Returns
    -------
    ndarray, shape (n + 1,)
        y[0], ..., y[n], divided by one common positive factor chosen to stay
        far from overflow (signs and ratios are exact; absolute scale is not;
        values far below the largest may underflow to zero).
    (ndarray, ndarray) when ``local``
        ``(z, log_scale)`` with y = z * exp(log_scale) pointwise: every sign
        is exact, and so is every ratio of neighbours.
    """
    alpha = np.asarray(alpha, dtype=float)
    unit_beta = beta is None
    beta = np.ones_like(alpha) if unit_beta else np.asarray(beta, dtype=float)
    out = np.empty(alpha.size + 1)
    out[0] = y_cur
    logs = np.zeros(alpha.size + 1)
    if alpha.size == 0:
        return (out, logs) if local else out
    # First in chunks of _CHUNK steps, accepted when no chunk actually grew by more
    # than e**_GROWTH (the usual case: one call per chunk); otherwise again in chunks
    # cut where the growth bound |alpha| + |beta| per step allows e**_GROWTH at most,
    # whatever the potential (no overflow, no underflow against a chunk's largest value).
    quick = list(range(0, alpha.size, _CHUNK)) + [alpha.size]
    if _run_chunks(alpha, beta, quick, y_prev, y_cur, local, out, logs, check=True):
        return (out, logs) if local else out
    growth = np.cumsum(np.log1p(np.abs(alpha) + (1.0 if unit_beta else np.abs(beta))))
    ends = [0]
    while ends[-1] < alpha.size:
        start = ends[-1]
        base = growth[start - 1] if start > 0 else 0.0
        stop = int(np.searchsorted(growth, base + _GROWTH, side="right"))
        ends.append(min(max(stop, start + 1), start + _CHUNK, alpha.size))
    out[0] = y_cur
    logs[:] = 0.0
    _run_chunks(alpha, beta, ends, y_prev, y_cur, local, out, logs, check=False)
    return (out, logs) if local else out


def _run_chunks(alpha, beta, ends, y_prev, y_cur, local: bool, out, logs, check: bool) -> bool:
    """Fill ``out`` (and ``logs``) chunk by chunk between ``ends``; with ``check``, stop and
    return False at the first chunk whose largest value exceeds e**_GROWTH (or is not finite)."""
    prev, cur = y_prev, y_cur
    log_total = 0.0
    for pos, end in zip(ends[:-1], ends[1:]):
        a = alpha[pos:end]
        b = beta[pos:end]
        n = a.size
        band = np.zeros((3, n))
        band[0] = 1.0
        band[1, : n - 1] = -a[1:]
        band[2, : n - 2] = b[2:]
        rhs = np.zeros((n, 1))
        rhs[0, 0] = a[0] * cur - b[0] * prev
        if n > 1:
            rhs[1, 0] = -b[1] * cur
        z = dtbtrs(band, rhs, uplo="L", diag="U")[0][:, 0]
        scale = float(np.max(np.abs(z)))
        if check and not scale <= _GROWTH_FACTOR * max(abs(prev), abs(cur)):
            return False
        if not math.isfinite(scale) or scale == 0.0:
            scale = 1.0
        if local:
            # z continues from (prev, cur) on their scale: put this chunk on its own.
            log_total += math.log(scale)
            out[pos + 1 : pos + 1 + n] = z / scale
            logs[pos + 1 : pos + 1 + n] = log_total
            prev = z[n - 2] / scale if n > 1 else cur / scale
            cur = z[n - 1] / scale
            continue
        out[: pos + 1] /= scale
        out[pos + 1 : pos + 1 + n] = z / scale
        prev, cur = out[pos + n - 1], out[pos + n]
    return True
