"""Observables of relativistic levels: the normalized Dirac components and <r^k> from G^2 + F^2.

A Dirac level's samples hold u = G / sqrt(A) of the exact second-order form (see
:mod:`radsolve.core.relativistic.effective`), on every grid of its refinement.  On each grid

    G = sqrt(A) u,   F = hbar c (G' + kappa G / r) / A,   A = W - V + S + 2 mc^2,

(the first Dirac equation solved for F; G' by fourth-order central differences in the grid variable), normalized
so that the integral of G^2 + F^2 is 1; a quantity computed on every grid is extrapolated to zero
step (Richardson, orders 2, 4, ...), and its estimate is the extrapolation's plus the rounding floor.
Klein-Gordon levels: u itself with the charge density's normalization is not implemented here.
"""

from __future__ import annotations

import math

import numpy as np

from radsolve.analysis.observables import Estimate
from radsolve.errors import InputError

#: Error orders of the central differences and of the samples (both methods' series are even).
_ORDERS = (2, 4, 6, 8)


def _dirac_level(result, label: str, equations=("dirac",)):
    if getattr(result, "equation", "schrodinger") not in equations:
        raise InputError(f"this needs a result of equation={' or '.join(repr(e) for e in equations)}",
                         parameter="equation")
    try:
        level = result.level(label)
    except KeyError:
        raise InputError(f"no level {label!r} in this result; levels: "
                         + ", ".join(lev.label for lev in result.levels), parameter="level") from None
    if not level.samples:
        raise InputError(f"level {label} carries no wavefunction samples", parameter="level")
    return level


def _components(result, level, sample):
    """(r, weights, G, F) on one sample grid, normalized: sum(weights (G^2 + F^2)) = 1."""
    from radsolve.core.relativistic.effective import kappa_of
    from radsolve.units import unit_system

    pot = result.potential
    r, w, u = sample.r, sample.weights, sample.u
    v = _potential_on(result, level, r)
    system = unit_system(result.units)
    hc = system.hbar_c()
    if getattr(result, "scalar", False):
        with np.errstate(all="ignore"):
            v = v - np.asarray(pot.scalar(r, finite=False), dtype=float)  # A = W - V + S + 2mc^2
    big_a = sample.energy - v + 2.0 * system.rest_energy(result.mass)
    inside = u != 0.0
    g = np.where(inside, np.sqrt(np.where(inside, big_a, 1.0)) * u, 0.0)
    jacobian = w / sample.step
    dg = _derivative(g, sample.step) / jacobian
    f = np.where(inside, hc * (dg + kappa_of(level.l, level.j) * g / r) / np.where(inside, big_a, 1.0), 0.0)
    norm = math.sqrt(float(np.sum(w * (g * g + f * f))))
    return r, w, g / norm, f / norm


def _potential_on(result, level, r) -> np.ndarray:
    """V of the level's channel (the family's V_l where it has one) at radii r, infinities kept."""
    pot = result.potential
    channel = pot.channel(level.l, None) if getattr(pot, "l_dependent", False) else pot
    with np.errstate(all="ignore"):
        return np.asarray(channel.raw(r), dtype=float)


def _kg_components(result, level, sample):
    """(r, weights, u, rho) of a Klein-Gordon level on one grid, normalized with the charge density.

    rho = (W - V + mc^2) / mc^2 (the time component of the conserved current of a stationary state
    divided by its non-relativistic limit; a Lorentz scalar enters as a mass and leaves it unchanged),
    normalized so that the integral of rho u^2 dr is 1 (textbook, e.g. Greiner, "Relativistic Quantum
    Mechanics: Wave Equations", 2000, ch. 1).
    """
    from radsolve.units import unit_system

    r, w, u = sample.r, sample.weights, sample.u
    v = _potential_on(result, level, r)
    rest = unit_system(result.units).rest_energy(result.mass)
    rho = np.where(u != 0.0, (sample.energy - v + rest) / rest, 0.0)
    norm = math.sqrt(float(np.sum(w * rho * u * u)))
    return r, w, u / norm, rho


def _density(result, level, sample):
    """(r, weights, probability density per unit r) on one grid: G^2 + F^2 (Dirac), rho u^2 (Klein-Gordon)."""
    if result.equation == "dirac":
        r, w, g, f = _components(result, level, sample)
        return r, w, g * g + f * f
    r, w, u, rho = _kg_components(result, level, sample)
    return r, w, rho * u * u


def _derivative(y: np.ndarray, h: float) -> np.ndarray:
    """dy/dx on a uniform grid: five-point central differences inside (fourth order), np.gradient at the ends.

    Fourth order because F = hbar c (G' + kappa G / r)/A cancels G' against G/r near the origin.
    """
    out = np.gradient(y, h)
    out[2:-2] = (y[:-4] - 8.0 * y[1:-3] + 8.0 * y[3:-1] - y[4:]) / (12.0 * h)
    return out


def dirac_components(result, label: str):
    """(r, G, F) of a Dirac level on its finest grid, normalized to 1 (bohr^-1/2, or fm^-1/2).

    Not extrapolated: G carries the finest grid's error, and F, where it is the small difference
    G' + kappa G / r (near the origin of light ions, kappa < 0), loses digits: about 1e-2 relative for
    hydrogen's 1s1/2 at r ~ 1e-4 bohr.  Integrals (:func:`moment`) are extrapolated over every grid.
    """
    level = _dirac_level(result, label)
    r, _, g, f = _components(result, level, level.samples[-1])
    return r, g, f


