"""How many levels a partial wave binds, without a box: the completeness certificate.

Oscillation theory (Sturm; textbook): the number of bound levels of angular
momentum l strictly below the threshold V(inf) equals the number of zeros on
(0, inf) of the regular solution u0 at E = V(inf).  Beyond the range of V,
u0 is a combination of the zero-energy solutions of the tail,
r**nu_plus and r**nu_minus (r**(L+1) and r**-L for a short-range tail), so
the zeros beyond the last radius integrated follow from two numbers: one
more zero lies beyond when the growing part has the other sign from u0
there.  So a finite integration decides the count for good, whatever the
box of a later solve.

Tails that bind infinitely many levels (an attractive tail falling off more
slowly than 1/r**2, such as a Coulomb tail; a supercritical -g/r**2 tail;
a confining potential) are recognized from the probed tail law
(:class:`radsolve.core.probe.TailLaw`) and reported as such.

u0 is integrated with Numerov's method on the mapped grid of
:mod:`radsolve.core.grids` (every breakpoint on the grid), on two grids of halving
step; the count is certain when both agree (and, near a threshold, when the
sign of the growing part is the same on both).  :func:`zero_energy_solution`
is shared with :mod:`radsolve.analysis.thresholds`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from radsolve.core.grids import GridSpan, box_span, mapping_x, potential_on_grid, shared_radius
from radsolve.core.recurrence import three_term

#: Beyond the last radius integrated, V - V(inf) differs from its tail law by
#: less than this (as 2 m r**2 |difference|).
TAIL_PERTURBATION = 1e-6
#: Coarsest step in xi of the zero-energy grid.
COARSE_STEP = 0.1
#: At most this many extra halvings to make two grids agree.
MAX_HALVINGS = 4
#: Never more points than this on one zero-energy grid.
MAX_POINTS = 400_000
#: The coarsest grid resolves the local wavelength by at least 2 pi / this.
_PHASE_PER_STEP = 0.5


@dataclass(frozen=True)
class BoundCount:
    """The number of bound levels of one partial wave, established without a box.

    Attributes
    ----------
    count : int or None
        Levels strictly below V(inf); None means infinitely many.
    certain : bool
        False when the count could not be settled (two grids disagreed, or
        the tail has no law to match to); ``note`` says why.
    note : str
        How the count was established, or why it is infinite or uncertain.
    outermost : float
        The radius of the last zero of u0 (for an infinite count, 0): the
        most weakly bound level extends at least this far.
    weakest_binding : float
        A rough binding energy V(inf) - E of the most weakly bound level when
        its zero lies beyond the potential's range (from the zero's radius),
        else nan.  For planning the box only.
    """

    count: int | None
    certain: bool
    note: str
    outermost: float = 0.0
    weakest_binding: float = math.nan

    @property
    def infinite(self) -> bool:
        return self.count is None

    def text(self) -> str:
        if self.count is None:
            return "infinitely many"
        return f"{self.count}" + ("" if self.certain else " (uncertain)")

    def to_dict(self) -> dict:
        return {"count": self.count, "infinite": self.count is None, "certain": self.certain,
                "note": self.note}


@dataclass
class Shot:
    """The regular zero-energy solution on one grid."""

    nodes: int  # zeros on the grid, plus one beyond it when the tail law has one
    interior_nodes: int
    growing: float  # a: coefficient of (r/R)**nu_plus at the last point R (scale of u);
    #                 with nu_plus = nu_minus, of (r/R)**nu ln(r/R), the solution dominating far out
    decaying: float  # b: coefficient of (r/R)**nu_minus (or of (r/R)**nu)
    start: float  # u at the first interior point (scale of u)
    beyond: float  # radius of the zero beyond R, or nan
    r: np.ndarray
    weights: np.ndarray
    u: np.ndarray
    last_zero: float


def zero_energy_solution(values: np.ndarray, grid, L: float, mass: float, exponent: float,
                         nu: tuple[float, float] | None) -> Shot:
    """Numerov for u0 at the threshold on ``grid``; ``values`` = V - V(inf) at grid.r.

    The power law u ~ r**exponent is imposed at the first point, as the
    solvers do (``radsolve.core.solvers.base``).  ``nu`` = (nu_plus, nu_minus) of
    the tail's zero-energy solutions, or None (then no zero beyond the last
    point is added).
    """
    _, q = grid.liouville_coefficients(values, 0, mass, centrifugal=L * (L + 1.0))
    h2 = grid.step**2
    t = h2 * 2.0 * mass * q / 12.0
    t = np.minimum(t, 0.9)  # deep in a forbidden region: monotone growth is all that matters
    d = 2.0 + 12.0 * t / (1.0 - t)
    last = grid.size - 1
    ghost = math.exp(-(exponent - 0.5) * grid.step)
    z, logs = three_term(d[1:last], None, ghost * (1.0 - t[0]), 1.0 - t[1], local=True)  # y[1 .. last]
    signs = np.sign(z)
    nz = signs[signs != 0]
    interior = int(np.count_nonzero(nz[1:] != nz[:-1]))
    changes = np.nonzero(signs[1:] * signs[:-1] < 0)[0]
    r = grid.r[1:]
    last_zero = float(r[changes[-1]]) if changes.size else 0.0
    # u = sqrt(r') w, w = y / (1 - t), on one common scale: that of its peak
    # (beyond the range u0 varies like a power of r, so the last points never
    # underflow against it; tiny values near the origin may).
    k2 = r.size - 1
    k1 = int(np.searchsorted(r, 0.5 * r[k2]))
    k1 = min(max(k1, 0), k2 - 1)
    w = z / (1.0 - t[1:])
    with np.errstate(divide="ignore"):
        level = logs + np.log(np.abs(w))
    ref = float(np.max(level[np.isfinite(level)]))
    u_all = np.sqrt(grid.jacobian[1:]) * w * np.exp(np.maximum(logs - ref, -745.0))
    u1, u2 = float(u_all[k1]), float(u_all[k2])
    a = b = 0.0
    beyond = math.nan
    nodes = interior
    if nu is not None:
        rho = r[k1] / r[k2]
        nu_p, nu_m = nu
        if abs(nu_p - nu_m) < 1e-9:
            # degenerate pair (e.g. two dimensions, l = 0): r**nu and r**nu ln(r/R)
            c0 = u2
            c1 = (u1 / rho**nu_p - c0) / math.log(rho)
            if c1 != 0.0 and -c0 / c1 > 0:
                nodes += 1
                beyond = float(r[k2] * math.exp(min(-c0 / c1, 700.0)))
            a, b = c1, c0  # the logarithmic solution is the one that dominates far out
        else:
            det = rho**nu_p - rho**nu_m
            a = (u1 - rho**nu_m * u2) / det
            b = u2 - a
            if a != 0.0 and np.sign(a) != np.sign(u2) and -b / a > 1.0:
                nodes += 1
                beyond = float(r[k2] * (-b / a) ** (1.0 / (nu_p - nu_m)))
    # The amplitude relative to the start, in logarithms (the start may underflow on the common scale).
    start = math.copysign(math.exp(min(max(logs[0] + math.log(abs(w[0])) - ref, -745.0), 0.0)), w[0]) \
        * math.sqrt(grid.jacobian[1])
    return Shot(nodes=nodes, interior_nodes=interior, growing=float(a), decaying=float(b),
                start=start, beyond=beyond, r=r, weights=grid.weights[1:], u=u_all, last_zero=last_zero)


def asymptotic_radius(potential, profile, mass: float) -> float:
    """Where the probed tail law describes V - V(inf) to TAIL_PERTURBATION (for counting)."""
    from radsolve.core.probe import PROBE_RADII, _raw

    tail = profile.tail
    r = PROBE_RADII
    v = profile.probe_values if profile.probe_values is not None else _raw(potential, r)
    delta = v - profile.v_infinity
    if tail.kind in ("short",) and math.isinf(tail.power):
        model = np.zeros_like(r)
    else:
        model = tail.coefficient * r ** (-tail.power)
    with np.errstate(all="ignore"):
        gap = np.abs(delta - model)
        off = 2.0 * mass * r**2 * gap
        # the law's own coefficient is known to rounding only
        close = gap <= 1e-9 * np.abs(model)
    off = np.where(np.isfinite(off), off, np.inf)
    big = np.nonzero((off >= TAIL_PERTURBATION) & ~close)[0]
    if big.size == 0:
        return float(max(profile.inner_length, 1e-28))
    return float(r[min(big[-1] + 1, r.size - 1)])


def count_bound(potential, profile, L: float, mass: float, inner_radius: float,
                largest_radius: float) -> BoundCount:
    """The number of levels of one partial wave below V(inf) (see the module docstring).

    ``potential`` is the channel's potential, ``profile`` its probe, ``L`` the
    effective angular momentum (l + (d-3)/2), ``inner_radius`` where the
    grid starts (as for the solve), ``largest_radius`` the largest radius
    that may be integrated to.
    """
    tail = profile.tail
    why = tail.infinitely_many(L, mass)
    if why is not None:
        return BoundCount(None, True, why)
    if profile.scale_free:
        return BoundCount(0, True, "no length scale (V - V(inf) is c/r**2 or zero): no level is bound")
    nu = tail.exponents(L, mass)
    long_repulsive = tail.kind == "long" and tail.coefficient > 0
    certain_law = tail.kind != "irregular"
    exponent = profile.origin_exponent(L, mass)

    far = max(asymptotic_radius(potential, profile, mass),
              10.0 * profile.inner_length, 2.0 * max(profile.breakpoints, default=0.0))
    if math.isfinite(profile.range):
        far = max(far, 2.0 * profile.range)
    radius = min(shared_radius(max(far, 4.0 * inner_radius), outward=True), largest_radius)
    anchors = [b for b in profile.breakpoints if inner_radius < b < radius]

    note_extra = ""
    for _ in range(12):
        span = box_span(inner_radius, radius, COARSE_STEP, anchors)
        step_div = _resolution(potential, profile, span, L, mass)
        counts, shots = [], []
        for k in range(MAX_HALVINGS + 2):
            refinement = step_div + k
            if span.intervals(refinement) + 1 > MAX_POINTS:
                break
            grid = span.grid(refinement)
            values = potential_on_grid(potential, grid.r, span.anchors) - profile.v_infinity
            shot = zero_energy_solution(values, grid, L, mass, exponent, nu)
            if long_repulsive:
                shot = _repulsive_tail_zeros(shot)
            counts.append(shot.nodes)
            shots.append(shot)
            if (len(counts) >= 2 and counts[-1] == counts[-2] and _same_side(shots[-1], shots[-2])
                    and _growth_resolved(shots[-2], shots[-1])):
                break
        if not shots:
            return BoundCount(None, False, "the zero-energy solution needs more grid points than allowed: "
                                           "the number of bound levels is uncertain")
        agreed = len(counts) >= 2 and counts[-1] == counts[-2]
        shot = shots[-1]
        if math.isfinite(shot.beyond) and shot.beyond > 0.7 * radius and radius < largest_radius:
            # The last zero lies beyond the radius integrated: the tail between
            # there and here may still move it; integrate that far and check.
            new = min(4.0 * shot.beyond, largest_radius)
            if new > radius * 1.01:
                radius = new
                anchors = [b for b in profile.breakpoints if inner_radius < b < radius]
                continue
        if long_repulsive and getattr(shot, "undecided", False) and radius < largest_radius:
            radius = min(10.0 * radius, largest_radius)
            continue
        break
    count = counts[-1]
    outermost = shot.beyond if math.isfinite(shot.beyond) else shot.last_zero
    binding = math.nan
    if math.isfinite(shot.beyond) and nu is not None:
        # u0 ~ r**nu_plus - (r*)**(nu_plus - nu_minus) r**nu_minus: a level with
        # its last zero at r* is bound by about (nu_+ - nu_-)**2 / (8 m r***2).
        spread = max(nu[0] - nu[1], 0.5)
        binding = spread**2 / (8.0 * mass * shot.beyond**2)
        if shot.beyond >= largest_radius:
            note_extra = (f"; the most weakly bound level extends beyond {largest_radius:.3g} "
                          f"(bound by less than ~{binding:.2g}): too weakly bound to resolve in a box")
    if not agreed:
        return BoundCount(count, False, f"the zero-energy node count changed between the two finest grids "
                                        f"({counts[-2] if len(counts) > 1 else '?'} -> {count}): a level lies "
                                        "too close to the threshold to tell whether it is bound",
                          outermost, binding)
    if not _growth_resolved(shots[-2], shots[-1]):
        return BoundCount(count, False, "the growing part of the zero-energy solution beyond the radii "
                                        f"integrated ({radius:.4g}) is not resolved by the grids (it changed "
                                        "between the two finest by more than half of itself): a level lies "
                                        "too close to the threshold to tell whether it is bound",
                          outermost, binding)
    if long_repulsive and getattr(shot, "undecided", False):
        return BoundCount(count, False, "the repulsive long-range tail leaves open whether the zero-energy "
                                        "solution has another zero far out", outermost, binding)
    if not certain_law:
        return BoundCount(count, False, "V - V(inf) has no recognizable law at large r (e.g. it "
                                        "oscillates): the count is that of the radii integrated",
                          outermost, binding)
    how = (f"zero-energy node count on (0, {radius:.4g}) plus the tail's asymptotic form, "
           f"equal on two grids{note_extra}")
    return BoundCount(count, True, how, outermost, binding)


def _same_side(a: Shot, b: Shot) -> bool:
    """Both grids put the growing part of the tail on the same side of zero (or none)."""
    return (a.growing == 0.0) == (b.growing == 0.0) and np.sign(a.growing) * np.sign(a.u[-1]) == \
        np.sign(b.growing) * np.sign(b.u[-1])


def _growth_resolved(coarse: Shot, fine: Shot) -> bool:
    """The finer grid knows the growing part of u0 beyond the last radius well enough to trust its sign.

    Beyond the radii integrated u0 = a (r/R)**nu_plus + b (r/R)**nu_minus, and
    whether it has one more zero there is the sign of a/b (a zero lies
    beyond when -1 < a/b < 0).  Just above a threshold depth a/b is tiny (the
    level is bound by little and its zero lies far out), and the
    discretization error can flip its sign on two grids alike.  It is
    trusted when it moved between the two grids by at most half of itself
    (the finer grid's error is a fraction of that move: a third for second
    order).  The ratio, not a alone: both are on the scale of u's peak,
    which a itself sets once the growing part dominates.
    """
    def ratio(shot: Shot) -> float:
        return shot.growing / shot.decaying if shot.decaying != 0.0 else shot.growing

    q_coarse, q_fine = ratio(coarse), ratio(fine)
    return abs(q_fine - q_coarse) <= 0.5 * abs(q_fine)


def _repulsive_tail_zeros(shot: Shot) -> Shot:
    """Behind a repulsive long-range tail no zero follows once |u| grows; mark it undecided otherwise."""
    u = shot.u
    growing = u[-1] * (u[-1] - u[-2]) > 0
    shot.undecided = not growing  # type: ignore[attr-defined]
    return shot


def _resolution(potential, profile, span: GridSpan, L: float, mass: float) -> int:
    """How many halvings of the span's coarse step resolve the threshold-energy wavelength."""
    grid = span.grid(0)
    from radsolve.core.probe import _raw

    with np.errstate(all="ignore"):
        v = _raw(potential, grid.r) - profile.v_infinity + L * (L + 1.0) / (2.0 * mass * grid.r**2)
    k = np.sqrt(np.maximum(-2.0 * mass * v, 0.0))
    phase = float(np.max(k * grid.jacobian)) * span.coarse_step
    if not math.isfinite(phase) or phase <= _PHASE_PER_STEP:
        return 0
    return int(math.ceil(math.log2(phase / _PHASE_PER_STEP)))


def points_needed(r_min: float, r_max: float, step: float) -> int:
    """Points of a grid from r_min to r_max with this step (for cost checks)."""
    scale = r_max / max(math.log(r_max / r_min), 1.0)
    return int((float(mapping_x(r_max, scale) - mapping_x(r_min, scale))) / step) + 2
