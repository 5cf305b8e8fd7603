"""Every bad input the command line refuses (exit 2), the API refuses too, in the same words.

For each case of ``CASES``: the command line exits with status 2 and one line
``radsolve: error: ...``; the API call with the same inputs raises the same
kind of error with the same ``parameter`` field; and the command line's line
holds the API's message -- with the argument's name replaced by the option
that gives it when the message leads with that name (``tol must be ...`` ->
``--tol must be ...``) -- and names that option.  So a rule cannot live in the
command line alone: take one out of the API and its case here fails (the API
call no longer raises), and a rule added only to the command line would show
up as a command-line message that the API does not give.

The cases mirror the command-line tests that expect exit 2 (test_bad_input,
test_states_cli, test_sweep_cli, test_formula, test_dimensions, test_nuclear,
test_tabulated).  Those without an API counterpart -- the command line's own
syntax, typer's parsing of text into numbers and choices -- are in
``CLI_ONLY``, each with the reason; their messages must still name the option.

Not physics checks: no outside source is needed.
"""

from __future__ import annotations

import inspect
import math
import tempfile
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Callable

import pytest
import typer
from typer.testing import CliRunner

import radsolve
from radsolve.analysis.fitting import fit, parse_free
from radsolve.analysis.radiative import transitions
from radsolve.analysis.relativistic import relativistic_state
from radsolve.analysis.scattering import (energy_grid, log_derivatives, phase_shifts, photoionization, resonances,
                                         scattering)
from radsolve.analysis.sweeps import parse_vary, sweep
from radsolve.analysis.thresholds import NoThresholdError, critical_values, threshold
from radsolve.cli import app
from radsolve.core.wavefunctions import export_format
from radsolve.errors import InputError, PluginError, UnboundedBelowError
from radsolve.output.plotting import check_plot_path
from radsolve.potentials import describe, get_family, potential
from radsolve.potentials.formula import FormulaError, formula_potential
from radsolve.potentials.tabulated import tabulated_potential
from radsolve.units import energy_unit_factor

runner = CliRunner()
PLUGINS = Path(__file__).parent / "cli_plugins"

# Files the cases read, written once.
FILES = Path(tempfile.mkdtemp(prefix="radsolve-parity-"))
BAD_TABLE = FILES / "bad_table.csv"
BAD_TABLE.write_text("1,2\n2,oops\n", encoding="utf-8")
TARGETS = {
    "missing_column": "label,energy,unit\n1s,-1,hartree\n",
    "bad_unit": "label,energy,uncertainty,unit\n1s,-1,0.1,parsec\n",
    "bad_energy": "label,energy,uncertainty,unit\n1s,-1,0.1,eV\n2p,minus one,0.1,eV\n",
}
for key, text in TARGETS.items():
    (FILES / f"{key}.csv").write_text(text, encoding="utf-8")
MISSING = str(FILES / "missing.csv")


@dataclass
class Case:
    cli: list[str]
    api: Callable[[], Any]
    parameter: str | None  # the InputError's parameter field (None: not about one argument)
    option: str | None  # what the command line must name (None: the message names it itself)
    error: type = InputError


def S(**kwargs):
    """Keyword arguments of solve as the command line passes them (its defaults are the API's)."""
    return lambda: radsolve.solve(kwargs.pop("potential", "coulomb"), **kwargs)


