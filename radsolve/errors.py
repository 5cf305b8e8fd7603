"""Exceptions that carry a message meant for the user.

Every error radsolve raises on bad input is a :class:`RadsolveError`.  Its
message names the offending input and says what is allowed; the command line
prints it (without a traceback) and exits with status 2.

An :class:`InputError` about one input also says which one as data:
``parameter`` is the name of the API argument (``"tol"``, ``"mass"``,
``"count"``, ``"l"``, ``"dimension"``, ...) or, with ``family`` set, the
name of a parameter of that potential family.  Its message then starts with
that name where it reads naturally (``"tol must be between ..."``), so that
a front end can put its own name for the input in its place (the command
line writes ``--tol``) without reading the text.
"""

from __future__ import annotations


class RadsolveError(ValueError):
    """Base class of all user-facing radsolve errors."""


class InputError(RadsolveError):
    """A parameter, unit, mass, option or value is not acceptable.

    Parameters
    ----------
    message : str
        What was given and what is allowed.
    parameter : str, optional
        The API argument the error is about (``"tol"``), or the name of a
        potential parameter when ``family`` is given; None when the error is
        not about one input.
    family : str, optional
        The potential family whose parameter ``parameter`` is.
    """

    def __init__(self, message: str = "", *, parameter: str | None = None,
                 family: str | None = None) -> None:
        super().__init__(message)
        self.parameter = parameter
        self.family = family


class PluginError(RadsolveError):
    """A potential plug-in could not be loaded or returned unusable values."""


class UnboundedBelowError(RadsolveError):
    """The Hamiltonian has no ground state (fall to the centre)."""