def moment(result, label: str, k: float, tol: float | None = None) -> Estimate:
    """<r^k> of a Dirac (G^2 + F^2) or Klein-Gordon (rho u^2) level (bohr^k or fm^k), extrapolated over its grids.

    Needs k > -(2 gamma + 1), gamma the origin exponent of G (a point charge: sqrt(kappa^2 - (Z alpha)^2)).
    """
    if isinstance(k, bool) or not isinstance(k, (int, float)) or not math.isfinite(float(k)):
        raise InputError(f"k must be a finite real number, got {k!r}", parameter="k")
    return _integral_estimate(result, label, lambda r: r ** float(k),
                              ("bohr" if result.units == "atomic" else "fm") + ("" if k == 1 else f"^{k:g}"),
                              tol=tol)


def probability_inside(result, label: str, radius: float, tol: float | None = None) -> Estimate:
    """P(r < radius) of a Dirac or Klein-Gordon level, from the same density as :func:`moment`."""
    if isinstance(radius, bool) or not isinstance(radius, (int, float)) or not radius > 0 \
            or not math.isfinite(radius):
        raise InputError(f"radius must be a positive length, got {radius!r}", parameter="radius")
    return _integral_estimate(result, label, None, "", upto=float(radius), tol=tol)


def _partial_sum(r, w, density, radius):
    """Integral of density dr from the grid's start to ``radius``: a cubic spline in the uniform grid index."""
    from scipy.interpolate import CubicSpline

    if radius >= r[-1]:
        return float(np.sum(w * density))
    index = np.arange(r.size, dtype=float)
    # w is dr/dxi times the step: the integrand per unit index; xi(radius) from a spline of index in ln r
    where = float(CubicSpline(np.log(r), index)(math.log(radius))) if radius > r[0] else 0.0
    return float(CubicSpline(index, w * density).integrate(0.0, where))


def _power_law_start(r, f, first):
    """(integral of f from 0 to r[first], its error) for f ~ r^p there; p from two spans beyond ``first``."""
    if first + 16 >= r.size or f[first] == 0.0:
        return 0.0, float(np.sum(np.abs(f[:first + 1]) * np.gradient(r)[:first + 1]))
    with np.errstate(all="ignore"):
        powers = [math.log(abs(f[first + k] / f[first])) / math.log(r[first + k] / r[first]) for k in (8, 16)]
    if all(math.isfinite(p) and p < -1.0 - 1e-3 for p in powers):
        return math.inf, math.inf  # f ~ r^p with p < -1: the integral diverges at the origin
    if not all(math.isfinite(p) and p > -1.0 for p in powers):
        return 0.0, math.inf  # no clean law: no claim
    shares = [f[first] * r[first] / (p + 1.0) for p in powers]
    return float(shares[0]), float(abs(shares[0] - shares[1]) + 1e-3 * abs(shares[0]))


def _integral_estimate(result, label, weight, unit, upto=None, tol=None) -> Estimate:
    """The integral of density * weight (or up to ``upto``), judged against 10 tol (default the solve's)."""
    from radsolve.core.extrapolation import richardson
    from radsolve.units import unit_system

    level = _dirac_level(result, label, ("dirac", "klein-gordon"))
    values = []
    system = unit_system(result.units)
    rest = system.rest_energy(result.mass)
    for sample in level.samples:
        r, w, density = _density(result, level, sample)
        # Near the origin, where u is below 1e-6 of its maximum, F comes from differences of tiny numbers
        # and the grid may start where the integrand still matters (a charge density ~ Z/r, an origin
        # exponent below 1): those radii are replaced by the integrand's power law f ~ r^p, read from
        # two spans beyond them and integrated from 0 (their difference, and a thousandth, as error).
        inside = np.nonzero(np.abs(sample.u) > 1e-6 * np.max(np.abs(sample.u)))[0]
        first = int(inside[0]) if inside.size else 0
        f = density * weight(r) if upto is None else density
        terms = w * density * (weight(r) if upto is None else (r < upto))
        below, below_error = _power_law_start(r, f, first)
        if upto is None:
            values.append(float(np.sum(terms[first:])) + below)
        else:
            values.append(_partial_sum(r[first:], w[first:], density[first:], upto) + below
                          if upto > r[first] else float(np.sum(terms)))
    # the scale and what the wall may cut off (the last decay length, taken whole as uncertain),
    # from the finest grid
    scale = float(np.sum(np.abs(terms)))
    if math.isfinite(result.v_infinity):
        w_rel = sample.energy - result.v_infinity
        decay = math.sqrt(max(-w_rel * (w_rel + 2.0 * rest), 1e-300)) / system.hbar_c()
    else:  # confining (a growing scalar): the density's own e-folding rate before the wall
        a, b = max(r.size - 20, 0), max(r.size - 10, 1)
        with np.errstate(all="ignore"):
            decay = 0.5 * math.log(abs(density[a]) / abs(density[b])) / (r[b] - r[a])
        decay = decay if math.isfinite(decay) and decay > 0 else 1e-300
    edges = float(np.sum(np.abs(terms[r > r[-1] - 1.0 / decay]))) + below_error
    # The states carry the rounding noise their energy shows (relative), 1e-13 at least.
    floor = (level.convergence or {}).get("rounding_floor", 0.0) or 0.0
    rounding = max(1e-13, float(floor) / max(abs(level.energy), 1e-300))
    if math.isinf(values[-1]):
        return Estimate(math.inf, math.inf, unit, None, False)  # diverges (see _power_law_start)
    if len(values) < 3:
        return Estimate(values[-1], math.inf, unit, None, False)
    value, estimate, observed = richardson(values, _ORDERS, rounding)
    # Measured against the Dirac-Coulomb 1s moments (Z = 1 ... 92, k = -1 ... 3) the Richardson part
    # understated the error up to 3-fold for k = 3: widened tenfold.
    estimate = 10.0 * max(estimate, rounding * scale) + edges
    return Estimate(float(value), float(estimate), unit, observed,
                    bool(math.isfinite(estimate) and estimate <= 10.0 * (tol or result.tol) * max(abs(value), 1e-300)))


