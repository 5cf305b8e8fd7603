"""The independent reference solver (tests/reference_solver.py) against exact spectra.

The property battery trusts this reference, so it is checked here on its own,
against closed forms only (nothing from radsolve is imported):

* hydrogen-like levels E = -m Z^2 / (2 n^2), n = nodes + l + 1 (textbook formula);
* in two dimensions E = -m Z^2 / (2 (n - 1/2)^2) (textbook formula);
* the 3D isotropic oscillator E = omega (2 nodes + l + 3/2) (textbook formula);
* the Kratzer potential -A/r + B/r^2: E = -m A^2 / (2 nu^2) with
  nu = nodes + 1/2 + sqrt((l + 1/2)^2 + 2 m B) (textbook formula);
* the 3D square well: interior r j_l(k r) matched to exterior r k_l(kappa r) at the
  edge, roots found with scipy.special and brentq; its number of levels from the
  zeros of j_(l-1) (for l = 0: floor(k0 a / pi + 1/2)) below k0 a = a sqrt(2 m V0)
  (textbook formula);
* the exponential well -V0 exp(-r/a), l = 0: J_(2 a kappa)(2 a sqrt(2 m V0)) = 0,
  and a level appears at each zero of J_0 (textbook formula; scipy.special.jv);
* a two-step l = 0 well: sin / sinh / exp pieces matched at the steps (textbook
  formula);
* a square well one part in 1e6 past the binding of its first level: the matching
  condition solved with mpmath at 50 digits (reference library).

Every check allows the reference's own error estimate: |E - exact| must not
exceed it, and the estimate must be small enough for the battery's use.
"""

from __future__ import annotations

import math

import mpmath
import numpy as np
import pytest
from scipy import optimize, special

from reference_solver import solve_channel

EPS = np.finfo(float).eps


def assert_levels(res, exact, rel_est=3e-14, n=None, exact_rel=4 * EPS, depth=0.0):
    """Each level within its own estimate of the exact value, and the estimate tight:
    below ``rel_est`` relative to |E| or to the well ``depth``, whichever is larger (a
    level bound by a small fraction of the depth cannot be had more precisely than
    eps times the depth).

    ``exact_rel`` is the relative accuracy of the exact value itself as computed here
    (a few ulp for a closed form, more for a root found numerically).
    """
    assert len(res.levels) == (n if n is not None else len(res.levels) or -1), res.notes
    for lev in res.levels:
        e = exact(lev.nodes)
        assert lev.ok, (lev, res.notes)
        assert abs(lev.energy - e) <= lev.error + exact_rel * abs(e), (lev.nodes, lev.energy, e, lev.error)
        assert lev.error <= rel_est * max(abs(e), depth), (lev.nodes, lev.error, e)


# ----------------------------------------------------------------------------- Coulomb


@pytest.mark.parametrize("Z, m, l", [(1.0, 1.0, 0), (1.0, 1.0, 1), (3.0, 0.7, 2), (0.5, 1836.0, 5)])
def test_hydrogen_like(Z, m, l):
    # Source: E = -m Z^2 / (2 n^2) (textbook formula).
    res = solve_channel(lambda r: -Z / r, mass=m, l=l, count=6, scale=1.0 / (Z * m))
    assert res.count is None and res.count_certain   # an attractive 1/r tail binds infinitely many
    assert_levels(res, lambda k: -m * Z**2 / (2.0 * (k + l + 1) ** 2))


@pytest.mark.parametrize("l", [0, 1, 3])
def test_two_dimensional_coulomb(l):
    # Source: E = -m Z^2 / (2 (n - 1/2)^2), n = nodes + l + 1 (textbook formula).  l = 0 is
    # the critical inverse-square case L(L+1) = -1/4, u ~ r^(1/2).
    Z, m = 2.0, 1.0
    res = solve_channel(lambda r: -Z / r, mass=m, l=l, dimension=2, count=5, scale=0.5)
    assert_levels(res, lambda k: -m * Z**2 / (2.0 * (k + l + 0.5) ** 2))


# ----------------------------------------------------------------------------- oscillator


@pytest.mark.parametrize("l", [0, 1, 4])
def test_isotropic_oscillator(l):
    # Source: E = omega (2 nodes + l + 3/2) (textbook formula).
    omega, m = 1.3, 2.0
    res = solve_channel(lambda r: 0.5 * m * omega**2 * r**2, mass=m, l=l, v_inf=math.inf,
                        count=6, scale=1.0 / math.sqrt(m * omega))
    assert res.count is None
    assert_levels(res, lambda k: omega * (2 * k + l + 1.5))


