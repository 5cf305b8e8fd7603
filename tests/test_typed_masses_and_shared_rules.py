"""Masses as people type them, in every unit system, and rules shared by every entry point.

Sources of the checks:

* CODATA via scipy.constants: the dalton in electron masses (m_u / m_e from the
  two SI masses, a route independent of the "electron mass in u" value that
  radsolve uses), particle masses in u and in MeV/c^2.
* Morse levels E_v = -D + w (v + 1/2) - w^2 (v + 1/2)^2 / (4 D), w = a sqrt(2 D / mu)
  (P. M. Morse, Phys. Rev. 34, 57 (1929); textbook formula).  The radial problem
  on r > 0 differs from the full line by the tunnelling to r = 0 under the wall
  V(0) ~ 1.8 hartree, about exp(-80) here: far below any tolerance.
* The isotropic oscillator, E = w (2 n_r + l + 3/2), w = sqrt(k / mu) (textbook formula).
* The threshold of a square well V = -V0 (r < a) in d dimensions: the zero-energy
  solution sqrt(r) J_{L+1/2}(k r) inside meets r^-L outside when J_{L-1/2}(k a) = 0,
  so 2 mu V0 a^2 = j_{nu,1}^2 with nu = L - 1/2 = l + (d - 4)/2 (textbook formula;
  Bessel zeros from scipy.special.jn_zeros).
"""

from __future__ import annotations

import json
import math

import pytest
from scipy.constants import physical_constants as pc
from scipy.special import jn_zeros
from typer.testing import CliRunner

import radsolve
from radsolve.analysis.fitting import fit
from radsolve.analysis.radiative import transitions
from radsolve.analysis.sweeps import sweep
from radsolve.analysis.thresholds import critical_values, threshold
from radsolve.cli import app
from radsolve.core.inputs import DIMENSION_RANGE
from radsolve.errors import InputError
from radsolve.units import (MASS_UNITS, PARTICLES, parse_mass, parse_mass_in, parse_nuclear_mass,
                            particle_mass, unit_system)

runner = CliRunner()

#: The dalton in electron masses, from the SI masses (CODATA via scipy.constants).
DALTON = pc["atomic mass constant"][0] / pc["electron mass"][0]
ELECTRON_MEV = pc["electron mass energy equivalent in MeV"][0]

MORSE = "D*(1-exp(-a*(r-re)))**2 - D"
# Roughly the H2 ground state (from memory); the check holds for any values.
D, A, RE, MU_U = 0.1745, 1.0282, 1.4, 0.50391


def morse_levels(mu: float, count: int) -> list[float]:
    w = A * math.sqrt(2.0 * D / mu)
    return [-D + w * (v + 0.5) - (w * (v + 0.5)) ** 2 / (4.0 * D) for v in range(count)]


# ---------------------------------------------------------------- parsing


def test_a_dalton_is_the_codata_ratio_in_every_spelling():
    # CODATA via scipy.constants; the two routes agree within their rounding (~1e-9).
    for text in ("1u", "1 u", "1Da", "1 da", "1U"):
        assert parse_mass(text) == pytest.approx(DALTON, rel=1e-9), text
    assert parse_mass("0.50391u") == pytest.approx(0.50391 * DALTON, rel=1e-9)
    assert parse_mass("1e+3u") == pytest.approx(1e3 * DALTON, rel=1e-9)  # an exponent, not a '+'
    assert parse_nuclear_mass("1u") == pytest.approx(
        pc["atomic mass constant energy equivalent in MeV"][0], rel=1e-12)


def test_energies_over_c_squared_in_both_systems():
    # CODATA via scipy.constants: a particle's mass in MeV/c^2 is its mass.
    muon_MeV = pc["muon mass energy equivalent in MeV"][0]
    for text in (f"{muon_MeV!r}MeV", f"{muon_MeV!r} MeV/c^2", f"{muon_MeV / 1e3!r}GeV",
                 f"{muon_MeV * 1e3!r}keV", f"{muon_MeV * 1e6!r}eV"):
        assert parse_mass(text) == pytest.approx(particle_mass("muon"), rel=1e-9), text
        assert parse_nuclear_mass(text) == pytest.approx(muon_MeV, rel=1e-12), text
    assert parse_nuclear_mass("1me") == pytest.approx(ELECTRON_MEV, rel=1e-12)
    assert parse_mass("206.768me") == pytest.approx(206.768, rel=1e-15)


