"""An independent reference for radial bound states: spectral elements plus a Prüfer count.

Nothing here comes from radsolve (whose solvers are finite differences and
Numerov shooting on a mapped grid); only numpy and scipy are used.  The
problem, for one partial wave, is

    -u''/(2m) + [c/r^2 + V(r) + L(L+1)/(2m r^2)] u = E u,   u(0) = 0,  u(inf) = 0,

with L = l + (d-3)/2 in d dimensions.  The inverse-square part is given
apart from the rest of the potential (``inverse_square=c``) because it fixes
the origin law u ~ r^lam, lam (lam - 1) = L(L+1) + 2 m c, and subtracting it
back out of a total V would lose every digit near r = 0.

Energies (``_spectral``): a continuous Galerkin method on finite elements of
polynomial degree p with Lagrange bases on Legendre-Gauss-Lobatto nodes,
assembled into the symmetric pencil K c = E M c and solved densely with
scipy.linalg.eigh.  Being a Rayleigh-Ritz method in a Dirichlet box, its
levels are upper bounds that fall as the basis grows.  The first element
[0, a] carries u = (r/a)^lam phi(r) with phi a polynomial (a modal basis of
Jacobi polynomials, orthonormal for the weight), integrated with
Gauss-Jacobi quadrature for the weight r^(2 lam - 1): a non-integer or
near-1/2 origin exponent (2D s waves, attractive cores), a Coulomb core or a
large l costs nothing there.  Every breakpoint (step, kink) is an element
boundary.  Elements are sized from the local WKB phase at the top of the
energy window, from the decay rate under barriers (only where a level of the
window is not yet attenuated below e^-25), and from how well V itself is
resolved.  Each energy is the Rayleigh quotient of the eigenvector after one
step of inverse iteration, evaluated by quadrature in long double: float64
eigenvalues of the pencil are only good to eps times its largest eigenvalue,
the quotient (stationary, squares summed) keeps the relative accuracy of
each level, weakly bound ones included.

Error estimate of each level: |E(p) - E(p + 4)| on the same mesh (Galerkin
convergence in p is exponential here, so this overstates the error of the
finer value), plus twice the change of the quotient under the inverse
iteration step (what the eigenvector's float64 error does to it), plus a
rounding floor (eps |V| if V itself is evaluated only in float64), plus the
box shift u'(R)^2 / (4 m kappa) of a Dirichlet wall at R (textbook:
dE/dR = -u'(R)^2/(2m) for a normalized u, integrated over the exponential
tail).  The box grows until that shift is negligible.

Bound-level count (``_zero_energy_count``): independent of any box, the
regular solution at E = V(inf) is integrated outward in t = ln r with
solve_ivp (DOP853) as a scaled Prüfer angle, so nothing overflows, restarted
at every breakpoint, out to where the tail can no longer matter, twice (two
starting radii and tolerances; their spread is the uncertainty).  By the
oscillation theorem (textbook) the number of levels strictly below V(inf) is
the number of zeros of that solution on (0, inf); beyond the last radius the
free solutions are r^lam and r^(1 - lam), and one more zero follows iff the
log-derivative r u'/u lies below that of the subdominant r^(1 - lam) (for
lam = 1/2, sqrt(r)(A ln r + B)).  When the two are too close to tell, the
count is reported as uncertain.  Tails decaying more slowly than 1/r^2 and
attractive, or an inverse-square tail below -(1/4)/(2m r^2) (textbook; e.g.
Landau & Lifshitz, Quantum Mechanics, sec. 35, from memory), bind infinitely
many levels; so does a confining potential: the count is then None.  The
spectral solve in the final box cross-checks the count: by min-max it can
hold no more levels below V(inf) than there are.
"""

from __future__ import annotations

import contextlib
import ctypes
import math
import time
from dataclasses import dataclass, field
from functools import lru_cache
from typing import Callable, Sequence

import numpy as np
from numpy.polynomial import chebyshev as C
from numpy.polynomial import legendre as L
from scipy import linalg, special
from scipy.integrate import solve_ivp

EPS = np.finfo(float).eps
LD = np.longdouble
EPS_LD = float(np.finfo(LD).eps)

#: Attenuation (e-folds of amplitude) beyond which a level no longer needs resolving:
#: its weight there is below e^-50 of its peak.
_ATTENUATION_CUT = 25.0
#: WKB phase per element (radians) at the top of the window, and e-folds of decay per
#: element under a barrier.  With degree 12 the Chebyshev coefficients of sin(2x)
#: have fallen to ~2e-9 by the last one, and the Galerkin energy error is its square.
_THETA = 4.0
_THETA_DECAY = 8.0
#: Polynomial degrees of the two solves whose difference is the estimate.
_P_LO, _P_HI = 12, 16
#: Largest ratio r_b / r_a of an element that is not at the origin.
_RATIO = 3.0


# --------------------------------------------------------------------------- #
# BLAS threads
# --------------------------------------------------------------------------- #

def _openblas_handles():
    """(get, set) pairs of the OpenBLAS copies loaded in this process (none if not found)."""
    found = []
    try:
        with open("/proc/self/maps") as fh:
            paths = sorted({line.split()[-1] for line in fh if "openblas" in line and ".so" in line})
    except OSError:
        return found
    for path in paths:
        try:
            lib = ctypes.CDLL(path)
        except OSError:
            continue
        for get, put in (("scipy_openblas_get_num_threads", "scipy_openblas_set_num_threads"),
                         ("scipy_openblas_get_num_threads64_", "scipy_openblas_set_num_threads64_"),
                         ("openblas_get_num_threads", "openblas_set_num_threads")):
            if hasattr(lib, get) and hasattr(lib, put):
                found.append((getattr(lib, get), getattr(lib, put)))
                break
    return found