# ----------------------------------------------------------------------------- Kratzer


@pytest.mark.parametrize("A, B, m, l", [(1.5, 0.7, 1.3, 1), (1.0, -0.1, 1.0, 0), (2.0, -0.12, 1.0, 0),
                                        (0.8, 3.0, 0.5, 2)])
def test_kratzer(A, B, m, l):
    # Source: E = -m A^2 / (2 nu^2), nu = nodes + 1/2 + sqrt((l + 1/2)^2 + 2 m B)
    # (textbook formula).  B < 0 is an attractive core: u ~ r^lam with lam < 1, and
    # 2 m B = -0.24 is close to the fall-to-centre limit -1/4 (lam = 0.6).
    def nu(k):
        return k + 0.5 + math.sqrt((l + 0.5) ** 2 + 2.0 * m * B)

    res = solve_channel(lambda r: -A / r, inverse_square=B, mass=m, l=l, count=6)
    assert_levels(res, lambda k: -m * A**2 / (2.0 * nu(k) ** 2))


# ----------------------------------------------------------------------------- square well


def square_well_levels(V0, a, l, m):
    """Roots of the matching condition (textbook formula) with scipy.special and brentq."""
    def f(E):
        k = math.sqrt(2 * m * (E + V0))
        kap = math.sqrt(-2 * m * E)
        return (k * special.spherical_jn(l, k * a, derivative=True) * special.spherical_kn(l, kap * a)
                - kap * special.spherical_kn(l, kap * a, derivative=True) * special.spherical_jn(l, k * a))

    grid = -V0 * np.linspace(1 - 1e-12, 1e-9, 1501)
    vals = [f(E) for E in grid]
    return [optimize.brentq(f, grid[i], grid[i + 1], xtol=1e-300, rtol=4 * np.finfo(float).eps)
            for i in range(len(grid) - 1) if vals[i] * vals[i + 1] < 0]


def square_well_count(V0, a, l, m):
    """Levels of a square well (textbook): the zeros of j_(l-1) below k0 a."""
    x0 = a * math.sqrt(2 * m * V0)
    if l == 0:
        return int(math.floor(x0 / math.pi + 0.5))
    xs = np.linspace(1e-6, x0, 200001)
    j = special.spherical_jn(l - 1, xs)
    return int(np.sum(j[1:] * j[:-1] < 0))


@pytest.mark.parametrize("V0, a, l, m", [(10.0, 1.0, 0, 1.0), (50.0, 2.0, 3, 1.0), (1.0, 1.0, 0, 1.0),
                                         (200.0, 0.3, 1, 7.0), (0.4, 30.0, 2, 0.2)])
def test_square_well(V0, a, l, m):
    # Source: spherical-Bessel matching and the level count (textbook formulas).
    res = solve_channel(lambda r: np.where(r < a, -V0, 0.0), mass=m, l=l, breakpoints=[a], scale=a)
    exact = square_well_levels(V0, a, l, m)
    assert res.count == square_well_count(V0, a, l, m) == len(exact)
    assert res.count_certain
    assert_levels(res, lambda k: exact[k], n=len(exact), depth=V0)


@pytest.mark.parametrize("sign", [+1, -1])
def test_square_well_at_threshold(sign):
    # Source: the l = 0 square well binds its first level at k0 a = pi/2 (textbook formula).
    # One part in 1e6 above it there is one level, bound by ~7.6e-13 next to a depth of
    # 1.2; one part in 1e9 below it there is none, and the count says so with certainty.
    V0 = (math.pi / 2) ** 2 / 2 * (1 + sign * (1e-6 if sign > 0 else 1e-9))
    res = solve_channel(lambda r: np.where(r < 1.0, -V0, 0.0), l=0, breakpoints=[1.0])
    assert res.count_certain, res.notes
    assert res.count == (1 if sign > 0 else 0)
    if sign > 0:
        # the binding energy from k cot(k) = -kappa, k = sqrt(2 V0 - kappa^2) (textbook
        # matching condition), solved with mpmath at 50 digits (reference library)
        mpmath.mp.dps = 50
        V0m = mpmath.mpf(V0)
        kap = mpmath.findroot(lambda x: mpmath.sqrt(2 * V0m - x**2) * mpmath.cot(mpmath.sqrt(2 * V0m - x**2)) + x,
                              (mpmath.mpf("1e-7"), mpmath.mpf("3e-6")), solver="anderson")
        exact = float(-kap**2 / 2)
        lev = res.levels[0]
        assert lev.ok and abs(lev.energy - exact) <= lev.error <= 1e-3 * abs(exact), (lev, exact)


