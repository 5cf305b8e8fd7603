"""Nuclear unit system and the nuclear/hadronic families woods_saxon and cornell.

Sources of the reference values:

* the magic numbers 2, 8, 20, 28, 50, 82, 126 and the ordering j = l + 1/2
  below j = l - 1/2: facts of the trade (M. Goeppert Mayer, Phys. Rev. 75,
  1969 (1949); O. Haxel, J. H. D. Jensen and H. E. Suess, Phys. Rev. 75,
  1766 (1949));
* the Woods-Saxon parameters: A. Bohr and B. R. Mottelson, Nuclear
  Structure vol. I (1969), Eqs. (2-181)-(2-183), from memory (see
  potentials/woods_saxon.py);
* separation energies of lead-208: S_n = 7.37 MeV and S_p = 8.01 MeV (atomic
  mass evaluation, from memory), compared loosely, since a mean field only
  approximates them;
* hydrogen-like levels and Airy zeros for the Cornell limits: textbook
  formulas, zeros from scipy.special.ai_zeros (reference library); the
  psi(2S) - J/psi mass difference (Particle Data Group, from memory);
* the 3D harmonic oscillator E = hbar omega (2 n_r + l + 3/2): textbook
  formula;
* masses, hbar c, alpha, e and epsilon_0: CODATA via scipy.constants.

The single-particle energies here are model numbers of a mean field, not
nuclear data; the tests check the physics the model is known to produce.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import constants as const
from scipy.special import ai_zeros

import radsolve
from helpers import invoke
from radsolve.errors import InputError
from radsolve.potentials.formula import formula_potential
from radsolve.potentials.builtin import woods_saxon
from radsolve.units import parse_nuclear_mass, parse_quantity_in, unit_system

HBARC = const.hbar * const.c / (const.mega * const.e * const.femto)  # MeV fm
MAGIC = (2, 8, 20, 28, 50, 82, 126)


def neutron_levels(A, Z, spin_orbit, lmax):
    pot = radsolve.potential("woods_saxon", **woods_saxon.bohr_mottelson(A, Z))
    res = radsolve.solve(pot, l=list(range(lmax + 1)), count=4, mass="neutron", tol=1e-7,
                         spin_orbit=spin_orbit)
    return res, sorted(res.levels, key=lambda lev: lev.energy)


def gaps(levels, degeneracy):
    """[(cumulative occupation below the gap, gap in MeV)], filling levels in order of energy."""
    out, filled = [], 0
    for low, high in zip(levels, levels[1:]):
        filled += degeneracy(low)
        out.append((filled, high.energy - low.energy))
    return out


def largest(gap_list, k):
    return sorted(n for n, _ in sorted(gap_list, key=lambda g: -g[1])[:k])


@pytest.fixture(scope="module")
def lead_208():
    return {so: neutron_levels(208, 82, so, 8) for so in (True, False)}


@pytest.fixture(scope="module")
def cerium_140():
    return {so: neutron_levels(140, 58, so, 6) for so in (True, False)}


# ---------------------------------------------------------------- shell structure


def test_spin_orbit_gives_the_magic_numbers(lead_208, cerium_140):
    # Fact of the trade (Mayer 1949; Haxel, Jensen, Suess 1949), with the Bohr-Mottelson
    # set (from memory).  Filling 2j+1 states per level in order of energy:
    # lead-208 (N = 126): the six largest gaps close 2, 8, 20, 50, 82, 126.  The deeply
    # bound 28 gap (1f7/2 - 1f5/2) of this heavy well is smaller than the 100 subshell gap,
    # so the 28 closure is checked where it lies nearer the surface:
    # cerium-140 (N = 82): the six largest gaps close 2, 8, 20, 28, 50, 82.
    res, levels = lead_208[True]
    assert res.units == "nuclear" and res.success
    assert largest(gaps(levels, lambda lev: lev.degeneracy), 6) == [2, 8, 20, 50, 82, 126]
    res, levels = cerium_140[True]
    assert largest(gaps(levels, lambda lev: lev.degeneracy), 6) == [2, 8, 20, 28, 50, 82]


def test_without_spin_orbit_the_magic_numbers_do_not_all_appear(lead_208, cerium_140):
    # Without the spin-orbit term each (n, l) level holds 2(2l+1) neutrons: the closures
    # 28, 50, 82 and 126 are not even reachable fillings (textbook: the oscillator-like
    # sequence 2, 8, 18/20, 34/40, 58/70, 92, ...).
    for data in (lead_208, cerium_140):
        res, levels = data[False]
        assert all(lev.j is None for lev in levels)
        pairs = gaps(levels, lambda lev: 2 * (2 * lev.l + 1))
        fillings = {n for n, _ in pairs}
        assert not {28, 50, 82, 126} & fillings
        assert not set(largest(pairs, 6)) <= set(MAGIC)


def test_spin_orbit_partners_are_ordered_and_labelled(lead_208):
    # Fact of the trade: j = l + 1/2 lies below j = l - 1/2 (attractive surface spin-orbit).
    res, levels = lead_208[True]
    by_label = {lev.label: lev for lev in levels}
    for low, high in (("1p3/2", "1p1/2"), ("1d5/2", "1d3/2"), ("1f7/2", "1f5/2"),
                      ("1g9/2", "1g7/2"), ("1h11/2", "1h9/2"), ("2p3/2", "2p1/2")):
        assert by_label[low].energy < by_label[high].energy, (low, high)
    # Nuclear convention: n counts the levels of one (l, j) from 1; degeneracy 2j+1.
    assert {"1s1/2", "2s1/2", "3s1/2", "1p3/2", "1d5/2", "1i13/2"} <= set(by_label)
    for lev in levels:
        assert lev.n == lev.nodes + 1
        assert lev.degeneracy == int(round(2 * lev.j + 1))
        assert lev.j in (lev.l - 0.5, lev.l + 0.5)


def test_lead_208_fermi_levels_near_separation_energies(lead_208):
    # Sources: S_n(208Pb) = 7.37 MeV, S_p(208Pb) = 8.01 MeV (atomic mass evaluation, from
    # memory).  A mean field gets them to about 1 MeV (common practice), no better.
    res, levels = lead_208[True]
    last_neutron = {lev.label: lev for lev in levels}["3p1/2"]
    assert abs(last_neutron.energy - (-7.37)) < 1.0
    proton = radsolve.potential("woods_saxon", **woods_saxon.bohr_mottelson(208, 82, "proton"))
    res_p = radsolve.solve(proton, l=0, count=3, mass="proton", tol=1e-7, spin_orbit=True)
    last_proton = {lev.label: lev for lev in res_p.levels}["3s1/2"]
    assert abs(last_proton.energy - (-8.01)) < 1.5


# ---------------------------------------------------------------- the potentials


def test_woods_saxon_shape_and_charged_sphere():
    # Sources: e^2/(4 pi eps0) from scipy.constants e, epsilon_0 (CODATA); the field of a
    # uniformly charged sphere (textbook formula: V(0) = 3/2 k Z/R, k Z / r outside).
    k = const.e**2 / (4 * math.pi * const.epsilon_0) / (const.mega * const.e * const.femto)
    ws = radsolve.potential("woods_saxon", depth=50, A=208, coulomb_Z=82)
    R = 1.27 * 208 ** (1 / 3)
    f_half = ws(np.array([R]))[0] - 82 * k * (3 - 1) / (2 * R)
    # (alpha hbar c and e^2/(4 pi eps0) agree to the rounding of the CODATA values, ~1e-10)
    assert f_half == pytest.approx(-25.0, rel=1e-9)  # f(R) = 1/2
    far = np.array([2 * R, 10 * R])
    assert np.allclose(ws(far), -50 / (1 + np.exp((far - R) / 0.67)) + 82 * k / far, rtol=1e-9)
    centre = ws(np.array([1e-9]))[0] + 50 / (1 + math.exp(-R / 0.67))
    assert centre == pytest.approx(1.5 * 82 * k / R, rel=1e-9)
    assert ws.breakpoints() == [pytest.approx(R)]


def test_woods_saxon_spin_orbit_is_the_derivative_form():
    # V_so(r) = lambda V0 r0^2 (1/r) df/dr; df/dr from a central difference of f.
    ws = radsolve.potential("woods_saxon", depth=50, A=100, spin_orbit_strength=0.44)
    r = np.linspace(1.0, 12.0, 23)
    R, a, h = 1.27 * 100 ** (1 / 3), 0.67, 1e-5

    def f(x):
        return 1 / (1 + np.exp((x - R) / a))

    expected = 0.44 * 50 * 1.27**2 * (f(r + h) - f(r - h)) / (2 * h) / r
    so = ws.family.spin_orbit(r, **ws.parameters)
    assert np.allclose(so, expected, rtol=1e-8)
    assert np.all(so < 0)  # attractive for j = l + 1/2


def test_cornell_coulomb_limit():
    # Source: E = -mu c^2 kappa^2 / (2 N^2), N = nodes + l + 1 (textbook formula).
    mu, kappa = 920.0, 0.52
    pot = radsolve.potential("cornell", kappa=kappa, string_tension=0.0)
    res = radsolve.solve(pot, l=[0, 1], count=3, mass=mu, tol=1e-11)
    assert len(res.levels) == 6
    for lev in res.levels:
        N = lev.nodes + lev.l + 1
        assert lev.energy == pytest.approx(-mu * kappa**2 / (2 * N**2), rel=1e-9)


def test_cornell_linear_limit():
    # Source: E_k = (sigma^2 (hbar c)^2 / (2 mu c^2))^(1/3) |a_k|, a_k zeros of Ai (textbook
    # formula; zeros from scipy.special.ai_zeros).
    mu, sigma = 920.0, 900.0
    pot = radsolve.potential("cornell", kappa=0.0, string_tension=sigma)
    res = radsolve.solve(pot, l=0, count=5, mass=mu, tol=1e-11)
    scale = (sigma**2 * HBARC**2 / (2 * mu)) ** (1 / 3)
    zeros = ai_zeros(5)[0]
    assert [lev.energy for lev in res.levels] == pytest.approx(list(-zeros * scale), rel=1e-9)


def test_cornell_charmonium_defaults_give_the_psi_prime_splitting():
    # Sources: M(psi(2S)) - M(J/psi) = 3686.1 - 3096.9 = 589.2 MeV (Particle Data Group,
    # from memory); the defaults are the Eichten et al. (1980) fit with m_c = 1.84 GeV
    # (from memory), which was made to reproduce it.  Spin-dependent forces are absent
    # from the model, so only this S-wave splitting is compared, to 1 %.
    res = radsolve.solve("cornell", l=0, count=2, mass=1840.0 / 2, tol=1e-10)
    assert res.levels[1].energy - res.levels[0].energy == pytest.approx(589.2, rel=1e-2)


def test_cornell_refuses_no_potential():
    with pytest.raises(InputError, match="both 0"):
        radsolve.potential("cornell", kappa=0, string_tension=0)


def test_nuclear_kinetic_mass_gives_the_oscillator():
    # Source: E = hbar omega (2 n_r + l + 3/2) (textbook formula); V = mu omega^2 r^2 / 2
    # written in MeV and fm as (mu c^2) (hbar omega)^2 r^2 / (2 (hbar c)^2), hbar c from scipy.
    # the neutron mass (CODATA via scipy.constants); hbar omega = 10 MeV is an arbitrary test value
    mu, hw = const.physical_constants["neutron mass energy equivalent in MeV"][0], 10.0
    pot = formula_potential("0.5*m*w**2*r**2/hbarc**2", units="nuclear", m=mu, w=hw)
    res = radsolve.solve(pot, l=[0, 1, 2], count=2, mass=mu, tol=1e-11)
    for lev in res.levels:
        assert lev.energy == pytest.approx(hw * (2 * lev.nodes + lev.l + 1.5), rel=1e-9)


# ---------------------------------------------------------------- units


def test_nuclear_masses():
    # Source: CODATA via scipy.constants.
    pc = const.physical_constants
    u = pc["atomic mass constant energy equivalent in MeV"][0]
    mn = pc["neutron mass energy equivalent in MeV"][0]
    assert parse_nuclear_mass("56u") == pytest.approx(56 * u, rel=1e-14)
    assert parse_nuclear_mass("neutron") == pytest.approx(mn, rel=1e-9)
    assert parse_nuclear_mass("neutron+207u") == pytest.approx(mn * 207 * u / (mn + 207 * u), rel=1e-9)
    assert parse_nuclear_mass("939.5MeV") == 939.5 and parse_nuclear_mass("1.5GeV") == 1500.0
    assert unit_system("nuclear").parse_mass("proton") == pytest.approx(
        pc["proton mass energy equivalent in MeV"][0], rel=1e-9)
    for bad, fragment in (("0u", "positive"), ("3kg", "cannot read '3kg'"), ("neutrn", "did you mean"),
                          ("neutron+", "empty term"), ("nan", "positive finite")):
        with pytest.raises(InputError, match=fragment):
            parse_nuclear_mass(bad)


def test_nuclear_family_parameters_are_fm_and_MeV():
    # Source: fm and angstrom, MeV and eV from scipy.constants (CODATA).
    ws = radsolve.potential("woods_saxon", radius="0.00075angstrom", depth="44e6eV")
    assert ws.parameters["radius"] == pytest.approx(75.0, rel=1e-12)
    assert ws.parameters["depth"] == pytest.approx(44.0, rel=1e-12)
    assert parse_quantity_in("2/angstrom", "inverse_length", "nuclear") == pytest.approx(2e-5, rel=1e-12)
    spec = ws.family.parameters["diffuseness"]
    assert spec.unit == "fm" and spec.range_text() == "> 0 fm"
    with pytest.raises(InputError, match=r"must be > 0 MeV \(got -3\)"):
        radsolve.potential("woods_saxon", depth=-3)
    with pytest.raises(InputError, match="plain number in fm"):
        radsolve.potential("woods_saxon", radius="3eV")
    with pytest.raises(InputError, match="exceeds the radius"):
        radsolve.potential("woods_saxon", radius=1.0, diffuseness=2.0)


def test_bad_input_about_units_and_spin_orbit():
    with pytest.raises(InputError, match="no spin-orbit term"):
        radsolve.solve("coulomb", spin_orbit=True)
    with pytest.raises(InputError, match="not supported"):
        radsolve.solve("coulomb", units="nuclear")
    with pytest.raises(InputError, match="not supported"):
        radsolve.solve("woods_saxon", units="atomic", mass="neutron")
    for args, fragment in (
        (["levels", "coulomb", "--spin-orbit"], "--spin-orbit was asked for, but potential 'coulomb'"),
        (["levels", "coulomb", "--units", "nuclear"], "--units nuclear: potential 'coulomb' is written in atomic"),
        (["levels", "woods_saxon"], "--mass is needed in nuclear units"),
        (["levels", "woods_saxon", "--units", "atomic", "--mass", "neutron"], "allowed for it: nuclear"),
        (["levels", "woods_saxon", "--mass", "3kg"], "--mass"),
    ):
        result = invoke(*args)
        assert result.exit_code == 2, args
        assert fragment in result.stderr, (args, result.stderr)
        assert "Traceback" not in result.stderr + result.output


def test_cli_nuclear_table_shows_j_and_MeV():
    result = invoke("levels", "woods_saxon", "--spin-orbit", "-l", "1", "-k", "1",
                    "--mass", "neutron", "--tol", "1e-8")
    assert result.exit_code == 0, result.output
    text = result.stdout
    assert "(nuclear units)" in text and "energy/MeV" in text and "MeV/c^2" in text
    rows = {line.split()[0]: line.split() for line in text.splitlines() if line.startswith("1p")}
    assert rows["1p3/2"][3:5] == ["3/2", "4"] and rows["1p1/2"][3:5] == ["1/2", "2"]


def test_a_nuclear_family_without_a_mass_is_refused_by_the_api():
    # The rule lives in the API, not only in the command line: a default of one
    # electron mass would silently mean 0.511 MeV/c^2 here.
    import radsolve
    from radsolve.errors import InputError

    for call in (lambda: radsolve.solve("woods_saxon"),
                 lambda: radsolve.state("woods_saxon", n=1, l=0),
                 lambda: radsolve.threshold("woods_saxon", "depth", level="1s")):
        with pytest.raises(InputError, match="mass is needed in nuclear units"):
            call()
