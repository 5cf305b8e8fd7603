"""The shared options: one definition per concept, with the API's ranges and names in the help (no checks here)."""

from __future__ import annotations

from pathlib import Path
from typing import Annotated, Optional

import typer

from radsolve.cli.adapter import OutputFormat, ReportFormat

from radsolve.core.solvers.registry import DESCRIPTIONS, EVERY_METHOD
from radsolve.core.inputs import COUNT_MAX, DIMENSION_RANGE, L_MAX
from radsolve.core.relativistic import EQUATIONS
from radsolve.core.targets import TOL_RANGE
from radsolve.units import ENERGY_UNITS, MASS_UNITS, PARTICLES, UNIT_SYSTEMS


ENERGY_UNITS_HELP = ", ".join(ENERGY_UNITS)


PLUGINS_HELP = ("folder of potential plug-ins (*.py); repeatable; folders in the "
                "RADSOLVE_PLUGINS environment variable are searched too")


# Options shared by several commands: one definition per concept.  Their ranges and
# defaults are the API's (the CLI checks nothing itself; the API's errors name the
# option through OPTION_OF).
NameArgument = Annotated[str, typer.Argument(
    metavar="NAME", help="potential family, e.g. coulomb (list: radsolve potentials)")]


ParamOption = Annotated[Optional[list[str]], typer.Option(
    "-p", "--param", metavar="KEY=VALUE",
    help="potential parameter, repeatable; atomic units unless a unit is attached, "
         "e.g. -p width=0.5angstrom")]


LOption = Annotated[Optional[list[int]], typer.Option(
    "--l", "-l", metavar="L", help=f"orbital angular momentum 0 ... {L_MAX}, repeatable [default: 0]")]


LmaxOption = Annotated[Optional[int], typer.Option(
    "--lmax", metavar="L", help="every l from 0 to L (not with --l)")]


CountOption = Annotated[int, typer.Option(
    "--count", "-k", metavar="K",
    help=f"the K lowest levels for each l, 1 ... {COUNT_MAX} (in a sweep each has a row at every point, "
         "bound or not)")]


MassOption = Annotated[Optional[str], typer.Option(
    "--mass", "-m", metavar="M",
    help="reduced mass: a number of electron masses (MeV/c^2 in nuclear units), a number with "
         f"{', '.join(MASS_UNITS)} (e.g. 0.50391u, 939.57MeV), or particles ({', '.join(PARTICLES)}); "
         "'+' joins terms into their reduced mass (electron+proton) [default: 1 electron mass in "
         "atomic units; needed in nuclear units]")]


PluginsOption = Annotated[Optional[list[Path]], typer.Option("--plugins", metavar="DIR", help=PLUGINS_HELP)]


MethodOption = Annotated[str, typer.Option(
    "--method", metavar="METHOD",
    help="a registered method: " + ", ".join(f"{k} ({v})" for k, v in DESCRIPTIONS.items())
    + f", or {EVERY_METHOD} (every one; their disagreement is folded into the estimates)")]


UnitsOption = Annotated[Optional[str], typer.Option(
    "--units", metavar="SYSTEM",
    help=f"unit system, one of {', '.join(UNIT_SYSTEMS)}: atomic (hartree, bohr, electron masses) or "
         "nuclear (MeV, fm, MeV/c^2) [default: the potential's own]")]


TolOption = Annotated[float, typer.Option(
    "--tol", metavar="T",
    help=f"target relative error of each energy ({TOL_RANGE[0]:g} ... {TOL_RANGE[1]:g})")]


OutputUnitOption = Annotated[Optional[str], typer.Option(
    "--unit", "-u", metavar="U",
    help=f"energy unit of the output: {ENERGY_UNITS_HELP} [default: hartree, or MeV in nuclear units]")]


AtomicOutputUnitOption = Annotated[str, typer.Option(
    "--unit", "-u", metavar="U", help=f"energy unit of the output: {ENERGY_UNITS_HELP}")]


SpinOrbitOption = Annotated[bool, typer.Option(
    "--spin-orbit", help="split each l > 0 into j = l -+ 1/2 with the potential's spin-orbit term")]


# The relativistic equations (issue 11).
EquationOption = Annotated[str, typer.Option(
    "--equation", metavar="EQ",
    help="wave equation: " + ", ".join(EQUATIONS) + " (Dirac: levels n l j, spin-orbit built in; "
    "relativistic energies are E - mc^2 with the reduced mass; Dirac also takes --method first-order, "
    "shooting of G and F, and --method both runs fd and first-order)")]

ScalarOption = Annotated[bool, typer.Option(
    "--scalar", help="dirac / klein-gordon: add the family's Lorentz-scalar potential")]


DimensionOption = Annotated[int, typer.Option(
    "--dimension", "-d", metavar="D",
    help=f"space dimension D, {DIMENSION_RANGE[0]} ... {DIMENSION_RANGE[1]} (centrifugal term with "
         "l -> l + (D-3)/2)")]
FormatOption = Annotated[OutputFormat, typer.Option(
    "--format", "-f", help="table for reading, json or csv for programs")]
ReportFormatOption = Annotated[ReportFormat, typer.Option(
    "--format", "-f", help="table for reading, json for programs")]
OutFileOption = Annotated[Optional[Path], typer.Option(
    "--out", "-o", metavar="FILE", help="write the output to FILE instead of stdout")]

#: --progress of the commands that run many computations (sweeps, long energy grids).
ProgressOption = Annotated[Optional[bool], typer.Option(
    "--progress/--no-progress", help="progress bar on stderr [default: only when stderr is a terminal]")]
