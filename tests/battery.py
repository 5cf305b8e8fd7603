"""The property battery: random potentials, radsolve against the independent reference.

``random_case(rng, kind)`` draws one potential of a class (see ``KINDS``) as a
plain description (:class:`Case`); ``make_case(seed, index)`` draws the case
with that seed index, its kind fixed by the index, so that any failing case
can be rebuilt from two numbers.  ``to_radsolve(case)`` turns it into a
radsolve potential through ``radsolve.potentials.make_family``;
``reference(case)`` solves every channel with tests/reference_solver.py,
which shares no code with radsolve; ``compare(case)`` runs both and returns a
record of what agreed and what did not.

The potentials are invented for the battery (no physical system is meant).
What is checked, per partial wave:

* every level the reference proves bound (up to ``count``) is returned, unless
  radsolve says the count is uncertain (MISSED otherwise);
* nothing is returned that the reference proves unbound, and labels follow
  n = nodes + l + 1 (EXTRA otherwise);
* a count radsolve calls certain agrees with a count the reference calls
  certain (BAD_COUNT otherwise);
* every converged level lies within 10 times its own error estimate of the
  reference (HONESTY otherwise), when the reference's own error is at most a
  tenth of that estimate (else the level is "reference inconclusive");
* radsolve raises nothing on this valid input (EXCEPTION otherwise).

The factor 10 on the estimate is common practice for error estimates that
are estimates, not bounds (the issue that asked for the battery fixes it).
"""

from __future__ import annotations

import math
import time
import traceback
from dataclasses import dataclass, field
from typing import Callable

import numpy as np
from scipy import special

from reference_solver import solve_channel, single_threaded_blas

KINDS = ("smooth", "core", "tail", "double", "barrier", "step", "scale", "semilocal", "spin_orbit")

#: Spectroscopic letters (j skipped): standard notation.
LETTERS = "spdfghiklmnoqrtuvwxyz"

#: A converged level must lie within this many error estimates of the reference.
HONESTY_FACTOR = 10.0
#: The reference must be this much better than the estimate it checks.
REFERENCE_MARGIN = 0.1


# --------------------------------------------------------------------------- #
# Cases
# --------------------------------------------------------------------------- #

@dataclass
class Case:
    """One random potential and the solve asked of it.

    The potential of partial wave (l, j) is
    ``inverse_square / r**2 + rest(l)(r) + spin_orbit(r) * <l.s>``;
    ``rest(l)`` is ``V`` unless ``V_l`` has an entry for l.
    """

    kind: str
    index: int
    description: str
    V: Callable                       # central V without its inverse-square part
    inverse_square: float = 0.0
    V_l: dict = field(default_factory=dict)   # l -> callable, the semilocal channels
    so: Callable | None = None        # radial factor of the spin-orbit term
    breakpoints: list = field(default_factory=list)
    declare_breakpoints: bool = False
    hooks: tuple = ()                 # which of "small_r", "v_infinity" radsolve is given
    small_r: tuple | None = None      # (c, p): V ~ c r^p at the origin
    mass: float = 1.0
    dimension: int = 3
    ls: list = field(default_factory=lambda: [0])
    tol: float = 1e-8
    method: str = "fd"
    count: int = 3
    scale: float = 1.0
    coulomb: float = 0.0              # Z of a -Z/r part (for the small-r law)

    def rest(self, l: int) -> Callable:
        return self.V_l.get(l, self.V)

    def channels(self):
        """(l, j) of every partial wave solved (j None without spin-orbit)."""
        out = []
        for l in self.ls:
            if self.so is None:
                out.append((l, None))
            else:
                out.extend((l, j) for j in ((0.5,) if l == 0 else (l - 0.5, l + 0.5)))
        return out

    def channel_rest(self, l: int, j: float | None) -> Callable:
        base = self.rest(l)
        if j is None or self.so is None:
            return base
        ls_ = 0.5 * (j * (j + 1) - l * (l + 1) - 0.75)
        so = self.so
        return lambda r: base(r) + ls_ * so(r)


def loguniform(rng, lo, hi):
    return float(math.exp(rng.uniform(math.log(lo), math.log(hi))))


