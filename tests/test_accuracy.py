"""Accuracy of both solvers against exact spectra.

Sources of the reference values:
- Coulomb: E = -mu Z**2 / (2 n**2) hartree (textbook formula), cross-checked
  with sympy.physics.hydrogen.E_nl (sympy), which gives -Z**2/(2 n**2) for
  unit mass.
- 3D isotropic oscillator: E = (2 n_r + l + 3/2) omega (textbook formula).
- Linear potential, l = 0: E = -a_k (F**2 / (2 mu))**(1/3) with a_k the zeros
  of the Airy function (textbook formula; zeros from scipy.special.ai_zeros).
- Hydrogen with the electron-proton reduced mass against the CODATA Rydberg
  energy from scipy.constants.
"""

import math

import numpy as np
import pytest
import scipy.constants as const
from scipy.special import ai_zeros

import radsolve
from helpers import exact_hydrogenic

NMAX = 10


def _coulomb_run(Z, method, mass=1.0):
    pot = radsolve.potential("coulomb", Z=Z)
    levels = []
    for l in range(NMAX):
        result = radsolve.solve(pot, l=l, count=NMAX - l, mass=mass, method=method)
        assert result.success, result.message
        levels.extend(result.levels)
    return levels


@pytest.fixture(scope="module", params=[1, 92])
def coulomb_levels(request):
    Z = request.param
    return Z, {m: _coulomb_run(Z, m) for m in ("fd", "numerov")}


@pytest.mark.parametrize("method,limit", [("fd", 1e-10), ("numerov", 1e-9)])
def test_coulomb_all_levels_n_le_10(coulomb_levels, method, limit):
    Z, runs = coulomb_levels
    levels = runs[method]
    assert len(levels) == NMAX * (NMAX + 1) // 2  # every l < n for n <= 10: 55 levels
    for lev in levels:
        exact = exact_hydrogenic(lev.n, Z)  # sympy.physics.hydrogen (sympy)
        assert lev.n == lev.nodes + lev.l + 1
        rel = abs(lev.energy - exact) / abs(exact)
        assert rel <= limit, (lev.label, rel)
        # the estimate must not understate the true error by more than 10x
        # (above the double-precision floor of ~1e-14 relative)
        assert abs(lev.energy - exact) <= 10 * lev.error_estimate + 1e-14 * abs(exact), lev.label
        assert lev.converged


def test_coulomb_methods_agree_within_estimates(coulomb_levels):
    Z, runs = coulomb_levels
    for a, b in zip(runs["fd"], runs["numerov"]):
        assert (a.n, a.l) == (b.n, b.l)
        assert abs(a.energy - b.energy) <= a.error_estimate + b.error_estimate + 2e-14 * abs(a.energy)


def test_coulomb_exact_value_and_deviation_are_attached(coulomb_levels):
    Z, runs = coulomb_levels
    lev = runs["fd"][0]
    assert lev.exact == pytest.approx(-(Z**2) / 2, rel=1e-15)  # textbook formula
    assert lev.deviation == pytest.approx(lev.energy - lev.exact, abs=1e-300)


@pytest.mark.parametrize("method", ["fd", "numerov"])
def test_harmonic_oscillator(method):
    omega = 0.7
    pot = radsolve.potential("harmonic", omega=omega)
    result = radsolve.solve(pot, l=[0, 1, 2, 3], count=4, method=method)
    assert result.success
    for lev in result.levels:
        exact = (2 * lev.nodes + lev.l + 1.5) * omega  # textbook formula
        assert abs(lev.energy - exact) / exact <= 1e-10, lev.label


@pytest.mark.parametrize("method", ["fd", "numerov"])
def test_linear_potential_airy_zeros(method):
    slope, mass = 0.3, 2.0
    pot = radsolve.potential("linear", slope=slope)
    result = radsolve.solve(pot, l=0, count=6, mass=mass, method=method)
    zeros = ai_zeros(6)[0]  # scipy.special
    exact = -zeros * (slope**2 / (2 * mass)) ** (1 / 3)  # textbook formula
    assert np.allclose(result.energies, exact, rtol=1e-10, atol=0)