CASES = [
    # relativistic levels (issue 11)
    Case(["levels", "coulomb", "--equation", "pauli"], S(equation="pauli"), "equation", "--equation"),
    Case(["levels", "coulomb", "--equation", "dirac", "--spin-orbit"], S(equation="dirac", spin_orbit=True),
         "spin_orbit", "--spin-orbit"),
    Case(["levels", "coulomb", "--equation", "dirac", "--scalar"], S(equation="dirac", scalar=True),
         "scalar", "--scalar"),
    Case(["levels", "coulomb", "--scalar"], S(scalar=True), "scalar", "--scalar"),
    Case(["wave", "coulomb", "--n", "2", "--l", "1", "--equation", "dirac"],
         lambda: relativistic_state("coulomb", 2, 1, equation="dirac"), "j", "--j"),
    Case(["wave", "coulomb", "--n", "2", "--l", "1", "--j", "5/2", "--equation", "dirac"],
         lambda: relativistic_state("coulomb", 2, 1, "5/2", equation="dirac"), "j", "--j"),
    Case(["wave", "coulomb", "--n", "2", "--l", "1", "--j", "1/2", "--equation", "klein-gordon"],
         lambda: relativistic_state("coulomb", 2, 1, "1/2", equation="klein-gordon"), "j", "--j"),
    Case(["wave", "coulomb", "--n", "1", "--l", "1", "--j", "1/2", "--equation", "dirac"],
         lambda: relativistic_state("coulomb", 1, 1, "1/2", equation="dirac"), "n", "--n"),
    Case(["wave", "coulomb", "--n", "1", "--l", "0", "--equation", "dirac", "--scalar"],
         lambda: relativistic_state("coulomb", 1, 0, equation="dirac", scalar=True), "scalar", "--scalar"),
    Case(["transitions", "alkali_model", "--nmax", "3", "--equation", "klein-gordon"],
         lambda: transitions("alkali_model", 3, equation="klein-gordon"), "potential", None),
    Case(["levels", "coulomb", "--equation", "dirac", "-d", "2"], S(equation="dirac", dimension=2),
         "dimension", "--dimension"),
    # test_bad_input: values a potential parameter does not accept (the message names it)
    Case(["levels", "coulomb", "-p", "Z=abc"], lambda: potential("coulomb", Z="abc"), "Z", None),
    Case(["levels", "coulomb", "-p", "Z=nan"], lambda: potential("coulomb", Z="nan"), "Z", None),
    Case(["levels", "coulomb", "-p", "Z=inf"], lambda: potential("coulomb", Z="inf"), "Z", None),
    Case(["levels", "coulomb", "-p", "Z=-1"], lambda: potential("coulomb", Z="-1"), "Z", None),
    Case(["levels", "yukawa", "-p", "screening_length=-2"],
         lambda: potential("yukawa", screening_length="-2"), "screening_length", None),
    Case(["levels", "yukawa", "-p", "screening_length=0.5angstrom", "-p", "Z=1e999"],
         lambda: potential("yukawa", screening_length="0.5angstrom", Z="1e999"), "Z", None),
    Case(["levels", "yukawa", "-p", "screening_length=3eV"],
         lambda: potential("yukawa", screening_length="3eV"), "screening_length", None),
    Case(["levels", "yukawa", "-p", "screening=2"], lambda: potential("yukawa", screening="2"),
         "screening", None),
    Case(["levels", "yukawwa"], S(potential="yukawwa"), "potential", "NAME"),
    Case(["potentials", "yukawwa"], lambda: describe("yukawwa"), "potential", "NAME"),
    # test_bad_input: mass
    *[Case(["levels", "coulomb", "--mass", m], S(mass=m), "mass", "--mass")
      for m in ("-1", "0", "nan", "inf", "muonn+proton", "electron+")],
    # test_bad_input: unit, tolerance, l, count, plug-in folder
    Case(["levels", "coulomb", "--unit", "kcal"], lambda: energy_unit_factor("kcal"), "unit", "--unit"),
    *[Case(["levels", "coulomb", "--tol", t], S(tol=float(t)), "tol", "--tol")
      for t in ("0", "1", "-1e-8", "2", "nan", "inf", "1e-16")],
    Case(["levels", "coulomb", "--l", "300"], S(l=300), "l", "--l"),
    Case(["levels", "coulomb", "--l", "-1"], S(l=-1), "l", "--l"),
    Case(["levels", "coulomb", "--lmax", "-1"], S(l=[]), "l", "--lmax"),
    Case(["levels", "coulomb", "--count", "5000"], S(count=5000), "count", "--count"),
    Case(["levels", "coulomb", "--count", "0"], S(count=0), "count", "--count"),
    Case(["levels", "coulomb", "--method", "rk4"], S(method="rk4"), "method", "--method"),
    Case(["levels", "coulomb", "--plugins", "/nonexistent/radsolve-plugins"],
         S(plugins=["/nonexistent/radsolve-plugins"]), "plugins", "--plugins"),
    # test_bad_input: plug-ins that fail (not InputError, but the same error and words)
    Case(["levels", "cli_broken", "--plugins", str(PLUGINS / "broken_import")],
         S(potential="cli_broken", plugins=[str(PLUGINS / "broken_import")]), None, None, PluginError),
    Case(["levels", "cli_nan_tail", "--plugins", str(PLUGINS / "nan_v"), "--count", "1", "--tol", "1e-6"],
         S(potential="cli_nan_tail", plugins=[str(PLUGINS / "nan_v")], count=1, tol=1e-6),
         None, None, PluginError),
    Case(["levels", "cli_inverse_square", "--plugins", str(PLUGINS / "inverse_square"), "--count", "1",
          "--tol", "1e-6"],
         S(potential="cli_inverse_square", plugins=[str(PLUGINS / "inverse_square")], count=1, tol=1e-6),
         None, None, UnboundedBelowError),
    Case(["check", "--quick", "--tol", "0"], lambda: radsolve.check(tol=0.0, quick=True), "tol", "--tol"),
    Case(["check", "--quick", "--tol", "1"], lambda: radsolve.check(tol=1.0, quick=True), "tol", "--tol"),
    Case(["check", "--quick", "--tol", "nan"], lambda: radsolve.check(tol=math.nan, quick=True), "tol", "--tol"),
    # test_dimensions, test_nuclear
    Case(["levels", "coulomb", "--dimension", "1"], S(dimension=1), "dimension", "--dimension"),
    Case(["levels", "coulomb", "--spin-orbit"], S(spin_orbit=True), "spin_orbit", "--spin-orbit"),
    Case(["levels", "coulomb", "--units", "nuclear"], S(units="nuclear"), "units", "--units"),
    Case(["levels", "woods_saxon"], S(potential="woods_saxon"), "mass", "--mass"),
    Case(["levels", "woods_saxon", "--units", "atomic", "--mass", "neutron"],
         S(potential="woods_saxon", units="atomic", mass="neutron"), "units", "--units"),
    Case(["levels", "woods_saxon", "--mass", "3kg"], S(potential="woods_saxon", mass="3kg"), "mass", "--mass"),
    # test_formula, test_tabulated
    Case(["levels", "formula", "--expr", "__import__('os').getcwd()"],
         lambda: formula_potential("__import__('os').getcwd()"), "expr", "--expr", FormulaError),
    Case(["levels", "formula", "--expr", "-Z/r"], lambda: formula_potential("-Z/r"), "Z", None),
    Case(["levels", "formula", "--expr", "exp(r"], lambda: formula_potential("exp(r"), "expr", "--expr",
         FormulaError),
    Case(["levels", "table", "--file", str(BAD_TABLE)], lambda: tabulated_potential(BAD_TABLE), "source",
         "--file"),
    # test_states_cli: wave
    Case(["wave", "coulomb", "--n", "1", "--l", "1"], lambda: radsolve.state("coulomb", 1, 1), "n", "--n"),
    Case(["wave", "yukawa", "-p", "screening_length=1", "--n", "2", "--l", "0"],
         lambda: radsolve.state(potential("yukawa", screening_length="1"), 2, 0), None, None),
    Case(["wave", "coulomb", "--n", "1", "--l", "0", "--moment=-3"],
         lambda: radsolve.state("coulomb", 1, 0).moment(-3.0), "k", "--moment"),
    Case(["wave", "coulomb", "--n", "2", "--l", "0", "--moment=-4"],
         lambda: radsolve.state("coulomb", 2, 0).moment(-4.0), "k", "--moment"),
    Case(["wave", "coulomb", "--n", "1", "--l", "0", "--at=-2"],
         lambda: radsolve.state("coulomb", 1, 0).wavefunction([-2.0]), "r", "--at"),
    Case(["wave", "coulomb", "--n", "1", "--l", "0", "--hellmann-feynman", "depth"],
         lambda: radsolve.state("coulomb", 1, 0).hellmann_feynman("depth"), "parameter", "--hellmann-feynman"),
    Case(["wave", "coulomb", "--n", "1", "--l", "0", "--plot", "/no/such/folder/w.png"],
         lambda: check_plot_path("/no/such/folder/w.png"), None, "--plot"),
    Case(["wave", "coulomb", "--n", "1", "--l", "0", "--plot", "w.bmp"],
         lambda: check_plot_path("w.bmp"), None, "--plot"),
    Case(["wave", "coulomb", "--n", "1", "--l", "0", "--out", "w.txt"], lambda: export_format("w.txt"),
         None, "--out"),
    # test_states_cli: transitions
    Case(["transitions", "coulomb", "--nmax", "40"], lambda: transitions("coulomb", 40), "nmax", "--nmax"),
    Case(["transitions", "coulomb", "--nmax", "2", "--unit", "furlong"], lambda: energy_unit_factor("furlong"),
         "unit", "--unit"),
    Case(["transitions", "coulomb", "--nmax", "2", "--plot", "/no/such/folder/d.png"],
         lambda: check_plot_path("/no/such/folder/d.png"), None, "--plot"),
    Case(["transitions", "yukawa", "-p", "screening_length=0.5", "--nmax", "2"],
         lambda: transitions(potential("yukawa", screening_length="0.5"), 2), None, None),
    Case(["transitions", "coulomb", "--nmax", "2", "--dipole-charge", "-1"],
         lambda: transitions("coulomb", 2, dipole_charge=-1.0), "dipole_charge", "--dipole-charge"),
    Case(["transitions", "alkali_model", "--nmax", "3", "--occupied", "9q"],
         lambda: transitions("alkali_model", 3, occupied="9q"), "occupied", "--occupied"),
    # test_sweep_cli: sweep (parse_vary is the API's reader of KEY=START:STOP:NUM)
    *[Case(["sweep", family, "--vary", vary, *extra],
           lambda family=family, vary=vary, extra=extra: parse_vary(vary, get_family(family), "--log" in extra),
           parameter, None)
      for family, vary, extra, parameter in [
          ("yukawa", "screening_length", [], None), ("yukawa", "screening_length=1:2", [], None),
          ("yukawa", "depth=1:2:3", [], None), ("yukawa", "screening_length=1:1:5", [], None),
          ("yukawa", "screening_length=1:2:0", [], None), ("yukawa", "screening_length=1:2:x", [], None),
          ("flat_core", "well_depth=-1:2:3", ["--log"], None),
          ("yukawa", "screening_length=1eV:2:3", [], "screening_length")]],
    Case(["sweep", "yukawa", "--vary", "screening_length=1:2:3", "--out", "x.txt"],
         lambda: sweep("yukawa", {"screening_length": [1.0, 1.5, 2.0]}, out="x.txt", workers=1), "out", "--out"),
    Case(["sweep", "yukawa", "--vary", "screening_length=1:2:2", "--cluster", "nowhere"],
         lambda: sweep("yukawa", {"screening_length": [1.0, 2.0]}, cluster="nowhere"), "cluster", "--cluster"),
    Case(["sweep", "yukawa", "--vary", "screening_length=1:2:2", "--workers", "0"],
         lambda: sweep("yukawa", {"screening_length": [1.0, 2.0]}, workers=0), "workers", "--workers"),
    Case(["sweep", "yukawa", "--vary", "screening_length=1:2:2", "--tol", "5"],
         lambda: sweep("yukawa", {"screening_length": [1.0, 2.0]}, tol=5.0, workers=1), "tol", "--tol"),
    # test_sweep_cli: threshold
    Case(["threshold", "yukawa", "--vary", "screening_length", "--bracket", "1:2"],
         lambda: threshold("yukawa", "screening_length", bracket=("1", "2")), "bracket", "--bracket"),
    Case(["threshold", "yukawa", "--vary", "screening_length", "--level", "1j"],
         lambda: critical_values("yukawa", "screening_length", levels=["1j"]), "levels", "--level"),
    Case(["threshold", "coulomb", "--vary", "Z"], lambda: threshold("coulomb", "Z"), None, None,
         NoThresholdError),
    Case(["threshold", "yukawa", "--vary", "width"], lambda: threshold("yukawa", "width"), "parameter",
         "--vary"),
    Case(["threshold", "yukawa", "--vary", "screening_length", "--level", "1s", "--nmax", "2"],
         lambda: critical_values("yukawa", "screening_length", levels=["1s"], nmax=2), "levels", "--level"),
    Case(["threshold", "yukawa", "--vary", "screening_length", "--lmax", "1"],
         lambda: critical_values("yukawa", "screening_length", lmax=1), "lmax", "--lmax"),
    Case(["threshold", "yukawa", "--vary", "screening_length", "--tol", "1e-14"],
         lambda: threshold("yukawa", "screening_length", tol=1e-14), "tol", "--tol"),
    # test_sweep_cli: fit
    Case(["fit", "yukawa", "--targets", MISSING, "--free", "Z"], lambda: fit("yukawa", MISSING, free=["Z"]),
         "targets", "--targets"),
    Case(["fit", "yukawa", "--targets", MISSING, "--free", "Z:1"], lambda: parse_free("Z:1"), "free", "--free"),
    Case(["fit", "yukawa", "--targets", MISSING, "--free", "Z", "--free", "Z"],
         lambda: fit("yukawa", MISSING, free=["Z", "Z"]), "free", "--free"),
    *[Case(["fit", "yukawa", "--targets", str(FILES / f"{key}.csv"), "--free", "Z"],
           lambda key=key: fit("yukawa", str(FILES / f"{key}.csv"), free=["Z"]), "targets", "--targets")
      for key in TARGETS],
    # test_continuum_cli: phases and scattering
    Case(["phases", "yukawa", "--energies", "-0.1,0.2"], lambda: phase_shifts("yukawa", [-0.1, 0.2]),
         "energies", "--energies"),
    Case(["phases", "yukawa", "--energies", "2:1:10"], lambda: energy_grid(2.0, 1.0, 10), "energies",
         "--energies"),
    Case(["phases", "yukawa", "--energies", "1:2:0"], lambda: energy_grid(1.0, 2.0, 0), "energies", "--energies"),
    Case(["phases", "harmonic", "--energies", "1"], lambda: phase_shifts("harmonic", [1.0]), "potential", "NAME"),
    Case(["phases", "formula", "--expr", "-1/r**1.5", "--energies", "1"],
         lambda: phase_shifts(formula_potential("-1/r**1.5"), [1.0]), "potential", "NAME"),
    Case(["phases", "yukawa", "--energies", "1", "--tol", "0"], lambda: phase_shifts("yukawa", [1.0], tol=0.0),
         "tol", "--tol"),
    Case(["phases", "yukawa", "--energies", "1", "--hard-core=-1"],
         lambda: phase_shifts("yukawa", [1.0], hard_core=-1.0), "hard_core", "--hard-core"),
    Case(["phases", "yukawa", "--energies", "1", "--spin-orbit"],
         lambda: phase_shifts("yukawa", [1.0], spin_orbit=True), "spin_orbit", "--spin-orbit"),
    Case(["scattering", "coulomb"], lambda: scattering("coulomb"), "potential", "NAME"),
    Case(["scattering", "harmonic"], lambda: scattering("harmonic"), "potential", "NAME"),
    Case(["scattering", "yukawa", "--tol", "1"], lambda: scattering("yukawa", tol=1.0), "tol", "--tol"),
    Case(["scattering", "yukawa", "--vary", "depth=1:2:3"],
         lambda: parse_vary("depth=1:2:3", get_family("yukawa")), None, None),
    Case(["photoionization", "coulomb", "--photons", "0.3,1"], lambda: photoionization("coulomb", "1s", [0.3, 1.0]),
         "photon_energies", "--photons"),
    Case(["photoionization", "coulomb", "--photons", "1", "--level", "1p"],
         lambda: photoionization("coulomb", "1p", [1.0]), "level", "--level"),
    Case(["photoionization", "coulomb", "--photons", "2:1:3"],
         lambda: energy_grid(2.0, 1.0, 3, parameter="photon_energies"), "photon_energies", "--photons"),
    Case(["logderiv", "coulomb", "--energies", "0.2,0.1", "--radius", "2"],
         lambda: log_derivatives("coulomb", [0.2, 0.1], radius=2.0), "energies", "--energies"),
    Case(["logderiv", "coulomb", "--energies", "0.1", "--radius=-2"],
         lambda: log_derivatives("coulomb", [0.1], radius=-2.0), "radius", "--radius"),
    Case(["logderiv", "coulomb", "--energies", "0.1", "--radius", "1e-40"],
         lambda: log_derivatives("coulomb", [0.1], radius=1e-40), "radius", "--radius"),
    Case(["logderiv", "coulomb", "--energies", "0.1", "--radius", "2", "--reference", "woods_saxon",
          "--mass", "1"],
         lambda: log_derivatives("coulomb", [0.1], radius=2.0, reference="woods_saxon", mass=1.0),
         "reference", "--reference"),
    Case(["resonances", "yukawa", "--window", "2:1"], lambda: resonances("yukawa", window=(2.0, 1.0)), "window",
         "--window"),
    Case(["resonances", "yukawa", "--window=-1:1"], lambda: resonances("yukawa", window=(-1.0, 1.0)), "window",
         "--window"),
]

