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


def _dirac_level(result, label: str):
    if getattr(result, "equation", "schrodinger") != "dirac":
        raise InputError("Dirac components need a result of equation='dirac'", parameter="equation")
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
    from radsolve.core.relativistic.front import hbar_c, rest_energy

    pot = result.potential
    channel = pot.channel(level.l, None) if getattr(pot, "l_dependent", False) else pot
    r, w, u = sample.r, sample.weights, sample.u
    with np.errstate(all="ignore"):
        v = np.asarray(channel.raw(r), dtype=float)
    hc = hbar_c(result.units)
    big_a = sample.energy - v + 2.0 * rest_energy(result.units, result.mass)
    inside = u != 0.0
    g = np.where(inside, np.sqrt(np.where(inside, big_a, 1.0)) * u, 0.0)
    jacobian = w / sample.step
    dg = _derivative(g, sample.step) / jacobian
    f = np.where(inside, hc * (dg + kappa_of(level.l, level.j) * g / r) / np.where(inside, big_a, 1.0), 0.0)
    norm = math.sqrt(float(np.sum(w * (g * g + f * f))))
    return r, w, g / norm, f / norm


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


def moment(result, label: str, k: float) -> Estimate:
    """<r^k> of a Dirac level from G^2 + F^2 (bohr^k or fm^k), extrapolated over its grids.

    Needs k > -(2 gamma + 1), gamma the origin exponent of G (a point charge: sqrt(kappa^2 - (Z alpha)^2)).
    """
    from radsolve.core.extrapolation import richardson

    level = _dirac_level(result, label)
    if isinstance(k, bool) or not isinstance(k, (int, float)) or not math.isfinite(float(k)):
        raise InputError(f"k must be a finite real number, got {k!r}", parameter="k")
    from radsolve.core.relativistic.front import hbar_c, rest_energy

    values, scale, edges = [], 0.0, 0.0
    for sample in level.samples:
        r, w, g, f = _components(result, level, sample)
        terms = w * (g * g + f * f) * r ** float(k)
        values.append(float(np.sum(terms)))
        scale = float(np.sum(np.abs(terms)))
        # what the wall may cut off (the last decay length) and the innermost region, where u is
        # below 1e-6 of its maximum and its differences are noise: both taken whole as uncertain
        rest = rest_energy(result.units, result.mass)
        decay = math.sqrt(max(-sample.energy * (sample.energy + 2.0 * rest), 1e-300)) / hbar_c(result.units)
        inside = np.nonzero(np.abs(sample.u) > 1e-6 * np.max(np.abs(sample.u)))[0]
        first = int(inside[0]) if inside.size else 0
        edges = float(np.sum(np.abs(terms[r > r[-1] - 1.0 / decay])) + np.sum(np.abs(terms[:first])))
    rounding = 1e-13
    if len(values) < 3:
        return Estimate(values[-1], math.inf, "", None, False)
    value, estimate, observed = richardson(values, _ORDERS, rounding)
    # Measured against the Dirac-Coulomb 1s moments (Z = 1 ... 92, k = -1 ... 3) the Richardson part
    # understated the error up to 3-fold for k = 3: widened tenfold.
    estimate = 10.0 * max(estimate, rounding * scale) + edges
    unit = ("bohr" if result.units == "atomic" else "fm") + ("" if k == 1 else f"^{k:g}")
    return Estimate(float(value), float(estimate), unit, observed,
                    bool(math.isfinite(estimate) and estimate <= 10.0 * result.tol * abs(value)))


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


def e1_rate(result, upper: str, lower: str) -> Estimate:
    """Einstein A of the E1 line upper -> lower between two Dirac levels of one result, s^-1.

    Long-wavelength limit of the length form: A = (4 omega^3 / 3 c^3) (2 j_l + 1) (j_l j_u 1; -1/2 1/2 0)^2
    |R|^2 (atomic units), R = integral of (G_u G_l + F_u F_l) r dr, l_u + l_l odd (textbook, e.g. Grant,
    "Relativistic Quantum Theory of Atoms and Molecules", 2007, for the angular factor).  The two levels
    come from separate per-channel solves, so the upper's components are moved onto the lower's grid
    (cubic spline in ln r) on each grid of the same step, and R is extrapolated over those grids.
    """
    from scipy.constants import fine_structure, physical_constants

    if result.units != "atomic":
        raise InputError("E1 rates of Dirac levels are implemented in atomic units only", parameter="units")
    up, low = _dirac_level(result, upper), _dirac_level(result, lower)
    if (up.l + low.l) % 2 == 0 or abs(up.j - low.j) > 1.0 or abs(up.l - low.l) != 1:
        raise InputError(f"{upper} -> {lower} is not an E1 line (needs l changing by 1 and |delta j| <= 1)",
                         parameter="level")
    omega = up.energy - low.energy
    if omega <= 0:
        raise InputError(f"{upper} lies below {lower}: no emission line", parameter="level")
    from radsolve.core.extrapolation import richardson

    # samples of the two levels on grids of the same step (their grids differ: separate solves)
    steps = {round(s.step, 12): s for s in up.samples}
    values = []
    for sl in low.samples:
        su = steps.get(round(sl.step, 12))
        if su is None:
            continue
        ru, _, gu, fu = _components(result, up, su)
        rl, wl, gl, fl = _components(result, low, sl)
        values.append(float(np.sum(wl * (_on(ru, gu, rl) * gl + _on(ru, fu, rl) * fl) * rl)))
    if len(values) >= 3:
        radial, spread, _ = richardson(values, _ORDERS, 1e-13)
        spread *= 10.0  # as for the moments: measured understatement, widened tenfold
    elif values:
        radial, spread = values[-1], (abs(values[-1] - values[0]) if len(values) > 1 else math.inf)
    else:
        raise InputError(f"{upper} and {lower} have no grids of a common step", parameter="level")
    c = 1.0 / fine_structure
    angular = (2 * low.j + 1) * _three_j_half(low.j, up.j) ** 2
    per_au = 4.0 * omega**3 / (3.0 * c**3) * angular
    seconds = physical_constants["atomic unit of time"][0]
    rate = per_au * radial**2 / seconds
    error = per_au * 2.0 * abs(radial) * spread / seconds
    error += rate * 3.0 * (abs(up.error_estimate) + abs(low.error_estimate)) / omega
    return Estimate(rate, error, "s^-1", None, bool(error <= 1e-6 * rate))


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


