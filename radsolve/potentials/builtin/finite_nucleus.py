"""Coulomb potential of a nucleus of finite size.

The exact electrostatic potential energy of a particle of charge -e in the
field of a spherical charge distribution ρ(r) of total charge Z·e, inside and
outside the nucleus (Gauss's law, textbook formula):

    V(r) = -(1/r) ∫_0^r 4π ρ(r') r'² dr' - ∫_r^∞ 4π ρ(r') r' dr'

Outside the charge V = -Z/r; V(0) is finite.  The size is given as the root
mean square charge radius r_rms = sqrt(<r²>), the quantity nuclear data tables
list, and the shape by one of three models:

uniform
    A sphere of constant density with sharp radius R = sqrt(5/3)·r_rms:
    V = -Z (3 - r²/R²) / (2R) inside, -Z/r outside.
gaussian
    ρ ∝ exp(-r²/(2σ²)) with σ = r_rms/sqrt(3): V = -Z erf(r/(√2 σ)) / r.
fermi
    ρ ∝ 1 / (1 + exp((r - c)/a)) (two-parameter Fermi shape) with
    diffuseness a; the half-density radius c is solved from the exact
    relation <r²> = ∫ρ r⁴ dr / ∫ρ r² dr = r_rms² (not the large-c
    approximation <r²> ≈ (3/5)c² + (7/5)π²a²).  Needs r_rms > sqrt(12)·a,
    the limit c → -∞ of that relation.  V is computed by Gauss-Legendre
    quadrature on panels of width a, accurate to rounding error.

Parameters
----------
Z : float, > 0
    Nuclear charge in units of e.
radius : length, > 0
    The rms charge radius in bohr (accepts units: "0.84fm", "5.5fm").  The
    default is the CODATA proton rms charge radius (scipy.constants).
model : "uniform" | "gaussian" | "fermi"
    The shape of the charge distribution.
diffuseness : length, > 0
    a in bohr, used by the Fermi model only.  The default corresponds to a
    10%-90% surface thickness t = 4 ln(3)·a = 2.30 fm (common practice for
    medium and heavy nuclei; value from memory).

Units: r in bohr, V in hartree.  A model calculation: for precise nuclear
size corrections use the charge distributions and methods established for
the nucleus at hand.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from functools import lru_cache

import numpy as np
from scipy.constants import femto, physical_constants

from radsolve.errors import InputError
from radsolve.potentials import Parameter

NAME = "finite_nucleus"
DESCRIPTION = "Coulomb potential of a finite nucleus (uniform, Gaussian or Fermi charge)"
FORMULA = "V(r) = -(1/r) q(r) - ∫_r^∞ 4π ρ r' dr',  q(r) = charge within r,  rms radius given"

MODELS = ("uniform", "gaussian", "fermi")

_BOHR = physical_constants["Bohr radius"][0]
_PROTON_RMS_RADIUS = physical_constants["proton rms charge radius"][0] / _BOHR
# 10%-90% surface thickness t = 2.30 fm, a = t / (4 ln 3) (common practice, from memory).
_DEFAULT_DIFFUSENESS = 2.30 * femto / (4.0 * math.log(3.0)) / _BOHR

PARAMETERS = {
    "Z": Parameter(1.0, minimum=0.0, exclusive_minimum=True,
                   description="nuclear charge, units of e"),
    "radius": Parameter(_PROTON_RMS_RADIUS, kind="length", minimum=0.0, exclusive_minimum=True,
                        description="rms charge radius (default: CODATA proton radius)"),
    "model": Parameter("uniform", choices=MODELS, description="shape of the charge distribution"),
    "diffuseness": Parameter(_DEFAULT_DIFFUSENESS, kind="length", minimum=0.0,
                             exclusive_minimum=True,
                             description="Fermi surface diffuseness a (fermi model only)"),
}

# Fermi model numerics: panels of width a in r, Gauss-Legendre nodes per panel,
# and how many e-folds beyond c the density is followed (e^-48 ~ 1e-21).
_GL_NODES = 12
_TAIL_EFOLDS = 48
_CHUNK = 1 << 15


@dataclass(frozen=True)
class NuclearShape:
    """Shape of the charge distribution for one (radius, model, diffuseness).

    Attributes
    ----------
    model : str
    rms_radius : float
        bohr.
    sharp_radius : float or None
        R of the uniform sphere, bohr.
    sigma : float or None
        Gaussian width σ, bohr.
    half_density_radius, diffuseness : float or None
        c and a of the Fermi shape, bohr (c may be negative for very diffuse
        distributions).
    v0_over_z : float
        V(0)/Z, hartree.
    """

    model: str
    rms_radius: float
    sharp_radius: float | None = None
    sigma: float | None = None
    half_density_radius: float | None = None
    diffuseness: float | None = None
    v0_over_z: float = 0.0


class _FermiTables:
    """Panel tables of one Fermi shape, for exact V at any radius."""

    def __init__(self, c: float, a: float):
        from scipy.special import expit

        self.c, self.a = c, a
        self.t = c / a
        self.panels = int(math.ceil(max(self.t, 0.0))) + _TAIL_EFOLDS
        nodes, weights = np.polynomial.legendre.leggauss(_GL_NODES)
        self.u = 0.5 * (nodes + 1.0)  # nodes mapped to [0, 1]
        self.w = 0.5 * weights        # weights for [0, 1]
        lower = a * np.arange(self.panels)
        x = lower[:, None] + a * self.u[None, :]
        f = expit(self.t - x / a)
        q2 = a * (f * x**2) @ self.w  # ∫ x² f over each panel
        q1 = a * (f * x) @ self.w     # ∫ x f over each panel
        # Prefix sums of x² f and suffix sums of x f: sums of positive terms,
        # so each is accurate to rounding wherever it is evaluated.
        self.prefix2 = np.concatenate(([0.0], np.cumsum(q2)))
        self.suffix1 = np.concatenate((np.cumsum(q1[::-1])[::-1], [0.0]))
        self.J2 = float(self.prefix2[-1])
        self.J1 = float(self.suffix1[0])
        self._expit = expit

    def v_over_z(self, r: np.ndarray) -> np.ndarray:
        """V(r)/Z, hartree, for an array of radii (bohr)."""
        out = np.empty_like(r)
        flat_r, flat_out = r.reshape(-1), out.reshape(-1)
        for start in range(0, flat_r.size, _CHUNK):
            stop = start + _CHUNK
            flat_out[start:stop] = self._chunk(flat_r[start:stop])
        return out

    def _chunk(self, r: np.ndarray) -> np.ndarray:
        a = self.a
        j = np.floor(r / a)
        inside = j < self.panels
        j = np.clip(j, 0, self.panels - 1).astype(np.intp)
        lower = a * j
        span = r - lower
        x = lower[:, None] + span[:, None] * self.u[None, :]
        f = self._expit(self.t - x / a)
        partial2 = span * ((f * x**2) @ self.w)  # ∫_{lower}^{r} x² f
        partial1 = span * ((f * x) @ self.w)     # ∫_{lower}^{r} x f
        first = j == 0
        safe_r = np.where(first, 1.0, r)
        # In the first panel q(r)/r = r² ∫_0^1 u² f(r u) du has no 0/0 at r = 0.
        q_over_r = np.where(
            first,
            r**2 * ((f * self.u[None, :] ** 2) @ self.w),
            (self.prefix2[j] + partial2) / safe_r,
        )
        tail = self.suffix1[j] - partial1
        v = -(q_over_r + tail) / self.J2
        # Beyond the last panel the density is below e^-48 of its centre value.
        far = ~inside
        if far.any():
            v[far] = -1.0 / r[far]
        return v


def _fermi_moment_ratio(t: float) -> float:
    """∫ s⁴ f ds / ∫ s² f ds for f = 1/(1 + e^(s - t)), by panel quadrature."""
    tables = _FermiTables(t, 1.0)
    x = np.arange(tables.panels)[:, None] + tables.u[None, :]
    f = tables._expit(t - x)
    j4 = float(((f * x**4) @ tables.w).sum())
    return j4 / tables.J2


@lru_cache(maxsize=64)
def _fermi_half_density_radius(radius: float, diffuseness: float) -> float:
    from scipy.optimize import brentq

    target = (radius / diffuseness) ** 2
    t_low = -30.0
    if target <= _fermi_moment_ratio(t_low):
        limit = math.sqrt(_fermi_moment_ratio(t_low))
        raise InputError(
            f"parameter 'radius' of finite_nucleus: the fermi model with diffuseness "
            f"{diffuseness:.6g} bohr needs an rms radius > sqrt(12)*diffuseness = "
            f"{limit * diffuseness:.6g} bohr (got {radius:.6g} bohr); give a smaller "
            "diffuseness or use the uniform or gaussian model", parameter="radius", family="finite_nucleus"
        )
    t_high = math.sqrt(5.0 / 3.0) * radius / diffuseness + 5.0
    t = brentq(lambda s: _fermi_moment_ratio(s) - target, t_low, t_high,
               xtol=1e-15, rtol=4 * np.finfo(float).eps, maxiter=200)
    return t * diffuseness


def fermi_half_density_radius(radius: float, diffuseness: float) -> float:
    """Half-density radius c (bohr) of the Fermi shape with this rms radius and a.

    Raises
    ------
    InputError
        If radius <= sqrt(12)·diffuseness (no Fermi shape has so small an rms radius).
    """
    return _fermi_half_density_radius(float(radius), float(diffuseness))


@lru_cache(maxsize=64)
def _fermi_tables(radius: float, diffuseness: float) -> _FermiTables:
    return _FermiTables(_fermi_half_density_radius(radius, diffuseness), diffuseness)


@lru_cache(maxsize=64)
def _shape(radius: float, model: str, diffuseness: float) -> NuclearShape:
    if model == "uniform":
        R = math.sqrt(5.0 / 3.0) * radius
        return NuclearShape(model, radius, sharp_radius=R, v0_over_z=-1.5 / R)
    if model == "gaussian":
        sigma = radius / math.sqrt(3.0)
        return NuclearShape(model, radius, sigma=sigma, v0_over_z=-math.sqrt(2.0 / math.pi) / sigma)
    if model == "fermi":
        tables = _fermi_tables(radius, diffuseness)
        return NuclearShape(model, radius, half_density_radius=tables.c, diffuseness=diffuseness,
                            v0_over_z=-tables.J1 / tables.J2)
    raise InputError(f"parameter 'model' of finite_nucleus must be one of {', '.join(MODELS)}; "
                     f"got {model!r}", parameter="model", family="finite_nucleus")


def nuclear_shape(radius: float, model: str = "uniform",
                  diffuseness: float = _DEFAULT_DIFFUSENESS) -> NuclearShape:
    """The :class:`NuclearShape` (sharp radius, σ or c) for an rms radius in bohr."""
    return _shape(float(radius), model, float(diffuseness))


def charge_density(r, Z=1.0, radius=_PROTON_RMS_RADIUS, model="uniform",
                   diffuseness=_DEFAULT_DIFFUSENESS):
    """ρ(r), charge per bohr³ in units of e, normalized to 4π∫ρ r² dr = Z."""
    r = np.asarray(r, dtype=float)
    shape = nuclear_shape(radius, model, diffuseness)
    if model == "uniform":
        R = shape.sharp_radius
        return np.where(r < R, Z / (4.0 / 3.0 * math.pi * R**3), 0.0)
    if model == "gaussian":
        s = shape.sigma
        return Z * np.exp(-0.5 * (r / s) ** 2) / ((2.0 * math.pi) ** 1.5 * s**3)
    from scipy.special import expit

    tables = _fermi_tables(float(radius), float(diffuseness))
    return Z * expit((tables.c - r) / tables.a) / (4.0 * math.pi * tables.J2)


def V(r, Z, radius, model, diffuseness):
    """Electrostatic potential energy in hartree of charge -e at r (bohr)."""
    r = np.asarray(r, dtype=float)
    shape = nuclear_shape(radius, model, diffuseness)
    if model == "uniform":
        R = shape.sharp_radius
        inside = r < R
        return Z * np.where(inside, -(3.0 - (r / R) ** 2) / (2.0 * R),
                            -1.0 / np.where(inside, R, r))
    if model == "gaussian":
        from scipy.special import erf

        s = shape.sigma
        positive = r > 0
        safe = np.where(positive, r, 1.0)
        return Z * np.where(positive, -erf(r / (math.sqrt(2.0) * s)) / safe, shape.v0_over_z)
    return Z * _fermi_tables(float(radius), float(diffuseness)).v_over_z(r)


def validate(Z, radius, model, diffuseness):
    """Raise InputError when no distribution of this model has that rms radius."""
    nuclear_shape(radius, model, diffuseness)


def v_infinity(Z, radius, model, diffuseness):
    return 0.0


def small_r(Z, radius, model, diffuseness):
    return (Z * nuclear_shape(radius, model, diffuseness).v0_over_z, 0.0)


def breakpoints(Z, radius, model, diffuseness):
    shape = nuclear_shape(radius, model, diffuseness)
    return [shape.sharp_radius] if model == "uniform" else []
