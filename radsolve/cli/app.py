"""The ``radsolve`` command line: a thin layer over the Python API.

Every command here calls functions a script can call too
(:func:`radsolve.potentials.potential`, :func:`radsolve.solve.solve`,
:func:`radsolve.analysis.convergence.check`, :mod:`radsolve.output.report`).  Only typer and the
standard library are imported at module level so that ``radsolve --help``
answers at once; numpy, scipy and the solvers are imported inside the
commands.

Exit status: 0 success; 1 ``radsolve check`` found a failure; 2 bad input
or usage (one line ``radsolve: error: ...`` on stderr, no traceback);
3 ``radsolve levels`` finished but some level did not converge to ``--tol``
(the output is still written, those levels are marked); 4 an unexpected
internal error (set RADSOLVE_TRACEBACK=1 to see the traceback).
"""

from __future__ import annotations

import os
import sys
from contextlib import contextmanager
from enum import Enum
from pathlib import Path
from typing import Annotated, Iterator, Optional

import typer

from radsolve.core.solvers.registry import DESCRIPTIONS, EVERY_METHOD, METHODS

EXIT_OK = 0
EXIT_CHECK_FAILED = 1
EXIT_BAD_INPUT = 2
EXIT_NOT_CONVERGED = 3
EXIT_INTERNAL = 4

ENERGY_UNITS_HELP = "hartree, eV, meV, keV, MeV, rydberg, cm-1"

app = typer.Typer(
    name="radsolve",
    help=(
        "Bound states of the radial Schroedinger equation "
        "-1/(2 mu) u'' + [V(r) + l(l+1)/(2 mu r^2)] u = E u "
        "for central potentials, in atomic units (hartree, bohr, electron masses).\n\n"
        "Exit status: 0 ok; 1 'check' found a failure; 2 bad input or usage; "
        "3 'levels' finished but some level did not converge to --tol; "
        "4 internal error (RADSOLVE_TRACEBACK=1 shows the traceback)."
    ),
    add_completion=False,
    no_args_is_help=True,
    rich_markup_mode=None,
    pretty_exceptions_enable=False,
    context_settings={"help_option_names": ["-h", "--help"]},
)


#: --method choices: read from the solver registry (no solver module is imported for this).
Method = Enum("Method", {name: name for name in [*METHODS, EVERY_METHOD]}, type=str)


class UnitsChoice(str, Enum):
    atomic = "atomic"
    nuclear = "nuclear"


class OutputFormat(str, Enum):
    table = "table"
    json = "json"
    csv = "csv"


# ---------------------------------------------------------------- plumbing


def _say(text: str) -> None:
    """One line on stderr."""
    typer.echo(f"radsolve: {text}", err=True)


def _fail(message: str, status: int = EXIT_BAD_INPUT) -> typer.Exit:
    _say(f"error: {message}")
    return typer.Exit(status)


@contextmanager
def _reported_errors() -> Iterator[None]:
    """Turn radsolve's user-facing errors into one stderr line and exit status 2.

    Anything else is a bug (ours or a plug-in's that the registry did not
    wrap); it gets one line and status 4 unless RADSOLVE_TRACEBACK is set.
    """
    from radsolve.errors import RadsolveError

    try:
        yield
    except typer.Exit:
        raise
    except RadsolveError as exc:
        raise _fail(str(exc)) from None
    except KeyboardInterrupt:
        raise _fail("interrupted", 130) from None
    except Exception as exc:  # noqa: BLE001 - the last line of defence against tracebacks
        if os.environ.get("RADSOLVE_TRACEBACK"):
            raise
        raise _fail(f"internal error: {type(exc).__name__}: {exc} "
                    "(please report it; RADSOLVE_TRACEBACK=1 shows where)",
                    EXIT_INTERNAL) from None


def parse_assignments(items: list[str] | None, option: str = "-p") -> dict[str, str]:
    """``["KEY=VALUE", ...]`` -> ``{KEY: VALUE}``, values left as text.

    Raises
    ------
    InputError
        An item without ``=``, with an empty key or value, or a key given twice.
    """
    from radsolve.errors import InputError

    params: dict[str, str] = {}
    for item in items or []:
        key, sep, value = item.partition("=")
        key, value = key.strip(), value.strip()
        if not sep:
            raise InputError(f"{option} {item!r}: expected KEY=VALUE, e.g. {option} depth=2.5")
        if not key:
            raise InputError(f"{option} {item!r}: the parameter name before '=' is empty")
        if not value:
            raise InputError(f"{option} {item!r}: no value after '=' for parameter {key!r}")
        if key in params:
            raise InputError(f"{option}: parameter {key!r} is given twice")
        params[key] = value
    return params


def _plugin_dirs(plugins: list[Path] | None) -> list[str] | None:
    return [str(p) for p in plugins] if plugins else None


def _check_tol(tol: float) -> None:
    from radsolve.core.targets import validated_tol

    validated_tol(tol, "--tol")


def _check_judged_tol(tol: float) -> None:
    """The tolerance ``check`` judges levels against: any 0 < tol < 1."""
    from radsolve.errors import InputError

    if not 0.0 < tol < 1.0:  # NaN fails too
        raise InputError(f"--tol {tol}: must be a relative tolerance with 0 < tol < 1, e.g. 1e-10")