# ----------------------------------------------------------------------------- one Dirac state

from dataclasses import dataclass, field  # noqa: E402  (kept beside the class that uses them)
from typing import Any  # noqa: E402

from radsolve.core.protocol import Note, Outcome, ResultProtocol, message_of  # noqa: E402


@dataclass(repr=False)
class DiracStateSummary(ResultProtocol):
    """One Dirac level with its judged quantities (energy, <r^k> from G^2 + F^2), as :func:`dirac_state` returns.

    Attributes
    ----------
    label : str
        ``2p3/2`` (nuclear units: the shell-model n).
    n, l : int
    j : float
    quantities : list of (name, Estimate)
        ``E - mc^2`` first, then the moments.
    potential, mass, tol, units
        As for the solve.
    result : SolveResult
        The solve the level came from.
    """

    label: str
    n: int
    l: int
    j: float
    quantities: list
    potential: Any
    mass: float
    tol: float
    units: str = "atomic"
    result: Any = field(default=None, repr=False)

    @property
    def unconverged(self) -> list[str]:
        return [name for name, est in self.quantities if not est.converged]

    @property
    def status(self) -> Outcome:
        return Outcome.SUCCESS if not self.unconverged else Outcome.NOT_CONVERGED

    @property
    def notes(self) -> tuple[Note, ...]:
        if not self.unconverged:
            return ()
        return (Note("not_converged", "NOT CONVERGED to their targets: " + ", ".join(self.unconverged)
                     + "; their estimates are what was achieved", ", ".join(self.unconverged)),)

    @property
    def message(self) -> str:
        return message_of(self.notes, f"{self.label}: every quantity met its target")

    def _header(self) -> list[tuple[str, Any]]:
        return [("state", self.label), ("equation", "dirac"), ("potential", self.potential.name),
                ("tol", self.tol)]

    def _table_columns(self):
        return ("quantity", "value", "error", "unit", "converged")

    def records(self, unit: str | None = None) -> list[dict[str, Any]]:
        return [{"quantity": name, "value": est.value, "error": est.error, "unit": est.unit,
                 "converged": bool(est.converged)} for name, est in self.quantities]

    def to_dict(self, unit: str | None = None) -> dict[str, Any]:
        from radsolve.core.relativistic.front import CONVENTIONS

        return {"state": self.label, "n": self.n, "l": self.l, "j": self.j, "equation": "dirac",
                "convention": CONVENTIONS["dirac"], "potential": self.potential.name,
                "parameters": dict(self.potential.parameters), "units": self.units, "mass": self.mass,
                "tol": self.tol, "success": bool(self.success), "status": str(self.status),
                "message": self.message, "notes": [n.to_dict() for n in self.notes],
                "quantities": self.records(unit)}


def dirac_state(potential, n: int, l: int, j: float, *, mass=None, tol: float = 1e-10, method: str = "fd",
                plugins=None, units: str | None = None, moments=(-1, 1, 2)) -> DiracStateSummary:
    """Solve for the Dirac level (n, l, j) and judge its energy and <r^k> (k in ``moments``).

    ``n`` counts as the labels do (n = nodes + l + 1; nuclear units nodes + 1).  The moments' targets
    are 10 tol relative, as for the Schrodinger observables.
    """
    from radsolve.core.result import level_designation
    from radsolve.core.spectrum import solve

    if isinstance(l, bool) or not isinstance(l, int) or l < 0:
        raise InputError(f"l must be a whole number >= 0, got {l!r}", parameter="l")
    if j not in ((0.5,) if l == 0 else (l - 0.5, l + 0.5)):
        raise InputError(f"j must be l +- 1/2 (> 0) for l = {l}, got {j!r}", parameter="j")
    res = solve(potential, l=l, count=max(int(n), 1), mass=mass, tol=tol, method=method, plugins=plugins,
                units=units, equation="dirac")
    wanted = None
    for lev in res.levels:
        if lev.j == j and lev.n == n:
            wanted = lev
    if wanted is None:
        nodes_text = level_designation(max(n - l - 1, 0), l, j, res.units)[1]
        raise InputError(f"level {nodes_text} (n = {n}, l = {l}, j = {j}) is not among the bound levels: "
                         f"{res.message}", parameter="n")
    energy = Estimate(wanted.energy, wanted.error_estimate, "hartree" if res.units == "atomic" else "MeV",
                      wanted.order, bool(wanted.converged))
    quantities = [("E - mc^2", energy)] + [(f"<r^{k:g}>", moment(res, wanted.label, k)) for k in moments]
    return DiracStateSummary(label=wanted.label, n=wanted.n, l=l, j=j, quantities=quantities,
                             potential=res.potential, mass=res.mass, tol=res.tol, units=res.units, result=res)
