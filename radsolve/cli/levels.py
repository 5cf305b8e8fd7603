"""Commands about one spectrum: ``levels``, ``check`` and ``potentials``."""

from __future__ import annotations

import sys
from pathlib import Path
from typing import Annotated, Optional

import typer

from radsolve.cli.adapter import (OutputFormat, say, reported_errors, parse_assignments, plugin_dirs,
                                  l_values, only_given, write_output, solver_call, folder_exists)
from radsolve.cli.options import (FormatOption, OutFileOption, NameArgument, ParamOption, LOption, LmaxOption, CountOption, MassOption,
                                  PluginsOption, MethodOption, UnitsOption, TolOption, OutputUnitOption,
                                  SpinOrbitOption, DimensionOption, EquationOption, ScalarOption)
from radsolve.core.targets import JUDGED_TOL_RANGE, TOL_RANGE


def levels_command(
    name: NameArgument,
    param: ParamOption = None,
    l: LOption = None,
    lmax: LmaxOption = None,
    count: CountOption = 5,
    mass: MassOption = None,
    tol: TolOption = 1e-10,
    method: MethodOption = "fd",
    unit: OutputUnitOption = None,
    units: UnitsOption = None,
    spin_orbit: SpinOrbitOption = False,
    dimension: DimensionOption = 3,
    equation: EquationOption = "schrodinger",
    scalar: ScalarOption = False,
    expr: Annotated[Optional[str], typer.Option(
        "--expr", metavar="EXPR",
        help="with NAME 'formula': V(r) as an expression in r and parameters, e.g. "
             "'-Z*exp(-r/D)/r' with -p Z=1 -p D=10")] = None,
    table_file: Annotated[Optional[Path], typer.Option(
        "--file", metavar="FILE",
        help="with NAME 'table': text/CSV file of r, V lines, interpolated by a cubic spline")
    ] = None,
    r_unit: Annotated[Optional[str], typer.Option(
        "--r-unit", metavar="U", help="length unit of the table's r [default: bohr or fm]")] = None,
    v_unit: Annotated[Optional[str], typer.Option(
        "--v-unit", metavar="U", help="energy unit of the table's V [default: hartree or MeV]")
    ] = None,
    beyond: Annotated[Optional[str], typer.Option(
        "--beyond", metavar="RULE",
        help="V beyond the table's last r: constant, zero or coulomb:Z (-Z/r) [default: constant]")
    ] = None,
    inside: Annotated[Optional[str], typer.Option(
        "--inside", metavar="RULE",
        help="V inside the table's first r: constant or coulomb:Z [default: constant]")] = None,
    spline: Annotated[Optional[int], typer.Option(
        "--spline", metavar="K", help="degree of the table's spline: 3 or 5 [default: 3]")] = None,
    fmt: FormatOption = OutputFormat.table,
    out: OutFileOption = None,
    plugins: PluginsOption = None,
) -> None:
    """The K lowest bound levels of potential NAME for each l.

    Energies come with an error estimate. If fewer than K levels are bound,
    those found are shown with a note (exit 0, also when none is bound). A
    level that did not reach --tol is marked NO in the 'conv' column, a
    warning goes to stderr and the exit status is 3.
    """
    with reported_errors():
        from radsolve.units import energy_unit_factor

        params = parse_assignments(param)
        ls = l_values(l, lmax)
        if unit is not None:
            energy_unit_factor(unit)  # before anything is solved
        if out is not None:
            folder_exists(out, "--out")

        pot = _levels_potential(name, params, plugins, units, expr, table_file, r_unit, v_unit,
                                beyond, inside, spline)

        from radsolve.output.report import render
        from radsolve.core.spectrum import solve

        result = solver_call(pot, solve, pot, count=count, mass=mass, tol=tol, method=method,
                              spin_orbit=spin_orbit, dimension=dimension, equation=equation,
                              **only_given(l=ls, units=units), **({"scalar": True} if scalar else {}))
        write_output(render(result, unit, fmt.value), out, f"{len(result.levels)} levels ({fmt.value})")
        noteworthy = (not result.success or not result.levels
                      or any(v is not None for v in result.bound_counts.values()))
        if result.message and noteworthy and (out is not None or fmt is not OutputFormat.table):
            say(result.message)  # the table has it already; JSON/CSV readers may not look

        unconverged = [f"{lev.label} ({lev.status})" if lev.status is not None else lev.label
                       for lev in result.levels if not lev.converged]
        if unconverged:
            say(f"warning: {len(unconverged)} level(s) did not converge to tol {tol:g}: "
                 + ", ".join(unconverged))
            raise typer.Exit(result.exit_code)
        if not result.success:
            # every level listed converged, but the list is not known to be complete
            say("warning: " + result.message)
            raise typer.Exit(result.exit_code)


