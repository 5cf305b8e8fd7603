"""What every command shares: exit codes, the one error-to-option table and error handler, output writing."""

from __future__ import annotations

import os
from contextlib import contextmanager
from enum import Enum
from pathlib import Path
from typing import Iterator, Optional

import typer

from radsolve.core.protocol import EXIT_CODES, Outcome

# A result's exit status is its own (result.exit_code, from its status); these name the rest.
EXIT_OK = EXIT_CODES[Outcome.SUCCESS]
EXIT_CHECK_FAILED = EXIT_CODES[Outcome.FAILED]
EXIT_NOT_CONVERGED = EXIT_CODES[Outcome.NOT_CONVERGED]
EXIT_BAD_INPUT = 2
EXIT_INTERNAL = 4


class OutputFormat(str, Enum):
    table = "table"
    json = "json"
    csv = "csv"


class ReportFormat(str, Enum):
    table = "table"
    json = "json"


def say(text: str) -> None:
    """One line on stderr."""
    typer.echo(f"radsolve: {text}", err=True)


def fail(message: str, status: int = EXIT_BAD_INPUT) -> typer.Exit:
    say(f"error: {message}")
    return typer.Exit(status)


#: The option that gives each API argument, for every command (``InputError.parameter``
#: -> option); a command whose option for an argument differs passes its own on top.
OPTION_OF = {
    "potential": "NAME", "plugins": "--plugins", "fixed": "-p",
    "l": "--l/--lmax", "lmax": "--lmax", "count": "--count", "mass": "--mass", "tol": "--tol",
    "method": "--method", "units": "--units", "unit": "--unit", "spin_orbit": "--spin-orbit",
    "dimension": "--dimension",
    "expr": "--expr", "source": "--file", "r_unit": "--r-unit", "v_unit": "--v-unit",
    "beyond": "--beyond", "inside": "--inside", "spline_degree": "--spline",
    "vary": "--vary", "workers": "--workers", "cluster": "--cluster", "out": "--out",
    "parameter": "--vary", "level": "--level", "levels": "--level", "nmax": "--nmax",
    "bracket": "--bracket",
    "targets": "--targets", "free": "--free", "bounds": "--free", "max_evaluations": "--max-evaluations",
    "n": "--n", "k": "--moment", "radius": "--inside", "r": "--at",
    "dipole_charge": "--dipole-charge", "occupied": "--occupied", "continuum": "--sum-rule",
    # above the threshold (cli/continuum.py)
    "energies": "--energies", "hard_core": "--hard-core", "photon_energies": "--photons",
    "reference": "--reference",
    "equation": "--equation", "scalar": "--scalar",
}


def option_message(exc, option: str | None) -> str:
    """The message of ``exc`` with the API argument it is about named as ``option``.

    The argument comes from the error's ``parameter`` field, never from its
    text.  A message that leads with the argument's name (``"tol must be
    ..."``) gets the option in its place (``"--tol must be ..."``); any other
    message gets the option in front (``"--vary: potential 'yukawa' has no
    parameter ..."``).  Errors about a potential parameter (``family`` set)
    already name it and are left as they are.
    """
    message = str(exc)
    parameter = getattr(exc, "parameter", None)
    if option is None or getattr(exc, "family", None) is not None or message.startswith(option):
        return message
    if parameter and (message == parameter or message.startswith((parameter + " ", parameter + ":"))):
        return option + message[len(parameter):]
    return f"{option}: {message}"


@contextmanager
def reported_errors(options: dict[str, str] | None = None) -> Iterator[None]:
    """Turn radsolve's user-facing errors into one stderr line and exit status 2.

    An InputError about one API argument names the option that gives it:
    ``OPTION_OF``, with ``options`` (the command's own names) on top.
    Anything else is a bug (ours or a plug-in's that the registry did not
    wrap); it gets one line and status 4 unless RADSOLVE_TRACEBACK is set.
    """
    from radsolve.errors import InputError, RadsolveError

    try:
        yield
    except typer.Exit:
        raise
    except InputError as exc:
        table = {**OPTION_OF, **(options or {})}
        raise fail(option_message(exc, table.get(exc.parameter))) from None
    except RadsolveError as exc:
        raise fail(str(exc)) from None
    except KeyboardInterrupt:
        raise fail("interrupted", 130) from None
    except Exception as exc:  # noqa: BLE001 - the last line of defence against tracebacks
        if os.environ.get("RADSOLVE_TRACEBACK"):
            raise
        raise fail(f"internal error: {type(exc).__name__}: {exc} "
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


def plugin_dirs(plugins: list[Path] | None) -> list[str] | None:
    return [str(p) for p in plugins] if plugins else None


def with_option(option: str, func, value):
    """``func(value)`` for a value that ``option`` alone gives, its errors naming ``option``."""
    from radsolve.errors import InputError

    try:
        return func(value)
    except InputError as exc:
        raise InputError(option_message(exc, option)) from None


def l_values(l: list[int] | None, lmax: int | None):
    """The API's ``l`` from --l or --lmax (None: the API's default)."""
    from radsolve.errors import InputError

    if l and lmax is not None:
        raise InputError("--l and --lmax: give one or the other (--lmax L means l = 0 ... L)")
    if lmax is not None:
        return list(range(lmax + 1))
    if l:
        return l if len(l) > 1 else l[0]
    return None


def only_given(**values):
    """The keyword arguments that were given (not None), so that the API's defaults apply."""
    return {key: value for key, value in values.items() if value is not None}


def check_png(path: Path, option: str) -> None:
    from radsolve.errors import InputError

    if path.suffix.lower() != ".png":
        raise InputError(f"{option} {str(path)!r}: the file name must end in .png")
    if not (path.parent if str(path.parent) else Path(".")).is_dir():
        raise InputError(f"{option} {str(path)!r}: folder {str(path.parent)!r} does not exist")


def write_output(text: str, out: Optional[Path], what: str) -> None:
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
    say(f"wrote {what} to {out}")


def solver_call(pot, func, *args, **kwargs):
    """Run a solving API call; a complaint of the solver (not about an input) names the potential."""
    from radsolve.errors import InputError, RadsolveError

    try:
        return func(*args, **kwargs)
    except InputError:
        raise  # reported_errors names the option from the error's parameter
    except RadsolveError as exc:
        if repr(pot.name) in str(exc):
            raise
        # Say which potential the solver's complaint (e.g. fall to the centre) is about.
        raise type(exc)(f"potential {pot.name!r}: {exc}") from None


def folder_exists(path: Path, option: str) -> None:
    from radsolve.errors import InputError

    if not (path.parent if str(path.parent) else Path(".")).is_dir():
        raise InputError(f"{option} {str(path)!r}: folder {str(path.parent)!r} does not exist")
