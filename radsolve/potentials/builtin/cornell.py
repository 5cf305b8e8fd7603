"""Cornell potential of heavy quarkonium: Coulomb plus linear, V(r) = -kappa hbar c / r + sigma r.

The one-gluon-exchange Coulomb term and the linear confining term of the
Cornell model (E. Eichten, K. Gottfried, T. Kinoshita, K. D. Lane and
T.-M. Yan, Phys. Rev. D 17, 3090 (1978) and Phys. Rev. D 21, 203 (1980)),
for the relative motion of a heavy quark and antiquark.  Solve with the
reduced mass of the pair, m_Q/2, in MeV/c**2.

Units: nuclear (MeV, fm; hbar c from scipy.constants).

Parameters
----------
kappa : float, >= 0
    Dimensionless Coulomb strength (4 alpha_s / 3 in the one-gluon picture).
string_tension : float, >= 0
    sigma in MeV/fm (a plain number: 1 GeV**2 / (hbar c) is about
    5068 MeV/fm).
offset : energy
    A constant added to V, MeV (quark-mass and zero-point conventions).

Not both kappa and sigma may be zero.  The limits have exact levels
(textbook formulas): sigma = 0 is hydrogen-like, E = -mu c**2 kappa**2 /
(2 N**2) with N = nodes + l + 1; kappa = 0 with l = 0 gives
E_k = (sigma**2 (hbar c)**2 / (2 mu c**2))**(1/3) |a_k| with a_k the zeros
of the Airy function Ai.

The defaults are the charmonium fit of Eichten et al. (1980) as we recall it
(from memory): kappa = 0.52, sigma = 1/a**2 with a = 2.34 GeV**-1, used with
m_c = 1.84 GeV (reduced mass 920 MeV/c**2).  A model: its levels are not
measured masses.
"""

import math

from radsolve.errors import InputError
from radsolve.potentials import Parameter

NAME = "cornell"
UNITS = "nuclear"
DESCRIPTION = "Coulomb-plus-linear quarkonium potential -kappa hbar c/r + sigma r (MeV, fm)"
FORMULA = "V(r) = -kappa hbar c / r + sigma r + offset"


def _hbar_c():
    """hbar c in MeV fm (CODATA via scipy.constants)."""
    from radsolve.units import unit_system

    return unit_system("nuclear").hbar_c()


def _default_string_tension():
    # sigma = 1/a**2 with a = 2.34 GeV^-1 (from memory, Eichten et al. 1980), in MeV/fm:
    # (1e3 MeV)**2 / a**2 / (hbar c in MeV fm)
    return (1e3 / 2.34) ** 2 / _hbar_c()


PARAMETERS = {
    "kappa": Parameter(0.52, minimum=0.0, description="Coulomb strength (dimensionless)"),
    "string_tension": Parameter(_default_string_tension(), minimum=0.0,
                                description="sigma, MeV/fm"),
    "offset": Parameter(0.0, kind="energy", description="constant added to V"),
}


def V(r, kappa, string_tension, offset):
    """-kappa hbar c / r + sigma r + offset, MeV at r in fm."""
    return -kappa * _hbar_c() / r + string_tension * r + offset


def v_infinity(kappa, string_tension, offset):
    return math.inf if string_tension > 0 else offset


def small_r(kappa, string_tension, offset):
    if kappa > 0:
        return (-kappa * _hbar_c(), -1.0)
    return (offset, 0.0)


def validate(kappa, string_tension, offset):
    if kappa == 0 and string_tension == 0:
        raise InputError("potential 'cornell': kappa and string_tension are both 0 (no potential); "
                         "allowed: at least one of them > 0")


def breakpoints(kappa, string_tension, offset):
    """None: V is smooth for r > 0 (declared, so that V need not be scanned for jumps)."""
    return []
