"""The front door: :func:`solve` finds the bound levels of a central potential.

Work is organised by partial wave ("channel"): an orbital angular momentum l,
and with a spin-orbit term also j = l +- 1/2.  Each channel has its own
potential (V, or V_l of a semilocal family, plus V_so <l.s>) and its own
centrifugal factor L(L+1), L = l + (d-3)/2 in d dimensions.  All channels of
one solve share one sequence of nested grids, so that states of different l
can be combined (matrix elements) grid by grid; every method of one solve
uses the same box.

For every method the same plan is followed:

1. probe each channel's potential (:mod:`radsolve.core.probe`): threshold V(inf),
   small-r and large-r laws, inner length, range, breakpoints (declared or
   found by scanning V);
2. count its bound levels without a box (:mod:`radsolve.core.counting`): the
   node count of the threshold-energy solution, or "infinitely many" where
   the tail says so.  That count is the completeness certificate the levels
   returned are checked against;
3. choose the box: grow it until the levels wanted are bound in it, then
   set the outer radius where the weakest of them has decayed (WKB), and
   check it by the shift the wall itself causes;
4. solve on a sequence of nested grids (every breakpoint a point of every
   grid), halving the step; count the levels below the threshold on each
   grid that produces them; Richardson-extrapolate each level with its
   observed order checked; stop when every estimate meets ``tol`` or no
   further grid can help.  Each level carries the cause
   (:class:`radsolve.core.targets.Status`).

Levels are identified by their node count (Sturm count), so n and the label
are exact, and the k-th level can be neither missed nor duplicated.

Energies and lengths are in the units of the solve's unit system (hartree and
bohr, or MeV and fm); ``mass`` below is always the kinetic mass m of
-1/(2m) u'' in those units (see :class:`radsolve.units.UnitSystem`).
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass, field, replace
from typing import Any, NamedTuple

import numpy as np

from radsolve.core import probe as probing
from radsolve.core.counting import BoundCount, count_bound
from radsolve.errors import InputError
from radsolve.core.extrapolation import extrapolate
from radsolve.core.grids import GridSpan, box_span, potential_on_grid, shared_radius
from radsolve.core.protocol import Note, Outcome
from radsolve.core.result import GridSample, Level, SolveResult, certificate_key, level_designation
from radsolve.core.solvers.base import METHODS, RadialSolver, solver_class
from radsolve.core.solvers.registry import EVERY_METHOD
from radsolve.core.inputs import validated_count, validated_dimension, validated_l
from radsolve.core.targets import Status, Targets, validated_tol
from radsolve.core.tridiagonal import EigenStatistics

#: Step in xi of the coarsest grid of the refinement sequence ...
COARSE_STEP = 0.1
#: ... twice that for a tol at or above this: the error series is then read off
#: grids half as fine, whose Richardson estimates (h**6 after four grids) stay
#: far below such a tol, at half the points.  A level the coarser start does not
#: serve gets the finer grids all the same (one more refinement is allowed).
LOOSE_TOL = 1e-9
#: Step of the grid used to choose the box.
PLANNING_STEP = 0.2
#: The finest grid allowed: this many halvings of the coarsest step.
MAX_REFINEMENTS = 7
#: Never use more points than this on one grid.
MAX_POINTS = 400_000
#: Initial box, in units of the inner length of the potential.
_INITIAL_BOX = 30.0
#: No box is larger than this multiple of the inner boundary radius (the
#: number of grid points grows with the logarithm of the ratio) ...
_LARGEST_RATIO = 1e40
#: ... nor larger than this radius.
_LARGEST_RADIUS = 1e30
#: Phase of the threshold-energy (or top level's) wave per step of the
#: coarsest grid of the refinement, and of the planning grid: deep wells get
#: a finer coarse grid so that extrapolation starts where the error series holds.
_PHASE_COARSE = 1.5
_PHASE_PLANNING = 3.0
#: Growth of the planning box while it holds fewer levels than wanted (the
#: box is then cut back to where the weakest wanted level has decayed, so a
#: large step costs little, and each step is a planning solve).
_SHORT_BOX_GROWTH = 16.0
#: A near-degenerate pair is resolved once the change of its splitting
#: between the last two grids is below this fraction of the splitting.
_SPLITTING_SETTLED = 0.1

#: Reduced masses accepted, in each unit system's mass unit: far beyond any
#: particle pair (1e-6 m_e to ~5e6 u in atomic units; 1 keV/c^2 to 100 TeV/c^2),
#: and inside what the probed radii can resolve.

Key = tuple  # (l, j) with j None without spin-orbit


@dataclass(frozen=True)
class _Channel:
    """One partial wave: its potential, what probing learned, its count of bound levels."""

    l: int
    j: float | None
    potential: Any
    profile: probing.PotentialProfile
    effective_l: float  # L = l + (d-3)/2
    exponent: float  # u ~ r**exponent at the origin
    inner_radius: float  # where its grid starts
    certificate: BoundCount

    # Cached: the refinement asks for these for every level on every grid.
    @functools.cached_property
    def key(self) -> Key:
        return (self.l, self.j)

    @functools.cached_property
    def centrifugal(self) -> float:
        return self.effective_l * (self.effective_l + 1.0)

    @functools.cached_property
    def v_inf(self) -> float:
        return self.profile.v_infinity

    @functools.cached_property
    def confining(self) -> bool:
        return self.profile.confining

    @functools.cached_property
    def reference(self) -> float:
        """The energy the solvers measure from: V(inf), or 0 for a confining channel."""
        return 0.0 if self.confining else self.v_inf

    @functools.cached_property
    def potential_key(self) -> tuple:
        """Equal for channels whose V - reference is the same function (partial waves
        that add nothing to V): they share its probe, and its values on a shared grid."""
        return id(_own_potential(self.potential)), self.reference

    def wanted(self, count: int) -> int:
        """How many levels to compute: ``count``, or fewer when fewer are bound."""
        cert = self.certificate
        if cert.count is None:
            return count
        extra = 0 if cert.certain else 1  # look for the one the count is unsure of
        return min(count, cert.count + extra)


def _own_potential(channel_pot):
    """The potential whose values a channel's are: V itself for a partial wave that adds
    nothing to it (the same function for every such l), else the channel's own."""
    return channel_pot.base if getattr(channel_pot, "plain", False) else channel_pot


class _Prediction(NamedTuple):
    """A channel's wanted levels on a grid before the refinement's first: the windows and
    start vectors of its searches."""

    energies: list  # absolute
    peaks: list  # radii where the states are largest
    states: list  # u on that grid
    #: (grid, solver class, the outputs of _levels_on) when that grid is the refinement's
    #: first (the box was verified on it): the refinement takes them instead of solving again
    solved: tuple | None = None


@dataclass(frozen=True)
class _BoxPlan:
    span: GridSpan
    wanted: dict
    notes: tuple[Note, ...]
    search_radius: float = 0.0  # the box in which levels were looked for
    largest_radius: float = math.inf  # no box beyond this radius
    anchors: tuple[float, ...] = ()
    at_limit: bool = False  # the box could not grow any further
    #: key -> _Prediction of the wanted levels on the box verification's grid or a
    #: neighbouring solve's first grid (for the first refinement grid)
    predicted: dict = field(default_factory=dict)
    #: what the planning solves' eigenvalue searches did
    statistics: EigenStatistics = field(default_factory=EigenStatistics)


