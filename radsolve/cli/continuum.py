"""Commands above the threshold: ``phases`` (phase shifts on an energy grid), ``scattering``, ``photoionization``,
``logderiv`` (logarithmic derivatives of a model beside a reference), ``resonances``."""

from __future__ import annotations

from pathlib import Path
from typing import Annotated, Optional

import typer

from radsolve.cli.adapter import (OutputFormat, plugin_dirs, parse_assignments, reported_errors, say,
                                  solver_call, with_option, write_output, folder_exists, l_values)
from radsolve.cli.options import (FormatOption, LOption, LmaxOption, MassOption, OutFileOption, OutputUnitOption,
                                  ParamOption, PluginsOption, ProgressOption, SpinOrbitOption, UnitsOption)

PHASE_TOL_HELP = "target absolute error of each phase shift, radians (1e-12 ... 0.1)"

ExprOption = Annotated[Optional[str], typer.Option(
    "--expr", metavar="EXPR",
    help="with NAME 'formula': V(r) as an expression in r and parameters, e.g. '-V0*step(R-r)' -p V0=1 -p R=2")]

HardCoreOption = Annotated[Optional[float], typer.Option(
    "--hard-core", metavar="R",
    help="a hard sphere: the wave vanishes for r < R (length unit of the potential: bohr or fm)")]


#: --workers and --progress of the commands over energy grids (rows do not depend on the worker count).
WorkersOption = Annotated[Optional[int], typer.Option(
    "--workers", "-w", metavar="N",
    help="worker processes over pieces of the energy grid [default: 1, this process]; the rows do not "
         "depend on N")]


def _potential(name, params, plugins, units, expr):
    """A family, or a formula (NAME 'formula' with --expr), as ``radsolve levels`` makes them."""
    from radsolve.cli.levels import _levels_potential

    return _levels_potential(name, params, plugin_dirs(plugins), units, expr, None, None, None, None, None, None)


def _energies(text: str, log: bool, unit: Optional[str], pot, units: Optional[str], option: str = "--energies"):
    """--energies START:STOP:NUM or E1,E2,... in the output unit, as the API's energies (its unit system)."""
    from radsolve.analysis.scattering import energy_grid
    from radsolve.errors import InputError
    from radsolve.units import family_unit_system, stored_energy_factor

    system = family_unit_system(pot.family, units)
    factor = stored_energy_factor(system.name, unit)
    parts = text.split(":")
    try:
        if len(parts) == 3:
            start, stop, num = float(parts[0]), float(parts[1]), int(parts[2])
        elif len(parts) == 1:
            values = [float(x) for x in text.split(",") if x.strip()]
        else:
            raise ValueError
    except ValueError:
        raise InputError(f"{option} {text!r}: expected START:STOP:NUM (e.g. 0.01:2:200) or E1,E2,... "
                         "(numbers in --unit)") from None
    if len(parts) == 3:
        values = energy_grid(start, stop, num, log=log,  # the API's rules of a range
                             parameter="energies" if option == "--energies" else "photon_energies")
    return [v * factor for v in values]



def _check_outputs(unit, out, plot=None) -> None:
    """Refuse a bad --unit, --out folder or --plot path before anything is solved."""
    from radsolve.units import energy_unit_factor

    if unit is not None:
        energy_unit_factor(unit)
    if out is not None:
        folder_exists(out, "--out")
    if plot is not None:
        from radsolve.output.plotting import check_plot_path

        with_option("--plot", check_plot_path, plot)


def _exit_with(result, out, fmt) -> None:
    """Exit with the result's status when it is not a success (its message on stderr when
    the table on stdout did not already carry it)."""
    if not result.success:
        if out is not None or fmt is not OutputFormat.table:
            say(result.message)
        raise typer.Exit(result.exit_code)


