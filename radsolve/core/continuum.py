"""Continuum states above the threshold: integration outward and matching to free or Coulomb waves.

For an energy E above the threshold V(inf) the regular solution u of

    -1/(2 m) u'' + [V + L(L+1)/(2 m r**2)] u = E u,   u ~ r**lambda at the origin,

is integrated outward with Numerov's method on the mapped grid of
:mod:`radsolve.core.grids` (every breakpoint a grid point), for all energies of
one partial wave at once (one column per energy).  Beyond the matching radius
R_a, where the rest of the potential can change the phase by less than a
share of ``tol``, u is a combination of the free solutions,

    u = A [J(kr) cos(delta) - Y(kr) sin(delta)],   A > 0,

with J, Y the Riccati-Bessel functions x j_L(x), x y_L(x) (scipy.special) for
a short-range tail, or the Coulomb functions F_L(eta, kr), -G_L(eta, kr) for
a tail C/r (eta = m C / k; mpmath, since scipy has none).  Two points give
A cos(delta) and A sin(delta), hence delta modulo 2 pi; u is positive near
the origin, and its zeros on (0, r] fix the branch: with the phases
J = M sin(theta), Y = -M cos(theta), u = A M sin(theta + delta) and theta +
delta crosses each multiple of pi upward exactly once at each zero of u
(the variable-phase picture, textbook: Calogero 1967).  So delta is absolute:
continuous in E without unwrapping, tending to 0 as E -> inf for potentials
regular at the origin, and equal to N pi at E -> 0 for N bound levels
(Levinson's theorem).

Error estimate: the same energies on nested grids of halving step
(Richardson with Numerov's h**4, h**6 series; the estimate is the change of
the extrapolated value), plus the change of delta between matching at R_a and
at the end of the grid (about 1.6 R_a), plus a rounding floor.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from radsolve.core import probe as probing
from radsolve.core.grids import GridSpan, box_span, potential_on_grid
from radsolve.errors import InputError

#: Phase of the fastest wave per step of the coarsest grid.
PHASE_PER_STEP = 0.4
#: At most this many halvings beyond the coarsest grid.
MAX_HALVINGS = 6
#: Never more points than this on one grid.
MAX_POINTS = 300_000
#: The potential beyond the matching radius may change delta by this share of tol.
TAIL_SHARE = 0.02
#: The grid ends this many times the matching radius out.
END_FACTOR = 1.6
#: Largest matching radius, in units of the potential's inner length.
LARGEST_MATCH = 1e7
#: At most this many halvings for the zero-energy solution (a banded solve: cheap).
ZERO_ENERGY_HALVINGS = 6
#: Energies whose wavenumbers span more than this ratio are split into bands with grids of their own.
BAND_RATIO = 32.0
#: Rows of Numerov coefficients computed at once.
_BLOCK = 256


@dataclass(frozen=True)
class Tail:
    """How a channel's potential is matched far out: ``kind`` is ``"short"`` or ``"coulomb"``.

    ``coefficient`` is C of V - V(inf) ~ C/r (0 for short range); ``radius``
    the matching radius R_a; ``limited`` is True when R_a had to stop at
    :data:`LARGEST_MATCH` inner lengths before the tail's share of the error
    fell below its target (then the radius term of the estimate shows it).
    """

    kind: str
    coefficient: float
    radius: float
    limited: bool = False


@dataclass
class ChannelPhases:
    """Phase shifts of one partial wave at the energies asked (all arrays over energies)."""

    phase: np.ndarray
    error: np.ndarray
    grid_error: np.ndarray
    radius_error: np.ndarray
    converged: np.ndarray
    grids: int
    points: int
    tail: Tail
    coulomb_phase: np.ndarray | None = None  # sigma_L = arg Gamma(L + 1 + i eta) for a Coulomb tail
    notes: list = field(default_factory=list)
    integrals: np.ndarray | None = None  # (m, energies): int f_j u_E dr, u_E normalized per unit energy
    integral_error: np.ndarray | None = None
    waves: list = field(default_factory=list)  # with keep_waves: (r, u per unit energy, energy indices) per grid


def _joined(parts: list, masks: list, size: int) -> ChannelPhases:
    """One ChannelPhases from the bands of :func:`channel_phases` (energies in their original order)."""
    def merge(name):
        values = [getattr(p, name) for p in parts]
        if values[0] is None:
            return None
        out = np.empty(values[0].shape[:-1] + (size,), dtype=values[0].dtype)
        for v, m in zip(values, masks):
            out[..., m] = v
        return out

    tails = [p.tail for p in parts]
    tail = max(tails, key=lambda t: t.radius)
    notes = [n for p in parts for n in p.notes]
    return ChannelPhases(phase=merge("phase"), error=merge("error"), grid_error=merge("grid_error"),
                         radius_error=merge("radius_error"), converged=merge("converged"),
                         grids=max(p.grids for p in parts), points=max(p.points for p in parts), tail=tail,
                         coulomb_phase=merge("coulomb_phase"), notes=list(dict.fromkeys(notes)),
                         integrals=merge("integrals"), integral_error=merge("integral_error"))


def joined_pieces(parts: list, slices: list, size: int) -> ChannelPhases:
    """One ChannelPhases from the results of consecutive energy ``slices`` computed apart."""
    masks = []
    for sl in slices:
        m = np.zeros(size, dtype=bool)
        m[sl] = True
        masks.append(m)
    return _joined(parts, masks, size) if len(parts) > 1 else parts[0]


def channel_tail(potential, profile, mass: float, k_min: float, k_max: float, tol: float,
                 start: float) -> Tail:
    """The matching rule and radius of one channel; InputError when there is none.

    Confining potentials have no continuum; tails of 1/r**2 or of a power
    between 1 and 2 (or none recognizable) have no matching rule here.
    """
    tail = profile.tail
    if profile.confining:
        raise InputError("the potential confines (V -> inf as r -> inf): there is no continuum, every "
                         "level is bound; continuum quantities need a potential with a limit at infinity",
                         parameter="potential")
    if tail.kind == "short":
        coefficient = 0.0
        kind = "short"
    elif tail.coulomb:
        coefficient = float(tail.coefficient)
        kind = "coulomb"
    elif tail.kind == "inverse_square":
        raise InputError(f"V - V(inf) falls off like {tail.coefficient:.4g}/r**2: the phase shift of an "
                         "inverse-square tail needs Bessel functions of non-integer order, not implemented; "
                         "allowed: tails faster than 1/r**2 (matched to free waves) or exactly C/r "
                         "(matched to Coulomb waves)", parameter="potential")
    elif tail.kind == "long":
        raise InputError(f"V - V(inf) falls off like r**-{tail.power:.3g}, more slowly than 1/r**2 but not as "
                         "1/r: no matching rule (allowed: tails faster than 1/r**2, or exactly C/r)",
                         parameter="potential")
    else:
        raise InputError("V - V(inf) has no recognizable law at large r (it oscillates or changes sign "
                         "far out): the phase shift cannot be matched to free waves", parameter="potential")
    r = probing.PROBE_RADII
    with np.errstate(all="ignore"):
        rest = np.abs(probing._raw(potential, r) - profile.v_infinity - coefficient / r)
    rest = np.where(np.isfinite(rest), rest, np.inf)
    # |change of delta| from V beyond R <= 2 m int_R^inf |V| J(kr)**2 / k dr, |J(x)| <= min(1, x):
    # the weight max over the energies of min(1/k, k r**2).
    weight = np.where(r * k_max <= 1.0, k_max * r**2, np.where(r * k_min >= 1.0, 1.0 / k_min, r))
    with np.errstate(all="ignore"):
        f = 2.0 * mass * rest * weight * r  # integrand in ln r
    f = np.where(np.isfinite(f), f, np.inf)
    dlog = math.log(r[1] / r[0])
    seg = 0.5 * (f[1:] + f[:-1]) * dlog
    beyond = np.concatenate((np.cumsum(seg[::-1])[::-1], [0.0]))
    ok = np.nonzero((beyond <= TAIL_SHARE * tol) & (r > start))[0]
    lowest = max(start * 4.0, 2.0 * max(profile.breakpoints, default=0.0))
    if math.isfinite(profile.inner_length):
        lowest = max(lowest, 4.0 * profile.inner_length)
    largest = LARGEST_MATCH * (profile.inner_length if math.isfinite(profile.inner_length) else start)
    limited = False
    if ok.size:
        radius = max(float(r[ok[0]]), lowest)
    else:
        radius = largest
        limited = True
    if radius > largest:
        radius, limited = largest, True
    return Tail(kind, coefficient, radius, limited)


def _riccati(L: float, x: np.ndarray):
    """(J, Y) = (x j_L(x), x y_L(x)) from scipy.special; for a half-integer L (even
    dimensions) sqrt(pi x / 2) (J_{L+1/2}(x), Y_{L+1/2}(x)), the same functions of any order."""
    if abs(L - round(L)) < 1e-12:
        from scipy.special import spherical_jn, spherical_yn

        Lint = int(round(L))
        return x * spherical_jn(Lint, x), x * spherical_yn(Lint, x)
    from scipy.special import jv, yv

    scale = np.sqrt(0.5 * math.pi * x)
    return scale * jv(L + 0.5, x), scale * yv(L + 0.5, x)


def _coulomb(L: int, eta: np.ndarray, x: np.ndarray):
    """(J, Y) = (F_L(eta, x), -G_L(eta, x)): Steed's continued fractions, mpmath where they do not serve.

    scipy has no Coulomb wave functions.  :func:`coulomb_waves` evaluates them for
    all points at once; the points it cannot settle (below the turning point, or a
    branch of the phase that the WKB reference does not fix) go to mpmath.
    """
    x = np.asarray(x, dtype=float)
    eta = np.broadcast_to(np.asarray(eta, dtype=float), x.shape)
    # Steed's first fraction needs about rho terms
    F, G, ok = coulomb_waves(L, eta, x, iterations=max(4000, int(2.0 * float(np.max(x, initial=0.0))) + 200))
    for i in np.nonzero(~ok.ravel())[0]:
        f, g = _coulomb_fg_mpmath(L, eta.flat[i], x.flat[i])
        F.flat[i], G.flat[i] = f.real, g.real  # NaN where mpmath fails: the phase is then not converged, said so
    return F, -G


def _coulomb_fg_mpmath(L: int, eta, rho) -> tuple[complex, complex]:
    """(F_L, G_L) at real or complex eta and rho by mpmath (its hypergeometric forms continue
    analytically), 20 digits; NaNs where mpmath's series do not converge."""
    import mpmath

    with mpmath.workdps(20):
        try:
            return (complex(mpmath.coulombf(L, eta, rho, maxterms=10**6)),
                    complex(mpmath.coulombg(L, eta, rho, maxterms=10**6)))
        except (mpmath.libmp.NoConvergence, ZeroDivisionError, ValueError):
            return complex(math.nan, math.nan), complex(math.nan, math.nan)