def _shape(rng):
    """A well shape f(x) with f(0) ~ 1 that vanishes far out, and its name."""
    name = rng.choice(["gauss", "exp", "ws", "sech2"])
    if name == "gauss":
        return name, lambda x: np.exp(-x * x)
    if name == "exp":
        return name, lambda x: np.exp(-x)
    if name == "ws":
        a = rng.uniform(0.05, 0.3)
        return f"ws(a={a:.3g})", lambda x: special.expit(-(x - 1.0) / a)
    # sech^2 written so that nothing overflows far out (x >= 0)
    return name, lambda x: 4.0 * np.exp(-2.0 * x) / (1.0 + np.exp(-2.0 * x)) ** 2


def _well(rng, m, g_lo=0.3, g_hi=3000.0):
    """-D f(r/w) with strength 2 m D w^2 drawn log-uniformly (0 to ~30 s levels)."""
    name, f = _shape(rng)
    w = loguniform(rng, 0.5, 3.0)
    g = loguniform(rng, g_lo, g_hi)
    D = g / (2.0 * m * w * w)
    return f"-{D:.4g} {name}(r/{w:.3g})", (lambda r: -D * f(r / w)), w, D


def _pick_ls(rng, g_est, dimension):
    lmax = int(min(8, max(1, math.sqrt(g_est) / 2)))
    n = int(rng.integers(1, 4))
    ls = sorted({int(x) for x in rng.integers(0, lmax + 1, size=n)})
    return ls


def _wkb_levels(V, c, m, l, dimension, scale):
    """A rough WKB number of levels (for choosing ``count`` only, never for a check)."""
    r = np.geomspace(1e-4 * scale, 200.0 * scale, 4000)
    Lc = l + (dimension - 3) / 2.0
    veff = V(r) + c / r**2 + (Lc + 0.5) ** 2 / (2.0 * m * r**2)
    k = np.sqrt(2.0 * m * np.maximum(-veff, 0.0))
    return float(np.sum(0.5 * (k[1:] + k[:-1]) * np.diff(r)) / math.pi)


def _finish(rng, case: Case, infinite: bool = False) -> Case:
    """Common draws: tol, method, count, hooks."""
    case.tol = loguniform(rng, 1e-10, 1e-6)
    case.method = str(rng.choice(["fd", "numerov", "both"]))
    n_est = max(_wkb_levels(case.channel_rest(l, j), case.inverse_square, case.mass, l, case.dimension,
                            case.scale) for l, j in case.channels())
    top = max(1, int(round(3 * n_est)))
    if infinite:
        top = min(max(top, 4), 12)
    case.count = int(rng.integers(1, min(top, 60) + 1))
    hooks = []
    if rng.random() < 0.5:
        hooks.append("v_infinity")
    if rng.random() < 0.5 and case.small_r is not None:
        hooks.append("small_r")
    case.hooks = tuple(hooks)
    return case


def _small_r_law(V, c, Z):
    if c != 0.0:
        return (c, -2.0)
    if Z != 0.0:
        return (-Z, -1.0)
    return (float(V(np.array([1e-12]))[0]), 0.0)


def _core_coefficient(rng, m, ls, dimension, attractive):
    L0 = min(ls) + (dimension - 3) / 2.0
    limit = (L0 + 0.5) ** 2
    if attractive and limit > 0:
        return -rng.uniform(0.05, 0.9) * limit / (2.0 * m)
    return rng.uniform(0.05, 6.0) / (2.0 * m)


