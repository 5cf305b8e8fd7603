"""The front door: :func:`solve` finds the bound levels of a central potential.

Work is organised by partial wave ("channel"): an orbital angular momentum l,
and with a spin-orbit term also j = l +- 1/2.  Each channel has its own
potential (V, or V_l of a semilocal family, plus V_so <l.s>) and its own
centrifugal factor L(L+1), L = l + (d-3)/2 in d dimensions.  All channels of
one solve share one sequence of nested grids, so that states of different l
can be combined (matrix elements) grid by grid.

For every method the same plan is followed:

1. probe each channel's potential (:mod:`radsolve.probe`): threshold V(inf),
   small-r law (refusing a fall to the centre), inner length, range,
   breakpoints;
2. choose the box on a coarse grid: grow it until the levels asked for are
   bound in it (or until it is far larger than the range of V, so that no
   further level can appear), then set the outer radius where the weakest
   level asked for has decayed (WKB), and check it by the shift the wall
   itself causes;
3. solve on a sequence of nested grids, halving the step, Richardson-
   extrapolate each level, and stop when every estimated error meets
   ``tol`` (or rounding noise or the finest affordable grid is reached: the
   level is then returned with ``converged=False`` and its achieved
   estimate).

Levels are identified by their node count (Sturm count), so n and the label
are exact, and the k-th level can be neither missed nor duplicated.

Energies and lengths are in the units of the solve's unit system (hartree and
bohr, or MeV and fm); ``mass`` below is always the kinetic mass m of
-1/(2m) u'' in those units (see :class:`radsolve.units.UnitSystem`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any, Iterable

import numpy as np

from . import probe as probing
from .errors import InputError
from .grids import GridSpan, mapping_x
from .result import GridSample, Level, SolveResult, level_designation
from .solvers.base import METHODS, RadialSolver, solver_class

#: Step in x of the coarsest grid of the refinement sequence.
COARSE_STEP = 0.1
#: Step of the grid used to choose the box.
PLANNING_STEP = 0.2
#: The finest grid allowed: this many halvings of COARSE_STEP.
MAX_REFINEMENTS = 7
#: Never use more points than this on one grid.
MAX_POINTS = 400_000
#: Initial box, in units of the inner length of the potential.
_INITIAL_BOX = 30.0
#: Largest box, in units of the inner length, searched for levels asked of a
#: potential of infinite range.
_LARGEST_BOX = 1e10
#: No box is larger than this multiple of the inner boundary radius (the
#: number of grid points grows with the logarithm of the ratio).
_LARGEST_RATIO = 1e40
#: A short-range potential is followed out to this multiple of its range.
_RANGE_MARGIN = 20.0

#: Reduced masses accepted, in each unit system's mass unit: far beyond any
#: particle pair (1e-6 m_e to ~5e6 u in atomic units; 1 keV/c^2 to 100 TeV/c^2),
#: and inside what the probed radii (1e-24 ... 1e12 bohr) can resolve.
_MASS_RANGE = {"atomic": (1e-6, 1e10), "nuclear": (1e-3, 1e8)}

Key = tuple  # (l, j) with j None without spin-orbit


@dataclass(frozen=True)
class _Channel:
    """One partial wave: its potential, what probing learned, its centrifugal term."""

    l: int
    j: float | None
    potential: Any
    profile: probing.PotentialProfile
    effective_l: float  # L = l + (d-3)/2
    exponent: float  # u ~ r**exponent at the origin

    @property
    def key(self) -> Key:
        return (self.l, self.j)

    @property
    def centrifugal(self) -> float:
        return self.effective_l * (self.effective_l + 1.0)

    def energy_scale(self, energy: float) -> float:
        """What 'relative error' is relative to: |E|, or |E - V(inf)| if larger."""
        v_inf = self.profile.v_infinity
        return abs(energy) if math.isinf(v_inf) else max(abs(energy), abs(energy - v_inf))


@dataclass(frozen=True)
class _BoxPlan:
    span: GridSpan
    inner_radius: dict
    wanted: dict
    bound_counts: dict
    notes: tuple[str, ...]
    search_radius: float = 0.0  # the box in which bound levels were counted
    largest_radius: float = math.inf  # no box beyond this radius
    anchor: float | None = None


def _validate(l, count, tol, method, dimension) -> tuple[list[int], int, float, list[str], int]:
    if isinstance(l, (int, np.integer)) and not isinstance(l, bool):
        ls = [int(l)]
    elif isinstance(l, Iterable) and not isinstance(l, (str, bytes)):
        ls = []
        for item in l:
            if not isinstance(item, (int, np.integer)) or isinstance(item, bool):
                raise InputError(f"l must be a whole number >= 0 (got {item!r})")
            ls.append(int(item))
        if not ls:
            raise InputError("l: at least one angular momentum is needed")
    else:
        raise InputError(f"l must be a whole number >= 0 or a list of them (got {l!r})")
    for value in ls:
        if value < 0:
            raise InputError(f"l must be >= 0 (got {value})")
        if value > 200:
            raise InputError(f"l must be <= 200 (got {value})")
    ls = sorted(set(ls))
    if not isinstance(count, (int, np.integer)) or isinstance(count, bool) or count < 1:
        raise InputError(f"count must be a whole number >= 1 (got {count!r})")
    if count > 1000:
        raise InputError(f"count must be <= 1000 levels per l (got {count})")
    try:
        tol = float(tol)
    except (TypeError, ValueError):
        raise InputError(f"tol must be a number between 1e-14 and 0.1 (got {tol!r})") from None
    if not (1e-14 <= tol <= 0.1):
        raise InputError(f"tol must be between 1e-14 and 0.1 (got {tol!r})")
    if method == "both":
        methods = list(METHODS)
    elif method in METHODS:
        methods = [method]
    else:
        raise InputError(f"unknown method {method!r}; allowed: {', '.join(list(METHODS) + ['both'])}")
    if not isinstance(dimension, (int, np.integer)) or isinstance(dimension, bool) or not 2 <= dimension <= 50:
        raise InputError(f"dimension must be a whole number from 2 to 50 (got {dimension!r})")
    return ls, int(count), tol, methods, int(dimension)


def _resolve_potential(potential, plugins):
    if isinstance(potential, str):
        from .registry import potential as make_potential

        return make_potential(potential, plugins=plugins)
    if not callable(potential) or not hasattr(potential, "parameters"):
        raise InputError(f"potential must be a family name or a radsolve Potential (got {type(potential).__name__})")
    return potential


def _unit_system(pot, units):
    from .units import unit_system

    declared = getattr(getattr(getattr(pot, "family", None), "module", None), "UNITS", "atomic")
    declared = "atomic" if declared is None else str(declared).lower()
    system = unit_system(declared if units is None else units)
    if system.name != declared:
        raise InputError(
            f"potential {pot.name!r} is written in {declared} units; unit system {system.name!r} "
            f"is not supported for it (allowed: {declared})"
        )
    return system


def _channels(pot, ls, spin_orbit, dimension, mass) -> list[_Channel]:
    if spin_orbit and not getattr(pot, "has_spin_orbit", False):
        raise InputError(
            f"spin_orbit was asked for, but potential {pot.name!r} has no spin-orbit term "
            "(families with one define spin_orbit(r, ...))"
        )
    shift = (dimension - 3) / 2.0
    out = []
    for l in ls:
        js = [None]
        if spin_orbit:
            js = [0.5] if l == 0 else [l - 0.5, l + 0.5]
        for j in js:
            channel_pot = pot.channel(l, j) if hasattr(pot, "channel") else pot
            prof = probing.profile(channel_pot, mass)
            effective = l + shift
            prof.check_bounded_below(effective, mass)
            out.append(_Channel(l, j, channel_pot, prof, effective, prof.origin_exponent(effective, mass)))
    return out


def _inner_index(span: GridSpan, refinement: int, radius: float, coarse_r: np.ndarray) -> int:
    """Index on grid ``refinement`` of the coarse-grid point just below ``radius``."""
    i0 = int(np.searchsorted(coarse_r, radius, side="right")) - 1
    return max(i0, 0) * 2**refinement


def _spectrum_on(grid, values, ch: _Channel, mass, inner, cls: type[RadialSolver], v_inf, count, guesses=None):
    solver = cls(grid, values, ch.l, mass, inner, origin_exponent=ch.exponent, centrifugal=ch.centrifugal)
    if math.isinf(v_inf):
        available = count
    else:
        available = min(count, solver.count_below(v_inf))
    indices = list(range(available))
    if not indices:
        return np.zeros(0), np.zeros((0, grid.size)), 0
    energies, u = solver.levels(indices, guesses=None if guesses is None else guesses[:available])
    return energies, u, available


def _breakpoints(channels) -> tuple[float, ...]:
    return tuple(sorted({b for ch in channels for b in ch.profile.breakpoints}))


def _span(r_min: float, radius: float, step: float, anchor: float | None) -> GridSpan:
    """Grids from r_min to radius, with the crossover scale s = R / ln(R / r_min).

    That s balances the points spent on the logarithmic and the linear part
    for a fixed accuracy of the states that fill the box.
    """
    scale = radius / max(math.log(radius / r_min), 1.0)
    return GridSpan.covering(r_min, radius, step, scale, anchor)


def _plan_box(channels, count, mass, tol, cls) -> _BoxPlan:
    """Choose the outer radius and the number of levels to compute per channel."""
    r_in = min(ch.profile.inner_length for ch in channels)
    inner_radius = {ch.key: ch.profile.inner_cutoff(ch.effective_l, mass, tol) for ch in channels}
    r_min = min(inner_radius.values())
    breakpoints = _breakpoints(channels)
    anchor = breakpoints[0] if breakpoints else None
    biggest_feature = max(breakpoints, default=0.0)
    radius = max(_INITIAL_BOX * r_in, 4.0 * biggest_feature)
    ranges = [ch.profile.range for ch in channels]
    if all(math.isfinite(x) for x in ranges):
        limit = max(_RANGE_MARGIN * max(ranges), radius)
    else:
        limit = _LARGEST_BOX * r_in
    largest = _LARGEST_RATIO * r_min
    confining = all(ch.profile.confining for ch in channels)
    nepers = 0.5 * math.log(1.0 / (1e-3 * tol)) + 3.0
    notes: list[str] = []
    found: dict = {}
    short: list = []
    needed = 0.0
    for _ in range(80):
        span = _span(r_min, radius, PLANNING_STEP, anchor)
        grid = span.grid(0)
        needed = 0.0
        for ch in channels:
            values = potential_on_grid(ch.potential, grid.r, breakpoints)
            inner = _inner_index(span, 0, inner_radius[ch.key], grid.r)
            energies, _, available = _spectrum_on(grid, values, ch, mass, inner, cls, ch.profile.v_infinity, count)
            found[ch.key] = available
            if available:
                needed = max(needed, probing.decay_radius(ch.potential, ch.effective_l, mass, float(energies[-1]), r_min, nepers))
        short = [ch.key for ch in channels if found[ch.key] < count]
        if needed > radius:
            radius = min(1.3 * needed, largest)
            continue
        if short and not confining and radius < limit:
            radius = min(4.0 * radius, limit)
            continue
        break
    else:  # pragma: no cover - the loop above always reaches its limit
        notes.append("box search did not settle")
    if short and not confining and not math.isfinite(max(ranges)) and radius >= limit:
        notes.append(f"box limit of {radius:.3g} reached")
    wanted = {ch.key: found[ch.key] for ch in channels}
    bound_counts = {ch.key: (found[ch.key] if found[ch.key] < count else None) for ch in channels}
    final_radius = needed if needed > 0 else radius
    final_radius = max(final_radius, 2.0 * biggest_feature, 4.0 * r_in)
    final_radius = min(final_radius, largest)
    if not confining:
        final_radius = _verify_box(channels, wanted, mass, tol, cls, inner_radius, r_min, final_radius, anchor, largest)
    span = _span(r_min, final_radius, COARSE_STEP, anchor)
    if final_radius >= largest:
        notes.append(f"the box reached its largest radius, {largest:.3g}; the most weakly bound levels "
                     "may be limited by it (see their estimates)")
    return _BoxPlan(span, inner_radius, wanted, bound_counts, tuple(notes), max(radius, final_radius),
                    largest, anchor)


def _verify_box(channels, wanted, mass, tol, cls, inner_radius, r_min, radius, anchor, largest) -> float:
    """Grow the outer radius until the wall shifts no wanted level by more than 1e-3 tol.

    The WKB decay estimate ignores the amplitude's prefactor, which is large
    for weakly bound, extended levels; the wall's own shift (Hadamard
    formula, see :func:`_box_error`) on the planning grid settles it.
    """
    breakpoints = _breakpoints(channels)
    for _ in range(6):
        span = _span(r_min, radius, PLANNING_STEP, anchor)
        grid = span.grid(0)
        growth = 0.0
        for ch in channels:
            if not wanted[ch.key] or ch.profile.confining:
                continue
            values = potential_on_grid(ch.potential, grid.r, breakpoints)
            inner = _inner_index(span, 0, inner_radius[ch.key], grid.r)
            energies, u, _ = _spectrum_on(grid, values, ch, mass, inner, cls, math.inf, wanted[ch.key])
            for energy, row in zip(energies, u):
                shift = _box_error(grid, row, values, ch.centrifugal, mass, energy)
                target = 1e-3 * tol * ch.energy_scale(energy)
                if shift > target:
                    kappa = _decay_rate(grid, values, ch.centrifugal, mass, energy)
                    growth = max(growth, (math.log(shift / target) + 1.0) / (2.0 * kappa))
        if growth == 0.0 or radius >= largest:
            return radius
        radius = min(radius + min(growth, 4.0 * radius), largest)
    return radius


def _grown(plan: _BoxPlan, growth: float) -> _BoxPlan | None:
    """The same plan with the outer wall moved out by ``growth`` (at most 4x), or None.

    None when the box is already as large as allowed.  The whole grid family
    is rebuilt (new crossover scale, breakpoint re-anchored): the refinement
    starts again from the coarsest grid anyway.
    """
    span = plan.span
    if span.r_max >= plan.largest_radius * (1 - 1e-12):
        return None
    radius = min(span.r_max + min(growth, 4.0 * span.r_max), plan.largest_radius)
    new = _span(span.r_min, radius, span.coarse_step, plan.anchor)
    return _BoxPlan(new, plan.inner_radius, plan.wanted, plan.bound_counts, plan.notes,
                    max(plan.search_radius, new.r_max), plan.largest_radius, plan.anchor)


def potential_on_grid(pot, r: np.ndarray, breakpoints) -> np.ndarray:
    """V at the grid radii, with the mean of the one-sided limits at breakpoints.

    Where V jumps at a grid point, the mean of its two limits keeps the
    discretization error a regular power series in the step.
    """
    values = pot(r)
    for b in breakpoints:
        i = int(np.searchsorted(r, b))
        for j in (i - 1, i):
            if 0 <= j < r.size and abs(r[j] - b) <= 1e-12 * b:
                sides = pot(np.array([b * (1.0 - 1e-12), b * (1.0 + 1e-12)]))
                values[j] = 0.5 * (sides[0] + sides[1])
    return values


def richardson(energies: list[float], orders: tuple[int, ...], relative_rounding: float = 1e-14):
    """Extrapolate energies on grids of steps h, h/2, h/4, ... to h = 0.

    ``orders`` are the powers of h expected in the error.  When the observed
    leading order (from the last three grids) differs from the expected one,
    as it does for a potential with a jump, the observed order, rounded to a
    whole number, and the powers above it are eliminated instead; when it is
    not close to a whole number only one conservative step is taken.

    Returns (value, error_estimate, observed_order).  The estimate is the
    larger of the last two changes of the extrapolated value, which bounds the
    error of the value before it (common practice for Richardson tables).
    """
    e = np.asarray(energies, dtype=float)
    k = e.size
    floor = max(64.0 * np.finfo(float).eps, relative_rounding) * abs(e[-1])
    if k < 3:
        return float(e[-1]), math.inf, None
    d1, d2 = abs(e[-3] - e[-2]), abs(e[-2] - e[-1])
    observed = math.log2(d1 / d2) if d1 > 0 and d2 > 0 else None
    noisy = d2 < 1e3 * floor
    if noisy or observed is None or abs(observed - orders[0]) < 0.3:
        use = orders
    elif observed >= 0.8 and abs(observed - round(observed)) < 0.2:
        q = int(round(observed))
        use = tuple(range(q, q + 8))
    else:
        p = min(max(observed, 0.5), float(orders[0]))
        best = e[-1] + (e[-1] - e[-2]) / (2.0**p - 1.0)
        estimate = max(abs(best - e[-1]), abs(e[-1] - e[-2]))
        return float(best), float(max(estimate, floor)), observed
    table = [list(e)]
    for j in range(min(k - 1, len(use))):
        factor = 2.0 ** use[j] - 1.0
        prev = table[-1]
        table.append([prev[i + 1] + (prev[i + 1] - prev[i]) / factor for i in range(len(prev) - 1)])
    best = table[-1][-1]
    estimate = abs(best - table[-2][-1])
    if len(table[-1]) >= 2:
        estimate = max(estimate, abs(best - table[-1][-2]))
    elif len(table) >= 3:
        estimate = max(estimate, abs(best - table[-2][-2]))
    return float(best), float(max(estimate, floor)), observed


def _decay_rate(grid, values, centrifugal, mass, energy) -> float:
    """kappa = sqrt(2 mu (V_eff - E)) just inside the outer wall, bohr**-1."""
    v_eff = values[-2] + centrifugal / (2.0 * mass * grid.r[-2] ** 2)
    return math.sqrt(max(2.0 * mass * (v_eff - energy), 1e-300))


def _wall_growth(best: dict, tol: float, channels) -> float:
    """How far to move the outer wall so no level's wall shift exceeds 1e-3 tol."""
    growth = 0.0
    by_key = {ch.key: ch for ch in channels}
    for key, levels in best.items():
        ch = by_key[key]
        if ch.profile.confining:
            continue
        for entry in levels:
            target = 1e-3 * tol * ch.energy_scale(entry["energy"])
            if entry["wall"] > target:
                growth = max(growth, (math.log(entry["wall"] / target) + 1.0) / (2.0 * entry["kappa"]))
    return growth


