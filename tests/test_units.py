"""Units, quantity parsing and masses, against CODATA values from scipy.constants."""

import math

import pytest
from scipy.constants import (
    angstrom,
    centi,
    electron_mass,
    electron_volt,
    femto,
    kilo,
    mega,
    milli,
    nano,
    neutron_mass,
    physical_constants,
    pico,
    proton_mass,
)

from radsolve.errors import InputError
from radsolve.units import (
    ENERGY_UNITS,
    LENGTH_UNITS,
    PARTICLES,
    energy_unit_factor,
    from_unit,
    length_unit_factor,
    parse_mass,
    parse_quantity,
    particle_mass,
    to_unit,
)

# CODATA via scipy.constants, in SI units.
HARTREE_J = physical_constants["Hartree energy"][0]
BOHR_M = physical_constants["Bohr radius"][0]
RYDBERG_J = physical_constants["Rydberg constant times hc in J"][0]
PLANCK_C = physical_constants["Planck constant"][0] * physical_constants["speed of light in vacuum"][0]


# --------------------------------------------------------------------------- energies

# Each expected factor is built from SI values (CODATA via scipy.constants),
# independently of the hartree relationships radsolve itself uses.
@pytest.mark.parametrize(
    "unit, joules",
    [
        ("hartree", HARTREE_J),
        ("eV", electron_volt),
        ("meV", milli * electron_volt),
        ("keV", kilo * electron_volt),
        ("MeV", mega * electron_volt),
        ("rydberg", RYDBERG_J),
        ("cm-1", PLANCK_C / centi),  # E = h c / λ with λ = 1 cm
    ],
)
def test_energy_factor_matches_codata(unit, joules):
    assert energy_unit_factor(unit) == pytest.approx(joules / HARTREE_J, rel=1e-12)


def test_rydberg_is_half_a_hartree():
    # CODATA: the Rydberg energy is Eh/2 by definition (via scipy.constants values).
    assert energy_unit_factor("Ry") == pytest.approx(0.5, rel=1e-12)


@pytest.mark.parametrize(
    "alias, canonical",
    [("Eh", "hartree"), ("Ha", "hartree"), ("au", "hartree"), ("HARTREE", "hartree"),
     ("ev", "eV"), ("EV", "eV"), ("kev", "keV"), ("Ry", "rydberg"), ("RYDBERG", "rydberg"),
     ("cm^-1", "cm-1"), ("CM-1", "cm-1")],
)
def test_energy_aliases(alias, canonical):
    assert energy_unit_factor(alias) == energy_unit_factor(canonical)


def test_mev_and_MeV_are_case_sensitive():
    assert energy_unit_factor("MeV") / energy_unit_factor("meV") == pytest.approx(1e9, rel=1e-12)
    for ambiguous in ("mev", "MEV", "Mev"):
        with pytest.raises(InputError, match="case"):
            energy_unit_factor(ambiguous)


def test_energy_units_tuple_is_canonical():
    assert ENERGY_UNITS == ("hartree", "eV", "meV", "keV", "MeV", "rydberg", "cm-1")
    for unit in ENERGY_UNITS:
        assert energy_unit_factor(unit) > 0


def test_to_and_from_unit_round_trip():
    # 1 hartree in eV: CODATA "hartree-electron volt relationship" via scipy.constants.
    assert to_unit(1.0, "eV") == pytest.approx(physical_constants["hartree-electron volt relationship"][0],
                                               rel=1e-12)
    assert from_unit(to_unit(-0.5, "cm-1"), "cm-1") == pytest.approx(-0.5, rel=1e-14)


def test_unknown_energy_unit_lists_the_allowed():
    with pytest.raises(InputError) as info:
        energy_unit_factor("kcal")
    message = str(info.value)
    assert "'kcal'" in message
    for unit in ENERGY_UNITS:
        assert unit in message


# --------------------------------------------------------------------------- lengths

@pytest.mark.parametrize(
    "unit, metres",
    [("bohr", BOHR_M), ("a0", BOHR_M), ("angstrom", angstrom), ("Å", angstrom),
     ("\u212b", angstrom), ("nm", nano), ("pm", pico), ("fm", femto), ("Angstrom", angstrom)],
)
def test_length_factor_matches_codata(unit, metres):
    assert length_unit_factor(unit) == pytest.approx(metres / BOHR_M, rel=1e-12)


