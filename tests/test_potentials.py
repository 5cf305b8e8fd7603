"""The built-in potential families, checked without a solver.

finite_nucleus is compared with an independent numerical solution of
electrostatics (Gauss's law, textbook formula, integrated with scipy.integrate.quad)
and, for the Fermi shape, with the closed form through polylogarithms evaluated by
mpmath.  The exact-energy hooks are compared with sympy and mpmath.
"""

import math

import mpmath as mp
import numpy as np
import pytest
from scipy.constants import physical_constants
from scipy.integrate import quad
from scipy.special import erf, expit

from helpers import BOHR_M, FM, exact_hydrogenic
from radsolve.potentials import discover, potential


def fm(x):
    return x * FM


# --------------------------------------------------------------------------- finite nucleus
# Independent charge shapes (textbook forms), unnormalized; normalization,
# moments and potentials below are all done by quadrature.

def shape_function(model, radius, c=None, a=None):
    if model == "uniform":
        R = math.sqrt(5.0 / 3.0) * radius  # rms of a uniform sphere is sqrt(3/5) R (textbook formula)
        return (lambda r: 1.0 if r < R else 0.0), [R]
    if model == "gaussian":
        sigma = radius / math.sqrt(3.0)  # rms of exp(-r²/2σ²) in 3-D is sqrt(3) σ (textbook formula)
        return (lambda r: math.exp(-0.5 * (r / sigma) ** 2)), []
    return (lambda r: float(expit((c - r) / a))), [c] if c > 0 else []


def integral(f, lo, hi, points):
    """∫_lo^hi f, split at ``points`` so quad sees each smooth piece."""
    edges = [lo] + sorted(p for p in points if lo < p < hi) + [hi]
    total = 0.0
    for left, right in zip(edges[:-1], edges[1:]):
        value, _ = quad(f, left, right, epsabs=0.0, epsrel=1e-13, limit=400)
        total += value
    return total


def gauss_law_potential(rho, points, r, Z, outer):
    """V(r) = -(1/r) ∫_0^r 4πρ r'² dr' - ∫_r^∞ 4πρ r' dr' (Gauss's law, textbook formula)."""
    norm = integral(lambda x: 4 * math.pi * rho(x) * x * x, 0.0, outer, points)
    inner = integral(lambda x: 4 * math.pi * rho(x) * x * x, 0.0, r, points) if r > 0 else 0.0
    tail = integral(lambda x: 4 * math.pi * rho(x) * x, r, outer, points)
    q_over_r = inner / r if r > 0 else 0.0
    return -Z * (q_over_r + tail) / norm


CASES = [
    # (Z, rms radius, model, diffuseness): nuclear sizes of a few fm (demo values)
    (1, fm(0.84), "uniform", None),
    (6, fm(2.47), "gaussian", None),
    (20, fm(3.48), "uniform", None),
    (20, fm(3.48), "fermi", fm(0.523)),
    (82, fm(5.50), "fermi", fm(0.523)),
    (3, fm(2.0), "fermi", fm(0.55)),   # c/a of order 1: far from the large-c regime
    (2, fm(1.9), "fermi", fm(0.5)),    # c close to zero
    (50, fm(4.6), "gaussian", None),
]


def make(Z, radius, model, a):
    params = dict(Z=Z, radius=radius, model=model)
    if a is not None:
        params["diffuseness"] = a
    return potential("finite_nucleus", **params)


def half_density(pot):
    from radsolve.potentials.builtin.finite_nucleus import nuclear_shape

    p = pot.parameters
    return nuclear_shape(p["radius"], p["model"], p["diffuseness"]).half_density_radius


@pytest.mark.parametrize("Z, radius, model, a", CASES)
def test_rms_radius_of_density_equals_parameter(Z, radius, model, a):
    pot = make(Z, radius, model, a)
    c = half_density(pot) if model == "fermi" else None
    rho, points = shape_function(model, radius, c, a)
    outer = 60 * radius if model != "fermi" else c + 80 * a
    m2 = integral(lambda x: rho(x) * x**2, 0.0, outer, points)
    m4 = integral(lambda x: rho(x) * x**4, 0.0, outer, points)
    # <r²> = ∫ρ r⁴ dr / ∫ρ r² dr (definition of the rms radius), by quadrature.
    assert math.sqrt(m4 / m2) == pytest.approx(radius, rel=1e-11)


