"""Electric-dipole transitions (radsolve.analysis.radiative, radsolve.transitions).

Sources of the reference values, beside each check:

- Radial dipole integrals: sympy.physics.hydrogen.R_nl (sympy) integrated
  independently with mpmath.quad (mpmath) to 30 digits.
- f(1s -> 2p) = 0.4162 (textbook value, e.g. Bethe & Salpeter, Quantum
  Mechanics of One- and Two-Electron Atoms, 1957, Table 13, infinite nuclear
  mass; from memory).
- A(2p -> 1s) = 6.2649e8 s^-1 and tau(2p) = 1.596 ns: NIST Atomic Spectra
  Database; Wiese & Fuhr, J. Phys. Chem. Ref. Data 38, 565 (2009) (from
  memory).
- A(3p -> 1s) = 1.6725e8 s^-1 and A(3d -> 2p) = 6.4651e7 s^-1: same
  compilation (values from memory).
- Scaling of A with the reduced mass (A ~ mu) and with the nuclear charge
  (A ~ Z^4): textbook scaling of hydrogen-like E1 rates; masses from CODATA
  via scipy.constants.
"""

from __future__ import annotations

import json
import math

import mpmath
import numpy as np
import pytest
import sympy
from scipy.constants import physical_constants as pc
from sympy.physics.hydrogen import R_nl

import radsolve
from radsolve.errors import InputError
from radsolve.analysis.observables import State, state
from radsolve.analysis.radiative import radial_dipole, transitions, transitions_from

NMAX = 5  # the shared hydrogen_result (conftest.py) holds l < 5, five levels each


def reference_dipole(n1, l1, n2, l2) -> float:
    """∫ R_n1l1 R_n2l2 r^3 dr from sympy's R_nl (Z = 1, unit mass) by mpmath quadrature."""
    r = sympy.symbols("r", positive=True)
    f = sympy.lambdify(r, R_nl(n1, l1, r, 1) * R_nl(n2, l2, r, 1) * r**3, "mpmath")
    with mpmath.workdps(30):
        # split at a few radii so the oscillating integrand is resolved
        return float(mpmath.quad(f, [0, 2, 8, 20, 50, mpmath.inf]))


def _pairs():
    out = []
    for n1 in range(1, NMAX + 1):
        for l1 in range(n1):
            for n2 in range(1, NMAX + 1):
                for l2 in (l1 - 1, l1 + 1):
                    if 0 <= l2 < n2 and (n1, l1) < (n2, l2):
                        out.append((n1, l1, n2, l2))
    return out


def test_radial_dipole_integrals_against_sympy(hydrogen_result):
    from radsolve.core.result import level_label

    states = {lev.label: State.from_result(hydrogen_result, lev.label)
              for lev in hydrogen_result.levels if lev.n <= NMAX}
    worst = 0.0
    pairs = _pairs()
    assert len(pairs) == 40  # every unordered pair with |l - l'| = 1 and n, n' <= 5
    for n1, l1, n2, l2 in pairs:
        d = radial_dipole(states[level_label(n1, l1)], states[level_label(n2, l2)])
        ref = reference_dipole(n1, l1, n2, l2)  # sympy R_nl + mpmath.quad
        err = abs(d.value - ref)
        worst = max(worst, err / max(abs(ref), 1.0))
        assert err <= 1e-8 * max(abs(ref), 1.0), (n1, l1, n2, l2, d.value, ref)
        assert err <= 10 * d.error + 1e-13, (n1, l1, n2, l2, err, d.error)
    assert worst <= 1e-8


def test_lyman_alpha_with_the_electron_proton_reduced_mass():
    tr = transitions("coulomb", 2, mass="electron+proton")
    line = tr.line("2p", "1s")
    # NIST ASD; Wiese & Fuhr, J. Phys. Chem. Ref. Data 38 (2009) (from memory)
    assert line.einstein_A == pytest.approx(6.2649e8, rel=1e-3)
    assert tr.state("2p").lifetime_s == pytest.approx(1.596e-9, rel=1e-3)
    # textbook value f(1s -> 2p) = 0.4162 (Bethe & Salpeter 1957; from memory)
    assert line.oscillator_strength == pytest.approx(0.4162, rel=1e-3)
    # vacuum wavelength from the reduced-mass Rydberg energy (CODATA via scipy.constants)
    rydberg_J = pc["Rydberg constant times hc in J"][0]
    mu = pc["proton mass"][0] / (pc["proton mass"][0] + pc["electron mass"][0])
    wavelength = pc["Planck constant"][0] * pc["speed of light in vacuum"][0] / (0.75 * rydberg_J * mu)
    assert line.wavelength_nm == pytest.approx(wavelength * 1e9, rel=1e-10)


def test_balmer_and_lyman_beta_rates():
    tr = transitions("coulomb", 3, mass="electron+proton")
    # Wiese & Fuhr (2009) / NIST ASD (values from memory)
    assert tr.line("3p", "1s").einstein_A == pytest.approx(1.6725e8, rel=1e-3)
    assert tr.line("3d", "2p").einstein_A == pytest.approx(6.4651e7, rel=1e-3)
    for s in tr.states:
        if not s.metastable:
            assert sum(s.branching.values()) == pytest.approx(1.0, abs=1e-14)
            assert s.lifetime_s == pytest.approx(1.0 / sum(x.einstein_A for x in tr.lines
                                                            if x.upper == s.label), rel=1e-14)


