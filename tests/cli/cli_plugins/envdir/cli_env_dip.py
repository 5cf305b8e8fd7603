"""Exponential dip found through the RADSOLVE_PLUGINS variable in the tests.

V(r) = -depth * exp(-r / decay), depth in hartree, decay in bohr.
"""

import numpy as np

NAME = "cli_env_dip"
PARAMETERS = {"depth": 1.0, "decay": 1.0}


def V(r, depth, decay):
    return -depth * np.exp(-r / decay)