def coulomb_waves(L: int, eta: np.ndarray, rho: np.ndarray, iterations: int = 4000):
    """F_L(eta, rho), G_L(eta, rho) by Steed's method, and where the result is trusted.

    CF1 gives F'/F (A&S 14.2 recurrences as a continued fraction), CF2 gives
    (G' + iF')/(G + iF) = p + iq (Thompson and Barnett, J. Comput. Phys. 64, 490,
    1986), both summed by the modified Lentz method; the Wronskian F'G - FG' = 1
    then gives M = sqrt(F**2 + G**2) = 1/sqrt(q) and G/F.  The signs come from the
    phase theta (F = M sin(theta), G = M cos(theta)) taken on the branch nearest
    the WKB phase; points where that is not clear by a margin, where CF2 did not
    converge, or below 0.7 of the turning point are marked untrusted.
    """
    with np.errstate(all="ignore"):  # overflow far below the turning point: those points are marked untrusted
        return _steed(L, np.asarray(eta, dtype=float), np.asarray(rho, dtype=float), iterations)


def _steed(L: int, eta: np.ndarray, rho: np.ndarray, iterations: int):
    tiny = 1e-300

    inv_rho = 1.0 / rho
    eta2 = eta * eta
    f = (L + 1.0) * inv_rho + eta / (L + 1.0) + 0.0 * rho
    c = np.where(f == 0.0, tiny, f)
    d = np.zeros_like(f)
    for n in range(1, iterations):
        m = L + n
        a = -(1.0 + eta2 / (m * m))
        b = (2.0 * m + 1.0) * inv_rho + eta * (1.0 / m + 1.0 / (m + 1.0))
        d = b + a * d
        d = 1.0 / np.where(d == 0.0, tiny, d)
        c = b + a / c
        c = np.where(c == 0.0, tiny, c)
        step = c * d
        f *= step
        if n > 2 and n % 8 == 0 and np.all(np.abs(step - 1.0) < 1e-16):
            break
    a0, b0 = 1.0 + L + 1j * eta, -L + 1j * eta
    fr = np.full(rho.shape, tiny, dtype=complex)
    cc = fr.copy()
    dc = np.zeros_like(fr)
    settled = np.zeros(rho.shape, dtype=bool)
    for n in range(1, iterations):
        a = (a0 + n - 1) * (b0 + n - 1)
        b = 2.0 * (rho - eta + 1j * n)
        dc = b + a * dc
        dc = 1.0 / np.where(dc == 0.0, tiny, dc)
        cc = b + a / cc
        cc = np.where(cc == 0.0, tiny, cc)
        step = cc * dc
        fr = fr * step
        settled = np.abs(step - 1.0) < 1e-15
        if n > 2 and settled.all():
            break
    pq = 1j * (1.0 - eta / rho) + (1j / rho) * fr
    p, q = pq.real, pq.imag
    with np.errstate(all="ignore"):
        gamma = (f - p) / q
        modulus = 1.0 / np.sqrt(q)
        base = np.arctan(1.0 / gamma)  # theta modulo pi
    reference = _reference_phase(L, rho, eta)
    turns = np.round((reference - base) / math.pi)
    theta = base + math.pi * turns
    clear = np.abs(theta - reference) < 0.35 * math.pi
    turning = eta + np.sqrt(eta**2 + L * (L + 1.0))
    ok = settled & clear & (q > 0) & np.isfinite(modulus) & (rho > 0.7 * turning)
    return modulus * np.sin(theta), modulus * np.cos(theta), ok


def coulomb_phase(L: int, eta) -> np.ndarray:
    """sigma_L = arg Gamma(L + 1 + i eta) (scipy.special.loggamma, the continuous branch)."""
    from scipy.special import loggamma

    return np.imag(loggamma(L + 1.0 + 1j * np.asarray(eta, dtype=float)))