@contextlib.contextmanager
def single_threaded_blas():
    """Run the block with one BLAS thread, then restore the previous setting.

    The dense solves here are a few hundred unknowns: threads buy nothing at that size,
    and on a loaded machine they cost an order of magnitude.  Results do not change.
    """
    handles = _openblas_handles()
    before = []
    for get, put in handles:
        try:
            before.append(int(get()))
            put(1)
        except Exception:   # an unexpected build: leave it alone
            before.append(None)
    try:
        yield
    finally:
        for (get, put), n in zip(handles, before):
            if n is not None:
                put(n)


# --------------------------------------------------------------------------- #
# Results
# --------------------------------------------------------------------------- #

@dataclass
class RefLevel:
    """One level of the reference.

    ``energy`` is None when the level is bound (by the count) but could not
    be resolved; ``status`` is ``"ok"`` or the reason it is not.
    """

    nodes: int
    energy: float | None
    error: float
    status: str = "ok"

    @property
    def ok(self) -> bool:
        return self.status == "ok"


@dataclass
class RefChannel:
    """The reference's answer for one partial wave.

    count : int or None
        Levels strictly below V(inf); None for infinitely many.
    count_certain : bool
        False when the zero-energy solution sits too close to the borderline
        (a level at threshold) or when the count and the box disagree.
    levels : list of RefLevel
        The ``min(count, wanted)`` lowest levels, by node number.
    """

    count: int | None
    count_certain: bool
    levels: list[RefLevel]
    v_inf: float
    notes: list[str] = field(default_factory=list)
    box: float = 0.0
    dof: int = 0
    seconds: float = 0.0


# --------------------------------------------------------------------------- #
# Element tables
# --------------------------------------------------------------------------- #

@lru_cache(maxsize=None)
def _gll_nodes(p: int) -> np.ndarray:
    interior = L.Legendre.basis(p).deriv().roots().real
    x = np.concatenate([[-1.0], np.sort(interior), [1.0]])
    # Newton polish of the interior roots of P_p' (the companion roots lose a few digits)
    c = np.zeros(p + 1)
    c[p] = 1.0
    d1, d2 = L.legder(c, 1), L.legder(c, 2)
    for _ in range(3):
        xi = x[1:-1]
        x[1:-1] = xi - L.legval(xi, d1) / L.legval(xi, d2)
    return x


@lru_cache(maxsize=None)
def _tables(p: int, nq: int, beta: float | None):
    """Quadrature points and weights on [-1, 1], basis values B and derivatives D there.

    beta None: Gauss-Legendre.  Otherwise Gauss-Jacobi for (1 + x)^beta.
    Also returns the derivatives of the basis at x = 1 and the nodes.
    """
    nodes = _gll_nodes(p)
    if beta is None:
        xq, wq = L.leggauss(nq)
    else:
        xq, wq = special.roots_jacobi(nq, 0.0, beta)
    vn = L.legvander(nodes, p)
    inv = np.linalg.inv(vn)
    vq = L.legvander(xq, p)
    dvq = np.stack([L.legval(xq, L.legder(np.eye(p + 1)[k])) for k in range(p + 1)], axis=1)
    B = vq @ inv
    D = dvq @ inv
    d_end = np.array([L.legval(1.0, L.legder(np.eye(p + 1)[k])) for k in range(p + 1)]) @ inv
    return xq, wq, B, D, d_end, nodes


@lru_cache(maxsize=None)
def _phi_tables(p: int, nq: int, beta: float):
    """The origin element's basis on [-1, 1]: p bubbles (1 - x) P_k^(2, beta)(x), which
    vanish at x = 1 and are orthonormal for the weight (1 + x)^beta, then the constant 1
    (the shared value at x = 1).  A nodal basis would be hopelessly ill-conditioned
    here: for large beta the weight lives in a sliver next to x = 1.
    """
    xq, wq = special.roots_jacobi(nq, 0.0, beta)
    B = np.empty((nq, p + 1))
    D = np.empty((nq, p + 1))
    for k in range(p):
        P = special.eval_jacobi(k, 2.0, beta, xq)
        dP = 0.5 * (k + 3.0 + beta) * special.eval_jacobi(k - 1, 3.0, beta + 1.0, xq) if k > 0 else 0.0 * xq
        b = (1.0 - xq) * P
        d = -P + (1.0 - xq) * dP
        nrm = math.sqrt(float(np.sum(wq * b * b)))
        B[:, k] = b / nrm
        D[:, k] = d / nrm
    B[:, p] = 1.0
    D[:, p] = 0.0
    return xq, wq, B, D


@lru_cache(maxsize=None)
def _cheb_tables(n: int):
    x = np.cos(np.pi * (np.arange(n) + 0.5) / n)
    inv = np.linalg.inv(C.chebvander(x, n - 1))
    return x, inv


# --------------------------------------------------------------------------- #
# The channel
# --------------------------------------------------------------------------- #

class _Channel:
    def __init__(self, V, mass, l, dimension, inverse_square, breakpoints, v_inf, scale):
        self.V = V
        self.m = float(mass)
        Lc = l + (dimension - 3) / 2.0
        self.gamma = Lc * (Lc + 1.0) + 2.0 * self.m * float(inverse_square)
        self.gamma_ld = LD(Lc) * (LD(Lc) + 1) + 2 * LD(self.m) * LD(float(inverse_square))
        if self.gamma < -0.25 - 1e-14:
            raise ValueError("inverse-square coefficient below the fall-to-centre limit")
        self.lam = 0.5 + math.sqrt(max(self.gamma + 0.25, 0.0))
        self.bps = sorted(float(b) for b in breakpoints if b > 0)
        self.v_inf = float(v_inf)
        self.scale = float(scale)

    def v_rest(self, r):
        out = np.asarray(self.V(np.asarray(r, dtype=float)), dtype=float)
        return np.broadcast_to(out, np.shape(r)).astype(float)

    def v_eff(self, r):
        r = np.asarray(r, dtype=float)
        return self.v_rest(r) + self.gamma / (2.0 * self.m * r * r)


