"""Commands over parameters: ``sweep``, ``threshold`` and ``fit``."""

from __future__ import annotations

import os
import sys
from pathlib import Path
from typing import Annotated, Optional

import typer

from radsolve.cli.adapter import (ReportFormat, say, fail, reported_errors, parse_assignments, plugin_dirs,
                                  l_values, only_given, check_png, write_output)
from radsolve.cli.options import (ReportFormatOption, OutFileOption, ParamOption, LOption, LmaxOption, CountOption, MassOption, PluginsOption,
                                  MethodOption, UnitsOption, TolOption, OutputUnitOption, SpinOrbitOption,
                                  DimensionOption, EquationOption, ProgressOption)
from radsolve.core.targets import THRESHOLD_TOL_RANGE


def sweep_command(
    name: Annotated[str, typer.Argument(
        metavar="NAME", help="potential family, e.g. yukawa (list: radsolve potentials)")],
    vary: Annotated[list[str], typer.Option(
        "--vary", "-v", metavar="KEY=START:STOP:NUM",
        help="parameter to sweep: NUM values from START to STOP (units allowed, e.g. "
             "screening_length=1angstrom:2nm:50), or KEY=V1,V2,...; repeat for a grid")],
    log: Annotated[bool, typer.Option(
        "--log", help="space START:STOP:NUM ranges geometrically")] = False,
    param: ParamOption = None,
    l: LOption = None,
    lmax: LmaxOption = None,
    count: CountOption = 5,
    mass: MassOption = None,
    tol: TolOption = 1e-10,
    method: MethodOption = "fd",
    unit: OutputUnitOption = None,
    units: UnitsOption = None,
    dimension: DimensionOption = 3,
    spin_orbit: SpinOrbitOption = False,
    equation: EquationOption = "schrodinger",
    out: Annotated[Optional[Path], typer.Option(
        "--out", "-o", metavar="FILE",
        help="write the rows to FILE.csv or FILE.json as they finish, or FILE.nc (NetCDF, at the end; "
             "needs radsolve[xarray]) [default: CSV on stdout]")
    ] = None,
    plot: Annotated[Optional[Path], typer.Option(
        "--plot", metavar="FILE.png", help="draw each level's energy against the swept parameter")
    ] = None,
    workers: Annotated[Optional[int], typer.Option(
        "--workers", "-w", metavar="N",
        help="local worker processes [default: every core]; 1 runs serially")] = None,
    cluster: Annotated[Optional[str], typer.Option(
        "--cluster", metavar="ADDRESS",
        help="run on Dask: tcp://host:port of a running scheduler, or 'local' for a local "
             "Dask cluster (needs radsolve[cluster])")] = None,
    progress: ProgressOption = None,
    plugins: PluginsOption = None,
) -> None:
    """The K lowest levels of NAME for each l at every point of a parameter grid.

    One row per (point, level): point index, the swept parameters (atomic
    units), l, n, nodes, label, energy, error_estimate, converged, bound,
    status and V(inf). A level that is not bound at a point keeps its row
    (bound false, energy empty, status unbound when the count of bound levels
    proves it, else missing or unknown). Rows are written as points finish;
    Ctrl-C stops and keeps the rows finished (exit 130). Exit 3 when some
    bound level did not converge to --tol or some level is not resolved.
    """
    with reported_errors():
        import time

        from radsolve.errors import InputError
        from radsolve.potentials import get_family
        from radsolve.analysis.sweeps import SweepInterrupted, parse_vary, sweep
        from radsolve.units import energy_unit_factor

        params = parse_assignments(param)
        ls = l_values(l, lmax)
        if unit is not None:
            energy_unit_factor(unit)  # before anything is solved
        family = get_family(name, plugins=plugin_dirs(plugins))
        axes: dict = {}
        for item in vary:
            key, values = parse_vary(item, family, log)
            if key in axes:
                raise InputError(f"--vary: parameter {key!r} is given twice")
            if key in params:
                # The API refuses this too (fixed and vary overlap); said here in the options' names.
                raise InputError(f"parameter {key!r} is given both with --vary and with -p; "
                                 "a swept parameter takes its values from --vary only")
            axes[key] = values
        if out is not None:
            from radsolve.analysis.sweeps.sinks import check_out_path

            check_out_path(out)
        if plot is not None:
            check_png(plot, "--plot")
        started = time.monotonic()
        try:
            result = sweep(family.name, vary=axes, fixed=params, count=count, mass=mass, tol=tol,
                           method=method, plugins=plugin_dirs(plugins), workers=workers,
                           cluster=cluster, out=out if out is not None else sys.stdout, unit=unit,
                           spin_orbit=spin_orbit, dimension=dimension, progress=progress,
                           equation=equation, **only_given(l=ls, units=units))
        except SweepInterrupted as stop:
            partial = stop.partial
            where = f"in {out}" if out is not None else "on stdout"
            raise fail(f"interrupted: {partial.points_done} of {partial.points_total} points "
                        f"finished; their rows are {where}", 130) from None
        except BrokenPipeError:
            # The rows were piped into e.g. `head`, which closed early: stop quietly,
            # with status 1 because the output was cut short (as main() does).
            devnull = os.open(os.devnull, os.O_WRONLY)
            os.dup2(devnull, sys.stdout.fileno())
            raise typer.Exit(1) from None
        elapsed = time.monotonic() - started
        if out is not None:
            say(f"wrote {len(result)} rows ({result.points_total} points x "
                 f"{len(result.channels) * result.count} levels) to {out} in {elapsed:.1f} s")
        if plot is not None:
            from radsolve.output.sweep_plotting import plot_sweep

            marks = {}
            if len(result.parameters) == 1 and result.complete:
                from radsolve.analysis.thresholds import sweep_crossings

                # The sweep brackets each level's threshold: refine it and mark it exactly.
                marks = sweep_crossings(result)
                key = result.parameters[0]
                for label, res in marks.items():
                    say(f"{label} reaches the continuum at {key} = {res.value:.10g} "
                         f"+- {res.error_estimate:.1g} {res.parameter_unit}".rstrip())
            plot_sweep(result, plot, unit=unit, thresholds=marks)
            say(f"plot written to {plot}")
        if not result.success:
            for note in result.notes:
                say(f"warning: {note.text}")
            raise typer.Exit(result.exit_code)


