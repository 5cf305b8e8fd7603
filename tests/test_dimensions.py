"""The radial problem in d dimensions, and the Rytova-Keldysh family for 2D excitons.

Sources of the reference values:

* hydrogen in d dimensions, E = -mu Z^2 / (2 (n + (d-3)/2)^2) with
  n = nodes + l + 1 (textbook formula; e.g. M. M. Nieto, Am. J. Phys. 47,
  1067 (1979)); in 2D, E = -Z^2/(2 (n - 1/2)^2);
* the isotropic oscillator in d dimensions, E = omega (2 n_r + l + d/2)
  (textbook formula);
* the number of independent spherical harmonics of degree l in d dimensions,
  (2l + d - 2) (l + d - 3)! / (l! (d - 2)!) (textbook formula), via
  scipy.special.comb; 2D: 1 for l = 0, 2 otherwise;
* H0 - Y0 from mpmath (struveh, bessely; reference library); its limits
  2/(pi x) at large x and -(2/pi)(ln(x/2) + gamma) at small x (DLMF 11.6.1,
  10.8.2).
"""

from __future__ import annotations

import math

import mpmath
import numpy as np
import pytest
from scipy.special import comb

import radsolve
from helpers import invoke
from radsolve.errors import InputError
from radsolve.potentials.builtin.rytova_keldysh import struve_minus_y0

def hydrogen_d(n, Z, mu, d):
    """-mu Z^2 / (2 (n + (d-3)/2)^2): textbook formula."""
    return -mu * Z**2 / (2.0 * (n + (d - 3) / 2.0) ** 2)


def harmonics_count(l, d):
    """Spherical harmonics of degree l in d dimensions (textbook formula)."""
    if d == 2:
        return 1 if l == 0 else 2
    return int(round((2 * l + d - 2) * comb(l + d - 3, l, exact=True) / (d - 2)))


# ---------------------------------------------------------------- hydrogen and oscillator


@pytest.mark.parametrize("Z, mu", [(1.0, 1.0), (3.0, 0.5)])
def test_two_dimensional_hydrogen(Z, mu):
    # Source: E = -mu Z^2/(2 (n - 1/2)^2) (textbook formula).  The solve
    # is asked for tol=1e-11; 1e-10 relative leaves a factor 10 for the error estimate
    # being an estimate, and stays far above double-precision round-off (~1e-15).
    # tol=1e-11 is at the rounding floor of finite differences on the ~2e4-point
    # grids a 2D s level needs (u ~ r**1/2 asks for r_min ~ 1e-17): a level may
    # then stop short of tol, and must say so with an estimate that holds.
    res = radsolve.solve(radsolve.potential("coulomb", Z=Z), l=[0, 1, 2, 3], count=4, mass=mu,
                         tol=1e-11, dimension=2)
    assert res.dimension == 2 and len(res.levels) == 16
    for lev in res.levels:
        exact = hydrogen_d(lev.nodes + lev.l + 1, Z, mu, 2)
        assert abs(lev.energy - exact) <= 1e-10 * abs(exact), lev.label
        assert abs(lev.energy - exact) <= 10 * lev.error_estimate, lev.label
        assert lev.converged or str(lev.status) in ("rounding floor", "finest grid"), lev.status
    assert res.success == all(lev.converged for lev in res.levels)


@pytest.mark.parametrize("d", [4, 5, 7])
def test_hydrogen_in_higher_dimensions(d):
    # Source: E = -Z^2/(2 (n + (d-3)/2)^2) (textbook formula; Nieto 1979).
    res = radsolve.solve("coulomb", l=[0, 1, 2], count=3, tol=1e-11, dimension=d)
    for lev in res.levels:
        exact = hydrogen_d(lev.nodes + lev.l + 1, 1.0, 1.0, d)
        assert lev.energy == pytest.approx(exact, rel=1e-10), (d, lev.label)


@pytest.mark.parametrize("d", [2, 3, 4, 6])
def test_oscillator_in_d_dimensions(d):
    # Source: E = omega (2 n_r + l + d/2) (textbook formula), omega = 1.
    pot = radsolve.formula_potential("0.5*r**2")
    res = radsolve.solve(pot, l=[0, 1, 3], count=3, tol=1e-11, dimension=d)
    for lev in res.levels:
        assert lev.energy == pytest.approx(2 * lev.nodes + lev.l + d / 2, rel=1e-10), (d, lev.label)


def harmonic_polynomial_count(l, d):
    """Harmonic homogeneous polynomials of degree l in d variables: all monomials of
    degree l minus those of degree l - 2, C(l+d-1, d-1) - C(l+d-3, d-1) (textbook
    formula; e.g. Stein & Weiss, Fourier Analysis on Euclidean Spaces, 1971).
    An independent route to the count returned by harmonics_count."""
    return int(comb(l + d - 1, d - 1, exact=True) - (comb(l + d - 3, d - 1, exact=True) if l >= 2 else 0))


@pytest.mark.parametrize("d", [2, 3, 4, 5])
def test_degeneracies(d):
    # Source: the number of spherical harmonics of degree l in d dimensions (textbook
    # formula), counted two ways: (2l+d-2)(l+d-3)!/(l!(d-2)!) and the harmonic-polynomial
    # count C(l+d-1, d-1) - C(l+d-3, d-1) (Stein & Weiss 1971).
    res = radsolve.solve("coulomb", l=list(range(5)), count=1, tol=1e-6, dimension=d)
    assert len(res.levels) == 5
    for lev in res.levels:
        assert lev.degeneracy == harmonics_count(lev.l, d), (d, lev.l)
        assert lev.degeneracy == harmonic_polynomial_count(lev.l, d), (d, lev.l)