# ----------------------------------------------------------------------------- E1 lines

def _three_j_half(j1: float, j2: float) -> float:
    """The 3j symbol (j1 j2 1; -1/2 1/2 0) (Racah's formula; j1, j2 half-integers)."""
    from math import factorial as fact

    a, b, c = j1, j2, 1.0
    m1, m2, m3 = -0.5, 0.5, 0.0
    if abs(a - b) > c or a + b < c:
        return 0.0
    def f(x):
        return fact(int(round(x)))
    tri = f(a + b - c) * f(a - b + c) * f(-a + b + c) / f(a + b + c + 1)
    pre = math.sqrt(tri * f(a + m1) * f(a - m1) * f(b + m2) * f(b - m2) * f(c + m3) * f(c - m3))
    total = 0.0
    for t in range(0, int(round(a + b + c)) + 2):
        dens = [t, c - b + t + m1, c - a + t - m2, a + b - c - t, a - t - m1, b - t + m2]
        if any(d < -1e-9 for d in dens):
            continue
        total += (-1) ** t / math.prod(f(d) for d in dens)
    return (-1) ** int(round(a - b - m3)) * pre * total


def _on(r_from, y_from, r_to):
    """y(r) moved to other radii by a cubic spline in ln r (zero outside the sample's range)."""
    from scipy.interpolate import CubicSpline

    keep = r_from > 0
    spline = CubicSpline(np.log(r_from[keep]), y_from[keep])
    inside = (r_to >= r_from[keep][0]) & (r_to <= r_from[keep][-1])
    out = np.zeros_like(r_to)
    out[inside] = spline(np.log(r_to[inside]))
    return out


#: The gauge and limit of every Dirac E1 quantity, written into docs and output.
GAUGE = ("long-wavelength limit (omega r / c -> 0) of the length form (Babushkin gauge): "
         "R = integral of (G_u G_l + F_u F_l) r dr")
#: ... and of the Klein-Gordon ones.
KG_GAUGE = ("long-wavelength limit (omega r / c -> 0) of the length form: R = integral of u_u u_l r "
            "(W_u + W_l + 2 mc^2 - 2 V) / (2 mc^2) dr, u normalized with the charge density")


def _e1_pair(result, upper: str, lower: str):
    """The two levels of an E1 line, checked: l changes by 1, |delta j| <= 1, upper above lower."""
    up, low = _dirac_level(result, upper), _dirac_level(result, lower)
    if abs(up.l - low.l) != 1 or (up.j is not None and abs(up.j - low.j) > 1.0):
        raise InputError(f"{upper} -> {lower} is not an E1 line (needs l changing by 1 and |delta j| <= 1)",
                         parameter="level")
    if up.energy - low.energy <= 0:
        raise InputError(f"{upper} lies below {lower}: no emission line", parameter="level")
    return up, low


def radial_e1(result, up, low) -> Estimate:
    """R = integral of (G_u G_l + F_u F_l) r dr (bohr) of two Dirac levels, extrapolated over their grids.

    The two levels come from separate per-channel solves, so the upper's components are moved onto the
    lower's grid (cubic spline in ln r) on each grid of the same step, and R is extrapolated over those
    grids.  Signs: G > 0 as r -> 0 for both.  ``converged`` when the grid series' estimate is below
    100 tol |R|, the rule of the Schrodinger radial integrals; the estimate adds a measured floor,
    3 tol^0.7 |R| (see the code).
    """
    from radsolve.core.extrapolation import richardson

    steps = {round(s.step, 12): s for s in up.samples}
    values, tails = [], []
    for sl in low.samples:
        su = steps.get(round(sl.step, 12))
        if su is None:
            continue
        a, b = (result, up, su), (result, low, sl)
        if su.r[-1] < sl.r[-1]:
            a, b = b, a  # integrate on the grid that reaches further; continue the other beyond its box
        ra, wa, parts_a, weight = _e1_parts(*a)
        rb, _, parts_b, _ = _e1_parts(*b)
        inside = ra <= rb[-1]
        beyond = _decay_factor(result, b[1], b[2], rb[-1], ra[~inside])
        terms = wa * ra * sum(pa * np.concatenate([_on(rb, pb, ra[inside]), pb[-1] * beyond])
                              for pa, pb in zip(parts_a, parts_b))
        if result.equation == "klein-gordon":
            terms = terms * _kg_mixed_weight(result, a[2].energy + b[2].energy, ra, weight)
        values.append(float(np.sum(terms)))
        tails.append(float(np.sum(np.abs(terms[~inside]))))
    if len(values) >= 3:
        radial, spread, observed = richardson(values, _ORDERS, 1e-13)
        spread *= 10.0  # as for the moments: measured understatement, widened tenfold
    elif values:
        radial, observed = values[-1], None
        spread = abs(values[-1] - values[0]) if len(values) > 1 else math.inf
    else:
        raise InputError(f"{up.label} and {low.label} have no grids of a common step", parameter="level")
    # the continued tail is a decaying exponential without its power-law factor: half of it counted as error
    spread = max(float(spread), 1e-13 * abs(radial)) + 0.5 * tails[-1]
    converged = bool(math.isfinite(spread) and spread <= 100.0 * result.tol * abs(radial))
    # Against the exact 2p3/2 -> 1s1/2 integral of a point charge (Z = 1 ... 92, tol 1e-6 ... 1e-12, both
    # methods) the extrapolated R keeps an offset that the grid series does not show, up to 0.3 tol^0.7
    # relative (Z = 92): the estimate carries 3 tol^0.7 |R| beside the series' part.
    spread += 3.0 * result.tol ** 0.7 * abs(radial)
    return Estimate(float(radial), spread, "bohr", observed, converged)