# ----------------------------------------------------------------------------- exponential well


def exponential_levels(V0, a, m):
    """-V0 exp(-r/a), l = 0: J_nu(x0) = 0 with nu = 2 a kappa, x0 = 2 a sqrt(2 m V0) (textbook)."""
    x0 = 2 * a * math.sqrt(2 * m * V0)
    nus = np.linspace(1e-9, x0, 20001)
    vals = special.jv(nus, x0)
    roots = [optimize.brentq(lambda nu: special.jv(nu, x0), nus[i], nus[i + 1], xtol=1e-15)
             for i in range(len(nus) - 1) if vals[i] * vals[i + 1] < 0]
    n_levels = int(np.sum(special.jn_zeros(0, 60) < x0))
    return sorted(-(nu / (2 * a)) ** 2 / (2 * m) for nu in roots), n_levels


@pytest.mark.parametrize("V0, a, m", [(8.0, 1.0, 1.0), (3.5, 2.5, 0.5)])
def test_exponential_well(V0, a, m):
    # Source: the Bessel-function solution of the exponential well (textbook formula).
    exact, n_levels = exponential_levels(V0, a, m)
    res = solve_channel(lambda r: -V0 * np.exp(-r / a), mass=m, l=0, scale=a)
    assert res.count == n_levels == len(exact) and res.count_certain
    assert_levels(res, lambda k: exact[k], depth=V0)


# ----------------------------------------------------------------------------- two-step well


def two_step_levels(V1, V2, a, b, m):
    """l = 0, V = -V1 (r < a), -V2 (a < r < b), 0 beyond: sin / (sin or sinh) / exp pieces
    matched through the (u, u') transfer (textbook formula)."""
    def mismatch(E):
        k1 = math.sqrt(2 * m * (E + V1))
        u, du = math.sin(k1 * a), k1 * math.cos(k1 * a)
        q = 2 * m * (E + V2)
        w = b - a
        if q > 0:
            k2 = math.sqrt(q)
            u, du = u * math.cos(k2 * w) + du / k2 * math.sin(k2 * w), -u * k2 * math.sin(k2 * w) + du * math.cos(k2 * w)
        else:
            k2 = math.sqrt(-q)
            u, du = u * math.cosh(k2 * w) + du / k2 * math.sinh(k2 * w), u * k2 * math.sinh(k2 * w) + du * math.cosh(k2 * w)
        kap = math.sqrt(-2 * m * E)
        return du + kap * u        # u' = -kappa u for the decaying exterior

    grid = np.linspace(-V1 * (1 - 1e-12), -1e-9, 8001)
    vals = [mismatch(E) for E in grid]
    return [optimize.brentq(mismatch, grid[i], grid[i + 1], xtol=1e-300, rtol=4 * np.finfo(float).eps)
            for i in range(len(grid) - 1) if vals[i] * vals[i + 1] < 0]


def test_two_step_well():
    # Source: piecewise-constant matching (textbook formula).
    V1, V2, a, b, m = 20.0, 4.0, 0.7, 2.2, 1.0
    exact = two_step_levels(V1, V2, a, b, m)
    res = solve_channel(lambda r: np.where(r < a, -V1, np.where(r < b, -V2, 0.0)), mass=m, l=0,
                        breakpoints=[a, b], scale=b)
    assert res.count == len(exact) and res.count_certain
    assert_levels(res, lambda k: exact[k], depth=V1)


# ----------------------------------------------------------------------------- counts


def test_infinite_counts_are_reported_as_none():
    # Textbook (Landau & Lifshitz, Quantum Mechanics, sec. 35): an inverse-square tail
    # -g/r^2 with 2 m g > (l + 1/2)^2 binds infinitely many levels, as does any attractive
    # tail decaying more slowly than 1/r^2; a weaker -g/r^2 tail binds finitely many.
    strong = solve_channel(lambda r: -1.0 / (r**2 + 1.0), l=0, count=3)
    weak = solve_channel(lambda r: -0.1 / (r**2 + 1.0), l=0, count=3)
    slow = solve_channel(lambda r: -1.0 / (r**1.5 + 1.0), l=1, count=3)
    assert strong.count is None and slow.count is None
    assert weak.count == 0 and weak.count_certain
    with pytest.raises(ValueError, match="count is needed"):
        solve_channel(lambda r: -1.0 / r, l=0)
