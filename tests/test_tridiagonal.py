"""Eigenpairs of Jacobi matrices by index from predicted windows (radsolve.core.tridiagonal)."""

import numpy as np
import pytest
from scipy.linalg import eigvalsh_tridiagonal

from radsolve.core.tridiagonal import EigenStatistics, eigenpairs, none_below, rounding_sensitivity, sturm_count


def _box(n: int):
    """tridiag(-1, 2, -1) / h**2 on n interior points of (0, 1): eigenvalues
    (4 / h**2) sin(k pi / (2 (n + 1)))**2, k = 1 ... n (textbook formula)."""
    h = 1.0 / (n + 1)
    d = np.full(n, 2.0 / h**2)
    e = np.full(n - 1, -1.0 / h**2)
    k = np.arange(1, n + 1)
    exact = 4.0 / h**2 * np.sin(k * np.pi / (2 * (n + 1))) ** 2
    return d, e, exact


def test_exact_predictions_are_confirmed_with_their_indices():
    d, e, exact = _box(400)
    stats = EigenStatistics()
    values, vectors, noise = eigenpairs(d, e, 3, 9, exact[3:10] * (1 + 1e-7), stats=stats)
    assert np.allclose(values, exact[3:10], rtol=1e-12, atol=0)
    assert stats.confirmed == 7 and stats.missed == 0
    # eigenvector of level k has k sign changes (Sturm, textbook); unit length
    for j, k in enumerate(range(3, 10)):
        v = vectors[:, j]
        assert np.count_nonzero(np.diff(np.sign(v[np.abs(v) > 1e-12])) != 0) == k
        assert abs(np.linalg.norm(v) - 1) < 1e-12
    assert np.all(noise > 0)


@pytest.mark.parametrize("shift", [1, -1, 2])
def test_predictions_of_the_wrong_levels_never_give_a_wrong_index(shift):
    # Each prediction is a neighbour's exact eigenvalue: the iteration converges to that
    # neighbour, the Sturm counts refuse it, and bisection by index finds the level asked.
    d, e, exact = _box(300)
    lo, hi = 5, 12
    stats = EigenStatistics()
    values, _, _ = eigenpairs(d, e, lo, hi, exact[lo + shift : hi + 1 + shift], stats=stats)
    assert np.allclose(values, exact[lo : hi + 1], rtol=1e-12, atol=0)
    assert stats.missed > 0  # the fallback is visible in the statistic


def test_predictions_of_the_lowest_levels_shifted_up_are_refused():
    # lo = 0: the proof that nothing lies below the first window is the one-pass
    # factorization (none_below); predictions one level too high must fail it.
    d, e, exact = _box(300)
    stats = EigenStatistics()
    values, _, _ = eigenpairs(d, e, 0, 4, exact[1:6], stats=stats)
    assert np.allclose(values, exact[:5], rtol=1e-12, atol=0)
    assert stats.missed > 0


def _graded(n: int = 800):
    """A hydrogen-like graded Jacobi matrix (diagonal from ~1e20 down to ~1) and its
    eigenvalues by LAPACK bisection to full precision (scipy, the reference)."""
    x = np.linspace(np.log(1e-10), np.log(60.0), n + 2)[1:-1]
    h = x[1] - x[0]
    r = np.exp(x)
    b = r * r
    d = (1.0 / h**2 + b * (-1.0 / r) + 0.125) / b
    e = -0.5 / h**2 / np.sqrt(b[:-1] * b[1:])
    exact = eigvalsh_tridiagonal(d, e, select="i", select_range=(0, 5), lapack_driver="stebz",
                                 tol=4 * np.finfo(float).tiny)
    return d, e, exact


@pytest.mark.parametrize("matrix", ["box", "graded"])
def test_none_below_agrees_with_the_eigenvalues(matrix):
    d, e, exact = _box(400) if matrix == "box" else _graded()
    lowest = exact[0]
    for relative in (1e-9, 1e-6, 1e-2):
        gap = relative * abs(lowest)
        assert none_below(d, e, lowest - gap)
        assert not none_below(d, e, lowest + gap)
        assert sturm_count(d, e, lowest - gap) == 0 and sturm_count(d, e, lowest + gap) == 1
    assert not none_below(d, e, exact[3])
    assert none_below(d, e, float(np.min(d) - 2 * np.max(np.abs(e))) - 1.0)


