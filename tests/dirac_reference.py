"""An independent reference for Dirac levels: the first-order equations for (G, F) integrated directly.

Shares no code with radsolve's solvers: scipy's DOP853 (rtol 1e-13) integrates

    G' = -kappa G / r + (W - V + 2 m c^2) F / c,     F' = kappa F / r - (W - V) G / c

(atomic units, c = 1/alpha from scipy.constants, m = 1) outward from a small radius with the regular
power series of a potential finite at the origin, and inward from where the level has decayed; the
energy is the root of the Wronskian-type mismatch G_out F_in - F_out G_in at the matching radius,
found by Brent's method inside a bracket given by the caller, with the node count of G checked.
"""

from __future__ import annotations

import math

import numpy as np
from scipy.constants import fine_structure
from scipy.integrate import solve_ivp
from scipy.optimize import brentq

C = 1.0 / fine_structure
MC2 = C * C


def _rhs(V, kappa, W):
    def f(r, y):
        g, h = y
        v = V(r)
        return [-kappa * g / r + (W - v + 2.0 * MC2) * h / C, kappa * h / r - (W - v) * g / C]
    return f


def _pieces(a, b, cuts):
    pts = [a] + sorted(c for c in cuts if min(a, b) < c < max(a, b)) + [b]
    if a > b:
        pts = [a] + sorted((c for c in cuts if b < c < a), reverse=True) + [b]
    return list(zip(pts[:-1], pts[1:]))


def _integrate(V, kappa, W, y0, a, b, cuts):
    y = np.array(y0, dtype=float)
    signs = []
    for lo, hi in _pieces(a, b, cuts):
        sol = solve_ivp(_rhs(V, kappa, W), (lo, hi), y, method="DOP853", rtol=1e-13, atol=1e-300,
                        dense_output=False, max_step=abs(hi - lo) / 200.0)
        y = sol.y[:, -1]
        signs.append(sol.y[0])
        norm = np.max(np.abs(y))
        y = y / norm
    g = np.concatenate(signs)
    return y, int(np.sum(np.signbit(g[1:]) != np.signbit(g[:-1])))


def level(V, V0, kappa, nodes, bracket, r_match, r0=1e-9, cuts=()):
    """W = E - mc^2 (hartree) of the level (kappa, nodes) of a potential V finite at r = 0 (V(0) = V0)."""

    def start_out(W):
        if kappa < 0:
            p = -kappa
            return [r0**p, -(W - V0) / (C * (1 - 2 * kappa)) * r0 ** (p + 1)]
        return [(W - V0 + 2 * MC2) / (C * (2 * kappa + 1)) * r0 ** (kappa + 1), r0**kappa]

    def parts(W):
        k = math.sqrt(-W * (W + 2 * MC2)) / C
        r_max = max(3.0 * r_match, r_match + 40.0 / k)
        yo, no = _integrate(V, kappa, W, start_out(W), r0, r_match, cuts)
        yi, ni = _integrate(V, kappa, W, [1.0, W / (C * k)], r_max, r_match, cuts)
        return yo, yi, no + ni

    def mismatch(W):
        yo, yi, _ = parts(W)
        return yo[0] * yi[1] - yo[1] * yi[0]

    return _root_with_nodes(parts, mismatch, bracket, nodes, "of G ")


def klein_gordon_level(V, V0, l, nodes, bracket, r_match, r0=1e-9, cuts=()):
    """W = E - mc^2 (hartree) of the Klein-Gordon level (l, nodes) of V finite at r = 0 (V(0) = V0).

    u'' = [l(l+1)/r^2 - ((W - V)^2 + 2 m c^2 (W - V)) / c^2] u, integrated with DOP853 outward from
    u ~ r^(l+1) and inward from where the level has decayed; Brent's method on the mismatch of u'/u.
    """

    def rhs(W):
        def f(r, y):
            d = W - V(r)
            return [y[1], (l * (l + 1) / r**2 - (d * d + 2.0 * MC2 * d) / (C * C)) * y[0]]
        return f

    def run(W, y0, a, b):
        y = np.array(y0, dtype=float)
        g = []
        for lo, hi in _pieces(a, b, cuts):
            sol = solve_ivp(rhs(W), (lo, hi), y, method="DOP853", rtol=1e-13, atol=1e-300,
                            max_step=abs(hi - lo) / 200.0)
            y = sol.y[:, -1] / np.max(np.abs(sol.y[:, -1]))
            g.append(sol.y[0])
        g = np.concatenate(g)
        return y, int(np.sum(np.signbit(g[1:]) != np.signbit(g[:-1])))

    def parts(W):
        k = math.sqrt(-W * (W + 2 * MC2)) / C
        r_max = max(3.0 * r_match, r_match + 40.0 / k)
        yo, no = run(W, [r0 ** (l + 1), (l + 1) * r0**l], r0, r_match)
        yi, ni = run(W, [1.0, -k], r_max, r_match)
        return yo, yi, no + ni

    def mismatch(W):
        yo, yi, _ = parts(W)
        return yo[1] * yi[0] - yi[1] * yo[0]

    return _root_with_nodes(parts, mismatch, bracket, nodes, "")


def _root_with_nodes(parts, mismatch, bracket, nodes: int, of: str) -> float:
    """Brent's root of the mismatch in ``bracket``, checked to be the level with ``nodes`` nodes."""
    W = brentq(mismatch, *bracket, xtol=1e-300, rtol=4e-15, maxiter=200)
    found = parts(W)[2]
    if found != nodes:
        raise AssertionError(f"reference: {found} nodes {of}at W = {W}, expected {nodes}")
    return W
