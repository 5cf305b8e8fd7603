"""Woods-Saxon nuclear mean field, with optional spin-orbit and Coulomb terms.

    V(r) = -V0 f(r) + V_C(r),      f(r) = 1 / (1 + exp((r - R)/a)),

    spin-orbit term (solve with spin_orbit=True):
    V_so(r) <l.s>,   V_so(r) = lambda_so V0 r0**2 (1/r) df/dr,

with <l.s> = l/2 for j = l + 1/2 and -(l+1)/2 for j = l - 1/2 (hbar = 1), so
that with lambda_so > 0 the j = l + 1/2 level lies lower (df/dr < 0).  The
radius is R = radius when given, otherwise R = r0 A**(1/3).  For a proton,
V_C is the potential of a uniformly charged sphere of charge Z_c e and
radius R_C (R_C = R unless coulomb_radius is given):

    V_C(r) = Z_c alpha hbar c (3 - r**2/R_C**2) / (2 R_C)   for r <= R_C,
    V_C(r) = Z_c alpha hbar c / r                            for r >  R_C,

with alpha hbar c from scipy.constants.  Z_c = 0 (the default) is a neutron.

Units: nuclear (MeV, fm; masses in MeV/c**2, e.g. mass="neutron").

Parameters
----------
depth : energy, > 0
    V0 in MeV.
A : float, >= 1
    Mass number, for R = r0 A**(1/3).
r0 : length, > 0
    Radius parameter in fm.  It also sets the length r0**2 of the
    spin-orbit strength.
radius : length, >= 0
    R in fm; 0 (the default) means R = r0 A**(1/3).
diffuseness : length, > 0
    a in fm.
spin_orbit_strength : float, >= 0
    lambda_so (dimensionless); only used with spin_orbit=True.
coulomb_Z : float, >= 0
    Charge number Z_c of the core for a proton (0: no Coulomb term).
coulomb_radius : length, >= 0
    R_C in fm; 0 (the default) means R_C = R.

The defaults are a neutron in lead-208 with the global parameter set of
A. Bohr and B. R. Mottelson, Nuclear Structure, vol. I (Benjamin, 1969),
Eqs. (2-181) to (2-183) as we recall them (from memory):
V0 = 51 - 33 (N - Z)/A MeV for neutrons (51 + 33 (N - Z)/A for protons),
r0 = 1.27 fm, a = 0.67 fm, spin-orbit strength 0.44 V0 r0**2 (1/r) df/dr.
:func:`bohr_mottelson` builds that set for other nuclei.  This is a model
mean field: its single-particle energies are model numbers, not a
substitute for measured separation energies.
"""


import numpy as np

from radsolve.errors import InputError
from radsolve.potentials import Parameter

NAME = "woods_saxon"
UNITS = "nuclear"
DESCRIPTION = "nuclear Woods-Saxon well with derivative spin-orbit and charged-sphere Coulomb terms (MeV, fm)"
FORMULA = ("V(r) = -V0/(1 + exp((r-R)/a)) + V_C(r);  V_so(r) = lambda_so V0 r0^2 (1/r) df/dr;  "
           "R = r0 A^(1/3) unless radius > 0")

#: The Bohr-Mottelson global set (from memory; see the module docstring).
BM_DEPTH, BM_ASYMMETRY = 51.0, 33.0  # MeV
BM_R0, BM_DIFFUSENESS, BM_SPIN_ORBIT = 1.27, 0.67, 0.44  # fm, fm, dimensionless

PARAMETERS = {
    "depth": Parameter(BM_DEPTH - BM_ASYMMETRY * 44.0 / 208.0, kind="energy", minimum=0.0,
                       exclusive_minimum=True, description="well depth V0"),
    "A": Parameter(208.0, minimum=1.0, description="mass number (R = r0 A^(1/3))"),
    "r0": Parameter(BM_R0, kind="length", minimum=0.0, exclusive_minimum=True,
                    description="radius parameter"),
    "radius": Parameter(0.0, kind="length", minimum=0.0,
                        description="R itself; 0 means r0 A^(1/3)"),
    "diffuseness": Parameter(BM_DIFFUSENESS, kind="length", minimum=0.0, exclusive_minimum=True,
                             description="surface diffuseness a"),
    "spin_orbit_strength": Parameter(BM_SPIN_ORBIT, minimum=0.0,
                                     description="lambda_so of V_so = lambda_so V0 r0^2 (1/r) df/dr"),
    "coulomb_Z": Parameter(0.0, minimum=0.0, description="core charge for a proton (0: neutron)"),
    "coulomb_radius": Parameter(0.0, kind="length", minimum=0.0,
                                description="charged-sphere radius; 0 means R"),
}