@pytest.mark.parametrize("size", [200, 2000])
def test_no_prediction_means_values_by_index(size):
    # Without vectors: all eigenvalues (sterf) for the small matrix, bisection by index
    # for the large one; with vectors, always bisection (full relative accuracy).
    d, e, exact = _box(size)
    stats = EigenStatistics()
    values, vectors, _ = eigenpairs(d, e, 0, 4, None, vectors=False, stats=stats)
    assert vectors is None
    # on this uniform matrix both are accurate to the rounding of its norm, 4/h**2
    # (backward stability, common practice), far above the 9.87 at the bottom
    norm_rounding = 64 * np.finfo(float).eps * 4.0 * (size + 1) ** 2
    assert np.allclose(values, exact[:5], rtol=0, atol=norm_rounding)
    assert stats.bisected == 5
    values, vectors, _ = eigenpairs(d, e, 0, 4, None, vectors=True, stats=stats)
    assert np.allclose(values, exact[:5], rtol=0, atol=norm_rounding) and vectors.shape == (size, 5)


def test_lowest_values_of_a_small_graded_matrix_agree_with_bisection():
    # The planning grids' energies come from all eigenvalues on these graded matrices:
    # close to LAPACK bisection (scipy, the reference) at every level asked.
    from radsolve.core.tridiagonal import lowest_values

    d, e, exact = _graded(250)
    values = lowest_values(d, e, 0, 5)
    assert np.allclose(values, exact, rtol=1e-12, atol=0)


def test_rounding_sensitivity_covers_the_effect_of_perturbed_entries():
    # A graded Jacobi matrix (entries spanning 1e12): perturb every entry by a random
    # relative 2**-52 and compare scipy's eigenvalues of the two matrices (common practice:
    # the spread of such draws is the rounding noise); the estimate must cover it.
    n = 600
    x = np.linspace(-12.0, 3.0, n)
    scale = np.exp(-2.0 * x)
    d = 2.0 * scale + 0.5 * np.sin(x)
    e = -np.sqrt(scale[:-1] * scale[1:])
    lo, hi = 0, 4
    tiny = 4 * np.finfo(float).tiny  # bisection to full relative accuracy (LAPACK stebz)
    values = eigvalsh_tridiagonal(d, e, select="i", select_range=(lo, hi), lapack_driver="stebz", tol=tiny)
    _, vectors, noise = eigenpairs(d, e, lo, hi, values, stats=EigenStatistics())
    rng = np.random.default_rng(7)
    eps = np.finfo(float).eps
    worst = np.zeros(hi - lo + 1)
    for _ in range(8):
        dp = d * (1 + eps * rng.standard_normal(n))
        ep = e * (1 + eps * rng.standard_normal(n - 1))
        moved = eigvalsh_tridiagonal(dp, ep, select="i", select_range=(lo, hi), lapack_driver="stebz", tol=tiny)
        worst = np.maximum(worst, np.abs(moved - values))
    assert np.all(worst <= noise), (worst, noise)
    assert np.allclose(noise, rounding_sensitivity(d, e, vectors), rtol=0.6)


def _box_vector(n: int, k: int) -> np.ndarray:
    """The k-th eigenvector of the box matrix, sin(k' pi i / (n + 1)), k' = k + 1 (textbook formula)."""
    i = np.arange(1, n + 1)
    return np.sin((k + 1) * np.pi * i / (n + 1))


def test_start_vectors_near_the_states_give_the_exact_levels():
    # Start vectors that are the exact states plus a smooth error of 1e-4 (what an
    # interpolated coarser-grid state is): the values must be the exact ones, by index.
    n = 500
    d, e, exact = _box(n)
    lo, hi = 2, 7
    x = np.linspace(0, 1, n)
    starts = [_box_vector(n, k) + 1e-4 * x**2 for k in range(lo, hi + 1)]
    stats = EigenStatistics()
    values, vectors, _ = eigenpairs(d, e, lo, hi, exact[lo : hi + 1] * (1 + 1e-6), starts=starts, stats=stats)
    assert np.allclose(values, exact[lo : hi + 1], rtol=1e-12, atol=0)
    assert stats.missed == 0
    for j, k in enumerate(range(lo, hi + 1)):
        ref = _box_vector(n, k)
        assert abs(abs(vectors[:, j] @ ref) / np.linalg.norm(ref) - 1) < 1e-12


