"""The ``radsolve`` command line: a thin layer over the Python API.

Every command calls functions a script can call too (:func:`radsolve.potential`,
:func:`radsolve.solve`, :func:`radsolve.check`, :mod:`radsolve.output.report`),
and holds no rule of its own: ranges and defaults are the API's, and the API's
errors name the option through ``adapter.OPTION_OF``.  The package:

- ``app.py``: the typer application, the registration of every command, ``main``;
- ``adapter.py``: exit codes, the error handler, output writing;
- ``options.py``: the shared options (one definition per concept);
- ``levels.py`` (``levels``, ``check``, ``potentials``), ``scans.py``
  (``sweep``, ``threshold``, ``fit``), ``states.py`` (``wave``, ``transitions``),
  ``continuum.py`` (``phases``, ``scattering``, ``photoionization``, ``logderiv``, ``resonances``).

Only typer, the standard library and radsolve's light modules (the ranges
shown in the help) are imported at module level so that ``radsolve --help``
answers at once; numpy, scipy and the solvers are imported inside the commands.

Exit status: 0 success; 1 ``radsolve check`` found a failure; 2 bad input
or usage (one line ``radsolve: error: ...`` on stderr, no traceback);
3 the command finished but something did not converge or is incomplete
(the output is still written and says what); 4 an unexpected internal error
(set RADSOLVE_TRACEBACK=1 to see the traceback).
"""

from __future__ import annotations

import os
import sys
from typing import Annotated

import typer

from radsolve.cli.levels import check_command, levels_command, potentials_command
from radsolve.cli.scans import fit_command, sweep_command, threshold_command
from radsolve.cli.states import transitions_command, wave_command
from radsolve.cli.continuum import (logderiv_command, phases_command, photoionization_command, resonances_command,
                                   scattering_command)

app = typer.Typer(
    name="radsolve",
    help=(
        "Bound states of the radial Schroedinger equation "
        "-1/(2 mu) u'' + [V(r) + l(l+1)/(2 mu r^2)] u = E u "
        "for central potentials, in atomic units (hartree, bohr, electron masses) "
        "or a family's nuclear units (MeV, fm); the Dirac and Klein-Gordon equations "
        "with --equation; above the threshold, phase shifts, scattering lengths, resonances, "
        "logarithmic derivatives and photoionization.\n\n"
        "Exit status: 0 ok; 1 'check' found a failure; 2 bad input or usage; "
        "3 finished, but something did not converge or is incomplete (the output says what); "
        "4 internal error (RADSOLVE_TRACEBACK=1 shows the traceback)."
    ),
    add_completion=False,
    no_args_is_help=True,
    rich_markup_mode=None,
    pretty_exceptions_enable=False,
    context_settings={"help_option_names": ["-h", "--help"]},
)

#: Command name -> function; the order is the order of ``radsolve --help``.
COMMANDS = {
    "levels": levels_command, "check": check_command, "potentials": potentials_command,
    "sweep": sweep_command, "threshold": threshold_command, "fit": fit_command,
    "wave": wave_command, "transitions": transitions_command,
    "phases": phases_command, "scattering": scattering_command, "photoionization": photoionization_command,
    "logderiv": logderiv_command, "resonances": resonances_command,
}
for _name, _command in COMMANDS.items():
    app.command(_name)(_command)


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
