"""Rytova-Keldysh potential: the electron-hole attraction in a two-dimensional layer.

    V(r) = -(pi / (2 r0)) [H0(kappa r / r0) - Y0(kappa r / r0)]   (atomic units, e = 1),

with H0 the Struve function and Y0 the Bessel function of the second kind.
It is the interaction of two charges in a thin dielectric sheet of 2D
polarizability chi_2D (screening length r0 = 2 pi chi_2D) between media of
mean dielectric constant kappa = (eps_above + eps_below)/2:
N. S. Rytova, Moscow Univ. Phys. Bull. 22(3), 30 (1967); L. V. Keldysh,
JETP Lett. 29, 658 (1979); in this form P. Cudazzo, I. V. Tokatly and
A. Rubio, Phys. Rev. B 84, 085406 (2011) and T. C. Berkelbach,
M. S. Hybertsen and D. R. Reichman, Phys. Rev. B 88, 045318 (2013).

For excitons in a monolayer solve it in two dimensions (``dimension=2``)
with the excitonic reduced mass 1/(1/m_e + 1/m_h) in electron masses as
``mass``.  Far out it is the screened Coulomb attraction -1/(kappa r); near
the origin it is only logarithmic, V ~ (1/r0) [ln(kappa r / (2 r0)) +
gamma], gamma Euler's constant.

Parameters
----------
screening_length : length, > 0
    r0 in bohr (accepts units: "40angstrom", "4nm").
dielectric : float, >= 1
    kappa, the mean dielectric constant of the surroundings (1 in vacuum).

Units: r in bohr, V in hartree.  No closed form for the levels is known.
The defaults are a model monolayer: r0 = 41.47 angstrom, the value
Berkelbach et al. (2013) used for MoS2 as we recall it (from memory),
freestanding (kappa = 1).  A model calculation: binding energies depend on
the screening model and the masses chosen.
"""

import math

import numpy as np

from radsolve.potentials import Parameter

NAME = "rytova_keldysh"
DESCRIPTION = "2D screened electron-hole attraction -(pi/2r0)[H0(kappa r/r0) - Y0(kappa r/r0)]"
FORMULA = "V(r) = -(pi/(2 r0)) [H0(kappa r/r0) - Y0(kappa r/r0)]"
PARAMETERS = {
    "screening_length": Parameter("41.47angstrom", kind="length", minimum=0.0, exclusive_minimum=True,
                                  description="r0 = 2 pi chi_2D of the layer"),
    "dielectric": Parameter(1.0, minimum=1.0, description="mean dielectric constant of the surroundings"),
}

#: Above this argument H0 - Y0 is computed from its Laplace integral: the
#: direct difference of the two functions loses digits to cancellation there.
_SWITCH = 4.0
_LAGUERRE_POINTS = 60


def struve_minus_y0(x):
    """H0(x) - Y0(x) for x > 0, to about 1e-15 relative.

    For x < 4 the scipy.special functions are subtracted directly; above,
    H0(x) - Y0(x) = (2/pi) int_0^inf exp(-x t) / sqrt(1 + t**2) dt (DLMF
    11.5.2) is evaluated by Gauss-Laguerre quadrature, which avoids the
    cancellation of two oscillating functions that agree to 1/x**1.5.
    """
    from scipy.special import roots_laguerre, struve, y0

    x = np.asarray(x, dtype=float)
    out = np.empty_like(x)
    small = x < _SWITCH
    out[small] = struve(0, x[small]) - y0(x[small])
    if (~small).any():
        nodes, weights = roots_laguerre(_LAGUERRE_POINTS)
        big = x[~small]
        values = np.empty_like(big)
        for start in range(0, big.size, 8192):  # blocks keep the node-by-point array small
            part = big[start:start + 8192]
            ratio = nodes[None, :] / part[:, None]
            values[start:start + 8192] = (weights / np.sqrt(1.0 + ratio**2)).sum(axis=1)
        out[~small] = (2.0 / (math.pi * big)) * values
    return out


def V(r, screening_length, dielectric):
    """-(pi/(2 r0)) [H0(kappa r/r0) - Y0(kappa r/r0)] hartree for r in bohr."""
    r = np.asarray(r, dtype=float)
    x = dielectric * r.reshape(-1) / screening_length
    return (-(math.pi / (2.0 * screening_length)) * struve_minus_y0(x)).reshape(r.shape)


def v_infinity(screening_length, dielectric):
    return 0.0


def small_r(screening_length, dielectric):
    # Only logarithmic at the origin: weaker than any power, so u ~ r**(l+1)
    # (r**(L+1) in d dimensions) as for a finite V; p = 0 says just that.
    return (0.0, 0.0)


def breakpoints(screening_length, dielectric):
    """None: V is smooth (declared, so that V need not be scanned for jumps)."""
    return []
