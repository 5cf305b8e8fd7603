"""A plug-in whose V is NaN beyond r = 5 bohr (a bug the solver must refuse)."""

import numpy as np

NAME = "cli_nan_tail"
PARAMETERS = {"depth": 1.0}


def V(r, depth):
    r = np.asarray(r, dtype=float)
    return np.where(r > 5.0, np.nan, -depth * np.exp(-r))