def _e1_parts(result, level, sample):
    """(r, weights, the components whose products make the dipole integrand, V on r) of one level
    on one grid: (G, F) for Dirac, (u,) normalized with the charge density for Klein-Gordon."""
    if result.equation == "dirac":
        r, w, g, f = _components(result, level, sample)
        return r, w, (g, f), None
    r, w, u, _ = _kg_components(result, level, sample)
    v = _potential_on(result, level, r)
    return r, w, (u,), np.where(np.isfinite(v), v, 0.0)  # u vanishes where V is infinite


def _kg_mixed_weight(result, energy_sum: float, r, potential):
    """(W_u + W_l + 2 mc^2 - 2 V) / (2 mc^2): the Klein-Gordon dipole's weight.

    For a spin-0 particle in V, p^2 u = ((W - V + mc^2)^2 - m^2 c^4) u / c^2, so the commutator
    [p^2, r] = -2i p gives <u|p|l> = (i/2)(W_u - W_l) <u| r (W_u + W_l + 2 mc^2 - 2V) |l> / c^2 with
    states normalized by their charge density (textbook construction; it becomes the Schrodinger
    dipole as (W - V)/mc^2 -> 0).  This is the length form of the velocity-form current element.
    """
    from radsolve.units import unit_system

    rest = unit_system(result.units).rest_energy(result.mass)
    return (energy_sum + 2.0 * rest - 2.0 * potential) / (2.0 * rest)


def _decay_factor(result, level, sample, r_end, r):
    """exp(-k (r - r_end)), k = sqrt(-W (W + 2 mc^2)) / hbar c: a level continued beyond its box.

    Each level's box is sized for its own energy; the dipole integrand with a more extended partner
    decays more slowly, so the tighter level is continued on its asymptotic decay (the power-law factor
    r^(Z/k) is left out, and half of what the continuation adds is counted as error).
    """
    from radsolve.units import unit_system

    w = sample.energy - (result.v_infinity if math.isfinite(result.v_infinity) else 0.0)
    system = unit_system(result.units)
    k = math.sqrt(max(-w * (w + 2.0 * system.rest_energy(result.mass)), 0.0)) / system.hbar_c()
    return np.exp(-k * (np.asarray(r) - r_end))


def _angular(up, low) -> float:
    """(2 j_u + 1)(2 j_l + 1) (j_l j_u 1; -1/2 1/2 0)^2: the line strength is this times R^2."""
    return (2 * up.j + 1) * (2 * low.j + 1) * _three_j_half(low.j, up.j) ** 2


def e1_rate(result, upper: str, lower: str) -> Estimate:
    """Einstein A of the E1 line upper -> lower between two Dirac levels of one result, s^-1.

    Long-wavelength limit of the length form (Babushkin gauge): A = (4 omega^3 / 3 c^3) S / (2 j_u + 1),
    S = (2 j_u + 1)(2 j_l + 1) (j_l j_u 1; -1/2 1/2 0)^2 R^2 (atomic units), R from :func:`radial_e1`,
    l_u + l_l odd (textbook, e.g. Grant, "Relativistic Quantum Theory of Atoms and Molecules", 2007, for
    the angular factor).
    """
    from radsolve.analysis.radiative import _constants, e1_line

    if result.units != "atomic":
        raise InputError("E1 rates of Dirac levels are implemented in atomic units only", parameter="units")
    up, low = _e1_pair(result, upper, lower)
    radial = radial_e1(result, up, low)
    line = e1_line(up, low, up.energy - low.energy, abs(up.error_estimate) + abs(low.error_estimate), radial,
                   _angular(up, low) * radial.value**2, 2 * up.j + 1, 2 * low.j + 1, _constants())
    return Estimate(line.einstein_A, line.einstein_A_error, "s^-1", None,
                    bool(line.einstein_A_error <= 1e-6 * line.einstein_A))


def e1_lines(result) -> list[dict]:
    """Every E1 line among the Dirac levels of one result, with each upper level's lifetime and branching.

    One dict per line: ``upper``, ``lower``, ``omega`` (hartree), ``rate`` and ``rate_error`` (s^-1),
    ``lifetime`` and ``lifetime_error`` of the upper level (s; from the lines to the levels in this
    result only: a lower level missing from it is a missing channel), ``branching`` (the line's share
    of its upper level's decays).  Levels closer than their summed estimates are degenerate: no line.
    """
    levels = [lev for lev in result.levels if lev.samples]
    lines = []
    for up in levels:
        for low in levels:
            if (up.l + low.l) % 2 == 0 or abs(up.l - low.l) != 1 or abs(up.j - low.j) > 1.0:
                continue
            if up.energy - low.energy <= 10.0 * (up.error_estimate + low.error_estimate):
                continue
            rate = e1_rate(result, up.label, low.label)
            lines.append({"upper": up.label, "lower": low.label, "omega": up.energy - low.energy,
                          "rate": rate.value, "rate_error": rate.error})
    totals: dict = {}
    for line in lines:
        total, err = totals.get(line["upper"], (0.0, 0.0))
        totals[line["upper"]] = (total + line["rate"], err + line["rate_error"])
    for line in lines:
        total, err = totals[line["upper"]]
        line["lifetime"] = 1.0 / total
        line["lifetime_error"] = err / total**2
        line["branching"] = line["rate"] / total
    return lines