def _with_option(option: str, func, value):
    """``func(value)``, with the option's name put in front of any error message."""
    from radsolve.errors import InputError, RadsolveError

    try:
        return func(value)
    except RadsolveError as exc:
        message, plain = str(exc), option.lstrip("-")
        if message.startswith(plain + ":") or message.startswith(plain + " "):
            message = "--" + message  # "mass must be ..." -> "--mass must be ..."
        else:
            message = f"{option}: {message}"
        raise InputError(message) from None


def _l_values(l: list[int] | None, lmax: int | None) -> list[int]:
    from radsolve.errors import InputError

    if l and lmax is not None:
        raise InputError("--l and --lmax: give one or the other (--lmax L means l = 0 ... L)")
    if lmax is not None:
        return list(range(lmax + 1))
    if l:
        return sorted(set(l))
    return [0]


PLUGINS_HELP = ("folder of potential plug-ins (*.py); repeatable; folders in the "
                "RADSOLVE_PLUGINS environment variable are searched too")

# Options shared by several commands.
NameArgument = Annotated[str, typer.Argument(
    metavar="NAME", help="potential family, e.g. coulomb (list: radsolve potentials)")]
ParamOption = Annotated[Optional[list[str]], typer.Option(
    "-p", "--param", metavar="KEY=VALUE",
    help="potential parameter, repeatable; atomic units unless a unit is attached")]
AtomicMassOption = Annotated[str, typer.Option(
    "--mass", "-m", metavar="M", help="reduced mass: electron masses, or particles such as electron+proton")]
PluginsOption = Annotated[Optional[list[Path]], typer.Option("--plugins", metavar="DIR", help=PLUGINS_HELP)]
MethodOption = Annotated[Method, typer.Option(
    "--method", help=", ".join(f"{k} ({v})" for k, v in DESCRIPTIONS.items())
    + f" or {EVERY_METHOD} (every method; their disagreement is folded into the estimates)")]
UnitsOption = Annotated[Optional[UnitsChoice], typer.Option(
    "--units", help="unit system: atomic (hartree, bohr, electron masses) or nuclear "
                    "(MeV, fm, MeV/c^2) [default: the potential's own]")]
TolOption = Annotated[float, typer.Option(
    "--tol", metavar="T", help="target relative error of each energy (the solver accepts 1e-14 ... 0.1)")]
OutputUnitOption = Annotated[Optional[str], typer.Option(
    "--unit", "-u", metavar="U",
    help=f"energy unit of the output: {ENERGY_UNITS_HELP} [default: hartree, or MeV in nuclear units]")]
SpinOrbitOption = Annotated[bool, typer.Option(
    "--spin-orbit", help="split each l > 0 into j = l -+ 1/2 with the potential's spin-orbit term")]
DimensionOption = Annotated[int, typer.Option(
    "--dimension", "-d", metavar="D", min=2, max=10,
    help="space dimension D >= 2 (centrifugal term with l -> l + (D-3)/2)")]


# ---------------------------------------------------------------- commands


