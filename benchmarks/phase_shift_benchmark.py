"""Phase shifts delta_0 ... delta_5 of a Yukawa potential on 1000 energies at tol 1e-8 (goal: <= 1 s on one core).

Run: python benchmarks/phase_shift_benchmark.py
Prints the wall time, the grids used and the largest error estimate of each l.
"""

import time

import numpy as np

import radsolve
from radsolve.analysis.scattering import phase_shifts


def main() -> None:
    pot = radsolve.potential("yukawa", Z=1.0, screening_length=1.0)
    energies = np.linspace(0.01, 5.0, 1000)
    phase_shifts(pot, energies[:3], l=0, tol=1e-8)  # imports and first-call costs
    start = time.perf_counter()
    result = phase_shifts(pot, energies, l=list(range(6)), tol=1e-8)
    elapsed = time.perf_counter() - start
    print(f"yukawa Z=1 screening_length=1: l = 0..5 on {energies.size} energies, tol 1e-8: "
          f"{elapsed:.2f} s (goal <= 1 s), status {result.status}")
    for i, l in enumerate(result.ls):
        print(f"  l = {l}: delta(E={energies[0]:g}) = {result.phase[i, 0]:.10f}, "
              f"delta(E={energies[-1]:g}) = {result.phase[i, -1]:.10f}, "
              f"largest estimate {np.max(result.error[i]):.2e}, all converged: {bool(result.converged[i].all())}")


if __name__ == "__main__":
    main()