# --------------------------------------------------------------------------- #
# Mesh
# --------------------------------------------------------------------------- #

def _sample_grid(ch: _Channel, R: float) -> np.ndarray:
    lo = 1e-9 * ch.scale
    parts = [np.geomspace(lo, R, int(120 * math.log10(R / lo)) + 2)]
    span = min(R, 6.0 * max(ch.scale, ch.bps[-1] if ch.bps else 0.0))
    parts.append(np.linspace(0.0, span, 3001)[1:])
    for b in ch.bps:
        if b < R:
            parts.append(np.array([b * (1 - 1e-12), b * (1 + 1e-12)]))
    r = np.unique(np.concatenate(parts))
    return r[(r > 0) & (r <= R)]


def _attenuation(r, veff, energies, m):
    """For each energy: e-folds of WKB decay from the nearest classically allowed point."""
    out = []
    dr = np.diff(r)
    for E in energies:
        kap = np.sqrt(2.0 * m * np.maximum(veff - E, 0.0))
        allowed = veff < E
        if not allowed.any():
            out.append((kap, np.full_like(r, np.inf)))
            continue
        seg = 0.5 * (kap[1:] + kap[:-1]) * dr
        c = np.concatenate([[0.0], np.cumsum(seg)])
        idx = np.arange(len(r))
        last = np.maximum.accumulate(np.where(allowed, idx, -1))
        fwd = np.where(last >= 0, c - c[np.maximum(last, 0)], np.inf)
        nxt = np.minimum.accumulate(np.where(allowed, idx, len(r))[::-1])[::-1]
        bwd = np.where(nxt < len(r), c[np.minimum(nxt, len(r) - 1)] - c, np.inf)
        out.append((kap, np.minimum(fwd, bwd)))
    return out


class _Mesh:
    """Element edges; the first element [0, a] is always the origin (phi) element."""

    def __init__(self, edges):
        self.edges = np.asarray(edges, dtype=float)

    @property
    def n(self):
        return len(self.edges) - 1


def _build_mesh(ch: _Channel, E_lo: float, E_hi: float, R: float, theta: float, p: int,
                levels: Sequence[float] = ()) -> _Mesh:
    r = _sample_grid(ch, R)
    veff = ch.v_eff(r)
    vrest = ch.v_rest(r)
    # the window on a grid, and the levels themselves once known (a weakly bound one
    # decays far more slowly than any grid energy below it)
    energies = np.unique(np.concatenate([np.linspace(E_lo, E_hi, 9),
                                         [e for e in levels if E_lo <= e <= E_hi]]))
    att = _attenuation(r, veff, energies, ch.m)
    k_osc = np.sqrt(2.0 * ch.m * np.maximum(E_hi - veff, 0.0))
    k_req = k_osc.copy()
    a_min = np.full_like(r, np.inf)
    for kap, A in att:
        rel = A <= _ATTENUATION_CUT
        k_req = np.where(rel, np.maximum(k_req, kap * (theta / _THETA_DECAY)), k_req)
        a_min = np.minimum(a_min, A)
    a_min = np.minimum(a_min, 200.0)
    S = max(E_hi - E_lo, 1e-300)
    # phase and attenuation as functions of r (piecewise linear between samples)
    phase = np.concatenate([[0.0], np.cumsum(0.5 * (k_req[1:] + k_req[:-1]) * np.diff(r))])

    def phase_at(x):
        return np.interp(x, r, phase)

    def amin_on(x0, x1):
        sel = (r >= x0) & (r <= x1)
        vals = a_min[sel]
        ends = np.interp([x0, x1], r, a_min)
        return float(min(vals.min() if vals.size else np.inf, ends.min()))

    ncheb = 2 * p + 2
    xc, cinv = _cheb_tables(ncheb)

    def v_ok(x0, x1, phi):
        rr = x0 + (x1 - x0) * (xc + 1) / 2
        f = rr * ch.v_rest(rr) if phi else ch.v_eff(rr)
        coef = cinv @ f
        tail = np.abs(coef[p + 1:]).max()
        scale_f = x1 if phi else 1.0
        weight = math.exp(-2.0 * min(amin_on(x0, x1), 100.0))
        # rounding puts a floor of ~eps max|f| under the coefficients
        return tail <= 1e3 * EPS * np.abs(f).max() or tail * weight <= 1e-13 * S * scale_f

    # --- the origin element [0, a]: phi is smooth there, so only V (without the
    # inverse-square term) and its phase limit a
    first_bp = ch.bps[0] if ch.bps else np.inf
    k_phi = np.sqrt(2.0 * ch.m * np.maximum(np.maximum(E_hi - vrest, vrest - E_lo), 0.0))
    ph = np.concatenate([[0.0], np.cumsum(0.5 * (k_phi[1:] + k_phi[:-1]) * np.diff(r))])
    # the integrable 1/sqrt(r) of a Coulomb core below the first sample
    ph = ph + k_phi[0] * r[0] * 2.0
    a = float(np.interp(theta, ph, r)) if ph[-1] > theta else R / 4
    a = min(a, first_bp, R / 4, 2.0 * ch.scale)
    while not v_ok(0.0, a, True) and a > 1e-12 * ch.scale:
        a *= 0.5
    start = a
    edges = [0.0, start]
    stops = [b for b in ch.bps if start < b < R] + [R]
    for stop in stops:
        x0 = edges[-1]
        # initial split at equal phase, then by ratio, then refine where V is unresolved
        n = max(1, int(math.ceil((phase_at(stop) - phase_at(x0)) / theta)))
        targets = np.linspace(phase_at(x0), phase_at(stop), n + 1)[1:-1]
        inner = [float(np.interp(t, phase, r)) for t in targets]
        pieces = [x0] + [x for x in inner if x0 < x < stop] + [stop]
        stack = list(zip(pieces[:-1], pieces[1:]))[::-1]
        while stack:
            x0_, x1_ = stack.pop()
            too_wide = x0_ > 0 and x1_ / x0_ > _RATIO and amin_on(x0_, x1_) < _ATTENUATION_CUT
            if (too_wide or not v_ok(x0_, x1_, False)) and (x1_ - x0_) > 1e-11 * x1_:
                mid = math.sqrt(x0_ * x1_) if x1_ / x0_ > 2.0 else 0.5 * (x0_ + x1_)
                stack.append((mid, x1_))
                stack.append((x0_, mid))
            else:
                edges.append(x1_)
    return _Mesh(edges)


