"""A Schrodinger method made to solve the energy-dependent equation of a relativistic channel.

On one grid, with lambda_k(W) the k-th eigenvalue (k nodes) of
-1/(2m) u'' + V_eff(r; W) u, the Dirac or Klein-Gordon level with k nodes is
the root of f(W) = lambda_k(W) - W.  d lambda_k / dW = <dV_eff/dW> is
negative for a bound level (dV_eff/dW = -(W - V)/M + O(1/c^2 derivative
terms), and W > V where the level lives), so f falls steeply and has one
root: safeguarded secant iteration on a bracket finds it to rounding.  The
root on each grid has the error series of the underlying method (its
eigenvalues' series, divided by 1 - lambda_k'), so Richardson extrapolation,
error estimates and statuses of :mod:`radsolve.core.spectrum` apply unchanged.

Counting: f is decreasing, so the level with k nodes lies below the
threshold W0 exactly when lambda_k(W0) < W0; the number of bound levels is
the number of levels of the fixed equation V_eff(r; W0) below W0, which is
what the spectrum's certificate and Sturm counts compute when the channel's
potential is V_eff(.; W0).
"""

from __future__ import annotations

import numpy as np

from radsolve.errors import InputError

#: Secant iterations before the bracket is halved instead.
_MAX_ITERATIONS = 80


class DivingLevel(InputError):
    """A level would leave the bound spectrum through the negative-energy continuum."""