@dataclass
class _Run:
    """What one method produced on one plan."""

    best: dict  # key -> list of per-level records (dicts)
    samples: dict  # key -> list of tuples of GridSample
    grid_counts: dict  # key -> [levels below the threshold on the finest grid] (empty: none solved)
    finest: bool  # stopped at the finest affordable grid
    statistics: EigenStatistics  # what the eigenvalue searches did


def _validate(l, count, tol, method, dimension) -> tuple[list[int], int, float, list[type[RadialSolver]], int]:
    ls = validated_l(l)
    count = validated_count(count)
    tol = validated_tol(tol)
    if isinstance(method, type) and issubclass(method, RadialSolver):
        methods = [method]
    elif isinstance(method, (list, tuple)) and method and all(
            isinstance(m, type) and issubclass(m, RadialSolver) for m in method):
        methods = list(method)  # several solver classes, as "both" (the relativistic branch uses this)
    elif method == EVERY_METHOD:
        methods = [solver_class(name) for name in METHODS]
    elif method in METHODS:
        methods = [solver_class(method)]
    else:
        raise InputError(f"unknown method {method!r}; allowed: {', '.join(list(METHODS) + [EVERY_METHOD])} "
                         "(or, from Python, a RadialSolver subclass)", parameter="method")
    return ls, count, tol, methods, validated_dimension(dimension)


def _unit_system(pot, units):
    from radsolve.units import family_unit_system

    return family_unit_system(getattr(pot, "family", pot), units)


def _largest_radius(r_min: float) -> float:
    return min(_LARGEST_RATIO * r_min, _LARGEST_RADIUS)


def _channels(pot, ls, spin_orbit, dimension, mass, targets: Targets) -> list[_Channel]:
    if spin_orbit and not getattr(pot, "has_spin_orbit", False):
        raise InputError(
            f"spin_orbit was asked for, but potential {pot.name!r} has no spin-orbit term "
            "(families with one define spin_orbit(r, ...))", parameter="spin_orbit"
        )
    shift = (dimension - 3) / 2.0
    out = []
    profiles: dict = {}  # channels sharing one potential share its probe
    for l in ls:
        js = [None]
        if spin_orbit:
            js = [0.5] if l == 0 else [l - 0.5, l + 0.5]
        for j in js:
            channel_pot = pot.channel(l, j) if hasattr(pot, "channel") else pot
            shared = id(_own_potential(channel_pot))
            if shared not in profiles:
                profiles[shared] = probing.profile(channel_pot, mass)
            prof = profiles[shared]
            effective = l + shift
            prof.check_bounded_below(effective, mass)
            exponent = prof.origin_exponent(effective, mass)
            inner = _inner_radius(channel_pot, prof, effective, mass, targets, prof.v_infinity)
            cert = count_bound(channel_pot, prof, effective, mass, inner, _largest_radius(inner))
            out.append(_Channel(l, j, channel_pot, prof, effective, exponent, inner, cert))
    return out


def _inner_radius(pot, prof, L, mass, targets: Targets, energy: float) -> float:
    """Where a channel's grid starts for levels up to ``energy``.

    Two bounds, the larger wins: the power law u ~ r**lambda is accurate to
    ``targets.boundary_tol`` there (not for cores), and the level has grown
    by ``targets.core_nepers`` e-folds from there to its inner turning point
    (WKB), so that a steep core or a high centrifugal barrier costs no grid
    points where the state is negligible.  The radius is then moved inward to
    a shared value (:func:`radsolve.core.grids.shared_radius`; further in,
    both bounds hold better), never below where V is known to be finite.
    """
    a = prof.inner_cutoff(L, mass, targets.boundary_tol)
    floor = max(prof.origin.finite_from * 10.0, 1e-28)
    if math.isinf(energy) or prof.scale_free:
        return _shared_inner(a, floor)
    hi = max(prof.inner_length, a) * 1e6 if math.isfinite(prof.inner_length) else a * 1e6
    lo = max(a, floor)
    if prof.origin.kind == "core":
        lo = floor
    wkb = probing.wkb_inner_radius(pot, L, mass, energy, targets.core_nepers, lo, hi)
    return _shared_inner(max(a, wkb) if prof.origin.kind != "core" else max(wkb, lo), floor)


def _shared_inner(radius: float, floor: float) -> float:
    return max(shared_radius(radius, outward=False), min(radius, floor))


def _inner_index(span: GridSpan, refinement: int, radius: float, coarse_r: np.ndarray) -> int:
    """Index on grid ``refinement`` of the coarse-grid point just below ``radius``."""
    i0 = int(np.searchsorted(coarse_r, radius, side="right")) - 1
    return max(i0, 0) * 2**refinement


def _breakpoints(channels) -> tuple[float, ...]:
    return tuple(sorted({b for ch in channels for b in ch.profile.breakpoints}))


def _solver(cls, grid, values, ch: _Channel, mass, inner) -> RadialSolver:
    return cls(grid, values, ch.l, mass, inner, origin_exponent=ch.exponent, centrifugal=ch.centrifugal)


def _phase_halvings(channels, span: GridSpan, mass, tops: dict, limit: float) -> int:
    """Halvings of the span's coarse step after which no wanted state turns by more than ``limit`` per step."""
    grid = span.grid(0)
    worst = 0.0
    raw: dict = {}  # V on this grid, by the channels that share it
    for ch in channels:
        top = tops.get(ch.key)
        if top is None:
            continue
        if ch.potential_key not in raw:
            raw[ch.potential_key] = probing._raw(ch.potential, grid.r)
        with np.errstate(all="ignore"):
            v_eff = raw[ch.potential_key] + ch.centrifugal / (2.0 * mass * grid.r_squared)
            k = np.sqrt(np.maximum(2.0 * mass * (top - v_eff), 0.0))
        phase = k * grid.jacobian * span.coarse_step
        phase = phase[np.isfinite(phase)]
        if phase.size:
            worst = max(worst, float(np.max(phase)))
    if worst <= limit:
        return 0
    return int(math.ceil(math.log2(worst / limit)))


def _levels_on(cls, grid, ch: _Channel, mass, inner, count, guesses=None, energies_only: bool = False,
               peaks=None, statistics: EigenStatistics | None = None, precision=None,
               count_threshold: bool = True, previous=None, shared: dict | None = None):
    """The lowest ``count`` levels of one channel on one grid, energies from its reference:
    ``(energies, u, below, values, noise, solver)``, ``noise`` the solver's rounding noise of
    each level where it measures one (else empty), ``solver`` the one used (for a later count).

    ``energies_only`` (finite differences, for planning): u is None, and no eigenvector is computed.
    ``below``: the levels below the threshold on this grid (None for a confining channel, or
    when ``count_threshold`` is False).  ``shared``: V - reference on this grid by
    :attr:`_Channel.potential_key`, filled and read here (the channels of one grid share it).
    """
    values = None if shared is None else shared.get(ch.potential_key)
    if values is None:
        values = potential_on_grid(ch.potential, grid.r, _anchors_of(grid)) - ch.reference
        if shared is not None:
            values.flags.writeable = False  # read by every channel that shares it
            shared[ch.potential_key] = values
    solver = _solver(cls, grid, values, ch, mass, inner)
    if energies_only:
        energies, u = solver.energies(list(range(count)), guesses=guesses), None
    else:
        hints = {"previous": previous} if previous is not None and _takes(cls, "previous") else {}
        energies, u = solver.levels(list(range(count)), guesses=guesses, peaks=peaks, precision=precision,
                                    **hints)
    below = None if ch.confining or not count_threshold else solver.count_below(0.0)
    if statistics is not None:
        statistics.add(solver.statistics)
    return energies, u, below, values, (solver.level_noise() if u is not None else []), solver


