"""Dirac levels by shooting the first-order equations for G and F (no second-order form, no derivative of V).

The second method for the Dirac equation, independent of the energy-dependent second-order form
(:mod:`.selfconsistent`): on the grid uniform in xi (r = r(xi), J = dr/dxi) the equations

    dG/dxi = J [-kappa G / r + A F / (hbar c)],     dF/dxi = J [kappa F / r - B G / (hbar c)]

(A = W - V + S + 2M, B = W - V - S) are stepped with the exponential midpoint rule y_{p+1} = exp(h J M) y_p, M averaged over the
step's two ends: a symmetric one-step method, so its global error is a series in even powers of
the step (the spectrum's Richardson extrapolation applies with orders 2, 4, 6, ...), and, unlike
the trapezoidal rule, it never flips the sign of a growing solution, so node counts stay right at
any energy.  Each run of steps is one banded triangular solve (LAPACK), cut into pieces whose
growth cannot overflow.

- Counting: the number of levels below W is the number of sign changes of G of the regular
  solution between the inner boundary and the wall (G = 0 there, as u = G / sqrt(A) = 0 for the
  second-order form, so both methods see the same box).
- A level: its node count brackets it (bisection on the count), then Brent's method finds the
  zero of the mismatch G_out F_in - F_out G_in of the outward and inward solutions (each normalized
  at the matching point, the outermost classically allowed point): with one level in the bracket,
  that is its only zero.  No spurious state can arise: every root has the node count asked.
- The start at the inner boundary is the leading term of the regular solution: for a point charge
  (G, F) ~ (Z alpha, gamma + kappa) r^gamma; for V finite at the origin F/G = -(W - V) r / (hbar c
  (1 - 2 kappa)) (kappa < 0) or G/F = (W - V + 2M) r / (hbar c (2 kappa + 1)) (kappa > 0).

The wavefunction returned is u = G / sqrt(A), normalized, the same function the second-order
form's methods return, so that samples of both methods can be compared grid by grid.
"""

from __future__ import annotations

import math

import numpy as np
from scipy.linalg.lapack import dtbtrs
from scipy.optimize import brentq

from radsolve.core.grids import potential_on_grid
from radsolve.core.solvers.base import RadialSolver

#: No run of steps grows by more than e**_CHUNK_GROWTH before it is renormalised.
_CHUNK_GROWTH = 500.0
#: Bisection steps on the count before giving up on a bracket.
_MAX_BISECTIONS = 200


def shooting_rounding(size: int) -> float:
    """The first-order shooting's rounding noise of a level, relative to |E| + <|V_eff - E|>, on ``size`` points.

    Measured: each grid energy's spread when V is perturbed by up to 4 ulps at random (six draws; point
    charges Z = 1, 30, 92, l = 0, 1, 3, three levels each, 200 to 16000 points, tol 1e-12) is at most
    4e-16 and shows no growth with the size (products of 2x2 steps renormalised in pieces, Brent to
    rtol 1e-15).  The rule allows a random walk of one ulp a step, sqrt(size) * 2e-17, and never less
    than 1e-15: 2.5 times the largest spread seen, or more.  (The finite-difference rule, 1.5e-18 size^1.5
    and at least 1e-13, measures bisection on a graded matrix, not this method.)
    """
    return max(1e-15, 2e-17 * math.sqrt(size))