# --------------------------------------------------------------------------- #
# Galerkin solve on one mesh
# --------------------------------------------------------------------------- #

# --------------------------------------------------------------------------- #
# Long-double tables and Rayleigh quotients
# --------------------------------------------------------------------------- #

def _legendre_ld(n, x):
    """P_n, P_n' at long-double x (three-term recurrence)."""
    p0, p1 = np.ones_like(x), x.copy()
    if n == 0:
        return p0, np.zeros_like(x)
    for k in range(2, n + 1):
        p0, p1 = p1, ((2 * k - 1) * x * p1 - (k - 1) * p0) / k
    dp = n * (x * p1 - p0) / (x * x - 1)
    return p1, dp


def _jacobi_ld(n, a, b, x):
    """P_n^(a,b)(x) in long double (the standard recurrence, DLMF 18.9.2)."""
    a, b = LD(a), LD(b)
    p0 = np.ones_like(x)
    if n == 0:
        return p0
    p1 = (a + 1) + (a + b + 2) * (x - 1) / 2
    for k in range(2, n + 1):
        c = 2 * k + a + b
        p0, p1 = p1, ((c - 1) * (c * (c - 2) * x + a * a - b * b) * p1
                      - 2 * (k + a - 1) * (k + b - 1) * c * p0) / (2 * k * (k + a + b) * (c - 2))
    return p1


@lru_cache(maxsize=None)
def _tables_ld(p: int, nq: int):
    """Gauss-Legendre points and weights, and the GLL Lagrange basis there, in long double."""
    x = np.asarray(L.leggauss(nq)[0], dtype=LD)
    for _ in range(3):
        P, dP = _legendre_ld(nq, x)
        x = x - P / dP
    _, dP = _legendre_ld(nq, x)
    w = 2 / ((1 - x * x) * dP * dP)
    # GLL nodes: +-1 and the roots of P_p', polished with P_p'' from Legendre's equation
    nodes = np.asarray(_gll_nodes(p), dtype=LD)
    inner = nodes[1:-1]
    for _ in range(3):
        P, dP = _legendre_ld(p, inner)
        d2P = (2 * inner * dP - p * (p + 1) * P) / (1 - inner * inner)
        inner = inner - dP / d2P
    nodes[1:-1] = inner
    diff = x[:, None] - nodes[None, :]                       # (nq, p+1), never zero here
    denom = np.array([np.prod([nodes[j] - nodes[k] for k in range(p + 1) if k != j]) for j in range(p + 1)],
                     dtype=LD)
    B = np.empty((nq, p + 1), dtype=LD)
    D = np.empty((nq, p + 1), dtype=LD)
    for j in range(p + 1):
        others = np.delete(diff, j, axis=1)
        B[:, j] = np.prod(others, axis=1) / denom[j]
        D[:, j] = B[:, j] * np.sum(1 / others, axis=1)
    return x, w, B, D


@lru_cache(maxsize=None)
def _phi_tables_ld(p: int, nq: int, beta_key: float, beta: LD):
    """The origin element's tables (see _phi_tables) in long double."""
    x = np.asarray(special.roots_jacobi(nq, 0.0, float(beta))[0], dtype=LD)
    for _ in range(4):
        P = _jacobi_ld(nq, 0, beta, x)
        dP = (nq + beta + 1) / 2 * _jacobi_ld(nq - 1, 1, beta + 1, x)
        x = x - P / dP
    dP = (nq + beta + 1) / 2 * _jacobi_ld(nq - 1, 1, beta + 1, x)
    w = 1 / ((1 - x * x) * dP * dP)
    # Gauss-Jacobi weights are c / ((1 - x^2) P_n'^2); the rule integrates 1 exactly
    w = w * (LD(2) ** (beta + 1) / (beta + 1)) / np.sum(w)
    B = np.empty((nq, p + 1), dtype=LD)
    D = np.empty((nq, p + 1), dtype=LD)
    for k in range(p):
        P = _jacobi_ld(k, 2, beta, x)
        dP = (k + 3 + beta) / 2 * _jacobi_ld(k - 1, 3, beta + 1, x) if k > 0 else np.zeros_like(x)
        b = (1 - x) * P
        d = -P + (1 - x) * dP
        nrm = np.sqrt(np.sum(w * b * b))
        B[:, k] = b / nrm
        D[:, k] = d / nrm
    B[:, p] = 1
    D[:, p] = 0
    return x, w, B, D


def _v_ld(ch, r):
    """V at long-double radii, and whether it came back in long double."""
    out = ch.V(r)
    exact = isinstance(out, np.ndarray) and out.dtype == LD
    return np.broadcast_to(np.asarray(out, dtype=LD), r.shape), exact