@functools.lru_cache(maxsize=64)
def _takes(cls, name: str) -> bool:
    """Whether ``cls.levels`` accepts the keyword ``name`` (a solver written to an older contract may not)."""
    import inspect

    parameters = inspect.signature(cls.levels).parameters
    return name in parameters or any(p.kind is p.VAR_KEYWORD for p in parameters.values())


def _predictions(history: list, reference: float, orders: tuple, planned=None):
    """Each level's energy on the next grid, from its coarser grids, and where its state peaked.

    The values on the last grids are fitted by c0 + c1 h**p1 (two grids) or
    c0 + c1 h**p1 + c2 h**p2 (three or more), p the method's error orders, and
    the fit is evaluated at the next step: a prediction good to the next order
    lets most Rayleigh iterations on the finest grids stop after one solve.  On
    the first grid, ``planned``'s energies and peaks when there are any
    (``plan.predicted``).  Predictions only start the searches: each level's
    index is proven on its grid whatever they are.
    """
    if not history:
        if planned is None:
            return None, None
        return [e - reference for e in planned.energies], list(planned.peaks)
    terms = min(len(history), 3, len(orders) + 1)
    known = np.array([[step[0] for step in history[k]] for k in range(-terms, 0)]) - reference
    next_values = _prediction_weights(tuple(orders[: terms - 1])) @ known
    return list(next_values), [step[3] for step in history[-1]]


@functools.lru_cache(maxsize=16)
def _prediction_weights(orders: tuple) -> np.ndarray:
    """Weights of the values on grids of steps 2**(m-1), ..., 2, 1 (oldest first) that give the
    value at step 1/2 of the function c0 + sum_i c_i h**orders[i] through them (m = len(orders) + 1)."""
    steps = 2.0 ** np.arange(len(orders), -1, -1)
    system = np.stack([np.ones_like(steps)] + [steps**p for p in orders], axis=1)
    at_next = np.array([1.0] + [0.5**p for p in orders])
    weights = np.linalg.solve(system.T, at_next)
    weights.flags.writeable = False
    return weights


def _anchors_of(grid) -> tuple[float, ...]:
    return getattr(grid, "_anchors", ())


def _grid(span: GridSpan, refinement: int):
    grid = span.grid(refinement)
    object.__setattr__(grid, "_anchors", span.anchors + span.left_out)
    return grid


def _plan_box(channels, count, mass, targets: Targets, breakpoints) -> _BoxPlan:
    """Choose the outer radius and the number of levels to compute per channel."""
    from radsolve.core.solvers.fd import FiniteDifference

    wanted = {ch.key: ch.wanted(count) for ch in channels}
    active = [ch for ch in channels if wanted[ch.key] > 0]
    r_min = min(ch.inner_radius for ch in channels)
    largest = _largest_radius(r_min)
    lengths = [ch.profile.inner_length for ch in channels if math.isfinite(ch.profile.inner_length)]
    r_in = min(lengths) if lengths else r_min
    biggest_feature = max(breakpoints, default=0.0)
    radius = max(_INITIAL_BOX * r_in, 4.0 * biggest_feature, 4.0 * max(ch.inner_radius for ch in channels),
                 *(2.0 * ch.certificate.outermost for ch in channels),
                 *(_coulomb_extent(ch, wanted[ch.key], mass) for ch in active))
    radius = min(radius, largest)
    confining = all(ch.confining for ch in channels)
    notes: list[Note] = []
    if not active:
        span = box_span(r_min, radius, COARSE_STEP, breakpoints)
        return _BoxPlan(span, wanted, (), radius, largest, span.anchors)
    nepers = targets.decay_nepers
    statistics = EigenStatistics()
    tops: dict = {ch.key: ch.reference for ch in active if not ch.confining}
    needed = 0.0
    short: list = []
    most = max(wanted.values())
    found: dict = {}
    for _ in range(80):
        span, halvings, grid, coarse_r = _planning_grid(r_min, radius, breakpoints, active, mass, tops, most)
        needed = 0.0
        short = []
        shared: dict = {}
        for ch in active:
            inner = _inner_index(span, halvings, ch.inner_radius, coarse_r)
            energies, _, below, _, _, _ = _levels_on(FiniteDifference, grid, ch, mass, inner, wanted[ch.key],
                                               energies_only=True, statistics=statistics, shared=shared)
            energies = energies + ch.reference
            found[ch.key] = [float(x) for x in energies]
            if below is not None and below < wanted[ch.key]:
                short.append(ch.key)
            top = float(energies[-1])
            if ch.confining or top < ch.v_inf:
                tops[ch.key] = max(top, tops.get(ch.key, -math.inf)) if ch.confining else tops[ch.key]
                needed = max(needed, probing.decay_radius(ch.potential, ch.effective_l, mass, top,
                                                          r_min, nepers))
        if short and radius < largest:
            radius = min(_SHORT_BOX_GROWTH * radius, largest)
            continue
        if needed > radius and radius < largest:
            radius = min(1.3 * needed, largest)
            continue
        break
    else:  # pragma: no cover - the loop above always reaches its limit
        notes.append(Note("box", "box search did not settle"))
    final_radius = max(needed if needed > 0 else radius, 2.0 * biggest_feature, 4.0 * r_in)
    final_radius = min(shared_radius(max(final_radius, min(radius, final_radius)), outward=True), largest)
    predicted: dict = {}
    span = None
    if not confining:
        final_radius, predicted, span = _verify_box(active, wanted, mass, targets, final_radius, breakpoints,
                                                    largest, r_min, statistics, found, tops)
    if span is None:
        span = _refined_span(r_min, final_radius, breakpoints, active, mass, tops, most, targets)
    at_limit = final_radius >= largest * (1 - 1e-12)
    notes += _span_notes(span, at_limit, largest)
    return _BoxPlan(span, wanted, tuple(notes), max(radius, final_radius), largest, span.anchors, at_limit,
                    predicted, statistics)


def _coulomb_extent(ch: _Channel, wanted: int, mass: float) -> float:
    """A first box for a channel whose tail is an attractive Coulomb law C/r (else 0).

    Its ``wanted``-th level is then hydrogen-like far out, n = wanted + L, with
    its outer classical turning point at 2 n**2 / (m |C|) (textbook formula);
    three times that (about where it has decayed enough at tol ~ 1e-10) is where
    the box search starts, instead of growing towards it from the core's size.
    Only a starting point: the search checks it as it checks any other.
    """
    tail = ch.profile.tail
    if ch.confining or not tail.coulomb or tail.coefficient >= 0 or wanted < 1:
        return 0.0
    n = wanted + ch.effective_l
    return 6.0 * n * n / (mass * abs(tail.coefficient))


