"""Richardson extrapolation and its error estimates on series whose limit is known.

Each series is built from an error expansion E(h) = E0 + sum_k c_k h**p_k on
steps h, h/2, h/4, ... (the textbook setting of Richardson's extrapolation),
so the true error of every reported value is known exactly.  The rule the
tests hold the estimates to is the project's honesty rule: an estimate is
never below 1/10 of the true error (common practice for trusted estimates).
"""

from __future__ import annotations

import numpy as np
import pytest

from radsolve.core.extrapolation import SETTLED_SAFETY, extrapolate

FD_ORDERS = (2, 4, 6, 8, 10)
LIMIT = -0.125


def _series(coefficients: dict, grids: int, h0: float = 0.1, noise: float = 0.0, seed: int = 0) -> list:
    rng = np.random.default_rng(seed)
    out = []
    for k in range(grids):
        h = h0 / 2**k
        out.append(LIMIT + sum(c * h**p for p, c in coefficients.items()) + noise * rng.standard_normal())
    return out


SMOOTH = {2: 3e-2, 4: -5e-2, 6: 4e-2, 8: -2e-2, 10: 1e-2}


@pytest.mark.parametrize("grids", [3, 4, 5, 6])
def test_estimate_covers_the_true_error_of_a_smooth_expansion(grids):
    for settled in (False, True):
        out = extrapolate(_series(SMOOTH, grids), FD_ORDERS, 1e-15, settled=settled)
        true = abs(out.value - LIMIT)
        assert out.order_ok
        assert out.estimate >= 0.1 * true, (settled, out, true)


def test_settled_estimate_is_smaller_and_still_honest():
    # Four grids with the expansion in its asymptotic regime: the settled rule (three
    # times the next correction) is far below the conservative one, and still above
    # the true error.
    values = _series(SMOOTH, 4, h0=0.05)
    plain = extrapolate(values, FD_ORDERS, 1e-15)
    settled = extrapolate(values, FD_ORDERS, 1e-15, settled=True)
    assert settled.estimate < 0.1 * plain.estimate
    assert settled.estimate >= abs(settled.value - LIMIT)
    # The value reported is the next column's: closer to the limit than the plain one.
    assert abs(settled.value - LIMIT) <= abs(plain.value - LIMIT)


def test_settled_value_moves_by_a_third_of_its_estimate_at_most():
    values = _series(SMOOTH, 5, h0=0.05)
    plain = extrapolate(values, FD_ORDERS, 1e-15)
    settled = extrapolate(values, FD_ORDERS, 1e-15, settled=True)
    assert abs(settled.value - plain.value) <= settled.estimate / SETTLED_SAFETY * (1 + 1e-9) + plain.estimate


def test_settled_estimate_with_a_large_next_term_stays_honest():
    # An h**8 term large enough to dominate the last column's two entries (which
    # cannot show their own order yet): the settled rule applies, and its three-fold
    # safety is what keeps the estimate above the true error.
    values = _series({2: 3e-2, 4: -5e-2, 6: 4e-2, 8: 1e4}, 4, h0=0.05)
    plain = extrapolate(values, FD_ORDERS, 1e-15)
    settled = extrapolate(values, FD_ORDERS, 1e-15, settled=True)
    assert settled.estimate < 0.5 * plain.estimate  # the settled rule was used
    assert settled.estimate >= abs(settled.value - LIMIT)


def test_a_slow_term_hidden_below_the_lower_columns_is_not_trusted():
    # Numerov's orders (4, 6, 8, 10) with a small h**4.6 term: the raw values and the
    # first columns show orders within 0.5 of the promised ones (4.0, 6.3, 8.0), but the
    # column with two entries converges like h**4.6, not h**10.  Trusting its order from
    # the columns below put the estimate 14 times below the true error; the lower columns
    # must show their orders closely before a column's unseen order is taken on trust.
    values = [LIMIT + h**4 + 30 * h**6 + 300 * h**8 + 1e-3 * h**4.6 for h in 0.25 / 2.0 ** np.arange(5)]
    out = extrapolate(values, (4, 6, 8, 10), 1e-15, settled=True)
    assert out.order_ok
    assert out.estimate >= abs(out.value - LIMIT)


def test_a_lower_order_read_off_the_data_does_not_vouch_for_an_unseen_column():
    # Numerov (orders 4, 6, 8, 10) with a kink of V on the grid: the series runs in even
    # powers from h**2 on.  The data show h**2, so every integer power from 2 is assumed;
    # with these coefficients (those of a property-battery case, seed 7, index 689) the
    # column after h**2 looks like h**3 on four grids (2.99) by a cancellation of the
    # h**4, h**6 and h**8 terms, and the column that eliminates h**3 changes by a tenth of
    # its error.  Its order is unseen under a guessed expansion: the estimate must not
    # rest on it (it was 50 times below the true error).  The limit is exact by construction.
    values = [LIMIT + 3.206e-2 * h**2 - 2.017e-4 * h**4 + 1.3756e-4 * h**6 - 4.196e-5 * h**8
              for h in 2.0 ** -np.arange(4)]
    out = extrapolate(values, (4, 6, 8, 10), 1e-15, settled=True)
    assert out.order_ok and abs(out.observed - 2.0) < 0.01
    assert out.estimate >= abs(out.value - LIMIT)


def test_a_higher_promised_order_keeps_the_promised_expansion():
    # Numerov at a breakpoint promises h**2, h**4, ...; for a state that barely reaches the
    # breakpoint the h**2 coefficient is tiny and the grids show h**4.  That is a higher
    # order of the same expansion, not a new one: read as "h**4, h**5, h**6, ..." it gave an
    # estimate 15 times below the error.  Coefficients of a solve that did (empty core, 9g,
    # Numerov); the limit is exact by construction.
    terms = {2: 2.34e-9, 4: -2.668e-5, 6: -7.94e-7, 8: -1.736e-7, 10: 5.915e-8}
    values = [LIMIT + sum(c * h**p for p, c in terms.items()) for h in 2.0 ** -np.arange(5)]
    out = extrapolate(values, (2, 4, 6, 8, 10), 1e-15, settled=True)
    assert out.order_ok and abs(out.observed - 4.0) < 0.1
    assert out.estimate >= abs(out.value - LIMIT)


def test_wrong_order_is_not_settled():
    # An h**3 term the method does not promise: the columns do not show their orders,
    # so the settled rule must not apply, and the estimate stays honest.
    odd = {2: 3e-2, 3: 2e-1, 4: -5e-2}
    for grids in (4, 5, 6):
        out = extrapolate(_series(odd, grids), FD_ORDERS, 1e-15, settled=True)
        assert out.estimate >= 0.1 * abs(out.value - LIMIT), (grids, out)


def test_noise_is_not_taken_for_convergence():
    # Grid values at their rounding floor (random noise of 1e-11 on a converged series),
    # with the caller's declared floor five times too low: the changes say nothing about
    # the next term, and the estimate must still cover the error.
    floor = 0.2e-11 / abs(LIMIT)
    for seed in range(20):
        values = _series({2: 1e-7}, 6, h0=0.01, noise=1e-11, seed=seed)
        out = extrapolate(values, FD_ORDERS, floor, settled=True)
        assert out.estimate >= 0.2e-11 * 0.999
        assert out.estimate >= 0.1 * abs(out.value - LIMIT), (seed, out)


def test_fewer_than_three_grids_give_no_estimate():
    out = extrapolate(_series(SMOOTH, 2), FD_ORDERS, settled=True)
    assert out.estimate == np.inf and not out.order_ok