def _reference_phase(L: int, x: np.ndarray, eta: np.ndarray | None) -> np.ndarray:
    """The WKB (Langer) phase of the free or Coulomb wave at x: within pi/2 of the true one."""
    nu = L + 0.5
    if eta is None:
        with np.errstate(all="ignore"):
            inside = np.sqrt(np.maximum(x**2 - nu**2, 0.0)) - nu * np.arccos(np.minimum(nu / x, 1.0))
        return np.where(x > nu, inside + 0.25 * math.pi, 0.0)
    # int_turn^x sqrt(1 - 2 eta/s - nu**2/s**2) ds in closed form (the elementary integral of
    # sqrt(s**2 + b s + c)/s, textbook tables); at eta = 0 it is the free phase above
    eta = np.broadcast_to(np.asarray(eta, dtype=float), np.shape(x))
    big_r = np.sqrt(eta**2 + nu**2)
    turn = eta + big_r
    with np.errstate(all="ignore"):
        root = np.sqrt(np.maximum(x * x - 2.0 * eta * x - nu * nu, 0.0))
        arg = np.clip(-(eta * x + nu * nu) / (x * big_r), -1.0, 1.0)
        phase = root - eta * np.log((root + x - eta) / big_r) - nu * (np.arcsin(arg) + 0.5 * math.pi)
    return np.where(x > turn, phase + 0.25 * math.pi, 0.0)


def _basis_phase(J: np.ndarray, Y: np.ndarray, reference: np.ndarray) -> np.ndarray:
    """theta with J = M sin(theta), Y = -M cos(theta), on the branch nearest ``reference``."""
    angle = np.arctan2(J, -Y)
    return angle + 2.0 * math.pi * np.round((reference - angle) / (2.0 * math.pi))


def jump_terms(potential, grid, anchors, mass: float) -> dict:
    """Corrections of Numerov's step at the grid points where V jumps or has a kink.

    Where F of w'' = F w jumps at a grid point x0 = x[n] (Taylor expansion on either
    side; w and w' are continuous): the formulas centred at n - 1 and n + 1 need
    the one-sided limits F- w[n] and F+ w[n], and the one centred at n (with the mean
    of F, as stored) leaves the defect h**3 (F'+ - F'-) w / 12 + h**3 (F+ - F-) w' / 12
    + O(h**5).  Uncorrected these make the solution's error an h**2 series; corrected,
    it starts at h**4.  Returns {n: (a, b, dt)}: the step centred at n gains
    a w[n] + b w'[n] (w' in xi), and dt = h**2 (F+ - F-) / 12 (the same for every
    energy: the energy term of F is continuous).
    """
    out = {}
    h = grid.step
    r = grid.r
    for bpt in anchors:
        n = int(np.searchsorted(r, bpt))
        n = n if n < r.size and abs(r[n] - bpt) <= 1e-12 * bpt else n - 1
        if not (2 <= n <= r.size - 2 and abs(r[n] - bpt) <= 1e-12 * bpt):
            continue
        d = 1e-5 * bpt
        with np.errstate(all="ignore"):
            vm = np.asarray(potential(np.array([bpt * (1 - 1e-12), bpt - d, bpt - 2 * d])), dtype=float)
            vp = np.asarray(potential(np.array([bpt * (1 + 1e-12), bpt + d, bpt + 2 * d])), dtype=float)
        if not (np.all(np.isfinite(vm)) and np.all(np.isfinite(vp))):
            continue
        jump = float(vp[0] - vm[0])
        # one-sided second-order differences for dV/dr on either side
        slope_jump = float((-3 * vp[0] + 4 * vp[1] - vp[2]) / (2 * d) - (3 * vm[0] - 4 * vm[1] + vm[2]) / (2 * d))
        jac = float(grid.jacobian[n])
        b = jac * jac
        db = float(grid.jacobian[n + 1] ** 2 - grid.jacobian[n - 1] ** 2) / (2 * h)
        c = h**3 / 12.0 * 2.0 * mass
        out[n] = (c * (slope_jump * jac * b + jump * db), c * jump * b, h * h / 12.0 * 2.0 * mass * jump * b)
    return out


def _shoot(grid, values: np.ndarray, centrifugal: float, mass: float, energies: np.ndarray, start: int,
           exponent: float, hard_core: bool, keep_from: int, mark: int, weights: np.ndarray | None = None,
           jumps: dict | None = None):
    """Numerov outward for every energy at once.

    Returns u on grid points keep_from ... end (rows) for each energy
    (columns), the number of zeros of u on (0, r[mark]] and on (0, r[end]],
    and, with ``weights`` (m rows over the grid points), the sums
    sum_i weights[j, i] u_i for each row j and energy (on u's scale).
    ``jumps`` are the corrections of :func:`jump_terms` at breakpoints of V.
    """
    jumps = {n: ab for n, ab in (jumps or {}).items() if n >= start + 3}
    near = {m for n in jumps for m in (n - 1, n, n + 1)}
    _, q = grid.liouville_coefficients(values, 0, mass, centrifugal=centrifugal)
    b = grid.jacobian**2
    h2 = grid.step**2
    n = grid.size
    ne = energies.size

    def t_rows(lo, hi):
        t = h2 * 2.0 * mass * (q[lo:hi, None] - energies[None, :] * b[lo:hi, None]) / 12.0
        return np.minimum(t, 0.9)  # deep in a forbidden region only the growth matters

    # y = (1 - t) w; w = e**-(lambda - 1/2) h at the first point against 1 at the next
    # (u ~ r**lambda, as the solvers impose it), or w = 0 there at a hard core
    t0 = t_rows(start, start + 2)
    ghost = 0.0 if hard_core else math.exp(-(exponent - 0.5) * grid.step)
    y_prev = ghost * (1.0 - t0[0])
    y_cur = 1.0 - t0[1]
    y_back = y_prev  # y two points back, for w' at a breakpoint
    zeros = np.zeros(ne, dtype=np.int64)
    zeros_mark = zeros.copy()
    kept = np.empty((n - keep_from, ne))
    if start >= keep_from:
        kept[start - keep_from] = y_prev
    if start + 1 >= keep_from:
        kept[start + 1 - keep_from] = y_cur
    sums = None
    if weights is not None:
        # u = sqrt(r') y / (1 - t): the weights take sqrt(r'), the loop 1/(1 - t) (energy-dependent)
        wj = weights * np.sqrt(grid.jacobian)[None, :]
        sums = np.zeros((weights.shape[0], ne))
        sums += wj[:, start, None] * (y_prev / (1.0 - t0[0]))[None, :] + wj[:, start + 1, None] * (y_cur / (1.0 - t0[1]))[None, :]
    for lo in range(start + 1, n - 1, _BLOCK):
        hi = min(lo + _BLOCK, n - 1)
        t = t_rows(lo, hi)
        d = 2.0 + 12.0 * t / (1.0 - t)
        if sums is not None:
            inv_next = 1.0 / (1.0 - t_rows(lo + 1, hi + 1))
        for i in range(lo, hi):  # y[i + 1] = d[i] y[i] - y[i - 1]
            y_new = d[i - lo] * y_cur - y_prev
            if i in near:
                if i + 1 in jumps:  # (1 - t-) w[n] is what the step gives
                    t_n = t_rows(i + 1, i + 2)[0]
                    y_new = y_new * (1.0 - t_n) / (1.0 - t_n + 0.5 * jumps[i + 1][2])
                elif i in jumps:
                    a_j, b_j, _ = jumps[i]
                    tj = t_rows(i - 2, i + 1)
                    w0, w1, w2 = y_back / (1.0 - tj[0]), y_prev / (1.0 - tj[1]), y_cur / (1.0 - tj[2])
                    y_new = y_new + a_j * w2 + b_j * (3.0 * w2 - 4.0 * w1 + w0) / (2.0 * grid.step)
                else:  # centred at n + 1: (1 - t+) w[n] in place of (1 - t) w[n]
                    t_n = t_rows(i - 1, i)[0]
                    y_new = y_new + y_prev * 0.5 * jumps[i - 1][2] / (1.0 - t_n)
            zeros += (y_new * y_cur < 0.0)
            y_back, y_prev, y_cur = y_prev, y_cur, y_new
            if sums is not None:
                sums += wj[:, i + 1, None] * (y_cur * inv_next[i - lo])[None, :]
            if i + 1 >= keep_from:
                kept[i + 1 - keep_from] = y_cur
            if i + 1 == mark:
                zeros_mark = zeros.copy()
        if hi + 1 < keep_from:
            big = np.maximum(np.abs(y_cur), np.abs(y_prev))
            scale = np.where(big > 1e100, 1.0 / big, 1.0)
            y_cur, y_prev, y_back = y_cur * scale, y_prev * scale, y_back * scale
            if sums is not None:
                sums *= scale[None, :]
    kept_t = t_rows(keep_from, n)
    u = np.sqrt(grid.jacobian[keep_from:, None]) * kept / (1.0 - kept_t)
    if weights is not None:
        return u, zeros_mark, zeros, sums
    return u, zeros_mark, zeros