# ----------------------------------------------------------------------------- one relativistic state

from dataclasses import dataclass, field  # noqa: E402  (kept beside the classes that use them)
from typing import Any  # noqa: E402

from radsolve.core.protocol import Note, Outcome, ResultProtocol, message_of  # noqa: E402


@dataclass
class RelativisticWave:
    """The normalized components of one relativistic level as functions of r (what ``wave --out`` writes).

    Dirac: ``columns`` G and F (integral of G^2 + F^2 dr = 1, G > 0 as r -> 0); Klein-Gordon: u with the
    charge density's normalization (integral of rho u^2 dr = 1, rho = (W - V + mc^2)/mc^2), and rho.
    On the finest grid of the refinement (not extrapolated), or interpolated to given radii (cubic
    spline in ln r).
    """

    r: np.ndarray
    columns: dict
    label: str
    equation: str
    energy: float
    energy_error: float
    units: str
    on_grid: bool
    properties: dict = field(default_factory=dict)

    def metadata(self) -> dict:
        length = "bohr" if self.units == "atomic" else "fm"
        normalization = ("integral of (G^2 + F^2) dr = 1; G > 0 as r -> 0" if self.equation == "dirac" else
                         "integral of rho u^2 dr = 1, rho = (W - V + mc^2) / mc^2 (Klein-Gordon charge density)")
        return {"label": self.label, "equation": self.equation, "energy": self.energy,
                "energy_error": self.energy_error, "energy_unit": "hartree" if self.units == "atomic" else "MeV",
                "units": {"r": length, **{k: f"{length}^-1/2" for k in self.columns if k != "rho"}},
                "radii": "solver grid (finest)" if self.on_grid else "given", "normalization": normalization,
                "properties": self.properties}

    def _named_columns(self) -> dict:
        length = "bohr" if self.units == "atomic" else "fm"
        out = {f"r/{length}": self.r}
        for name, values in self.columns.items():
            out[name if name == "rho" else f"{name}/{length}^-1/2"] = values
        return out

    def to_csv(self) -> str:
        from radsolve.core.serialize import records_to_csv

        cols = self._named_columns()
        return records_to_csv([dict(zip(cols, map(float, row))) for row in zip(*cols.values())])

    def to_dict(self) -> dict:
        return {**self.metadata(), "r": self.r.tolist(), **{k: v.tolist() for k, v in self.columns.items()}}

    def to_json(self) -> str:
        from radsolve.core.serialize import dumps_json

        return dumps_json(self.to_dict())

    def save(self, path):
        """Write to ``path`` in the format its extension names (.csv, .json, .npz)."""
        from radsolve.core.wavefunctions import save_export

        return save_export(path, self.to_csv, self.to_json, self.metadata(), {"r": self.r, **self.columns})


