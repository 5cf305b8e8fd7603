"""Three-term recurrences in chunks (radsolve.core.recurrence) against closed forms."""

import math

import numpy as np
import pytest

from radsolve.core.recurrence import three_term


@pytest.mark.parametrize("n", [7, 5000, 20000])
def test_oscillating_recurrence_is_the_chebyshev_polynomial(n):
    # y[k+1] = 2 cos(theta) y[k] - y[k-1], y[-1] = 0, y[0] = 1 gives
    # y[k] = sin((k + 1) theta) / sin(theta) (Chebyshev U_k; textbook formula).
    # 20000 steps run in several chunks (of 8192), each continuing the last.
    theta = 0.37
    y = three_term(np.full(n, 2.0 * math.cos(theta)), None, 0.0, 1.0)
    k = np.arange(n + 1)
    exact = np.sin((k + 1) * theta) / math.sin(theta)
    ratio = y[1] / exact[1]  # one common positive factor (the docstring's promise)
    assert ratio > 0
    assert np.allclose(y / ratio, exact, rtol=0, atol=1e-9 * np.max(np.abs(exact)))


@pytest.mark.parametrize("local", [True, False])
def test_fast_growth_is_cut_into_chunks_without_overflow(local):
    # alpha = 50, beta = 1: y[k] = (r1**(k+1) - r2**(k+1)) / (r1 - r2) with r1,2 the roots of
    # r**2 - 50 r + 1 (textbook formula): it grows by e**11700 over 3000 steps, far past
    # the range of a double, so the first attempt in whole chunks must be refused.
    n, alpha = 3000, 50.0
    root = math.sqrt(alpha * alpha - 4.0)
    r1, r2 = (alpha + root) / 2.0, (alpha - root) / 2.0
    k = np.arange(n + 1)
    log_exact = (k + 1) * math.log(r1) + np.log1p(-((r2 / r1) ** (k + 1))) - math.log(r1 - r2)
    if local:
        z, logs = three_term(np.full(n, alpha), None, 0.0, 1.0, local=True)
        assert np.all(z > 0)
        log_y = logs + np.log(z)
        # one common offset (the scale of y[0] is kept), exact to rounding otherwise
        offset = log_y[0] - log_exact[0]
        assert np.allclose(log_y - offset, log_exact, rtol=1e-12, atol=1e-9)
    else:
        y = three_term(np.full(n, alpha), None, 0.0, 1.0)
        assert np.all(np.isfinite(y)) and y[-1] > 0
        # the last values keep their exact ratios (the early ones underflow against them)
        assert np.allclose(y[-50:-1] / y[-49:], np.exp(log_exact[-50:-1] - log_exact[-49:]), rtol=1e-12)


def test_growth_and_decay_alternate_with_beta():
    # With beta given: y[k+1] = alpha y[k] - beta y[k-1] for alpha = 3, beta = 2 has roots
    # 1 and 2: y[k] = 2**(k+1) - 1 from y[-1] = 0, y[0] = 1 (textbook formula).
    n = 40
    y = three_term(np.full(n, 3.0), np.full(n, 2.0), 0.0, 1.0)
    exact = 2.0 ** (np.arange(n + 1) + 1) - 1.0
    assert np.allclose(y / y[0], exact, rtol=1e-13)
