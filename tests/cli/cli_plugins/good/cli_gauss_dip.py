"""Gaussian dip used by the command-line tests.

V(r) = -depth * exp(-(r / width)**2), depth in hartree, width in bohr.
"""

import numpy as np

from radsolve.potentials import Parameter

NAME = "cli_gauss_dip"
PARAMETERS = {
    "depth": Parameter(2.0, kind="energy", minimum=0.0, description="depth of the dip"),
    "width": Parameter(1.5, kind="length", minimum=0.0, exclusive_minimum=True,
                       description="1/e half-width"),
}
FORMULA = "V(r) = -depth * exp(-(r/width)^2)"


def V(r, depth, width):
    return -depth * np.exp(-((r / width) ** 2))
