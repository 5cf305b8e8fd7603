"""A plug-in that cannot be imported: it needs a module that does not exist."""

import radsolve_no_such_module_for_tests  # noqa: F401

NAME = "cli_broken"
PARAMETERS = {}


def V(r):
    return -1.0 / r
