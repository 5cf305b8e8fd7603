"""Binding thresholds: the parameter value at which a level reaches the continuum.

For a potential that tends to V(inf) faster than 1/r**2, a level is bound for
some parameter values and not for others; :func:`threshold` finds the critical
value p_c at which level ``nl`` reaches E = V(inf).

Why not bisect on "is the level bound?"  Near threshold an s level's binding
energy vanishes quadratically, |E - V(inf)| ~ (p - p_c)**2, and its state
spreads over a length 1/kappa that grows without bound; a box large enough to
hold it must grow like 1/|p - p_c|, and the bound/unbound verdict of a
finite box is biased towards "unbound".  Levels with l >= 1 approach
linearly, |E - V(inf)| ~ |p - p_c|, and their zero-energy states are
normalizable (localized), but a box-based search is still only as good as
the box.

The method used here works at E = V(inf) directly (oscillation theory,
Sturm's comparison theorem; the l-wave form of Levinson's theorem, textbook):
the number of bound levels of angular momentum l equals the number of nodes
of the regular zero-energy solution u0 on (0, inf).  Beyond the range of the
potential u0 = A r**(l+1) + B r**(-l).  With u0 > 0 near the origin, the sign
of A is (-1)**N for N nodes, and the level with k nodes becomes bound where N
changes from k to k+1: where A(p) passes through zero (for l = 0 there the
scattering length diverges; for l >= 1 a normalizable zero-energy state
appears).  A(p) is a smooth function of p, so Brent's method finds its zero
to rounding accuracy.  u0 is integrated with Numerov's method on the mapped
grid of :mod:`radsolve.core.grids`; the node count on the coarse grid only
brackets the root.

How well p_c is known: p_c is computed on grids of halving step and
Richardson-extrapolated (the estimate is the change of the extrapolated
value, as for energies), and on boxes of doubling radius, starting where
2 mu r**2 |V - V(inf)| has fallen below 1e-16; the estimate is the sum of the
last grid and box changes.  A result that did not meet ``tol`` says so
(``converged=False``).

Potentials with a tail as long as 1/r**2 or longer (a Coulomb tail, as in
coulomb, empty_core, flat_core, finite_nucleus) are refused: an attractive
Coulomb tail binds infinitely many levels for every parameter value, so no
level ever reaches the threshold.  Confining potentials are refused too.

These are model calculations: a critical screening length of a model
potential is not a measured ionization condition of a real plasma.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, field
from typing import Any, Sequence

import numpy as np

from radsolve.errors import InputError, RadsolveError
from radsolve.core.protocol import Note, Outcome, ResultProtocol, message_of, worst
from radsolve.core.result import SPECTROSCOPIC_LETTERS, level_label

#: The one-line caveat carried by the threshold table and JSON ("note").
MODEL_NOTE = ("model calculation: a critical parameter value of a model potential, not a measured "
              "ionization or binding condition of a real system; for diagnostics or safety work, "
              "use established data and practice.")

#: The level a threshold is found for unless another is named.
DEFAULT_LEVEL = "1s"
#: Largest ``nmax`` of :func:`critical_values`.
NMAX_LIMIT = 30

#: Step in x of the coarsest grid.
COARSE_STEP = 0.04
#: At most this many halvings of COARSE_STEP.
MAX_HALVINGS = 7
#: Never use more points than this on one grid.
MAX_POINTS = 400_000
#: At most this many doublings of the box.
MAX_BOX_DOUBLINGS = 8
#: Largest box, bohr.
LARGEST_BOX = 1e10


class NoThresholdError(RadsolveError):
    """The potential has no binding threshold (Coulomb-like tail, or confining)."""


# --------------------------------------------------------------------------- #
# Labels
# --------------------------------------------------------------------------- #

_LABEL_RE = re.compile(r"^\s*(\d+)\s*(?:\[l=(\d+)\]|([a-zA-Z]))\s*(?:(\d+)\s*/\s*2)?\s*$")


@dataclass(frozen=True)
class LevelKey:
    """A level named by its label: n, l, j (None without spin-orbit) and its node count."""

    n: int
    l: int
    j: float | None
    nodes: int
    label: str


def parse_level(label: str, units: str = "atomic", what: str = "level",
                parameter: str | None = None) -> LevelKey:
    """Read a level label: ``"1s"``, ``"2p"``, ``"25[l=23]"``, with j: ``"1p3/2"``.

    The letters are s p d f g h i k l m n o q r t u v w x y z (j skipped).  In
    atomic units n = nodes + l + 1 (``2p`` has no node); in nuclear units, as
    is usual there, n = nodes + 1 (``1p3/2`` has no node).

    ``what`` names the label in messages; ``parameter`` is the API argument
    it came from, set on the errors.

    Raises
    ------
    InputError
        Text that is not a label, n too small for l, or j not l +- 1/2.
    """
    match = _LABEL_RE.match(label) if isinstance(label, str) else None
    if match is None:
        raise InputError(f"{what} {label!r} is not a level label; expected n and the letter of l, "
                         "such as 1s, 2p, 3d, optionally with j as in 1p3/2 (letters "
                         + " ".join(SPECTROSCOPIC_LETTERS) + ")", parameter=parameter)
    n = int(match.group(1))
    if match.group(2) is not None:
        l = int(match.group(2))
    else:
        letter = match.group(3).lower()
        if letter not in SPECTROSCOPIC_LETTERS:
            raise InputError(f"{what} {label!r}: {letter!r} is not an orbital letter; allowed: "
                             + " ".join(SPECTROSCOPIC_LETTERS) + " (j is skipped)", parameter=parameter)
        l = SPECTROSCOPIC_LETTERS.index(letter)
    j = None
    if match.group(4) is not None:
        twice = int(match.group(4))
        allowed = (1,) if l == 0 else (2 * l - 1, 2 * l + 1)
        if twice not in allowed:
            raise InputError(f"{what} {label!r}: j = {twice}/2 is not allowed for l = {l}; allowed: "
                             + ", ".join(f"{a}/2" for a in allowed), parameter=parameter)
        j = twice / 2.0
    if units == "nuclear":
        if n < 1:
            raise InputError(f"{what} {label!r}: n counts from 1 (n = nodes + 1 in nuclear labels)", parameter=parameter)
        nodes = n - 1
    else:
        if n <= l:
            raise InputError(f"{what} {label!r}: n must exceed l (n = {n}, l = {l}); e.g. 2p, 3d", parameter=parameter)
        nodes = n - l - 1
    canonical = level_label(n, l) + ("" if j is None else f"{int(round(2 * j))}/2")
    return LevelKey(n=n, l=l, j=j, nodes=nodes, label=canonical)


def parse_label(label: str, what: str = "level") -> tuple[int, int]:
    """``(n, l)`` of an atomic label such as ``"2p"`` (see :func:`parse_level`)."""
    key = parse_level(label, "atomic", what)
    return key.n, key.l


# --------------------------------------------------------------------------- #
# Result
# --------------------------------------------------------------------------- #

@dataclass(repr=False)
class ThresholdResult(ResultProtocol):
    """The critical parameter value of one level.

    Attributes
    ----------
    potential, parameter : str
    parameter_unit : str
        The atomic unit of the parameter (``"bohr"``; ``""`` if dimensionless).
    label : str
        The level, e.g. ``"2p"``; n, l, nodes as usual.
    value : float
        The critical parameter value p_c, atomic units.
    error_estimate : float
        Estimated absolute error of ``value`` (grid + box), same unit.
    grid_error, box_error : float
        The two parts of ``error_estimate``.
    converged : bool
        Whether ``error_estimate <= tol * |value|``.
    bound_side : str
        ``"above"`` if the level is bound for parameter values above p_c,
        ``"below"`` otherwise (near p_c).
    bracket : (float, float)
        The interval searched.
    box_radius : float
        Outer radius of the last box, bohr.
    slope : float or None
        When the zero-energy state is normalizable (L = l + (d-3)/2 > 1/2;
        l >= 1 in three dimensions): dE/dp at p_c on the bound side
        (Hellmann-Feynman with that state), in ``energy_unit`` per parameter
        unit, so that E - V(inf) ~ slope * (p - p_c) there.  None otherwise
        (s levels leave the threshold quadratically).  For l = 1 the next
        correction goes as |p - p_c|**1.5, from the slowly converging norm.
        Dirac and Klein-Gordon: dW/dp of W = E - mc^2, <dV_eff/dp> / (1 - <dV_eff/dW>)
        with the zero-energy state u of the exact second-order form (the level is the root
        of lambda(W) = W; Hellmann-Feynman for both derivatives).
    slope_error : float or None
        Estimated absolute error of ``slope``.
    fixed : dict
        The other parameters, in the family's units.
    mass, tol : float
        Reduced mass (the unit system's mass unit) and the tolerance asked.
    j : float or None
        Total angular momentum of a spin-orbit level.
    units, energy_unit : str
        The unit system (``"atomic"``, ``"nuclear"``) and its energy unit (of ``slope``).
    dimension : int
        Space dimension.
    """

    potential: str
    parameter: str
    parameter_unit: str
    label: str
    n: int
    l: int
    nodes: int
    value: float
    error_estimate: float
    grid_error: float
    box_error: float
    converged: bool
    bound_side: str
    bracket: tuple[float, float]
    box_radius: float
    slope: float | None
    slope_error: float | None = None
    fixed: dict[str, Any] = field(default_factory=dict)
    mass: float = 1.0
    tol: float = 1e-9
    j: float | None = None
    units: str = "atomic"
    energy_unit: str = "hartree"
    dimension: int = 3
    equation: str = "schrodinger"

    @property
    def approach(self) -> str:
        """How the energy reaches the threshold (textbook near-threshold behaviour).

        With L = l + (d - 3)/2: L = 0 (s levels in three dimensions) quadratic,
        L = 1/2 linear up to a logarithm, L >= 1 linear.
        """
        L = self.l + (self.dimension - 3) / 2.0
        if L < 0.25:
            return ("quadratic: E - V(inf) ~ -(p - p_c)**2; the state spreads without bound "
                    "as p -> p_c (scattering length diverges)")
        if L < 0.75:
            return ("linear up to a logarithm: E - V(inf) ~ (p - p_c)/ln|p - p_c|; the zero-energy "
                    "state is not normalizable (its norm grows like ln r)")
        return ("linear: E - V(inf) ~ slope * (p - p_c); the zero-energy state is normalizable "
                "and stays localized")

    # ------------------------------------------------------------ result protocol

    @property
    def status(self) -> Outcome:
        return Outcome.SUCCESS if self.converged else Outcome.NOT_CONVERGED

    @property
    def notes(self) -> tuple[Note, ...]:
        if self.converged:
            return ()
        return (Note("not_converged", f"the critical {self.parameter} of {self.label} did not reach tol = "
                     f"{self.tol:.1e} (estimate {self.error_estimate:.1e}); the value is what was achieved",
                     self.label),)

    @property
    def message(self) -> str:
        return message_of(self.notes, f"{self.label}: critical {self.parameter} converged to tol = {self.tol:.1e}")

    def _header(self) -> list[tuple[str, Any]]:
        return [("potential", self.potential), ("parameter", self.parameter), ("label", self.label)]

    def _table_columns(self):
        return ("label", "value", "error_estimate", "bound_side", "slope")

    def records(self, unit: str | None = None) -> list[dict[str, Any]]:
        return [_flat(self.to_dict(unit))]

    def to_table(self, unit: str | None = None) -> str:
        return format_thresholds([self])

    def to_dict(self, unit: str | None = None) -> dict[str, Any]:
        """Plain data, as in the JSON output (``unit``: the energy unit of ``slope``; default its own)."""
        factor = 1.0
        if unit is not None and unit != self.energy_unit:
            from radsolve.units import energy_unit_factor

            factor = energy_unit_factor(unit) / energy_unit_factor(self.energy_unit)
        return {
            "potential": self.potential, "parameter": self.parameter,
            "parameter_unit": self.parameter_unit or "dimensionless",
            "label": self.label, "n": self.n, "l": self.l, "j": self.j, "nodes": self.nodes,
            "value": self.value, "error_estimate": self.error_estimate,
            "grid_error": self.grid_error, "box_error": self.box_error,
            "converged": bool(self.converged), "bound_side": self.bound_side,
            "bracket": list(self.bracket), "box_radius": self.box_radius,
            "slope": None if self.slope is None else self.slope / factor,
            "slope_error": None if self.slope_error is None else self.slope_error / factor,
            "approach": self.approach,
            "fixed": dict(self.fixed), "mass": self.mass, "tol": self.tol,
            "units": self.units, "energy_unit": self.energy_unit if unit is None else unit,
            "dimension": self.dimension, "success": self.success, "status": str(self.status),
            "message": self.message,
            "note": MODEL_NOTE,
            **({} if self.equation == "schrodinger" else {"equation": self.equation}),
        }


def _flat(doc: dict[str, Any]) -> dict[str, Any]:
    """A threshold's document as one CSV/pandas row: the bracket split, the fixed parameters prefixed."""
    row = {k: v for k, v in doc.items() if k not in ("bracket", "fixed", "note", "message")}
    row["bracket_low"], row["bracket_high"] = doc["bracket"]
    row.update({f"fixed_{k}": v for k, v in doc["fixed"].items()})
    return row


class CriticalValues(list, ResultProtocol):
    """The list of :class:`ThresholdResult` returned by :func:`critical_values`, with the result protocol.

    It is a list (index it, iterate it); ``status`` is the worst of its
    members', ``records()`` one row per level, ``to_dict()`` the JSON document
    ``{"status", "message", "notes", "thresholds": [...]}``.
    """

    @property
    def status(self) -> Outcome:
        return worst([r.status for r in self])

    @property
    def notes(self) -> tuple[Note, ...]:
        return tuple(n for r in self for n in r.notes)

    @property
    def message(self) -> str:
        return message_of(self.notes, f"{len(self)} critical value{'s' if len(self) != 1 else ''}, all converged")

    def _header(self) -> list[tuple[str, Any]]:
        first = self[0] if self else None
        return [("potential", first.potential if first else None),
                ("parameter", first.parameter if first else None), ("levels", len(self))]

    def _table_columns(self):
        return ("label", "value", "error_estimate", "bound_side", "slope")

    def records(self, unit: str | None = None) -> list[dict[str, Any]]:
        return [row for r in self for row in r.records(unit)]

    def to_table(self, unit: str | None = None) -> str:
        return format_thresholds(self)

    def to_dict(self, unit: str | None = None) -> dict[str, Any]:
        return {"success": self.success, "status": str(self.status), "message": self.message,
                "notes": [n.to_dict() for n in self.notes], "thresholds": [r.to_dict(unit) for r in self]}

    def __repr__(self) -> str:
        return ResultProtocol.__repr__(self)


# --------------------------------------------------------------------------- #
# The zero-energy solution
# --------------------------------------------------------------------------- #

@dataclass(frozen=True)
class _Layout:
    """Where the zero-energy grids start and end (bohr) and their mapping scale."""

    r_min: float
    r_max: float


@dataclass
class _Shot:
    nodes: int
    amplitude: float  # A relative to the starting amplitude (smooth in p)
    r: np.ndarray
    weights: np.ndarray
    u: np.ndarray
    growing: float  # a = A R2**(l+1) in the scale of u
    decaying: float  # b = B R2**(-l) in the scale of u
    exponents: tuple | None = None  # (nu_plus, nu_minus) of the tail's zero-energy solutions


class _ZeroEnergy:
    """The regular solution at E = V(inf) of a family with one parameter free."""

    def __init__(self, base, parameter: str, l: int, mass: float, tol: float, j: float | None = None,
                 dimension: int = 3):
        # mass is the kinetic mass m of -u''/(2m) in the family's units.
        self.base, self.parameter, self.l, self.mass, self.tol = base, parameter, l, mass, tol
        self.j = j
        self.effective = l + (dimension - 3) / 2.0  # L in L(L+1)/(2 m r**2)
        #: Whether each probed parameter value is scanned for undeclared breakpoints (see threshold()).
        self.scan_breakpoints = True
        self._profiles: dict[tuple[float, bool], Any] = {}
        self._grids: dict[tuple, Any] = {}

    def potential(self, p: float):
        return self.base.with_parameters(**{self.parameter: float(p)})

    def profile(self, p: float):
        from radsolve.core import probe

        key = (float(p), self.scan_breakpoints)
        if key not in self._profiles:
            pot = self.potential(p)
            # The partial wave l of a family with an l-dependent (semilocal) potential.
            if hasattr(pot, "channel"):
                pot = pot.channel(self.l, self.j)
            prof = probe.profile(pot, self.mass, scan_breakpoints=self.scan_breakpoints)
            prof.check_bounded_below(self.effective, self.mass)
            self._profiles[key] = (pot, prof)
        return self._profiles[key]

    def where(self, p: float) -> str:
        return f"potential {self.base.name!r} at {self.parameter} = {p:.10g}"

    def check_tail(self, p: float) -> float:
        """The radius beyond which V - V(inf) follows its tail law; raises if the tail has no threshold."""
        from radsolve.core.counting import asymptotic_radius

        pot, prof = self.profile(p)
        tail = prof.tail
        if prof.confining:
            raise NoThresholdError(f"{self.where(p)} is confining (V -> inf as r -> inf): every level "
                                   "stays bound, so there is no binding threshold")
        why = tail.infinitely_many(self.effective, self.mass)
        if why is not None:
            raise NoThresholdError(f"{self.where(p)}: {why}, for every parameter value, so no level "
                                   "reaches the threshold")
        if tail.exponents(self.effective, self.mass) is None:
            kind = "attractive" if (tail.coefficient or 0) < 0 else "repulsive"
            raise NoThresholdError(
                f"{self.where(p)}: V - V(inf) falls off like 1/r**{tail.power:.3g} ({kind}) or has no "
                "power law at large r: the zero-energy analysis needs V - V(inf) to fall off like "
                "1/r**2 or faster")
        return asymptotic_radius(pot, prof, self.mass)

    def layout(self, ps: Sequence[float]) -> _Layout:
        """One layout good for every parameter value in ``ps``."""
        from radsolve.core.targets import Targets

        share = Targets(self.tol).boundary_tol
        r_min, r_max = math.inf, 0.0
        for p in ps:
            tail = self.check_tail(p)
            _, prof = self.profile(p)
            if prof.scale_free:
                continue  # nothing there (V - V(inf) = 0 or c/r**2): no length to fit the grid to
            r_min = min(r_min, prof.inner_cutoff(self.effective, self.mass, share))
            r_max = max(r_max, 2.0 * tail, 8.0 * prof.inner_length,
                        2.0 * max(prof.breakpoints, default=0.0))
        if not math.isfinite(r_min):
            raise InputError(f"{self.where(ps[0])}: the potential has no length scale at any of the "
                             "parameter values tried, so no level can reach a threshold there")
        r_max = max(r_max, 64.0 * r_min)
        return _Layout(r_min=r_min, r_max=min(r_max, LARGEST_BOX))

    def shoot(self, p: float, layout: _Layout, refinement: int) -> _Shot:
        from radsolve.core.counting import zero_energy_solution
        from radsolve.core.grids import GridSpan, potential_on_grid

        pot, prof = self.profile(p)
        r_min, r_max = layout.r_min, layout.r_max
        scale = max(r_max / max(math.log(r_max / r_min), 1.0), min(prof.inner_length, r_max))
        # Brent's trial values share one grid unless the potential's lengths move with p.
        key = (r_min, r_max, scale, tuple(prof.breakpoints), refinement)
        if key not in self._grids:
            if len(self._grids) > 8:
                self._grids.clear()
            span = GridSpan.covering(r_min, r_max, COARSE_STEP, scale, prof.breakpoints)
            self._grids[key] = (span, span.grid(refinement))
        span, grid = self._grids[key]
        values = potential_on_grid(pot, grid.r, span.anchors + span.left_out) - prof.v_infinity
        L = self.effective
        nu = prof.tail.exponents(L, self.mass)
        shot = zero_energy_solution(values, grid, L, self.mass, prof.origin_exponent(L, self.mass), nu)
        return _Shot(nodes=shot.nodes, amplitude=float(shot.growing / shot.start), r=shot.r,
                     weights=shot.weights, u=shot.u, growing=shot.growing, decaying=shot.decaying,
                     exponents=nu)

    def points(self, layout: _Layout, refinement: int) -> int:
        from radsolve.core.grids import mapping_x

        scale = max(layout.r_max / max(math.log(layout.r_max / layout.r_min), 1.0), 1e-300)
        span = float(mapping_x(layout.r_max, scale) - mapping_x(layout.r_min, scale))
        return int(span / (COARSE_STEP / 2**refinement)) + 2

    def count(self, p: float, refinement: int = 1) -> int:
        """Bound levels of angular momentum l at parameter ``p`` (zero-energy node count)."""
        self.check_tail(p)
        if self.profile(p)[1].scale_free:
            return 0  # no length scale, no bound level (V - V(inf) is 0 or c/r**2)
        return self.shoot(p, self.layout([p]), refinement).nodes


# --------------------------------------------------------------------------- #
# Brackets
# --------------------------------------------------------------------------- #

class _RelativisticZeroEnergy(_ZeroEnergy):
    """The same for a Dirac or Klein-Gordon channel: its exact second-order form at W = V(inf).

    The level with k nodes is bound exactly when the k-th level of V_eff(.; V(inf)) lies below
    V(inf) (see :mod:`radsolve.core.relativistic.selfconsistent`), so its threshold is that of the
    fixed potential V_eff(.; V(inf)), whose zero-energy solution the machinery above follows.
    """

    def relativistic(self, equation: str, system_name: str, mu: float) -> None:
        from radsolve.units import unit_system

        system = unit_system(system_name)
        self.equation, self.hbar_c, self.rest = equation, system.hbar_c(), system.rest_energy(mu)
        self.system_name = system_name
        self._channels: dict = {}

    def profile(self, p: float):
        from radsolve.core import probe
        from radsolve.core.relativistic import DIRAC
        from radsolve.core.relativistic import front
        from radsolve.core.relativistic.effective import RelativisticChannel, kappa_of

        key = (float(p), self.scan_breakpoints)
        if key not in self._profiles:
            base = self.potential(p)
            raw = base.channel(self.l, None) if getattr(base, "l_dependent", False) else base
            raw_prof = probe.profile(raw, self.mass, scan_breakpoints=self.scan_breakpoints)
            name = "Dirac" if self.equation == DIRAC else "Klein-Gordon"
            z_alpha = front._check_potential(raw, raw_prof, name, self.hbar_c, self.rest, None)
            kappa = kappa_of(self.l, self.j) if self.equation == DIRAC else None
            front._check_point_charge(z_alpha, self.l, kappa, name)
            if self.equation == DIRAC:
                front._check_continuous(raw, raw_prof, None)
            channel = RelativisticChannel(self.equation, self.l, self.j if self.equation == DIRAC else None,
                                          kappa, self.rest, self.hbar_c, raw, None, raw_prof.v_infinity,
                                          tuple(raw_prof.breakpoints))
            pot = front._effective_potential(channel, self.system_name)
            prof = probe.profile(pot, self.mass, scan_breakpoints=self.scan_breakpoints)
            prof.check_bounded_below(self.effective, self.mass)
            self._profiles[key] = (pot, prof)
            self._channels[float(p)] = channel
        return self._profiles[key]

    def energy_derivative(self, p: float, r: np.ndarray) -> np.ndarray:
        """dV_eff/dW at W = V(inf) on radii r (central difference at a step of 1e-4 mc^2; V_eff is a smooth
        function of W -- quadratic for Klein-Gordon -- so its error is ~1e-8 relative)."""
        self.profile(p)
        channel = self._channels[float(p)]
        step = 1e-4 * self.rest
        r = np.asarray(r, dtype=float)
        with np.errstate(all="ignore"):
            parts = channel.parts(r)  # independent of W: evaluated once for both sides
            hi = channel.effective(channel.threshold + step, parts, r)
            lo = channel.effective(channel.threshold - step, parts, r)
        return (np.asarray(hi, dtype=float) - np.asarray(lo, dtype=float)) / (2.0 * step)


def _narrow(problem: _ZeroEnergy, k: int, lo: float, hi: float, n_lo: int, n_hi: int) -> tuple[float, float]:
    """Shrink [lo, hi] until its ends have k and k + 1 nodes (either way round)."""
    for _ in range(200):
        if {n_lo, n_hi} == {k, k + 1}:
            return lo, hi
        mid = 0.5 * (lo + hi)
        if lo > 0 and hi > 0 and hi / lo > 4.0:
            mid = math.sqrt(lo * hi)
        n_mid = problem.count(mid)
        # Keep the half whose ends still straddle the k|k+1 boundary.
        if (n_lo <= k) != (n_mid <= k):
            hi, n_hi = mid, n_mid
        else:
            lo, n_lo = mid, n_mid
        if abs(hi - lo) <= 1e-15 * max(abs(lo), abs(hi)):
            break
    raise InputError(f"could not isolate the threshold of the level with {k} nodes between "
                     f"{lo:.10g} and {hi:.10g} (the bound-level count there jumps by more than one)")


def _auto_bracket(problem: _ZeroEnergy, k: int, p0: float, spec) -> tuple[float, float, int, int]:
    """Search outward from ``p0`` for neighbouring values whose counts straddle k|k+1."""
    lower = spec.minimum if spec.minimum is not None else -math.inf
    upper = spec.maximum if spec.maximum is not None else math.inf
    positive = p0 > 0 and lower >= 0
    ladder_up, ladder_down = [], []
    for j in range(1, 41):
        if positive:
            ladder_up.append(p0 * 2.0 ** (j / 2))
            ladder_down.append(p0 * 2.0 ** (-j / 2))
        else:
            step = max(abs(p0), 1.0) * 2.0 ** (j - 1) * 0.25
            ladder_up.append(p0 + step)
            ladder_down.append(p0 - step)

    def allowed(p):
        if p < lower or p > upper:
            return False
        if p == lower and spec.exclusive_minimum or p == upper and spec.exclusive_maximum:
            return False
        return True

    n0 = problem.count(p0)
    prev_up, prev_down = (p0, n0), (p0, n0)
    alive_up, alive_down = True, True
    for p_up, p_down in zip(ladder_up, ladder_down):
        for side in ("up", "down"):
            if side == "up" and alive_up:
                p = p_up
            elif side == "down" and alive_down:
                p = p_down
            else:
                continue
            if not allowed(p):
                if side == "up":
                    alive_up = False
                else:
                    alive_down = False
                continue
            try:
                n = problem.count(p)
            except NoThresholdError:
                if side == "up":
                    alive_up = False
                else:
                    alive_down = False
                continue
            q, nq = prev_up if side == "up" else prev_down
            if (n <= k) != (nq <= k):
                return (q, p, nq, n) if q < p else (p, q, n, nq)
            if side == "up":
                prev_up = (p, n)
            else:
                prev_down = (p, n)
        if not (alive_up or alive_down):
            break
    raise InputError(
        f"no threshold of the level with {k} nodes found near {problem.parameter} = {p0:.6g} "
        f"(searched {prev_down[0]:.4g} ... {prev_up[0]:.4g}, where {problem.count(prev_down[0])} and "
        f"{problem.count(prev_up[0])} levels of that partial wave are bound); give a bracket")


# --------------------------------------------------------------------------- #
# The threshold
# --------------------------------------------------------------------------- #

def _resolve(potential, fixed, plugins, parameter):
    from radsolve.potentials import as_potential

    if not isinstance(parameter, str):
        raise InputError(f"parameter must be a parameter name, got {parameter!r}", parameter="parameter")
    base = as_potential(potential, plugins, fixed)
    family = base.family
    if parameter not in family.parameters:
        import difflib

        near = difflib.get_close_matches(parameter, list(family.parameters), n=1)
        hint = f" (did you mean {near[0]!r}?)" if near else ""
        raise InputError(f"potential {family.name!r} has no parameter {parameter!r}{hint}; its parameters: "
                         + (", ".join(family.parameters) or "none"), parameter="parameter")
    spec = family.parameters[parameter]
    if not spec.is_numeric:
        raise InputError(f"parameter {parameter!r} of {family.name} is a {spec.kind}, not a number; "
                         "a threshold needs a numeric parameter", parameter="parameter")
    return base, spec


def _parse_bracket(bracket, spec, parameter, family_name) -> tuple[float, float] | None:
    if bracket is None:
        return None
    if isinstance(bracket, str) or not hasattr(bracket, "__len__") or len(bracket) != 2:
        raise InputError(f"bracket must be two values (a, b), got {bracket!r}", parameter="bracket")
    a = spec.parse(bracket[0], parameter, family_name)
    b = spec.parse(bracket[1], parameter, family_name)
    if a == b:
        raise InputError(f"bracket ({a:g}, {b:g}) is empty; give two different values", parameter="bracket")
    return (min(a, b), max(a, b))


def _richardson(series):
    from radsolve.core.extrapolation import richardson  # Numerov's error series in h**4, h**6, ...

    return richardson(series, (4, 6, 8, 10))


def _critical_on(problem: _ZeroEnergy, layout: _Layout, refinement: int, lo: float, hi: float,
                 outer: tuple[float, float]) -> tuple[float, float, float]:
    """The zero of A(p) on one grid; widens [lo, hi] within ``outer`` if the grid moved it."""
    from scipy.optimize import brentq

    def amplitude(p):
        return problem.shoot(p, layout, refinement).amplitude

    f_lo, f_hi = amplitude(lo), amplitude(hi)
    width = hi - lo
    for _ in range(30):
        if f_lo * f_hi < 0:
            break
        width *= 2.0
        lo, hi = max(lo - width, outer[0]), min(hi + width, outer[1])
        f_lo, f_hi = amplitude(lo), amplitude(hi)
    else:
        raise InputError(f"the threshold moved out of the bracket {outer[0]:.10g} ... {outer[1]:.10g} "
                         "on a finer grid; give a wider bracket")
    if f_lo == 0.0:
        return lo, lo, hi
    if f_hi == 0.0:
        return hi, lo, hi
    root = brentq(amplitude, lo, hi, xtol=1e-300, rtol=1e-15, maxiter=200)
    return float(root), lo, hi


def _on_box(problem: _ZeroEnergy, layout: _Layout, lo: float, hi: float, outer, tol: float):
    """p_c extrapolated in the step on one box: (value, grid_error, refinements used)."""
    series: list[float] = []
    value, estimate = math.nan, math.inf
    best = (math.nan, math.inf)
    last_refinement = 0
    for refinement in range(MAX_HALVINGS + 1):
        if problem.points(layout, refinement) > MAX_POINTS:
            break
        root, lo, hi = _critical_on(problem, layout, refinement, lo, hi, outer)
        # The next grid moves the root by less than this one did: start close,
        # so that the search cannot reach the threshold of another level.
        moved = abs(root - series[-1]) if series else 1e-3 * abs(root)
        width = max(8.0 * moved, 1e-12 * abs(root))
        lo, hi = max(root - width, outer[0]), min(root + width, outer[1])
        series.append(root)
        last_refinement = refinement
        if len(series) >= 3:
            value, estimate, _ = _richardson(series)
            if estimate < best[1]:
                best = (value, estimate)
            if best[1] <= 0.3 * tol * abs(best[0]):
                break
    if len(series) < 3:
        return series[-1], math.inf, last_refinement
    return best[0], best[1], last_refinement


def _slope(problem: _ZeroEnergy, layout: _Layout, p_c: float, refinement: int) -> tuple[float | None, float | None]:
    """dE/dp at threshold for l >= 1, and its estimated error (None, None for l = 0).

    Computed on the two finest grids and extrapolated assuming a second-order
    error (the trapezoid rule across a jump of V; smooth V converge faster),
    the change being the estimate.
    """
    nu = problem.shoot(p_c, layout, max(refinement, 1)).exponents
    if nu is None or -2.0 * nu[1] - 1.0 <= 0.0:
        return None, None  # the zero-energy state is not normalizable: E leaves the threshold faster than linearly
    fine = _slope_on(problem, layout, p_c, max(refinement, 1))
    coarse = _slope_on(problem, layout, p_c, max(refinement, 1) - 1)
    best = fine + (fine - coarse) / 3.0
    return best, abs(best - fine)


def _slope_on(problem: _ZeroEnergy, layout: _Layout, p_c: float, refinement: int) -> float:
    shot = problem.shoot(p_c, layout, refinement)
    delta = 1e-5 * max(abs(p_c), 1e-30)
    pot_hi, prof_hi = problem.profile(p_c + delta)
    pot_lo, prof_lo = problem.profile(p_c - delta)
    from radsolve.core.grids import potential_on_grid

    with np.errstate(all="ignore"):
        # potential_on_grid averages the one-sided limits at a jump, as the integration did.
        dv = ((potential_on_grid(pot_hi, shot.r, prof_hi.breakpoints) - prof_hi.v_infinity)
              - (potential_on_grid(pot_lo, shot.r, prof_lo.breakpoints) - prof_lo.v_infinity)) / (2.0 * delta)
    # Trapezoid rule up to the last point (u does not vanish there), and beyond
    # it u = b (r/R)**nu_minus (nu_minus = -l for a short-range tail), whose
    # norm is b**2 R / (-2 nu_minus - 1).
    weights = shot.weights.copy()
    weights[-1] *= 0.5
    tail = shot.decaying**2 * shot.r[-1] / (-2.0 * shot.exponents[1] - 1.0)
    norm = float(np.sum(weights * shot.u**2)) + tail
    derivative = getattr(problem, "energy_derivative", None)
    if derivative is not None:
        # Relativistic: the level is the root of lambda(W; p) = W, lambda the level of V_eff(.; W, p), so
        # dW/dp = <dV_eff/dp> / (1 - <dV_eff/dW>) (Hellmann-Feynman on the fixed problem, both at threshold;
        # beyond the last point dV_eff/dW is taken as its last value)
        dw = derivative(p_c, shot.r)
        norm -= float(np.sum(weights * dw * shot.u**2)) + float(dw[-1]) * tail
    return float(np.sum(weights * dv * shot.u**2) / norm)


def threshold(potential, parameter: str, *, level: str = DEFAULT_LEVEL, bracket=None, fixed=None, mass=None,
              tol: float = 1e-9, plugins=None, units: str | None = None, dimension: int = 3,
              equation: str = "schrodinger") -> ThresholdResult:
    """The parameter value at which ``level`` reaches the continuum threshold E = V(inf).

    Parameters
    ----------
    potential : str or Potential
        A family name or a Potential (its parameters are the starting point).
    parameter : str
        The parameter varied, e.g. ``"screening_length"``.
    level : str
        Spectroscopic label, e.g. ``"1s"``, ``"2p"``; with j for a family with a
        spin-orbit term, e.g. ``"1p3/2"`` (nuclear labels count n = nodes + 1).
    bracket : (a, b), optional
        Values of the parameter (the family's units, or strings with units) between
        which the level changes from bound to unbound.  Without it the search
        steps outward from the parameter's current value.
    fixed : dict, optional
        The other parameters; the rest take their defaults.  A value of
        ``parameter`` itself is where the search starts when no bracket is given.
    mass : float or str
        Reduced mass in the unit system's mass unit (electron masses, or
        MeV/c**2 for a nuclear family), or particle names.
    tol : float
        Target relative error of the critical value (1e-13 ... 1e-2).
    plugins : path or list of paths, optional
    units : {"atomic", "nuclear"}, optional
        The unit system; by default the one the family is written in.
    dimension : int
        Space dimension (centrifugal term with L = l + (d-3)/2); L > -1/2 is
        needed (in two dimensions an s level is bound by any net attraction).
    equation : {"schrodinger", "dirac", "klein-gordon"}
        The wave equation.  Relativistic: the threshold of the exact
        second-order form's effective potential at W = V(inf) (see
        :mod:`radsolve.core.relativistic`); Dirac levels carry j (``"1s1/2"``).
        The slope is dW/dp of W = E - mc^2: <dV_eff/dp> / (1 - <dV_eff/dW>) over the zero-energy
        state of the effective problem (see ``ThresholdResult.slope``).

    Returns
    -------
    ThresholdResult

    Raises
    ------
    NoThresholdError
        Confining potential, or a tail of 1/r**2 or longer range (e.g. Coulomb).
    InputError
        Unknown or non-numeric parameter, bad label, a bracket that does not
        bracket the threshold (the message gives the bound counts at its ends).
    """
    from radsolve.core.inputs import validated_dimension
    from radsolve.units import family_unit_system

    base, spec = _resolve(potential, fixed, plugins, parameter)
    family = base.family
    system = family_unit_system(family, units)
    key = parse_level(level, system.name, "level", parameter="level")
    n, l, j, k = key.n, key.l, key.j, key.nodes
    dimension = validated_dimension(dimension)
    if l + (dimension - 3) / 2.0 <= -0.5 and k == 0:
        raise NoThresholdError(f"in {dimension} dimensions the lowest s level (L = -1/2) is bound by any "
                               "net attraction, however weak: there is no threshold to find (the "
                               "higher s levels have one)")
    from radsolve.core.relativistic import DIRAC, SCHRODINGER, validated_equation

    equation = validated_equation(equation)
    if equation == DIRAC:
        if j is None:
            raise InputError(f"level {level!r}: Dirac levels are labelled with j (e.g. 1s1/2, 2p3/2)",
                             parameter="level")
    elif j is not None and not getattr(base, "has_spin_orbit", False):
        raise InputError(f"level {level!r} names j, but potential {family.name!r} has no spin-orbit "
                         "term; give the label without j (e.g. 1p)", parameter="level")
    if equation != SCHRODINGER and dimension != 3:
        raise InputError(f"the {equation} equation is solved in three dimensions only", parameter="dimension")
    mu = system.parse_mass(mass)
    from radsolve.core.targets import THRESHOLD_TOL_RANGE, validated_tol

    tol = validated_tol(tol, "tol", THRESHOLD_TOL_RANGE)
    if equation == SCHRODINGER:
        problem = _ZeroEnergy(base, parameter, l, system.kinetic_mass(mu), tol, j=j, dimension=int(dimension))
    else:
        problem = _RelativisticZeroEnergy(base, parameter, l, system.kinetic_mass(mu), tol, j=j,
                                          dimension=3)
        problem.relativistic(equation, system.name, mu)
    wave = f"l = {l}" + ("" if j is None else f", j = {int(round(2 * j))}/2")
    given = _parse_bracket(bracket, spec, parameter, family.name)
    if given is None:
        p0 = float(base.parameters[parameter])
        problem.check_tail(p0)
        lo, hi, n_lo, n_hi = _auto_bracket(problem, k, p0, spec)
        outer = (lo, hi)
    else:
        lo, hi = given
        for p in given:
            problem.check_tail(p)
        n_lo, n_hi = problem.count(lo), problem.count(hi)
        if (n_lo <= k) == (n_hi <= k):
            state = "bound" if n_lo > k else "not bound"
            raise InputError(
                f"bracket {lo:.10g}:{hi:.10g} does not bracket the threshold of {level}: {level} is "
                f"{state} at both ends ({n_lo} and {n_hi} bound levels with {wave} there; the "
                f"threshold of {level} is where that count changes between {k} and {k + 1})",
                parameter="bracket")
        outer = (lo, hi)
    lo, hi = _narrow(problem, k, lo, hi, n_lo, n_hi)
    bound_side = "above" if problem.count(hi) > k else "below"

    # Scanning V for undeclared breakpoints at each of the ~100 trial values of the parameter
    # would be most of the run time.  When the scan finds none at either end of the bracket, the
    # trial values skip it, and the answer is verified by a full scan at p_c: a breakpoint there
    # that the ends did not show restarts the refinement with every value scanned.
    smooth_ends = not (problem.profile(lo)[1].breakpoints or problem.profile(hi)[1].breakpoints)
    problem.scan_breakpoints = not smooth_ends
    value, grid_error, box_error, refinement, layout, first_layout = _refine(problem, lo, hi, outer, tol)
    problem.scan_breakpoints = True
    if smooth_ends and problem.profile(value)[1].breakpoints:
        value, grid_error, box_error, refinement, layout, first_layout = _refine(problem, lo, hi, outer, tol)
    error = grid_error + box_error
    # The slope on the first box: beyond it the zero-energy state is the tail
    # law's decaying solution, whose norm is added in closed form; on a much
    # larger box the last rounding of p_c (a tiny growing part) would dominate u.
    slope, slope_error = _slope(problem, first_layout, value, refinement)
    scale = abs(value) if value != 0 else max(abs(outer[0]), abs(outer[1]))
    return ThresholdResult(
        potential=family.name, parameter=parameter, parameter_unit=spec.unit,
        label=key.label, n=n, l=l, nodes=k, value=float(value),
        error_estimate=float(error), grid_error=float(grid_error), box_error=float(box_error),
        converged=bool(error <= tol * scale), bound_side=bound_side, bracket=outer,
        box_radius=float(layout.r_max), slope=slope, slope_error=slope_error,
        fixed={kk: v for kk, v in base.parameters.items() if kk != parameter}, mass=mu, tol=tol,
        j=j, units=system.name, energy_unit=system.energy_unit, dimension=int(dimension), equation=equation,
    )


def _refine(problem: _ZeroEnergy, lo: float, hi: float, outer, tol: float):
    """p_c on halving grids (:func:`_on_box`) and doubling boxes until the box no longer moves it."""
    layout = problem.layout([lo, hi])
    first_layout = layout
    previous, box_error, grid_error = None, math.inf, math.inf
    value, refinement = math.nan, 0
    for doubling in range(MAX_BOX_DOUBLINGS + 1):
        value, grid_error, refinement = _on_box(problem, layout, lo, hi, outer, tol)
        if previous is not None:
            box_error = abs(value - previous)
            if box_error <= 0.3 * tol * abs(value) or layout.r_max >= LARGEST_BOX:
                break
        previous = value
        width = max(10.0 * grid_error, 1e-9 * abs(value)) if math.isfinite(grid_error) else hi - lo
        lo, hi = max(value - width, outer[0]), min(value + width, outer[1])
        layout = _Layout(layout.r_min, min(2.0 * layout.r_max, LARGEST_BOX))
    return value, grid_error, box_error, refinement, layout, first_layout


def critical_values(potential, parameter: str, *, nmax: int | None = None, bracket=None, fixed=None, mass=None,
               tol: float = 1e-9, plugins=None, levels: Sequence[str] | None = None,
               lmax: int | None = None, spin_orbit: bool = False, units: str | None = None,
               dimension: int = 3, equation: str = "schrodinger") -> "CriticalValues":
    """The critical values of every level with n <= ``nmax``, or of ``levels``.

    Give ``nmax`` or ``levels``, not both; with neither, the level is
    :func:`threshold`'s default, 1s.  Atomic labels: every l < n (and
    l <= ``lmax`` if given; ``lmax`` goes with ``nmax`` only).  Nuclear
    labels (n = nodes + 1) need ``lmax``.  With ``spin_orbit`` each l > 0
    gives both j = l -+ 1/2.  The other parameters are those of
    :func:`threshold`; ``bracket`` (if given) must contain every threshold
    asked for.  Results are ordered by n, then l, then j.  ``equation="dirac"``
    labels every level with j, as spin-orbit does (the spin-orbit coupling is in
    the equation; ``spin_orbit`` itself is refused with it).
    """
    from radsolve.core.relativistic import DIRAC, SCHRODINGER, validated_equation
    from radsolve.potentials import Potential, get_family

    equation = validated_equation(equation)
    if spin_orbit and equation != SCHRODINGER:
        raise InputError(f"spin_orbit cannot be used with equation={equation!r}: the Dirac equation has the "
                         "spin-orbit coupling inside (its levels carry j), a Klein-Gordon particle has spin 0",
                         parameter="spin_orbit")
    with_j = spin_orbit or equation == DIRAC

    family = potential.family if isinstance(potential, Potential) else get_family(potential, plugins)
    system = units or getattr(family, "units", "atomic")
    if levels is not None and nmax is not None:
        raise InputError("levels and nmax: give one or the other (levels names each level; nmax asks "
                         "for every level with n <= nmax)", parameter="levels")
    if lmax is not None and nmax is None:
        raise InputError("lmax goes with nmax (every level with n <= nmax and l <= lmax), not with "
                         "levels", parameter="lmax")
    if levels is None and nmax is None:
        levels = [DEFAULT_LEVEL]
    if levels is None:
        if isinstance(nmax, bool) or not isinstance(nmax, (int, np.integer)) or not 1 <= nmax <= NMAX_LIMIT:
            raise InputError(f"nmax must be a whole number from 1 to {NMAX_LIMIT}, got {nmax!r}",
                             parameter="nmax")
        if lmax is not None and (isinstance(lmax, bool) or not isinstance(lmax, (int, np.integer)) or lmax < 0):
            raise InputError(f"lmax must be a whole number >= 0, got {lmax!r}", parameter="lmax")
        if system == "nuclear" and lmax is None:
            raise InputError("lmax is needed: nuclear labels count n = nodes + 1 for every l, so give "
                             "lmax as well as nmax", parameter="lmax")
        labels = []
        for n in range(1, int(nmax) + 1):
            if system == "nuclear":
                top = int(lmax)
            else:
                top = n - 1 if lmax is None else min(int(lmax), n - 1)
            for l in range(top + 1):
                js = ([1] if l == 0 else [2 * l - 1, 2 * l + 1]) if with_j else [None]
                labels += [level_label(n, l) + ("" if t is None else f"{t}/2") for t in js]
    else:
        if isinstance(levels, str):
            levels = [levels]
        labels = [parse_level(lab, system, "level", parameter="levels").label for lab in levels]
        if not labels:
            raise InputError("levels: at least one level label is needed", parameter="levels")
    return CriticalValues([threshold(potential, parameter, level=lab, bracket=bracket, fixed=fixed, mass=mass,
                                     tol=tol, plugins=plugins, units=units, dimension=dimension,
                                     equation=equation)
                           for lab in labels])


def sweep_crossings(result, tol: float = 1e-9) -> dict[str, ThresholdResult]:
    """Critical values of the levels that leave (or join) the spectrum within a one-parameter sweep.

    For each level of ``result`` (a :class:`radsolve.analysis.sweeps.SweepResult` with one
    varied parameter) whose ``bound`` flag changes between two neighbouring
    points, the two points are the bracket of :func:`threshold`.  Only the
    first such change of each level is used.  Potentials without a threshold
    (Coulomb tails) give an empty dict.
    """
    if len(result.parameters) != 1:
        raise InputError("sweep_crossings needs a sweep of one parameter")
    key = result.parameters[0]
    found: dict[str, ThresholdResult] = {}
    potential = result.base if result.base is not None else result.potential
    for label in result.labels():
        track = result.level(label)
        x = track.values[key]
        order = np.argsort(x)
        x, bound = x[order], track.bound[order]
        change = np.nonzero(bound[1:] != bound[:-1])[0]
        if change.size == 0:
            continue
        i = int(change[0])
        try:
            found[label] = threshold(potential, key, level=label, bracket=(float(x[i]), float(x[i + 1])),
                                     mass=result.mass, tol=tol, units=result.units,
                                     dimension=result.dimension)
        except NoThresholdError:
            return {}
        except InputError:
            continue  # the sweep's verdict and the zero-energy count differ here (box-limited level)
    return found


def format_thresholds(results: Sequence[ThresholdResult]) -> str:
    """A text table of threshold results (parameter values in atomic units)."""
    from radsolve.output.report import format_columns

    if not results:
        return "no thresholds\n"
    first = results[0]
    unit = first.parameter_unit
    fixed = ", ".join(f"{k} = {v:.10g}" if isinstance(v, float) else f"{k} = {v}"
                      for k, v in first.fixed.items())
    mass_unit = "MeV/c^2" if first.units == "nuclear" else "electron masses"
    lines = [f"binding thresholds of {first.potential} in {first.parameter}"
             + (f" ({unit})" if unit else "") + (f"; {fixed}" if fixed else "")
             + f"; reduced mass {first.mass:.10g} {mass_unit}"
             + ("" if first.equation == "schrodinger" else f"; {first.equation} equation"), ""]
    header = ["level", f"{first.parameter}_c", "est.err", "conv", "bound", "approach"]
    rows = []
    for res in results:
        approach = res.approach.split(":")[0]
        if res.slope is not None:
            approach += f", dE/dp = {res.slope:.4g} {res.energy_unit}/{unit or 'unit'}"
        rows.append([res.label, f"{res.value:.12g}", f"{res.error_estimate:.1e}",
                     "yes" if res.converged else "NO", f"{res.bound_side} p_c", approach])
    lines += format_columns(header, rows, {1, 2})
    lines += ["", "E -> V(inf) as p -> p_c. In three dimensions s levels leave the threshold "
              "quadratically and spread without bound there; l >= 1 levels leave it linearly and "
              "stay localized.", "Note: " + MODEL_NOTE]
    if any(not r.converged for r in results):
        lines.append("WARNING: some values did not reach the tolerance; their estimates are what was achieved")
    return "\n".join(lines) + "\n"
