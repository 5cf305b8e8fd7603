"""A plug-in whose V raises an unexpected exception."""

NAME = "cli_raises"
PARAMETERS = {"depth": 1.0}


def V(r, depth):
    raise ZeroDivisionError("deliberate failure inside the cli_raises plug-in")