def _rayleigh_ld(ch, mesh, p, nq, full):
    """Kinetic, potential, |potential| and norm sums of each column of ``full``, in long double."""
    m = LD(ch.m)
    Lc_gamma = LD(ch.gamma_ld)
    X = full.astype(LD)
    edges = mesh.edges.astype(LD)
    xq, wq, B, D = _tables_ld(p, nq)
    e0 = 1
    a_e, b_e = edges[e0:-1], edges[e0 + 1:]
    J = (b_e - a_e) / 2
    rq = a_e[:, None] + J[:, None] * (xq[None, :] + 1)
    Vr, exact = _v_ld(ch, rq)
    Vq = Vr + Lc_gamma / (2 * m * rq * rq)
    wJ = wq[None, :] * J[:, None]
    idx = (e0 + np.arange(len(a_e)))[:, None] * p + np.arange(p + 1)[None, :]
    xe = X[idx]
    uq = np.einsum("qi,eik->eqk", B, xe)
    dq = np.einsum("qi,eik->eqk", D, xe) / J[:, None, None]
    T = np.einsum("eq,eqk->k", wJ, dq * dq) / (2 * m)
    Vp = np.einsum("eq,eqk->k", wJ * Vq, uq * uq)
    Va = np.einsum("eq,eqk->k", wJ * np.abs(Vq), uq * uq)
    Nn = np.einsum("eq,eqk->k", wJ, uq * uq)
    # the origin element, u = (r/a)^lam phi, lam from gamma in long double
    lam = LD(0.5) + np.sqrt(max(Lc_gamma + LD(0.25), LD(0)))
    beta = 2 * lam - 1
    xj, wj, Bj, Dj = _phi_tables_ld(p, nq, float(beta), beta)
    a = edges[1]
    Ja = a / 2
    rj = Ja * (xj + 1)
    w_eff = wj * (1 + xj) / LD(2) ** (2 * lam) * Ja
    Vj, exact_j = _v_ld(ch, rj)
    x0 = X[:p + 1]
    up = Bj @ x0
    dp = (Dj @ x0) / Ja
    T = T + (w_eff @ (dp * dp)) / (2 * m) + lam / (2 * m * a) * x0[p] ** 2
    Vp = Vp + (w_eff * Vj) @ (up * up)
    Va = Va + (w_eff * np.abs(Vj)) @ (up * up)
    Nn = Nn + w_eff @ (up * up)
    return T, Vp, Va, Nn, exact and exact_j


@dataclass
class _Spectrum:
    energies: np.ndarray       # Rayleigh quotients by quadrature
    eig: np.ndarray            # the pencil's eigenvalues
    floor: np.ndarray          # rounding floor of each energy
    box_error: np.ndarray      # u'(R)^2 / (4 m kappa)
    n_below: int               # eigenvalues below E_hi
    dof: int


def _inverse_step(K, M, X, shifts, p):
    """One step of inverse iteration per column of X, M-normalized, with banded LU."""
    n = K.shape[0]
    bw = p
    ab_K = np.zeros((2 * bw + 1, n))
    ab_M = np.zeros((2 * bw + 1, n))
    for d in range(-bw, bw + 1):
        diag_K = np.diagonal(K, d)
        diag_M = np.diagonal(M, d)
        if d >= 0:
            ab_K[bw - d, d:] = diag_K
            ab_M[bw - d, d:] = diag_M
        else:
            ab_K[bw - d, :n + d] = diag_K
            ab_M[bw - d, :n + d] = diag_M
    out = np.empty_like(X)
    for k in range(X.shape[1]):
        rhs = M @ X[:, k]
        with np.errstate(all="ignore"):
            try:
                y = linalg.solve_banded((bw, bw), ab_K - shifts[k] * ab_M, rhs, check_finite=False)
            except (linalg.LinAlgError, ValueError):
                y = X[:, k]
        if not np.all(np.isfinite(y)) or not np.any(y):
            y = X[:, k]
        y = y / math.sqrt(float(y @ (M @ y)))
        if y @ (M @ X[:, k]) < 0:
            y = -y
        out[:, k] = y
    return out


