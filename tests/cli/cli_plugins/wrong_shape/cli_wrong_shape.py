"""A plug-in whose V returns an array of the wrong shape (one value too few)."""

import numpy as np

NAME = "cli_wrong_shape"
PARAMETERS = {"depth": 1.0}


def V(r, depth):
    r = np.atleast_1d(np.asarray(r, dtype=float))
    return -depth * np.exp(-r[:-1]) if r.size > 1 else np.array([])