def test_start_vectors_of_the_wrong_states_never_give_a_wrong_index():
    # Each level starts from a neighbour's exact state with a prediction between the two
    # (states that swapped places between grids, as in a double well): whatever the
    # iteration converges to, the Sturm counts decide, and each value is the one asked.
    n = 300
    d, e, exact = _box(n)
    lo, hi = 4, 9
    starts = [_box_vector(n, k + 1) for k in range(lo, hi + 1)]
    guesses = 0.5 * (exact[lo : hi + 1] + exact[lo + 1 : hi + 2])
    values, _, _ = eigenpairs(d, e, lo, hi, guesses, starts=starts, stats=EigenStatistics())
    assert np.allclose(values, exact[lo : hi + 1], rtol=1e-12, atol=0)


def test_none_below_proves_nothing_from_a_nan_and_handles_one_row():
    assert not none_below(np.array([1.0, np.nan, 1.0]), np.array([0.1, 0.1]), 0.0)
    assert not none_below(np.array([1.0, 1.0, 1.0]), np.array([np.nan, 0.1]), 0.0)
    assert none_below(np.array([1.0]), np.array([]), 0.5) and not none_below(np.array([1.0]), np.array([]), 1.5)


@pytest.mark.parametrize("matrix", ["box", "graded", "random"])
def test_sturm_count_agrees_with_the_eigenvalues_at_every_depth(matrix):
    # The count by pivot runs restarts at each negative pivot and hands counts of more
    # than a few dozen to stebz: both regimes, against eigenvalues from an outside
    # reference (the box: textbook formula; the others: numpy's dense eigvalsh).
    if matrix == "box":
        d, e, exact = _box(300)
    else:
        if matrix == "graded":
            d, e, _ = _graded(300)
        else:
            rng = np.random.default_rng(7)
            d, e = rng.normal(size=300), rng.normal(size=299)
        exact = np.linalg.eigvalsh(np.diag(d) + np.diag(e, 1) + np.diag(e, -1))
    for k in (0, 1, 2, 5, 23, 24, 25, 60, 299):
        below = exact[k - 1] if k else exact[0] - abs(exact[0]) - 1.0
        x = float(0.5 * (below + exact[k]))  # k eigenvalues lie below x
        assert sturm_count(d, e, x) == k
    assert sturm_count(d, e, float(exact[-1]) + 1.0) == exact.size


def test_sturm_count_through_a_zero_pivot():
    # d = (0, 0, 5), e = (1, 1): at x = 0 the first pivot is exactly zero (the leading
    # minor is singular, the matrix is not); the count goes on past it.  Reference:
    # numpy's dense eigvalsh.
    d, e = np.array([0.0, 0.0, 5.0]), np.ones(2)
    exact = np.linalg.eigvalsh(np.diag(d) + np.diag(e, 1) + np.diag(e, -1))
    assert np.min(np.abs(exact)) > 0.1
    for x in (0.0, -2.0, 1.0, 6.0):
        assert sturm_count(d, e, x) == np.count_nonzero(exact < x)
    assert sturm_count(np.array([0.0]), np.array([]), 0.5) == 1 and sturm_count(np.array([0.0]), np.array([]), -0.5) == 0


@pytest.mark.parametrize("offset", [1e-12, 1e-13, 1e-14])
def test_a_level_near_zero_is_confirmed_in_a_window_as_wide_as_its_noise(offset):
    # The box matrix shifted so that level 37 sits `offset` below zero: its value is far
    # smaller than its rounding noise (~1e-16 of the entries), like a level just below
    # threshold in a large box.  A window of 1e-9 of the value is then narrower than what
    # the Sturm counts at its ends can resolve; it must still be confirmed (not sent to
    # bisection by index), with the value bisection gives within its noise.
    d, e, exact = _box(4000)
    h2 = (1.0 / 4001) ** 2
    d = (d - exact[37]) * h2 - offset  # eigenvalues (exact - exact[37]) h**2 - offset
    e = e * h2
    reference = eigvalsh_tridiagonal(d, e, select="i", select_range=(37, 37))[0]
    assert reference < 0 and abs(reference) < 10 * offset  # textbook: exact[37] shifted to ~ -offset
    stats = EigenStatistics()
    values, _, noise = eigenpairs(d, e, 37, 37, [reference * (1 + 1e-6)], precision=[abs(reference) * 1e-3],
                                  stats=stats)
    assert stats.missed == 0 and stats.confirmed == 1
    assert abs(values[0] - reference) <= noise[0]