def test_metastable_and_ground_levels_are_reported_not_infinite():
    tr = transitions("coulomb", 3)
    two_s = tr.state("2s")
    assert two_s.metastable and not two_s.ground
    assert two_s.lifetime_s is None and two_s.branching == {}
    assert "2p" in two_s.degenerate_with  # the Coulomb degeneracy: no 2s -> 2p line
    ground = tr.state("1s")
    assert ground.ground and ground.metastable and ground.lifetime_s is None
    assert all(x.upper != "2s" for x in tr.lines)
    doc = tr.to_dict("eV")
    s2 = next(s for s in doc["states"] if s["label"] == "2s")
    assert s2["lifetime_s"] is None and s2["metastable"] is True
    json.dumps(doc, allow_nan=False)  # no NaN or infinity anywhere
    assert math.isnan(tr.lifetimes_s[[s.label for s in tr.states].index("2s")])
    assert "vacuum" in doc["conventions"]["wavelengths"]


def test_json_document_keys():
    doc = transitions("coulomb", 2).to_dict()
    line = doc["lines"][0]
    for key in ("upper", "lower", "energy", "wavelength_nm", "oscillator_strength", "einstein_A"):
        assert key in line
    for s in doc["states"]:
        for key in ("label", "energy", "lifetime_s", "metastable", "branching"):
            assert key in s


@pytest.mark.parametrize("label_up,label_low", [("2p", "1s"), ("3d", "2p"), ("3s", "2p"), ("3p", "2s")])
def test_reduced_mass_and_charge_scaling(label_up, label_low):
    # hydrogen-like E1 rates scale as mu and as Z^4 (textbook scaling), masses CODATA via scipy
    me, mp, mm = pc["electron mass"][0], pc["proton mass"][0], pc["muon mass"][0]
    mu_e = mp / (mp + me)  # electron-proton reduced mass in electron masses
    mu_m = mm * mp / (mm + mp) / me
    base = transitions("coulomb", 3, mass="electron+proton").line(label_up, label_low).einstein_A
    muonic = transitions("coulomb", 3, mass="muon+proton").line(label_up, label_low).einstein_A
    helium = transitions(radsolve.potential("coulomb", Z=2.0), 3,
                         mass="electron+proton").line(label_up, label_low).einstein_A
    assert muonic / base == pytest.approx(mu_m / mu_e, rel=1e-8)
    assert helium / base == pytest.approx(16.0, rel=1e-8)


def test_numerov_agrees_with_finite_differences():
    a = transitions("coulomb", 3, method="numerov").line("3p", "2s")
    b = transitions("coulomb", 3, method="fd").line("3p", "2s")
    # both against the sympy/mpmath radial integral
    ref = reference_dipole(3, 1, 2, 0)
    assert a.radial_integral.value == pytest.approx(ref, rel=1e-8)
    assert b.radial_integral.value == pytest.approx(ref, rel=1e-8)


def test_dipole_charge_scales_the_rates():
    one = transitions("coulomb", 2).line("2p", "1s")
    scaled = transitions("coulomb", 2, dipole_charge=1.5).line("2p", "1s")
    # A and f are quadratic in the dipole operator (textbook)
    assert scaled.einstein_A / one.einstein_A == pytest.approx(2.25, rel=1e-12)
    with pytest.raises(InputError):
        transitions("coulomb", 2, dipole_charge=-1.0)


def test_screened_potential_lifts_the_degeneracy():
    # In a Yukawa well 2s lies below 2p (screening favours penetrating s
    # orbits; textbook), so 2p decays to 1s and to 2s, and 2s is metastable.
    tr = transitions(radsolve.potential("yukawa", screening_length=20.0), 2)
    assert tr.state("2s").energy < tr.state("2p").energy
    assert set(tr.state("2p").branching) == {"1s", "2s"}
    assert tr.state("2s").metastable and tr.state("2s").degenerate_with == []
    # the 2p -> 2s line is slow (omega^3), the 2p -> 1s line dominates
    assert tr.state("2p").branching["1s"] > 0.99


def test_arrays_and_lookups():
    tr = transitions("coulomb", 3)
    assert tr.einstein_A.shape == (len(tr.lines),)
    assert np.all(tr.wavelengths_nm > 0) and np.all(tr.oscillator_strengths > 0)
    assert tr.metastable.sum() == 2  # 1s and 2s (textbook: only they have no E1 decay for n <= 3)
    with pytest.raises(InputError):
        tr.line("2s", "1s")
    with pytest.raises(InputError):
        tr.state("9z")


@pytest.mark.parametrize("nmax", [0, 26, 2.5, True])
def test_bad_nmax(nmax):
    with pytest.raises(InputError, match="nmax"):
        transitions("coulomb", nmax)