def _box_error(grid, u_row, values, centrifugal, mass, energy) -> float:
    """First-order energy shift (hartree) caused by the outer wall (Hadamard formula)."""
    r = grid.r
    du = u_row[-2] / (r[-1] - r[-2])
    v_eff = values[-2] + centrifugal / (2.0 * mass * r[-2] ** 2)
    kappa = math.sqrt(max(2.0 * mass * (v_eff - energy), 1e-300))
    return float(du * du / (2.0 * mass) / (2.0 * kappa))


def _inner_boundary_error(grid, u_row, inner, mass, exponent, values, energy) -> float:
    """Energy shift (hartree) from imposing u ~ r**lambda at a = r[inner].

    A hard wall at a would shift the level by C**2 (2 lambda - 1)
    a**(2 lambda - 1) / (2 mu) (the Hadamard formula dE/da = u'(a)**2/(2 mu)
    integrated from 0 to a, with u ~ C r**lambda below a).  The power-law
    condition errs only by the potential's relative correction to the
    logarithmic derivative of u at a, about 2 mu a**2 |V(a) - E| / lambda,
    which multiplies that shift.  C is read off u where it is well above the
    rounding noise of the eigenvector.
    """
    r, a = grid.r, grid.r[inner]
    peak = np.max(np.abs(u_row))
    reliable = np.nonzero(np.abs(u_row[inner + 1 :]) > 1e-6 * peak)[0]
    if reliable.size == 0:
        return 0.0
    j = inner + 1 + int(reliable[0])
    coeff = abs(u_row[j]) / r[j] ** exponent
    hard_wall = coeff**2 * max(2.0 * exponent - 1.0, 0.25) * a ** (2.0 * exponent - 1.0) / (2.0 * mass)
    correction = 2.0 * mass * a * a * abs(values[inner] - energy) / exponent
    return float(hard_wall * min(correction, 1.0))


