"""Three-term linear recurrences run in compiled code.

Both solvers meet recurrences y[k+1] = alpha[k] y[k] - beta[k] y[k-1]: Numerov
shooting is one, and so is the eigenvector equation of a tridiagonal matrix
read row by row.  A Python loop over 10**4..10**5 points would dominate the
run time; a recurrence is a banded lower-triangular linear system, which
LAPACK's dtbtrs solves by forward substitution.
"""

from __future__ import annotations

import numpy as np
from scipy.linalg.lapack import dtbtrs

_CHUNK = 512


def three_term(alpha: np.ndarray, beta: np.ndarray | None, y_prev: float, y_cur: float) -> np.ndarray:
    """Run y[k+1] = alpha[k] y[k] - beta[k] y[k-1] from y[-1] = y_prev, y[0] = y_cur.

    Parameters
    ----------
    alpha : ndarray, shape (n,)
    beta : ndarray, shape (n,), or None for all ones
    y_prev, y_cur : float

    Returns
    -------
    ndarray, shape (n + 1,)
        y[0], ..., y[n], divided by one common positive factor chosen to stay
        far from overflow (signs and ratios are exact; absolute scale is not).
    """
    alpha = np.asarray(alpha, dtype=float)
    beta = np.ones_like(alpha) if beta is None else np.asarray(beta, dtype=float)
    out = np.empty(alpha.size + 1)
    out[0] = y_cur
    pos = 0
    prev, cur = y_prev, y_cur
    while pos < alpha.size:
        a = alpha[pos : pos + _CHUNK]
        b = beta[pos : pos + _CHUNK]
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
        scale = np.max(np.abs(z))
        if not np.isfinite(scale) or scale == 0.0:
            scale = 1.0
        out[: pos + 1] /= scale
        out[pos + 1 : pos + 1 + n] = z / scale
        prev, cur = out[pos + n - 1], out[pos + n]
        pos += n
    return out