@app.command("levels")
def levels_command(
    name: NameArgument,
    param: Annotated[Optional[list[str]], typer.Option(
        "-p", "--param", metavar="KEY=VALUE",
        help="potential parameter, repeatable; atomic units unless a unit is attached, "
             "e.g. -p width=0.5angstrom")] = None,
    l: Annotated[Optional[list[int]], typer.Option(
        "--l", "-l", min=0, metavar="L",
        help="orbital angular momentum, repeatable [default: 0]")] = None,
    lmax: Annotated[Optional[int], typer.Option(
        "--lmax", min=0, metavar="L", help="every l from 0 to L (not with --l)")] = None,
    count: Annotated[int, typer.Option(
        "--count", "-k", min=1, metavar="K", help="the K lowest levels for each l")] = 5,
    mass: Annotated[Optional[str], typer.Option(
        "--mass", "-m", metavar="M",
        help="reduced mass: electron masses, or particles such as electron+proton; in nuclear "
             "units MeV/c^2, u (207u) or particles (neutron, neutron+207u) [default: 1 in "
             "atomic units; needed in nuclear units]")] = None,
    tol: TolOption = 1e-10,
    method: MethodOption = Method(next(iter(METHODS))),
    unit: OutputUnitOption = None,
    units: UnitsOption = None,
    spin_orbit: SpinOrbitOption = False,
    dimension: Annotated[int, typer.Option(
        "--dimension", "-d", metavar="D",
        help="space dimension D >= 2 (centrifugal term with l -> l + (D-3)/2)")] = 3,
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
    beyond: Annotated[str, typer.Option(
        "--beyond", metavar="RULE",
        help="V beyond the table's last r: constant, zero or coulomb:Z (-Z/r)")] = "constant",
    inside: Annotated[str, typer.Option(
        "--inside", metavar="RULE",
        help="V inside the table's first r: constant or coulomb:Z")] = "constant",
    spline: Annotated[int, typer.Option(
        "--spline", metavar="K", help="degree of the table's spline: 3 or 5")] = 3,
    fmt: Annotated[OutputFormat, typer.Option(
        "--format", "-f", help="table for reading, json or csv for programs")
    ] = OutputFormat.table,
    out: Annotated[Optional[Path], typer.Option(
        "--out", "-o", metavar="FILE", help="write the output to FILE instead of stdout")
    ] = None,
    plugins: PluginsOption = None,
) -> None:
    """The K lowest bound levels of potential NAME for each l.

    Energies come with an error estimate. If fewer than K levels are bound,
    those found are shown with a note (exit 0, also when none is bound). A
    level that did not reach --tol is marked NO in the 'conv' column, a
    warning goes to stderr and the exit status is 3.
    """
    with _reported_errors():
        from radsolve.errors import InputError, RadsolveError

        params = parse_assignments(param)
        ls = _l_values(l, lmax)
        _check_tol(tol)
        if dimension < 2:
            raise InputError(f"--dimension {dimension}: the radial problem needs a dimension D >= 2")
        from radsolve.units import energy_unit_factor, unit_system

        if unit is not None:
            _with_option("--unit", energy_unit_factor, unit)
        if out is not None and not (out.parent if str(out.parent) else Path(".")).is_dir():
            raise InputError(f"--out {str(out)!r}: folder {str(out.parent)!r} does not exist")

        pot = _levels_potential(name, params, plugins, units, expr, table_file, r_unit, v_unit,
                                beyond, inside, spline)
        if units is not None and units.value != pot.family.units:
            raise InputError(f"--units {units.value}: potential {pot.name!r} is written in "
                             f"{pot.family.units} units; allowed for it: {pot.family.units}")
        system = unit_system(pot.family.units)
        if mass is None and system.name != "atomic":
            raise InputError(f"--mass is needed in {system.name} units ({system.mass_unit}, u or "
                             "particles), e.g. --mass neutron")
        mu = _with_option("--mass", system.parse_mass, "1" if mass is None else mass)

        from radsolve.output.report import render
        from radsolve.core.spectrum import solve

        try:
            result = solve(pot, l=ls if len(ls) > 1 else ls[0], count=count, mass=mu,
                           tol=tol, method=method.value, spin_orbit=spin_orbit,
                           dimension=dimension, units=None if units is None else units.value)
        except RadsolveError as exc:
            message = str(exc)
            if isinstance(exc, InputError):
                # About an option: "tol must be ..." -> "--tol must be ..."
                first = message.split(" ", 1)[0].rstrip(":")
                if first in ("l", "count", "tol", "mass", "dimension"):
                    raise InputError("--" + message) from None
                if first == "spin_orbit":
                    raise InputError("--spin-orbit" + message[len("spin_orbit"):]) from None
                if "unit system" in message:
                    raise InputError(f"--units: {message}") from None
                raise
            if repr(pot.name) in message:
                raise
            # Say which potential the solver's complaint (e.g. fall to the centre) is about.
            raise type(exc)(f"potential {pot.name!r}: {exc}") from None
        _write_output(render(result, unit, fmt.value), out, f"{len(result.levels)} levels ({fmt.value})")
        noteworthy = (not result.success or not result.levels
                      or any(v is not None for v in result.bound_counts.values()))
        if result.message and noteworthy and (out is not None or fmt is not OutputFormat.table):
            _say(result.message)  # the table has it already; JSON/CSV readers may not look

        unconverged = [f"{lev.label} ({lev.status})" if lev.status is not None else lev.label
                       for lev in result.levels if not lev.converged]
        if unconverged:
            _say(f"warning: {len(unconverged)} level(s) did not converge to tol {tol:g}: "
                 + ", ".join(unconverged))
            raise typer.Exit(result.exit_code)
        if not result.success:
            # every level listed converged, but the list is not known to be complete
            _say("warning: " + result.message)
            raise typer.Exit(result.exit_code)


def _levels_potential(name, params, plugins, units, expr, table_file, r_unit, v_unit,
                      beyond, inside, spline):
    """The potential of ``radsolve levels``: a family, a formula (--expr) or a table (--file)."""
    from radsolve.errors import InputError

    system = None if units is None else units.value
    kind = name.strip().lower()
    table_options = {"--r-unit": r_unit, "--v-unit": v_unit}
    if kind == "formula":
        if expr is None:
            raise InputError("NAME 'formula' needs --expr, e.g. --expr '-Z*exp(-r/D)/r' -p Z=1 -p D=10")
        if table_file is not None:
            raise InputError("--file belongs to NAME 'table', not 'formula'")
        from radsolve.potentials.formula import formula_potential

        return formula_potential(expr, units=system or "atomic", **params)
    if expr is not None:
        raise InputError(f"--expr is for NAME 'formula' (got NAME {name!r}); "
                         "e.g. radsolve levels formula --expr '-Z/r' -p Z=1")
    if kind == "table":
        if table_file is None:
            raise InputError("NAME 'table' needs --file FILE (lines of r, V)")
        if params:
            raise InputError(f"a table has no parameters; drop -p {', '.join(params)}")
        from radsolve.potentials.tabulated import tabulated_potential

        return tabulated_potential(table_file, r_unit=r_unit, v_unit=v_unit, units=system or "atomic",
                                   beyond=beyond, inside=inside, spline_degree=spline)
    given = [opt for opt, value in table_options.items() if value is not None]
    given += ["--file"] if table_file is not None else []
    given += [f"--{opt}" for opt, value, default in (("beyond", beyond, "constant"),
                                                     ("inside", inside, "constant"),
                                                     ("spline", spline, 3)) if value != default]
    if given:
        raise InputError(f"{', '.join(given)}: only for NAME 'table' (got NAME {name!r})")
    from radsolve.potentials import potential

    return potential(name, plugins=_plugin_dirs(plugins), **params)