def _spectral(ch: _Channel, mesh: _Mesh, p: int, E_hi: float, n_want: int | None) -> _Spectrum:
    nq = p + 8
    edges = mesh.edges
    ne = mesh.n
    ndof = ne * p + 1
    K = np.zeros((ndof, ndof))
    M = np.zeros((ndof, ndof))
    xq, wq, B, D, d_end, _ = _tables(p, nq, None)
    # the regular elements: all but the origin element
    e0 = 1
    a_e = edges[e0:-1]
    b_e = edges[e0 + 1:]
    J = (b_e - a_e) / 2.0
    rq = a_e[:, None] + J[:, None] * (xq[None, :] + 1.0)
    Vq = ch.v_eff(rq)
    wJ = wq[None, :] * J[:, None]
    Ke = np.einsum("eq,qi,qj->eij", wJ / (2.0 * ch.m * J[:, None] ** 2), D, D) \
        + np.einsum("eq,qi,qj->eij", wJ * Vq, B, B)
    Me = np.einsum("eq,qi,qj->eij", wJ, B, B)
    for k in range(len(a_e)):
        s = (e0 + k) * p
        K[s:s + p + 1, s:s + p + 1] += Ke[k]
        M[s:s + p + 1, s:s + p + 1] += Me[k]
    # the origin element
    a = edges[1]
    beta = 2.0 * ch.lam - 1.0
    xj, wj, Bj, Dj = _phi_tables(p, nq, round(beta, 15))
    Ja = a / 2.0
    rj = Ja * (xj + 1.0)
    # the weight (r/a)^(2 lam) = ((1+x)/2)^(2 lam); (1+x)^beta is in wj
    w_eff = wj * (1.0 + xj) / 2.0 ** (2.0 * ch.lam) * Ja
    Vj = ch.v_rest(rj)
    Kp = (Dj.T * (w_eff / (2.0 * ch.m * Ja**2))) @ Dj + (Bj.T * (w_eff * Vj)) @ Bj
    Kp[p, p] += ch.lam / (2.0 * ch.m * a)
    Mp = (Bj.T * w_eff) @ Bj
    K[:p + 1, :p + 1] += Kp
    M[:p + 1, :p + 1] += Mp
    keep = np.arange(ndof - 1)             # Dirichlet at R; phi(0) is free
    Kk = K[np.ix_(keep, keep)]
    Mk = M[np.ix_(keep, keep)]
    if n_want is None:
        w, X = linalg.eigh(Kk, Mk, subset_by_value=(-np.inf, E_hi), driver="gvx")
    else:
        w, X = linalg.eigh(Kk, Mk, subset_by_index=(0, min(n_want, len(keep)) - 1), driver="gvx")
    n_below = int(np.sum(w < E_hi))
    full = np.zeros((ndof, len(w)))
    full[keep] = X
    # Rayleigh quotients by quadrature in extended precision: squares first, so no
    # large terms cancel, and tables, radii and sums in long double, so that the
    # energy is not limited by the eps * Lam of the float64 pencil (Lam its largest
    # eigenvalue: eigh's eigenvalues are only that good).  The eigenvector's float64
    # error enters only to second order, the quotient being stationary; how much it
    # does is measured: one step of inverse iteration (a banded LU of K - E M, with
    # rounding independent of eigh's) and the change of the quotient.
    T, Vp, Va, Nn, v_exact = _rayleigh_ld(ch, mesh, p, nq, full)
    e_first = ((T + Vp) / Nn).astype(float)
    if len(w):
        full2 = np.zeros_like(full)
        full2[keep] = _inverse_step(Kk, Mk, X, e_first, p)
        T, Vp, Va, Nn, v_exact = _rayleigh_ld(ch, mesh, p, nq, full2)
        full = full2
    energies_ld = (T + Vp) / Nn
    energies = energies_ld.astype(float)
    vector_noise = np.abs(energies_ld - e_first.astype(LD)).astype(float)
    # rounding of the long-double sums, of V itself when it is only evaluated in float64
    # (each value off by up to eps |V|), and of the energy returned as a float64
    v_floor = (0.0 if v_exact else 1.0) * EPS * Va / Nn
    floor = (200.0 * EPS_LD * (T + Va) / Nn + v_floor).astype(float) + EPS * np.abs(energies) \
        + 2.0 * vector_noise
    # box shift of a Dirichlet wall at R
    du_R = (d_end @ full[-p - 1:]) / J[-1] / np.sqrt(Nn.astype(float))
    kappa = np.sqrt(2.0 * ch.m * np.maximum(ch.v_inf - energies, 0.0)) if math.isfinite(ch.v_inf) \
        else np.full_like(energies, np.inf)
    with np.errstate(divide="ignore", invalid="ignore"):
        box = np.where(kappa > 0, du_R**2 / (4.0 * ch.m * kappa), np.inf)
    box = np.where(np.isfinite(kappa), box, du_R**2 / (2.0 * ch.m) * (edges[-1] - edges[-2]))
    return _Spectrum(energies, w, floor, box, n_below, len(keep))


# --------------------------------------------------------------------------- #
# Zero-energy count
# --------------------------------------------------------------------------- #

def _tail_kind(ch: _Channel):
    """('finite', g_inf), ('infinite', reason): from g(r) = gamma + 2m r^2 (V - V_inf) far out."""
    if not math.isfinite(ch.v_inf):
        return "infinite", "confining potential"
    far = ch.scale * np.array([1e6, 1e8, 1e10, 1e12])
    g = ch.gamma + 2.0 * ch.m * far**2 * (ch.v_rest(far) - ch.v_inf)
    if g[-1] < -0.25 and g[-1] <= g[-2] * (1 - 1e-9) and g[-2] < g[-3]:
        return "infinite", "attractive tail decaying more slowly than 1/r^2"
    if abs(g[-1] - g[-2]) <= 1e-6 * max(1.0, abs(g[-1])):
        if g[-1] < -0.25 - 1e-9:
            return "infinite", "inverse-square tail below the critical -1/(8 m r^2)"
        return "finite", float(g[-1])
    if g[-1] > g[-2] > g[-3]:
        return "repulsive", float(g[-1])
    return "unknown", float(g[-1])