def _basis(L: int, k: np.ndarray, eta, r1: np.ndarray, r2: np.ndarray):
    """(J1, Y1, J2, Y2, theta2): the free or Coulomb waves at r1, r2 and the phase theta at r2."""
    if eta is None:
        J1, Y1 = _riccati(L, k * r1)
        J2, Y2 = _riccati(L, k * r2)
    else:
        J1, Y1 = _coulomb(L, eta, k * r1)
        J2, Y2 = _coulomb(L, eta, k * r2)
    theta2 = _basis_phase(J2, Y2, _reference_phase(L, k * r2, eta))
    return J1, Y1, J2, Y2, theta2


def _phase_from(u1, u2, J1, Y1, J2, Y2, theta2, zeros):
    """(delta, A): u = A (J cos(delta) - Y sin(delta)) through u1, u2, A > 0, delta placed by the zeros of u.

    u has ``zeros`` zeros on (0, r2]: theta + delta lies in (N pi, (N + 1) pi) there.
    """
    det = J1 * Y2 - J2 * Y1
    s = (u1 * J2 - u2 * J1) / det
    c = (u1 * Y2 - u2 * Y1) / det
    delta0 = np.arctan2(s, c)
    phi = theta2 + delta0
    m = np.round((zeros * math.pi + 0.5 * math.pi - phi) / (2.0 * math.pi))
    return delta0 + 2.0 * math.pi * m, np.hypot(s, c)


def _richardson(values: list, orders: tuple) -> tuple[np.ndarray, np.ndarray]:
    """Richardson table over grids of halving step (arrays over energies): (best, estimate).

    The best value eliminates as many orders as the grids allow but one; the
    estimate is its change between the last two grids.
    """
    table = [np.asarray(v, dtype=float) for v in values]
    n = len(table)
    depth = min(n - 2, len(orders))
    for j in range(depth):
        factor = 2.0 ** orders[j] - 1.0
        table = [table[i] + (table[i] - table[i - 1]) / factor for i in range(1, len(table))]
    return table[-1], np.abs(table[-1] - table[-2])


def _coarse_step(potential, profile, span_probe: GridSpan, L: float, mass: float, e_max: float) -> float:
    """The step in xi after which the fastest wave turns by PHASE_PER_STEP per step."""
    grid = span_probe.grid(0)
    with np.errstate(all="ignore"):
        v = probing._raw(potential, grid.r) - profile.v_infinity + L * (L + 1.0) / (2.0 * mass * grid.r**2)
        k = np.sqrt(np.maximum(2.0 * mass * (e_max - v), 0.0))
    phase = float(np.max(np.where(np.isfinite(k), k, 0.0) * grid.jacobian))
    return min(0.1, PHASE_PER_STEP / phase) if phase > 0 else 0.1


