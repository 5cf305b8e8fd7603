"""Coulomb potential of a point charge: V(r) = -Z/r.

The hydrogen-like potential of an electron (or other particle of charge -e)
bound to a point nucleus of charge Z·e.

Parameters
----------
Z : float, > 0
    Nuclear charge in units of the elementary charge (need not be an integer).

Units: r in bohr, V in hartree.  The levels are known exactly (textbook
formula): E(n, l) = -μ Z² / (2 n²) hartree for reduced mass μ (electron
masses), independent of l, for n > l.
"""

from radsolve.potentials import Parameter

NAME = "coulomb"
DESCRIPTION = "point-charge Coulomb potential -Z/r (hydrogen-like)"
FORMULA = "V(r) = -Z/r"
PARAMETERS = {
    "Z": Parameter(1.0, minimum=0.0, exclusive_minimum=True,
                   description="nuclear charge, units of e"),
}


def V(r, Z):
    """-Z/r in hartree for r in bohr."""
    return -Z / r


def v_infinity(Z):
    return 0.0


def small_r(Z):
    return (-Z, -1.0)


def exact_energy(n, l, mass, Z):
    """-μZ²/(2n²) hartree (textbook formula); None unless n > l >= 0."""
    if not 0 <= l < n:
        return None
    return -mass * Z**2 / (2.0 * n**2)


def breakpoints(Z):
    """None: V is smooth for r > 0 (declared, so that V need not be scanned for jumps)."""
    return []
