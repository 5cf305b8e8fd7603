"""Linear confining potential: V(r) = F r.

A constant force F pulling the particle towards the centre (a "triangular
well" in three dimensions; the confining part of quark-model potentials).

Parameters
----------
slope : float, > 0
    F in hartree/bohr.

Units: r in bohr, V in hartree.  Confining: every level is bound.  Exact
levels for l = 0 only (textbook formula, Airy functions): u(r) = Ai(z) with
z = (2μF)^(1/3) (r - E/F), so E = -a_k (F²/(2μ))^(1/3), a_k the k-th zero of
Ai (a_1 ≈ -2.338), k = n.  For l > 0 there is no closed form.
"""

import math

from radsolve.potentials import Parameter

NAME = "linear"
DESCRIPTION = "linear confining potential F r"
FORMULA = "V(r) = F r,  F = slope (hartree/bohr)"
PARAMETERS = {
    "slope": Parameter(1.0, minimum=0.0, exclusive_minimum=True,
                       description="force F, hartree/bohr"),
}


def V(r, slope):
    """F r in hartree for r in bohr."""
    return slope * r


def v_infinity(slope):
    return math.inf


def small_r(slope):
    return (slope, 1.0)


def exact_energy(n, l, mass, slope):
    """-a_n (F²/(2μ))^(1/3) for l = 0 (a_n: n-th zero of Airy Ai); None for l > 0."""
    if l != 0 or n < 1:
        return None
    from scipy.special import ai_zeros, airy

    a_n = float(ai_zeros(n)[0][n - 1])
    # scipy's zeros can be off by ~1e-12 relative; Newton steps on Ai polish them.
    for _ in range(3):
        ai, aip, _, _ = airy(a_n)
        a_n -= ai / aip
    return -a_n * (slope**2 / (2.0 * mass)) ** (1.0 / 3.0)


def breakpoints(slope):
    """None: V is smooth for r > 0 (declared, so that V need not be scanned for jumps)."""
    return []