#: Refused by the command line with no API call to compare: (args, words its message holds, why).
CLI_ONLY = [
    (["levels", "coulomb", "-p", "Z"], ["-p", "KEY=VALUE"], "-p syntax: the text KEY=VALUE"),
    (["levels", "coulomb", "-p", "=2"], ["-p", "name"], "-p syntax"),
    (["levels", "coulomb", "-p", "Z="], ["-p", "value"], "-p syntax"),
    (["levels", "coulomb", "-p", "Z=1", "-p", "Z=2"], ["'Z'", "twice"], "-p syntax (a dict cannot hold it twice)"),
    (["levels", "coulomb", "--l", "1", "--lmax", "2"], ["--l", "--lmax"], "two options for one argument, l"),
    (["levels", "coulomb", "--out", "/nonexistent/folder/levels.json"], ["--out"],
     "the command line writes the file; solve writes none"),
    (["levels", "coulomb", "--format", "xml"], ["--format"], "typer's choice of output format"),
    (["levels", "coulomb", "--l", "one"], ["--l"], "typer reads the text as an integer"),
    (["levels", "coulomb", "--count", "two"], ["--count"], "typer reads the text as an integer"),
    (["levels", "coulomb", "--tol", "small"], ["--tol"], "typer reads the text as a number"),
    (["check", "--tol", "x"], ["--tol"], "typer reads the text as a number"),
    (["levels", "formula"], ["--expr"], "NAME 'formula' is how the command line spells formula_potential"),
    (["levels", "table"], ["--file"], "NAME 'table' is how the command line spells tabulated_potential"),
    (["wave", "coulomb", "--n", "1", "--l", "0", "--out", "w.csv", "--format", "json"], ["disagree"],
     "two options for the stdout and file formats"),
    (["sweep", "yukawa", "--vary", "screening_length=1:2:3", "--vary", "screening_length=3:4:2"],
     ["--vary", "given twice"], "--vary syntax (a dict cannot hold it twice)"),
    (["sweep", "yukawa", "--vary", "screening_length=1:2:3", "-p", "screening_length=2"],
     ["--vary", "-p"], "the command line builds vary and fixed from --vary and -p; the API refuses "
                       "the overlap too (test_sweep_refuses_a_parameter_both_varied_and_fixed)"),
    (["sweep", "yukawa", "--vary", "screening_length=1:2:3", "--plot", "x.jpg"], ["--plot", ".png"],
     "plot_sweep does not check its path; the command line writes PNG only"),
    (["threshold", "yukawa", "--vary", "screening_length", "--bracket", "1"], ["--bracket", "A:B"],
     "--bracket syntax: the text A:B"),
    (["phases", "yukawa", "--energies", "1:2"], ["--energies", "START:STOP:NUM"],
     "--energies syntax: the text START:STOP:NUM or E1,E2,..."),
    (["phases", "yukawa", "--energies", "a,b"], ["--energies"], "--energies syntax: numbers"),
]