@dataclass(repr=False)
class DiracStateSummary(ResultProtocol):
    """One Dirac or Klein-Gordon level with its judged quantities, as :func:`relativistic_state` returns.

    Attributes
    ----------
    label : str
        ``2p3/2`` (nuclear units: the shell-model n); ``2p`` for Klein-Gordon.
    n, l : int
    j : float or None
        None for Klein-Gordon.
    quantities : list of (name, Estimate)
        ``E - mc^2`` first, then the moments and probabilities.
    potential, mass, tol, units
        As for the solve.
    equation : str
        ``"dirac"`` or ``"klein-gordon"``.
    result : SolveResult
        The solve the level came from.
    """

    label: str
    n: int
    l: int
    j: float | None
    quantities: list
    potential: Any
    mass: float
    tol: float
    units: str = "atomic"
    result: Any = field(default=None, repr=False)
    equation: str = "dirac"

    @property
    def level(self):
        return self.result.level(self.label)

    @property
    def unconverged(self) -> list[str]:
        return [name for name, est in self.quantities if not est.converged]

    @property
    def status(self) -> Outcome:
        return Outcome.SUCCESS if not self.unconverged else Outcome.NOT_CONVERGED

    @property
    def notes(self) -> tuple[Note, ...]:
        divergent = [name for name, est in self.quantities if math.isinf(est.value)]
        finite = [name for name in self.unconverged if name not in divergent]
        notes = []
        if divergent:
            notes.append(Note("divergent", "infinite (the integrand grows faster than 1/r towards the origin): "
                              + ", ".join(divergent), ", ".join(divergent)))
        if finite:
            notes.append(Note("not_converged", "NOT CONVERGED to their targets: " + ", ".join(finite)
                              + "; their estimates are what was achieved", ", ".join(finite)))
        return tuple(notes)

    @property
    def message(self) -> str:
        return message_of(self.notes, f"{self.label}: every quantity met its target")

    def _header(self) -> list[tuple[str, Any]]:
        return [("state", self.label), ("equation", self.equation), ("potential", self.potential.name),
                ("tol", self.tol)]

    def _table_columns(self):
        return ("quantity", "value", "error", "unit", "converged")

    def records(self, unit: str | None = None) -> list[dict[str, Any]]:
        """One row per quantity; ``unit`` (atomic results) converts the energy from hartree."""
        factor = 1.0
        if unit is not None and self.units == "atomic":
            from radsolve.units import energy_unit_factor

            factor = energy_unit_factor(unit)
        rows = []
        for name, est in self.quantities:
            scale = factor if est.unit == "hartree" else 1.0
            rows.append({"quantity": name, "value": est.value / scale, "error": est.error / scale,
                         "unit": unit if scale != 1.0 or (est.unit == "hartree" and unit) else est.unit,
                         "converged": bool(est.converged)})
        return rows

    def to_table(self, unit: str | None = None) -> str:
        """The quantities as a text table, energies in ``unit`` (atomic results), then the message."""
        params = ", ".join(f"{k} = {v:.6g}" if isinstance(v, float) else f"{k} = {v}"
                           for k, v in self.potential.parameters.items())
        out = [f"{self.equation} level {self.label} of {self.potential.name}" + (f" ({params})" if params else "")
               + f" | reduced mass {self.mass:.10g} | tol {self.tol:.1e}", ""]
        rows = self.records(unit)
        width = max(len(row["quantity"]) for row in rows)
        out.append(f"{'quantity':>{width}}  {'value':>20}  {'error':>10}  {'unit':<8}  converged")
        for row in rows:
            out.append(f"{row['quantity']:>{width}}  {row['value']:>20.12g}  {row['error']:>10.3g}  "
                       f"{row['unit']:<8}  {'yes' if row['converged'] else 'NO'}")
        return "\n".join(out + ["", self.message]) + "\n"

    def to_dict(self, unit: str | None = None) -> dict[str, Any]:
        from radsolve.core.relativistic.front import CONVENTIONS

        return {"state": self.label, "n": self.n, "l": self.l, "j": self.j, "equation": self.equation,
                "convention": CONVENTIONS[self.equation], "potential": self.potential.name,
                "parameters": dict(self.potential.parameters), "units": self.units, "mass": self.mass,
                "tol": self.tol, "success": bool(self.success), "status": str(self.status),
                "message": self.message, "notes": [n.to_dict() for n in self.notes],
                "quantities": self.records(unit)}

    def wavefunction(self, radii=None) -> RelativisticWave:
        """(G, F) of a Dirac level or (u, rho) of a Klein-Gordon level, on the finest grid or at ``radii``
        (numbers in the system's length unit, or strings with a unit such as ``"2fm"``)."""
        level = self.level
        sample = level.samples[-1]
        if self.equation == "dirac":
            r, _, g, f = _components(self.result, level, sample)
            columns = {"G": g, "F": f}
        else:
            r, _, u, rho = _kg_components(self.result, level, sample)
            columns = {"u": u, "rho": rho}
        # near the origin, where u is below 1e-6 of its maximum, the differences that give F are rounding
        # noise: those radii are left out of the export
        first = int(np.argmax(np.abs(sample.u) > 1e-6 * np.max(np.abs(sample.u))))
        r, columns = r[first:], {k: v[first:] for k, v in columns.items()}
        on_grid = radii is None
        if not on_grid:
            from radsolve.units import parse_quantity_in

            wanted = np.atleast_1d(np.asarray(
                [parse_quantity_in(x, "length", self.units, name="r", parameter="r") if isinstance(x, str) else x
                 for x in np.atleast_1d(np.asarray(radii, dtype=object))], dtype=float))
            if wanted.size == 0 or not np.all(np.isfinite(wanted)) or np.any(wanted <= 0):
                raise InputError("r must be positive finite radii", parameter="r")
            columns = {k: _on(r, v, wanted) for k, v in columns.items()}
            r = wanted
        return RelativisticWave(r=r, columns=columns, label=self.label, equation=self.equation,
                                energy=level.energy, energy_error=level.error_estimate, units=self.units,
                                on_grid=on_grid, properties={name: {"value": e.value, "error": e.error,
                                                                    "unit": e.unit, "converged": e.converged}
                                                             for name, e in self.quantities})


def validated_j(l: int, j) -> float:
    """j = l +- 1/2 as a float, from a number or a text such as ``"3/2"`` (InputError naming j otherwise)."""
    allowed = (0.5,) if l == 0 else (l - 0.5, l + 0.5)
    value = j
    if isinstance(j, str):
        text = j.strip()
        try:
            if "/" in text:
                num, den = text.split("/", 1)
                value = int(num) / int(den)
            else:
                value = float(text)
        except (ValueError, ZeroDivisionError):
            value = None
    if isinstance(value, bool) or not isinstance(value, (int, float)) or float(value) not in allowed:
        raise InputError(f"j must be l +- 1/2 for l = {l}: " + " or ".join(
            f"{int(2 * a)}/2" for a in allowed) + f"; got {j!r}", parameter="j")
    return float(value)