def _zero_energy_count(ch: _Channel, g_inf: float):
    """(count, certain, note) from the Prüfer angle of the E = V_inf solution."""
    m, E, gamma = ch.m, ch.v_inf, ch.gamma

    def g_of(r):
        return gamma + 2.0 * m * r * r * (ch.v_rest(r) - E)

    # how far out: until the rest of the tail cannot move the separatrix by more than 1e-11
    rr = ch.scale * np.geomspace(1e-2, 1e13, 1501)
    dev = np.abs(g_of(rr) - g_inf)
    tt = np.log(rr)
    tail_int = np.concatenate([np.cumsum((0.5 * (dev[1:] + dev[:-1]) * np.diff(tt))[::-1])[::-1], [0.0]])
    ok = np.nonzero(tail_int <= 1e-11)[0]
    r_far = max(rr[ok[0]] if ok.size else rr[-1], 2.0 * (ch.bps[-1] if ch.bps else 0.0), 10 * ch.scale)
    delta_tail = float(np.interp(math.log(r_far), tt, tail_int))
    lam_inf = 0.5 + math.sqrt(max(g_inf + 0.25, 0.0))
    y_sub = 1.0 - lam_inf

    # In t = ln r the pair (u, v = r u') obeys u' = v, v' = v - P u with P = -g.  The
    # scaled Prüfer angle, tan(theta) = S u / v with S constant on a stretch, turns at
    # the rate ~S where P ~ S^2 > 0 and relaxes at the rate ~S where P ~ -S^2 < 0; S is
    # re-chosen wherever |P| has changed by a factor 4, so the steps stay even.  A zero
    # of u is sin(theta) = 0, crossed upward only (theta' = S > 0 there).
    V = ch.V

    def rhs(t, th, S):
        r = math.exp(t)
        P = -(gamma + 2.0 * m * r * r * (float(V(np.array([r]))[0]) - E))
        sn, cs = math.sin(th[0]), math.cos(th[0])
        return [S * cs * cs + (P / S) * sn * sn - sn * cs]

    r_start = 1e-12 * ch.scale
    knots = [r_start] + [b for b in ch.bps if r_start < b < r_far] + [r_far]
    stretches = []   # (t0, t1, S)
    for x0, x1 in zip(knots[:-1], knots[1:]):
        t0, t1 = math.log(x0), math.log(x1)
        ts = np.linspace(t0, t1, max(50, int(60 * (t1 - t0))))
        mid = 0.5 * (ts[1:] + ts[:-1])
        with np.errstate(all="ignore"):
            P = -g_of(np.exp(mid))
        logp = np.log(np.maximum(np.abs(P), 1.0))
        a = t0
        lo = hi = logp[0]
        for tk, lp in zip(ts[1:-1], logp[1:]):
            if max(hi, lp) - min(lo, lp) > math.log(4.0):
                stretches.append((a, float(tk), math.exp(0.25 * (lo + hi))))
                a, lo, hi = float(tk), lp, lp
            else:
                lo, hi = min(lo, lp), max(hi, lp)
        stretches.append((a, t1, math.exp(0.25 * (lo + hi))))

    def run(r0, rtol):
        t_start = math.log(r0)
        S_prev = None
        th = None
        for k, (a, b, S) in enumerate(stretches):
            if b <= t_start:
                continue
            a = max(a, t_start)
            if th is None:
                th = math.atan2(S, ch.lam)          # v/u = r u'/u = lam at the origin
            elif S != S_prev:
                sn, cs = math.sin(th), math.cos(th)
                th += math.atan2(S / S_prev * sn, cs) - math.atan2(sn, cs)
            sol = solve_ivp(rhs, (a, b), [th], method="DOP853", rtol=rtol, atol=rtol * 1e-2, args=(S,))
            if not sol.success:
                raise RuntimeError(sol.message)
            th = float(sol.y[0, -1])
            S_prev = S
        return th, S_prev

    th1, _ = run(1e-10 * ch.scale, 1e-11)
    th2, S_end = run(1e-12 * ch.scale, 1e-13)
    nodes = int(math.floor(th2 / math.pi))
    frac = th2 - nodes * math.pi
    th_sub = math.pi / 2 - math.atan(y_sub / S_end)   # where v/u = S cot(theta) = y_sub
    extra = 1 if frac > th_sub else 0
    count = nodes + extra
    # uncertainty of the angle: the two runs, and the tail beyond r_far (in y, times sin^2)
    spread = 3.0 * abs(th1 - th2) + 1e-12 * (1.0 + abs(th2))
    s2 = math.sin(th_sub) ** 2
    unc = spread + 10.0 * delta_tail * s2
    margin = min(abs(frac - th_sub), abs(frac - th_sub + math.pi), abs(frac - th_sub - math.pi))
    nodes1 = int(math.floor(th1 / math.pi))
    extra1 = 1 if th1 - nodes1 * math.pi > th_sub else 0
    certain = margin > 10.0 * unc and (nodes1 + extra1) == count
    note = f"zero-energy count {count} (angle margin {margin:.2e}, uncertainty {unc:.2e}, r_far {r_far:.3g})"
    return count, certain, note


# --------------------------------------------------------------------------- #
# Driver
# --------------------------------------------------------------------------- #

def solve_channel(V: Callable, **kwargs) -> RefChannel:
    """Bound levels of one partial wave; see :func:`_solve_channel` for the arguments."""
    with single_threaded_blas():
        return _solve_channel(V, **kwargs)