def _span_notes(span: GridSpan, at_limit: bool, largest: float) -> list[Note]:
    notes = []
    if at_limit:
        notes.append(Note("box", f"the box reached its largest radius, {largest:.3g}; the most weakly bound "
                          "levels may be limited by it (see their estimates)"))
    if span.left_out:
        notes.append(Note("breakpoints_left_out", "breakpoints too close together to all be grid points ("
                          + ", ".join(f"{b:.6g}" for b in span.left_out) + "): the error series of every level "
                          "is unreliable, so none is claimed converged"))
    return notes


def _loose_doublings(targets: Targets) -> int:
    """How many times the refinement's coarse step is doubled for this tol (see
    :data:`LOOSE_TOL`); as many more halvings are allowed, so the finest grid is the same."""
    return 1 if targets.tol >= LOOSE_TOL else 0


def _coarse_step(targets: Targets) -> float:
    """The largest coarse step of the refinement for this tol."""
    return COARSE_STEP * 2 ** _loose_doublings(targets)


def _refined_span(r_min, radius, breakpoints, channels, mass, tops, most, targets: Targets) -> GridSpan:
    """The refinement's span for this box: its coarse step resolves the wanted states (``_PHASE_COARSE``)."""
    step = _coarse_step(targets)
    span = box_span(r_min, radius, step, breakpoints)
    halvings = _planning_halvings(channels, span, mass, tops, most, _PHASE_COARSE)
    return box_span(r_min, radius, step / 2**halvings, breakpoints) if halvings else span


#: A neighbour's plan is used when its inner radii are within this factor of the new ones.
_NEIGHBOUR_SCALE = 4.0


def _continued_plan(previous, channels, count, mass, mu, system: str, dimension: int, targets: Targets,
                    breakpoints) -> _BoxPlan | None:
    """A plan from a neighbouring solve's box and energies (see ``solve(continue_from=...)``), or None.

    It applies when the neighbour solved the same partial waves with the
    same mass, dimension and unit system, in a box (no confining channel),
    has a converged level for every node count this solve wants, and its
    channels start within a factor :data:`_NEIGHBOUR_SCALE` of this solve's
    inner radii: a potential whose length scale moved further (a sweep over
    decades in a few steps) gets a box of its own, which the neighbour's,
    grown a few times by the wall test, may not reach.
    """
    if not isinstance(previous, SolveResult) or not previous.levels:
        return None
    if previous.dimension != dimension or previous.units != system or previous.mass != mu:
        return None
    if any(ch.confining for ch in channels):
        return None
    wanted = {ch.key: ch.wanted(count) for ch in channels}
    by_key: dict = {}
    for lev in previous.levels:
        by_key.setdefault((lev.l, lev.j), {})[lev.nodes] = lev
    predicted = {}
    for ch in channels:
        mine = by_key.get(ch.key, {})
        if set(mine) - set(range(wanted[ch.key])) or len(mine) < wanted[ch.key]:
            return None
        chosen = [mine[k] for k in range(wanted[ch.key])]
        if not all(lev.converged and lev.samples for lev in chosen):
            return None
        theirs = [lev.convergence.get("inner_radius", math.nan) for lev in chosen]
        if not all(ch.inner_radius / _NEIGHBOUR_SCALE <= a <= ch.inner_radius * _NEIGHBOUR_SCALE for a in theirs):
            return None
        predicted[ch.key] = _Prediction(
            [lev.energy for lev in chosen],
            [float(lev.samples[0].r[int(np.argmax(np.abs(lev.samples[0].u)))]) for lev in chosen],
            [lev.samples[0].u for lev in chosen])
    active = [ch for ch in channels if wanted[ch.key] > 0]
    if not active:
        return None
    r_min = min(ch.inner_radius for ch in channels)
    largest = _largest_radius(r_min)
    # The neighbour's span ends less than a coarse step beyond the shared radius it planned
    # (a few per cent at most): that radius again, so the two share their grids.
    box = max(lev.convergence.get("box", 0.0) for lev in previous.levels)
    radius = largest if box >= largest * (1 - 1e-12) else min(shared_radius(box, outward=False), largest)
    if not radius > 4.0 * max(ch.inner_radius for ch in channels):
        return None
    tops = {ch.key: ch.reference for ch in active}
    span = _refined_span(r_min, radius, breakpoints, active, mass, tops, max(wanted.values()), targets)
    at_limit = radius >= largest * (1 - 1e-12)
    return _BoxPlan(span, wanted, tuple(_span_notes(span, at_limit, largest)), radius, largest, span.anchors,
                    at_limit, predicted)


def _planning_halvings(channels, span, mass, tops, most: int, phase: float = _PHASE_PLANNING) -> int:
    """Halvings of a span's coarse step that resolve the wanted states and give room for ``most`` levels."""
    halvings = _phase_halvings(channels, span, mass, tops, phase)
    while span.intervals(halvings) < 4 * most + 40 and halvings < 12:
        halvings += 1  # a few points per node at least
    return min(halvings, 12)


def _planning_grid(r_min, radius, breakpoints, channels, mass, tops, most):
    """(span, halvings, grid, coarse radii) of the planning grid for a box of this radius."""
    span = box_span(r_min, radius, PLANNING_STEP, breakpoints)
    halvings = _planning_halvings(channels, span, mass, tops, most)
    return span, halvings, _grid(span, halvings), span.grid(0).r


def _verify_box(channels, wanted, mass, targets: Targets, radius, breakpoints, largest, r_min,
                statistics: EigenStatistics, found: dict, tops: dict) -> tuple[float, dict, GridSpan]:
    """Grow the outer radius until the wall shifts no wanted level by more than its boundary target.

    The WKB decay estimate ignores the amplitude's prefactor, which is large
    for weakly bound, extended levels; the wall's own shift (Hadamard
    formula, see :func:`_box_error`) on the first refinement grid of the box
    settles it.  Returns the radius, for each channel a :class:`_Prediction`
    of the wanted levels on that grid (with the solve itself: the refinement
    starts from it), and the refinement's span.  ``found``: each channel's
    energies on the box search's last grid, which start the eigenvalue
    searches here (windows, not bisection by index); ``tops``: as for
    :func:`_refined_span`.
    """
    from radsolve.core.solvers.fd import FiniteDifference

    most = max(wanted.values())
    for _ in range(8):
        span = _refined_span(r_min, radius, breakpoints, channels, mass, tops, most, targets)
        grid = _grid(span, 0)
        growth = 0.0
        predicted = {}
        shared: dict = {}
        for ch in channels:
            if not wanted[ch.key] or ch.confining:
                continue
            inner = _inner_index(span, 0, ch.inner_radius, grid.r)
            known = found.get(ch.key)
            guesses = precision = None
            if known is not None and len(known) == wanted[ch.key]:
                guesses = [x - ch.reference for x in known]
                precision = [targets.energy_target(x, ch.v_inf) for x in known]
            solved = _levels_on(FiniteDifference, grid, ch, mass, inner, wanted[ch.key], guesses=guesses,
                                precision=precision, statistics=statistics, count_threshold=False, shared=shared)
            energies, u, _, values, _, _ = solved
            found[ch.key] = [float(x) + ch.reference for x in energies]
            predicted[ch.key] = _Prediction(found[ch.key], [float(grid.r[int(np.argmax(np.abs(row)))]) for row in u],
                                            list(u), (grid, FiniteDifference, solved))
            for energy, row in zip(energies, u):
                shift = _box_error(grid, row, values, ch.centrifugal, mass, energy)
                target = targets.boundary_target(energy + ch.reference, ch.v_inf)
                if shift > target:
                    kappa = _decay_rate(grid, values, ch.centrifugal, mass, energy)
                    growth = max(growth, targets.wall_growth(shift, target, kappa))
        if growth == 0.0 or radius >= largest:
            return radius, predicted, span
        radius = min(shared_radius(radius + min(growth, 4.0 * radius), outward=True), largest)
    return radius, predicted, _refined_span(r_min, radius, breakpoints, channels, mass, tops, most, targets)