@pytest.mark.parametrize("Z, radius, model, a", CASES)
def test_potential_matches_gauss_law(Z, radius, model, a):
    pot = make(Z, radius, model, a)
    c = half_density(pot) if model == "fermi" else None
    rho, points = shape_function(model, radius, c, a)
    outer = 60 * radius if model != "fermi" else c + 80 * a
    radii = np.concatenate(([0.0], radius * np.array([1e-6, 1e-3, 0.1, 0.5, 0.9, 1.0, 1.2, 1.5, 2.0, 3.0, 8.0])))
    values = pot(radii)
    for r, v in zip(radii, values):
        reference = gauss_law_potential(rho, points, r, Z, outer)
        assert v == pytest.approx(reference, rel=1e-11), r


@pytest.mark.parametrize("Z, radius, model, a", CASES)
def test_outside_the_nucleus_it_is_coulomb(Z, radius, model, a):
    pot = make(Z, radius, model, a)
    # Far outside the charge, V = -Z/r (Gauss's law, textbook formula).
    r = radius * np.array([40.0, 100.0, 1e3]) if model != "uniform" else radius * np.array([1.3, 2.0, 10.0])
    np.testing.assert_allclose(pot(r), -Z / r, rtol=1e-13)
    assert pot.v_infinity() == 0.0


def test_uniform_sphere_closed_form_and_breakpoint():
    Z, radius = 20, fm(3.48)
    R = math.sqrt(5.0 / 3.0) * radius
    pot = make(Z, radius, "uniform", None)
    r = np.linspace(0, R, 7)
    # Uniformly charged sphere: V = -Z (3 - r²/R²)/(2R) inside (textbook formula).
    np.testing.assert_allclose(pot(r), -Z * (3 - (r / R) ** 2) / (2 * R), rtol=1e-14)
    assert pot.breakpoints() == [pytest.approx(R, rel=1e-15)]
    assert pot.small_r() == (pytest.approx(-1.5 * Z / R, rel=1e-15), 0.0)


def test_gaussian_closed_form():
    Z, radius = 6, fm(2.47)
    sigma = radius / math.sqrt(3.0)
    pot = make(Z, radius, "gaussian", None)
    r = radius * np.array([0.01, 0.7, 2.0, 5.0])
    # Gaussian charge: V = -Z erf(r/(√2σ))/r (textbook formula).
    np.testing.assert_allclose(pot(r), -Z * erf(r / (math.sqrt(2) * sigma)) / r, rtol=1e-14)
    # V(0) = -Z sqrt(2/π)/σ, the r -> 0 limit of the same formula.
    assert float(pot(0.0)) == pytest.approx(-Z * math.sqrt(2 / math.pi) / sigma, rel=1e-14)
    assert pot.breakpoints() == []


def fermi_closed_form(Z, c, a, r, dps=40):
    """V(r) of the Fermi shape through polylogarithms (mpmath).

    ∫ x^k/(1+e^((x-c)/a)) dx = Σ_j a^(j+1) k!/(k-j)! x^(k-j) Li_{j+1}(-e^((c-x)/a)):
    repeated integration by parts with d/dx Li_s(-e^((c-x)/a)) = -Li_{s-1}(...)/a
    (textbook formula; the complete integrals are the Fermi-Dirac integrals).
    """
    with mp.workdps(dps):
        c, a = mp.mpf(c), mp.mpf(a)

        def G(k, x):
            return sum(a ** (j + 1) * mp.factorial(k) / mp.factorial(k - j) * x ** (k - j)
                       * mp.polylog(j + 1, -mp.exp((c - x) / a)) for j in range(k + 1))

        J2 = -G(2, mp.mpf(0))
        J4 = -G(4, mp.mpf(0))
        x = mp.mpf(r)
        if x == 0:
            value = Z * G(1, x) / J2
        else:
            value = -Z / J2 * ((J2 + G(2, x)) / x - G(1, x))
        return float(value), float(mp.sqrt(J4 / J2))


@pytest.mark.parametrize("Z, radius, a", [(82, fm(5.5), fm(0.523)), (3, fm(2.0), fm(0.55)),
                                          (2, fm(1.9), fm(0.5)), (20, fm(7.0), fm(0.3))])