@app.command("check")
def check_command(
    tol: Annotated[float, typer.Option(
        "--tol", metavar="T",
        help="relative tolerance asked of the solvers and judged (1e-14 ... 0.1)")] = 1e-10,
    quick: Annotated[bool, typer.Option(
        "--quick", help="a reduced set (Z = 1 and 92, mass 1, n <= 4) for a fast smoke run")
    ] = False,
) -> None:
    """Solve -Z/r with every method and compare with the exact -mu Z^2/(2 n^2).

    The full set: Z = 1, 2, 10, 92; reduced mass 1, electron+proton and
    muon+proton; every n <= 10 and l < n. Each level is marked when its
    error exceeds --tol, when its error estimate understates the true error
    by more than 10 times (above the double-precision floor), or when it is
    missing or not converged. Ends with a one-line verdict; exit status 1 on
    any failure.
    """
    with _reported_errors():
        _check_judged_tol(tol)
        from radsolve.analysis.convergence import check

        kwargs = dict(charges=(1, 92), masses=(1.0,), nmax=4) if quick else {}
        progress = _say if sys.stderr.isatty() else None
        report = check(tol=tol, progress=progress, **kwargs)
        typer.echo(report.to_table(), nl=False)
        if not report.passed:
            raise typer.Exit(report.exit_code)


@app.command("potentials")
def potentials_command(
    name: Annotated[Optional[str], typer.Argument(
        metavar="NAME", help="show this family in full")] = None,
    plugins: PluginsOption = None,
) -> None:
    """List the potential families (built-in and plug-ins), or describe one."""
    with _reported_errors():
        from radsolve import potentials as registry

        dirs = _plugin_dirs(plugins)
        if name is None:
            from radsolve.output.report import families_list

            found = registry.discover(dirs)
            typer.echo(families_list(found), nl=False)
            for fam in registry.broken_families(found).values():
                _say(f"warning: potential family {fam.name!r} is broken: {fam.cause}")
        else:
            text = registry.describe(name, plugins=dirs)
            typer.echo(text if text.endswith("\n") else text + "\n", nl=False)


# ---------------------------------------------------------------- sweeps, thresholds, fits


class ReportFormat(str, Enum):
    table = "table"
    json = "json"


