"""Phase shifts against exact solutions (hard sphere, square well, Coulomb waves)."""

import math

import numpy as np
import pytest
from scipy.special import spherical_jn, spherical_yn

import radsolve
from radsolve.analysis.scattering import energy_grid, phase_shifts
from radsolve.errors import InputError


def _mod_pi(x):
    """x folded into [-pi/2, pi/2): phase differences where only tan(delta) is known."""
    return (np.asarray(x) + 0.5 * math.pi) % math.pi - 0.5 * math.pi


ENERGIES = np.linspace(0.05, 8.0, 40)
K = np.sqrt(2.0 * ENERGIES)


def test_hard_sphere_tan_delta_is_j_over_y():
    # Hard sphere of radius a: tan delta_l = j_l(ka) / y_l(ka) (textbook formula, e.g. Sakurai,
    # Modern Quantum Mechanics, 1994, sec. 7.6); j_l, y_l from scipy.special.
    a = 1.3
    free = radsolve.formula_potential("0*r")
    res = phase_shifts(free, ENERGIES, l=list(range(6)), hard_core=a, tol=1e-11)
    for i, l in enumerate(range(6)):
        exact = np.arctan(spherical_jn(l, K * a) / spherical_yn(l, K * a))
        assert np.max(np.abs(_mod_pi(res.phase[i] - exact))) < 1e-10, l
    # s wave: delta_0 = -k a exactly, on the continuous branch (textbook formula)
    assert np.max(np.abs(res.phase[0] + K * a)) < 1e-10


def test_square_well_phase_shifts_match_closed_form():
    # Attractive square well V = -V0 for r < R: matching j_l(K r) to j_l - tan(delta) y_l at R,
    # tan delta = (k j' - g j) / (k y' - g y), g = K j_l'(KR)/j_l(KR), K**2 = k**2 + 2 V0
    # (textbook formula, e.g. Schiff, Quantum Mechanics, 1968, sec. 19).
    V0, R = 1.7, 2.0
    well = radsolve.formula_potential("-V0*step(R-r)", V0=V0, R=R)
    res = phase_shifts(well, ENERGIES, l=[0, 1, 2, 3], tol=1e-11)
    Kin = np.sqrt(K**2 + 2.0 * V0)
    for i, l in enumerate(res.ls):
        g = Kin * spherical_jn(l, Kin * R, True) / spherical_jn(l, Kin * R)
        jk, yk = spherical_jn(l, K * R), spherical_yn(l, K * R)
        jp, yp = spherical_jn(l, K * R, True), spherical_yn(l, K * R, True)
        exact = np.arctan((K * jp - g * jk) / (K * yp - g * yk))
        err = np.abs(_mod_pi(res.phase[i] - exact))
        assert np.max(err) < 1e-10, (l, np.max(err))
        # the estimate is honest: the true error is within a few times of it
        assert np.all(err <= 3.0 * res.error[i] + 1e-12)


def test_pure_coulomb_phase_is_arg_gamma():
    # Pure Coulomb: the wave is F_l itself, so the phase relative to Coulomb waves is 0 and the
    # Coulomb phase is sigma_l = arg Gamma(l + 1 + i eta), eta = -Z/k (textbook formula;
    # mpmath's gamma as the reference, compared modulo 2 pi: sigma_l is reported on the branch
    # continuous in eta).
    mpmath = pytest.importorskip("mpmath")
    energies = np.array([0.02, 0.3, 2.0])
    res = phase_shifts(radsolve.potential("coulomb", Z=1), energies, l=[0, 1, 2], tol=1e-10)
    assert res.tail == "coulomb" and res.success
    eta = -1.0 / np.sqrt(2.0 * energies)
    for i, l in enumerate(res.ls):
        assert np.max(np.abs(res.phase[i])) < 1e-10
        exact = np.array([float(mpmath.arg(mpmath.gamma(l + 1 + 1j * e))) for e in eta])
        diff = (res.coulomb_phase[i] - exact + math.pi) % (2 * math.pi) - math.pi
        assert np.max(np.abs(diff)) < 1e-10


def test_repulsive_coulomb_with_hard_core_against_mpmath():
    # A hard sphere of radius a in a repulsive Coulomb field: u = F cos(d) + G sin(d) vanishes at
    # a, tan d = -F_l(eta, ka) / G_l(eta, ka) (textbook formula; mpmath's Coulomb functions).
    mpmath = pytest.importorskip("mpmath")
    a = 0.7
    energies = np.array([0.02, 0.3, 2.0])
    k = np.sqrt(2.0 * energies)
    res = phase_shifts(radsolve.formula_potential("2/r"), energies, l=[0, 1], tol=1e-10, hard_core=a)
    for i, l in enumerate(res.ls):
        exact = np.array([float(mpmath.atan(-mpmath.coulombf(l, 2 / kk, kk * a) / mpmath.coulombg(l, 2 / kk, kk * a)))
                          for kk in k])
        assert np.max(np.abs(_mod_pi(res.phase[i] - exact))) < 1e-10


def test_phase_is_continuous_and_vanishes_at_high_energy():
    # A well deep enough to bind levels and with a low-energy l = 1 resonance: delta varies by
    # far less than pi between neighbouring energies (no branch jumps), and delta -> 0 as
    # E -> inf for a potential regular at the origin (textbook: Born limit).
    well = radsolve.formula_potential("-V0*exp(-r**2)", V0=6.0)
    energies = np.linspace(0.01, 4.0, 400)
    res = phase_shifts(well, energies, l=[0, 1, 2], tol=1e-8)
    assert np.max(np.abs(np.diff(res.phase, axis=1))) < 0.5
    high = phase_shifts(well, [2000.0], l=[0, 1, 2], tol=1e-8)
    assert np.max(np.abs(high.phase)) < 0.15


@pytest.mark.parametrize("call, parameter, words", [
    (lambda: phase_shifts("yukawa", [-0.1, 0.2]), "energies", "above the threshold"),
    (lambda: phase_shifts("yukawa", []), "energies", "at least one"),
    (lambda: phase_shifts("harmonic", [1.0]), "potential", "no continuum"),
    (lambda: phase_shifts(radsolve.formula_potential("-1/r**1.5"), [1.0]), "potential", "no matching rule"),
    (lambda: phase_shifts("yukawa", [1.0], tol=0.0), "tol", "tol"),
    (lambda: phase_shifts("yukawa", [1.0], hard_core=-1.0), "hard_core", "radius"),
    (lambda: phase_shifts("yukawa", [1.0], dimension=2), "dimension", "odd"),
    (lambda: energy_grid(2.0, 1.0, 10), "energies", "inverted"),
])
def test_bad_input_names_the_input(call, parameter, words):
    with pytest.raises(InputError) as info:
        call()
    assert info.value.parameter == parameter
    assert words in str(info.value)