def relativistic_state(potential, n: int, l: int, j=None, *, equation: str = "dirac", mass=None,
                       tol: float = 1e-10, method: str = "fd", plugins=None, units: str | None = None,
                       scalar: bool = False, moments=(-1, 1, 2), inside=()) -> DiracStateSummary:
    """Solve for the level (n, l, j) of the Dirac or Klein-Gordon equation and judge its quantities.

    ``n`` counts as the labels do (n = nodes + l + 1; nuclear units nodes + 1); ``j`` (Dirac only;
    ``"3/2"`` or 1.5) is required for l > 0.  Quantities: the energy E - mc^2, <r^k> for k in ``moments``
    and P(r < R) for R in ``inside`` (numbers in the system's length unit, bohr or fm, or strings with a
    unit such as ``"3fm"``), from G^2 + F^2 (Dirac) or the charge density rho u^2 (Klein-Gordon,
    see :func:`_kg_components`); targets 10 tol relative, as for the Schrodinger observables.
    """
    from radsolve.core.relativistic import SCHRODINGER, validated_equation
    from radsolve.core.result import level_designation
    from radsolve.core.spectrum import solve

    equation = validated_equation(equation)
    if equation == SCHRODINGER:
        raise InputError("relativistic_state needs equation 'dirac' or 'klein-gordon' (radsolve.state "
                         "serves the Schrodinger equation)", parameter="equation")
    if isinstance(l, bool) or not isinstance(l, int) or l < 0:
        raise InputError(f"l must be a whole number >= 0, got {l!r}", parameter="l")
    if isinstance(n, bool) or not isinstance(n, int) or n < 1:
        raise InputError(f"n must be a whole number >= 1, got {n!r}", parameter="n")
    if equation == "dirac":
        if j is None:
            if l > 0:
                raise InputError(f"j must be given for a Dirac level with l = {l}: {2 * l - 1}/2 or "
                                 f"{2 * l + 1}/2", parameter="j")
            j = 0.5
        j = validated_j(l, j)
    elif j is not None:
        raise InputError("j is for equation='dirac' only (Klein-Gordon particles have spin 0)", parameter="j")
    for k in moments:
        if isinstance(k, bool) or not isinstance(k, (int, float)) or not math.isfinite(float(k)):
            raise InputError(f"moments must be finite real numbers, got {k!r}", parameter="moments")
    def checked_radii(system):
        from radsolve.units import parse_quantity_in

        out = []
        for radius in inside:
            value = parse_quantity_in(radius, "length", system, name="radius", parameter="radius") \
                if isinstance(radius, str) else radius
            if isinstance(value, bool) or not isinstance(value, (int, float)) or not (0 < value < math.inf):
                raise InputError(f"inside radii must be positive lengths, got {radius!r}", parameter="radius")
            out.append(float(value))
        return out

    checked_radii("atomic")  # before anything is solved (numbers and units; the system's are read below)
    from radsolve.potentials import as_potential
    from radsolve.units import family_unit_system

    potential = as_potential(potential, plugins)
    system = family_unit_system(potential.family, units).name
    if system == "atomic" and n < l + 1:
        raise InputError(f"n must be at least l + 1 = {l + 1} for l = {l} (n = nodes + l + 1), got {n}",
                         parameter="n")
    from radsolve.core.targets import TOL_RANGE, validated_tol

    tol = validated_tol(tol)
    energy = None
    # The energies may settle on fewer grids than the integrals need (the first-order shooting's often
    # do): when an integral misses its target, the level is solved once more at tol / 100 (not below the
    # smallest tol allowed) and the integrals taken from that solve, still judged against 10 tol.
    for solve_tol in (tol, max(tol / 100.0, TOL_RANGE[0])):
        # n = nodes + l + 1 (atomic) or nodes + 1 (nuclear): the level is the (nodes + 1)-th of its channel
        res = solve(potential, l=l, count=max(n - l, 1) if system == "atomic" else n, mass=mass, tol=solve_tol,
                    method=method, plugins=plugins, units=units, equation=equation,
                    **({"scalar": True} if scalar else {}))
        wanted = None
        for lev in res.levels:
            if lev.j == j and lev.n == n and lev.l == l:
                wanted = lev
        if wanted is None:
            label = level_designation(max(n - (l + 1 if res.units == "atomic" else 1), 0), l, j, res.units)[1]
            raise InputError(f"level {label} (n = {n}, l = {l}" + (f", j = {j:g}" if j else "") + ") is not "
                             f"among the bound levels found: {', '.join(x.label for x in res.levels) or 'none'}; "
                             f"{res.message}", parameter="n")
        if energy is None:
            energy = Estimate(wanted.energy, wanted.error_estimate, "hartree" if res.units == "atomic" else "MeV",
                              wanted.order, bool(wanted.converged))
        quantities = [("E - mc^2", energy)] + [(f"<r^{k:g}>", moment(res, wanted.label, k, tol=tol))
                                               for k in moments]
        length = "bohr" if res.units == "atomic" else "fm"
        quantities += [(f"P(r < {radius:g} {length})", probability_inside(res, wanted.label, radius, tol=tol))
                       for radius in checked_radii(res.units)]
        if all(est.converged for _, est in quantities[1:]) or solve_tol <= TOL_RANGE[0]:
            break
    return DiracStateSummary(label=wanted.label, n=wanted.n, l=l, j=j, quantities=quantities,
                             potential=res.potential, mass=res.mass, tol=tol, units=res.units, result=res,
                             equation=equation)


def dirac_state(potential, n: int, l: int, j: float, *, mass=None, tol: float = 1e-10, method: str = "fd",
                plugins=None, units: str | None = None, moments=(-1, 1, 2)) -> DiracStateSummary:
    """:func:`relativistic_state` of the Dirac equation (kept for scripts written before it)."""
    return relativistic_state(potential, n, l, j, equation="dirac", mass=mass, tol=tol, method=method,
                              plugins=plugins, units=units, moments=moments)


# ----------------------------------------------------------------------------- E1 tables

def dirac_transitions_from(result, nmax: int | None = None, *, dipole_charge: float = 1.0, occupied=()):
    """E1 lines, lifetimes and branching among the Dirac levels of one result, as a :class:`TransitionResult`.

    The same tables as the Schrodinger path, with j levels: lines between (l, j) and (l +- 1, j') with
    |j - j'| <= 1; degeneracies g = 2j + 1; line strength S = (2 j_u + 1)(2 j_l + 1)
    (j_l j_u 1; -1/2 1/2 0)^2 R^2 (e^2 bohr^2, the spin included); f = (2/3) omega S / g_lower;
    A = (4/3) alpha^3 omega^3 S / g_upper; R from :func:`radial_e1` in the gauge :data:`GAUGE`.
    Levels that agree within 10x their summed estimates (2s1/2 and 2p1/2 of a point charge) are
    degenerate: no line.  The completeness rule of the Schrodinger tables holds per (l, j) channel.
    """
    return _relativistic_transitions(result, "dirac", nmax, dipole_charge, occupied)


