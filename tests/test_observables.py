"""Expectation values and diagnostics of computed states (radsolve.analysis.observables).

Sources of the reference values, beside each check:

- Hydrogen levels: sympy.physics.hydrogen.E_nl (sympy), scaled by the reduced
  mass (proton-electron mass ratio: CODATA via scipy.constants).
- Hydrogen-like radial moments (textbook formulas, e.g. Bethe & Salpeter,
  Quantum Mechanics of One- and Two-Electron Atoms, 1957, eq. 3.26):
  <r> = (3n^2 - l(l+1)) / (2Z), <r^2> = n^2 (5n^2 + 1 - 3l(l+1)) / (2Z^2),
  <1/r> = Z/n^2, <1/r^2> = Z^2 / (n^3 (l + 1/2)), all for unit mass; for
  reduced mass mu every length scales as 1/mu.
- Non-integer moments of 1s and 2p: the closed-form u (textbook) integrated
  with the Gamma function (scipy.special.gamma).
- Virial theorem 2<T> = <r dV/dr> (textbook), = k<V> for V ~ r^k.
- Hellmann-Feynman theorem dE/dp = <dV/dp> (textbook).
- P(r < R) for 1s: 1 - exp(-2ZR)(1 + 2ZR + 2Z^2R^2) (textbook integral).
- Contact density |psi(0)|^2 = Z^3 / (pi n^3) for s states (textbook formula).
- Classical turning points from the quadratic -Z/r + l(l+1)/(2 mu r^2) = E
  and from (1/2) omega^2 r^2 = E (textbook algebra), with the exact levels.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.constants import physical_constants
from scipy.special import gamma

import radsolve
from helpers import exact_hydrogenic
from radsolve.errors import InputError
from radsolve.analysis.observables import Estimate, State, expectation, state


def closed_forms(n: int, l: int, Z: float = 1.0, mu: float = 1.0) -> dict[float, float]:
    """Hydrogen-like <r^k> (textbook formulas, Bethe & Salpeter 1957); lengths scale as 1/(mu Z)."""
    a = 1.0 / mu
    return {
        1.0: a * (3 * n * n - l * (l + 1)) / (2 * Z),
        2.0: a * a * n * n * (5 * n * n + 1 - 3 * l * (l + 1)) / (2 * Z * Z),
        -1.0: Z / (n * n) / a,
        -2.0: Z * Z / (n**3 * (l + 0.5)) / a**2,
    }


@pytest.fixture(scope="module")
def hydrogen(hydrogen_result):
    """States n <= 5 of the shared solve of -1/r (l = 0..4, unit mass; conftest.py), by label."""
    return {lev.label: State.from_result(hydrogen_result, lev.label)
            for lev in hydrogen_result.levels if lev.n <= 5}


@pytest.mark.parametrize("label", ["1s", "2s", "2p", "3s", "3d", "4f", "5s", "5p", "5g"])
def test_hydrogen_radial_moments(hydrogen, label):
    st = hydrogen[label]
    for k, exact in closed_forms(st.n, st.l).items():  # textbook formulas
        est = st.moment(k)
        rel = abs(est.value - exact) / abs(exact)
        assert rel <= 1e-8, (label, k, rel)
        # the estimate must not understate the true error by more than 10x
        assert abs(est.value - exact) <= 10 * est.error + 1e-14 * abs(exact), (label, k)
        assert est.converged


@pytest.mark.parametrize("n,l,Z,mass", [(1, 0, 2.0, "electron+proton"), (3, 1, 3.0, "muon+proton"),
                                        (2, 1, 1.0, "electron+positron")])
def test_moments_scale_with_charge_and_reduced_mass(n, l, Z, mass):
    from scipy.constants import physical_constants as pc

    st = state(radsolve.potential("coulomb", Z=Z), n, l, mass=mass)
    # reduced mass from CODATA masses (scipy.constants)
    me = pc["electron mass"][0]
    partner = {"electron+proton": pc["proton mass"][0], "muon+proton": pc["proton mass"][0],
               "electron+positron": me}[mass]
    first = {"electron+proton": me, "muon+proton": pc["muon mass"][0], "electron+positron": me}[mass]
    mu = first * partner / (first + partner) / me
    for k, exact in closed_forms(n, l, Z, mu).items():
        assert st.moment(k).value == pytest.approx(exact, rel=1e-8)


@pytest.mark.parametrize("k", [0.5, 3.7, -1.5, -2.5, -2.9])
def test_non_integer_moments_1s(hydrogen, k):
    # u_1s = 2 r e^{-r}: <r^k> = 4 Gamma(k + 3) / 2^(k + 3) (textbook integral, scipy.special.gamma)
    exact = 4.0 * gamma(k + 3.0) / 2.0 ** (k + 3.0)
    est = hydrogen["1s"].moment(k)
    assert est.value == pytest.approx(exact, rel=1e-6 if k < -2.6 else 1e-8)
    assert abs(est.value - exact) <= 10 * est.error + 1e-13 * exact


@pytest.mark.parametrize("k", [-3.5, -4.5])
def test_strongly_negative_moments_2p(hydrogen, k):
    # u_2p = r^2 e^{-r/2} / (2 sqrt 6): <r^k> = Gamma(k + 5) / 24 (textbook integral)
    exact = gamma(k + 5.0) / 24.0
    est = hydrogen["2p"].moment(k)
    assert est.value == pytest.approx(exact, rel=1e-6)
    assert abs(est.value - exact) <= 10 * est.error + 1e-13 * exact


@pytest.mark.parametrize("label,k,limit", [("1s", -3.0, -3), ("2s", -3.5, -3), ("2p", -5.0, -5),
                                           ("3d", -7.2, -7)])
def test_divergent_moments_are_refused_with_the_reason(hydrogen, label, k, limit):
    # u ~ r^(l+1) at the origin, so u^2 r^k is integrable only for k > -(2l + 3) (textbook)
    with pytest.raises(InputError) as info:
        hydrogen[label].moment(k)
    text = str(info.value)
    assert "diverges" in text and f"k > {limit}" in text and label in text


@pytest.mark.parametrize("bad", [float("nan"), float("inf"), "two", True])
def test_moment_needs_a_finite_real_k(hydrogen, bad):
    with pytest.raises(InputError):
        hydrogen["1s"].moment(bad)


def test_potential_and_kinetic_energy_of_hydrogen_with_reduced_mass():
    st = state("coulomb", 3, 1, mass="electron+proton", tol=1e-11)
    energy = st.level.energy
    # sympy.physics.hydrogen.E_nl (sympy), -1/(2 n^2), scaled by the electron-proton reduced
    # mass in electron masses, mu = 1/(1 + m_e/m_p) (CODATA via scipy.constants)
    mu = 1.0 / (1.0 + 1.0 / physical_constants["proton-electron mass ratio"][0])
    exact = exact_hydrogenic(3, 1, mu)
    assert energy == pytest.approx(exact, rel=1e-10)
    # virial theorem for -1/r (textbook): <V> = 2E, <T> = -E
    assert st.potential_energy().value == pytest.approx(2 * exact, rel=1e-9)
    assert st.kinetic_energy().value == pytest.approx(-exact, rel=1e-9)
    residual = st.energy_residual()
    assert abs(residual.value) <= 1e-10 * abs(exact)
    assert residual.converged


@pytest.mark.parametrize("name,params,n,l", [("coulomb", {"Z": 1.0}, 1, 0), ("coulomb", {"Z": 3.0}, 4, 2),
                                             ("harmonic", {"omega": 1.0}, 1, 0),
                                             ("harmonic", {"omega": 0.3}, 3, 1),
                                             ("linear", {}, 2, 1)])
def test_virial_theorem_for_power_laws(name, params, n, l):
    # 2<T> = k<V> for V ~ r^k (textbook virial theorem)
    st = state(radsolve.potential(name, **params), n, l, tol=1e-11)
    check = st.virial()
    assert check.available and check.kind == "power law"
    assert abs(check.deviation) <= 1e-7, check
    assert abs(check.deviation) <= 10 * check.ratio.error + 1e-12


def test_general_virial_theorem_for_yukawa():
    # 2<T> = <r dV/dr> for any smooth V (textbook virial theorem)
    st = state(radsolve.potential("yukawa", screening_length=8.0), 2, 1, tol=1e-11)
    check = st.virial()
    assert check.available and check.kind == "general"
    assert abs(check.deviation) <= 1e-7


@pytest.mark.parametrize("name,n", [("flat_core", 1), ("empty_core", 2)])
def test_virial_theorem_with_a_jump_in_v(name, n):
    # 2<T> = <r dV/dr> (textbook); a jump dV at r = b contributes b dV u(b)^2
    st = state(name, n, 0, tol=1e-11)
    assert st._jumps(), "these model potentials have a step"
    check = st.virial()
    assert check.available and check.kind == "general"
    assert abs(check.deviation) <= 1e-7, check


def test_hellmann_feynman_for_the_yukawa_screening_length():
    # dE/dD = <dV/dD> (Hellmann-Feynman theorem, textbook)
    st = state(radsolve.potential("yukawa", screening_length=5.0), 1, 0, tol=1e-12)
    check = st.hellmann_feynman("screening_length")
    assert check.relative_difference <= 1e-7, check
    assert check.agrees
    assert check.unit == "bohr" and check.derivative.unit == "hartree/bohr"


def test_hellmann_feynman_against_the_exact_coulomb_derivative():
    # E = -mu Z^2/(2 n^2): dE/dZ = -mu Z / n^2 (textbook formula)
    st = state(radsolve.potential("coulomb", Z=2.0), 2, 1, tol=1e-12)
    check = st.hellmann_feynman("Z")
    assert check.expectation.value == pytest.approx(-2.0 / 4.0, rel=1e-9)
    assert check.derivative.value == pytest.approx(-2.0 / 4.0, rel=1e-7)


def test_hellmann_feynman_bad_parameters():
    st = state("yukawa", 1, 0)
    with pytest.raises(InputError, match="no parameter 'depth'"):
        st.hellmann_feynman("depth")
    fermi = state(radsolve.potential("finite_nucleus", Z=20.0, model="uniform"), 1, 0)
    with pytest.raises(InputError, match="not a number"):
        fermi.hellmann_feynman("model")


@pytest.mark.parametrize("radius", [0.31, 1.0, 2.7182818])
def test_probability_inside_a_radius_1s(hydrogen, radius):
    # P(r < R) = 1 - e^{-2R} (1 + 2R + 2R^2) for 1s (textbook integral)
    exact = 1.0 - math.exp(-2 * radius) * (1 + 2 * radius + 2 * radius**2)
    est = hydrogen["1s"].probability_inside(radius)
    assert est.value == pytest.approx(exact, rel=1e-9)
    assert hydrogen["1s"].probability_inside(1e6).value == pytest.approx(1.0, abs=1e-12)


def test_probability_inside_accepts_units(hydrogen):
    from scipy.constants import angstrom, physical_constants

    radius = angstrom / physical_constants["Bohr radius"][0]  # CODATA via scipy.constants
    exact = 1.0 - math.exp(-2 * radius) * (1 + 2 * radius + 2 * radius**2)
    assert hydrogen["1s"].probability_inside("1angstrom").value == pytest.approx(exact, rel=1e-9)
    with pytest.raises(InputError):
        hydrogen["1s"].probability_inside(-1.0)


@pytest.mark.parametrize("label,exact", [("1s", 1.0), ("2p", 4.0), ("3d", 9.0), ("5g", 25.0),
                                         ("2s", 3.0 + math.sqrt(5.0))])
def test_most_probable_radius(hydrogen, label, exact):
    # u_nl for l = n-1 is r^n e^{-r/n}: maximum of u^2 at r = n^2; for 2s,
    # u^2 ~ r^2 (2 - r)^2 e^{-r} peaks at r = 3 + sqrt 5 (textbook closed forms)
    est = hydrogen[label].most_probable_radius()
    assert est.value == pytest.approx(exact, rel=1e-8)


def test_turning_points_coulomb_and_harmonic():
    from radsolve.units import parse_mass

    mu = parse_mass("electron+proton")
    st = state("coulomb", 3, 2, mass=mu)
    E = -mu / 18.0  # exact level, textbook formula
    # E r^2 + r - l(l+1)/(2 mu) = 0 (textbook algebra)
    c = -6.0 / (2 * mu)
    roots = sorted(np.roots([E, 1.0, c]).real)
    points = st.turning_points()
    assert [p.value for p in points] == pytest.approx(roots, rel=1e-9)
    osc = state(radsolve.potential("harmonic", omega=0.5), 2, 0)
    E = 3.5 * 0.5  # (2 n_r + l + 3/2) omega, textbook formula
    (point,) = osc.turning_points()
    assert point.value == pytest.approx(math.sqrt(2 * E) / 0.5, rel=1e-9)


@pytest.mark.parametrize("n", [1, 2, 3])
def test_contact_density_of_s_states(n):
    # |psi(0)|^2 = Z^3/(pi n^3) (textbook formula)
    Z = 2.0
    st = state(radsolve.potential("coulomb", Z=Z), n, 0, tol=1e-11)
    exact = Z**3 / (math.pi * n**3)
    assert st.contact_density().value == pytest.approx(exact, rel=1e-8)
    fit = st.contact_density("fit")
    assert fit.value == pytest.approx(exact, rel=1e-6)
    assert abs(fit.value - exact) <= 10 * fit.error


def test_contact_density_zero_for_l_positive_and_bad_method(hydrogen):
    assert hydrogen["2p"].contact_density().value == 0.0
    with pytest.raises(InputError, match="allowed"):
        hydrogen["1s"].contact_density("guess")


def test_finite_nucleus_contact_density():
    # A calcium-like nucleus: Z = 20, rms charge radius 3.48 fm (Angeli &
    # Marinova, At. Data Nucl. Data Tables 99 (2013) 69; from memory), as a
    # uniform sphere (a kink of V at its edge).  Its size lowers the 1s
    # density at the origin below the point-nucleus value Z^3/pi (textbook
    # formula) by a relative amount of order 2 Z R ~ 3e-3 (first-order
    # perturbation estimate; from memory).
    pot = radsolve.potential("finite_nucleus", Z=20.0, radius="3.48fm", model="uniform")
    st = state(pot, 1, 0, tol=1e-10)
    density = st.contact_density()
    point = 20.0**3 / math.pi
    assert 1e-3 < 1.0 - density.value / point < 1e-2
    assert density.relative_error < 1e-9
    fit = st.contact_density("fit")  # the independent route agrees within its estimate
    assert abs(fit.value - density.value) <= fit.error + density.error


def test_numerov_states_agree_with_closed_forms():
    st = state("coulomb", 3, 1, method="numerov")
    assert st.method == "numerov"
    for k, exact in closed_forms(3, 1).items():  # textbook formulas
        assert st.moment(k).value == pytest.approx(exact, rel=1e-8)


def test_expectation_dispatch(hydrogen):
    st = hydrogen["2p"]
    assert expectation(st, "1/r^2").value == pytest.approx(st.moment(-2).value, rel=1e-14)
    assert expectation(st, "r**1.5").value == pytest.approx(st.moment(1.5).value, rel=1e-14)
    assert expectation(st, 2).value == pytest.approx(30.0, rel=1e-8)  # n^2(5n^2+1-6)/2, textbook
    assert expectation(st, "V").value == pytest.approx(-0.25, rel=1e-9)  # 2E, virial theorem
    # textbook formula (virial theorem, E = -1/8 for 2s/2p): <T> = -E = 1/8
    assert expectation(st, "T").value == pytest.approx(0.125, rel=1e-8)
    via_function = expectation(st, lambda r: np.exp(-r))
    # integral of r^4 e^{-r} e^{-r} / 24 dr = 4!/(24 * 2^5) (textbook integral)
    assert via_function.value == pytest.approx(1.0 / 32.0, rel=1e-9)
    with pytest.raises(InputError, match="unknown observable"):
        expectation(st, "momentum")


def test_estimate_type():
    e = Estimate(2.0, 1e-3, "bohr")
    assert float(e) == 2.0 and e.relative_error == pytest.approx(5e-4)
    assert e.to_dict()["error_estimate"] == 1e-3
    assert "bohr" in str(e)


def test_state_that_does_not_exist_or_is_not_bound():
    with pytest.raises(InputError, match="n must be at least l \\+ 1"):
        state("coulomb", 2, 2)
    # a Yukawa well with D = 1 bohr binds a single s level (Rogers et al.,
    # Phys. Rev. A 1, 1577 (1970): critical D for 2s is about 3.2 bohr; from memory)
    with pytest.raises(InputError, match="not bound"):
        state(radsolve.potential("yukawa", screening_length=1.0), 2, 0)
    with pytest.raises(InputError, match="whole number"):
        state("coulomb", 1.5, 0)


def test_properties_summary(hydrogen):
    props = hydrogen["3d"].properties()
    assert props["r"].value == pytest.approx(10.5, rel=1e-8)  # textbook formula
    assert len(props["turning_points"]) == 2
    assert props["virial"].available
    from radsolve.analysis.observables import plain_properties

    plain = plain_properties(props)
    assert plain["turning_points"][0]["unit"] == "bohr"