def random_case(rng, kind: str, index: int = -1) -> Case:
    """One random case of class ``kind`` (one of ``KINDS``)."""
    if kind not in KINDS:
        raise ValueError(f"kind must be one of {', '.join(KINDS)} (got {kind!r})")
    dimension = 2 if (kind not in ("spin_orbit",) and rng.random() < 0.15) else 3
    m = float(rng.uniform(0.5, 2.0))
    if kind == "scale":
        base_kind = str(rng.choice([k for k in KINDS if k != "scale"]))
        base = random_case(rng, base_kind, index)
        return _rescaled(rng, base, index)
    if kind == "smooth":
        text, V, w, D = _well(rng, m)
        if rng.random() < 0.3:
            t2, V2, w2, _ = _well(rng, m, 0.3, 300.0)
            text, V = text + " " + t2, (lambda r, V=V, V2=V2: V(r) + V2(r))
            w = max(w, w2)
        case = Case(kind, index, text, V, mass=m, dimension=dimension, scale=w)
        case.ls = _pick_ls(rng, 2 * m * D * w * w, dimension)
        case.small_r = _small_r_law(V, 0.0, 0.0)
        return _finish(rng, case)
    if kind == "core":
        text, V, w, D = _well(rng, m, 1.0, 3000.0)
        ls = _pick_ls(rng, 2 * m * D * w * w, dimension)
        c = _core_coefficient(rng, m, ls, dimension, rng.random() < 0.5)
        case = Case(kind, index, f"{c:+.4g}/r^2 {text}", V, inverse_square=c, mass=m,
                    dimension=dimension, ls=ls, scale=w)
        case.small_r = _small_r_law(V, c, 0.0)
        return _finish(rng, case)
    if kind == "tail":
        text, Vw, w, D = _well(rng, m, 0.3, 1000.0)
        which = str(rng.choice(["r4", "r6", "coulomb"]))
        Z = 0.0
        if which == "r4":
            b = w * rng.uniform(0.5, 2.0)
            C = loguniform(rng, 0.1, 300.0) * b * b / (2.0 * m)
            V = lambda r, Vw=Vw: Vw(r) - C / (r * r + b * b) ** 2
            tail = f"-{C:.4g}/(r^2+{b:.3g}^2)^2"
        elif which == "r6":
            b = w * rng.uniform(0.5, 2.0)
            C = loguniform(rng, 0.1, 300.0) * b**4 / (2.0 * m)
            V = lambda r, Vw=Vw: Vw(r) - C / (r * r + b * b) ** 3
            tail = f"-{C:.4g}/(r^2+{b:.3g}^2)^3"
        else:
            Z = loguniform(rng, 0.05, 3.0) / (m * w)
            V = lambda r, Vw=Vw: Vw(r) - Z / r
            tail = f"-{Z:.4g}/r"
        case = Case(kind, index, f"{text} {tail}", V, mass=m, dimension=dimension, scale=w, coulomb=Z)
        case.ls = _pick_ls(rng, 2 * m * D * w * w, dimension)
        case.small_r = _small_r_law(V, 0.0, Z)
        return _finish(rng, case, infinite=Z > 0)
    if kind == "double":
        w1 = loguniform(rng, 0.3, 1.5)
        r1 = rng.uniform(0.0, 2.0)
        gap = w1 * rng.uniform(2.0, 6.0)
        r2 = r1 + gap
        g1 = loguniform(rng, 5.0, 1500.0)
        D1 = g1 / (2 * m * w1 * w1)
        if rng.random() < 0.5:   # twins: near-degenerate doublets
            w2, D2 = w1, D1 * (1 + rng.uniform(-1e-3, 1e-3))
        else:
            w2 = loguniform(rng, 0.3, 1.5)
            D2 = loguniform(rng, 5.0, 1500.0) / (2 * m * w2 * w2)
        V = lambda r: -D1 * np.exp(-((r - r1) / w1) ** 2) - D2 * np.exp(-((r - r2) / w2) ** 2)
        case = Case(kind, index, f"-{D1:.4g} g((r-{r1:.3g})/{w1:.3g}) -{D2:.4g} g((r-{r2:.3g})/{w2:.3g})",
                    V, mass=m, dimension=dimension, scale=r2 + w2)
        case.ls = _pick_ls(rng, max(g1, 2 * m * D2 * w2 * w2), dimension)
        case.small_r = _small_r_law(V, 0.0, 0.0)
        return _finish(rng, case)
    if kind == "barrier":
        text, Vw, w, D = _well(rng, m, 3.0, 3000.0)
        rb = w * rng.uniform(1.2, 3.0)
        wb = w * rng.uniform(0.1, 0.6)
        B = D * rng.uniform(0.2, 3.0)
        V = lambda r, Vw=Vw: Vw(r) + B * np.exp(-((r - rb) / wb) ** 2)
        case = Case(kind, index, f"{text} +{B:.4g} g((r-{rb:.3g})/{wb:.3g})", V, mass=m,
                    dimension=dimension, scale=rb + wb)
        case.ls = _pick_ls(rng, 2 * m * D * w * w, dimension)
        case.small_r = _small_r_law(V, 0.0, 0.0)
        return _finish(rng, case)
    if kind == "step":
        return _step_case(rng, m, dimension, index)
    if kind == "semilocal":
        text, Vc, w, D = _well(rng, m, 1.0, 1000.0)
        Z = loguniform(rng, 0.1, 2.0) / (m * w) if rng.random() < 0.3 else 0.0
        V = (lambda r, Vc=Vc: Vc(r) - Z / r) if Z else Vc
        ls = sorted({int(x) for x in rng.integers(0, 5, size=int(rng.integers(2, 4)))})
        V_l = {}
        parts = [text + (f" -{Z:.4g}/r" if Z else "")]
        for l in ls:
            if rng.random() < 0.7:
                A = rng.uniform(-1.5, 1.5) * D
                wl = w * rng.uniform(0.3, 1.2)
                V_l[l] = (lambda r, A=A, wl=wl, V=V: V(r) + A * np.exp(-(r / wl) ** 2))
                parts.append(f"l={l}: {A:+.4g} g(r/{wl:.3g})")
        case = Case(kind, index, "; ".join(parts), V, V_l=V_l, mass=m, dimension=dimension, ls=ls,
                    scale=w, coulomb=Z)
        case.small_r = _small_r_law(V, 0.0, Z)
        return _finish(rng, case, infinite=Z > 0)
    # spin_orbit
    text, V, w, D = _well(rng, m, 5.0, 3000.0)
    if rng.random() < 0.5:
        s = D * rng.uniform(0.01, 0.2)
        ws_ = w * rng.uniform(0.5, 1.5)
        so = lambda r: -s * np.exp(-(r / ws_) ** 2)
        so_text = f"-{s:.4g} g(r/{ws_:.3g})"
    else:
        a = w * rng.uniform(0.1, 0.25)
        Rs = w * rng.uniform(1.0, 2.0)
        s = D * w * w * rng.uniform(0.005, 0.05)

        def so(r, a=a, Rs=Rs, s=s):
            # the Thomas form (1/r) d/dr of a Woods-Saxon profile; its 1/r growth at the
            # origin carries the small factor exp(-Rs/a)
            x = np.exp(-np.abs(r - Rs) / a)
            return s * (-x / (a * (1.0 + x) ** 2)) / r
        so_text = f"{s:.4g} (1/r) d/dr ws(r; {Rs:.3g}, {a:.3g})"
    ls = sorted({int(x) for x in rng.integers(0, 6, size=int(rng.integers(1, 4)))})
    case = Case(kind, index, f"{text}; so: {so_text}", V, so=so, mass=m, dimension=3, ls=ls, scale=w)
    case.small_r = _small_r_law(V, 0.0, 0.0)
    return _finish(rng, case)