def test_reduced_masses_mix_particles_and_units():
    # electron + (proton in u) is electron + proton (CODATA "proton mass in u").
    proton_u = pc["proton mass in u"][0]
    assert parse_mass(f"electron+{proton_u!r}u") == pytest.approx(parse_mass("electron+proton"), rel=1e-9)
    neutron_MeV = pc["neutron mass energy equivalent in MeV"][0]
    assert parse_nuclear_mass(f"{neutron_MeV!r}MeV+207u") == pytest.approx(
        parse_nuclear_mass("neutron+207u"), rel=1e-9)


@pytest.mark.parametrize("system", ["atomic", "nuclear"])
def test_an_unknown_mass_unit_lists_what_is_allowed(system):
    with pytest.raises(InputError) as info:
        parse_mass_in("3kg", system)
    message = str(info.value)
    assert info.value.parameter == "mass" and "'kg'" in message
    for name in MASS_UNITS + PARTICLES:
        assert name in message, name
    with pytest.raises(InputError, match="capital M"):  # meV is not MeV
        parse_mass_in("939mev", system)


def test_the_mass_range_is_checked_wherever_a_mass_is_used():
    for call in (lambda: radsolve.solve("coulomb", mass="1e11"),
                 lambda: threshold("yukawa", "screening_length", mass="1e11"),
                 lambda: sweep("yukawa", {"screening_length": [1.0]}, mass="1e11", workers=1)):
        with pytest.raises(InputError, match="outside the range") as info:
            call()
        assert info.value.parameter == "mass"


# ---------------------------------------------------------------- physics with typed masses


def test_morse_vibration_with_the_mass_in_daltons():
    # Morse (1929), textbook formula; mu = 0.50391 u from CODATA via scipy.constants.
    pot = radsolve.formula_potential(MORSE, D=D, a=A, re=RE)
    res = radsolve.solve(pot, l=0, count=4, mass=f"{MU_U}u", tol=1e-11)
    assert res.success
    assert res.mass == pytest.approx(MU_U * DALTON, rel=1e-9)
    for lev, exact in zip(res.levels, morse_levels(MU_U * DALTON, 4)):
        assert lev.energy == pytest.approx(exact, rel=1e-9), lev.label
        assert abs(lev.energy - exact) <= 10 * lev.error_estimate + 1e-12 * abs(exact)


def test_oscillator_with_the_mass_in_daltons():
    # E = w (2 n_r + l + 3/2), w = sqrt(k/mu) (textbook formula); mu = 2 u (CODATA).
    k = 0.37
    res = radsolve.solve(radsolve.formula_potential("0.5*k*r**2", k=k), l=[0, 1], count=2, mass="2Da",
                         tol=1e-11)
    w = math.sqrt(k / (2 * DALTON))
    assert len(res.levels) == 4
    for lev in res.levels:
        assert lev.energy == pytest.approx(w * (2 * lev.nodes + lev.l + 1.5), rel=1e-9), lev.label


def test_command_line_takes_daltons_in_atomic_units():
    # The same Morse levels (Morse 1929, textbook formula) through `radsolve levels`.
    args = ["levels", "formula", "--expr", MORSE, "-p", f"D={D}", "-p", f"a={A}", "-p", f"re={RE}",
            "--mass", f"{MU_U}u", "-k", "3", "--tol", "1e-10", "-f", "json"]
    result = runner.invoke(app, args)
    assert result.exit_code == 0, result.stderr
    doc = json.loads(result.stdout)
    energies = [lev["energy"] for lev in doc["levels"]]
    assert energies == pytest.approx(morse_levels(MU_U * DALTON, 3), rel=1e-9)


