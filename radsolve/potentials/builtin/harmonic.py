"""Isotropic harmonic oscillator: V(r) = ½ ω² r².

The spring constant is ω² hartree/bohr² whatever the mass, so that a particle
of reduced mass μ (electron masses) oscillates at the angular frequency
ω/√μ (atomic units, ħ = 1).

Parameters
----------
omega : energy, > 0
    ω in hartree (ħ = 1; accepts units such as "50meV").  For μ = 1 it is the
    level spacing ħω.

Units: r in bohr, V in hartree.  Confining: every level is bound.  Exact
levels (textbook formula): with nodes = n - l - 1,
E(n, l) = (2·nodes + l + 3/2) · ω/√μ.
"""

import math

from radsolve.potentials import Parameter

NAME = "harmonic"
DESCRIPTION = "isotropic harmonic oscillator ½ ω² r²"
FORMULA = "V(r) = 0.5 * omega**2 * r**2   (frequency omega/sqrt(mass))"
PARAMETERS = {
    "omega": Parameter(1.0, kind="energy", minimum=0.0, exclusive_minimum=True,
                       description="ω: spring constant ω² hartree/bohr²; ħω for mass 1"),
}


def V(r, omega):
    """½ ω² r² in hartree for r in bohr."""
    return 0.5 * omega**2 * r**2


def v_infinity(omega):
    return math.inf


def small_r(omega):
    return (0.5 * omega**2, 2.0)


def exact_energy(n, l, mass, omega):
    """(2(n-l-1) + l + 3/2)·ω/√μ hartree (textbook formula)."""
    if not 0 <= l < n:
        return None
    nodes = n - l - 1
    return (2 * nodes + l + 1.5) * omega / math.sqrt(mass)


def breakpoints(omega):
    """None: V is smooth for r > 0 (declared, so that V need not be scanned for jumps)."""
    return []
