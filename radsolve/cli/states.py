"""Commands about states: ``wave`` and ``transitions``."""

from __future__ import annotations

from pathlib import Path
from typing import Annotated, Optional

import typer

from radsolve.cli.adapter import (OutputFormat, say, reported_errors, parse_assignments, plugin_dirs,
                                  with_option, write_output, solver_call, folder_exists)
from radsolve.cli.options import (FormatOption, OutFileOption, NameArgument, ParamOption, MassOption, PluginsOption, MethodOption,
                                  TolOption, AtomicOutputUnitOption, EquationOption, ScalarOption)


def wave_command(
    name: NameArgument,
    n: Annotated[int, typer.Option(
        "--n", "-n", metavar="N", help="principal number n = nodes + l + 1")],
    l: Annotated[int, typer.Option("--l", "-l", metavar="L", help="orbital angular momentum")],
    j: Annotated[Optional[str], typer.Option(
        "--j", metavar="J", help="--equation dirac: total angular momentum l +- 1/2, e.g. 3/2 "
        "(needed for l > 0)")] = None,
    param: ParamOption = None,
    mass: MassOption = None,
    tol: TolOption = 1e-10,
    method: MethodOption = "fd",
    equation: EquationOption = "schrodinger",
    scalar: ScalarOption = False,
    unit: AtomicOutputUnitOption = "hartree",
    at: Annotated[Optional[list[str]], typer.Option(
        "--at", metavar="R",
        help="radius to interpolate u and R to, repeatable; bohr unless a unit is attached "
             "(e.g. --at 0.5angstrom) [default: the solver grid]")] = None,
    moment: Annotated[Optional[list[float]], typer.Option(
        "--moment", metavar="K", help="also <r^K>, repeatable (e.g. --moment=-3 --moment 4)")] = None,
    inside: Annotated[Optional[list[str]], typer.Option(
        "--inside", metavar="R", help="also the probability P(r < R), repeatable; bohr or a length")
    ] = None,
    hellmann_feynman: Annotated[Optional[list[str]], typer.Option(
        "--hellmann-feynman", metavar="P",
        help="also check dE/dP = <dV/dP> for potential parameter P, repeatable (six more solves)")
    ] = None,
    fmt: Annotated[Optional[OutputFormat], typer.Option(
        "--format", "-f",
        help="stdout: table (a summary of the state) [default], or csv / json (the wavefunction)")
    ] = None,
    out: Annotated[Optional[Path], typer.Option(
        "--out", "-o", metavar="FILE",
        help="write the wavefunction to FILE.csv, FILE.json or FILE.npz (the summary stays on stdout)")
    ] = None,
    plot: Annotated[Optional[Path], typer.Option(
        "--plot", metavar="FILE", help="draw u(r) over V(r) and the level energy: FILE.png, .svg or .pdf")
    ] = None,
    plugins: PluginsOption = None,
) -> None:
    """The wavefunction of level (N, L) of potential NAME, and what it implies.

    The summary gives the energy, <r>, <r^2>, <1/r>, <1/r^2>, <V>, <T>, the
    energy residual E - <T> - <V>, the most probable radius, the classical
    turning points, the contact density |psi(0)|^2 and the virial ratio, each
    with an error estimate from the grid refinement. u(r) and R(r) = u(r)/r
    are normalized (integral of u^2 dr = 1) with u > 0 as r -> 0. Exit 3
    when the energy or a quantity shown did not converge.

    --equation dirac: level (N, L, J) with G and F (integral of G^2 + F^2
    dr = 1); --equation klein-gordon: u normalized with the charge density.
    The summary then gives E - mc^2, <1/r>, <r>, <r^2>, --moment and --inside.
    """
    with reported_errors({"l": "--l", "parameter": "--hellmann-feynman", "j": "--j", "n": "--n",
                          "moments": "--moment", "radius": "--inside", "r": "--at"}):
        from radsolve.errors import InputError

        params = parse_assignments(param)
        from radsolve.units import energy_unit_factor, parse_quantity

        energy_unit_factor(unit)  # before anything is solved
        # Lengths with units become bohr here; their rules (r >= 0, R > 0) are the API's.
        radii = [parse_quantity(v, "length", name="r", parameter="r") for v in at or []]
        limits = [parse_quantity(v, "length", name="radius", parameter="radius") for v in inside or []]
        if out is not None:
            from radsolve.core.wavefunctions import export_format

            folder_exists(out, "--out")
            file_format = with_option("--out", export_format, out)
            if fmt is not None and fmt is not OutputFormat.table and fmt.value != file_format:
                raise InputError(f"--format {fmt.value} and --out {str(out)!r} disagree; the file's "
                                 "extension sets its format (.csv, .json, .npz)")
        if plot is not None:
            from radsolve.output.plotting import check_plot_path

            with_option("--plot", check_plot_path, plot)

        from radsolve.analysis.observables import state as make_state
        from radsolve.core.relativistic import SCHRODINGER, validated_equation
        from radsolve.potentials import potential

        pot = potential(name, plugins=plugin_dirs(plugins), **params)
        if validated_equation(equation) != SCHRODINGER:
            # lengths go to the API as given: it reads them in the family's own units (bohr or fm)
            _relativistic_wave(pot, n, l, j, mass, tol, method, equation, scalar, at or [], moment, inside or [],
                               hellmann_feynman, fmt, out, plot, file_format if out is not None else None,
                               unit)
            return
        if j is not None or scalar:
            raise InputError(("--j" if j is not None else "--scalar") + " is for --equation dirac"
                             + (" or klein-gordon" if scalar else "") + " only")
        st = solver_call(pot, make_state, pot, n, l, mass=mass, tol=tol, method=method, equation=equation)

        summary = st.summary(moments=moment or [], inside=limits, hellmann_feynman=hellmann_feynman or [])
        props, extra = summary.properties, summary.extra
        wave = st.wavefunction(radii if radii else None)
        wave.properties = summary.to_dict()["properties"]

        from radsolve.output.report import state_table

        stdout_format = (fmt or OutputFormat.table).value
        if out is not None:
            wave.save(out)
            say(f"wrote the {st.label} wavefunction ({wave.r.size} radii, {file_format}) to {out}")
        if stdout_format == "table" or out is not None:
            typer.echo(state_table(st, props, unit, extra, wave if radii else None), nl=False)
        elif stdout_format == "csv":
            typer.echo(wave.to_csv(), nl=False)
        else:
            typer.echo(wave.to_json(), nl=False)
        if plot is not None:
            from radsolve.output.plotting import plot_wavefunction

            plot_wavefunction(st, plot, unit)
            say(f"wrote the plot to {plot}")

        if not summary.success:
            say("warning: " + summary.message)
            raise typer.Exit(summary.exit_code)