def nuclear_radius(A, r0, radius):
    """R in fm: ``radius`` if positive, else r0 A**(1/3)."""
    return radius if radius > 0 else r0 * A ** (1.0 / 3.0)


def _coulomb_constant():
    """alpha hbar c in MeV fm (CODATA via scipy.constants)."""
    from radsolve.units import unit_system

    return unit_system("nuclear").coulomb_constant()


def fermi(r, R, a):
    """f(r) = 1/(1 + exp((r - R)/a)), computed without overflow."""
    x = (r - R) / a
    # exp(-|x|) never overflows; both branches are the same function.
    e = np.exp(-np.abs(x))
    return np.where(x > 0, e / (1.0 + e), 1.0 / (1.0 + e))


def coulomb_sphere(r, Z, Rc):
    """Potential energy (MeV) of a unit positive charge at r (fm) in a uniformly charged sphere."""
    k = Z * _coulomb_constant()
    inside = k * (3.0 - (r / Rc) ** 2) / (2.0 * Rc)
    return np.where(r <= Rc, inside, k / np.maximum(r, Rc))


def V(r, depth, A, r0, radius, diffuseness, spin_orbit_strength, coulomb_Z, coulomb_radius):
    """Central part -V0 f(r) + V_C(r), MeV at r in fm."""
    R = nuclear_radius(A, r0, radius)
    values = -depth * fermi(r, R, diffuseness)
    if coulomb_Z > 0:
        values = values + coulomb_sphere(r, coulomb_Z, coulomb_radius if coulomb_radius > 0 else R)
    return values


def spin_orbit(r, depth, A, r0, radius, diffuseness, spin_orbit_strength, coulomb_Z, coulomb_radius):
    """V_so(r) = lambda_so V0 r0**2 (1/r) df/dr, MeV (multiplies <l.s>)."""
    R = nuclear_radius(A, r0, radius)
    f = fermi(r, R, diffuseness)
    dfdr = -f * (1.0 - f) / diffuseness
    return spin_orbit_strength * depth * r0**2 * dfdr / r


def v_infinity(**params):
    return 0.0


def small_r(depth, A, r0, radius, diffuseness, spin_orbit_strength, coulomb_Z, coulomb_radius):
    """V(0) is finite: (V(0), 0)."""
    return float(V(np.array(0.0), depth, A, r0, radius, diffuseness, spin_orbit_strength,
                   coulomb_Z, coulomb_radius)), 0.0


def breakpoints(depth, A, r0, radius, diffuseness, spin_orbit_strength, coulomb_Z, coulomb_radius):
    """The charged sphere's surface, where V_C'' jumps."""
    if coulomb_Z <= 0:
        return []
    R = nuclear_radius(A, r0, radius)
    return [coulomb_radius if coulomb_radius > 0 else R]


def validate(depth, A, r0, radius, diffuseness, spin_orbit_strength, coulomb_Z, coulomb_radius):
    R = nuclear_radius(A, r0, radius)
    if diffuseness > R:
        raise InputError(f"parameter 'diffuseness' of woods_saxon ({diffuseness:g} fm) exceeds the "
                         f"radius R = {R:g} fm; allowed: a <= R", parameter="diffuseness", family="woods_saxon")


def bohr_mottelson(A, Z, particle="neutron"):
    """The parameters of the Bohr-Mottelson global set for nucleus (A, Z).

    Parameters
    ----------
    A, Z : int
        Mass number and charge number of the nucleus (the core).
    particle : {"neutron", "proton"}
        Which nucleon; a proton also gets the Coulomb term of charge Z.

    Returns
    -------
    dict
        Keyword arguments for ``radsolve.potential("woods_saxon", **params)``
        (MeV, fm).  Values are from memory of Bohr & Mottelson, Nuclear
        Structure vol. I (1969), Eqs. (2-181)-(2-183): V0 = 51 -+ 33 (N-Z)/A
        MeV (- for neutrons), r0 = 1.27 fm, a = 0.67 fm, lambda_so = 0.44.
    """
    if particle not in ("neutron", "proton"):
        raise InputError(f"particle {particle!r}: allowed: neutron, proton", parameter="particle")
    if not (A >= 1 and 0 <= Z <= A):
        raise InputError(f"nucleus A = {A}, Z = {Z}: need A >= 1 and 0 <= Z <= A")
    asymmetry = (A - 2.0 * Z) / A  # (N - Z)/A
    sign = -1.0 if particle == "neutron" else 1.0
    params = dict(depth=BM_DEPTH + sign * BM_ASYMMETRY * asymmetry, A=float(A), r0=BM_R0,
                  diffuseness=BM_DIFFUSENESS, spin_orbit_strength=BM_SPIN_ORBIT)
    if particle == "proton":
        params["coulomb_Z"] = float(Z)
    return params