def test_unknown_length_unit_lists_the_allowed():
    with pytest.raises(InputError) as info:
        length_unit_factor("inch")
    assert "'inch'" in str(info.value)
    for unit in LENGTH_UNITS:
        assert unit in str(info.value)


# --------------------------------------------------------------------------- parsing

@pytest.mark.parametrize(
    "text, kind, expected",
    [
        ("10", "length", 10.0),
        ("10bohr", "length", 10.0),
        ("10 a0", "length", 10.0),
        ("0.5angstrom", "length", 0.5 * angstrom / BOHR_M),
        ("0.5 Å", "length", 0.5 * angstrom / BOHR_M),
        ("1nm", "length", nano / BOHR_M),
        ("50pm", "length", 50 * pico / BOHR_M),
        ("0.84fm", "length", 0.84 * femto / BOHR_M),
        ("-2.5e-1 bohr", "length", -0.25),
        ("3eV", "energy", 3 * electron_volt / HARTREE_J),
        ("2.5 meV", "energy", 2.5e-3 * electron_volt / HARTREE_J),
        ("1e-3hartree", "energy", 1e-3),
        ("2Ry", "energy", 2 * RYDBERG_J / HARTREE_J),
        ("0.1 MeV", "energy", 0.1e6 * electron_volt / HARTREE_J),
        ("4 keV", "energy", 4e3 * electron_volt / HARTREE_J),
        ("100 cm-1", "energy", 100 * PLANCK_C / centi / HARTREE_J),
        (".5", "energy", 0.5),
        ("0.5/bohr", "inverse_length", 0.5),
        ("2/angstrom", "inverse_length", 2 * BOHR_M / angstrom),
        ("2 / nm", "inverse_length", 2 * BOHR_M / nano),
        ("3 angstrom^-1", "inverse_length", 3 * BOHR_M / angstrom),
        ("1.5", "inverse_length", 1.5),
        ("7", "dimensionless", 7.0),
    ],
)
def test_parse_quantity_suffixes(text, kind, expected):
    assert parse_quantity(text, kind) == pytest.approx(expected, rel=1e-12)


def test_parse_quantity_numbers_pass_through():
    assert parse_quantity(2, "length") == 2.0
    assert parse_quantity(0.25, "energy") == 0.25


@pytest.mark.parametrize(
    "value, kind",
    [
        ("3eV", "length"),          # wrong kind of unit
        ("2fm", "energy"),
        ("1/bohr", "length"),
        ("2bohr", "dimensionless"),
        ("2 bohr", "inverse_length"),
        ("nan", "length"),
        ("inf", "energy"),
        ("1e999", "length"),
        ("ten", "length"),
        ("", "length"),
        ("3 furlong", "length"),
        (float("nan"), "length"),
        (float("inf"), "energy"),
        (True, "length"),
        (None, "length"),
    ],
)
def test_parse_quantity_rejects_with_name(value, kind):
    with pytest.raises(InputError) as info:
        parse_quantity(value, kind, name="--core-radius")
    assert "--core-radius" in str(info.value)


def test_wrong_kind_message_says_what_is_allowed():
    with pytest.raises(InputError) as info:
        parse_quantity("3eV", "length", name="radius")
    message = str(info.value)
    assert "energy" in message and "bohr" in message and "angstrom" in message


def test_parse_quantity_unknown_kind():
    with pytest.raises(InputError, match="kind"):
        parse_quantity("1", "speed")


# --------------------------------------------------------------------------- masses

ME = electron_mass