def _relativistic_wave(pot, n, l, j, mass, tol, method, equation, scalar, radii, moment, limits,
                       hellmann_feynman, fmt, out, plot, file_format, unit) -> None:
    """``wave --equation dirac|klein-gordon``: the judged summary, (G, F) or u, and its plot."""
    from radsolve.analysis.relativistic import relativistic_state
    from radsolve.errors import InputError

    if hellmann_feynman:
        raise InputError("--hellmann-feynman is for the Schrodinger equation only (not implemented for "
                         f"--equation {equation})")
    moments = (-1, 1, 2) + tuple(k for k in moment or [] if k not in (-1, 1, 2))
    st = solver_call(pot, relativistic_state, pot, n, l, j, equation=equation, mass=mass, tol=tol, method=method,
                     moments=moments, inside=limits, **({"scalar": True} if scalar else {}))
    wave = st.wavefunction(radii if radii else None)
    stdout_format = (fmt or OutputFormat.table).value
    if out is not None:
        wave.save(out)
        say(f"wrote the {st.label} wavefunction ({wave.r.size} radii, {file_format}) to {out}")
    if stdout_format == "table" or out is not None:
        from radsolve.output.report import render

        typer.echo(render(st, unit if st.units == "atomic" else None, "table"), nl=False)
        typer.echo("normalization: " + wave.metadata()["normalization"])
        if radii:
            typer.echo("\n" + wave.to_csv(), nl=False)
    elif stdout_format == "csv":
        typer.echo(wave.to_csv(), nl=False)
    else:
        typer.echo(wave.to_json(), nl=False)
    if plot is not None:
        from radsolve.output.plotting import plot_relativistic_wave

        plot_relativistic_wave(st, plot)
        say(f"wrote the plot to {plot}")
    if not st.success:
        say("warning: " + st.message)
        raise typer.Exit(st.exit_code)


