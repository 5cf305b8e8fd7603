"""Richardson extrapolation in the grid step, with the order checked against the data.

Every quantity radsolve computes on a sequence of grids of steps h, h/2,
h/4, ... (energies, observables, critical parameter values) is extrapolated
to h = 0 here.  The error expansion a method promises (``orders``: h**2,
h**4, ... for finite differences) holds only for a smooth potential with its
breakpoints on the grid; a jump of V or of its slope on a grid point brings
Numerov's down to h**2, h**4, ... (``RadialSolver.orders``; some steps add
h**3, which the columns' orders then show), with an h**2 term as small as
the state is at the breakpoint; a jump between grid points
destroys the expansion.  So the
observed order is read off the data and compared with the promise, and
:func:`extrapolate` says (``order_ok``) whether the data show an order the
extrapolation may rely on.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

_EPS = float(np.finfo(float).eps)
#: The observed order may differ from the expected one by this much.
ORDER_TOLERANCE = 0.3
#: A lower whole-number order (a jump on the grid) must be this close to an integer ...
_INTEGER_TOLERANCE = 0.2
#: Changes below this multiple of the rounding floor are noise, not an order.
NOISE_FACTOR = 1e3
#: The settled estimate (see :func:`extrapolate`) is this many times the
#: next Richardson correction.
SETTLED_SAFETY = 3.0
#: ... and needs its last change this many rounding floors above the noise ...
SETTLED_ABOVE_NOISE = 30.0
#: ... and each lower column's observed order this close to its promised one ...
SETTLED_ORDER_TOLERANCE = 0.5
#: ... or this close, while the column itself has only two entries (its order unseen).
SETTLED_TRUST_TOLERANCE = 0.1


@dataclass(frozen=True)
class Extrapolation:
    """The result of :func:`extrapolate`.

    Attributes
    ----------
    value : float
        The extrapolated value.
    estimate : float
        Its estimated absolute error: the larger of the last two corrections
        of the Richardson table (common practice), never below the rounding
        floor; inf with fewer than three grids.
    observed : float or None
        The order log2(d1/d2) of the last three raw values.
    order_ok : bool
        True when the data show the expected leading order (or a whole-number
        lower order seen on two successive triples, as a jump on the grid
        gives), or the changes are rounding noise.
    """

    value: float
    estimate: float
    observed: float | None
    order_ok: bool


def _observed(e, end: int) -> float | None:
    d1, d2 = abs(e[end - 2] - e[end - 1]), abs(e[end - 1] - e[end])
    return math.log2(d1 / d2) if d1 > 0 and d2 > 0 else None


def _last_orders(table: list) -> tuple[list, float | None]:
    """Each column's order on its last three entries (None with fewer), and the raw
    values' order on the triple before their last one (None with fewer than four)."""
    seen = [_observed(column, len(column) - 1) if len(column) >= 3 else None for column in table]
    raw = table[0]
    before = _observed(raw, len(raw) - 2) if len(raw) >= 4 else None
    return seen, before


def _close(observed: float | None, order: int, tolerance: float) -> bool:
    return observed is not None and abs(observed - order) < tolerance


def _settled_below(table: list, use: tuple, j: int, seen: list, before: float | None,
                   promised: bool = True) -> bool:
    """Every column below j shows its promised order -- the raw values on their last two
    triples (four grids at least), each higher column on its last triple -- and so does
    column j itself once it has three entries.  While column j has only two (its order
    is not seen, only inferred from the columns below), those must show theirs closely
    (:data:`SETTLED_TRUST_TOLERANCE`): a table not yet in its asymptotic regime can show
    orders within the looser tolerance and still have a column j converging far more
    slowly than promised (a deep double well, Numerov: orders 4.0, 6.3, 8.0 below, 4.6
    in the column, an estimate 11 times below the error).  Only under the expansion the
    method promises (``promised``): under a lower order read off the data, which powers
    follow it is itself a guess, and a column's order must be seen (a kink on the grid,
    Numerov: h**2 seen, h**3 assumed next and even seen, 2.99, by chance on four grids,
    while the series runs in even powers; the column eliminating h**3 then changed by a
    tenth of its error, an estimate 38 times below it).  ``seen``, ``before``: from
    :func:`_last_orders`."""
    if len(table[j]) < 3 and not promised:
        return False
    tolerance = SETTLED_ORDER_TOLERANCE if len(table[j]) >= 3 else SETTLED_TRUST_TOLERANCE
    if len(table[0]) < 4 or not (_close(seen[0], use[0], tolerance) and _close(before, use[0], tolerance)):
        return False
    if len(table[j]) >= 3 and not _close(seen[j], use[j], SETTLED_ORDER_TOLERANCE):
        return False
    return all(_close(seen[i], use[i], tolerance) for i in range(1, j))


