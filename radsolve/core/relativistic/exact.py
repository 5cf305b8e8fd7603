"""Exact relativistic levels of a point Coulomb charge (textbook formulas).

With W = E - mc^2 the binding energy, Z alpha the coupling and M = mu c^2 the
rest energy of the particle (the reduced mass mu, as everywhere in radsolve):

Dirac (Sommerfeld's fine-structure formula), n_r = n - |kappa| radial nodes:

    E = M / sqrt(1 + (Z alpha)^2 / (n_r + sqrt(kappa^2 - (Z alpha)^2))^2)

Klein-Gordon, n_r = n - l - 1:

    E = M / sqrt(1 + (Z alpha)^2 / (n_r + 1/2 + sqrt((l + 1/2)^2 - (Z alpha)^2))^2)

W is computed as M * expm1(-log1p(x)/2), x the fraction above, so that weak
binding keeps its digits (W / M ~ 1e-5 for hydrogen).
"""

from __future__ import annotations

import math


def _binding(rest: float, x: float) -> float:
    return rest * math.expm1(-0.5 * math.log1p(x))


def dirac_coulomb(n: int, kappa: int, z_alpha: float, rest: float) -> float | None:
    """E - mc^2 of the Dirac level n, kappa (None when n, kappa is no level or Z alpha >= |kappa|)."""
    k = abs(kappa)
    if kappa == 0 or n < k or (n == k and kappa > 0) or z_alpha >= k:
        return None
    gamma = math.sqrt(k * k - z_alpha**2)
    return _binding(rest, (z_alpha / (n - k + gamma)) ** 2)


def klein_gordon_coulomb(n: int, l: int, z_alpha: float, rest: float) -> float | None:
    """E - mc^2 of the Klein-Gordon level n, l (None when n <= l or Z alpha >= l + 1/2)."""
    if n <= l or z_alpha >= l + 0.5:
        return None
    root = math.sqrt((l + 0.5) ** 2 - z_alpha**2)
    return _binding(rest, (z_alpha / (n - l - 0.5 + root)) ** 2)
