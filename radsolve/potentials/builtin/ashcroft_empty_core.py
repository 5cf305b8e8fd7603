"""Empty-core model pseudopotential: V = 0 inside the core radius, -Z_v/r outside.

The local model pseudopotential of N. W. Ashcroft, Phys. Lett. 23, 48 (1966)
(citation details from memory): the valence electron of a simple metal or
alkali atom sees no potential inside the ion core of radius r_c, because there
the attraction of the nucleus is cancelled by the orthogonality to the core
states, and the bare Coulomb tail of the ion (charge Z_v) outside:

    V(r) = 0            for r <  r_c
    V(r) = -Z_v / r     for r >= r_c

Parameters
----------
valence : float, > 0
    Z_v, the ionic (valence) charge in units of e.
core_radius : length, > 0
    r_c in bohr (accepts units: "0.9angstrom").

Units: r in bohr, V in hartree.  V jumps at r_c (the solver puts a grid point
there).  The levels follow exactly from matching a free spherical wave inside
to the decaying Coulomb (Whittaker) function outside; there is no closed form.
This is a model: pseudopotential parameters fitted for one purpose do not
carry over to others.
"""

import numpy as np

from radsolve.potentials import Parameter

NAME = "empty_core"
DESCRIPTION = "empty-core model pseudopotential (Ashcroft 1966): 0 inside r_c, -Z_v/r outside"
FORMULA = "V(r) = 0 for r < r_c;  -Z_v/r for r >= r_c"
PARAMETERS = {
    "valence": Parameter(1.0, minimum=0.0, exclusive_minimum=True,
                         description="valence (ionic) charge Z_v, units of e"),
    "core_radius": Parameter(1.7, kind="length", minimum=0.0, exclusive_minimum=True,
                             description="core radius r_c"),
}


def V(r, valence, core_radius):
    """0 for r < r_c, -Z_v/r beyond, in hartree for r in bohr."""
    outside = r >= core_radius
    # Dividing only where r >= r_c > 0 keeps r = 0 free of warnings.
    return np.where(outside, -valence / np.where(outside, r, core_radius), 0.0)


def v_infinity(valence, core_radius):
    return 0.0


def small_r(valence, core_radius):
    return (0.0, 0.0)


def breakpoints(valence, core_radius):
    return [core_radius]
