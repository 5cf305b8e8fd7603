"""Cost of formula and tabulated potentials against the same built-in family: prints, asserts nothing.

Run:  python benchmarks/formula_tabulated_benchmark.py

The goal (issue): a formula or tabulated potential costs no more than 2x the
built-in family it stands for, at the same tol.  Each case solves the same
levels (l = 0, 1, 2; 3 per l) of the same potential three ways and prints the
best of REPEATS wall times, the ratio to the built-in, and the largest
difference of the energies from the built-in's:

- yukawa (Z = 1, D = 5 bohr), the built-in family;
- the formula "-Z*exp(-r/D)/r";
- tables of it on geometric grids from 1e-4 to 200 bohr (inside: coulomb:1,
  beyond: zero), cubic and quintic splines, 1500 and 6000 points;
- woods_saxon (neutron, no spin-orbit) in nuclear units against the same
  formula and a 1201-point linear table.

V evaluations are timed too, for scale: they are a small part of a solve.
"""

from __future__ import annotations

import time

import numpy as np

import radsolve
from radsolve.potentials.formula import formula_potential
from radsolve.potentials.tabulated import tabulated_potential

REPEATS = 3
TOLS = (1e-8, 1e-10)


def best_time(func) -> tuple[float, object]:
    best, out = float("inf"), None
    for _ in range(REPEATS):
        start = time.perf_counter()
        out = func()
        best = min(best, time.perf_counter() - start)
    return best, out


def compare(title, reference, variants, solve_kwargs):
    print(f"\n{title}")
    for tol in TOLS:
        t_ref, res_ref = best_time(lambda: radsolve.solve(reference, tol=tol, **solve_kwargs))
        print(f"  tol {tol:.0e}: {reference.name:<34s} {t_ref * 1e3:8.1f} ms   (reference, "
              f"{len(res_ref.levels)} levels)")
        for label, pot in variants:
            t, res = best_time(lambda: radsolve.solve(pot, tol=tol, **solve_kwargs))
            diff = max(abs(a.energy - b.energy) for a, b in zip(res.levels, res_ref.levels))
            grids = max(len(lev.samples) for lev in res.levels)
            print(f"  tol {tol:.0e}: {label:<34s} {t * 1e3:8.1f} ms   x{t / t_ref:5.2f}   "
                  f"max |dE| {diff:.1e}   grids {grids}"
                  + ("" if res.success else "   NOT CONVERGED"))


def evaluation_cost(pots, n=200_000):
    r = np.geomspace(1e-6, 300.0, n)
    print(f"\nV on {n} radii (best of {REPEATS}):")
    for label, pot in pots:
        t, _ = best_time(lambda: pot(r))
        print(f"  {label:<34s} {t * 1e3:8.2f} ms")


def main() -> None:
    yukawa = radsolve.potential("yukawa", Z=1, screening_length=5)
    formula = formula_potential("-Z*exp(-r/D)/r", Z=1, D=5)
    tables = []
    for points in (1500, 6000):
        r = np.geomspace(1e-4, 200.0, points)
        for degree in (3, 5):
            tables.append((f"table {points} pts, degree {degree}",
                           tabulated_potential((r, yukawa(r)), inside="coulomb:1", beyond="zero",
                                               spline_degree=degree)))
    compare("yukawa Z=1, D=5 bohr; l = 0, 1, 2; 3 levels per l (atomic units)",
            yukawa, [("formula -Z*exp(-r/D)/r", formula)] + tables, dict(l=[0, 1, 2], count=3))

    ws = radsolve.potential("woods_saxon")
    p = ws.parameters
    R = p["r0"] * p["A"] ** (1 / 3)
    ws_formula = formula_potential("-V0/(1 + exp((r - R)/a))", units="nuclear", V0=p["depth"], R=R,
                                   a=p["diffuseness"])
    r = np.linspace(0.0, 30.0, 1201)
    ws_table = tabulated_potential((r, ws(np.maximum(r, 1e-12))), units="nuclear", beyond="zero")
    compare("woods_saxon, neutron, lead-208 defaults; l = 0, 1, 2; 3 levels per l (nuclear units)",
            ws, [("formula -V0/(1+exp((r-R)/a))", ws_formula), ("table 1201 pts, degree 3", ws_table)],
            dict(l=[0, 1, 2], count=3, mass="neutron"))

    evaluation_cost([("yukawa (built-in)", yukawa), ("formula", formula)] + tables[:2])


if __name__ == "__main__":
    main()