def _run_method(channels, plan: _BoxPlan, mass, tol, cls: type[RadialSolver], may_grow: bool = True):
    """Solve on nested grids until every level meets tol, or rounding noise wins.

    Returns ``(best, samples)``: for each channel key a list of per-level
    dicts (energy, error, order, converged, ...) and of GridSample tuples.
    Each level keeps the extrapolation with the smallest estimated error seen.
    """
    span = plan.span
    coarse_r = span.grid(0).r
    breakpoints = _breakpoints(channels)
    history: dict = {ch.key: [] for ch in channels}
    best: dict = {ch.key: [] for ch in channels}
    for refinement in range(MAX_REFINEMENTS + 1):
        grid = span.grid(refinement)
        if grid.size > MAX_POINTS:
            break
        all_met, any_improving, all_limited = True, False, True
        for ch in channels:
            want = plan.wanted[ch.key]
            if want == 0:
                continue
            values = potential_on_grid(ch.potential, grid.r, breakpoints)
            inner = _inner_index(span, refinement, plan.inner_radius[ch.key], coarse_r)
            guesses = [entry[0] for entry in history[ch.key][-1]] if history[ch.key] else None
            energies, u, _ = _spectrum_on(grid, values, ch, mass, inner, cls, math.inf, want, guesses)
            history[ch.key].append([(float(energies[k]), u[k], grid) for k in range(want)])
            levels = best[ch.key]
            profile = ch.potential.potential_error(grid.r) if hasattr(ch.potential, "potential_error") else None
            for k in range(want):
                series = [step[k][0] for step in history[ch.key]]
                value, estimate, observed = richardson(series, cls.error_orders, cls.relative_rounding(grid.size))
                wall = _box_error(grid, u[k], values, ch.centrifugal, mass, value)
                estimate += wall
                estimate += _inner_boundary_error(grid, u[k], inner, mass, ch.exponent, values, value)
                entry = dict(nodes=k, energy=value, error=estimate, order=observed, converged=False,
                             wall=wall, kappa=_decay_rate(grid, values, ch.centrifugal, mass, value))
                if len(levels) <= k:
                    levels.append(entry)
                elif estimate < levels[k]["error"]:
                    levels[k] = entry
                    any_improving = True
                met = len(series) >= 3 and levels[k]["error"] <= tol * ch.energy_scale(levels[k]["energy"])
                levels[k]["converged"] = met
                all_met &= met
                # How well V itself is known, weighed by this level's density
                # (first-order perturbation theory): once the grid error is
                # below it, finer grids cannot make the level better known.
                known = 0.0 if profile is None else float(np.sum(grid.weights * u[k] ** 2 * profile))
                levels[k]["potential_limit"] = known
                all_limited &= met or (len(series) >= 3 and levels[k]["error"] <= known)
        if may_grow and refinement == 1 and _wall_growth(best, tol, channels) > 0.0:
            break  # the wall is too close: the caller grows the box before refining further
        if refinement >= 2 and (all_met or all_limited):
            break
        if refinement >= 3 and not any_improving:
            break  # rounding noise dominates: finer grids will not help
    samples = {
        ch.key: [
            tuple(GridSample(step=g.step, r=g.r, weights=g.weights, u=uk, energy=e)
                  for (e, uk, g) in (step[k] for step in history[ch.key]))
            for k in range(plan.wanted[ch.key])
        ]
        for ch in channels
    }
    return best, samples