def test_command_line_takes_MeV_in_nuclear_units():
    # neutron = its CODATA mass in MeV/c^2 (scipy.constants): the same levels.
    neutron_MeV = pc["neutron mass energy equivalent in MeV"][0]
    energies = []
    for mass in ("neutron", f"{neutron_MeV!r}MeV", f"{neutron_MeV / 1e3!r}GeV/c^2"):
        result = runner.invoke(app, ["levels", "woods_saxon", "--mass", mass, "-k", "2", "--tol", "1e-8",
                                     "-f", "json"])
        assert result.exit_code == 0, (mass, result.stderr)
        energies.append([lev["energy"] for lev in json.loads(result.stdout)["levels"]])
    assert energies[1] == pytest.approx(energies[0], rel=1e-8)
    assert energies[2] == pytest.approx(energies[0], rel=1e-8)


def test_state_and_transitions_take_typed_masses():
    # Hydrogen-like 1s: E = -mu/2 (textbook formula) with mu = electron + proton given in u (CODATA).
    proton_u = pc["proton mass in u"][0]
    st = radsolve.state("coulomb", 1, 0, mass=f"electron+{proton_u!r}u", tol=1e-10)
    mu = 1.0 / (1.0 + 1.0 / (proton_u * DALTON))
    assert st.energy.value == pytest.approx(-mu / 2, rel=1e-9)
    result = runner.invoke(app, ["transitions", "coulomb", "--nmax", "2", "--mass", f"electron+{proton_u!r}u",
                                 "-f", "json"])
    assert result.exit_code == 0, result.stderr


# ---------------------------------------------------------------- rules every entry point shares


def test_a_nuclear_family_without_a_mass_is_refused_everywhere():
    # One electron mass would silently mean 0.511 MeV/c^2: every entry point refuses.
    calls = {
        "solve": lambda: radsolve.solve("woods_saxon"),
        "sweep": lambda: sweep("woods_saxon", {"depth": [40.0, 44.0]}, workers=1),
        "threshold": lambda: threshold("woods_saxon", "depth"),
        "critical_values": lambda: critical_values("woods_saxon", "depth", levels=["1s"]),
        "fit": lambda: fit("woods_saxon", [("1s", -30.0, 0.1, "MeV")], free=["depth"]),
        "state": lambda: radsolve.state("woods_saxon", 1, 0),
        "transitions": lambda: transitions("woods_saxon", 2),
    }
    for name, call in calls.items():
        with pytest.raises(InputError, match="mass is needed in nuclear units") as info:
            call()
        assert info.value.parameter == "mass", name
    assert unit_system("atomic").parse_mass(None) == 1.0  # the electron, atomic units' own default


def test_solve_and_threshold_share_the_dimension_rule():
    low, high = DIMENSION_RANGE
    for bad in (low - 1, high + 1, 2.5, True):
        with pytest.raises(InputError) as solve_error:
            radsolve.solve("yukawa", dimension=bad)
        with pytest.raises(InputError) as threshold_error:
            threshold("yukawa", "screening_length", dimension=bad)
        assert str(solve_error.value) == str(threshold_error.value)
        assert solve_error.value.parameter == threshold_error.value.parameter == "dimension"


@pytest.mark.parametrize("d, l", [(20, 0), (12, 1)])
def test_square_well_threshold_in_many_dimensions(d, l):
    # 2 mu V0 a^2 = j_{nu,1}^2, nu = l + (d-4)/2 (textbook formula; scipy.special.jn_zeros).
    # Dimensions above 10 were refused by threshold before its rule became solve's.
    j = jn_zeros(l + (d - 4) // 2, 1)[0]
    exact = j * j / 2.0  # mu = 1, a = 1
    pot = radsolve.formula_potential("-V0*step(a-r)", V0=1.0, a=1.0)
    res = threshold(pot, "V0", level="1s" if l == 0 else "2p", dimension=d, tol=1e-9,
                    bracket=(0.5 * exact, 2.0 * exact))
    assert res.converged
    assert res.value == pytest.approx(exact, rel=1e-8)
    assert abs(res.value - exact) <= 10 * res.error_estimate + 1e-12 * exact


def test_threshold_defaults_to_the_1s_level_everywhere():
    # critical_values without levels or nmax asks what threshold asks by default.
    import inspect

    default = inspect.signature(threshold).parameters["level"].default
    values = critical_values("yukawa", "screening_length", bracket=(0.5, 1.5), tol=1e-8)
    assert [r.label for r in values] == [default] == ["1s"]