def phases_command(
    name: Annotated[str, typer.Argument(metavar="NAME", help="potential family, e.g. yukawa (list: radsolve potentials)")],
    energies: Annotated[str, typer.Option(
        "--energies", "-e", metavar="START:STOP:NUM",
        help="energies above the threshold V(inf), in --unit: NUM values from START to STOP, or E1,E2,...")],
    log: Annotated[bool, typer.Option("--log", help="space START:STOP:NUM geometrically")] = False,
    param: ParamOption = None,
    l: LOption = None,
    lmax: LmaxOption = None,
    mass: MassOption = None,
    tol: Annotated[float, typer.Option("--tol", metavar="T", help=PHASE_TOL_HELP)] = 1e-8,
    hard_core: HardCoreOption = None,
    spin_orbit: SpinOrbitOption = False,
    expr: ExprOption = None,
    unit: OutputUnitOption = None,
    units: UnitsOption = None,
    fmt: FormatOption = OutputFormat.table,
    out: OutFileOption = None,
    plot: Annotated[Optional[Path], typer.Option(
        "--plot", metavar="FILE", help="draw delta_l(E)/pi: FILE.png, .svg or .pdf")] = None,
    workers: WorkersOption = None,
    progress: ProgressOption = None,
    plugins: PluginsOption = None,
) -> None:
    """Phase shifts delta_l(E) of NAME at energies above the threshold.

    Each phase shift is continuous in E (no jumps of pi), tends to 0 at high
    energy for potentials regular at the origin, and carries an error
    estimate (halving grids, two matching radii). For a Coulomb tail the
    phase is relative to Coulomb waves and the Coulomb phase sigma_l is
    printed beside it. Exit 3 when some phase shift did not reach --tol.
    """
    with reported_errors({"energies": "--energies", "hard_core": "--hard-core"}):
        params = parse_assignments(param)
        _check_outputs(unit, out, plot)
        from radsolve.analysis.scattering import phase_shifts
        pot = _potential(name, params, plugins, units, expr)
        values = _energies(energies, log, unit, pot, units)
        ls = l_values(l, lmax)
        result = solver_call(pot, phase_shifts, pot, values, **({"l": ls} if ls is not None else {}), mass=mass,
                             tol=tol, hard_core=hard_core, units=units, spin_orbit=spin_orbit, workers=workers,
                             progress=progress)
        from radsolve.output.report import render

        write_output(render(result, unit, fmt.value), out, f"{result.phase.size} phase shifts ({fmt.value})")
        if plot is not None:
            from radsolve.output.continuum_plotting import plot_phase_shifts

            plot_phase_shifts(result, plot, unit)
            say(f"wrote the phase shifts to {plot}")
        _exit_with(result, out, fmt)


def scattering_command(
    name: Annotated[str, typer.Argument(metavar="NAME", help="potential family, e.g. yukawa (list: radsolve potentials)")],
    param: ParamOption = None,
    l: LOption = None,
    lmax: LmaxOption = None,
    mass: MassOption = None,
    tol: Annotated[float, typer.Option("--tol", metavar="T",
                                       help="target relative error of a_l and r_l (1e-12 ... 0.1)")] = 1e-8,
    hard_core: HardCoreOption = None,
    vary: Annotated[Optional[str], typer.Option(
        "--vary", "-v", metavar="KEY=START:STOP:NUM",
        help="repeat at every value of one parameter (units allowed, or KEY=V1,V2,...): a_l passes through "
             "infinity where a level crosses the threshold")] = None,
    log: Annotated[bool, typer.Option("--log", help="space --vary's START:STOP:NUM geometrically")] = False,
    expr: ExprOption = None,
    unit: OutputUnitOption = None,
    units: UnitsOption = None,
    fmt: FormatOption = OutputFormat.table,
    out: OutFileOption = None,
    plugins: PluginsOption = None,
) -> None:
    """Scattering length a_l, effective range r_l and Levinson's theorem for each l of NAME.

    k^(2l+1) cot(delta_l) = -1/a_l + r_l k^2/2. Levinson's theorem
    (delta_l(0) - delta_l(inf) = pi times the number of bound levels of l,
    counted independently) is checked for every l: exit 1 when it fails, 3
    when something did not converge or the check is undecided.
    """
    with reported_errors({"hard_core": "--hard-core"}):
        params = parse_assignments(param)
        _check_outputs(unit, out)
        from radsolve.analysis.scattering import scattering
        pot = _potential(name, params, plugins, units, expr)
        ls = l_values(l, lmax)
        if vary is None:
            result = solver_call(pot, scattering, pot, **({"l": ls} if ls is not None else {}), mass=mass, tol=tol,
                                 hard_core=hard_core, units=units)
            waves = result.waves
            what = f"{len(waves)} partial waves"
        else:
            from radsolve.analysis.scattering import scattering_sweep
            from radsolve.analysis.sweeps import parse_vary

            key, values = parse_vary(vary, pot.family, log)
            result = solver_call(pot, scattering_sweep, pot, key, values, **({"l": ls} if ls is not None else {}),
                                 mass=mass, tol=tol, hard_core=hard_core, units=units)
            waves = [w for p in result.points for w in p.waves]
            what = f"{len(result.points)} points"
        from radsolve.output.report import render

        write_output(render(result, unit, fmt.value), out, f"{what} ({fmt.value})")
        if not result.success and any(w.levinson == "disagrees" for w in waves):
            say("LEVINSON'S THEOREM FAILS for some l: the phase shifts or the bound count are wrong "
                "(see the message)")
        _exit_with(result, out, fmt)