def channel_phases(potential, profile, L: float, l: int, mass: float, energies: np.ndarray, tol: float,
                   hard_core: float | None = None, boundary_share: float = 1e-3, integrand=None,
                   min_radius: float = 0.0, keep_waves: bool = False) -> ChannelPhases:
    """Phase shifts of one partial wave at ``energies`` (measured from V(inf), all > 0).

    ``L`` is the effective angular momentum (an integer in three dimensions);
    ``hard_core`` a radius inside which u = 0 (a hard sphere).  With
    ``integrand`` (a grid -> array (m, grid points) of f_j(r)), also the integrals
    int f_j(r) u_E(r) dr of the continuum state normalized per unit energy,
    u_E ~ sqrt(2 m / (pi k)) sin(theta + delta) (``integrals``, relative
    target ``tol``); the grid then reaches at least ``min_radius`` (where the
    f_j have died out).  With ``keep_waves``, ``waves`` holds (r, u_E per unit
    energy, energy indices) on every grid (one energy, or a few: memory).
    """
    energies = np.asarray(energies, dtype=float)
    k = np.sqrt(2.0 * mass * energies)
    if energies.size > 1 and float(k.max()) > BAND_RATIO * float(k.min()):
        # the fastest wave sets the step for every energy on one grid: bands of k, each its own grid
        cut = math.sqrt(float(k.max()) * float(k.min()))
        low = k <= cut
        parts = [channel_phases(potential, profile, L, l, mass, energies[sel], tol, hard_core, boundary_share,
                                integrand, min_radius, keep_waves) for sel in (low, ~low)]
        return _joined(parts, [low, ~low], energies.size)
    e_max = float(energies.max())
    Lint = int(round(L))
    whole = abs(L - Lint) <= 1e-12
    if not whole and integrand is not None:
        raise InputError("continuum integrals are implemented for odd space dimensions (3, 5, ...)",
                         parameter="dimension")
    exponent = profile.origin_exponent(L, mass)
    if hard_core is not None:
        r_min = float(hard_core)
    else:
        r_min = profile.inner_cutoff(L, mass, boundary_share * tol)
        if math.isfinite(profile.inner_length) and not profile.scale_free:
            hi = max(profile.inner_length, r_min) * 1e6
            lo = max(r_min, profile.origin.finite_from * 10.0, 1e-28)
            if profile.origin.kind == "core":
                lo = max(profile.origin.finite_from * 10.0, 1e-28)
            nepers = 0.5 * math.log(1.0 / (boundary_share * tol)) + 6.0
            wkb = probing.wkb_inner_radius(potential, L, mass, e_max + profile.v_infinity, nepers, lo, hi)
            r_min = max(r_min, wkb) if profile.origin.kind != "core" else max(wkb, lo)
        elif not math.isfinite(profile.inner_length):
            # nothing but a constant (or c/r**2): start where the wave is still a power law
            r_min = max(r_min, 1e-8 / max(float(k.max()), 1e-300))
    tail = channel_tail(potential, profile, mass, float(k.min()), float(k.max()), tol, r_min)
    if min_radius > tail.radius:
        tail = Tail(tail.kind, tail.coefficient, float(min_radius), tail.limited)
    eta = mass * tail.coefficient / k if tail.kind == "coulomb" else None
    if eta is not None and not whole:
        raise InputError("a Coulomb tail in an even space dimension needs Coulomb functions of half-integer "
                         "order, which are not implemented: use an odd dimension (3, 5, ...)",
                         parameter="dimension")
    r_end = END_FACTOR * tail.radius
    anchors = [b for b in profile.breakpoints if r_min < b < r_end]
    if hard_core is not None:
        anchors = sorted(set(anchors) | {r_min})
        span_min = r_min * (1.0 - 1e-3)
    else:
        span_min = r_min
    probe_span = box_span(span_min, r_end, 0.1, anchors)
    step = _coarse_step(potential, profile, probe_span, L, mass, e_max)
    span = box_span(span_min, r_end, step, anchors)
    if energies.size > 1 and span.intervals(3) + 1 > MAX_POINTS and float(k.max()) > 1.5 * float(k.min()):
        # too fine a grid for the fastest waves to refine: the slower ones get a band of their own
        low = k <= math.sqrt(float(k.max()) * float(k.min()))
        parts = [channel_phases(potential, profile, L, l, mass, energies[sel], tol, hard_core, boundary_share,
                                integrand, min_radius, keep_waves) for sel in (low, ~low)]
        return _joined(parts, [low, ~low], energies.size)

    # Numerov's error is a series in h**4, h**6, ...; a jump or kink of V at a grid point, with
    # its defect added back (jump_terms), adds every whole power from h**4 on.  The integrals'
    # trapezoid sums keep an h**2 series there (their integrand's slope jumps).
    jumps = [b for b in span.anchors if hard_core is None or b != r_min]
    orders = (4, 5, 6, 7, 8) if jumps else (4, 6, 8, 10)
    int_orders = (2, 3, 4, 5, 6, 7) if jumps else orders
    int_history: list[np.ndarray] = []
    integrals = integral_error = None
    notes: list[str] = []
    waves: list = []
    phase = np.full(energies.size, np.nan)
    grid_error = np.full(energies.size, np.inf)
    radius_error = np.full(energies.size, np.inf)
    active = np.arange(energies.size)
    history: list[tuple[np.ndarray, np.ndarray]] = []  # (outer, inner) on every grid, all energies
    grids_used = 0
    points = 0
    coarse_r = span.grid(0).r
    ra_coarse = min(int(np.searchsorted(coarse_r, tail.radius)), coarse_r.size - 3)
    last_coarse = coarse_r.size - 1
    # partners a quarter wavelength (at most 0.3 R_a) outside R_a and inside the end: every point
    # used lies beyond the matching radius
    spacing = np.minimum(0.5 * math.pi / k, 0.3 * tail.radius)
    rows_a0 = np.clip(np.searchsorted(coarse_r, coarse_r[ra_coarse] + spacing), ra_coarse + 1, last_coarse)
    rows_b0 = np.clip(np.searchsorted(coarse_r, coarse_r[last_coarse] - spacing), ra_coarse, last_coarse - 1)
    order = Lint if whole else float(L)
    basis_a = _basis(order, k, eta, coarse_r[rows_a0], np.full(k.size, coarse_r[ra_coarse]))
    basis_b = _basis(order, k, eta, coarse_r[rows_b0], np.full(k.size, coarse_r[last_coarse]))
    for g in range(MAX_HALVINGS + 1):
        if span.intervals(g) + 1 > MAX_POINTS:
            break
        grid = span.grid(g)
        values = potential_on_grid(potential, grid.r, span.anchors) - profile.v_infinity
        start = 0
        if hard_core is not None:
            start = int(np.argmin(np.abs(grid.r - r_min)))
        # the matching points are points of the coarsest grid, so the same radii on every grid
        # (the free or Coulomb waves there are computed once)
        step_g = 2**g
        ra_row = ra_coarse * step_g
        keep_from = start if keep_waves else ra_row
        last = grid.size - 1
        sub = active
        weights = None
        if integrand is not None:
            with np.errstate(all="ignore"):
                f = np.atleast_2d(integrand(grid))
            weights = np.where(np.isfinite(f), f, 0.0) * grid.weights[None, :]
            weights[:, :start] = 0.0
            if integrals is None:
                integrals = np.full((weights.shape[0], energies.size), np.nan)
                integral_error = np.full((weights.shape[0], energies.size), np.inf)
        shot = _shoot(grid, values, L * (L + 1.0), mass, energies[sub], start, exponent,
                      hard_core is not None, keep_from, ra_row, weights, jump_terms(potential, grid, jumps, mass))
        u, zeros_a, zeros_b = shot[:3]
        row_b = last - keep_from
        cols = np.arange(sub.size)
        u_a1, u_a2 = u[rows_a0[sub] * step_g - keep_from, cols], u[ra_row - keep_from, cols]
        u_b1, u_b2 = u[rows_b0[sub] * step_g - keep_from, cols], u[row_b, cols]
        outer, amp_o = _phase_from(u_b1, u_b2, *[b[sub] for b in basis_b], zeros_b)
        inner, amp_i = _phase_from(u_a1, u_a2, *[b[sub] for b in basis_a], zeros_a)
        if keep_waves:
            # u per unit energy on this grid (every energy, refined or not: they share the grids)
            waves.append((grid.r[keep_from:], u * (np.sqrt(2.0 * mass / (math.pi * k[sub])) / amp_o)[None, :], sub))
        full_o = np.full(energies.size, np.nan)
        full_i = np.full(energies.size, np.nan)
        full_o[sub], full_i[sub] = outer, inner
        history.append((full_o, full_i))
        if integrand is not None:
            norm = np.sqrt(2.0 * mass / (math.pi * k[sub])) / amp_o
            full = np.full((weights.shape[0], energies.size), np.nan)
            full[:, sub] = shot[3] * norm[None, :]
            int_history.append(full)
            amp_change = np.full(energies.size, np.nan)
            amp_change[sub] = np.abs(amp_o / amp_i - 1.0)
        grids_used = g + 1
        points = grid.size
        if len(history) >= 3:
            best, est = _richardson([h[0] for h in history], orders)
            best_inner, _ = _richardson([h[1] for h in history], orders)
            rounding = 64.0 * np.finfo(float).eps * math.sqrt(grid.size) * np.maximum(np.abs(best), 1.0)
            est = est + rounding
            rad = np.abs(best - best_inner)
            ok = np.isfinite(best[sub])
            phase[sub] = np.where(ok, best[sub], phase[sub])
            grid_error[sub] = est[sub]
            radius_error[sub] = rad[sub]
            done = (est[sub] + rad[sub]) <= tol
            if integrand is not None:
                ibest, iest = _richardson(int_history, int_orders)
                iest = iest + np.abs(ibest) * amp_change[None, :] + 64.0 * np.finfo(float).eps * \
                    math.sqrt(grid.size) * np.abs(ibest)
                integrals[:, sub] = ibest[:, sub]
                integral_error[:, sub] = iest[:, sub]
                scale_i = np.maximum(np.abs(ibest[:, sub]), 1e-300)
                done = done & np.all(iest[:, sub] <= tol * scale_i, axis=0)
            active = sub[~done]
            if active.size == 0:
                break
    if not history:
        phase = np.full(energies.size, np.nan)  # not even the coarsest grid fits: reported unconverged
        notes.append(f"energies up to {e_max:.4g} need more than {MAX_POINTS} grid points: not computed")
    elif len(history) < 3:
        # too few grids for Richardson: the finest value, and as its estimate the whole change from the
        # grid before (Numerov's h**4 makes that about 15 times the finest grid's own error), or none
        phase = history[-1][0]
        grid_error = np.abs(history[-1][0] - history[-2][0]) if len(history) == 2 else np.full(energies.size, np.inf)
        radius_error = np.abs(history[-1][0] - history[-1][1])
        notes.append(f"only {len(history)} grid(s) fit in {MAX_POINTS} points for energies up to {e_max:.4g}: "
                     + ("the estimate is the change between them" if len(history) == 2 else "no error estimate"))
    error = grid_error + radius_error
    converged = error <= tol
    if integrand is not None:
        if int_history and grids_used < 3:
            integrals = int_history[-1]
        if integrals is None:
            integrals = np.full((1, energies.size), np.nan)
            integral_error = np.full((1, energies.size), np.inf)
        converged = converged & np.all(integral_error <= tol * np.maximum(np.abs(integrals), 1e-300), axis=0)
    if tail.limited:
        notes.append(f"the tail of V is long: matching stopped at r = {tail.radius:.4g}; its share of the "
                     "error is in the estimate")
    coul = coulomb_phase(Lint, eta) if eta is not None else None
    return ChannelPhases(phase=phase, error=error, grid_error=grid_error, radius_error=radius_error,
                         converged=converged, grids=grids_used, points=points, tail=tail,
                         coulomb_phase=coul, notes=notes, integrals=integrals, integral_error=integral_error,
                         waves=waves)