def extrapolate(values, orders: tuple[int, ...], relative_rounding: float = 1e-14,
                confirm_lower_order: bool = True, settled: bool = False) -> Extrapolation:
    """Extrapolate values on grids of steps h, h/2, h/4, ... to h = 0.

    ``orders`` are the powers of h the method promises.  When the observed
    leading order (from the last three grids) differs from the promised
    one, a whole-number lower order seen on the last two triples (a jump on
    a grid point) is eliminated with all integer powers above it; otherwise
    one conservative step is taken and ``order_ok`` is False.
    ``confirm_lower_order=False`` accepts a whole-number lower order from the
    last triple alone (the first release's rule).

    The estimate of a column's newest entry is the larger of its last two
    corrections (common practice).  The first of them is the error of the
    *lower* column's entry, so it overstates the error of the value reported
    by the ratio of two successive error terms (three to four orders of
    magnitude on a smooth spectrum).  With ``settled=True`` a column whose
    lower columns all show their promised orders (the raw values on their
    last two triples, so at least four grids, and each higher column on its
    last triple: the error series is in its asymptotic regime, term by term)
    is given
    :data:`SETTLED_SAFETY` times its own next correction,
    |c[-1] - c[-2]| / (2**p - 1), p the next order: the standard estimate of
    the error of a Richardson value whose next term is known to dominate.
    Only while that change stands well above the rounding floor
    (:data:`SETTLED_ABOVE_NOISE` times it): a change made of noise says
    nothing about the next term.  The value then reported is the next
    column's (this one plus that correction): in the asymptotic regime the
    correction removes most of the error, and in any case it is a third of
    the estimate, so the estimate still covers it.
    """
    # plain floats: a table of a few entries per level and grid, where array overhead would dominate
    e = [float(v) for v in (values if isinstance(values, list) else np.ravel(values))]
    k = len(e)
    floor = max(64.0 * _EPS, relative_rounding) * abs(e[-1])
    if k < 3:
        return Extrapolation(float(e[-1]), math.inf, None, False)
    d2 = abs(e[-2] - e[-1])
    observed = _observed(e, k - 1)
    noisy = d2 < NOISE_FACTOR * floor
    earlier = _observed(e, k - 2) if k >= 4 else None
    if (noisy or observed is None or abs(observed - orders[0]) < ORDER_TOLERANCE
            or (observed > orders[0] and any(abs(observed - p) < ORDER_TOLERANCE for p in orders[1:]))):
        # (a higher promised order: the leading terms are small, the expansion is still the
        # promised one -- Numerov's h**2 from a breakpoint the state barely reaches)
        use, promised = orders, True
        ok = True
    elif (observed >= 0.8 and abs(observed - round(observed)) < _INTEGER_TOLERANCE
          and (not confirm_lower_order
               or (earlier is not None and abs(earlier - observed) < ORDER_TOLERANCE))):
        q = int(round(observed))
        use, promised = tuple(range(q, q + 8)), False
        ok = True
    else:
        p = min(max(observed, 0.5), float(orders[0]))
        best = e[-1] + (e[-1] - e[-2]) / (2.0**p - 1.0)
        estimate = max(abs(best - e[-1]), abs(e[-1] - e[-2]))
        return Extrapolation(float(best), float(max(estimate, floor)), observed, False)
    table = [e]
    for j in range(min(k - 1, len(use))):
        factor = 2.0 ** use[j] - 1.0
        prev = table[-1]
        table.append([prev[i + 1] + (prev[i + 1] - prev[i]) / factor for i in range(len(prev) - 1)])
    # Each column's newest entry, with the larger of its last two corrections
    # as its estimate.  A column with a single entry eliminates a power of h
    # the data never showed, so only columns of two or more entries are
    # candidates; deep columns amplify rounding noise, so the candidate whose
    # estimate is smallest is taken (its own estimate still bounds it).
    best, estimate = table[-1][-1], math.inf
    seen, before = _last_orders(table) if settled else ([], None)
    for j in range(1, len(table)):
        column = table[j]
        if len(column) < 2:
            break
        est = max(abs(column[-1] - table[j - 1][-1]), abs(column[-1] - column[-2]))
        value = column[-1]
        if (settled and j < len(use) and abs(column[-1] - column[-2]) > SETTLED_ABOVE_NOISE * floor
                and _settled_below(table, use, j, seen, before, promised)):
            next_correction = abs(column[-1] - column[-2]) / (2.0 ** use[j] - 1.0)
            if SETTLED_SAFETY * next_correction < est:
                # The next column's value is this one plus that correction: report it,
                # with this column's estimate (it bounds the step taken as well).
                est, value = SETTLED_SAFETY * next_correction, table[j + 1][-1]
        if est < estimate:
            best, estimate = value, est
    return Extrapolation(float(best), float(max(estimate, floor)), observed, ok)


def richardson(energies, orders: tuple[int, ...], relative_rounding: float = 1e-14, settled: bool = False):
    """``(value, error_estimate, observed_order)`` of :func:`extrapolate` (the first release's form)."""
    out = extrapolate(energies, orders, relative_rounding, confirm_lower_order=False, settled=settled)
    return out.value, out.estimate, out.observed
