"""Numerical probing of a potential: what the grid, the box and the count of bound levels need.

A plug-in may give only V(r).  Before solving we learn from V itself (or from
the family's optional hooks, when present):

* the continuum threshold V(inf), or that V confines (V -> +inf);
* the small-r law V ~ c r**p (:class:`OriginLaw`), which decides whether the
  Hamiltonian is bounded below (fall to the centre when p < -2, or p = -2 with
  2 m c < -(L + 1/2)**2) and how u ~ r**lambda behaves at the origin.  A
  term c/r**2 is scale-free: it changes lambda but sets no length, so the
  inner length is taken from the rest of V;
* the large-r law V - V(inf) ~ C r**-q (:class:`TailLaw`): short range,
  inverse square (which changes the zero-energy exponents), or longer range
  (an attractive one binds infinitely many levels);
* the inner length where the potential first matters, and the range beyond
  which it no longer does;
* breakpoints: radii where V or its slope jumps.  Families may declare them
  (``breakpoints`` hook); for those that do not, V is scanned and every jump
  or kink found is located by bisection.

V is evaluated from 1e-30 to 1e30 length units, so very narrow, very wide and
very long-ranged potentials are seen at their own scales; where V overflows
(a Lennard-Jones core far inside any physical radius, say) it is used only
where it is finite.  Everything is in the unit system of the solve (the mass
m is the kinetic mass of -u''/(2m)).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from radsolve.errors import InputError, PluginError, UnboundedBelowError

#: Radii probed (bohr in atomic units, fm in nuclear ones), 20 per decade.
PROBE_RADII = np.logspace(-30, 30, 1201)
#: V r**2 changes by less than this relative amount over the smallest radii:
#: a c/r**2 law there.
_POWER_SNAP = 1e-3
#: Strength 2 m r**2 |V| at which the potential starts to matter (inner length).
INNER_STRENGTH = 1e-2
#: Strength below which V - V(inf) no longer matters (range).
RANGE_STRENGTH = 1e-3
#: Samples per decade of the scan for undeclared jumps and kinks.
_SCAN_DENSITY = 128
#: A first or second difference this many times its neighbours' median is a candidate.
_OUTLIER = 30.0
#: At most this many undeclared breakpoints are located (more suggests noise) ...
_MAX_DETECTED = 24
#: ... and at most this many candidates of each kind are bisected.
_MAX_CANDIDATES = 48


@dataclass(frozen=True)
class OriginLaw:
    """V(r) ~ c r**p as r -> 0.

    ``kind`` is ``"regular"`` (p > -2: finite, Coulomb-like, ...),
    ``"inverse_square"`` (p = -2: the scale-free term c/r**2) or ``"core"``
    (a repulsive core more singular than 1/r**2, or one so steep that V
    overflows below ``finite_from``).  A fall to the centre (an attractive
    law more singular than that) is refused by :meth:`check_bounded_below`.
    """

    coefficient: float
    power: float
    kind: str
    finite_from: float = 0.0

    @property
    def inverse_square(self) -> float:
        """The c of a c/r**2 law at the origin (0 for other laws)."""
        return self.coefficient if self.kind == "inverse_square" else 0.0

    def exponent(self, L: float, mass: float) -> float:
        """lambda of u ~ r**lambda: 1/2 + sqrt((L + 1/2)**2 + 2 m c) with a c/r**2 law, else L + 1."""
        if self.kind == "inverse_square":
            return 0.5 + math.sqrt(max((L + 0.5) ** 2 + 2.0 * mass * self.coefficient, 0.0))
        return L + 1.0


@dataclass(frozen=True)
class TailLaw:
    """V(r) - V(inf) ~ C r**-q as r -> inf.

    ``kind``: ``"confining"``, ``"short"`` (faster than any power that
    matters: compact, exponential or q > 2), ``"inverse_square"`` (q = 2),
    ``"long"`` (q < 2, e.g. a Coulomb tail) or ``"irregular"`` (no law could
    be read off, e.g. an oscillating tail).  ``start`` is a radius beyond
    which the law describes V well.
    """

    kind: str
    power: float
    coefficient: float
    start: float

    def exponents(self, L: float, mass: float) -> tuple[float, float] | None:
        """(nu_plus, nu_minus) of the zero-energy solutions r**nu beyond the range, or None.

        Free asymptotics (short tails): L + 1 and -L.  With a c/r**2 tail:
        1/2 +- sqrt((L + 1/2)**2 + 2 m c).  None when the tail binds
        infinitely many levels or has no power-law asymptotics.
        """
        if self.kind == "short":
            return L + 1.0, -L
        if self.kind == "inverse_square":
            disc = (L + 0.5) ** 2 + 2.0 * mass * self.coefficient
            if disc < 0:
                return None
            root = math.sqrt(disc)
            return 0.5 + root, 0.5 - root
        return None

    @property
    def coulomb(self) -> bool:
        """A Coulomb law C/r (the probe rounds a power within 0.01 of a whole number to it)."""
        return self.kind == "long" and self.power == 1.0

    def infinitely_many(self, L: float, mass: float) -> str | None:
        """Why this tail binds infinitely many levels, or None if it does not."""
        if self.kind == "confining":
            return "the potential confines (V -> inf as r -> inf): every level is bound"
        if self.kind == "long" and self.coefficient < 0:
            return (f"the attractive tail V - V(inf) ~ -{abs(self.coefficient):.4g}/r**{self.power:.3g} "
                    "falls off more slowly than 1/r**2 (a Coulomb-like tail): it binds infinitely many levels")
        if self.kind == "inverse_square" and (L + 0.5) ** 2 + 2.0 * mass * self.coefficient < 0:
            return (f"the tail -g/r**2 with g = {-self.coefficient:.6g} is supercritical, "
                    f"2 m g > (L + 1/2)**2 = {(L + 0.5) ** 2:.6g}: it binds infinitely many levels")
        return None


@dataclass(frozen=True)
class PotentialProfile:
    """What probing learned about V, in the solve's units.

    Attributes
    ----------
    v_infinity : float
        lim V(r) for r -> inf (``math.inf`` when V confines).
    origin : OriginLaw
    tail : TailLaw
    inner_length : float
        The smallest radius at which the potential, less a scale-free c/r**2
        term, becomes comparable to the kinetic scale:
        2 m r**2 |V - c/r**2 - V_ref| >= INNER_STRENGTH (``math.inf``
        when nothing but a scale-free term is there).
    range : float
        Beyond this radius 2 m r**2 |V - V(inf)| < RANGE_STRENGTH for good
        (``math.inf`` for tails of 1/r**2 or longer, or confining V).
    breakpoints : tuple of float
        Radii where V or its slope is not smooth: declared by the family, or
        detected (``detected`` says which).
    detected : bool
        True when the breakpoints were found by scanning V (no hook).
    probe_values : ndarray or None
        V at :data:`PROBE_RADII` as probed (read-only; infinities and NaN kept).
    """

    v_infinity: float
    origin: OriginLaw
    tail: TailLaw
    inner_length: float
    range: float
    breakpoints: tuple[float, ...]
    detected: bool = False
    probe_values: np.ndarray | None = field(default=None, repr=False, compare=False)

    def breakpoints_between(self, lo: float, hi: float) -> bool:
        """Whether V has a breakpoint strictly between radii ``lo`` and ``hi`` (then on the
        grid: the error series of a method may change, ``RadialSolver.orders``)."""
        return any(lo < b < hi for b in self.breakpoints)

    # Names kept from the first release: the small-r law as two numbers.
    @property
    def small_r_coefficient(self) -> float:
        return self.origin.coefficient

    @property
    def small_r_power(self) -> float:
        return self.origin.power

    @property
    def confining(self) -> bool:
        return math.isinf(self.v_infinity)

    @property
    def scale_free(self) -> bool:
        """No length scale at all: nothing but c/r**2 (or nothing) and a constant."""
        return math.isinf(self.inner_length)

    def origin_exponent(self, L: float, mass: float) -> float:
        """lambda in u ~ r**lambda as r -> 0 for (effective) angular momentum L."""
        return self.origin.exponent(L, mass)

    def check_bounded_below(self, L: float, mass: float) -> None:
        """Raise UnboundedBelowError when V collapses the state into the origin."""
        origin = self.origin
        c, p = origin.coefficient, origin.power
        if origin.kind == "core" or c >= 0.0:
            return
        if origin.kind == "regular":
            return
        if origin.kind == "fall":
            raise UnboundedBelowError(
                f"the potential behaves like {c:.4g}*r**({p:.3g}) as r -> 0, more attractive "
                "than -1/r**2: the Hamiltonian is unbounded below (fall to the centre) for every l. "
                "Allowed: potentials less singular than r**-2 at the origin, or -g/r**2 with "
                "2*mu*g <= (l + 1/2)**2."
            )
        g = -c
        if 2.0 * mass * g > (L + 0.5) ** 2:
            raise UnboundedBelowError(
                f"the potential behaves like -g/r**2 with g = {g:.6g} (energy x length**2) as r -> 0; "
                f"for l = {L:g} and reduced mass {mass:.6g}, 2*mu*g = {2 * mass * g:.6g} exceeds "
                f"(l + 1/2)**2 = {(L + 0.5) ** 2:.6g}: the Hamiltonian is unbounded below "
                "(fall to the centre). Allowed: 2*mu*g <= (l + 1/2)**2."
            )

    def inner_cutoff(self, L: float, mass: float, share: float) -> float:
        """Radius where the grid may start so that the power-law condition errs by ~``share``.

        The solvers impose u ~ r**lambda at the first point.  Neglecting the
        potential's correction to that law there shifts a level by about
        (a / inner_length)**(2 lambda) relative; ``share`` is that relative
        error (a named part of the tolerance, see
        :class:`radsolve.core.targets.Targets`).  Cores get their cutoff from the
        WKB decay instead (:func:`wkb_inner_radius`); this returns the
        smallest finite radius for them.
        """
        if self.origin.kind == "core" or math.isinf(self.inner_length):
            return max(self.origin.finite_from, 1e-30)
        lam = self.origin_exponent(L, mass)
        return max(self.inner_length * share ** (1.0 / max(2.0 * lam, 0.5)), self.origin.finite_from)


# --------------------------------------------------------------------------- evaluation


def _raw(potential, r: np.ndarray) -> np.ndarray:
    """V at ``r`` with non-finite values kept; a V that raises is tried decade by decade."""
    evaluate = getattr(potential, "raw", None)
    if evaluate is None:  # a bare callable (tests, internal use)
        with np.errstate(all="ignore"):
            return np.asarray(potential(r), dtype=float)
    try:
        return evaluate(r)
    except PluginError:
        # Some plug-ins raise outside the radii they were written for; find
        # the ones where they answer (and raise if there are none).
        out = np.full(r.shape, np.nan)
        ok = False
        for chunk in np.array_split(np.arange(r.size), max(r.size // 20, 1)):
            try:
                out[chunk] = evaluate(r[chunk])
                ok = True
            except PluginError:
                continue
        if not ok:
            raise
        return out


# --------------------------------------------------------------------------- the laws


def _origin_law(r: np.ndarray, v: np.ndarray, hook) -> tuple[OriginLaw, int]:
    """The small-r law and the index from which V is finite for good."""
    finite = np.isfinite(v)
    if not finite.any():
        raise PluginError("the potential is not finite at any radius probed (1e-30 ... 1e30)")
    # V must be finite from some radius on, up to where it may confine.
    i0 = int(np.argmax(finite))
    finite_from = float(r[i0]) if i0 > 0 else 0.0
    if hook is not None:
        c, p = hook
        kind = _law_kind(c, p)
        return OriginLaw(float(c), float(p), kind, finite_from), i0
    if i0 > 0:
        # Non-finite below r[i0]: a core if V is large and rising towards it.
        near = v[i0 : i0 + 20]
        near = near[np.isfinite(near)]
        if near.size >= 2 and near[0] > 0 and near[0] > near[-1]:
            return OriginLaw(float(near[0] * r[i0] ** 12), -12.0, "core", finite_from), i0
        raise PluginError(f"the potential is not finite below r = {r[i0]:.3g} and does not rise "
                          "towards the origin there; radsolve cannot tell what it does at small r")
    # Three decades at the small end of the finite region, as far out as 1e-16.
    start = max(i0, int(np.searchsorted(r, 1e-16)))
    idx = [start, start + 20, start + 40]
    rr, vv = r[idx], v[idx]
    if np.all(vv == 0.0):
        return OriginLaw(0.0, 0.0, "regular", finite_from), i0
    if np.all(np.abs(vv - vv[-1]) <= 1e-6 * np.abs(vv[-1])):
        return OriginLaw(float(vv[0]), 0.0, "regular", finite_from), i0
    if np.any(vv == 0.0) or len(set(np.sign(vv))) > 1:
        return OriginLaw(float(vv[0]), 0.0, "regular", finite_from), i0
    p1 = math.log(abs(vv[1] / vv[0])) / math.log(rr[1] / rr[0])
    p2 = math.log(abs(vv[2] / vv[1])) / math.log(rr[2] / rr[1])
    p = 0.5 * (p1 + p2)
    if abs(p - round(p)) < _POWER_SNAP:
        p = float(round(p))
    c = float(vv[0] / rr[0] ** p)
    return OriginLaw(c, p, _law_kind(c, p), finite_from), i0


def _law_kind(c: float, p: float) -> str:
    if abs(p + 2.0) < _POWER_SNAP:
        return "inverse_square"
    if p < -2.0:
        return "core" if c > 0 else "fall"
    return "regular"


def _v_infinity(r: np.ndarray, v: np.ndarray) -> float:
    """lim V as r -> inf from the far samples: a limit, or inf when V keeps rising."""
    far = r >= 1.0
    vf = v[far]
    finite = np.isfinite(vf)
    if not finite.all():
        last = int(np.argmin(finite))  # first non-finite far sample
        if last == 0 or np.any(finite[last:]):
            if np.nanmax(np.where(np.isfinite(vf), vf, -np.inf)) > 0 and not np.any(finite[last:]):
                return math.inf
            raise PluginError("the potential is not finite at large radii and does not rise "
                              "there; radsolve cannot tell its limit at infinity")
        if vf[last - 1] > 0 and (last < 2 or vf[last - 1] >= vf[last - 2]):
            return math.inf  # overflowing while rising: confining
        raise PluginError("the potential overflows at large radii without rising; "
                          "radsolve cannot tell its limit at infinity")
    # Decade samples of the last ten decades.
    dec = vf[::20][-11:]
    steps = np.diff(dec)
    if np.all(steps == 0.0):
        return float(dec[-1])
    rising = np.all(steps[-4:] >= 0.0) and steps[-1] > 0.0
    if rising:
        tail = steps[-4:]
        ratios = tail[1:] / np.where(tail[:-1] > 0, tail[:-1], np.inf)
        if np.all(ratios > 0.9):
            return math.inf  # growing at least like a logarithm
    if np.all(steps[-4:] <= 0.0) and steps[-1] < 0.0:
        tail = steps[-4:]
        ratios = tail[1:] / np.where(tail[:-1] < 0, tail[:-1], -np.inf)
        if np.all(ratios > 0.9):
            raise InputError("the potential decreases without bound as r -> inf: the spectrum is "
                             "not bounded below and there are no bound levels to find. Allowed: a "
                             "potential with a limit at infinity, or one that rises (confines)")
    # V = V(inf) + C r**-q: the remainder of a geometric series of decade steps.
    d1, d2 = steps[-2], steps[-1]
    if d1 != 0.0 and d2 != 0.0 and np.sign(d1) == np.sign(d2) and abs(d2) < abs(d1):
        rho = d2 / d1
        limit = float(dec[-1] + d2 * rho / (1.0 - rho))
        # below the size of the last step the remainder itself is uncertain
        return 0.0 if abs(limit) < 1e-6 * abs(d2) else limit
    return float(dec[-1])


def _tail_law(r: np.ndarray, v: np.ndarray, v_inf: float, mass: float) -> TailLaw:
    """How V approaches V(inf) far out (r >= 1), see :class:`TailLaw`."""
    if math.isinf(v_inf):
        return TailLaw("confining", -math.inf, math.inf, 0.0)
    far = (r >= 1.0) & np.isfinite(v)
    rf, delta = r[far], v[far] - v_inf
    noise = 64.0 * np.finfo(float).eps * abs(v_inf) + 1e-290
    resolved = np.abs(delta) > 1e3 * noise
    if not resolved.any():
        return TailLaw("short", math.inf, 0.0, float(rf[0]))
    last = int(np.nonzero(resolved)[0][-1])
    # Local exponents at half-decade samples over every resolved far decade
    # (below the rounding of V(inf) a power law can no longer be seen, so
    # the law is read off where it still can).
    idx = np.nonzero(resolved)[0]
    idx = idx[idx <= last][::-10][::-1]
    if idx.size < 5:
        return TailLaw("short", math.inf, 0.0, float(rf[last]))
    ld = np.log(np.abs(delta[idx]))
    lr = np.log(rf[idx])
    q = -np.diff(ld) / np.diff(lr)
    signs = np.sign(delta[idx])
    if abs(delta[last]) > 1e9 * noise and last < rf.size - 20:
        # V - V(inf) stops abruptly (well above rounding): compact support.
        return TailLaw("short", math.inf, 0.0, float(rf[last]))
    if (q.size >= 3 and q[-1] > q[-2] + 0.1 and q[-2] > q[-3] + 0.1 and q[-1] > 2.5
            and signs[-1] == signs[-2] == signs[-3]):
        return TailLaw("short", math.inf, 0.0, float(rf[idx[-1]]))  # faster than any power
    if q.size < 4 or len(set(signs[-5:])) > 1:
        return TailLaw("irregular", math.nan, math.nan, float(rf[-1]))
    settled = np.abs(q[-4:] - q[-1]).max() < 0.02
    if not settled:
        return TailLaw("irregular", math.nan, math.nan, float(rf[-1]))
    qq = float(q[-1])
    if abs(qq - round(qq)) < 0.01:
        qq = float(round(qq))
    coeff = float(delta[idx[-1]] * rf[idx[-1]] ** qq)
    # Where the law starts: the first sample from which the local exponent
    # stays within 0.02 of its final value (and the sign stays).
    off = np.nonzero((np.abs(q - qq) >= 0.02) | (signs[1:] != signs[-1]))[0]
    start = float(rf[idx[off[-1] + 1]]) if off.size else float(rf[idx[0]])
    if qq > 2.0 + 0.01:
        return TailLaw("short", qq, coeff, start)
    if abs(qq - 2.0) <= 0.01:
        return TailLaw("inverse_square", 2.0, coeff, start)
    return TailLaw("long", qq, coeff, start)


# --------------------------------------------------------------------------- breakpoints


def find_breakpoints(potential, r_lo: float, r_hi: float) -> tuple[float, ...]:
    """Radii in [r_lo, r_hi] where V jumps or its slope jumps, located by bisection.

    V is sampled at _SCAN_DENSITY points per decade.  An interval whose change
    of V is far above that of its neighbours is a jump candidate; a point
    whose second difference is far above its neighbours' is a kink candidate.
    Each candidate is bisected on its own (:func:`_locate_break`).  A sharp
    but smooth feature shows neither a jump nor a change of slope there and
    is not a breakpoint.
    """
    if not (0 < r_lo < r_hi) or not math.isfinite(r_hi):
        return ()
    n = int(math.ceil(_SCAN_DENSITY * math.log10(r_hi / r_lo))) + 1
    n = min(max(n, 64), 8000)
    r = geometric_radii(r_lo, r_hi, n)
    f = _raw(potential, r)
    keep = np.isfinite(f)
    r, f = r[keep], f[keep]
    if r.size < 16:
        return ()
    level = float(np.max(np.abs(f)))
    from numpy.lib.stride_tricks import sliding_window_view

    def outliers(values, significance):
        # |value| > _OUTLIER * (median of its 17-point window): the median of 17 numbers is the
        # 9th smallest, so this holds exactly when more than 8 of them lie below |value| / _OUTLIER
        # -- a count of comparisons, five times cheaper than sorting every window.
        mag = np.abs(values)
        window = 8
        pad = np.pad(mag, window, mode="edge")
        below = (sliding_window_view(pad, 2 * window + 1) * _OUTLIER + 1e-300 < mag[:, None]).sum(axis=1)
        return np.nonzero((below > window) & (mag > significance))[0]

    d1 = np.diff(f)
    d2 = f[2:] - 2.0 * f[1:-1] + f[:-2]
    d4 = f[4:] - 4.0 * f[3:-1] + 6.0 * f[2:-2] - 4.0 * f[1:-3] + f[:-4]
    jumps = outliers(d1, 1e-12 * level)       # interval [r[i], r[i+1]]
    # A kink stands out in the second differences, and, when V is steep on the
    # log-spaced samples (a straight line in r is curved in ln r), in the
    # fourth ones, where smooth V is of order h**4.
    kinks = np.union1d(outliers(d2, 1e-12 * level) + 1, outliers(d4, 1e-12 * level) + 2)
    found: list[float] = []

    def known(a, b):
        return any(a * (1 - 1e-12) <= x <= b * (1 + 1e-12) for x in found)

    # Jump candidates are intervals [r[i], r[i+1]], kink candidates points bracketed two samples each
    # way; at most _MAX_CANDIDATES bisections for jumps, and as many again for kinks.
    tried = 0
    for limit, brackets in ((_MAX_CANDIDATES, ((r[i], r[i + 1]) for i in jumps)),
                            (2 * _MAX_CANDIDATES, ((r[max(i - 2, 0)], r[min(i + 2, r.size - 1)]) for i in kinks))):
        for a, b in brackets:
            if tried >= limit or len(found) >= _MAX_DETECTED:
                break
            if known(a, b):
                continue
            tried += 1
            point = _locate_break(potential, a, b)
            if point is not None and not known(point, point):
                found.append(point)
    return tuple(sorted(found))


def _quadratic(potential, x0: float, step: float):
    """The quadratic through V at x0, x0 + step, x0 + 2 step (a one-sided continuation of V)."""
    xs = np.array([x0, x0 + step, x0 + 2.0 * step])
    ys = _raw(potential, xs)
    c = np.polyfit(xs - xs[0], ys, 2)
    return lambda x: float(np.polyval(c, x - xs[0])), lambda x: float(np.polyval(np.polyder(c), x - xs[0]))


def _locate_break(potential, a: float, b: float) -> float | None:
    """The radius in [a, b] where V jumps or its slope jumps, or None if V is smooth there.

    Bisection on which one-sided continuation V follows: at the midpoint m,
    V is compared with the quadratic through three points just left of the
    interval and with the one through three points just right of it; the
    continuations are refitted on every halving, so their own error falls
    like the cube of the interval while a jump stays and a kink shrinks only
    linearly.  The same steps locate a jump, a kink, or both at once, to
    rounding.  At the end the two continuations are compared: a break needs a
    jump or a change of slope far above what their curvature error allows.
    """
    width0 = b - a
    for _ in range(200):
        w = b - a
        if w <= 8.0 * np.finfo(float).eps * b:
            break
        # the fits keep within half an interval of it, clear of neighbouring breakpoints
        left, _ = _quadratic(potential, a - 0.5 * w, 0.25 * w)
        right, _ = _quadratic(potential, b, 0.25 * w)
        m = 0.5 * (a + b)
        fm = float(_raw(potential, np.array([m]))[0])
        if abs(fm - left(m)) <= abs(fm - right(m)):
            a = m
        else:
            b = m
    c = 0.5 * (a + b)
    # Compare the continuations at c from a distance where their curvature
    # error is small but rounding is not yet dominant.
    w = max(1e-6 * width0, 64.0 * np.finfo(float).eps * c)
    left, dleft = _quadratic(potential, c - 3.0 * w, w)
    right, dright = _quadratic(potential, c + w, w)
    level = max(abs(left(c)), abs(right(c)), 1e-300)
    jump = abs(right(c) - left(c))
    bend = abs(dright(c) - dleft(c))
    slope = max(abs(dleft(c)), abs(dright(c)))
    # a smooth V gives jump ~ V3 w**3 and bend ~ V3 w**2 (V3 its third derivative): rounding level here
    if jump > 1e-9 * level or bend * c > 1e-6 * (level + slope * c):
        return c
    return None


# --------------------------------------------------------------------------- the profile


def profile(potential, mass: float, scan_breakpoints: bool = True) -> PotentialProfile:
    """Probe ``potential`` for kinetic mass ``mass`` (see the module docstring)."""
    r = PROBE_RADII
    v = _raw(potential, r)
    v.flags.writeable = False  # kept on the profile
    origin, i0 = _origin_law(r, v, potential.small_r() if hasattr(potential, "small_r") else None)

    hook_vinf = potential.v_infinity() if hasattr(potential, "v_infinity") else None
    v_inf = _v_infinity(r, v) if hook_vinf is None else float(hook_vinf)
    if math.isfinite(v_inf) and abs(v_inf) < 1e-280:
        v_inf = 0.0
    tail = _tail_law(r, v, v_inf, mass)

    finite = np.isfinite(v)
    c2 = origin.inverse_square
    with np.errstate(all="ignore"):
        rest = np.where(finite, v - c2 / r**2, np.nan)
    if math.isfinite(v_inf):
        reference = v_inf
    else:
        reference = float(rest[i0]) if origin.power >= 0 and np.isfinite(rest[i0]) else 0.0
    with np.errstate(all="ignore"):
        strength = 2.0 * mass * r**2 * np.abs(rest - reference)
    strength = np.where(np.isfinite(strength), strength, np.inf if origin.kind == "core" else 0.0)
    if c2 != 0.0:
        # What is left of V - c/r**2 near the origin is rounding of the huge c/r**2 there.
        noise = 1e-12 * 2.0 * mass * abs(c2)
        strength = np.where(strength > noise, strength, 0.0)
    above = np.nonzero(strength >= INNER_STRENGTH)[0]
    if above.size and above[0] == 0 and origin.kind == "regular":
        raise InputError(
            f"potential {getattr(potential, 'name', '?')!r} is already {abs(v[0] - reference):.3g} "
            f"(energy units) away from V(inf) at r = {r[0]:g}, the smallest radius probed, for reduced "
            f"mass {mass:.6g}: the bound states would be smaller than the grid can start; check the "
            "parameters and the mass"
        )
    inner = float(r[above[0]]) if above.size else math.inf
    if origin.kind == "core":
        inner = _core_radius(r, v, reference, strength, i0)
    if math.isinf(v_inf):
        rng = math.inf
    else:
        with np.errstate(all="ignore"):
            full = 2.0 * mass * r**2 * np.abs(v - v_inf)
        full = np.where(np.isfinite(full), full, np.inf)
        strong = np.nonzero(full >= RANGE_STRENGTH)[0]
        if strong.size == 0:
            rng = float(r[0])
        elif strong[-1] >= r.size - 40 or tail.kind in ("long", "inverse_square", "irregular"):
            rng = math.inf
        else:
            rng = float(r[strong[-1] + 1])

    declared = potential.breakpoints() if hasattr(potential, "breakpoints") else []
    has_hook = getattr(getattr(potential, "family", None), "breakpoints", None) is not None
    detected = False
    bps = tuple(sorted(float(b) for b in declared if b > 0))
    if not has_hook and scan_breakpoints and math.isfinite(inner):
        lo = max(origin.finite_from * 10.0, inner * 1e-3, 1e-28)
        hi = _scan_end(r, v, v_inf, mass, inner, rng, tail, reference)
        bps = find_breakpoints(potential, lo, hi)
        detected = True
    return PotentialProfile(
        v_infinity=v_inf,
        origin=origin,
        tail=tail,
        inner_length=inner,
        range=rng,
        breakpoints=bps,
        detected=detected,
        probe_values=v,
    )


def _core_radius(r, v, reference, strength, i0) -> float:
    """Where a repulsive core ends: V first falls to V_ref going outward, or stops mattering."""
    with np.errstate(all="ignore"):
        below = np.nonzero((r > r[i0]) & np.isfinite(v) & (v - reference <= 0.0))[0]
    if below.size:
        return float(r[below[0]])
    weak = np.nonzero((r > r[i0]) & (strength < INNER_STRENGTH))[0]
    return float(r[weak[0]]) if weak.size else float(r[-1])


def _scan_end(r, v, v_inf, mass, inner, rng, tail, reference) -> float:
    """Outer end of the breakpoint scan: where no state of interest can reach."""
    if math.isfinite(rng):
        return min(4.0 * rng, 1e29)
    if math.isinf(v_inf):
        with np.errstate(all="ignore"):
            s = 2.0 * mass * r**2 * (v - reference)
        high = np.nonzero(np.isfinite(s) & (s > 1e10) & (r > inner))[0]
        return float(r[high[0]]) if high.size else 1e29
    return min(max(1e6 * inner, 10.0 * tail.start), 1e29)


def effective_potential(potential, L: float, mass: float, r: np.ndarray) -> np.ndarray:
    """V(r) + L(L+1)/(2 m r**2) (L may be the effective L of d dimensions)."""
    return _raw(potential, r) + L * (L + 1) / (2.0 * mass * r**2)


def geometric_radii(first: float, last: float, n: int) -> np.ndarray:
    """``n`` radii in geometric progression from ``first`` to ``last`` (both exact): what
    numpy.geomspace gives, to rounding, at a quarter of its cost (probing runs it for every
    channel of every solve)."""
    r = np.exp(np.linspace(math.log(first), math.log(last), n))
    r[0], r[-1] = first, last
    return r


def wkb_inner_radius(potential, L: float, mass: float, energy: float, nepers: float,
                     r_lo: float, r_hi: float) -> float:
    """The smallest radius a from which a level at ``energy`` has risen by ``nepers`` e-folds.

    Inside the inner classical turning point u grows like
    exp(int kappa dr), kappa = sqrt(2 m (V_eff - E)); a grid that starts
    where u is e**-nepers of its value at the turning point loses only
    ~e**(-2 nepers) of the level's energy, whatever condition is imposed
    there.  Returns ``r_lo`` when the level reaches r_lo classically (or the
    forbidden region is too shallow).
    """
    with np.errstate(all="ignore"):
        if 2.0 * mass * (float(effective_potential(potential, L, mass, np.array([r_lo]))[0]) - energy) <= 0.0:
            return float(r_lo)  # allowed at r_lo already (what the scan below would find first)
    r = geometric_radii(r_lo, r_hi, 4000)
    with np.errstate(all="ignore"):
        f = 2.0 * mass * (effective_potential(potential, L, mass, r) - energy)
    f = np.where(np.isfinite(f), f, np.inf)
    allowed = np.nonzero(f <= 0.0)[0]
    if allowed.size == 0 or allowed[0] == 0:
        return float(r_lo)
    t = int(allowed[0])
    kappa = np.sqrt(np.maximum(f[:t + 1], 0.0))
    # integral from r[i] to the turning point, by the trapezoid rule in r
    seg = 0.5 * (kappa[1:] + kappa[:-1]) * np.diff(r[: t + 1])
    from_turn = np.concatenate((np.cumsum(seg[::-1])[::-1], [0.0]))
    deep = np.nonzero(from_turn >= nepers)[0]
    return float(r[deep[-1]]) if deep.size else float(r_lo)


def decay_radius(potential, L: float, mass: float, energy: float, start: float, nepers: float) -> float:
    """Radius beyond the outer turning point where a level at ``energy`` has decayed.

    Returns the R at which the WKB amplitude exp(-int kappa dr), integrated
    from the outer classical turning point, has fallen by ``nepers`` e-folds,
    with kappa = sqrt(2 m (V_eff - E)).  ``start`` is a radius inside the
    classically allowed region (or near the inner scale).
    """
    first = max(start, 1e-28)
    last = max(first * 1e14, 1e12)
    # Located on a coarse grid (~50 points per decade), then computed on a fine one
    # (~1000 per decade) between the coarse points around the turning point and the end.
    r = geometric_radii(first, last, int(50 * math.log10(last / first)) + 2)
    i_turn, end = _decay_bracket(potential, L, mass, energy, nepers, r)
    if end is None:
        return float(last)
    lo, hi = r[max(i_turn - 1, 0)], r[min(end + 1, r.size - 1)]
    fine = geometric_radii(lo, hi, int(1000 * math.log10(hi / lo)) + 2)
    _, end = _decay_bracket(potential, L, mass, energy, nepers, fine)
    return float(fine[end] if end is not None else fine[-1])


def _decay_bracket(potential, L: float, mass: float, energy: float, nepers: float, r: np.ndarray):
    """(index of the outer turning point, first index where the WKB decay from it reaches
    ``nepers``, or None) on the radii ``r``."""
    with np.errstate(all="ignore"):
        u = effective_potential(potential, L, mass, r) - energy
    u = np.where(np.isfinite(u), u, np.inf)
    allowed = np.nonzero(u < 0)[0]
    i_turn = int(allowed[-1]) if allowed.size else 0
    kappa = np.sqrt(np.maximum(2.0 * mass * u[i_turn:], 0.0))
    kappa = np.where(np.isfinite(kappa), kappa, 1e300)
    integral = np.concatenate(([0.0], np.cumsum(0.5 * (kappa[1:] + kappa[:-1]) * np.diff(r[i_turn:]))))
    beyond = np.nonzero(integral >= nepers)[0]
    return i_turn, (i_turn + int(beyond[0]) if beyond.size else None)