# --------------------------------------------------------------------------- zero energy


@dataclass
class ZeroEnergy:
    """The scattering length of one partial wave from its zero-energy solution."""

    length: float  # a_l, length**(2L+1)
    error: float
    effective_range: float | None  # r_l from the energy derivative of the threshold solution
    effective_range_error: float | None
    grid_error: float
    radius_error: float
    radius: float
    grids: int


def threshold_solutions(grid, values: np.ndarray, L: float, mass: float, start: int, ghost: float,
                        jumps: dict) -> tuple[np.ndarray, np.ndarray]:
    """u0 and u1 = du/dE at E = 0 (from V(inf)) of the regular solution, on grid points start ... end.

    Numerov in xi for w0'' = F w0 and its energy derivative w1'' = F w1 - 2 m r'**2 w0
    (the inhomogeneous Numerov formula, source weights 1, 10, 1), both started as
    u ~ r**lambda with an energy-independent coefficient (w1 = 0 at the first two
    points: its share there is of order r_min**2).  Breakpoints of V are corrected as
    in :func:`jump_terms` (the source is continuous there, so the same corrections
    serve both).  Both carry one common scale.
    """
    _, q = grid.liouville_coefficients(values, 0, mass, centrifugal=L * (L + 1.0))
    h = grid.step
    b = grid.jacobian**2
    t_arr = np.minimum(h * h * 2.0 * mass * q / 12.0, 0.9)
    t = t_arr.tolist()
    inv = (1.0 / (1.0 - t_arr)).tolist()
    d = (2.0 + 12.0 * t_arr / (1.0 - t_arr)).tolist()  # 2 + O(h**2) kept apart, as in _shoot
    src = (h * h / 12.0 * -2.0 * mass * b / (1.0 - t_arr)).tolist()  # s_j = src_j y0_j
    n = grid.size
    # y = (1 - t) w for both
    y0 = [0.0] * n
    y1 = [0.0] * n
    y0[start], y0[start + 1] = ghost * (1.0 - t[start]), 1.0 - t[start + 1]
    jumps = {m: v for m, v in jumps.items() if m >= start + 3}
    for i in range(start + 1, n - 1):
        a0 = d[i] * y0[i] - y0[i - 1]
        a1 = d[i] * y1[i] - y1[i - 1] + 10.0 * src[i] * y0[i] + src[i - 1] * y0[i - 1]
        if i + 1 in jumps:  # the left limit of F at the breakpoint: (1 - t-) w = a
            f = (1.0 - t[i + 1]) / (1.0 - t[i + 1] + 0.5 * jumps[i + 1][2])
            y0[i + 1] = a0 * f
            y1[i + 1] = (a1 + src[i + 1] * y0[i + 1]) * f
            continue
        if i in jumps:
            a_j, b_j, _ = jumps[i]
            w = [y0[i - 2] * inv[i - 2], y0[i - 1] * inv[i - 1], y0[i] * inv[i]]
            a0 += a_j * w[2] + b_j * (3.0 * w[2] - 4.0 * w[1] + w[0]) / (2.0 * h)
            w = [y1[i - 2] * inv[i - 2], y1[i - 1] * inv[i - 1], y1[i] * inv[i]]
            a1 += a_j * w[2] + b_j * (3.0 * w[2] - 4.0 * w[1] + w[0]) / (2.0 * h)
        elif i - 1 in jumps:  # the right limit of F at the breakpoint
            half = 0.5 * jumps[i - 1][2] * inv[i - 1]
            a0 += half * y0[i - 1]
            a1 += half * y1[i - 1]
        y0[i + 1] = a0
        y1[i + 1] = a1 + src[i + 1] * a0
        if abs(a0) > 1e150:
            scale = 1.0 / abs(a0)
            y0[:i + 2] = [v * scale for v in y0[:i + 2]]
            y1[:i + 2] = [v * scale for v in y1[:i + 2]]
    root = np.sqrt(grid.jacobian[start:]) / (1.0 - t_arr[start:])
    return root * np.array(y0[start:]), root * np.array(y1[start:])


def _double_factorial(n: int) -> float:
    return float(math.prod(range(n, 0, -2))) if n > 0 else 1.0


def strength_radius(potential, profile, mass: float, level: float = 1e-2, coulomb: float = 0.0) -> float:
    """The radius beyond which 2 m r**2 |V - V(inf) - coulomb/r| stays below ``level``: the size of the
    potential (of its short-range part, with a Coulomb tail's coefficient given)."""
    r = probing.PROBE_RADII
    with np.errstate(all="ignore"):
        rest = np.abs(probing._raw(potential, r) - profile.v_infinity - coulomb / r)
        rest = np.where(rest <= 1e-9 * abs(coulomb) / r, 0.0, rest)  # the fitted C's last digits
        s = 2.0 * mass * r**2 * rest
    s = np.where(np.isfinite(s), s, np.inf)
    strong = np.nonzero(s >= level)[0]
    if strong.size == 0:
        return float(profile.inner_length) if math.isfinite(profile.inner_length) else 1.0
    return float(r[min(strong[-1] + 1, r.size - 1)])