def test_fermi_is_exact(Z, radius, a):
    pot = make(Z, radius, "fermi", a)
    c = half_density(pot)
    radii = np.concatenate(([0.0, 1e-12], np.geomspace(1e-4 * radius, 30 * radius, 60)))
    values = pot(radii)
    for r, v in zip(radii, values):
        reference, rms = fermi_closed_form(Z, c, a, r)
        assert v == pytest.approx(reference, rel=1e-12), r
    # The exact rms relation (not its large-c approximation) defines c.
    assert rms == pytest.approx(radius, rel=1e-12)


def test_fermi_large_c_approximation():
    # <r²> ≈ (3/5) c² + (7/5) π² a² up to terms of order exp(-c/a)
    # (standard expansion of the Fermi-Dirac integrals; from memory).
    a, radius = fm(0.523), fm(5.5)
    c = half_density(make(82, radius, "fermi", a))
    approx = math.sqrt(0.6 * c**2 + 1.4 * math.pi**2 * a**2)
    assert approx == pytest.approx(radius, rel=1e-5)
    assert c / a > 10


def test_fermi_needs_rms_above_sqrt12_a():
    from radsolve.errors import InputError

    # As c -> -inf the Fermi shape tends to exp(-r/a), whose rms radius is
    # sqrt(4!/2!) a = sqrt(12) a (textbook integral ∫ r^k e^(-r/a) dr = k! a^(k+1)).
    a = fm(0.5)
    make(1, 1.001 * math.sqrt(12) * a, "fermi", a)
    with pytest.raises(InputError, match="diffuseness"):
        make(1, 0.999 * math.sqrt(12) * a, "fermi", a)


def test_charge_density_is_normalized():
    from radsolve.potentials.builtin.finite_nucleus import charge_density

    for Z, radius, model, a in CASES:
        kwargs = dict(Z=Z, radius=radius, model=model)
        if a is not None:
            kwargs["diffuseness"] = a
        edges = [math.sqrt(5 / 3) * radius] if model == "uniform" else []
        total = integral(lambda x: 4 * math.pi * float(charge_density(x, **kwargs)) * x * x,
                         0.0, 80 * radius, edges)
        assert total == pytest.approx(Z, rel=1e-11)


def test_default_radius_is_codata_proton_radius():
    pot = potential("finite_nucleus")
    # CODATA proton rms charge radius via scipy.constants.
    expected = physical_constants["proton rms charge radius"][0] / BOHR_M
    assert pot.parameters["radius"] == pytest.approx(expected, rel=1e-14)
    # Diffuseness default: surface thickness 4 ln3 · a = 2.30 fm (common practice, from memory).
    assert 4 * math.log(3) * pot.parameters["diffuseness"] == pytest.approx(fm(2.30), rel=1e-12)


# --------------------------------------------------------------------------- closed forms

def test_coulomb_and_yukawa_values():
    r = np.geomspace(1e-3, 1e2, 9)
    # V = -Z/r and -Z e^(-r/D)/r (definitions; textbook formulas).
    np.testing.assert_allclose(potential("coulomb", Z=3)(r), -3 / r, rtol=1e-15)
    np.testing.assert_allclose(potential("yukawa", Z=2, screening_length=4)(r),
                               -2 * np.exp(-r / 4) / r, rtol=1e-15)
    # Yukawa -> Coulomb as D -> inf.
    np.testing.assert_allclose(potential("yukawa", Z=2, screening_length=1e12)(r), -2 / r, rtol=1e-9)
    assert potential("yukawa").small_r() == (-1.0, -1.0)


def test_pseudopotential_shapes():
    empty = potential("empty_core", valence=3, core_radius=2.0)
    r = np.array([0.0, 1.0, 1.999, 2.0, 4.0])
    # Ashcroft empty core: 0 inside r_c, -Z_v/r outside (Phys. Lett. 23, 48 (1966), from memory).
    np.testing.assert_array_equal(empty(r), [0.0, 0.0, 0.0, -1.5, -0.75])
    assert empty.breakpoints() == [2.0] and empty.small_r() == (0.0, 0.0)
    flat = potential("flat_core", valence=2, model_radius=1.5, well_depth=0.7)
    # Heine-Abarenkov local well: -A inside R_M, -Z_v/r outside (Phil. Mag. 9, 451 (1964), from memory).
    np.testing.assert_allclose(flat(np.array([0.0, 1.0, 1.5, 3.0])), [-0.7, -0.7, -2 / 1.5, -2 / 3],
                               rtol=1e-15)
    assert flat.breakpoints() == [1.5] and flat.small_r() == (-0.7, 0.0)


