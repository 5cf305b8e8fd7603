"""Flat-bottom core well: V = -A inside the model radius, -Z_v/r outside.

The local, single-well form of the model potential of V. Heine and
I. Abarenkov, Phil. Mag. 9, 451 (1964) (citation details from memory).  Their
model replaces the ion core by a constant well of depth A_l inside a model
radius R_M, one depth per angular momentum, fitted to the term values of the
free ion; here one depth A serves every l:

    V(r) = -A           for r <  R_M
    V(r) = -Z_v / r     for r >= R_M

A = Z_v/R_M makes V continuous; other depths leave a step at R_M.

Parameters
----------
valence : float, > 0
    Z_v, the ionic (valence) charge in units of e.
model_radius : length, > 0
    R_M in bohr (accepts units: "1angstrom").
well_depth : energy
    A in hartree (accepts units: "5eV"); positive means attractive.  Any real
    value is allowed (A < 0 is a repulsive core).

Units: r in bohr, V in hartree.  The levels follow exactly from matching a
spherical Bessel function inside to the decaying Coulomb (Whittaker) function
outside; there is no closed form.  This is a model: parameters fitted for one
purpose do not carry over to others.
"""

import numpy as np

from radsolve.potentials import Parameter

NAME = "flat_core"
DESCRIPTION = "flat-bottom core well (Heine-Abarenkov 1964, local form): -A inside R_M, -Z_v/r outside"
FORMULA = "V(r) = -A for r < R_M;  -Z_v/r for r >= R_M"
PARAMETERS = {
    "valence": Parameter(1.0, minimum=0.0, exclusive_minimum=True,
                         description="valence (ionic) charge Z_v, units of e"),
    "model_radius": Parameter(2.0, kind="length", minimum=0.0, exclusive_minimum=True,
                              description="model radius R_M"),
    "well_depth": Parameter(0.3, kind="energy",
                            description="depth A of the flat well (A > 0 attracts)"),
}


def V(r, valence, model_radius, well_depth):
    """-A for r < R_M, -Z_v/r beyond, in hartree for r in bohr."""
    outside = r >= model_radius
    return np.where(outside, -valence / np.where(outside, r, model_radius), -well_depth)


def v_infinity(valence, model_radius, well_depth):
    return 0.0


def small_r(valence, model_radius, well_depth):
    return (-well_depth, 0.0)


def breakpoints(valence, model_radius, well_depth):
    return [model_radius]