def scattering_length(potential, profile, L: float, mass: float, tol: float,
                      hard_core: float | None = None, boundary_share: float = 1e-3) -> ZeroEnergy:
    """a_L and r_L of the threshold expansion k**(2L+1) cot(delta) = -1/a_L + r_L k**2/2 + ... (textbook).

    u0 (regular, E = 0) and u1 = du/dE come from :func:`threshold_solutions` on
    halving grids (Richardson).  Beyond the potential u0 = A r**(L+1) + B r**(-L),
    so a_L = -B / (A (2L+1)!! (2L-1)!!); u1 holds the same two powers (A1, B1)
    besides the energy derivatives of the free solutions, and r_L = N (A1 B - A B1)
    / (m B**2), N = (2L+1)!! (2L-1)!! (the free solutions' power series, textbook).
    Both are read at a radius R and at 1.5 R; the estimate is the last grid change
    plus the change with the radius.  ``tol`` is relative to |a_L|.
    """
    Lint = int(round(L))
    size = strength_radius(potential, profile, mass)
    exponent = 0.0
    if hard_core is not None:
        r_min = float(hard_core)
    else:
        r_min = profile.inner_cutoff(L, mass, boundary_share * tol)
        exponent = profile.origin_exponent(L, mass)
    k_scale = 1.0 / max(size, r_min)
    tail = channel_tail(potential, profile, mass, k_scale, k_scale, tol * max(size, 1e-300), r_min)
    if tail.kind != "short":
        raise InputError("a Coulomb tail has no scattering length of its own: use scattering(), which gives "
                         "the Coulomb-modified effective-range expansion (repulsive tail, l = 0)",
                         parameter="potential")
    norm = _double_factorial(2 * Lint + 1) * _double_factorial(2 * Lint - 1)
    # V beyond R changes B/A by about 2 m int_R^inf |V| r**(2L+2) dr (first order in V; textbook):
    # below a share of tol times the natural size**(2L+1)
    r = probing.PROBE_RADII
    with np.errstate(all="ignore"):
        f = 2.0 * mass * np.abs(probing._raw(potential, r) - profile.v_infinity) * r ** (2 * L + 3)
    f = np.where(np.isfinite(f), f, np.inf)
    seg = 0.5 * (f[1:] + f[:-1]) * math.log(r[1] / r[0])
    beyond = np.concatenate((np.cumsum(seg[::-1])[::-1], [0.0]))
    ok = np.nonzero((beyond <= TAIL_SHARE * tol * size ** (2 * L + 1)) & (r > r_min))[0]
    far = float(r[ok[0]]) if ok.size else LARGEST_MATCH * size
    # A and B are read off u0 at two radii beyond the matching radius R_a, (R_a, 1.5 R_a) and again at
    # (1.5 R_a, 2 R_a): the change is the radius part of the estimate.  Near radii keep B, which is
    # smaller than A r**(2L+1) by a_l / r**(2L+1), to more digits.
    radius = max(tail.radius, 2.0 * size, min(far, LARGEST_MATCH * size))
    r_end = 2.0 * radius
    anchors = [b for b in profile.breakpoints if r_min < b < r_end]
    if hard_core is not None:
        anchors = sorted(set(anchors) | {r_min})
    span_min = r_min * (1.0 - 1e-3) if hard_core is not None else r_min
    span = box_span(span_min, r_end, 0.1, anchors)
    step = _coarse_step(potential, profile, span, L, mass, 0.0)
    span = box_span(span_min, r_end, step, anchors)
    jumps = [b for b in span.anchors if hard_core is None or b != r_min]
    # Numerov's h**4, h**6 series; breakpoints (corrected, jump_terms) add every whole power from h**4
    orders = (4, 5, 6, 7, 8) if jumps else (4, 6, 8, 10)
    coarse = span.grid(0)
    picks = [min(int(np.searchsorted(coarse.r, f * radius)), coarse.size - 1) for f in (1.0, 1.5, 2.0)]
    history = []
    best = est = np.full(4, math.nan)
    grids = 0
    c_part, d_part = -mass / (2.0 * L + 3.0), mass / (2.0 * L - 1.0)
    for g in range(ZERO_ENERGY_HALVINGS + 1):
        if span.intervals(g) + 1 > MAX_POINTS:
            break
        grid = span.grid(g)
        i0 = int(np.argmin(np.abs(grid.r - r_min))) if hard_core is not None else 0
        values = potential_on_grid(potential, grid.r, span.anchors) - profile.v_infinity
        ghost = 0.0 if hard_core is not None else math.exp(-(exponent - 0.5) * grid.step)
        u0, u1 = threshold_solutions(grid, values, L, mass, i0, ghost, jump_terms(potential, grid, jumps, mass))
        rows = [p * 2**g - i0 for p in picks]
        r_all = grid.r[i0:]
        read = []
        for j1, j2 in ((rows[0], rows[1]), (rows[1], rows[2])):
            r1, r2 = r_all[j1], r_all[j2]
            m = np.array([[r1 ** (L + 1), r1 ** (-L)], [r2 ** (L + 1), r2 ** (-L)]])
            A, B = np.linalg.solve(m, np.array([u0[j1], u0[j2]]))
            # beyond the potential u1 = A1 r**(L+1) + B1 r**-L + c A r**(L+3) + d B r**(2-L)
            # (the E-derivatives of the free solutions' power series, textbook)
            rest = [u1[j] - c_part * A * rr ** (L + 3) - d_part * B * rr ** (2 - L) for j, rr in ((j1, r1), (j2, r2))]
            A1, B1 = np.linalg.solve(m, np.array(rest))
            a_l = -B / (A * norm) if A != 0 else math.inf
            # k**(2L+1) cot(delta) = N alpha(E) / beta(E) with u = alpha f + beta g, so
            # r_l = 2 d/d(k**2) of it = N (A1 B - A B1) / (m B**2)
            r_l = norm * (A1 * B - A * B1) / (mass * B * B) if B != 0 else math.nan
            read.append((a_l, r_l))
        (a_in, r_in), (a_l, r_l) = read
        history.append(np.array([a_l, r_l, a_in, r_in]))
        grids = g + 1
        if len(history) >= 3:
            b_, e_ = _richardson(history, orders)
            # past the rounding floor finer grids only add noise (B/A is read off where B r**-L is
            # small beside A r**(L+1)): keep the grid whose estimate was smallest
            def badness(values, errors):
                return max(errors[0] / max(abs(values[0]), 1e-300),
                           errors[1] / max(abs(values[1]), size ** (1 - 2 * L)))

            if not np.isfinite(est[0]) or badness(b_, e_) <= badness(best, est):
                best, est = b_, e_
            else:  # past the rounding floor: the noise seen beyond the chosen grid belongs in its estimate
                est = np.maximum(est, np.abs(b_ - best))
                break
            if badness(best, est) <= 0.1 * tol:
                break
    rounding = 1e-14 * np.abs(best)
    radius_error = abs(best[0] - best[2])
    range_radius_error = abs(best[1] - best[3])
    err = est + rounding
    r_e = float(best[1]) if math.isfinite(best[1]) else None
    return ZeroEnergy(length=float(best[0]), error=float(err[0] + radius_error), effective_range=r_e,
                      effective_range_error=float(err[1] + range_radius_error) if r_e is not None else None,
                      grid_error=float(est[0]), radius_error=float(radius_error), radius=radius, grids=grids)


# --------------------------------------------------------------------------- logarithmic derivatives


@dataclass
class LogDerivatives:
    """u'/u at one radius for a set of energies (arrays over energies)."""

    value: np.ndarray
    error: np.ndarray
    nodes: np.ndarray  # zeros of u on (0, r_c): poles of L(E) passed below E
    converged: np.ndarray
    radius: float
    grids: int


def log_derivatives(potential, profile, L: float, mass: float, energies: np.ndarray, radius: float, tol: float,
                    boundary_share: float = 1e-3) -> LogDerivatives:
    """L(E) = u'(r_c)/u(r_c) of the regular solution at ``energies`` (measured from V(inf) when finite).

    Any energies, above or below the threshold.  ``radius`` r_c is a point of every
    grid; u' there comes from fourth-order differences in xi (an h**4, h**6 series,
    as Numerov's), extrapolated over halving grids.  ``tol`` is relative to
    max(|L|, 1/r_c).
    """
    energies = np.asarray(energies, dtype=float)
    e_max = float(energies.max())
    reference = 0.0 if profile.confining else profile.v_infinity
    exponent = profile.origin_exponent(L, mass)
    r_min = profile.inner_cutoff(L, mass, boundary_share * tol)
    if math.isfinite(profile.inner_length) and not profile.scale_free:
        lo = max(r_min, profile.origin.finite_from * 10.0, 1e-28)
        if profile.origin.kind == "core":
            lo = max(profile.origin.finite_from * 10.0, 1e-28)
        nepers = 0.5 * math.log(1.0 / (boundary_share * tol)) + 6.0
        wkb = probing.wkb_inner_radius(potential, L, mass, e_max + reference, nepers, lo,
                                       max(profile.inner_length, r_min) * 1e6)
        r_min = max(r_min, wkb) if profile.origin.kind != "core" else max(wkb, lo)
    if not r_min < 0.5 * radius:
        raise InputError(f"radius {radius:.6g} lies inside the region where the wave is negligible or the "
                         f"potential's origin law is imposed (r < {r_min:.3g}); choose a larger radius",
                         parameter="radius")
    anchors = sorted({b for b in profile.breakpoints if r_min < b < radius} | {radius})
    span_probe = box_span(r_min, radius * 1.05, 0.1, anchors)
    step = _coarse_step(potential, profile, span_probe, L, mass, e_max)
    span = box_span(r_min, radius * 1.05, step, anchors)
    jumps = [b for b in span.anchors if b != radius] + ([radius] if radius in profile.breakpoints else [])
    orders = (2, 3, 4, 5, 6, 7) if jumps else (4, 6, 8, 10)
    history = []
    value = np.full(energies.size, np.nan)
    error = np.full(energies.size, np.inf)
    nodes = np.zeros(energies.size, dtype=np.int64)
    grids = 0
    scale = 1.0 / radius
    for g in range(MAX_HALVINGS + 1):
        if span.intervals(g) + 1 > MAX_POINTS:
            break
        grid = span.grid(g)
        values = potential_on_grid(potential, grid.r, span.anchors) - reference
        ic = int(np.argmin(np.abs(grid.r - radius)))
        u, zeros_c, _ = _shoot(grid, values, L * (L + 1.0), mass, energies, 0, exponent, False, ic - 2, ic)
        du = (u[0] - 8.0 * u[1] + 8.0 * u[3] - u[4]) / (12.0 * grid.step * grid.jacobian[ic])
        history.append(du / u[2])
        nodes = zeros_c
        grids = g + 1
        if len(history) >= 3:
            best, est = _richardson(history, orders)
            value, error = best, est + 64.0 * np.finfo(float).eps * math.sqrt(grid.size) * np.abs(best)
            if np.all(error <= tol * np.maximum(np.abs(value), scale)):
                break
    if grids < 3 and history:
        value = history[-1]
    converged = error <= tol * np.maximum(np.abs(value), scale)
    return LogDerivatives(value=value, error=error, nodes=nodes, converged=converged, radius=radius, grids=grids)



