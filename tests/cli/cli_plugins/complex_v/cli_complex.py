"""A plug-in whose V returns complex numbers (an absorptive term the solver does not support)."""

import numpy as np

NAME = "cli_complex"
PARAMETERS = {"depth": 1.0}


def V(r, depth):
    return -depth * np.exp(-r) * (1.0 + 0.1j)