@app.command("sweep")
def sweep_command(
    name: Annotated[str, typer.Argument(
        metavar="NAME", help="potential family, e.g. yukawa (list: radsolve potentials)")],
    vary: Annotated[list[str], typer.Option(
        "--vary", "-v", metavar="KEY=START:STOP:NUM",
        help="parameter to sweep: NUM values from START to STOP (units allowed, e.g. "
             "screening_length=1angstrom:2nm:50), or KEY=V1,V2,...; repeat for a grid")],
    log: Annotated[bool, typer.Option(
        "--log", help="space START:STOP:NUM ranges geometrically")] = False,
    param: Annotated[Optional[list[str]], typer.Option(
        "-p", "--param", metavar="KEY=VALUE",
        help="fixed potential parameter, repeatable (atomic units unless a unit is attached)")] = None,
    l: Annotated[Optional[list[int]], typer.Option(
        "--l", "-l", min=0, metavar="L",
        help="orbital angular momentum, repeatable [default: 0]")] = None,
    lmax: Annotated[Optional[int], typer.Option(
        "--lmax", min=0, metavar="L", help="every l from 0 to L (not with --l)")] = None,
    count: Annotated[int, typer.Option(
        "--count", "-k", min=1, metavar="K",
        help="the K lowest levels for each l; each has a row at every point, bound or not")] = 5,
    mass: Annotated[Optional[str], typer.Option(
        "--mass", "-m", metavar="M",
        help="reduced mass: electron masses, or particles such as electron+proton; in nuclear "
             "units MeV/c^2, u or particles [default: 1 in atomic units; needed in nuclear units]")
    ] = None,
    tol: TolOption = 1e-10,
    method: MethodOption = Method(next(iter(METHODS))),
    unit: OutputUnitOption = None,
    units: UnitsOption = None,
    dimension: DimensionOption = 3,
    spin_orbit: SpinOrbitOption = False,
    out: Annotated[Optional[Path], typer.Option(
        "--out", "-o", metavar="FILE",
        help="write the rows to FILE.csv or FILE.json as they finish, or FILE.nc (NetCDF, at the end; "
             "needs radsolve[xarray]) [default: CSV on stdout]")
    ] = None,
    plot: Annotated[Optional[Path], typer.Option(
        "--plot", metavar="FILE.png", help="draw each level's energy against the swept parameter")
    ] = None,
    workers: Annotated[Optional[int], typer.Option(
        "--workers", "-w", min=1, metavar="N",
        help="local worker processes [default: every core]; 1 runs serially")] = None,
    cluster: Annotated[Optional[str], typer.Option(
        "--cluster", metavar="ADDRESS",
        help="run on Dask: tcp://host:port of a running scheduler, or 'local' for a local "
             "Dask cluster (needs radsolve[cluster])")] = None,
    progress: Annotated[Optional[bool], typer.Option(
        "--progress/--no-progress",
        help="progress bar on stderr [default: only when stderr is a terminal]")] = None,
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
    with _reported_errors():
        import time

        from radsolve.errors import InputError
        from radsolve.potentials import get_family
        from radsolve.analysis.sweeps import SweepInterrupted, parse_vary, sweep
        from radsolve.units import energy_unit_factor

        params = parse_assignments(param)
        ls = _l_values(l, lmax)
        _check_tol(tol)
        if unit is not None:
            _with_option("--unit", energy_unit_factor, unit)
        family = get_family(name, plugins=_plugin_dirs(plugins))
        mu = _family_mass(family, units, mass)
        axes: dict = {}
        for item in vary:
            key, values = parse_vary(item, family, log)
            if key in axes:
                raise InputError(f"--vary: parameter {key!r} is given twice")
            if key in params:
                raise InputError(f"parameter {key!r} is given both with --vary and with -p; "
                                 "a swept parameter takes its values from --vary only")
            axes[key] = values
        if out is not None:
            from radsolve.analysis.sweeps.sinks import check_out_path

            _with_option("--out", check_out_path, out)
        if plot is not None:
            _check_png(plot, "--plot")
        started = time.monotonic()
        try:
            result = sweep(family.name, vary=axes, fixed=params, l=ls if len(ls) > 1 else ls[0],
                           count=count, mass=mu, tol=tol, method=method.value,
                           plugins=_plugin_dirs(plugins), workers=workers, cluster=cluster,
                           out=out if out is not None else sys.stdout, unit=unit,
                           spin_orbit=spin_orbit, dimension=dimension, progress=progress,
                           units=None if units is None else units.value)
        except SweepInterrupted as stop:
            partial = stop.partial
            where = f"in {out}" if out is not None else "on stdout"
            raise _fail(f"interrupted: {partial.points_done} of {partial.points_total} points "
                        f"finished; their rows are {where}", 130) from None
        except BrokenPipeError:
            # The rows were piped into e.g. `head`, which closed early: stop quietly,
            # with status 1 because the output was cut short (as main() does).
            devnull = os.open(os.devnull, os.O_WRONLY)
            os.dup2(devnull, sys.stdout.fileno())
            raise typer.Exit(1) from None
        elapsed = time.monotonic() - started
        if out is not None:
            _say(f"wrote {len(result)} rows ({result.points_total} points x "
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
                    _say(f"{label} reaches the continuum at {key} = {res.value:.10g} "
                         f"+- {res.error_estimate:.1g} {res.parameter_unit}".rstrip())
            plot_sweep(result, plot, unit=unit, thresholds=marks)
            _say(f"plot written to {plot}")
        if not result.success:
            for note in result.notes:
                _say(f"warning: {note.text}")
            raise typer.Exit(result.exit_code)


def _family_mass(family, units, mass: Optional[str]) -> float:
    """--mass read in the unit system of ``family`` (which --units must match)."""
    from radsolve.errors import InputError
    from radsolve.units import unit_system

    if units is not None and units.value != family.units:
        raise InputError(f"--units {units.value}: potential {family.name!r} is written in "
                         f"{family.units} units; allowed for it: {family.units}")
    system = unit_system(family.units)
    if mass is None and system.name != "atomic":
        raise InputError(f"--mass is needed in {system.name} units ({system.mass_unit}, u or "
                         "particles), e.g. --mass neutron")
    return _with_option("--mass", system.parse_mass, "1" if mass is None else mass)


def _check_png(path: Path, option: str) -> None:
    from radsolve.errors import InputError

    if path.suffix.lower() != ".png":
        raise InputError(f"{option} {str(path)!r}: the file name must end in .png")
    if not (path.parent if str(path.parent) else Path(".")).is_dir():
        raise InputError(f"{option} {str(path)!r}: folder {str(path.parent)!r} does not exist")


def _write_output(text: str, out: Optional[Path], what: str) -> None:
    from radsolve.errors import InputError

    if out is None:
        typer.echo(text, nl=False)
        return
    if not (out.parent if str(out.parent) else Path(".")).is_dir():
        raise InputError(f"--out {str(out)!r}: folder {str(out.parent)!r} does not exist")
    try:
        out.write_text(text, encoding="utf-8")
    except OSError as exc:
        raise InputError(f"--out {str(out)!r}: cannot write: {exc.strerror}") from None
    _say(f"wrote {what} to {out}")


@app.command("threshold")
def threshold_command(
    name: Annotated[str, typer.Argument(
        metavar="NAME", help="potential family with a short-range tail, e.g. yukawa")],
    vary: Annotated[str, typer.Option(
        "--vary", "-v", metavar="KEY", help="the parameter whose critical value is wanted")],
    level: Annotated[Optional[list[str]], typer.Option(
        "--level", metavar="LABEL", help="level such as 1s or 2p; repeatable [default: 1s]")] = None,
    nmax: Annotated[Optional[int], typer.Option(
        "--nmax", min=1, max=30, metavar="N",
        help="every level with n <= N (all l < n; nuclear labels also need --lmax), "
             "instead of --level")] = None,
    lmax: Annotated[Optional[int], typer.Option(
        "--lmax", min=0, metavar="L", help="with --nmax: only l <= L")] = None,
    bracket: Annotated[Optional[str], typer.Option(
        "--bracket", metavar="A:B",
        help="values of KEY between which the level stops being bound (units allowed) "
             "[default: searched outward from -p KEY=VALUE or the default]")] = None,
    param: Annotated[Optional[list[str]], typer.Option(
        "-p", "--param", metavar="KEY=VALUE", help="other potential parameters, repeatable")] = None,
    mass: Annotated[Optional[str], typer.Option(
        "--mass", "-m", metavar="M",
        help="reduced mass: electron masses, or particles such as electron+proton; in nuclear "
             "units MeV/c^2, u or particles [default: 1 in atomic units; needed in nuclear units]")
    ] = None,
    tol: Annotated[float, typer.Option(
        "--tol", metavar="T", help="target relative error of the critical value")] = 1e-9,
    units: UnitsOption = None,
    dimension: DimensionOption = 3,
    spin_orbit: Annotated[bool, typer.Option(
        "--spin-orbit", help="with --nmax: both j = l -+ 1/2 of each l > 0 (with --level, "
                             "give j in the label, e.g. 1p3/2)")] = False,
    fmt: Annotated[ReportFormat, typer.Option(
        "--format", "-f", help="table for reading, json for programs")] = ReportFormat.table,
    out: Annotated[Optional[Path], typer.Option(
        "--out", "-o", metavar="FILE", help="write the output to FILE instead of stdout")] = None,
    plugins: PluginsOption = None,
) -> None:
    """The value of parameter KEY at which a level of NAME reaches the continuum (E -> V(inf)).

    Found from the zero-energy solution (its node count is the number of
    bound levels), refined on finer grids and larger boxes; each value comes
    with an error estimate. Potentials with a Coulomb (or longer) tail have
    no threshold and are refused. Exit 3 when a value did not reach --tol.
    """
    with _reported_errors():
        from radsolve.errors import InputError
        from radsolve.potentials import get_family
        from radsolve.analysis.thresholds import critical_values

        params = parse_assignments(param)
        if level and nmax is not None:
            raise InputError("--level and --nmax: give one or the other")
        if lmax is not None and nmax is None:
            raise InputError("--lmax goes with --nmax")
        family = get_family(name, plugins=_plugin_dirs(plugins))
        mu = _family_mass(family, units, mass)
        from radsolve.core.targets import THRESHOLD_TOL_RANGE, validated_tol

        validated_tol(tol, "--tol", THRESHOLD_TOL_RANGE)
        pair = None
        if bracket is not None:
            parts = [p.strip() for p in bracket.split(":")]
            if len(parts) != 2 or not all(parts):
                raise InputError(f"--bracket {bracket!r}: expected A:B, two values of {vary}, "
                                 "e.g. --bracket 0.5:2")
            pair = tuple(parts)
        results = critical_values(family.name, vary, nmax=nmax or 1, bracket=pair, fixed=params, mass=mu,
                             tol=tol, plugins=_plugin_dirs(plugins),
                             levels=None if nmax is not None else (level or ["1s"]),
                             lmax=lmax, spin_orbit=spin_orbit, dimension=dimension)
        if fmt is ReportFormat.json:
            from radsolve.core.serialize import dumps_json

            # a JSON array with one document per level (the 0.1 schema), each with its status
            text = dumps_json([r.to_dict() for r in results])
        else:
            text = results.to_table()
        _write_output(text, out, f"{len(results)} threshold(s)")
        if not results.success:
            _say(f"warning: not converged to tol {tol:g}: "
                 + ", ".join(r.label for r in results if not r.converged))
            raise typer.Exit(results.exit_code)


@app.command("fit")
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
    mass: Annotated[Optional[str], typer.Option(
        "--mass", "-m", metavar="M",
        help="reduced mass: electron masses, or particles such as electron+proton; in nuclear "
             "units MeV/c^2, u or particles [default: 1 in atomic units; needed in nuclear units]")
    ] = None,
    tol: Annotated[float, typer.Option(
        "--tol", metavar="T", help="relative accuracy of each computed energy")] = 1e-10,
    method: MethodOption = Method(next(iter(METHODS))),
    unit: Annotated[Optional[str], typer.Option(
        "--unit", "-u", metavar="U", help=f"energy unit of the report: {ENERGY_UNITS_HELP} "
                                          "[default: hartree, or MeV in nuclear units]")
    ] = None,
    units: UnitsOption = None,
    dimension: DimensionOption = 3,
    fmt: Annotated[ReportFormat, typer.Option(
        "--format", "-f", help="table for reading, json for programs")] = ReportFormat.table,
    out: Annotated[Optional[Path], typer.Option(
        "--out", "-o", metavar="FILE", help="write the report to FILE instead of stdout")] = None,
    plot: Annotated[Optional[Path], typer.Option(
        "--plot", metavar="FILE.png", help="draw computed against target levels, with residuals")
    ] = None,
    max_evaluations: Annotated[int, typer.Option(
        "--max-evaluations", min=1, metavar="N", help="most spectra the optimizer may solve")] = 400,
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
    with _reported_errors():
        from radsolve.errors import InputError
        from radsolve.analysis.fitting import fit, parse_free, read_targets
        from radsolve.potentials import get_family
        from radsolve.units import energy_unit_factor

        params = parse_assignments(param)
        _check_tol(tol)
        if unit is not None:
            _with_option("--unit", energy_unit_factor, unit)
        family = get_family(name, plugins=_plugin_dirs(plugins))
        mu = _family_mass(family, units, mass)
        if plot is not None:
            _check_png(plot, "--plot")
        names, bounds = [], {}
        for item in free:
            key, pair = parse_free(item)
            if key in names:
                raise InputError(f"--free: parameter {key!r} is given twice")
            names.append(key)
            if pair is not None:
                bounds[key] = pair
        target_list = read_targets(targets, family.units)
        result = fit(family.name, target_list, free=names, bounds=bounds, fixed=params, mass=mu, tol=tol,
                     method=method.value, plugins=_plugin_dirs(plugins),
                     max_evaluations=max_evaluations, dimension=dimension)
        from radsolve.output.report import render

        text = render(result, unit, fmt.value)
        _write_output(text, out, "the fit report")
        if plot is not None:
            from radsolve.output.sweep_plotting import plot_fit

            plot_fit(result, plot, unit=unit)
            _say(f"plot written to {plot}")
        if result.warnings and (out is not None or fmt is ReportFormat.json):
            for warning in result.warnings:
                _say(f"warning: {warning}")
        if not result.success:
            _say("warning: the fit did not succeed (see the warnings)")
            raise typer.Exit(result.exit_code)


# ---------------------------------------------------------------- states and transitions


def _solver_call(pot, func, *args, **kwargs):
    """Run a solving API call, prefixing option names and the potential to its errors."""
    from radsolve.errors import InputError, RadsolveError

    try:
        return func(*args, **kwargs)
    except RadsolveError as exc:
        message = str(exc)
        if isinstance(exc, InputError):
            first = message.split(" ", 1)[0].rstrip(":")
            if first in ("l", "n", "nmax", "count", "tol", "mass", "occupied"):
                raise InputError("--" + message) from None
            raise
        if repr(pot.name) in message:
            raise
        raise type(exc)(f"potential {pot.name!r}: {exc}") from None


def _folder_exists(path: Path, option: str) -> None:
    from radsolve.errors import InputError

    if not (path.parent if str(path.parent) else Path(".")).is_dir():
        raise InputError(f"{option} {str(path)!r}: folder {str(path.parent)!r} does not exist")


@app.command("wave")
def wave_command(
    name: NameArgument,
    n: Annotated[int, typer.Option(
        "--n", "-n", min=1, metavar="N", help="principal number n = nodes + l + 1")],
    l: Annotated[int, typer.Option("--l", "-l", min=0, metavar="L", help="orbital angular momentum")],
    param: ParamOption = None,
    mass: AtomicMassOption = "1",
    tol: Annotated[float, typer.Option(
        "--tol", metavar="T", help="target relative error of the energy (1e-14 ... 0.1)")] = 1e-10,
    method: MethodOption = Method(next(iter(METHODS))),
    unit: Annotated[str, typer.Option(
        "--unit", "-u", metavar="U", help=f"energy unit of the summary and plot: {ENERGY_UNITS_HELP}")
    ] = "hartree",
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
    """
    with _reported_errors():
        from radsolve.errors import InputError

        params = parse_assignments(param)
        _check_tol(tol)
        from radsolve.units import energy_unit_factor, parse_mass, parse_quantity

        _with_option("--unit", energy_unit_factor, unit)
        mu = _with_option("--mass", parse_mass, mass)
        radii = [parse_quantity(v, "length", name="--at") for v in at or []]
        if any(r < 0 for r in radii):
            raise InputError("--at: radii must be >= 0 bohr")
        limits = [parse_quantity(v, "length", name="--inside") for v in inside or []]
        if any(not r > 0 for r in limits):
            raise InputError("--inside: radii must be > 0 bohr")
        if out is not None:
            from radsolve.core.wavefunctions import export_format

            _folder_exists(out, "--out")
            file_format = _with_option("--out", export_format, out)
            if fmt is not None and fmt is not OutputFormat.table and fmt.value != file_format:
                raise InputError(f"--format {fmt.value} and --out {str(out)!r} disagree; the file's "
                                 "extension sets its format (.csv, .json, .npz)")
        if plot is not None:
            from radsolve.output.plotting import check_plot_path

            _with_option("--plot", check_plot_path, plot)

        from radsolve.analysis.observables import state as make_state
        from radsolve.potentials import potential

        pot = potential(name, plugins=_plugin_dirs(plugins), **params)
        st = _solver_call(pot, make_state, pot, n, l, mass=mu, tol=tol, method=method.value)
        from radsolve.analysis.observables import StateSummary

        extra = _with_option("--moment", lambda ks: st.extra_quantities(moments=ks), moment or [])
        extra += st.extra_quantities(inside=limits)
        extra += _with_option("--hellmann-feynman", lambda ps: st.extra_quantities(hellmann_feynman=ps),
                              hellmann_feynman or [])
        summary = StateSummary(st, st.properties(), extra)
        props = summary.properties
        wave = st.wavefunction(radii if radii else None)
        wave.properties = summary.to_dict()["properties"]

        from radsolve.output.report import state_table

        stdout_format = (fmt or OutputFormat.table).value
        if out is not None:
            wave.save(out)
            _say(f"wrote the {st.label} wavefunction ({wave.r.size} radii, {file_format}) to {out}")
        if stdout_format == "table" or out is not None:
            typer.echo(state_table(st, props, unit, extra, wave if radii else None), nl=False)
        elif stdout_format == "csv":
            typer.echo(wave.to_csv(), nl=False)
        else:
            typer.echo(wave.to_json(), nl=False)
        if plot is not None:
            from radsolve.output.plotting import plot_wavefunction

            plot_wavefunction(st, plot, unit)
            _say(f"wrote the plot to {plot}")

        if not summary.success:
            _say("warning: " + summary.message)
            raise typer.Exit(summary.exit_code)


@app.command("transitions")
def transitions_command(
    name: NameArgument,
    nmax: Annotated[int, typer.Option(
        "--nmax", min=1, metavar="N", help="every bound level with n <= N, for every l < N")],
    param: ParamOption = None,
    mass: AtomicMassOption = "1",
    tol: Annotated[float, typer.Option(
        "--tol", metavar="T", help="target relative error of each energy (1e-14 ... 0.1)")] = 1e-10,
    method: MethodOption = Method(next(iter(METHODS))),
    unit: Annotated[str, typer.Option(
        "--unit", "-u", metavar="U", help=f"energy unit of the output: {ENERGY_UNITS_HELP}")
    ] = "hartree",
    fmt: Annotated[OutputFormat, typer.Option(
        "--format", "-f", help="table for reading, json or csv for programs")
    ] = OutputFormat.table,
    out: Annotated[Optional[Path], typer.Option(
        "--out", "-o", metavar="FILE", help="write the output to FILE instead of stdout")
    ] = None,
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
    plugins: PluginsOption = None,
) -> None:
    """Electric-dipole lines, lifetimes and branching ratios of the levels with n <= N.

    For each line: transition energy, vacuum wavelength, absorption
    oscillator strength and Einstein A (s^-1); for each level: lifetime
    1/sum(A) over all lower levels and branching ratios, or 'metastable' when
    no lower level is reachable by an E1 transition. Model calculation
    (nonrelativistic, spinless, E1 only). Exit 3 when something did not
    converge or a lifetime may miss a lower level.
    """
    with _reported_errors():
        from radsolve.errors import InputError

        params = parse_assignments(param)
        _check_tol(tol)
        from radsolve.units import energy_unit_factor, parse_mass

        _with_option("--unit", energy_unit_factor, unit)
        mu = _with_option("--mass", parse_mass, mass)
        if not (dipole_charge > 0 and dipole_charge < float("inf")):
            raise InputError(f"--dipole-charge {dipole_charge}: must be a positive number")
        if out is not None:
            _folder_exists(out, "--out")
        if plot is not None:
            from radsolve.output.plotting import check_plot_path

            _with_option("--plot", check_plot_path, plot)

        from radsolve.potentials import potential
        from radsolve.analysis.radiative import transitions

        pot = potential(name, plugins=_plugin_dirs(plugins), **params)
        tr = _solver_call(pot, transitions, pot, nmax, mass=mu, tol=tol, method=method.value,
                          dipole_charge=dipole_charge, occupied=occupied or ())
        from radsolve.output.report import render

        text = render(tr, unit, fmt.value)
        if fmt.value == "csv":
            _say("note: " + tr.short_note)
        _write_output(text, out, f"{len(tr.lines)} lines and {len(tr.states)} levels ({fmt.value})")
        if plot is not None:
            from radsolve.output.plotting import plot_level_diagram

            plot_level_diagram(tr, plot, unit)
            _say(f"wrote the level diagram to {plot}")
        if not tr.success:
            if out is not None or fmt is not OutputFormat.table:
                _say(tr.message)
            _say("warning: not everything converged or is complete (see the message); "
                 "the numbers are what was achieved")
            raise typer.Exit(tr.exit_code)


def _version_callback(value: bool) -> None:
    if value:
        from importlib.metadata import PackageNotFoundError, version

        try:
            typer.echo(f"radsolve {version('radsolve')}")
        except PackageNotFoundError:
            typer.echo("radsolve (version unknown: not installed)")
        raise typer.Exit()


@app.callback()
def _root(
    version: Annotated[bool, typer.Option(
        "--version", callback=_version_callback, is_eager=True,
        help="print the version and exit")] = False,
) -> None:
    pass


def main(argv: list[str] | None = None) -> None:
    """Entry point of the ``radsolve`` console script and ``python -m radsolve``."""
    try:
        app(args=argv, prog_name="radsolve")
    except BrokenPipeError:
        # Output piped into e.g. `head` that closed early: stop quietly, but not with
        # status 0, since the output was cut short.
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
        sys.exit(1)
