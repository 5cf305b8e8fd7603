"""Exceptions that carry a message meant for the user.

Every error radsolve raises on bad input is a :class:`RadsolveError`.  Its
message names the offending input and says what is allowed; the command line
prints it (without a traceback) and exits with status 2.
"""


class RadsolveError(ValueError):
    """Base class of all user-facing radsolve errors."""


class InputError(RadsolveError):
    """A parameter, unit, mass, option or value is not acceptable."""


class PluginError(RadsolveError):
    """A potential plug-in could not be loaded or returned unusable values."""


class UnboundedBelowError(RadsolveError):
    """The Hamiltonian has no ground state (fall to the centre)."""
