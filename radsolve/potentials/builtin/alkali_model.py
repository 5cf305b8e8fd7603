"""Semilocal model potential of the valence electron of an alkali atom (l-dependent).

The parametric model potential of M. Marinescu, H. R. Sadeghpour and
A. Dalgarno, Phys. Rev. A 49, 982 (1994):

    V_l(r) = -Z_l(r)/r - alpha_c / (2 r**4) [1 - exp(-(r/r_c)**6)],
    Z_l(r) = 1 + (z - 1) exp(-a1 r) - r (a3 + a4 r) exp(-a2 r),

a screened nuclear attraction (charge z at the nucleus, 1 far out) plus the
core-polarization tail, with its own (a1, a2, a3, a4, r_c) for l = 0, 1, 2
and one set for every l >= 3 (the default for higher l).  alpha_c is the
static dipole polarizability of the ionic core.  The potential binds
core-like states below the valence ones, so the n of a level counted from
its nodes is the spectroscopic n: Na 3s is the third s level, 3p the second
p level, 3d the first d level.

Parameters
----------
element : choice
    Li, Na, K, Rb or Cs.

Units: r in bohr, V in hartree; solve with the reduced mass of the electron
and the ion (about 1; ``mass="electron+..."`` is not needed at the 1e-4
level of the model).  No spin-orbit term: levels are fine-structure averages.

Parameter values.  The numbers below are the published fit as we recall
them (from memory, not re-read from the paper); check them against Table I
of Marinescu et al. (1994) before relying on them.  The central V (what
``V`` returns, and what the solver uses for every l >= 3) is V_3.  A model:
its term values reproduce measured ones to a fraction of a per cent, not
better.
"""

import numpy as np

from radsolve.potentials import Parameter

NAME = "alkali_model"
DESCRIPTION = "l-dependent model potential of an alkali valence electron (Marinescu et al. 1994)"
FORMULA = ("V_l(r) = -Z_l(r)/r - alpha_c/(2 r^4) [1 - exp(-(r/r_c)^6)],  "
           "Z_l(r) = 1 + (z-1) exp(-a1 r) - r (a3 + a4 r) exp(-a2 r)")

#: element -> (z, alpha_c in bohr**3, {l: (a1, a2, a3, a4, r_c)} for l = 0, 1, 2, 3 (= l >= 3)).
#: From memory of Marinescu, Sadeghpour & Dalgarno, Phys. Rev. A 49, 982 (1994), Table I.
TABLE = {
    "Li": (3, 0.1923, {
        0: (2.47718079, 1.84150932, -0.02169712, -0.11988362, 0.61340824),
        1: (3.45414648, 2.55151080, -0.21646561, -0.06990078, 0.61566441),
        2: (2.51909839, 2.43712450, 0.32505524, 0.10602430, 2.34126273),
        3: (2.51909839, 2.43712450, 0.32505524, 0.10602430, 2.34126273),
    }),
    "Na": (11, 0.9448, {
        0: (4.82223117, 2.45449865, -1.12255048, -1.42631393, 0.45489422),
        1: (5.08382502, 2.18226881, -1.19534623, -1.03142861, 0.45798739),
        2: (3.53324124, 2.48697936, -0.75688448, -1.27852357, 0.71875312),
        3: (1.11056646, 1.05458759, 1.73203428, -0.09265696, 28.6735059),
    }),
    "K": (19, 5.3310, {
        0: (3.56079437, 1.83909642, -1.74701102, -1.03237313, 0.83167545),
        1: (3.65670429, 1.67520788, -2.07367653, -0.89029716, 0.85235381),
        2: (4.12713694, 1.79837462, -1.69935174, -0.98913141, 0.83216907),
        3: (1.42310446, 1.27861156, 4.77441476, -0.94829262, 6.50294371),
    }),
    "Rb": (37, 9.0760, {
        0: (3.69628474, 1.64915255, -9.86069196, 0.19579987, 1.66242117),
        1: (4.44088978, 1.92828831, -16.79597770, -0.81633314, 1.50195124),
        2: (3.78717363, 1.57027864, -11.65588970, 0.52942835, 4.86851938),
        3: (2.39848933, 1.76810544, -12.07106780, 0.77256589, 4.79831327),
    }),
    "Cs": (55, 15.6440, {
        0: (3.49546309, 1.47533800, -9.72143084, 0.02629242, 1.92046930),
        1: (4.69366096, 1.71398344, -24.65624280, -0.09543125, 2.13383095),
        2: (4.32466196, 1.61365288, -6.70128850, -0.74095193, 0.93007296),
        3: (3.01048361, 1.40000001, -3.20036138, 0.00034538, 1.99969677),
    }),
}

PARAMETERS = {
    "element": Parameter("Na", choices=tuple(TABLE), description="the alkali atom"),
}


def _potential(r, element, l):
    z, alpha_c, sets = TABLE[element]
    a1, a2, a3, a4, rc = sets[min(int(l), 3)]
    r = np.asarray(r, dtype=float)
    charge = 1.0 + (z - 1.0) * np.exp(-a1 * r) - r * (a3 + a4 * r) * np.exp(-a2 * r)
    # 1 - exp(-x) without cancellation for small x = (r/rc)**6; the r**4 then cancels.
    x = (r / rc) ** 6
    polarization = -alpha_c / (2.0 * r**4) * -np.expm1(-x)
    return -charge / r + polarization


def V_l(r, l, element):
    """V_l(r) in hartree for r in bohr: the l-th set, the l >= 3 set for l >= 3."""
    return _potential(r, element, l)


def V(r, element):
    """The central (l >= 3) potential V_3(r), hartree."""
    return _potential(r, element, 3)


def v_infinity(element):
    return 0.0


def small_r(element):
    """V ~ -z/r at the nucleus for every l."""
    return (-float(TABLE[element][0]), -1.0)