def _degeneracy(l: int, j: float | None, dimension: int) -> int:
    """Number of states of one level: 2j+1 with spin-orbit, else the orbital multiplicity."""
    if j is not None:
        return int(round(2 * j + 1))
    if dimension == 2:
        return 1 if l == 0 else 2
    # dimension of the space of harmonic polynomials of degree l in d variables
    return math.comb(l + dimension - 1, dimension - 1) - (math.comb(l + dimension - 3, dimension - 1) if l >= 2 else 0)


def solve(
    potential,
    l=0,
    count: int = 5,
    mass=None,
    tol: float = 1e-10,
    method: str = "fd",
    plugins=None,
    spin_orbit: bool = False,
    dimension: int = 3,
    units: str | None = None,
) -> SolveResult:
    """Bound levels of a particle in a central potential.

    Parameters
    ----------
    potential : Potential or str
        A potential from :func:`radsolve.potential`, or a family name (then
        with its default parameters).
    l : int or sequence of int
        Orbital angular momenta to solve for.
    count : int
        Number of lowest levels wanted for each l (each (l, j) with spin-orbit).
        When fewer are bound, the bound ones are returned and
        ``result.bound_counts`` says how many.
    mass : float or str, optional
        Reduced mass: in electron masses (atomic units) or MeV/c**2 (nuclear
        units), or particles joined by ``+`` (``"electron+proton"``), whose
        reduced mass is used.  Default: one electron mass in atomic units;
        nuclear units have no default (InputError without it).
    tol : float
        Target relative error of each energy (1e-14 ... 0.1), relative to
        |E| (or to |E - V(inf)| when that is larger).
    method : str
        ``"fd"`` (finite differences), ``"numerov"`` (Numerov shooting) or
        ``"both"`` (both run; their disagreement is folded into the error
        estimate).
    plugins : sequence of path, optional
        Extra folders of potential plug-ins (when ``potential`` is a name).
    spin_orbit : bool
        Split each l > 0 into j = l - 1/2 and l + 1/2 with the family's
        V_so(r) <l.s> term.
    dimension : int
        Space dimension d >= 2; the centrifugal term uses L = l + (d-3)/2.
    units : {"atomic", "nuclear"}, optional
        The unit system; by default the one the family is written in.
        Atomic: hartree, bohr, electron masses.  Nuclear: MeV, fm, MeV/c**2.

    Returns
    -------
    SolveResult
        ``.levels`` with energies in the unit system's energy unit, each with
        ``error_estimate`` and ``converged``; ``.success`` and ``.message``.

    Raises
    ------
    InputError, PluginError, UnboundedBelowError
        For bad input or a potential that collapses into the origin.
    """
    ls, count, tol, methods, dimension = _validate(l, count, tol, method, dimension)
    pot = _resolve_potential(potential, plugins)
    system = _unit_system(pot, units)
    mu = system.parse_mass(mass)
    low, high = _MASS_RANGE[system.name]
    if not low <= mu <= high:
        raise InputError(
            f"mass {mu:.6g} {system.mass_unit} is outside the range solved here, "
            f"{low:g} to {high:g} {system.mass_unit}"
        )
    kinetic = system.kinetic_mass(mu)
    channels = _channels(pot, ls, bool(spin_orbit), dimension, kinetic)

    plan = _plan_box(channels, count, kinetic, tol, solver_class(methods[0]))
    runs = {}
    for m in methods:
        attempts = 4
        for attempt in range(attempts):
            may_grow = attempt < attempts - 1 and _grown(plan, 1.0) is not None
            runs[m] = _run_method(channels, plan, kinetic, tol, solver_class(m), may_grow)
            growth = _wall_growth(runs[m][0], tol, channels)
            grown = _grown(plan, growth) if growth > 0.0 and may_grow else None
            if grown is None:
                break
            plan = grown

    levels: list[Level] = []
    kept = dict(plan.wanted)
    bound_counts = dict(plan.bound_counts)
    threshold_notes: list[str] = []
    for ch in channels:
        for k in range(plan.wanted[ch.key]):
            per = {m: runs[m][0][ch.key][k] for m in methods}
            if not ch.profile.confining and any(p["energy"] + p["error"] >= ch.profile.v_infinity for p in per.values()):
                # Bound on a finite grid, but not distinguishable from the
                # threshold once extrapolated: not counted as bound.
                worst = max(per.values(), key=lambda p: p["energy"])
                if worst["energy"] >= ch.profile.v_infinity:
                    threshold_notes.append(
                        f"the next level for {_key_text(ch.key)} comes out at or above the threshold "
                        f"once extrapolated (a state of the box, not a bound level): not counted"
                    )
                else:
                    threshold_notes.append(
                        f"the next level for {_key_text(ch.key)} lies within its error estimate "
                        f"({worst['error']:.2g} {system.energy_unit}) of the threshold: not counted as bound"
                    )
                kept[ch.key] = k
                bound_counts[ch.key] = k
                break
            n, label = level_designation(k, ch.l, ch.j, system.name)
            best_method = min(methods, key=lambda m: per[m]["error"])
            best = per[best_method]
            energy, error = best["energy"], best["error"]
            if len(methods) > 1:
                spread = max(p["energy"] for p in per.values()) - min(p["energy"] for p in per.values())
                error = max(max(p["error"] for p in per.values()), spread)
            converged = all(p["converged"] for p in per.values()) and error <= tol * ch.energy_scale(energy)
            exact = None
            if dimension == 3 and system.name == "atomic":
                exact = ch.potential.exact_energy(k + ch.l + 1, ch.l, mu)
            levels.append(
                Level(
                    n=n,
                    l=ch.l,
                    nodes=k,
                    label=label,
                    energy=energy,
                    error_estimate=error,
                    converged=bool(converged),
                    method=method,
                    order=best["order"],
                    samples=runs[best_method][1][ch.key][k],
                    exact=None if exact is None else float(exact),
                    method_energies={m: per[m]["energy"] for m in methods} if len(methods) > 1 else {},
                    method_errors={m: per[m]["error"] for m in methods} if len(methods) > 1 else {},
                    sample_method=best_method,
                    j=ch.j,
                    degeneracy=_degeneracy(ch.l, ch.j, dimension),
                )
            )

    limited = [lev.label for lev in levels if not lev.converged and any(
        runs[m][0][(lev.l, lev.j)][lev.nodes].get("potential_limit", 0.0) > tol * abs(lev.energy) for m in methods)]
    if limited:
        threshold_notes.append(
            "the potential itself is known less well than tol for " + ", ".join(limited[:8])
            + " (e.g. a table's interpolation error weighed by the level's density): finer grids cannot help")
    message = _message(channels, plan, kept, bound_counts, levels, count, tol, kinetic, system, threshold_notes)
    return SolveResult(
        levels=levels,
        success=all(lev.converged for lev in levels),
        message=message,
        potential=pot,
        mass=mu,
        tol=tol,
        method=method,
        bound_counts={_key_text(ch.key): bound_counts[ch.key] for ch in channels} if spin_orbit
        else {ch.l: bound_counts[ch.key] for ch in channels},
        v_infinity=min(ch.profile.v_infinity for ch in channels),
        units=system.name,
        dimension=dimension,
    )