def klein_gordon_transitions_from(result, nmax: int | None = None, *, dipole_charge: float = 1.0, occupied=()):
    """E1 lines, lifetimes and branching among the Klein-Gordon (spin-0) levels of one result.

    The Schrodinger tables' angular rules (l -> l +- 1, g = 2l + 1, S = max(l_u, l_l) R^2), with R
    the dipole of the charge-normalized states weighted by (W_u + W_l + 2 mc^2 - 2 V)/(2 mc^2)
    (:data:`KG_GAUGE`, :func:`radial_e1`).  A local V only: an l-dependent potential is refused
    (the weight comes from a commutator that needs one V for both levels).
    """
    return _relativistic_transitions(result, "klein-gordon", nmax, dipole_charge, occupied)


def _relativistic_transitions(result, equation: str, nmax, dipole_charge, occupied):
    from radsolve.analysis.radiative import (_check_dipole_charge, _constants, _degenerate, assembled_transitions,
                                              decay_of, e1_line, levels_reached, lower_and_degenerate,
                                              unoccupied_levels)
    from radsolve.core.result import certificate_key

    name = "Dirac" if equation == "dirac" else "Klein-Gordon"
    _check_dipole_charge(dipole_charge)
    if getattr(result, "equation", "schrodinger") != equation:
        raise InputError(f"E1 tables of {name} levels need a result of equation={equation!r}",
                         parameter="equation")
    if result.units != "atomic":
        raise InputError(f"E1 tables of {name} levels are implemented in atomic units only", parameter="units")
    if equation == "klein-gordon" and getattr(result.potential, "l_dependent", False):
        raise InputError(f"E1 tables of Klein-Gordon levels need one local V for every l; "
                         f"{result.potential.name} is l-dependent", parameter="potential")
    levels = [lev for lev in result.levels if lev.samples]
    if not levels:
        raise InputError(f"potential {result.potential.name!r} has no bound level to connect ({result.message})")
    if nmax is None:
        nmax = max(lev.n for lev in levels)
    levels, filled = unoccupied_levels(levels, occupied)
    by_channel: dict = {key: [] for key in result.bound_counts}
    for lev in levels:
        by_channel.setdefault(certificate_key(lev.l, lev.j), []).append(lev)

    def partner_channels(lev):
        for l2 in (lev.l - 1, lev.l + 1):
            if lev.j is None:  # spin 0
                if l2 >= 0:
                    yield l2, None
                continue
            for j2 in ((0.5,) if l2 == 0 else (l2 - 0.5, l2 + 0.5)):
                if l2 >= 0 and abs(j2 - lev.j) <= 1.0:
                    yield l2, j2

    def partners(lev):
        return lower_and_degenerate(lev, [o for l2, j2 in partner_channels(lev)
                                          for o in by_channel.get(certificate_key(l2, j2), [])])

    def order(x):
        return (x.n, x.l, x.j or 0.0)

    chosen = levels_reached(levels, nmax, lambda lev: partners(lev)[0])
    chosen.sort(key=order)

    k = _constants()
    lowest = min(levels, key=lambda x: x.energy)  # with the levels degenerate with it, the ground
    asked = result.bound_counts
    lines, states, notes = [], [], []
    all_ok = bool(result.success)
    for lev in chosen:
        lower, degenerate = partners(lev)
        complete = True
        for l2, j2 in partner_channels(lev):
            key = certificate_key(l2, j2)
            if key not in by_channel:
                if l2 == lev.l + 1 and lev.n >= l2 + 1:  # a partner with n' <= n may exist there
                    complete = False
                continue
            more_may_exist = asked.get(key, None) is None
            if not by_channel[key]:
                complete = complete and not more_may_exist
                continue
            highest = max(by_channel[key], key=lambda x: x.energy)
            if more_may_exist and highest.energy < lev.energy and not _degenerate(highest, lev):
                complete = False
        own = []
        for other in sorted(lower, key=order):
            radial = radial_e1(result, lev, other)
            all_ok &= radial.converged
            d_val, d_err = dipole_charge * radial.value, dipole_charge * radial.error
            if lev.j is None:  # spin 0: the Schrodinger angular factor
                strength, g_up, g_low = max(lev.l, other.l) * d_val**2, 2 * lev.l + 1, 2 * other.l + 1
            else:
                strength, g_up, g_low = _angular(lev, other) * d_val**2, 2 * lev.j + 1, 2 * other.j + 1
            own.append(e1_line(lev, other, lev.energy - other.energy, lev.error_estimate + other.error_estimate,
                               Estimate(d_val, d_err, "bohr", radial.order, radial.converged),
                               strength, g_up, g_low, k))
        if not complete:
            all_ok = False
            notes.append(Note("lifetime_incomplete", f"{lev.label}: a lower level in a channel l = {lev.l - 1} "
                              f"or {lev.l + 1} may be missing from the computed set, so its lifetime is an "
                              "upper bound", lev.label))
        states.append(decay_of(lev, own, degenerate, complete, ground=lev is lowest or _degenerate(lev, lowest),
                               j=lev.j))
        lines.extend(own)
    return assembled_transitions(lines, states, result, nmax, dipole_charge, chosen, filled, notes, all_ok,
                                 equation=equation)