def transitions_command(
    name: NameArgument,
    nmax: Annotated[int, typer.Option(
        "--nmax", metavar="N",
        help="every bound level with n <= N, for every l < N")],
    param: ParamOption = None,
    mass: MassOption = None,
    tol: TolOption = 1e-10,
    method: MethodOption = "fd",
    equation: EquationOption = "schrodinger",
    unit: AtomicOutputUnitOption = "hartree",
    fmt: FormatOption = OutputFormat.table,
    out: OutFileOption = None,
    plot: Annotated[Optional[Path], typer.Option(
        "--plot", metavar="FILE", help="draw the level diagram with its E1 lines: FILE.png, .svg or .pdf")
    ] = None,
    dipole_charge: Annotated[float, typer.Option(
        "--dipole-charge", metavar="Q",
        help="factor of the dipole operator -e r (1 for a neutral two-body system)")] = 1.0,
    occupied: Annotated[Optional[str], typer.Option(
        "--occupied", metavar="LABELS",
        help="levels filled by core electrons, comma-separated, left out: no line ends on "
             "them (e.g. 1s,2s,2p for the sodium core of alkali_model)")] = None,
    sum_rule: Annotated[Optional[str], typer.Option(
        "--sum-rule", metavar="LABELS",
        help="also the bound-free oscillator strength of these levels (comma-separated, or 'all') and "
             "the Thomas-Reiche-Kuhn sum check; seconds per level")] = None,
    plugins: PluginsOption = None,
) -> None:
    """Electric-dipole lines, lifetimes and branching ratios of the levels with n <= N.

    For each line: transition energy, vacuum wavelength, absorption
    oscillator strength and Einstein A (s^-1); for each level: lifetime
    1/sum(A) over all lower levels and branching ratios, or 'metastable' when
    no lower level is reachable by an E1 transition. Model calculation
    (nonrelativistic, spinless, E1 only; with --equation dirac: levels n l j,
    radial integrals of G G + F F in the long-wavelength length form). Exit 3
    when something did not converge or a lifetime may miss a lower level.
    """
    with reported_errors():

        params = parse_assignments(param)
        from radsolve.units import energy_unit_factor

        energy_unit_factor(unit)  # before anything is solved
        if out is not None:
            folder_exists(out, "--out")
        if plot is not None:
            from radsolve.output.plotting import check_plot_path

            with_option("--plot", check_plot_path, plot)

        from radsolve.potentials import potential
        from radsolve.analysis.radiative import transitions

        pot = potential(name, plugins=plugin_dirs(plugins), **params)
        tr = solver_call(pot, transitions, pot, nmax, mass=mass, tol=tol, method=method,
                          dipole_charge=dipole_charge, occupied=occupied or (), equation=equation,
                          continuum=sum_rule or False)
        from radsolve.output.report import render

        text = render(tr, unit, fmt.value)
        if fmt.value == "csv":
            say("note: " + tr.short_note)
        write_output(text, out, f"{len(tr.lines)} lines and {len(tr.states)} levels ({fmt.value})")
        if plot is not None:
            from radsolve.output.plotting import plot_level_diagram

            plot_level_diagram(tr, plot, unit)
            say(f"wrote the level diagram to {plot}")
        if not tr.success:
            if out is not None or fmt is not OutputFormat.table:
                say(tr.message)
            say("warning: not everything converged or is complete (see the message); "
                 "the numbers are what was achieved")
            raise typer.Exit(tr.exit_code)