def threshold_command(
    name: Annotated[str, typer.Argument(
        metavar="NAME", help="potential family with a short-range tail, e.g. yukawa")],
    vary: Annotated[str, typer.Option(
        "--vary", "-v", metavar="KEY", help="the parameter whose critical value is wanted")],
    level: Annotated[Optional[list[str]], typer.Option(
        "--level", metavar="LABEL", help="level such as 1s or 2p; repeatable [default: 1s]")] = None,
    nmax: Annotated[Optional[int], typer.Option(
        "--nmax", metavar="N",
        help="every level with n <= N (all l < n; nuclear labels also need --lmax), "
             "instead of --level")] = None,
    lmax: Annotated[Optional[int], typer.Option(
        "--lmax", metavar="L", help="with --nmax: only l <= L")] = None,
    bracket: Annotated[Optional[str], typer.Option(
        "--bracket", metavar="A:B",
        help="values of KEY between which the level stops being bound (units allowed) "
             "[default: searched outward from -p KEY=VALUE or the default]")] = None,
    param: ParamOption = None,
    mass: MassOption = None,
    tol: Annotated[float, typer.Option(
        "--tol", metavar="T",
        help=f"target relative error of the critical value ({THRESHOLD_TOL_RANGE[0]:g} ... "
             f"{THRESHOLD_TOL_RANGE[1]:g})")] = 1e-9,
    units: UnitsOption = None,
    dimension: DimensionOption = 3,
    equation: EquationOption = "schrodinger",
    spin_orbit: Annotated[bool, typer.Option(
        "--spin-orbit", help="with --nmax: both j = l -+ 1/2 of each l > 0 (with --level, "
                             "give j in the label, e.g. 1p3/2)")] = False,
    fmt: ReportFormatOption = ReportFormat.table,
    out: OutFileOption = None,
    plugins: PluginsOption = None,
) -> None:
    """The value of parameter KEY at which a level of NAME reaches the continuum (E -> V(inf)).

    Found from the zero-energy solution (its node count is the number of
    bound levels), refined on finer grids and larger boxes; each value comes
    with an error estimate. Potentials with a Coulomb (or longer) tail have
    no threshold and are refused. Exit 3 when a value did not reach --tol.
    """
    with reported_errors():
        from radsolve.errors import InputError
        from radsolve.potentials import get_family
        from radsolve.analysis.thresholds import critical_values

        params = parse_assignments(param)
        family = get_family(name, plugins=plugin_dirs(plugins))
        pair = None
        if bracket is not None:
            parts = [p.strip() for p in bracket.split(":")]
            if len(parts) != 2 or not all(parts):
                raise InputError(f"--bracket {bracket!r}: expected A:B, two values of {vary}, "
                                 "e.g. --bracket 0.5:2")
            pair = tuple(parts)
        results = critical_values(family.name, vary, nmax=nmax, bracket=pair, fixed=params, mass=mass,
                                  tol=tol, plugins=plugin_dirs(plugins), levels=level or None,
                                  lmax=lmax, spin_orbit=spin_orbit, dimension=dimension,
                                  units=units, equation=equation)
        if fmt is ReportFormat.json:
            from radsolve.core.serialize import dumps_json

            # a JSON array with one document per level (the 0.1 schema), each with its status
            text = dumps_json([r.to_dict() for r in results])
        else:
            text = results.to_table()
        write_output(text, out, f"{len(results)} threshold(s)")
        if not results.success:
            say(f"warning: not converged to tol {tol:g}: "
                 + ", ".join(r.label for r in results if not r.converged))
            raise typer.Exit(results.exit_code)


