"""Speed figures of the core solver: prints them, asserts nothing.

Run:  python benchmarks/core_benchmark.py

Figures:
- all 55 Coulomb levels n <= 10 (every l), Z = 1, tol = 1e-10, with "fd" and
  with "both": wall time in this process and for a whole fresh process;
- how the time grows with the highest n (10, 20, 40) and with tol;
- peak memory (resident set) of the process;
- wall time of `radsolve --help`.
"""

from __future__ import annotations

import resource
import subprocess
import sys
import time

import radsolve

ONE_RUN = """
import time, radsolve
t = time.perf_counter()
pot = radsolve.potential("coulomb", Z=1)
worst = 0.0
for l in range({nmax}):
    res = radsolve.solve(pot, l=l, count={nmax} - l, tol={tol}, method="{method}")
    for lev in res.levels:
        worst = max(worst, abs(lev.energy - lev.exact) / abs(lev.exact))
print(time.perf_counter() - t, worst)
"""


def coulomb_levels(nmax: int, tol: float, method: str):
    """Solve every level n <= nmax of hydrogen; return (seconds, levels, worst relative error)."""
    start = time.perf_counter()
    pot = radsolve.potential("coulomb", Z=1)
    worst, count = 0.0, 0
    for l in range(nmax):
        res = radsolve.solve(pot, l=l, count=nmax - l, tol=tol, method=method)
        count += len(res.levels)
        for lev in res.levels:
            worst = max(worst, abs(lev.energy - lev.exact) / abs(lev.exact))
    return time.perf_counter() - start, count, worst


def whole_process(nmax: int, tol: float, method: str) -> tuple[float, float, float]:
    start = time.perf_counter()
    out = subprocess.run(
        [sys.executable, "-c", ONE_RUN.format(nmax=nmax, tol=tol, method=method)],
        check=True, capture_output=True, text=True,
    ).stdout.split()
    return time.perf_counter() - start, float(out[0]), float(out[1])


def main() -> None:
    print("radsolve core benchmark (hydrogen, Z = 1, reduced mass 1)")
    print()
    print("55 levels n <= 10, every l, tol = 1e-10:")
    for method, goal in (("fd", 1.0), ("both", 5.0)):
        wall, inner, worst = whole_process(10, 1e-10, method)
        print(f"  {method:5s} whole process {wall:6.2f} s (solve {inner:5.2f} s; goal <= {goal:.0f} s)"
              f"  worst relative error {worst:.1e}")
    print()
    print("growth with the highest n (fd, tol = 1e-10), in this process:")
    coulomb_levels(3, 1e-10, "fd")  # warm imports
    for nmax in (10, 20, 40):
        seconds, count, worst = coulomb_levels(nmax, 1e-10, "fd")
        print(f"  nmax = {nmax:3d}: {count:4d} levels in {seconds:6.2f} s  worst relative error {worst:.1e}")
    print()
    print("growth with tol (fd and numerov, nmax = 10), in this process:")
    for tol in (1e-6, 1e-8, 1e-10, 1e-12):
        row = []
        for method in ("fd", "numerov"):
            seconds, count, worst = coulomb_levels(10, tol, method)
            row.append(f"{method} {seconds:5.2f} s (worst {worst:.1e})")
        print(f"  tol = {tol:.0e}: " + "   ".join(row))
    print()
    peak_mib = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0
    print(f"peak resident memory of this process: {peak_mib:.0f} MiB")
    start = time.perf_counter()
    subprocess.run([sys.executable, "-m", "radsolve", "--help"], check=True, capture_output=True)
    print(f"`python -m radsolve --help`: {time.perf_counter() - start:.2f} s wall (goal <= 0.5 s)")


if __name__ == "__main__":
    main()