def _grown(plan: _BoxPlan, growth: float, breakpoints) -> _BoxPlan | None:
    """The same plan with the outer wall moved out by ``growth`` (at most 4x), or None.

    None when the box is already as large as allowed.  The whole grid family
    is rebuilt (new crossover scale, breakpoints re-anchored): the refinement
    starts again from the coarsest grid anyway.
    """
    span = plan.span
    if not _can_grow(plan):
        return None
    radius = min(shared_radius(span.r_max + min(growth, 4.0 * span.r_max), outward=True), plan.largest_radius)
    new = box_span(span.r_min, radius, span.coarse_step, breakpoints)
    return replace(plan, span=new, search_radius=max(plan.search_radius, new.r_max), anchors=new.anchors,
                   at_limit=radius >= plan.largest_radius * (1 - 1e-12))


def _can_grow(plan: _BoxPlan) -> bool:
    return plan.span.r_max < plan.largest_radius * (1 - 1e-12)


def _decay_rate(grid, values, centrifugal, mass, energy) -> float:
    """kappa = sqrt(2 m (V_eff - E)) just inside the outer wall."""
    v_eff = values[-2] + centrifugal / (2.0 * mass * grid.r[-2] ** 2)
    return math.sqrt(max(2.0 * mass * (v_eff - energy), 1e-300))


def _wall_growth(best: dict, targets: Targets, channels) -> float:
    """How far to move the outer wall so no level's wall shift exceeds its boundary target."""
    growth = 0.0
    by_key = {ch.key: ch for ch in channels}
    for key, levels in best.items():
        ch = by_key[key]
        if ch.confining:
            continue
        for entry in levels:
            target = targets.boundary_target(entry["energy"], ch.v_inf)
            growth = max(growth, targets.wall_growth(entry["wall"], target, entry["kappa"]))
    return growth


def _box_error(grid, u_row, values, centrifugal, mass, energy) -> float:
    """First-order energy shift caused by the outer wall (Hadamard formula)."""
    r = grid.r
    du = u_row[-2] / (r[-1] - r[-2])
    v_eff = values[-2] + centrifugal / (2.0 * mass * r[-2] ** 2)
    kappa = math.sqrt(max(2.0 * mass * (v_eff - energy), 1e-300))
    return float(du * du / (2.0 * mass) / (2.0 * kappa))


def _rises(size: np.ndarray, start: int, peaks: np.ndarray, block: int = 512) -> list:
    """For each state (rows of ``size``: |u|), the first index from ``start`` on where |u| exceeds
    ``1e-6 * peak``, or None.  The states rise from the origin, so the first ``block``
    points nearly always hold it: one array operation for all of them there (a whole-row
    scan per level would cost as much as the level's eigenvector), the rest row by row."""
    level = 1e-6 * peaks
    lead = size[:, start : start + block] > level[:, None]
    found = lead.any(axis=1)
    first = np.argmax(lead, axis=1)
    out: list = []
    for k in range(size.shape[0]):
        if found[k]:
            out.append(start + int(first[k]))
            continue
        hit = np.flatnonzero(size[k, start + block :] > level[k])
        out.append(start + block + int(hit[0]) if hit.size else None)
    return out


def _inner_boundary_error(grid, u_row, inner, rise: int | None, mass, exponent, values, energy,
                          inverse_square=0.0) -> float:
    """Energy shift from imposing u ~ r**lambda at a = r[inner].

    A hard wall at a would shift the level by C**2 (2 lambda - 1)
    a**(2 lambda - 1) / (2 m) (the Hadamard formula dE/da = u'(a)**2/(2 m)
    integrated from 0 to a, with u ~ C r**lambda below a).  The power-law
    condition errs only by the potential's relative correction to the
    logarithmic derivative of u at a, about 2 m a**2 |V(a) - E| / lambda,
    which multiplies that shift (a c/r**2 term is part of the power law
    itself and is left out of V there).  C is read off u at ``rise``, the first
    point where u is well above the rounding noise of the eigenvector
    (:func:`_rises`; None: nowhere, no shift).
    """
    r, a = grid.r, grid.r[inner]
    if rise is None:
        return 0.0
    j = rise
    # C**2 a**(2 lambda - 1) = u(r_j)**2 (a / r_j)**(2 lambda) / a, in logarithms (lambda may be large)
    log_shift = (2.0 * math.log(abs(u_row[j])) + 2.0 * exponent * math.log(a / r[j]) - math.log(a)
                 + math.log(max(2.0 * exponent - 1.0, 0.25) / (2.0 * mass)))
    hard_wall = math.exp(min(log_shift, 700.0))
    correction = 2.0 * mass * a * a * abs(values[inner] - inverse_square / (a * a) - energy) / exponent
    return float(hard_wall * min(correction, 1.0))