def _levels_potential(name, params, plugins, units, expr, table_file, r_unit, v_unit,
                      beyond, inside, spline):
    """The potential of ``radsolve levels``: a family, a formula (--expr) or a table (--file)."""
    from radsolve.errors import InputError

    system = units
    table_rules = only_given(beyond=beyond, inside=inside, spline_degree=spline)
    kind = name.strip().lower()
    table_options = {"--r-unit": r_unit, "--v-unit": v_unit}
    if kind == "formula":
        if expr is None:
            raise InputError("NAME 'formula' needs --expr, e.g. --expr '-Z*exp(-r/D)/r' -p Z=1 -p D=10")
        if table_file is not None:
            raise InputError("--file belongs to NAME 'table', not 'formula'")
        from radsolve.potentials.formula import formula_potential

        return formula_potential(expr, **only_given(units=system), **params)
    if expr is not None:
        raise InputError(f"--expr is for NAME 'formula' (got NAME {name!r}); "
                         "e.g. radsolve levels formula --expr '-Z/r' -p Z=1")
    if kind == "table":
        if table_file is None:
            raise InputError("NAME 'table' needs --file FILE (lines of r, V)")
        if params:
            raise InputError(f"a table has no parameters; drop -p {', '.join(params)}")
        from radsolve.potentials.tabulated import tabulated_potential

        return tabulated_potential(table_file, r_unit=r_unit, v_unit=v_unit, **only_given(units=system),
                                   **table_rules)
    given = [opt for opt, value in table_options.items() if value is not None]
    given += ["--file"] if table_file is not None else []
    given += [{"beyond": "--beyond", "inside": "--inside", "spline_degree": "--spline"}[key]
              for key in table_rules]
    if given:
        raise InputError(f"{', '.join(given)}: only for NAME 'table' (got NAME {name!r})")
    from radsolve.potentials import potential

    return potential(name, plugins=plugin_dirs(plugins), **params)


def check_command(
    tol: Annotated[float, typer.Option(
        "--tol", metavar="T",
        help=f"relative tolerance asked of the solvers and judged: {JUDGED_TOL_RANGE[0]:g} < T < "
             f"{JUDGED_TOL_RANGE[1]:g} (one the solvers refuse, outside {TOL_RANGE[0]:g} ... "
             f"{TOL_RANGE[1]:g}, fails with their reason)")] = 1e-10,
    quick: Annotated[bool, typer.Option(
        "--quick", help="a reduced set (Z = 1 and 92, mass 1, n <= 4) for a fast smoke run")
    ] = False,
) -> None:
    """Solve -Z/r with every method and compare with the exact -mu Z^2/(2 n^2).

    A relativistic section does the same for the Dirac equation (Sommerfeld's
    formula; also with its first-order method) and the Klein-Gordon equation.

    The full set: Z = 1, 2, 10, 92; reduced mass 1, electron+proton and
    muon+proton; every n <= 10 and l < n. Each level is marked when its
    error exceeds --tol, when its error estimate understates the true error
    by more than 10 times (above the double-precision floor), or when it is
    missing or not converged. Ends with a one-line verdict; exit status 1 on
    any failure.
    """
    with reported_errors():
        from radsolve.analysis.convergence import check

        progress = say if sys.stderr.isatty() else None
        report = check(tol=tol, progress=progress, quick=quick)
        typer.echo(report.to_table(), nl=False)
        if not report.passed:
            raise typer.Exit(report.exit_code)


def potentials_command(
    name: Annotated[Optional[str], typer.Argument(
        metavar="NAME", help="show this family in full")] = None,
    plugins: PluginsOption = None,
) -> None:
    """List the potential families (built-in and plug-ins), or describe one."""
    with reported_errors():
        from radsolve import potentials as registry

        dirs = plugin_dirs(plugins)
        if name is None:
            from radsolve.output.report import families_list

            found = registry.discover(dirs)
            typer.echo(families_list(found), nl=False)
            for fam in registry.broken_families(found).values():
                say(f"warning: potential family {fam.name!r} is broken: {fam.cause}")
        else:
            text = registry.describe(name, plugins=dirs)
            typer.echo(text if text.endswith("\n") else text + "\n", nl=False)
