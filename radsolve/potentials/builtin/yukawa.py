"""Yukawa (screened Coulomb) potential: V(r) = -Z exp(-r/D) / r.

A Coulomb attraction screened over the length D, as for an impurity in a
plasma or an electron gas (Debye-Hückel / Thomas-Fermi screening).  As D → ∞
it becomes the Coulomb potential -Z/r; for small D only finitely many levels
are bound (none below a critical D of order 1/(μZ) bohr).

Parameters
----------
Z : float, > 0
    Strength: the charge of the unscreened Coulomb limit, units of e.
screening_length : length, > 0
    D in bohr (accepts units: "5angstrom", "2nm").

Units: r in bohr, V in hartree.  No closed form for the levels is known.
"""

import numpy as np

from radsolve.potentials import Parameter

NAME = "yukawa"
DESCRIPTION = "screened Coulomb potential -Z exp(-r/D)/r"
FORMULA = "V(r) = -Z exp(-r/D) / r,  D = screening_length"
PARAMETERS = {
    "Z": Parameter(1.0, minimum=0.0, exclusive_minimum=True,
                   description="charge of the unscreened limit, units of e"),
    "screening_length": Parameter(5.0, kind="length", minimum=0.0, exclusive_minimum=True,
                                  description="screening length D"),
}


def V(r, Z, screening_length):
    """-Z exp(-r/D)/r in hartree for r in bohr."""
    return -Z * np.exp(-r / screening_length) / r


def v_infinity(Z, screening_length):
    return 0.0


def small_r(Z, screening_length):
    return (-Z, -1.0)


def breakpoints(Z, screening_length):
    """None: V is smooth for r > 0 (declared, so that V need not be scanned for jumps)."""
    return []