def _run_method(channels, plan: _BoxPlan, mass, targets: Targets, cls: type[RadialSolver],
                may_grow: bool = True) -> _Run:
    """Solve on nested grids until every level meets tol, or no finer grid can help.

    Each level keeps the extrapolation with the smallest estimated error
    seen among those whose order the data confirm (any, if none does).
    """
    span = plan.span
    coarse_r = span.grid(0).r
    history: dict = {ch.key: [] for ch in channels}
    best: dict = {ch.key: [] for ch in channels}
    grid_counts: dict = {ch.key: [] for ch in channels}
    last_grid: dict = {}
    # each channel's error series: the method's own, or its breakpoint one where V has a breakpoint on the grid
    orders_of = {ch.key: cls.orders(ch.profile.breakpoints_between(max(ch.inner_radius, coarse_r[0]), coarse_r[-1]))
                 for ch in channels}
    statistics = EigenStatistics()
    finest = False
    for refinement in range(MAX_REFINEMENTS + _loose_doublings(targets) + 1):
        if span.intervals(refinement) + 1 > MAX_POINTS:
            finest = True
            break
        grid = _grid(span, refinement)
        all_done, any_improving = True, False
        shared: dict = {}
        for ch in channels:
            want = plan.wanted[ch.key]
            if want == 0:
                continue
            inner = _inner_index(span, refinement, ch.inner_radius, coarse_r)
            planned = plan.predicted.get(ch.key)
            orders = orders_of[ch.key]
            guesses, peaks = _predictions(history[ch.key], ch.reference, orders, planned)
            # The accuracy each grid energy needs: the level's target (the
            # solver keeps its noise well below it).
            precision = None if guesses is None else [
                targets.energy_target(g + ch.reference, ch.v_inf) for g in guesses]
            if history[ch.key]:
                previous = [step[1] for step in history[ch.key][-1]]
            else:  # the box verification's or the neighbour's states, where there are any
                previous = planned.states if planned is not None else None
            first = planned.solved if refinement == 0 and planned is not None else None
            if first is not None and first[0] is grid and first[1] is cls and len(first[2][0]) == want:
                energies, u, _, values, noise, solver = first[2]  # the box was verified on this grid
            else:
                energies, u, _, values, noise, solver = _levels_on(
                    cls, grid, ch, mass, inner, want, guesses, peaks=peaks, statistics=statistics,
                    precision=precision, count_threshold=False, previous=previous, shared=shared)
            last_grid[ch.key] = solver
            size = np.abs(u[:want])
            tops = np.argmax(size, axis=1)
            rises = _rises(size, inner + 1, size[np.arange(want), tops])
            history[ch.key].append([(float(energies[k]) + ch.reference, u[k], grid, float(grid.r[tops[k]]))
                                    for k in range(want)])
            levels = best[ch.key]
            profile = ch.potential.potential_error(grid.r) if hasattr(ch.potential, "potential_error") else None
            splits = _unsettled_pairs(history[ch.key])
            v_eff = values + ch.centrifugal / (2.0 * mass * grid.r_squared)
            # Rounding grows with the energies the state sees, not only with
            # its own: a level high in a deep well has |V - E| >> |E|.
            spread = v_eff[None, :] - np.asarray(energies[:want])[:, None]  # |V_eff - E| u**2, in place
            np.abs(spread, out=spread)
            spread *= size
            spread *= size
            seen_all = spread @ grid.weights
            for k in range(want):
                series = [step[k][0] for step in history[ch.key]]
                seen = float(seen_all[k])
                level = max(abs(series[-1]), abs(energies[k]) + seen)
                rounding = cls.relative_rounding(grid.size) * level / max(abs(series[-1]), 1e-300)
                if k < len(noise) and noise[k] is not None:
                    # the method's own measure of this level's sensitivity to rounding
                    rounding = max(rounding, noise[k] / max(abs(series[-1]), 1e-300))
                ex = extrapolate(series, orders, rounding, settled=True)
                shifted = ex.value - ch.reference
                wall = 0.0 if ch.confining else _box_error(grid, u[k], values, ch.centrifugal, mass, shifted)
                inner_err = _inner_boundary_error(grid, u[k], inner, rises[k], mass, ch.exponent, values, shifted,
                                                  ch.profile.origin.inverse_square)
                estimate = ex.estimate + wall + inner_err
                degenerate = splits.get(k, 0.0)
                if degenerate:
                    estimate = max(estimate, degenerate)
                # How well V itself is known, weighed by this level's density
                # (first-order perturbation theory): once the grid error is
                # below it, finer grids cannot make the level better known.
                known = 0.0 if profile is None else float(np.sum(grid.weights * u[k] ** 2 * profile))
                entry = dict(nodes=k, energy=ex.value, error=estimate, order=ex.observed, order_ok=ex.order_ok,
                             wall=wall, inner=inner_err, kappa=_decay_rate(grid, values, ch.centrifugal, mass, shifted),
                             potential_limit=known, grids=len(series), rounding=rounding * abs(ex.value),
                             near_degenerate=bool(degenerate), raw=series[-1])
                if len(levels) <= k:
                    levels.append(entry)
                elif _better(entry, levels[k]):
                    if entry["error"] < levels[k]["error"]:
                        any_improving = True
                    levels[k] = entry
                else:
                    # keep the best value, but the latest view of ambiguity and count
                    levels[k]["near_degenerate"] = bool(degenerate)
                    levels[k]["grids"] = len(series)
                lev = levels[k]
                met = (lev["grids"] >= 3 and lev["order_ok"] and not lev["near_degenerate"]
                       and targets.met(lev["error"], lev["energy"], ch.v_inf))
                limited = lev["grids"] >= 3 and lev["potential_limit"] > 0 and lev["error"] <= lev["potential_limit"]
                all_done &= met or limited
        if may_grow and refinement == 1 and _wall_growth(best, targets, channels) > 0.0:
            # The wall is too close: the caller grows the box before refining further.  Only
            # here: on the next grids a state's far tail is still poorly resolved, and its wall
            # shift can read thousands of times its target where the finest grid's is below it
            # (a deep double well at tol 3e-8: the box grew 27-fold and its levels hit the finest grid).
            break
        if refinement >= 2 and all_done:
            break
        if refinement >= 3 and not any_improving:
            break  # rounding noise dominates: finer grids will not help
    else:
        finest = True
    # Only the finest grid's count is used (a box too short for the certified levels):
    # one Sturm count per channel, not one per grid.
    for ch in channels:
        if ch.key in last_grid and not ch.confining:
            solver = last_grid[ch.key]
            solver.statistics = EigenStatistics()  # its searches are already in the run's statistic
            grid_counts[ch.key].append(solver.count_below(0.0))
            statistics.add(solver.statistics)
    samples = {
        ch.key: [
            tuple(GridSample(step=g.step, r=g.r, weights=g.weights, u=uk, energy=e, mapping=g.mapping)
                  for (e, uk, g, _) in (step[k] for step in history[ch.key]))
            for k in range(plan.wanted[ch.key])
        ]
        for ch in channels
    }
    return _Run(best, samples, grid_counts, finest, statistics)


def _better(new: dict, old: dict) -> bool:
    """Prefer extrapolations whose order the data confirm, then smaller estimates."""
    return (not new["order_ok"], new["error"]) < (not old["order_ok"], old["error"])