def self_consistent(base: type, channel) -> type:
    """A subclass of the Schrodinger method ``base`` that solves ``channel`` (see the module docstring).

    The spectrum hands it V_eff(.; W0) - ref on each grid; it recovers ref
    and evaluates V_eff(.; W) itself for other W.
    """

    class SelfConsistent(base):
        name = base.name
        error_orders = base.error_orders
        #: d(lambda_k - W)/dW of each level at its last root (shared by the grids of one solve)
        _rel_known_slopes: dict = {}

        @classmethod
        def relative_rounding(cls, size: int) -> float:
            return base.relative_rounding(size)

        def __init__(self, grid, potential_values, l, mass, inner=0, origin_exponent=None, centrifugal=None):
            super().__init__(grid, potential_values, l, mass, inner, origin_exponent, centrifugal)
            self._rel_setup = (grid, l, mass, inner, origin_exponent, centrifugal)
            r = grid.r
            self._rel_r = r
            self._rel_parts = channel.parts(r)
            # anchors: the mean of the two one-sided limits, as potential_on_grid does for V
            self._rel_anchor_parts = []
            for b in getattr(grid, "_anchors", ()):
                i = int(np.searchsorted(r, b))
                for k in (i - 1, i):
                    if 0 <= k < r.size and abs(r[k] - b) <= 1e-12 * b:
                        rr = np.array([b * (1.0 - 1e-12), b * (1.0 + 1e-12)])
                        sides = [channel.parts(rr[:1], side=-1), channel.parts(rr[1:], side=+1)]
                        self._rel_anchor_parts.append((k, rr, sides))
            values = np.asarray(potential_values, dtype=float)
            eff0 = self._rel_effective(channel.threshold)
            ok = np.isfinite(eff0) & np.isfinite(values)
            ok[: inner + 1] = False
            # the energies handed in and out are measured from the channel's reference
            self._rel_reference = float(np.median((eff0 - values)[ok])) if np.any(ok) else 0.0
            self._rel_lowest = channel.lowest_allowed(self._rel_parts) - self._rel_reference
            self._rel_slopes = type(self)._rel_known_slopes
            #: the state of each level at the last W its root search evaluated: (W, u)
            self._rel_states: dict = {}

        def _rel_effective(self, w: float) -> np.ndarray:
            values = channel.effective(w, self._rel_parts, self._rel_r)
            for k, rr, sides in self._rel_anchor_parts:
                values[k] = 0.5 * sum(float(channel.effective(w, p, x[i:i + 1])[0])
                                      for i, (p, x) in enumerate(zip(sides, (rr, rr))))
            return values

        def _rel_at(self, energy: float):
            grid, l, mass, inner, lam, cent = self._rel_setup
            values = self._rel_effective(energy + self._rel_reference) - self._rel_reference
            return base(grid, values, l, mass, inner, lam, cent)

        def _rel_base_energy(self, energy: float, k: int) -> float:
            # the state comes almost free with the value: kept for levels() (a root is a step
            # from the last W evaluated, far closer than the state can tell)
            values, u = self._rel_at(energy).levels([k], guesses=[energy], precision=[np.inf])
            self._rel_states[k] = (energy, u[0])
            return float(values[0])

        def count_below(self, energy: float) -> int:
            if energy == 0.0:
                return super().count_below(0.0)
            if energy <= self._rel_lowest:
                return 0
            return self._rel_at(energy).count_below(energy)

        def _rel_root(self, k: int, guess: float | None) -> float:
            """W - ref of the level with k nodes on this grid (safeguarded secant on f = lambda_k - W)."""
            floor = self._rel_lowest + 1e-9 * max(abs(self._rel_lowest), 1e-300)
            lo, hi = floor, np.inf  # f(lo) > 0 > f(hi) once known
            lo_known = False

            def f(x):
                return self._rel_base_energy(x, k) - x

            x0 = guess if guess is not None and np.isfinite(guess) and guess > floor else 0.0
            f0 = f(x0)
            slope = self._rel_slopes.get(k)  # f' from the previous root of this level (a coarser grid)
            x1 = x0 - f0 / slope if slope is not None and slope < 0 else x0 + f0  # else a fixed-point step
            # done once a step is far below the method's own rounding noise
            settled = base.relative_rounding(self.grid.size)
            for _ in range(_MAX_ITERATIONS):
                if f0 > 0:
                    lo, lo_known = max(lo, x0), True
                elif f0 < 0:
                    hi = min(hi, x0)
                else:
                    return x0
                if not lo < x1 < hi:
                    if lo_known and np.isfinite(hi):
                        x1 = 0.5 * (lo + hi)
                    elif not lo_known:
                        x1 = max(floor, x1 if x1 < hi else hi - 2.0 * (abs(f0) + abs(hi - x0)))
                    else:
                        x1 = lo + 2.0 * (abs(f0) + abs(x0 - lo)) + 1e-12 * abs(lo)
                f1 = f(x1)
                if x1 == floor and f1 < 0:
                    raise DivingLevel(
                        f"the {channel.text} level with {k} nodes would lie below -2mc^2 (it dives into the "
                        "negative-energy continuum): the potential is supercritical for this particle and has "
                        "no single-particle bound level there", parameter="potential")
                if f1 == 0.0 or abs(x1 - x0) <= 2e-16 * max(abs(x1), abs(x0)):
                    return x1
                x_new = x1 - f1 * (x1 - x0) / (f1 - f0) if f1 != f0 else 0.5 * (x0 + x1)
                if f1 != f0 and abs(x1 - x0) > 1e3 * settled * max(abs(x1), 1e-300):  # above the noise
                    self._rel_slopes[k] = (f1 - f0) / (x1 - x0)
                if abs(x_new - x1) <= settled * max(abs(x1), 1e-300):
                    return x_new  # f falls monotonically: its one root is there
                x0, f0, x1 = x1, f1, x_new
            return x1

        def energies(self, indices, guesses=None, **_hints):
            # hints of the spectrum for the underlying method (peaks, precision) do not apply to the roots
            guesses = [None] * len(indices) if guesses is None else list(guesses)
            return np.array([self._rel_root(k, g) for k, g in zip(indices, guesses)])

        def levels(self, indices, guesses=None, **_hints):
            indices = list(indices)
            energies = self.energies(indices, guesses)
            rows = []
            settled = 10.0 * base.relative_rounding(self.grid.size)
            for k, e in zip(indices, energies):
                last = self._rel_states.get(k)
                if last is not None and abs(last[0] - e) <= settled * max(abs(e), 1e-300):
                    rows.append(last[1])
                    continue
                # only the state is taken here (the energy is the root's): no bisection to polish a value
                _, u = self._rel_at(float(e)).levels([k], guesses=[float(e)], precision=[np.inf])
                rows.append(u[0])
            return energies, np.array(rows)

    SelfConsistent.__name__ = SelfConsistent.__qualname__ = f"SelfConsistent_{base.__name__}"
    return SelfConsistent