def first_order(channel, z_alpha: float | None) -> type:
    """The first-order shooting method for one Dirac channel (``z_alpha``: a point charge's Z alpha, else None)."""
    kappa = channel.kappa
    hc = channel.hbar_c
    rest = channel.rest

    class DiracShooting(RadialSolver):
        name = "first-order"
        error_orders = (2, 4, 6, 8, 10)

        @classmethod
        def relative_rounding(cls, size: int) -> float:
            return shooting_rounding(size)

        def __init__(self, grid, potential_values, l, mass, inner=0, origin_exponent=None, centrifugal=None):
            super().__init__(grid, potential_values, l, mass, inner, origin_exponent, centrifugal)
            anchors = getattr(grid, "_anchors", ())
            r = grid.r
            v = potential_on_grid(channel.vector, r, anchors)
            s = np.zeros_like(v) if channel.scalar is None else potential_on_grid(channel.scalar, r, anchors)
            self._gf_r, self._gf_v, self._gf_s = r, v, s
            self._gf_c = grid.step * grid.jacobian
            self._gf_reference = channel.threshold  # the spectrum's reference: the effective potential's V(inf)
            self._gf_floor = float(np.max((v - s)[inner:])) - 2.0 * rest - self._gf_reference

        # ------------------------------------------------------------------ stepping
        def _gf_matrices(self, w: float, lo: int, hi: int):
            """Entries of h J M at points lo..hi (M: the right-hand side's matrix)."""
            r, v, s, c = self._gf_r[lo:hi + 1], self._gf_v[lo:hi + 1], self._gf_s[lo:hi + 1], self._gf_c[lo:hi + 1]
            b = w - v - s
            a = b + 2.0 * s + 2.0 * rest
            return -kappa * c / r, c * a / hc, -c * b / hc, kappa * c / r

        def _gf_transfers(self, w: float, lo: int, hi: int, backwards: bool):
            """The step matrices T_p = exp((h J M) averaged over the step's ends), and each step's log-growth.

            M is traceless, so exp is cosh(mu) I + sinh(mu)/mu M with mu^2 = m11^2 + m12 m21 (cos and sin
            where mu^2 < 0).  A step that grows by more than e^50 is divided by cosh(mu): only the
            direction of (G, F) matters where a level cannot be, and the pieces stay finite.
            """
            m11, m12, m21, _ = self._gf_matrices(w, lo, hi)
            a11, a12, a21 = [0.5 * (x[1:] + x[:-1]) for x in (m11, m12, m21)]
            if backwards:
                a11, a12, a21 = -a11[::-1], -a12[::-1], -a21[::-1]
            mu2 = a11 * a11 + a12 * a21
            mu = np.sqrt(np.abs(mu2))
            grow = mu2 > 0
            capped = np.minimum(mu, 50.0)
            with np.errstate(all="ignore"):
                c = np.where(grow, np.cosh(capped), np.cos(mu))
                ratio = np.where(grow, np.sinh(capped), np.sin(mu)) / np.where(mu > 0, mu, 1.0)
                ratio = np.where(mu > 1e-8, ratio, 1.0 + mu2 / 6.0)
            big = grow & (mu > 50.0)
            c = np.where(big, 1.0, c)
            ratio = np.where(big, 1.0 / np.where(mu > 0, mu, 1.0), ratio)
            return (c + ratio * a11, ratio * a12, ratio * a21, c - ratio * a11), np.where(grow, capped, 0.0)

        def _gf_run(self, w: float, start: int, stop: int, y0) -> tuple[np.ndarray, np.ndarray]:
            """G, F at points start..stop (either direction) from y0 at ``start``, each piece renormalised."""
            lo, hi = min(start, stop), max(start, stop)
            t, log_growth = self._gf_transfers(w, lo, hi, stop < start)
            growth = np.concatenate(([0.0], np.cumsum(log_growth)))
            n = hi - lo
            g_out = np.empty(n + 1)
            f_out = np.empty(n + 1)
            g_out[0], f_out[0] = y0
            i = 0
            while i < n:
                limit = int(np.searchsorted(growth, growth[i] + _CHUNK_GROWTH, side="right")) - 1
                j = min(max(limit, i + 1), n)  # steps i -> j
                g, f = self._gf_piece([x[i:j] for x in t], g_out[i], f_out[i])
                g_out[i + 1:j + 1], f_out[i + 1:j + 1] = g, f
                scale = max(abs(g[-1]), abs(f[-1]), 1e-300)
                if not math.isfinite(scale):  # pragma: no cover - the pieces are cut to prevent this
                    raise FloatingPointError("first-order shooting overflowed")
                g_out[: j + 1] /= scale
                f_out[: j + 1] /= scale
                i = j
            return g_out, f_out

        @staticmethod
        def _gf_piece(t, g0: float, f0: float):
            """y_{p+1} = T_p y_p for the steps of ``t`` as one banded (unit lower triangular) solve."""
            t11, t12, t21, t22 = t
            k = t11.size
            ab = np.zeros((4, 2 * k))
            ab[0, :] = 1.0
            # unknowns y_1..y_k interleaved; row 2j: G_{j+1} - T11 G_j - T12 F_j, row 2j+1: F_{j+1} - T21 G_j - T22 F_j
            if k > 1:
                ab[2, 0:-2:2] = -t11[1:]
                ab[1, 1:-2:2] = -t12[1:]
                ab[3, 0:-2:2] = -t21[1:]
                ab[2, 1:-2:2] = -t22[1:]
            rhs = np.zeros(2 * k)
            rhs[0] = t11[0] * g0 + t12[0] * f0
            rhs[1] = t21[0] * g0 + t22[0] * f0
            y, info = dtbtrs(ab, rhs[:, None], uplo="L", diag="U")
            if info != 0:  # pragma: no cover - a unit triangular matrix is never singular
                raise RuntimeError(f"LAPACK dtbtrs failed (info = {info})")
            return y[0::2, 0], y[1::2, 0]

        def _gf_start(self, w: float):
            i = self.inner
            r, v, s = self._gf_r[i], self._gf_v[i], self._gf_s[i]
            if z_alpha is not None:
                return z_alpha, math.sqrt(kappa * kappa - z_alpha**2) + kappa
            if kappa < 0:
                return 1.0, -(w - v - s) * r / (hc * (1 - 2 * kappa))
            return (w - v + s + 2.0 * rest) * r / (hc * (2 * kappa + 1)), 1.0

        @staticmethod
        def _gf_sign_changes(g: np.ndarray) -> int:
            nz = g[g != 0.0]
            return int(np.count_nonzero(np.signbit(nz[1:]) != np.signbit(nz[:-1])))

        # ---------------------------------------------------------------- the method
        def count_below(self, energy: float) -> int:
            if energy <= self._gf_floor:
                return 0
            w = energy + self._gf_reference
            last = self.grid.size - 1
            g, _ = self._gf_run(w, self.inner, last, self._gf_start(w))
            return self._gf_sign_changes(g[:-1]) + (0 if g[-1] == 0.0 or g[-2] == 0.0
                                                    or np.signbit(g[-1]) == np.signbit(g[-2]) else 1)

        def _gf_match_point(self, w: float) -> int:
            lo, last = self.inner + 2, self.grid.size - 3
            m11, m12, m21, m22 = self._gf_matrices(w, lo, last)
            allowed = np.nonzero(m11 * m22 - m12 * m21 > 0)[0]  # oscillating locally
            return lo + int(allowed[-1]) if allowed.size else (lo + last) // 2

        def _gf_mismatch(self, energy: float, m: int) -> float:
            w = energy + self._gf_reference
            last = self.grid.size - 1
            go, fo = self._gf_run(w, self.inner, m, self._gf_start(w))
            gi, fi = self._gf_run(w, last, m, (0.0, 1.0))
            no, ni = math.hypot(go[-1], fo[-1]), math.hypot(gi[-1], fi[-1])
            return (go[-1] * fi[-1] - fo[-1] * gi[-1]) / (no * ni)

        def _gf_bracket(self, k: int, guess: float | None) -> tuple[float, float]:
            floor = self._gf_floor + 1e-9 * max(abs(self._gf_floor), 1e-300)
            if guess is not None and math.isfinite(guess) and guess > floor:
                width = 1e-6 * max(abs(guess), 1e-300)
                lo, hi = max(guess - width, floor), guess + width
                for _ in range(60):
                    if self.count_below(lo) <= k:
                        break
                    lo, width = max(guess - 10 * width - (guess - lo), floor), 10 * width
                for _ in range(200):
                    if self.count_below(hi) > k:
                        break
                    hi, width = hi + width, 10 * width
            else:
                lo, hi = floor, 0.0
                step = 1.0
                while self.count_below(hi) <= k:
                    hi, step = hi + step, 2.0 * step
            n_lo = self.count_below(lo)
            if n_lo > k:
                from radsolve.core.relativistic.selfconsistent import DivingLevel

                raise DivingLevel(f"the {channel.text} level with {k} nodes would lie below -2mc^2 (it dives "
                                  "into the negative-energy continuum): the potential is supercritical for this "
                                  "particle", parameter="potential")
            n_hi = self.count_below(hi)
            for _ in range(_MAX_BISECTIONS):
                if n_lo == k and n_hi == k + 1:
                    break
                mid = 0.5 * (lo + hi)
                n_mid = self.count_below(mid)  # one shooting run a step: the other end's count is known
                if n_mid > k:
                    hi, n_hi = mid, n_mid
                else:
                    lo, n_lo = mid, n_mid
            return lo, hi

        def _gf_level(self, k: int, guess: float | None, bracket=None) -> float:
            lo, hi = bracket if bracket is not None else self._gf_bracket(k, guess)
            for _ in range(60):
                m = self._gf_match_point(hi + self._gf_reference)
                d_lo, d_hi = self._gf_mismatch(lo, m), self._gf_mismatch(hi, m)
                if d_lo == 0.0:
                    return lo
                if d_hi == 0.0:
                    return hi
                if np.sign(d_lo) != np.sign(d_hi):
                    return brentq(lambda e: self._gf_mismatch(e, m), lo, hi, xtol=1e-300, rtol=1e-15,
                                  maxiter=200)
                mid = 0.5 * (lo + hi)  # narrow the bracket by the count and try again
                if self.count_below(mid) > k:
                    hi = mid
                else:
                    lo = mid
            return 0.5 * (lo + hi)

        def _gf_brackets(self, indices) -> dict:
            """Brackets (lo, hi) holding exactly level k, for every k asked, by one shared bisection on the count."""
            floor = self._gf_floor + 1e-9 * max(abs(self._gf_floor), 1e-300)
            top, step = 0.0, 1.0
            n_top = self.count_below(top)
            while n_top <= max(indices):
                top, step = top + step, 2.0 * step
                n_top = self.count_below(top)
            wanted = set(indices)
            out: dict = {}
            stack = [(floor, self.count_below(floor), top, n_top)]
            for _ in range(_MAX_BISECTIONS * max(len(wanted), 1)):
                if not stack:
                    break
                a, na, b, nb = stack.pop()
                inside = [k for k in wanted if na <= k < nb]
                if not inside:
                    continue
                if nb - na == 1:
                    out[inside[0]] = (a, b)
                    continue
                mid = -math.sqrt(a * b) if b < 0 and a / b > 4.0 else 0.5 * (a + b)  # geometric across scales
                nm = self.count_below(mid)
                stack += [(a, na, mid, nm), (mid, nm, b, nb)]
            return out

        def energies(self, indices, guesses=None, **_hints):
            indices = list(indices)
            if guesses is None:
                brackets = self._gf_brackets(indices)
                return np.array([self._gf_level(k, None, brackets.get(k)) for k in indices])
            return np.array([self._gf_level(k, g) for k, g in zip(indices, guesses)])

        def levels(self, indices, guesses=None, **_hints):
            indices = list(indices)
            energies = self.energies(indices, guesses)
            rows = [self._gf_wavefunction(float(e)) for e in energies]
            return energies, np.array(rows)

        def _gf_wavefunction(self, energy: float) -> np.ndarray:
            w = energy + self._gf_reference
            last = self.grid.size - 1
            m = self._gf_match_point(w)
            go, fo = self._gf_run(w, self.inner, m, self._gf_start(w))
            gi, fi = self._gf_run(w, last, m, (0.0, 1.0))
            scale = go[-1] / gi[-1] if abs(gi[-1]) >= abs(fi[-1]) else fo[-1] / fi[-1]
            g = np.zeros(self.grid.size)
            g[self.inner:m + 1] = go
            g[m:last + 1] = (gi * scale)[::-1]
            a = w - self._gf_v + self._gf_s + 2.0 * rest
            u = np.zeros(self.grid.size)
            sl = slice(self.inner + 1, last)
            u[sl] = g[sl] / np.sqrt(a[sl])
            u /= math.sqrt(float(np.sum(self.grid.weights * u * u)))
            big = np.nonzero(np.abs(u) > 1e-3 * np.max(np.abs(u)))[0]
            if big.size and u[big[0]] < 0:
                u = -u
            return u

    DiracShooting.__name__ = DiracShooting.__qualname__ = "DiracShooting"
    return DiracShooting