def _unsettled_pairs(history: list) -> dict:
    """Levels whose splitting from a neighbour is not yet resolved by the grids.

    Two levels closer together than their discretization errors differ can
    swap places between grids (states localized in different wells of a
    double well, say): then neither sequence of grid energies belongs to one
    state and Richardson's extrapolation means nothing.  A pair is settled
    when its splitting changed by less than _SPLITTING_SETTLED of itself
    between the last two grids.  Returns {level index: the change of its
    splitting} for the unsettled ones (an error size to carry).
    """
    if len(history) < 2 or len(history[-1]) < 2:
        return {}
    # plain floats: a handful of levels per grid
    last = [step[0] for step in history[-1]]
    prev = [step[0] for step in history[-2]]
    gap_now = [b - a for a, b in zip(last[:-1], last[1:])]
    gap_before = [b - a for a, b in zip(prev[:-1], prev[1:])]
    out: dict = {}
    for k, (g1, g0) in enumerate(zip(gap_now, gap_before)):
        change = abs(g1 - g0)
        if change > _SPLITTING_SETTLED * abs(g1):
            # only pairs whose splitting is small against their own grid changes matter
            moved = max(abs(last[k] - prev[k]), abs(last[k + 1] - prev[k + 1]))
            if abs(g1) < 10.0 * moved:
                out[k] = max(out.get(k, 0.0), change)
                out[k + 1] = max(out.get(k + 1, 0.0), change)
    return out


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
    *,
    count: int = 5,
    mass=None,
    tol: float = 1e-10,
    method: str = "fd",
    plugins=None,
    spin_orbit: bool = False,
    dimension: int = 3,
    units: str | None = None,
    continue_from: SolveResult | None = None,
    equation: str = "schrodinger",
    scalar: bool = False,
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
        When fewer are bound, the bound ones are returned;
        ``result.certificates`` says how many each l binds and how that is known.
    mass : float or str, optional
        Reduced mass: in electron masses (atomic units) or MeV/c**2 (nuclear
        units), or particles joined by ``+`` (``"electron+proton"``), whose
        reduced mass is used.  Default: one electron mass in atomic units;
        nuclear units have no default (InputError without it).
    tol : float
        Target relative error of each energy (1e-14 ... 0.1), relative to
        |E| (or to |E - V(inf)| when that is larger).
    method : str or RadialSolver subclass
        ``"fd"`` (finite differences), ``"numerov"`` (Numerov shooting),
        ``"both"`` (every registered method; their disagreement is folded
        into the error estimate), or a solver class.
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
    continue_from : SolveResult, optional
        The solve of a nearby potential (the previous point of a sweep or a
        fit) with the same l, count, mass, dimension and units: its box is
        reused (and checked again by the wall's own shift, and grown when a
        level needs it) and its energies start the eigenvalue searches.  The
        levels agree with a solve without it within their estimates; it only
        saves the box search.  Ignored where it does not apply (other
        channels, a level it lacks or did not converge; relativistic equations);
        anything but a SolveResult is refused.
    equation : {"schrodinger", "dirac", "klein-gordon"}
        The wave equation.  Dirac: levels n l j (kappa), V the time component
        of a vector potential; Klein-Gordon: spin 0.  Both report E - mu c**2
        with mu the reduced mass (see :mod:`radsolve.core.relativistic`).
    scalar : bool
        Dirac and Klein-Gordon only: add the family's Lorentz-scalar
        potential ``scalar_potential(r, ...)``.

    Returns
    -------
    SolveResult
        ``.levels`` with energies in the unit system's energy unit, each with
        ``error_estimate``, ``converged`` and ``status``; ``.certificates``
        (the number of bound levels of each l, established without a box);
        ``.success`` and ``.message``.

    Raises
    ------
    InputError, PluginError, UnboundedBelowError
        For bad input or a potential that collapses into the origin.
    """
    from radsolve.core.relativistic import SCHRODINGER, validated_equation

    if continue_from is not None and not isinstance(continue_from, SolveResult):
        raise InputError(f"continue_from takes the SolveResult of a nearby solve (or None), not a "
                         f"{type(continue_from).__name__}", parameter="continue_from")
    equation = validated_equation(equation)
    if equation != SCHRODINGER:
        from radsolve.core.relativistic.front import solve_relativistic

        return solve_relativistic(equation, potential, l, count=count, mass=mass, tol=tol, method=method,
                                  plugins=plugins, spin_orbit=spin_orbit, dimension=dimension, units=units,
                                  scalar=scalar)
    if scalar:
        raise InputError("scalar (a Lorentz-scalar potential) needs equation='dirac' or 'klein-gordon'; "
                         "the Schrodinger equation has one potential", parameter="scalar")
    ls, count, tol, classes, dimension = _validate(l, count, tol, method, dimension)
    method_name = method if isinstance(method, str) else getattr(method, "name", "custom")
    from radsolve.potentials import as_potential

    pot = as_potential(potential, plugins)
    system = _unit_system(pot, units)
    mu = system.parse_mass(mass)  # parsed and checked against units.MASS_RANGE
    kinetic = system.kinetic_mass(mu)
    targets = Targets(tol)
    channels = _channels(pot, ls, bool(spin_orbit), dimension, kinetic, targets)
    breakpoints = _breakpoints(channels)
    plan = _continued_plan(continue_from, channels, count, kinetic, mu, system.name, dimension, targets,
                           breakpoints) or _plan_box(channels, count, kinetic, targets, breakpoints)

    runs: dict = {}
    for attempt in range(4):
        may_grow = attempt < 3 and _can_grow(plan)
        runs = {cls: _run_method(channels, plan, kinetic, targets, cls, may_grow) for cls in classes}
        # One box for every method: grow it for all when any needs it.
        growth = max(_wall_growth(run.best, targets, channels) for run in runs.values())
        short = any(_box_short(ch, plan, run) for run in runs.values() for ch in channels)
        if short:
            growth = max(growth, 2.0 * plan.span.r_max)
        grown = _grown(plan, growth, breakpoints) if growth > 0.0 and may_grow else None
        if grown is None:
            break
        plan = grown

    return _assemble(channels, plan, runs, classes, method_name, count, targets, kinetic, mu, system, pot,
                     dimension)


def _box_short(ch: _Channel, plan: _BoxPlan, run: _Run) -> bool:
    """The finest grid holds fewer levels below the threshold than are known to be bound."""
    counts = run.grid_counts[ch.key]
    if ch.confining or not counts or counts[-1] is None:
        return False
    return counts[-1] < plan.wanted[ch.key] and ch.certificate.count is not None \
        and counts[-1] < min(plan.wanted[ch.key], ch.certificate.count)


def _assemble(channels, plan, runs, classes, method_name, count, targets, kinetic, mu, system, pot,
              dimension) -> SolveResult:
    levels: list[Level] = []
    notes: list[Note] = []
    kept: dict = {}
    for ch in channels:
        want = plan.wanted[ch.key]
        cert = ch.certificate
        kept[ch.key] = 0
        for k in range(want):
            per = {cls: runs[cls].best[ch.key][k] for cls in classes}
            above = (not ch.confining) and any(p["energy"] + p["error"] >= ch.v_inf for p in per.values())
            certified = cert.count is None or k < cert.count
            if above and not certified:
                # Beyond the certified count and not below the threshold: a
                # state of the box (or the uncertain one), not a bound level.
                notes.append(Note("not_listed", f"the level with {k} nodes for {_key_text(ch.key)} is not "
                                  "distinguishable from the threshold once extrapolated and is not certified "
                                  "bound: not listed", _key_text(ch.key)))
                break
            best_cls = min(classes, key=lambda c: (not per[c]["order_ok"], per[c]["error"]))
            best = per[best_cls]
            energy, error = best["energy"], best["error"]
            if len(classes) > 1:
                spread = max(p["energy"] for p in per.values()) - min(p["energy"] for p in per.values())
                error = max(max(p["error"] for p in per.values()), spread)
            grid_count = runs[best_cls].grid_counts[ch.key][-1] if runs[best_cls].grid_counts[ch.key] else None
            box_limited = above or (grid_count is not None and grid_count <= k)
            uncertain = (not cert.certain) and cert.count is not None and k >= cert.count - 1
            status = targets.decide(
                error=error, energy=energy, v_infinity=ch.v_inf, grids=best["grids"],
                # a breakpoint between grid points spoils the error series whatever the data show
                order_ok=all(p["order_ok"] for p in per.values()) and not plan.span.left_out,
                rounding=max(p["rounding"] for p in per.values()),
                potential_limit=max(p["potential_limit"] for p in per.values()),
                at_finest=any(runs[c].finest for c in classes),
                box_limited=box_limited and (plan.at_limit or above),
                near_degenerate=any(p["near_degenerate"] for p in per.values()),
                count_uncertain=uncertain)
            if status is Status.CONVERGED and any(
                    not targets.met(p["error"], p["energy"], ch.v_inf) for p in per.values()):
                status = Status.FINEST_GRID  # one of the methods did not get there
            n, label = level_designation(k, ch.l, ch.j, system.name)
            exact = None
            if dimension == 3 and system.name == "atomic":
                exact = ch.potential.exact_energy(k + ch.l + 1, ch.l, mu)
            record = {
                "status": status.value,
                "grids": best["grids"],
                "order": best["order"],
                "order_ok": best["order_ok"],
                "wall": best["wall"],
                "inner_boundary": best["inner"],
                "rounding_floor": best["rounding"],
                "potential_limit": best["potential_limit"],
                "near_degenerate": best["near_degenerate"],
                "box": plan.span.r_max,
                "inner_radius": ch.inner_radius,
            }
            levels.append(
                Level(
                    n=n, l=ch.l, nodes=k, label=label, energy=energy, error_estimate=error,
                    converged=status is Status.CONVERGED, method=method_name, order=best["order"],
                    samples=runs[best_cls].samples[ch.key][k],
                    exact=None if exact is None else float(exact),
                    method_energies={c.name: per[c]["energy"] for c in classes} if len(classes) > 1 else {},
                    method_errors={c.name: per[c]["error"] for c in classes} if len(classes) > 1 else {},
                    sample_method=best_cls.name, j=ch.j, degeneracy=_degeneracy(ch.l, ch.j, dimension),
                    status=status, scale=targets.scale(energy, ch.v_inf), convergence=record,
                )
            )
            kept[ch.key] += 1

    disagreements = []
    for ch in channels:
        cert = ch.certificate
        finest = [runs[c].grid_counts[ch.key][-1] for c in classes if runs[c].grid_counts[ch.key]]
        finest = [n for n in finest if n is not None]
        if cert.count is not None and finest and max(finest) > cert.count:
            # A box only raises levels, so more below the threshold than the count is a contradiction.
            disagreements.append(f"{_key_text(ch.key)}: {max(finest)} levels below the threshold on the "
                                 f"finest grid, {cert.count} by the count")
    if disagreements:
        notes.append(Note("count_disagreement", "COUNT DISAGREEMENT (" + "; ".join(disagreements)
                          + "): the list may be incomplete"))
    bound_counts = {}
    for ch in channels:
        found = kept[ch.key]
        bound_counts[ch.key] = None if found >= count else found
    certificates = {certificate_key(*ch.key): ch.certificate for ch in channels}
    if not (_complete(channels, kept, count) and not disagreements):
        outcome = Outcome.INCOMPLETE
    elif not all(lev.converged for lev in levels):
        outcome = Outcome.NOT_CONVERGED
    else:
        outcome = Outcome.SUCCESS
    return SolveResult(
        levels=levels,
        status=outcome,
        notes=tuple(_notes(channels, plan, kept, levels, count, targets, notes)),
        potential=pot,
        mass=mu,
        tol=targets.tol,
        method=method_name,
        bound_counts={certificate_key(*ch.key): bound_counts[ch.key] for ch in channels},
        v_infinity=min(ch.v_inf for ch in channels),
        units=system.name,
        dimension=dimension,
        certificates=certificates,
        statistics=_statistics(plan, runs),
    )


def _statistics(plan, runs) -> dict:
    total = EigenStatistics()
    total.add(plan.statistics)
    for run in runs.values():
        total.add(run.statistics)
    return total.as_dict()


def _complete(channels, kept, count) -> bool:
    """Every level the certificates promise (up to ``count``) is in the list, and every count is certain."""
    for ch in channels:
        cert = ch.certificate
        if not cert.certain:
            return False
        promised = count if cert.count is None else min(count, cert.count)
        if kept[ch.key] < promised:
            return False
    return True


def _key_text(key: Key) -> str:
    l, j = key
    return f"l={l}" if j is None else f"l={l},j={int(round(2 * j))}/2"


def _notes(channels, plan, kept, levels, count, targets, notes) -> list[Note]:
    """The notes of a solve, most important first."""
    out: list[Note] = []
    none = [_key_text(ch.key) for ch in channels if kept[ch.key] == 0 and ch.certificate.count == 0]
    if none:
        lead = "no bound state (certified for every l asked)" if not levels and len(none) == len(channels) else \
            "no bound level for " + ", ".join(none)
        out.append(Note("no_bound", lead + ": the threshold-energy solution has no node",
                        ", ".join(none)))
    elif not levels:
        out.append(Note("none_resolved", "no level resolved"))
    fewer = [f"{_key_text(ch.key)}: {ch.certificate.count}" for ch in channels
             if ch.certificate.count is not None and 0 < ch.certificate.count < count]
    if fewer:
        out.append(Note("fewer_bound", f"fewer bound levels than the {count} asked: " + "; ".join(fewer)))
    missing = []
    for ch in channels:
        cert = ch.certificate
        promised = count if cert.count is None else min(count, cert.count)
        if kept[ch.key] < promised:
            missing.append(f"{_key_text(ch.key)}: {promised - kept[ch.key]} of {promised}")
    if missing:
        out.append(Note("levels_missing", "LEVELS MISSING: the count of bound levels says more are bound than "
                        "could be resolved (" + "; ".join(missing) + "): they are too weakly bound for the "
                        "largest box"))
    uncertain = [f"{_key_text(ch.key)} ({ch.certificate.note})" for ch in channels if not ch.certificate.certain]
    if uncertain:
        out.append(Note("count_uncertain", "COUNT UNCERTAIN for " + "; ".join(uncertain)))
    out.extend(notes)
    out.extend(not_converged_notes(levels, targets.tol))
    limited = [lev.label for lev in levels if lev.status is Status.POTENTIAL_ACCURACY]
    if limited:
        out.append(Note("potential_accuracy", "the potential itself is known less well than tol for "
                        + ", ".join(limited[:8]) + " (e.g. a table's interpolation error weighed by the level's "
                        "density): finer grids cannot help", ", ".join(limited)))
    degenerate = [lev.label for lev in levels if lev.status is Status.NEAR_DEGENERATE]
    if degenerate:
        out.append(Note("near_degenerate", "nearly degenerate levels whose splitting the grids did not resolve: "
                        + ", ".join(degenerate), ", ".join(degenerate)))
    out.extend(plan.notes)
    return out


def not_converged_notes(levels, tol: float) -> list[Note]:
    """The ``not_converged`` note of a solve's levels: the first eight that missed tol, with their
    relative estimates and causes (empty when every level converged)."""
    unconverged = [lev for lev in levels if not lev.converged]
    if not unconverged:
        return []
    worst = ", ".join(f"{lev.label} ({lev.relative_error_estimate:.1e}, {lev.status})" for lev in unconverged[:8])
    more = f" and {len(unconverged) - 8} more" if len(unconverged) > 8 else ""
    return [Note("not_converged", f"NOT CONVERGED to tol = {tol:.1e}: {worst}{more}; their estimates are "
                 "what was achieved", ", ".join(lev.label for lev in unconverged))]