def _cli_line(args) -> str:
    result = runner.invoke(app, args)
    assert result.exit_code == 2, (args, result.exit_code, result.stdout, result.stderr)
    assert "Traceback" not in result.stdout + result.stderr
    assert result.stdout == ""
    return result.stderr


def _without_leading_name(message: str, parameter: str | None) -> str:
    if parameter and (message == parameter or message.startswith((parameter + " ", parameter + ":"))):
        return message[len(parameter):]
    return message


@pytest.mark.parametrize("case", CASES, ids=lambda c: " ".join(c.cli))
def test_the_command_line_refuses_what_the_api_refuses(case, monkeypatch):
    monkeypatch.chdir(FILES)
    stderr = _cli_line(case.cli)
    lines = stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("radsolve: error: "), stderr
    line = lines[0]

    with pytest.raises(case.error) as info:
        case.api()
    exc = info.value
    assert type(exc) is case.error or (case.error is InputError and isinstance(exc, InputError)), type(exc)
    assert getattr(exc, "parameter", None) == case.parameter, (exc, getattr(exc, "parameter", None))
    assert _without_leading_name(str(exc), case.parameter) in line, (str(exc), line)
    if case.option is not None:
        assert case.option in line, (case.option, line)


@pytest.mark.parametrize("args, words, why", CLI_ONLY, ids=lambda a: " ".join(a) if isinstance(a, list) else "")
def test_command_line_syntax_errors_name_the_option(args, words, why, monkeypatch):
    monkeypatch.chdir(FILES)
    stderr = _cli_line(args)
    for word in words:
        assert word in stderr, (word, stderr)