def photoionization_command(
    name: Annotated[str, typer.Argument(metavar="NAME", help="potential family, e.g. yukawa (list: radsolve potentials)")],
    photons: Annotated[str, typer.Option(
        "--photons", metavar="START:STOP:NUM",
        help="photon energies in --unit, above the level's ionization energy: NUM values from START to STOP, "
             "or E1,E2,...")],
    level: Annotated[str, typer.Option("--level", metavar="LABEL", help="the bound level ionized, e.g. 1s, 2p")] = "1s",
    log: Annotated[bool, typer.Option("--log", help="space START:STOP:NUM geometrically")] = False,
    param: ParamOption = None,
    mass: MassOption = None,
    tol: Annotated[float, typer.Option("--tol", metavar="T",
                                       help="target relative error of the radial integrals (1e-12 ... 0.1)")] = 1e-8,
    expr: ExprOption = None,
    unit: OutputUnitOption = None,
    fmt: FormatOption = OutputFormat.table,
    out: OutFileOption = None,
    plot: Annotated[Optional[Path], typer.Option(
        "--plot", metavar="FILE", help="draw sigma against the photon energy: FILE.png, .svg or .pdf")] = None,
    workers: WorkersOption = None,
    progress: ProgressOption = None,
    plugins: PluginsOption = None,
) -> None:
    """Photoionization cross sections of one bound level of NAME (atomic units).

    Length form, per final l and total, in cm^2 and Mb, with the velocity form
    beside it as a check, and the value at the threshold. Model calculation
    (one electron, E1, nonrelativistic): not a substitute for evaluated data.
    Exit 3 when something did not converge.
    """
    with reported_errors({"photon_energies": "--photons", "level": "--level"}):
        params = parse_assignments(param)
        _check_outputs(unit, out, plot)
        from radsolve.analysis.scattering import photoionization

        pot = _potential(name, params, plugins, None, expr)
        values = _energies(photons, log, unit, pot, None, option="--photons")
        result = solver_call(pot, photoionization, pot, level, values, mass=mass, tol=tol, workers=workers,
                             progress=progress)
        from radsolve.output.report import render

        write_output(render(result, unit, fmt.value), out,
                     f"{result.photon_energies.size} cross sections ({fmt.value})")
        if plot is not None:
            from radsolve.output.continuum_plotting import plot_photoionization

            plot_photoionization(result, plot, unit)
            say(f"wrote the cross sections to {plot}")
        _exit_with(result, out, fmt)