@pytest.mark.parametrize(
    "text, expected",
    [
        # Reduced masses m1 m2 / (m1 + m2) from SI masses (CODATA via scipy.constants).
        ("electron+proton", proton_mass / (ME + proton_mass)),
        (" electron + proton ", proton_mass / (ME + proton_mass)),
        ("electron+positron", 0.5),
        ("electron+neutron", neutron_mass / (ME + neutron_mass)),
        ("muon+proton", None),
        ("electron+deuteron", None),
        ("muon", physical_constants["muon mass"][0] / ME),
        ("Proton", proton_mass / ME),
        ("antimuon", physical_constants["muon mass"][0] / ME),
        ("alpha", physical_constants["alpha particle mass"][0] / ME),
        ("tau", physical_constants["tau mass"][0] / ME),
        ("triton", physical_constants["triton mass"][0] / ME),
        ("helion", physical_constants["helion mass"][0] / ME),
        ("1836.5", 1836.5),
        ("1+1", 0.5),
    ],
)
def test_parse_mass(text, expected):
    if expected is None:
        a, b = (s.strip() for s in text.split("+"))
        m = {"muon": "muon mass", "proton": "proton mass", "electron": "electron mass",
             "deuteron": "deuteron mass"}
        m1 = physical_constants[m[a]][0]
        m2 = physical_constants[m[b]][0]
        expected = m1 * m2 / (m1 + m2) / ME
    # Mass ratios and SI masses in CODATA agree within their stated uncertainty
    # (~1e-9 relative; the tau mass is known only to ~7e-5).
    rel = 2e-4 if "tau" in text else 1e-8
    assert parse_mass(text) == pytest.approx(expected, rel=rel)


def test_three_body_reduced_mass():
    # 1/μ = 1/m1 + 1/m2 + 1/m3 (textbook generalization of the two-body formula).
    mp = proton_mass / ME
    assert parse_mass("electron+electron+proton") == pytest.approx(1 / (2 + 1 / mp), rel=1e-12)


def test_parse_mass_numbers():
    assert parse_mass(1.0) == 1.0
    assert parse_mass(206) == 206.0


@pytest.mark.parametrize("bad", [0, -1, float("nan"), float("inf"), "0", "-3", "nan", "inf", True,
                                 "electron+", "+", "electron++proton", ""])
def test_parse_mass_rejects(bad):
    with pytest.raises(InputError, match="mass"):
        parse_mass(bad)


def test_unknown_particle_lists_known_and_suggests():
    with pytest.raises(InputError) as info:
        parse_mass("electron+protn")
    message = str(info.value)
    assert "'protn'" in message and "did you mean 'proton'" in message
    for name in PARTICLES:
        assert name in message


def test_particle_mass_of_positron_is_electron_mass():
    assert particle_mass("positron") == 1.0
    assert particle_mass("electron") == 1.0


def test_units_import_does_not_pull_in_scipy():
    # Keeps the command line start-up light (common practice: lazy heavy imports).
    import subprocess
    import sys
    import tempfile

    code = "import sys, radsolve.units; print('scipy' in sys.modules)"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True,
                         cwd=tempfile.mkdtemp(prefix="radsolve-cwd-"))
    assert out.stdout.strip() == "False"
    assert math.isfinite(energy_unit_factor("eV"))


def test_unit_system_constants_against_codata():
    # hbar c, alpha hbar c and m c**2 in each system, against CODATA via scipy.constants
    # computed here independently (MeV fm from SI; the electron's rest energy from
    # the "electron mass energy equivalent" and the hartree energy).
    from scipy import constants as const
    from scipy.constants import physical_constants

    from radsolve.units import unit_system

    atomic, nuclear = unit_system("atomic"), unit_system("nuclear")
    hbar_c_mev_fm = const.hbar * const.c / const.e / 1e6 / 1e-15
    assert nuclear.hbar_c() == pytest.approx(hbar_c_mev_fm, rel=1e-14)
    assert nuclear.coulomb_constant() == pytest.approx(const.alpha * hbar_c_mev_fm, rel=1e-14)
    assert atomic.hbar_c() == pytest.approx(1.0 / const.alpha, rel=1e-14)
    assert atomic.coulomb_constant() == 1.0
    electron_in_hartree = physical_constants["electron mass energy equivalent"][0] / physical_constants[
        "Hartree energy"][0]
    assert atomic.rest_energy(1.0) == pytest.approx(electron_in_hartree, rel=1e-9)
    assert nuclear.rest_energy(938.272) == 938.272
    # the kinetic mass of nuclear units absorbs (hbar c)**2
    assert nuclear.kinetic_mass(938.272) == pytest.approx(938.272 / hbar_c_mev_fm**2, rel=1e-14)
