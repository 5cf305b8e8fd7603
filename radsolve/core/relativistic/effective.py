"""A relativistic channel as one second-order equation with an energy-dependent potential.

Notation: W = E - mc^2 (the energy radsolve reports), M = mu c^2 the rest
energy, hbar c in the system's units (1/alpha in atomic units), m = M/(hbar c)^2
the kinetic mass of the Schrodinger solvers, V the time component of a vector
potential, S an optional Lorentz scalar, B = W - V - S, A = B + 2S + 2M.

Klein-Gordon (spin 0): (E - V)^2 = (hbar c k)^2 + (M + S)^2 gives exactly

    -1/(2m) u'' + [l(l+1)/(2m r^2) + V_eff] u = W u,
    V_eff = V + S - B (B + 2S) / (2M).

Dirac, kappa = -(l+1) for j = l + 1/2 and kappa = l for j = l - 1/2, with the
large and small components G, F:

    hbar c G' = -kappa hbar c G / r + A F,     hbar c F' = kappa hbar c F / r - B G.

Eliminating F and writing G = sqrt(A) u removes the first derivative; u obeys
the Schrodinger form above with kappa(kappa+1) = l(l+1) and

    V_eff = V + S - B (B + 2S) / (2M) + (hbar c)^2 / (2M) [kappa a / r + 3/4 a^2 - b / 2],
    a = A'/A = -P'/A,  b = A''/A = -P''/A,  P = V - S.

No approximation is made: where A > 0 (no barrier above 2mc^2) the two
problems have the same bound energies, and since sqrt(A) > 0, u has exactly
the nodes of G, so the node count labels the Dirac level (n = nodes + l + 1).
The Schrodinger form has no spurious solutions, which is why this
reformulation is used rather than a matrix of the first-order system.

P' and P'' are taken by five-point differences at a relative step
``DERIVATIVE_STEP`` of r, one-sided next to a breakpoint (so a kink such as
the edge of a uniformly charged sphere is differentiated on each side).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any, Callable

import numpy as np

#: Relative step of the five-point derivatives of V - S: balances the
#: truncation error (~8 h^4 for 1/r) against rounding (~eps / h^2) in P''.
DERIVATIVE_STEP = 2e-3
#: Points closer than this many steps to a breakpoint use one-sided stencils.
_NEAR = 2.5


@dataclass(frozen=True)
class RelativisticChannel:
    """One partial wave of the Dirac (``kappa`` set) or Klein-Gordon equation.

    Attributes
    ----------
    equation : str
        ``"dirac"`` or ``"klein-gordon"``.
    l, j, kappa : int, float or None, int or None
    rest : float
        M = mu c^2 in the system's energy unit.
    hbar_c : float
        hbar c in the system's energy times length unit.
    vector, scalar : callable
        V(r) and S(r) (scalar None when there is none), finite arrays.
    threshold : float
        W at the continuum threshold: lim V(r) (0 for a confining scalar).
    confining : bool
        True when the scalar grows without bound: every level is bound, energies are measured from 0.
    breakpoints : tuple of float
        Radii where V or S is not smooth.
    """

    equation: str
    l: int
    j: float | None
    kappa: int | None
    rest: float
    hbar_c: float
    vector: Callable[[np.ndarray], np.ndarray]
    scalar: Callable[[np.ndarray], np.ndarray] | None
    threshold: float
    breakpoints: tuple[float, ...] = ()
    confining: bool = False

    @property
    def dirac(self) -> bool:
        return self.kappa is not None

    # ----------------------------------------------------------------- parts
    def parts(self, r: np.ndarray, side: int = 0, step: float | None = None) -> dict[str, np.ndarray]:
        """V, S and (Dirac) P', P'' at ``r``; ``side`` -1 / +1 forces one-sided derivatives everywhere.

        ``step`` is the relative step of the derivatives (default ``DERIVATIVE_STEP``); a larger one
        gives the comparison :meth:`derivative_error` is measured from.
        """
        r = np.asarray(r, dtype=float)
        v = np.asarray(self.vector(r), dtype=float)
        s = np.zeros_like(v) if self.scalar is None else np.asarray(self.scalar(r), dtype=float)
        out = {"V": v, "S": s}
        if self.dirac:
            delta = DERIVATIVE_STEP if step is None else step
            # Richardson in the step: the central formulas err by O(h^4), the one-sided P'' by O(h^3)
            d1, d2, one_sided = self._derivatives(r, side, delta, 2.0 * delta)
            e1, e2, _ = self._derivatives(r, side, 2.0 * delta, 2.0 * delta)
            out["dP"] = (16.0 * d1 - e1) / 15.0
            out["d2P"] = np.where(one_sided, (8.0 * d2 - e2) / 7.0, (16.0 * d2 - e2) / 15.0)
            out["one_sided"] = one_sided
        return out

    def _p(self, r: np.ndarray) -> np.ndarray:
        v = np.asarray(self.vector(r), dtype=float)
        return v if self.scalar is None else v - np.asarray(self.scalar(r), dtype=float)

    def _derivatives(self, r: np.ndarray, side: int, delta: float, widest: float):
        h = delta * r
        offsets = np.arange(-2, 3)
        f = self._p(r[None, :] + offsets[:, None] * h[None, :])
        d1 = (f[0] - 8 * f[1] + 8 * f[3] - f[4]) / (12.0 * h)
        d2 = (-f[0] + 16 * f[1] - 30 * f[2] + 16 * f[3] - f[4]) / (12.0 * h * h)
        if side == 0:
            left = np.zeros(r.shape, dtype=bool)
            right = np.zeros(r.shape, dtype=bool)
            for b in self.breakpoints:
                # the widest central stencil (2 steps of ``widest``) must not reach across b
                near = np.abs(r - b) < _NEAR * widest * r
                left |= near & (r <= b)
                right |= near & (r > b)
        else:
            left = np.full(r.shape, side < 0)
            right = ~left
        for mask, sign in ((left, -1.0), (right, 1.0)):
            if np.any(mask):
                rr, hh = r[mask], sign * h[mask]
                g = self._p(rr[None, :] + np.arange(5)[:, None] * hh[None, :])
                d1[mask] = (-25 * g[0] + 48 * g[1] - 36 * g[2] + 16 * g[3] - 3 * g[4]) / (12.0 * hh)
                d2[mask] = (35 * g[0] - 104 * g[1] + 114 * g[2] - 56 * g[3] + 11 * g[4]) / (12.0 * hh * hh)
        return d1, d2, left | right

    def derivative_error(self, w: float, r: np.ndarray, weights: np.ndarray, u: np.ndarray) -> float:
        """An estimate of the error of W caused by the numerical P', P'' (Dirac; 0 for Klein-Gordon).

        The extrapolated derivatives err by O(delta^6) (O(delta^4) one-sided): the same with twice the
        step differ by ~63 (15) times that; the expectation value of the change of V_eff in the level,
        with a safety factor 2.
        """
        if not self.dirac:
            return 0.0
        parts = self.parts(r)
        fine = self.effective(w, parts, r)
        coarse = self.effective(w, self.parts(r, step=2.0 * DERIVATIVE_STEP), r)
        change = np.where(np.isfinite(fine - coarse), fine - coarse, 0.0)
        one_sided = parts["one_sided"] | self.parts(r, step=2.0 * DERIVATIVE_STEP)["one_sided"]
        change = change / np.where(one_sided, 15.0, 63.0) * 63.0
        truncation = 2.0 * abs(float(np.sum(weights * u * u * change))) / 63.0
        # rounding: the differences of P carry eps |P| / h (P') and eps |P| / h^2 (P''), times the
        # stencils' weights and the extrapolation's 17/15; independent from point to point, so they add
        # in quadrature (three standard deviations)
        eps = np.finfo(float).eps
        with np.errstate(all="ignore"):
            p = np.abs(parts["V"] - parts["S"])
            h = DERIVATIVE_STEP * r
            big_a = w - parts["V"] + parts["S"] + 2.0 * self.rest
            noise1 = eps * p * 1.5 * (17.0 / 15.0) / h
            noise2 = eps * p * (64.0 / 12.0) * (17.0 / 15.0) / (h * h)
            a = np.abs(parts["dP"] / big_a)
            bound = self.hbar_c**2 / (2.0 * self.rest) * (
                (abs(self.kappa) / r + 1.5 * a) * noise1 + 0.5 * noise2) / np.abs(big_a)
            bound = np.where(np.isfinite(bound), bound, 0.0)
        rounding = 3.0 * math.sqrt(float(np.sum((weights * u * u * bound) ** 2)))
        return truncation + rounding

    # -------------------------------------------------------------- V_eff(W)
    def effective(self, w: float, parts: dict[str, np.ndarray], r: np.ndarray) -> np.ndarray:
        """V_eff(r; W) at the radii ``parts`` were taken at (see the module docstring)."""
        v, s = parts["V"], parts["S"]
        b = w - v - s
        with np.errstate(all="ignore"):
            out = v + s - b * (b + 2.0 * s) / (2.0 * self.rest)
            if self.dirac:
                big_a = b + 2.0 * s + 2.0 * self.rest
                a = -parts["dP"] / big_a
                bb = -parts["d2P"] / big_a
                out = out + self.hbar_c**2 / (2.0 * self.rest) * (self.kappa * a / r + 0.75 * a * a - 0.5 * bb)
        return out

    def lowest_allowed(self, parts: dict[str, np.ndarray]) -> float:
        """The W below which A = W - V + S + 2M vanishes somewhere (the negative continuum reaches in)."""
        return float(np.max(parts["V"] - parts["S"])) - 2.0 * self.rest

    def effective_function(self, w: float) -> Callable[[Any], np.ndarray]:
        """V_eff(.; W) as a function of r (for probing, counting and box planning)."""
        def v_eff(r):
            r_arr = np.asarray(r, dtype=float)
            flat = np.atleast_1d(r_arr).ravel()
            values = self.effective(w, self.parts(flat), flat)
            return values.reshape(r_arr.shape) if r_arr.ndim else float(values[0])
        return v_eff

    # ----------------------------------------------------------------- names
    @property
    def text(self) -> str:
        """``kappa=-1 (s1/2)`` or ``l=0``."""
        if not self.dirac:
            return f"l={self.l}"
        return f"kappa={self.kappa} ({'spdfghiklmnoqrtuv'[self.l] if self.l < 17 else f'[l={self.l}]'}" \
               f"{int(round(2 * self.j))}/2)"


def kappa_of(l: int, j: float) -> int:
    """Dirac's kappa: -(l+1) for j = l + 1/2, l for j = l - 1/2."""
    return -(l + 1) if j > l else l


def coulomb_strength(coefficient: float, power: float, hbar_c: float) -> float | None:
    """Z alpha of a small-r law V ~ coefficient * r**power that is an attractive Coulomb point (else None)."""
    if abs(power + 1.0) < 1e-9 and coefficient < 0:
        return -coefficient / hbar_c
    return None