def test_levels_from_different_solves_are_refused():
    a = state("coulomb", 2, 1)
    b = state("coulomb", 1, 0, tol=1e-8)
    with pytest.raises(InputError, match="same grids"):
        radial_dipole(a, b)


def test_transitions_from_an_existing_result(hydrogen_result):
    tr = transitions_from(hydrogen_result, nmax=3)
    assert {s.label for s in tr.states} == {"1s", "2s", "2p", "3s", "3p", "3d"}
    with pytest.raises(InputError):
        transitions_from(radsolve.solve(radsolve.potential("yukawa", screening_length=0.5)))


def test_sodium_resonance_line_with_an_occupied_core():
    # The alkali model potential (Marinescu, Sadeghpour & Dalgarno, Phys. Rev.
    # A 49, 982 (1994)) binds core-like 1s, 2s, 2p levels; with them occupied,
    # 3p decays only to 3s.  Measured tau(3p) = 16.23 ns (Volz & Schmoranzer,
    # Phys. Scr. T65, 48 (1996); from memory) and the D-line centre near
    # 589.3 nm (NIST ASD; from memory): a spinless model potential should land
    # within a few per cent and a few tenths of a nm.
    pot = radsolve.potential("alkali_model", element="Na")
    tr = transitions(pot, 3, occupied="1s,2s,2p")
    assert {s.label for s in tr.states} == {"3s", "3p", "3d"}
    assert tr.state("3s").ground
    assert tr.state("3p").branching == {"3s": 1.0}
    assert tr.state("3p").lifetime_s == pytest.approx(16.23e-9, rel=0.05)
    assert tr.line("3p", "3s").wavelength_nm == pytest.approx(589.3, abs=0.5)
    assert tr.occupied == ["1s", "2s", "2p"] and "occupied" in tr.message
    with pytest.raises(InputError, match="no computed level '2x'"):
        transitions(pot, 3, occupied=["1s", "2x"])


def test_hydrogen_1s_oscillator_strengths_sum_to_one_with_the_continuum():
    # Thomas-Reiche-Kuhn: the f of one electron sum to 1 (textbook).  Bound part of 1s: the closed form
    # f(1s -> np) = 2**8 n**5 (n - 1)**(2n - 4) / (3 (n + 1)**(2n + 4)) (textbook formula, e.g. Bethe and
    # Salpeter 1957, sec. 63) summed by mpmath, 0.5650 (textbook value, from memory); the continuum then
    # holds 1 - 0.5650 = 0.4350.
    with mpmath.workdps(30):
        bound = float(mpmath.nsum(lambda n: mpmath.mpf(2) ** 8 * n**5 * (n - 1) ** (2 * n - 4)
                                  / (3 * (n + 1) ** (2 * n + 4)), [2, mpmath.inf]))
    assert bound == pytest.approx(0.5650, abs=5e-5)
    tr = transitions("coulomb", 8, tol=1e-10, continuum="1s")
    (rule,) = tr.sum_rules
    assert rule["level"] == "1s" and rule["complete"] and rule["converged"]
    assert rule["expected"] == 1.0
    # measured: sum 1 - 1.4e-8, estimate 3e-7
    assert abs(rule["total"] - 1.0) < 1e-6
    assert abs(rule["total"] - 1.0) <= rule["total_error"]
    assert abs(rule["bound"] + rule["rydberg_tail"] - bound) < 1e-6
    assert abs(rule["continuum"] - (1.0 - bound)) < 1e-8
    assert tr.to_dict()["sum_rules"][0]["level"] == "1s"


def test_short_range_well_sum_rule_with_reduced_mass_and_dipole_charge():
    # A Gaussian well binds finitely many levels: bound partners plus the continuum must give
    # dipole_charge**2 m_e / mu (Thomas-Reiche-Kuhn for the relative coordinate; textbook), with
    # emission strengths counted negative for the excited levels.
    pot = radsolve.formula_potential("-V0*exp(-(r/b)**2)", V0=3.0, b=2.0)
    tr = transitions(pot, 4, tol=1e-10, mass=2.0, dipole_charge=1.5, continuum="1s,3d")
    for rule in tr.sum_rules:
        assert rule["complete"], rule
        assert rule["expected"] == pytest.approx(1.5**2 / 2.0, rel=1e-15)
        # measured within 1e-9 of 1.125
        assert abs(rule["total"] - rule["expected"]) < 1e-7
    assert [r["level"] for r in tr.sum_rules] == ["1s", "3d"]
    with pytest.raises(InputError) as err:
        transitions(pot, 3, tol=1e-8, continuum="7q")
    assert err.value.parameter == "continuum"


def test_continuum_strength_with_a_relativistic_equation_is_refused_before_solving():
    # The bound-free strength is computed for Schrodinger levels only: asking it of Dirac
    # levels must say so (naming the argument), not return a Schrodinger number.
    with pytest.raises(InputError, match="continuum") as caught:
        radsolve.transitions(radsolve.potential("coulomb", Z=1), 2, equation="dirac", continuum=True)
    assert caught.value.parameter == "continuum"