def logderiv_command(
    name: Annotated[str, typer.Argument(metavar="NAME", help="the model potential family (list: radsolve potentials)")],
    energies: Annotated[str, typer.Option(
        "--energies", "-e", metavar="START:STOP:NUM",
        help="energies in --unit (below and above the threshold alike), increasing: NUM values from START to "
             "STOP, or E1,E2,...")],
    radius: Annotated[float, typer.Option("--radius", metavar="R",
                                          help="r_c where u'/u is taken (bohr or fm)")],
    reference: Annotated[Optional[str], typer.Option(
        "--reference", metavar="NAME", help="the reference potential family to compare with")] = None,
    ref_param: Annotated[Optional[list[str]], typer.Option(
        "--ref-param", "-q", metavar="KEY=VALUE", help="a parameter of the reference, repeatable")] = None,
    ref_expr: Annotated[Optional[str], typer.Option(
        "--ref-expr", metavar="EXPR", help="with --reference formula: the reference's expression")] = None,
    log: Annotated[bool, typer.Option("--log", help="space START:STOP:NUM geometrically")] = False,
    param: ParamOption = None,
    l: LOption = None,
    lmax: LmaxOption = None,
    mass: MassOption = None,
    tol: Annotated[float, typer.Option("--tol", metavar="T",
                                       help="target relative error of each u'/u (1e-12 ... 0.1)")] = 1e-8,
    expr: ExprOption = None,
    unit: OutputUnitOption = None,
    units: UnitsOption = None,
    fmt: FormatOption = OutputFormat.table,
    out: OutFileOption = None,
    plot: Annotated[Optional[Path], typer.Option(
        "--plot", metavar="FILE", help="draw arctan(r_c u'/u) of model and reference: FILE.png, .svg or .pdf")
    ] = None,
    workers: WorkersOption = None,
    progress: ProgressOption = None,
    plugins: PluginsOption = None,
) -> None:
    """Logarithmic derivatives u'/u at r_c of NAME, beside a --reference.

    For testing a model potential (a pseudopotential) against a reference:
    the table shows both and their difference; a pole of the model's u'/u
    that the reference lacks is a ghost state (found from the zeros of u
    inside r_c, whatever the spacing of the energies) and fails the command
    (exit 1).
    """
    with reported_errors({"energies": "--energies", "radius": "--radius", "reference": "--reference"}):
        params = parse_assignments(param)
        ref_params = parse_assignments(ref_param, "--ref-param")
        _check_outputs(unit, out, plot)
        from radsolve.analysis.scattering import log_derivatives

        pot = _potential(name, params, plugins, units, expr)
        ref = None
        if reference is not None:
            ref = _potential(reference, ref_params, plugins, units, ref_expr)
        elif ref_params or ref_expr:
            from radsolve.errors import InputError

            raise InputError("--ref-param and --ref-expr need --reference NAME")
        values = _energies(energies, log, unit, pot, units)
        ls = l_values(l, lmax)
        result = solver_call(pot, log_derivatives, pot, values, **({"l": ls} if ls is not None else {}),
                             radius=radius, reference=ref, mass=mass, tol=tol, units=units, workers=workers,
                             progress=progress)
        from radsolve.output.report import render

        write_output(render(result, unit, fmt.value), out, f"{result.model.size} logarithmic derivatives ({fmt.value})")
        if plot is not None:
            from radsolve.output.continuum_plotting import plot_log_derivatives

            plot_log_derivatives(result, plot, unit)
            say(f"wrote the logarithmic derivatives to {plot}")
        if result.ghosts:
            say("warning: " + "; ".join(n.text for n in result.notes if n.code in ("ghost_state", "missing_state")))
        _exit_with(result, out, fmt)


def resonances_command(
    name: Annotated[str, typer.Argument(metavar="NAME", help="potential family, e.g. woods_saxon (list: radsolve potentials)")],
    window: Annotated[str, typer.Option(
        "--window", metavar="E1:E2", help="look for resonances with positions from E1 to E2 (in --unit), above V(inf)")],
    points: Annotated[int, typer.Option("--points", metavar="N", help="energies of the scan for candidates")] = 400,
    param: ParamOption = None,
    l: LOption = None,
    lmax: LmaxOption = None,
    mass: MassOption = None,
    tol: Annotated[float, typer.Option("--tol", metavar="T",
                                       help="target relative error of each pole (1e-12 ... 0.1)")] = 1e-8,
    expr: ExprOption = None,
    unit: OutputUnitOption = None,
    units: UnitsOption = None,
    fmt: FormatOption = OutputFormat.table,
    out: OutFileOption = None,
    plugins: PluginsOption = None,
) -> None:
    """Resonances (quasi-bound levels) of NAME: position and width, found two ways.

    From a Breit-Wigner fit to the phase shift where it rises fastest, and
    from the pole of the outgoing-wave condition at complex energy; the two
    must agree within their estimates (exit 3 when they do not).
    """
    with reported_errors({"window": "--window", "scan_points": "--points"}):
        params = parse_assignments(param)
        from radsolve.errors import InputError
        _check_outputs(unit, out)
        parts = window.split(":")
        try:
            lo, hi = (float(x) for x in parts)
        except ValueError:
            raise InputError(f"--window {window!r}: expected E1:E2 (numbers in --unit)") from None
        from radsolve.analysis.scattering import resonances

        pot = _potential(name, params, plugins, units, expr)
        lo_e, hi_e = _energies(f"{lo!r},{hi!r}", False, unit, pot, units, option="--window")
        ls = l_values(l, lmax)
        result = solver_call(pot, resonances, pot, **({"l": ls} if ls is not None else {}), window=(lo_e, hi_e),
                             mass=mass, tol=tol, scan_points=points, units=units)
        from radsolve.output.report import render

        write_output(render(result, unit, fmt.value), out, f"{len(result.resonances)} resonances ({fmt.value})")
        _exit_with(result, out, fmt)