@pytest.mark.parametrize("d, shell_size", [(2, lambda n: 2 * n - 1), (3, lambda n: n * n)])
def test_hydrogen_shell_degeneracy(d, shell_size):
    # Source: hydrogen shell n holds sum_{l<n} deg(l) states: 2n - 1 in 2D, n^2 in 3D
    # (textbook formula; the accidental degeneracy of the Coulomb problem).  The shells
    # are built from the computed levels: grouped by their computed energies and summed
    # over the computed Level.degeneracy.
    nmax = 4
    res = radsolve.solve("coulomb", l=list(range(nmax)), count=nmax, tol=1e-9, dimension=d)
    assert res.success
    for n in range(1, nmax + 1):
        exact = hydrogen_d(n, 1.0, 1.0, d)
        shell = [lev for lev in res.levels if abs(lev.energy - exact) <= 1e-7 * abs(exact)]
        assert sorted(lev.l for lev in shell) == list(range(n)), (d, n)
        assert sum(lev.degeneracy for lev in shell) == shell_size(n), (d, n)


def test_dimension_bad_input():
    for bad in (1, 0, -3, 2.5, "3", True):
        with pytest.raises(InputError, match="dimension"):
            radsolve.solve("coulomb", dimension=bad)
    result = invoke("levels", "coulomb", "--dimension", "1")
    assert result.exit_code == 2 and "--dimension 1" in result.stderr
    assert "Traceback" not in result.stderr + result.output


def test_cli_reports_the_dimension():
    result = invoke("levels", "coulomb", "-d", "2", "-k", "1", "-f", "json")
    assert result.exit_code == 0
    import json

    doc = json.loads(result.stdout)
    assert doc["dimension"] == 2
    assert doc["levels"][0]["energy"] == pytest.approx(hydrogen_d(1, 1, 1, 2), rel=1e-10)
    table = invoke("levels", "coulomb", "-d", "2", "-k", "1")
    assert "dimension 2" in table.stdout


# ---------------------------------------------------------------- Rytova-Keldysh


def test_struve_minus_y0_against_mpmath():
    # Source: mpmath struveh(0, x) - bessely(0, x) at 30 digits (reference library).
    mpmath.mp.dps = 30
    x = np.concatenate([np.geomspace(1e-12, 1e7, 120), [3.999999, 4.0, 4.000001]])
    ours = struve_minus_y0(x)
    for xi, value in zip(x, ours):
        exact = float(mpmath.struveh(0, xi) - mpmath.bessely(0, xi))
        assert value == pytest.approx(exact, rel=3e-15, abs=0), xi


def test_rytova_keldysh_limits():
    # Sources: H0 - Y0 -> 2/(pi x) (DLMF 11.6.1) gives -1/(kappa r) far out; near 0,
    # Y0 ~ (2/pi)(ln(x/2) + gamma) (DLMF 10.8.2) gives (1/r0)(ln(kappa r/(2 r0)) + gamma).
    r0, kappa = 30.0, 2.5
    pot = radsolve.potential("rytova_keldysh", screening_length=r0, dielectric=kappa)
    far = np.array([1e5, 1e7])
    assert np.allclose(pot(far), -1.0 / (kappa * far), rtol=1e-6)
    near = np.array([1e-10, 1e-8])
    log_law = (np.log(kappa * near / (2 * r0)) + np.euler_gamma) / r0
    assert np.allclose(pot(near), log_law, rtol=1e-9)
    assert np.all(np.isfinite(pot(np.geomspace(1e-16, 1e7, 200))))


def test_rytova_keldysh_tends_to_2d_hydrogen():
    # Source: for r0 -> 0, V -> -1/(kappa r), whose 2D levels are
    # -mu/(2 kappa^2 (n - 1/2)^2) (textbook formula).  The deviation shrinks with r0.
    mu, kappa = 0.5, 2.0
    deviations = []
    for r0 in (1e-3, 1e-4):
        pot = radsolve.potential("rytova_keldysh", screening_length=r0, dielectric=kappa)
        res = radsolve.solve(pot, l=[0, 1], count=2, mass=mu, dimension=2, tol=1e-11)
        rel = [abs(lev.energy / hydrogen_d(lev.nodes + lev.l + 1, 1.0 / kappa, mu, 2) - 1)
               for lev in res.levels]
        deviations.append(max(rel))
    assert deviations[1] < 2e-4
    assert deviations[1] < deviations[0] / 5


def test_rytova_keldysh_exciton_is_less_bound_than_2d_coulomb():
    # Screening in the layer weakens the attraction at r < r0: the 1s exciton lies above
    # the unscreened 2D hydrogen level -mu/(2 kappa^2 (1/2)^2) (textbook formula) and
    # the excited series approaches it as n grows (a fact of the trade for 2D excitons).
    mu = 0.25
    pot = radsolve.potential("rytova_keldysh")  # r0 = 41.47 angstrom, freestanding
    res = radsolve.solve(pot, l=0, count=4, mass=mu, dimension=2, tol=1e-9)
    ratios = [lev.energy / hydrogen_d(lev.nodes + 1, 1.0, mu, 2) for lev in res.levels]
    assert all(0 < q < 1 for q in ratios)
    assert ratios == sorted(ratios)
