"""Attractive inverse square V(r) = -g / r**2, g dimensionless (atomic units).

With reduced mass mu the Hamiltonian is unbounded below (fall to the centre)
when 2 mu g > (l + 1/2)**2 (textbook result); with g = 1 and mu = 1 that holds
for l = 0 (2 > 1/4).
"""

NAME = "cli_inverse_square"
PARAMETERS = {"g": 1.0}


def V(r, g):
    return -g / r**2