def test_sweep_refuses_a_parameter_both_varied_and_fixed():
    with pytest.raises(InputError) as info:
        sweep("yukawa", {"screening_length": [1.0, 2.0]}, fixed={"screening_length": 2.0})
    assert info.value.parameter == "fixed" and "both" in str(info.value)


# ------------------------------------------------------------ options: no ranges, the API's defaults


def _commands() -> dict:
    return typer.main.get_command(app).commands


def test_no_option_carries_a_range_of_its_own():
    # Ranges are the API's: a typer min/max would refuse with a message the API does not give.
    # (by name, not by class: recent typer versions carry their own copy of click)
    checked = 0
    for name, command in _commands().items():
        for param in command.params:
            if getattr(param, "param_type_name", None) != "option":  # arguments are checked by the API too
                continue
            checked += 1
            kind = getattr(param, "type", None) or getattr(param, "bare_type", None)
            assert "Range" not in type(kind).__name__, (name, param.name, kind)
            assert getattr(param, "min", None) is None and getattr(param, "max", None) is None, (name, param.name)
    assert checked > 50  # every command's options were looked at


# command -> (API function, {option's parameter name: API argument}); every option that
# gives an API argument with a default must default to that same value.
DEFAULTS = {
    "levels": (radsolve.solve, {"count": "count", "tol": "tol", "method": "method", "mass": "mass",
                                "units": "units", "spin_orbit": "spin_orbit", "dimension": "dimension",
                                "equation": "equation", "scalar": "scalar"}),
    "sweep": (sweep, {"count": "count", "tol": "tol", "method": "method", "mass": "mass", "units": "units",
                      "spin_orbit": "spin_orbit", "dimension": "dimension", "workers": "workers",
                      "unit": "unit", "cluster": "cluster", "progress": "progress", "equation": "equation"}),
    "threshold": (threshold, {"tol": "tol", "mass": "mass", "units": "units", "dimension": "dimension",
                              "bracket": "bracket", "equation": "equation"}),
    "fit": (fit, {"tol": "tol", "method": "method", "mass": "mass", "units": "units", "dimension": "dimension",
                  "max_evaluations": "max_evaluations", "equation": "equation"}),
    "wave": (radsolve.state, {"tol": "tol", "method": "method", "mass": "mass", "equation": "equation"}),
    "wave --equation dirac": (relativistic_state, {"tol": "tol", "method": "method", "mass": "mass",
                                                   "j": "j", "scalar": "scalar"}),
    "transitions": (transitions, {"tol": "tol", "method": "method", "mass": "mass",
                                  "dipole_charge": "dipole_charge", "equation": "equation"}),
    "check": (radsolve.check, {"tol": "tol", "quick": "quick"}),
    "phases": (phase_shifts, {"tol": "tol", "hard_core": "hard_core", "mass": "mass", "units": "units",
                              "spin_orbit": "spin_orbit"}),
    "scattering": (scattering, {"tol": "tol", "hard_core": "hard_core", "mass": "mass", "units": "units"}),
    "photoionization": (photoionization, {"tol": "tol", "level": "level", "mass": "mass"}),
    "resonances": (resonances, {"tol": "tol", "mass": "mass", "units": "units", "points": "scan_points"}),
    "logderiv": (log_derivatives, {"tol": "tol", "mass": "mass", "units": "units", "reference": "reference"}),
}


