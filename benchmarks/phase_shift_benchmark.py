"""Continuum benchmarks (goals of one core, printed; never a test):

- phase shifts delta_0 ... delta_5 of a Yukawa potential on 1000 energies at tol 1e-8 (goal <= 1 s);
- photoionization from hydrogen 1s on 500 photon energies at tol 1e-8 (goal <= 1 s), with the
  largest deviation from the closed form (Bethe and Salpeter 1957, sec. 71; from memory);
- the continuum oscillator strength of hydrogen 1s (no goal yet), against 1 - sum of the bound f.

Run: python benchmarks/phase_shift_benchmark.py
"""

import time

import numpy as np

import radsolve
from radsolve.analysis.scattering import phase_shifts, photoionization


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

    import math

    from scipy.constants import alpha, physical_constants

    photons = np.linspace(0.51, 5.0, 500)
    photoionization("coulomb", "1s", photons[:3], tol=1e-8)
    start = time.perf_counter()
    ion = photoionization("coulomb", "1s", photons, tol=1e-8)
    elapsed = time.perf_counter() - start
    k = np.sqrt(2.0 * (photons - 0.5))
    a0 = physical_constants["Bohr radius"][0] * 100.0
    exact = (2**9 * math.pi**2 * alpha * a0**2 / 3) * (1 + k**2) ** -4 * np.exp(-4 * np.arctan(k) / k) \
        / (1 - np.exp(-2 * math.pi / k))
    print(f"photoionization of hydrogen 1s on {photons.size} photon energies, tol 1e-8: {elapsed:.2f} s "
          f"(goal <= 1 s), status {ion.status}; largest |sigma/exact - 1|: length {np.max(np.abs(ion.sigma / exact - 1)):.1e}, "
          f"velocity {np.max(np.abs(ion.sigma_velocity / exact - 1)):.1e}; threshold {ion.threshold_cross_section:.5e} cm^2")

    # bound-free oscillator strength of hydrogen 1s: 1 minus the bound series sum_n f(1s -> np), the
    # closed form f = 2**8 n**5 (n - 1)**(2n - 4) / (3 (n + 1)**(2n + 4)) (textbook) summed by mpmath
    import mpmath

    from radsolve.analysis.scattering import continuum_strength

    with mpmath.workdps(30):
        bound = float(mpmath.nsum(lambda n: mpmath.mpf(2) ** 8 * n**5 * (n - 1) ** (2 * n - 4)
                                  / (3 * (n + 1) ** (2 * n + 4)), [2, mpmath.inf]))
    start = time.perf_counter()
    cs = continuum_strength("coulomb", "1s", tol=1e-8)
    elapsed = time.perf_counter() - start
    print(f"continuum oscillator strength of hydrogen 1s, tol 1e-8: {elapsed:.2f} s; {cs.value:.12f} against "
          f"{1.0 - bound:.12f} (difference {cs.value - (1.0 - bound):.1e}, estimate {cs.error:.1e})")


if __name__ == "__main__":
    main()