def _step_case(rng, m, dimension, index):
    k = int(rng.integers(1, 4))
    radii = np.sort(rng.uniform(0.3, 4.0, size=k))
    radii = list(np.maximum.accumulate(radii + 0.05 * np.arange(k)))
    g = loguniform(rng, 1.0, 2000.0)
    D = g / (2.0 * m * radii[-1] ** 2)
    style = str(rng.choice(["constant", "linear", "mixed"]))
    vals = -D * np.sort(rng.uniform(0.1, 1.0, size=k))[::-1] * rng.choice([1.0, -0.3], size=k, p=[0.85, 0.15])
    vals[0] = -D
    edges = [0.0] + radii
    pieces = []
    for i in range(k):
        a, b = edges[i], edges[i + 1]
        if style == "constant" or (style == "mixed" and rng.random() < 0.5):
            pieces.append((a, b, float(vals[i]), 0.0))
        else:
            # linear from vals[i] to the next value: a kink, no jump, at each radius
            nxt = float(vals[i + 1]) if i + 1 < k else 0.0
            pieces.append((a, b, float(vals[i]), (nxt - float(vals[i])) / (b - a)))

    def V(r, pieces=tuple(pieces)):
        out = np.zeros_like(np.asarray(r, dtype=float))
        for a, b, v0, s in pieces:
            sel = (r >= a) & (r < b)
            out = np.where(sel, v0 + s * (r - a), out)
        return out

    text = " | ".join(f"[{a:.3g},{b:.3g}): {v0:.4g}{'' if s == 0 else f'{s:+.4g}(r-{a:.3g})'}"
                      for a, b, v0, s in pieces)
    declared = bool(rng.random() < 0.5)
    case = Case("step", index, text + (" (breakpoints declared)" if declared else " (breakpoints not declared)"),
                V, breakpoints=[float(x) for x in radii], declare_breakpoints=declared, mass=m,
                dimension=dimension, scale=radii[-1])
    case.ls = _pick_ls(rng, g, dimension)
    case.small_r = _small_r_law(V, 0.0, 0.0)
    return _finish(rng, case)


