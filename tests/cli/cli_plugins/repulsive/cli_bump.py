"""A purely repulsive bump: V(r) = height * exp(-r / decay) >= 0, no bound state."""

import numpy as np

NAME = "cli_bump"
PARAMETERS = {"height": 1.0, "decay": 1.0}


def V(r, height, decay):
    return height * np.exp(-r / decay)