@pytest.mark.parametrize("command", sorted(DEFAULTS))
def test_option_defaults_are_the_api_defaults(command):
    func, mapping = DEFAULTS[command]
    params = {p.name: p for p in _commands()[command.split()[0]].params}
    signature = inspect.signature(func).parameters
    for option, argument in mapping.items():
        assert params[option].default == signature[argument].default, (command, option)


def test_output_unit_defaults_are_the_writers_defaults():
    from radsolve.output.report import render, state_table, transitions_table

    params = {c: {p.name: p for p in _commands()[c].params} for c in ("levels", "wave", "transitions")}
    assert params["levels"]["unit"].default == inspect.signature(render).parameters["unit"].default
    assert params["wave"]["unit"].default == inspect.signature(state_table).parameters["unit"].default
    assert params["transitions"]["unit"].default == \
        inspect.signature(transitions_table).parameters["unit"].default


def test_the_table_rules_default_to_the_api():
    # None on the command line means: not given, tabulated_potential's own default applies.
    params = {p.name: p for p in _commands()["levels"].params}
    signature = inspect.signature(tabulated_potential).parameters
    for option, argument in (("beyond", "beyond"), ("inside", "inside"), ("spline", "spline_degree")):
        assert params[option].default is None and signature[argument].default is not None