def _rescaled(rng, base: Case, index: int) -> Case:
    """The same physics in other units: r -> f r, m -> m', E -> E (m / m') / f^2."""
    f = 10.0 ** rng.uniform(-3.0, 3.0)
    m_new = 10.0 ** rng.uniform(-1.0, math.log10(2000.0))
    e = (base.mass / m_new) / f**2

    def wrap(fn):
        return None if fn is None else (lambda r, fn=fn: e * fn(np.asarray(r) / f))

    case = Case("scale", index, f"[{base.kind} x length {f:.3g}, mass {m_new:.4g}] {base.description}",
                wrap(base.V), inverse_square=base.inverse_square * base.mass / m_new,
                V_l={l: wrap(v) for l, v in base.V_l.items()}, so=wrap(base.so),
                breakpoints=[b * f for b in base.breakpoints], declare_breakpoints=base.declare_breakpoints,
                hooks=base.hooks, mass=m_new, dimension=base.dimension, ls=list(base.ls), tol=base.tol,
                method=base.method, count=base.count, scale=base.scale * f, coulomb=base.coulomb * e * f)
    if base.small_r is not None:
        c, p = base.small_r
        case.small_r = (c * e * f ** (-p), p)
    return case


def make_case(seed: int, index: int) -> Case:
    """The case with this seed index; its kind is ``KINDS[index % len(KINDS)]``."""
    kind = KINDS[index % len(KINDS)]
    rng = np.random.default_rng([int(seed), int(index)])
    return random_case(rng, kind, index)


# --------------------------------------------------------------------------- #
# The two sides
# --------------------------------------------------------------------------- #

def to_radsolve(case: Case):
    """The case as a bound radsolve Potential (hooks only where the case gives them)."""
    from radsolve.potentials import make_family

    c = case.inverse_square

    def V(r):
        r = np.asarray(r, dtype=float)
        out = case.V(r)
        return out + c / (r * r) if c else out

    hooks = {}
    if case.declare_breakpoints and case.breakpoints:
        bps = list(case.breakpoints)
        hooks["breakpoints"] = lambda: list(bps)
    if case.V_l:
        def V_l(r, l):
            r = np.asarray(r, dtype=float)
            out = case.rest(int(l))(r)
            return out + c / (r * r) if c else out
        hooks["V_l"] = V_l
    if case.so is not None:
        hooks["spin_orbit"] = lambda r: case.so(np.asarray(r, dtype=float))
    if "v_infinity" in case.hooks:
        hooks["v_infinity"] = lambda: 0.0
    if "small_r" in case.hooks and case.small_r is not None:
        law = tuple(float(x) for x in case.small_r)
        hooks["small_r"] = lambda: law
    family = make_family(f"battery_{case.kind}_{case.index}", V, {}, description=case.description, **hooks)
    return family.bind()


def reference(case: Case) -> dict:
    """The reference's answer for every channel: {(l, j): RefChannel}."""
    out = {}
    for l, j in case.channels():
        out[(l, j)] = solve_channel(case.channel_rest(l, j), mass=case.mass, l=l, dimension=case.dimension,
                                    inverse_square=case.inverse_square, breakpoints=case.breakpoints,
                                    v_inf=0.0, count=case.count, scale=case.scale)
    return out


def expected_label(nodes: int, l: int, j: float | None) -> str:
    letter = LETTERS[l] if l < len(LETTERS) else f"[l={l}]"
    text = f"{nodes + l + 1}{letter}"
    return text if j is None else text + f"{int(round(2 * j))}/2"