def _key_text(key: Key) -> str:
    l, j = key
    return f"l={l}" if j is None else f"l={l},j={int(round(2 * j))}/2"


def _message(channels, plan, kept, bound_counts, levels, count, tol, kinetic, system, threshold_notes) -> str:
    parts = []
    none = [_key_text(ch.key) for ch in channels if kept[ch.key] == 0]
    fewer = [f"{_key_text(ch.key)}: {kept[ch.key]}" for ch in channels
             if kept[ch.key] and bound_counts[ch.key] is not None]
    if none:
        parts.append("no bound level for " + ", ".join(none))
    if fewer:
        parts.append(f"fewer bound levels than the {count} asked: " + "; ".join(fewer))
    parts.extend(threshold_notes)
    short = [ch for ch in channels if bound_counts[ch.key] is not None and not ch.profile.confining]
    if short:
        v_inf = min(ch.profile.v_infinity for ch in short)
        r_max = plan.search_radius
        parts.append(
            f"bound means below V(inf) = {v_inf:.6g} {system.energy_unit}; levels bound by less than "
            f"~{math.pi**2 / (2 * kinetic * r_max**2):.2g} {system.energy_unit} would need a larger box "
            f"than its {r_max:.4g} {system.length_unit}"
        )
    unconverged = [lev for lev in levels if not lev.converged]
    if unconverged:
        worst = ", ".join(f"{lev.label} ({lev.relative_error_estimate:.1e})" for lev in unconverged[:8])
        more = f" and {len(unconverged) - 8} more" if len(unconverged) > 8 else ""
        parts.append(f"NOT CONVERGED to tol = {tol:.1e}: {worst}{more}; their estimates are what was achieved")
    parts.extend(plan.notes)
    if not levels:
        return "no bound state: " + "; ".join(parts)
    return "; ".join(parts) if parts else f"all {len(levels)} levels converged to tol = {tol:.1e}"