def _solve_channel(V: Callable, *, mass: float = 1.0, l: int = 0, dimension: int = 3,
                   inverse_square: float = 0.0, breakpoints: Sequence[float] = (),
                   v_inf: float = 0.0, count: int | None = None, scale: float = 1.0,
                   max_box: float | None = None) -> RefChannel:
    """Bound levels of one partial wave.

    Parameters
    ----------
    V : callable
        The potential without its inverse-square part, on numpy arrays (it
        may contain -Z/r, steps, long-range tails).
    mass : float
        m in -u''/(2m).
    l, dimension : int
        Orbital angular momentum and space dimension (L = l + (d-3)/2).
    inverse_square : float
        c in c/r^2 (the whole inverse-square part of the potential).
    breakpoints : sequence of float
        Every radius where V or a low derivative jumps.
    v_inf : float
        lim V(r), r -> inf (math.inf when confining).
    count : int, optional
        How many of the lowest levels are wanted (all bound ones by default;
        required when infinitely many are bound).
    scale : float
        A typical length of the potential (where its features lie).
    max_box : float, optional
        The largest box tried (default 1e9 * scale).
    """
    t_start = time.perf_counter()
    ch = _Channel(V, mass, l, dimension, inverse_square, breakpoints, v_inf, scale)
    notes: list[str] = []
    R_max = max_box if max_box is not None else 1e9 * scale
    kind, info = _tail_kind(ch)
    K: int | None
    certain = True
    if kind == "finite":
        K, certain, note = _zero_energy_count(ch, info)
        notes.append(note)
    else:
        K = None
        if kind == "infinite":
            notes.append(f"infinitely many levels: {info}")
        else:
            certain = False
            notes.append(f"tail not classified ({kind}); no count")
        if count is None:
            raise ValueError("count is needed when the number of levels is not finite or not known")
    n_want = count if K is None else (K if count is None else min(count, K))

    def done(levels, R=0.0, dof=0):
        return RefChannel(K, certain, levels, ch.v_inf, notes, float(R), dof,
                          time.perf_counter() - t_start)

    if n_want == 0:
        return done([])
    confining = not math.isfinite(ch.v_inf)
    rr = _sample_grid(ch, 50.0 * scale)
    ve = ch.v_eff(rr)
    sel = rr > 1e-4 * scale
    v_min = float(np.min(ve[sel])) if np.any(sel) else float(ve.min())
    # E_top: the top of the energy window the mesh resolves; thr: what "below" means
    if confining:
        E_top = v_min + max(1.0, abs(v_min))
        thr = E_top
    else:
        E_top = thr = ch.v_inf
    R = _initial_box(ch, E_top)
    E_lo = min(v_min, E_top - 1e-300)
    by_value = K is not None and not confining
    spec = None
    mesh = None
    known: list[float] = []
    settled = True
    for attempt in range(60):
        mesh = _build_mesh(ch, E_lo, E_top, R, _THETA, _P_LO, known)
        spec = _spectral(ch, mesh, _P_HI, thr, None if by_value else n_want)
        E = spec.energies
        have = int(np.sum(E < thr))
        fresh = [float(e) for e in E[:n_want] if e < thr]
        if fresh and (len(fresh) != len(known) or max(abs(a - b) for a, b in zip(fresh, known))
                      > 1e-3 * (thr - E_lo)):
            # mesh again with the levels in the window (their tails)
            known = fresh
            if have >= n_want:
                continue
        known = fresh
        if have < n_want:
            if confining:
                E_top = thr = v_min + 2.0 * (E_top - v_min)
                R = _initial_box(ch, E_top)
                continue
            if R >= R_max:
                break
            R = min(4.0 * R, R_max)
            continue
        # the window: from just below the ground level to just above the top wanted level
        width = max(thr - E[0], 1e-300)
        new_lo = E[0] - 0.1 * width
        new_top = E_top
        if not by_value and not confining:
            new_top = E[n_want - 1] + 0.3 * (thr - E[n_want - 1])
        if (new_lo > E_lo + 0.05 * (E_top - E_lo) or new_lo < E_lo - 0.01 * (E_top - E_lo)
                or abs(new_top - E_top) > 0.05 * (E_top - E_lo)):
            E_lo, E_top = new_lo, new_top
            continue
        # the box: the wanted levels must not feel the wall
        if not confining:
            grow = 1.0
            for k in range(n_want):
                tgt = _box_target(spec, k, thr)
                if spec.box_error[k] > tgt:
                    kap = math.sqrt(2.0 * ch.m * max(thr - E[k], 1e-300))
                    need = math.log(spec.box_error[k] / tgt) / (2.0 * kap)
                    grow = max(grow, min((R + 1.5 * need + 2.0 / kap) / R, 8.0))
            if grow > 1.0 and R < R_max:
                R = min(R * max(grow, 1.25), R_max)
                continue
        break
    else:
        settled = False
        notes.append("window and box did not settle in 60 rounds")
    spec_lo = _spectral(ch, mesh, _P_LO, thr, None if by_value else n_want)
    levels: list[RefLevel] = []
    E = spec.energies
    for k in range(n_want):
        if k >= len(E) or E[k] >= thr:
            levels.append(RefLevel(k, None, math.inf, "bound by the count but not resolved in the largest box"))
            continue
        e = float(E[k])
        err = float(spec.floor[k] + spec.box_error[k])
        err += abs(float(spec_lo.energies[k]) - e) if k < len(spec_lo.energies) else math.inf
        status = "ok" if settled else "window and box did not settle"
        if not confining and spec.box_error[k] > spec.floor[k]:
            status = f"box too small (wall shift {spec.box_error[k]:.2e} at R = {R:.3g})"
        levels.append(RefLevel(k, e, err, status))
    if by_value and spec.n_below > K:
        certain = False
        notes.append(f"the box holds {spec.n_below} levels below V(inf) but the count is {K}")
    return done(levels, R, spec.dof)


def _box_target(spec: _Spectrum, k: int, thr: float) -> float:
    return max(1e-2 * spec.floor[k], 1e-300)


def _initial_box(ch: _Channel, E_hi: float) -> float:
    """Beyond the outer edge of the classically allowed region at E_hi, plus a decay length."""
    r = _sample_grid(ch, 1e4 * ch.scale)
    ve = ch.v_eff(r)
    allowed = np.nonzero(ve < E_hi)[0]
    r_out = r[allowed[-1]] if allowed.size else ch.scale
    if allowed.size and allowed[-1] == len(r) - 1:
        # a long-range attractive tail: start small, the box grows until the levels fit
        r_out = 10.0 * ch.scale
    r_out = max(r_out, ch.bps[-1] if ch.bps else 0.0, ch.scale)
    if not math.isfinite(ch.v_inf):
        # confining: out to where the top level has decayed by e^-60
        r2 = _sample_grid(ch, 1e6 * ch.scale)
        ve2 = ch.v_eff(r2)
        kap = np.sqrt(2.0 * ch.m * np.maximum(ve2 - E_hi, 0.0))
        sel = r2 >= r_out
        cum = np.concatenate([[0.0], np.cumsum(0.5 * (kap[sel][1:] + kap[sel][:-1]) * np.diff(r2[sel]))])
        hit = np.nonzero(cum > 60.0)[0]
        return float(r2[sel][hit[0]]) if hit.size else float(r2[-1])
    return float(2.0 * r_out)