def _certificate(res, l, j):
    certs = getattr(res, "certificates", None) or {}
    key = l if j is None else f"l={l},j={int(round(2 * j))}/2"
    return certs.get(key)


def _status_text(lev) -> str:
    st = getattr(lev, "status", None)
    if st is None:
        return "converged" if lev.converged else "not converged"
    return str(getattr(st, "value", st))


@dataclass
class Record:
    """What one case gave.  ``failures`` lists each problem in one short line."""

    kind: str
    index: int
    description: str
    channels: int = 0
    expected: int = 0
    returned: int = 0
    compared: int = 0
    missed: int = 0
    extra: int = 0
    bad_count: int = 0
    honesty: int = 0
    inconclusive: int = 0
    count_inconclusive: int = 0
    flagged_uncertain: int = 0
    unconverged: int = 0
    exception: str = ""
    reference_error: str = ""
    worst_ratio: float = 0.0
    t_reference: float = 0.0
    t_radsolve: float = 0.0
    failures: list = field(default_factory=list)

    @property
    def failed(self) -> bool:
        return bool(self.missed or self.extra or self.bad_count or self.honesty or self.exception)


def compare(case: Case) -> Record:
    """Run the reference and radsolve on ``case`` and compare them (see the module docstring)."""
    import radsolve

    rec = Record(case.kind, case.index, case.description)
    t0 = time.perf_counter()
    try:
        with single_threaded_blas():
            ref = reference(case)
    except Exception as exc:   # the reference's own trouble: not radsolve's, but shown
        rec.reference_error = f"{type(exc).__name__}: {exc}"
        rec.t_reference = time.perf_counter() - t0
        return rec
    rec.t_reference = time.perf_counter() - t0
    t0 = time.perf_counter()
    try:
        pot = to_radsolve(case)
        res = radsolve.solve(pot, l=list(case.ls), count=case.count, mass=case.mass, tol=case.tol,
                             method=case.method, spin_orbit=case.so is not None, dimension=case.dimension)
    except Exception as exc:
        rec.t_radsolve = time.perf_counter() - t0
        rec.exception = f"{type(exc).__name__}: {exc}"
        tb = traceback.extract_tb(exc.__traceback__)
        if tb:
            rec.exception += f" (at {tb[-1].filename.split('/')[-1]}:{tb[-1].lineno})"
        rec.failures.append(f"exception: {rec.exception}")
        return rec
    rec.t_radsolve = time.perf_counter() - t0

    by_channel: dict = {}
    for lev in res.levels:
        by_channel.setdefault((lev.l, lev.j), []).append(lev)
    for key in by_channel:
        if key not in ref:
            for lev in by_channel[key]:
                rec.extra += 1
                rec.failures.append(f"extra: {lev.label} in a partial wave not asked for")
    for (l, j), rch in ref.items():
        rec.channels += 1
        name = expected_label(0, l, j)[1:] if j is None else f"l={l},j={int(round(2 * j))}/2"
        levs = by_channel.get((l, j), [])
        rec.returned += len(levs)
        cert = _certificate(res, l, j)
        rad_uncertain = cert is not None and not getattr(cert, "certain", True)
        if cert is None:
            rad_uncertain = False
        # what the reference requires and allows
        if rch.count is None:
            k_low = k_high = math.inf
            if not rch.count_certain:
                k_low = 0
                rec.count_inconclusive += 1
        elif rch.count_certain:
            k_low = k_high = rch.count
        else:
            k_low, k_high = max(rch.count - 1, 0), rch.count + 1
            rec.count_inconclusive += 1
        required = int(min(case.count, k_low))
        allowed = min(case.count, k_high)
        rec.expected += required
        # the count radsolve calls certain against the one the reference calls certain
        if cert is not None and getattr(cert, "certain", False) and rch.count_certain:
            rc = getattr(cert, "count", "absent")
            if rc != rch.count:
                rec.bad_count += 1
                rec.failures.append(f"bad count {name}: radsolve says {rc} for certain, reference "
                                    f"{'infinitely many' if rch.count is None else rch.count}")
        seen = set()
        for lev in levs:
            if lev.nodes in seen:
                rec.extra += 1
                rec.failures.append(f"extra: {lev.label} returned twice")
            seen.add(lev.nodes)
            want = expected_label(lev.nodes, l, j)
            if lev.label != want:
                rec.extra += 1
                rec.failures.append(f"extra: label {lev.label} for nodes={lev.nodes}, expected {want}")
            if lev.nodes >= allowed:
                rec.extra += 1
                rec.failures.append(f"extra: {lev.label} E={lev.energy:.6g} not bound per the reference "
                                    f"(count {rch.count}, asked {case.count})")
                continue
            if not lev.converged:
                rec.unconverged += 1
                continue
            if lev.nodes >= len(rch.levels):
                rec.inconclusive += 1
                continue
            rl = rch.levels[lev.nodes]
            est = float(lev.error_estimate)
            if rl.energy is None or not rl.ok or not (rl.error <= REFERENCE_MARGIN * est):
                rec.inconclusive += 1
                continue
            rec.compared += 1
            diff = abs(float(lev.energy) - rl.energy)
            ratio = max(diff - rl.error, 0.0) / est
            rec.worst_ratio = max(rec.worst_ratio, ratio)
            if ratio > HONESTY_FACTOR:
                rec.honesty += 1
                rec.failures.append(f"honesty: {lev.label} E={lev.energy:.15g} ref={rl.energy:.15g} "
                                    f"|dE|={diff:.3g} estimate={est:.3g} ratio={ratio:.3g} "
                                    f"({_status_text(lev)})")
        for k in range(required):
            if k not in seen:
                if rad_uncertain:
                    rec.flagged_uncertain += 1
                else:
                    rec.missed += 1
                    e = rch.levels[k].energy if k < len(rch.levels) else None
                    rec.failures.append(f"missed: {expected_label(k, l, j)} (reference E="
                                        f"{'?' if e is None else f'{e:.10g}'}, count "
                                        f"{'inf' if rch.count is None else rch.count})")
    if rec.failures:
        rec.failures.append(f"radsolve message: {res.message}")
    return rec


