"""Speed of relativistic levels beside the Schrodinger spectrum of the same size: prints figures, asserts nothing.

Run:  python benchmarks/relativistic_benchmark.py

Figures (point charge Z = 92, tol = 1e-10, method fd, one solve per l with 6 - l levels):
- Schrodinger: the 21 levels n <= 6;
- Klein-Gordon: the same 21 (n, l) levels (s levels excepted: Z alpha = 0.67 > 1/2 has none);
- Dirac: the 36 levels n <= 6 (every l and j), and the time per level, with finite differences on
  the second-order form, the first-order shooting of G and F, and both;
and the worst relative deviation from the exact formulas.  Goal (issue 11): Dirac <= 3x Schrodinger.
"""

from __future__ import annotations

import time

import radsolve


def run(equation: str, Z: float = 92, nmax: int = 6, method: str = "fd"):
    pot = radsolve.potential("coulomb", Z=Z)
    start = time.perf_counter()
    count, worst = 0, 0.0
    first_l = 1 if equation == "klein-gordon" and Z / 137.036 >= 0.5 else 0
    for l in range(first_l, nmax):
        res = radsolve.solve(pot, l=l, count=nmax - l, tol=1e-10, method=method, equation=equation)
        count += len(res.levels)
        for lev in res.levels:
            if lev.exact is not None:
                worst = max(worst, abs(lev.energy - lev.exact) / abs(lev.exact))
    return time.perf_counter() - start, count, worst


def main() -> None:
    print("radsolve relativistic benchmark (point charge Z = 92, n <= 6, tol 1e-10)")
    base = None
    for equation in ("schrodinger", "klein-gordon", "dirac"):
        for method in ("fd", "first-order", "both") if equation == "dirac" else ("fd", "both"):
            seconds, count, worst = run(equation, method=method)
            if equation == "schrodinger" and method == "fd":
                base = seconds
            ratio = f"{seconds / base:5.2f}x Schrodinger fd" if base else ""
            print(f"  {equation:12s} {method:5s} {count:3d} levels {seconds:7.2f} s "
                  f"({1e3 * seconds / count:6.1f} ms/level)  worst rel. error {worst:.1e}  {ratio}")


if __name__ == "__main__":
    main()