def test_confining_families():
    r = np.array([0.0, 0.5, 2.0])
    np.testing.assert_allclose(potential("harmonic", omega=0.3)(r), 0.5 * 0.09 * r**2, rtol=1e-15)
    np.testing.assert_allclose(potential("linear", slope=0.2)(r), 0.2 * r, rtol=1e-15)
    assert potential("harmonic").v_infinity() == math.inf
    assert potential("linear").v_infinity() == math.inf


# --------------------------------------------------------------------------- exact energies

MUON_MASS = physical_constants["muon-electron mass ratio"][0]  # CODATA via scipy.constants


@pytest.mark.parametrize("n, l", [(1, 0), (2, 0), (2, 1), (3, 2), (7, 4)])
@pytest.mark.parametrize("Z, mass", [(1, 1.0), (3, 0.5), (2.5, MUON_MASS)])
def test_coulomb_exact_energy_against_sympy(n, l, Z, mass):
    # sympy.physics.hydrogen.E_nl: -Z²/(2n²) hartree for unit mass; scales with μ.
    assert potential("coulomb", Z=Z).exact_energy(n, l, mass) == pytest.approx(
        exact_hydrogenic(n, Z, mass), rel=1e-14)


@pytest.mark.parametrize("n, l", [(1, 0), (2, 1), (3, 0), (3, 2), (6, 1)])
@pytest.mark.parametrize("omega, mass", [(1.0, 1.0), (0.25, 4.0), (2.0, 0.5)])
def test_harmonic_exact_energy_against_sympy(n, l, omega, mass):
    from sympy.physics.sho import E_nl

    # sympy.physics.sho.E_nl(n_r, l, ħω) = ħω (2 n_r + l + 3/2); the oscillator
    # frequency of mass μ in V = ½ω²r² is ω/√μ (textbook formula).
    expected = float(E_nl(n - l - 1, l, omega / math.sqrt(mass)))
    assert potential("harmonic", omega=omega).exact_energy(n, l, mass) == pytest.approx(expected, rel=1e-14)


@pytest.mark.parametrize("n", [1, 2, 5, 12])
@pytest.mark.parametrize("slope, mass", [(1.0, 1.0), (0.3, 2.0)])
def test_linear_exact_energy_against_mpmath(n, slope, mass):
    # E = -a_n (F²/(2μ))^(1/3) with a_n the n-th zero of Ai (textbook formula);
    # zeros from mpmath.airyaizero, independent of scipy's ai_zeros.
    a_n = float(mp.airyaizero(n))
    expected = -a_n * (slope**2 / (2 * mass)) ** (1 / 3)
    pot = potential("linear", slope=slope)
    assert pot.exact_energy(n, 0, mass) == pytest.approx(expected, rel=1e-12)
    assert pot.exact_energy(n + 1, 1, mass) is None


def test_no_exact_energy_where_none_is_known():
    for name in ("yukawa", "finite_nucleus", "empty_core", "flat_core"):
        assert potential(name).exact_energy(1, 0, 1.0) is None


# --------------------------------------------------------------------------- robustness

PARAMETER_SETS = [(name, {}) for name in sorted(discover())] + [
    ("finite_nucleus", {"model": "gaussian", "Z": 92, "radius": "5.86fm"}),
    ("finite_nucleus", {"model": "fermi", "Z": 92, "radius": "5.86fm"}),
    ("yukawa", {"screening_length": "0.1angstrom"}),
    ("flat_core", {"well_depth": "-3eV"}),
]


@pytest.mark.parametrize("name, params", PARAMETER_SETS)
def test_vectorized_and_finite_at_extreme_radii(name, params):
    pot = potential(name, **params)
    r = np.array([1e-12, 1e-8, 1e-3, 1.0, 37.0, 1e4])
    values = pot(r)
    assert values.shape == r.shape and np.all(np.isfinite(values))
    # The array call agrees with point-by-point calls.
    np.testing.assert_array_equal(values, [float(pot(x)) for x in r])
    grid = np.geomspace(1e-12, 1e4, 12).reshape(3, 4)
    assert pot(grid).shape == (3, 4)