# --------------------------------------------------------------------------- #
# Summaries
# --------------------------------------------------------------------------- #

COLUMNS = ("cases", "levels", "compared", "missed", "extra", "bad_count", "honesty", "worst",
           "inconcl", "cnt_unc", "flagged", "unconv", "exc", "ref_err", "t_ref", "t_rad")


def summarize(records) -> str:
    """A table per kind and a total line."""
    rows = {}
    for rec in records:
        for key in (rec.kind, "TOTAL"):
            row = rows.setdefault(key, dict.fromkeys(COLUMNS, 0))
            row["cases"] += 1
            row["levels"] += rec.expected
            row["compared"] += rec.compared
            row["missed"] += rec.missed
            row["extra"] += rec.extra
            row["bad_count"] += rec.bad_count
            row["honesty"] += rec.honesty
            row["worst"] = max(row["worst"], rec.worst_ratio)
            row["inconcl"] += rec.inconclusive
            row["cnt_unc"] += rec.count_inconclusive
            row["flagged"] += rec.flagged_uncertain
            row["unconv"] += rec.unconverged
            row["exc"] += int(bool(rec.exception))
            row["ref_err"] += int(bool(rec.reference_error))
            row["t_ref"] += rec.t_reference
            row["t_rad"] += rec.t_radsolve
    order = [k for k in KINDS if k in rows] + ["TOTAL"]
    head = f"{'kind':<11}" + "".join(f"{c:>10}" for c in COLUMNS)
    lines = [head]
    for k in order:
        row = rows[k]
        cells = []
        for c in COLUMNS:
            v = row[c]
            cells.append(f"{v:>10.3g}" if c == "worst" else f"{v:>10.1f}" if c.startswith("t_")
                         else f"{v:>10d}")
        lines.append(f"{k:<11}" + "".join(cells))
    return "\n".join(lines)


def failure_lines(records, limit_per_case: int = 4) -> list[str]:
    out = []
    for rec in records:
        if rec.failed or rec.reference_error:
            problems = rec.failures[:limit_per_case]
            if rec.reference_error:
                problems = [f"reference error: {rec.reference_error}"] + problems
            more = len(rec.failures) - limit_per_case
            out.append(f"[{rec.index}] {rec.kind}: {rec.description}")
            out.extend(f"      {p}" for p in problems)
            if more > 0:
                out.append(f"      ... and {more} more")
    return out