def fit_command(
    name: Annotated[str, typer.Argument(metavar="NAME", help="potential family to fit")],
    targets: Annotated[Path, typer.Option(
        "--targets", "-t", metavar="FILE.csv",
        help="target levels: CSV with columns label, energy, uncertainty, unit")],
    free: Annotated[list[str], typer.Option(
        "--free", metavar="KEY[:LO:HI]",
        help="parameter to fit, with optional bounds (units allowed; LO or HI may be empty); "
             "its start value is -p KEY=VALUE or the default; repeatable")],
    param: Annotated[Optional[list[str]], typer.Option(
        "-p", "--param", metavar="KEY=VALUE",
        help="fixed parameters, and start values of free ones; repeatable")] = None,
    mass: MassOption = None,
    tol: TolOption = 1e-10,
    method: MethodOption = "fd",
    unit: OutputUnitOption = None,
    units: UnitsOption = None,
    dimension: DimensionOption = 3,
    equation: EquationOption = "schrodinger",
    fmt: ReportFormatOption = ReportFormat.table,
    out: Annotated[Optional[Path], typer.Option(
        "--out", "-o", metavar="FILE", help="write the report to FILE instead of stdout")] = None,
    plot: Annotated[Optional[Path], typer.Option(
        "--plot", metavar="FILE.png", help="draw computed against target levels, with residuals")
    ] = None,
    max_evaluations: Annotated[int, typer.Option(
        "--max-evaluations", metavar="N", help="most spectra the optimizer may solve")] = 400,
    plugins: PluginsOption = None,
) -> None:
    """Fit the --free parameters of NAME so that its levels match the --targets levels.

    Targets with j (1p3/2) fit spin-orbit split levels. Weighted least
    squares on (computed - target)/uncertainty. Reports the
    best values with standard errors from the Jacobian (uncertainties taken
    as absolute; also scaled by sqrt(chi2/dof)), the correlation matrix,
    chi2/dof, the residual of each level, and warns about levels bound below
    the highest target that are not targets (possible spurious states).
    Exit 3 when the fit did not succeed.
    """
    with reported_errors():
        from radsolve.analysis.fitting import fit, parse_free
        from radsolve.units import energy_unit_factor

        params = parse_assignments(param)
        if unit is not None:
            energy_unit_factor(unit)  # before anything is solved
        if plot is not None:
            check_png(plot, "--plot")
        names, bounds = [], {}
        for item in free:
            key, pair = parse_free(item)
            names.append(key)  # a name given twice is the API's to refuse
            if pair is not None:
                bounds[key] = pair
        result = fit(name, str(targets), free=names, bounds=bounds, fixed=params, mass=mass, tol=tol,
                     method=method, plugins=plugin_dirs(plugins),
                     max_evaluations=max_evaluations, dimension=dimension,
                     units=units, equation=equation)
        from radsolve.output.report import render

        text = render(result, unit, fmt.value)
        write_output(text, out, "the fit report")
        if plot is not None:
            from radsolve.output.sweep_plotting import plot_fit

            plot_fit(result, plot, unit=unit)
            say(f"plot written to {plot}")
        if result.warnings and (out is not None or fmt is ReportFormat.json):
            for warning in result.warnings:
                say(f"warning: {warning}")
        if not result.success:
            say("warning: the fit did not succeed (see the warnings)")
            raise typer.Exit(result.exit_code)