# --------------------------------------------------------------------------- resonances (outgoing waves)


def _outgoing(L: int, z):
    """The Riccati-Hankel function -x y_L(x) + i x j_L(x) ~ exp(i (x - L pi/2)) at complex z (scipy)."""
    from scipy.special import spherical_jn, spherical_yn

    return z * (-spherical_yn(L, z) + 1j * spherical_jn(L, z))


def _outgoing_coulomb(L: int, eta: complex, z: complex) -> complex:
    """H+ = G_L + i F_L at complex eta and rho (NaN where mpmath fails: the pole is then NaN and the
    methods "disagree", said so)."""
    f, g = _coulomb_fg_mpmath(L, eta, z)
    return g + 1j * f


def siegert_mismatch(grid, values, L: float, mass: float, energy: complex, exponent: float, rows,
                     coulomb: float = 0.0) -> complex:
    """Wronskian-type mismatch of u with the outgoing wave at two radii (zero at a resonance pole).

    u is integrated outward with Numerov at the complex ``energy`` (measured from
    V(inf)); the outgoing wave exp(ikr) with Im k < 0 is the Siegert condition; with
    a tail ``coulomb``/r the outgoing Coulomb wave H+ = G + i F at eta = m C / k.
    """
    _, q = grid.liouville_coefficients(values, 0, mass, centrifugal=L * (L + 1.0))
    b = grid.jacobian**2
    t = grid.step**2 * 2.0 * mass * (q - energy * b) / 12.0
    big = t.real > 0.9  # deep forbidden region: growth only (as the real solver does)
    t = np.where(big, 0.9 + 1j * t.imag, t)
    d = 2.0 + 12.0 * t / (1.0 - t)
    i1, i2 = rows
    y_prev = math.exp(-(exponent - 0.5) * grid.step) * (1.0 - t[0])
    y_cur = 1.0 - t[1]
    ys = {}
    dd = d.tolist()
    for i in range(1, i2):
        y_prev, y_cur = y_cur, dd[i] * y_cur - y_prev
        if i + 1 == i1:
            ys[i1] = y_cur
        if abs(y_cur) > 1e200:
            y_prev, y_cur = y_prev * 1e-200, y_cur * 1e-200
            ys = {key: v * 1e-200 for key, v in ys.items()}
    ys[i2] = y_cur
    u1 = math.sqrt(grid.jacobian[i1]) * ys[i1] / (1.0 - t[i1])
    u2 = math.sqrt(grid.jacobian[i2]) * ys[i2] / (1.0 - t[i2])
    k = np.sqrt(2.0 * mass * complex(energy))
    if k.imag > 0:
        k = -k
    Lint = int(round(L))
    if coulomb:
        eta = mass * coulomb / k
        h1, h2 = _outgoing_coulomb(Lint, eta, k * grid.r[i1]), _outgoing_coulomb(Lint, eta, k * grid.r[i2])
    else:
        h1, h2 = _outgoing(Lint, k * grid.r[i1]), _outgoing(Lint, k * grid.r[i2])
    return complex((u1 * h2 - u2 * h1) / (abs(u1) * abs(h2) + abs(u2) * abs(h1)))


def siegert_pole(potential, profile, L: float, mass: float, guess: complex, tol: float,
                 boundary_share: float = 1e-3) -> tuple[complex, float, int]:
    """The complex energy E_r - i Gamma/2 (from V(inf)) of a resonance pole near ``guess``.

    Secant iterations on :func:`siegert_mismatch` on halving grids, Richardson
    over the grids; returns (pole, estimate, grids).  Short-range or Coulomb tails.
    """
    exponent = profile.origin_exponent(L, mass)
    e_max = abs(guess) * 2.0
    r_min = profile.inner_cutoff(L, mass, boundary_share * tol)
    k_scale = math.sqrt(2.0 * mass * abs(guess))
    tail = channel_tail(potential, profile, mass, k_scale, k_scale, tol, r_min)
    coulomb = tail.coefficient if tail.kind == "coulomb" else 0.0
    r_end = END_FACTOR * tail.radius
    anchors = [b for b in profile.breakpoints if r_min < b < r_end]
    span = box_span(r_min, r_end, 0.1, anchors)
    step = _coarse_step(potential, profile, span, L, mass, e_max)
    span = box_span(r_min, r_end, step, anchors)
    orders = (2, 3, 4, 5, 6, 7) if span.anchors else (4, 6, 8, 10)
    coarse = span.grid(0)
    ia = min(int(np.searchsorted(coarse.r, tail.radius)), coarse.size - 2)
    spacing = min(0.5 * math.pi / max(k_scale, 1e-300), 0.3 * tail.radius)
    ib = min(max(int(np.searchsorted(coarse.r, coarse.r[ia] + spacing)), ia + 1), coarse.size - 1)
    history = []
    pole = complex(guess)
    best, est = np.array([pole]), np.array([math.inf])
    for g in range(MAX_HALVINGS + 1):
        if span.intervals(g) + 1 > MAX_POINTS:
            break
        grid = span.grid(g)
        values = potential_on_grid(potential, grid.r, span.anchors) - profile.v_infinity
        rows = (ia * 2**g, ib * 2**g)
        e0, e1 = pole, pole * (1.0 + 1e-4) + 1e-6j * abs(pole)
        f0 = siegert_mismatch(grid, values, L, mass, e0, exponent, rows, coulomb)
        f1 = siegert_mismatch(grid, values, L, mass, e1, exponent, rows, coulomb)
        for _ in range(60):
            if f1 == f0:
                break
            e2 = e1 - f1 * (e1 - e0) / (f1 - f0)
            e0, f0 = e1, f1
            e1, f1 = e2, siegert_mismatch(grid, values, L, mass, e2, exponent, rows, coulomb)
            if abs(e1 - e0) <= 1e-15 * abs(e1):
                break
        pole = e1
        history.append(np.array([pole]))
        if len(history) >= 3:
            best, est = _richardson([h.real for h in history], orders)
            best_i, est_i = _richardson([h.imag for h in history], orders)
            best = best + 1j * best_i
            est = np.hypot(est, est_i) + 64.0 * np.finfo(float).eps * math.sqrt(grid.size) * abs(best[0])
            if est[0] <= tol * abs(best[0]):
                break
    return complex(best[0]), float(est[0]), len(history)
