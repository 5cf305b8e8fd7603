"""Speed figures of sweeps, thresholds and fits: prints them, asserts nothing.

Run:  python benchmarks/sweep_benchmark.py [--points N] [--tol T] [--cluster]

Figures:
- a 1000-point Yukawa sweep (screening length 1 ... 40 bohr, evenly spaced;
  l = 0, 1; 3 levels each): points per second serially, with local worker
  processes (every core) and, with --cluster, on a local Dask cluster; the
  speed-up; and whether the parallel rows are identical to the serial ones;
- one threshold (Yukawa 1s, 2p) and one two-parameter fit: wall time.
"""

from __future__ import annotations

import argparse
import time

import numpy as np

from radsolve.analysis.fitting import fit
from radsolve.potentials import potential
from radsolve.core.spectrum import solve
from radsolve.analysis.sweeps import sweep, usable_cores
from radsolve.analysis.thresholds import threshold


def timed(func, *args, **kwargs):
    start = time.perf_counter()
    value = func(*args, **kwargs)
    return value, time.perf_counter() - start


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--points", type=int, default=1000)
    parser.add_argument("--tol", type=float, default=1e-8)
    parser.add_argument("--cluster", action="store_true", help="also time a local Dask cluster")
    args = parser.parse_args()

    values = np.linspace(1.0, 40.0, args.points)
    settings = dict(vary={"screening_length": values}, l=[0, 1], count=3, tol=args.tol)
    cores = usable_cores()
    print(f"Yukawa sweep: {args.points} points, l = 0, 1, 3 levels each, tol = {args.tol:g}; "
          f"{cores} usable cores")

    serial, t_serial = timed(sweep, "yukawa", workers=1, **settings)
    print(f"  serial            {t_serial:8.2f} s   {args.points / t_serial:8.1f} points/s")
    parallel, t_parallel = timed(sweep, "yukawa", workers=None, **settings)
    same = np.array_equal(serial.energy, parallel.energy, equal_nan=True)
    print(f"  {cores} worker processes {t_parallel:6.2f} s   {args.points / t_parallel:8.1f} points/s   "
          f"speed-up {t_serial / t_parallel:.2f}   identical to serial: {same}")
    if args.cluster:
        clustered, t_cluster = timed(sweep, "yukawa", cluster="local", workers=cores, **settings)
        same = np.array_equal(serial.energy, clustered.energy, equal_nan=True)
        print(f"  local Dask cluster {t_cluster:7.2f} s   {args.points / t_cluster:8.1f} points/s   "
              f"speed-up {t_serial / t_cluster:.2f}   identical to serial: {same}   "
              "(includes starting the cluster)")
    bound = int(serial.bound.sum())
    print(f"  rows {len(serial)}, bound {bound}, not converged {serial.unconverged}")

    for label, bracket in (("1s", (0.5, 1.5)), ("2p", (3.0, 6.0))):
        res, t = timed(threshold, "yukawa", "screening_length", level=label, bracket=bracket)
        print(f"threshold {label}: D_c = {res.value:.12g} +- {res.error_estimate:.1e} bohr in {t:.2f} s")

    true = solve(potential("yukawa", Z=2.0, screening_length=3.0), l=[0, 1], count=2, tol=1e-11)
    targets = [(lev.label, lev.energy, 1e-4) for lev in true.levels]
    res, t = timed(fit, "yukawa", targets, free=["Z", "screening_length"],
                   fixed={"Z": 1.5, "screening_length": 5.0})
    print(f"fit of Z and D to {len(targets)} levels: {res.evaluations} spectra in {t:.2f} s "
          f"({t / res.evaluations * 1e3:.0f} ms per spectrum)")


if __name__ == "__main__":
    main()