def test_hydrogen_ground_state_against_codata_rydberg():
    # E(1s) = -R_inf h c * mu/m_e with mu the electron-proton reduced mass
    # (CODATA via scipy.constants).
    result = radsolve.solve("coulomb", l=0, count=1, mass="electron+proton", method="both")
    m_e, m_p = const.m_e, const.m_p
    rydberg_joule = const.Rydberg * const.h * const.c
    expected_eV = -rydberg_joule * (m_p / (m_e + m_p)) / const.e
    got_eV = result.levels[0].energy * const.physical_constants["Hartree energy in eV"][0]
    assert got_eV == pytest.approx(expected_eV, rel=1e-10)


@pytest.mark.parametrize("mass", [1.0, "electron+proton", "muon+proton"])
def test_coulomb_reduced_mass_scaling(mass):
    result = radsolve.solve("coulomb", l=[0, 1], count=3, mass=mass)
    mu = result.mass
    for lev in result.levels:
        exact = -mu / (2 * lev.n**2)  # textbook formula
        assert lev.energy == pytest.approx(exact, rel=1e-10)
        assert lev.exact == pytest.approx(exact, rel=1e-14)


def test_both_folds_disagreement_into_estimate():
    result = radsolve.solve("yukawa", l=0, count=3, method="both")
    for lev in result.levels:
        fd, nu = lev.method_energies["fd"], lev.method_energies["numerov"]
        assert lev.error_estimate >= abs(fd - nu)
        assert lev.error_estimate >= max(lev.method_errors.values())


def test_tolerance_is_honoured_for_loose_tol():
    result = radsolve.solve("coulomb", l=[0, 2], count=4, tol=1e-6)
    assert len(result.levels) == 8 and result.mass == 1.0  # unit mass, the default
    for lev in result.levels:
        exact = exact_hydrogenic(lev.n, 1)  # sympy.physics.hydrogen (sympy), for mu = 1
        rel = abs(lev.energy - exact) / abs(exact)
        assert rel <= 1e-6
        assert abs(lev.energy - exact) <= 10 * lev.error_estimate + 1e-14


@pytest.mark.parametrize("tol", [1e-10, 1.5e-9, 1e-9, 1e-8, 1e-7])
@pytest.mark.parametrize("method", ["fd", "numerov"])
def test_estimates_honest_on_both_sides_of_the_loose_start(tol, method):
    # From tol = 1e-9 on, the refinement starts from grids twice as coarse: the estimates
    # must stay honest there as below it.  Coulomb Z = 3 (exact_hydrogenic: sympy) and the
    # oscillator E = (2 n_r + l + 3/2) omega (textbook formula), every l up to 3.
    coulomb = radsolve.solve(radsolve.potential("coulomb", Z=3), l=[0, 1, 2, 3], count=4, tol=tol, method=method)
    oscillator = radsolve.solve(radsolve.potential("harmonic", omega=0.7), l=[0, 1, 2, 3], count=4, tol=tol,
                                method=method)
    assert coulomb.success and oscillator.success
    for lev in coulomb.levels:
        exact = exact_hydrogenic(lev.n, 3)
        assert abs(lev.energy - exact) <= max(10 * lev.error_estimate, 1e-15)
        assert abs(lev.energy - exact) <= 10 * tol * abs(exact)
    for lev in oscillator.levels:
        exact = (2 * lev.nodes + lev.l + 1.5) * 0.7
        assert abs(lev.energy - exact) <= max(10 * lev.error_estimate, 1e-15)
        assert abs(lev.energy - exact) <= 10 * tol * abs(exact)


def test_high_n_coulomb_levels():
    # n up to 20 for l = 0: the box must grow with n**2 (textbook formula for E)
    result = radsolve.solve("coulomb", l=0, count=20)
    assert result.success
    for lev in result.levels:
        assert lev.energy == pytest.approx(-0.5 / lev.n**2, rel=1e-10)
    assert math.isclose(result.levels[-1].n, 20)
