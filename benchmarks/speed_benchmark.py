"""Speed against what the arithmetic allows: prints figures side by side, asserts nothing.

Run:  python benchmarks/speed_benchmark.py [--quick]

Figures (one process unless said otherwise):
- 55 hydrogen levels n <= 10, every l, tol 1e-10, fd: wall time (best of 5 after
  one warm-up), worst relative error against the exact levels, and, in the same
  run, the time of the bare LAPACK eigenvalue calls that the final grids of
  that solve need (scipy.linalg.eigvalsh_tridiagonal, select='i', bisection to
  full precision) and the ratio of the two;
- the eigenvalue searches' debug statistic: windows confirmed, windows that
  missed (found again by index bisection), levels bisected without a window,
  Sturm counts and tridiagonal solves;
- growth with nmax (10, 20, 40) and with tol (1e-6 ... 1e-12), fd and numerov;
- a sweep: Yukawa Z = 1, 1000 screening lengths from 1 to 40 bohr, l = 0 and
  1, 3 levels each, tol 1e-8: points per second, serial and with 2 workers,
  and how many of its levels equal those of solving each point alone within
  the two estimates;
- a fit of 2 parameters to 3 levels;
- `radsolve levels coulomb` as a whole process, and the first solve of a
  fresh process.
"""

from __future__ import annotations

import argparse
import subprocess
import sys
import time

import numpy as np


def _best(fn, repeat=5):
    fn()
    times = []
    out = None
    for _ in range(repeat):
        t = time.perf_counter()
        out = fn()
        times.append(time.perf_counter() - t)
    return min(times), out


def hydrogen(nmax: int, tol: float, method: str = "fd"):
    import radsolve

    pot = radsolve.potential("coulomb", Z=1)
    worst, levels, stats = 0.0, 0, {}
    for l in range(nmax):
        res = radsolve.solve(pot, l=l, count=nmax - l, tol=tol, method=method)
        assert res.success, res.message
        for lev in res.levels:
            worst = max(worst, abs(lev.energy - lev.exact) / abs(lev.exact))
        levels += len(res.levels)
        for k, v in res.statistics.items():
            stats[k] = stats.get(k, 0) + v
    return worst, levels, stats


def final_grid_matrices(nmax: int, tol: float):
    """The tridiagonal matrices and indices of the last grid of each solve of :func:`hydrogen`."""
    import radsolve
    from radsolve.core.solvers import fd

    seen = []
    original = fd.FiniteDifference.levels

    def record(self, indices, guesses=None, peaks=None, precision=None, **hints):
        d, e, _ = self._cached_matrix()
        seen.append((d.copy(), e.copy(), list(indices)))
        return original(self, indices, guesses, peaks, precision, **hints)

    fd.FiniteDifference.levels = record
    finals = []
    try:
        pot = radsolve.potential("coulomb", Z=1)
        for l in range(nmax):
            seen.clear()
            radsolve.solve(pot, l=l, count=nmax - l, tol=tol)
            finals.append(seen[-1])
    finally:
        fd.FiniteDifference.levels = original
    return finals


def bare_lapack(finals) -> float:
    from scipy.linalg import eigvalsh_tridiagonal

    tiny = 4.0 * np.finfo(float).tiny

    def run():
        for d, e, idx in finals:
            eigvalsh_tridiagonal(d, e, select="i", select_range=(min(idx), max(idx)),
                                 lapack_driver="stebz", tol=tiny)
    return _best(run)[0]


def sweep_rate(workers: int, points: int) -> float:
    import radsolve

    t = time.perf_counter()
    res = radsolve.sweep("yukawa", vary={"screening_length": np.linspace(1.0, 40.0, points)}, fixed={"Z": 1.0}, l=[0, 1], count=3,
                         tol=1e-8, workers=workers, progress=False)
    seconds = time.perf_counter() - t
    return points / seconds, res


def rows_against_single_solves(res, points: int) -> tuple[int, int, int]:
    """(levels within the two estimates of the single-point solve, levels compared, bound in one only)."""
    import radsolve

    lengths = np.linspace(1.0, 40.0, points)
    alone = [radsolve.solve(radsolve.potential("yukawa", Z=1.0, screening_length=x), l=[0, 1], count=3, tol=1e-8)
             for x in lengths]
    within = compared = mismatched = 0
    for label in res.labels():
        track = res.level(label)
        for i, single in enumerate(alone):
            found = {(lev.l, lev.nodes): lev for lev in single.levels}
            lev = found.get((track.l, track.nodes))
            if bool(track.bound[i]) != (lev is not None):
                mismatched += 1
                continue
            if lev is None:
                continue
            compared += 1
            within += int(abs(track.energy[i] - lev.energy) <= track.error_estimate[i] + lev.error_estimate)
    return within, compared, mismatched


def dask_overhead(points: int):
    """Seconds per point that a local Dask cluster adds to the same sweep on a 2-process pool."""
    try:
        import distributed  # noqa: F401
    except ImportError:
        return None
    import radsolve

    def run(**where):
        t = time.perf_counter()
        radsolve.sweep("yukawa", vary={"screening_length": np.linspace(1.0, 40.0, points)}, fixed={"Z": 1.0}, l=[0, 1],
                       count=3, tol=1e-8, progress=False, **where)
        return time.perf_counter() - t
    pool = run(workers=2)
    cluster = run(cluster="local", workers=2)
    return (cluster - pool) / points


def fit_time() -> float:
    import radsolve

    truth = radsolve.solve(radsolve.potential("yukawa", Z=1.3, screening_length=6.0), l=[0, 1], count=2, tol=1e-10)
    targets = [(lev.label, lev.energy, 1e-6) for lev in truth.levels[:3]]
    start = radsolve.potential("yukawa", Z=1.0, screening_length=4.0)

    def run():
        return radsolve.fit(start, targets, free=["Z", "screening_length"], tol=1e-8)
    seconds, out = _best(run, repeat=3)
    return seconds, out


def whole_process(args) -> float:
    t = time.perf_counter()
    subprocess.run(args, check=True, capture_output=True)
    return time.perf_counter() - t


def main(argv=None) -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="skip the slow figures (nmax 40, sweeps)")
    opts = parser.parse_args(argv)

    print("radsolve speed benchmark")
    print()
    seconds, (worst, levels, stats) = _best(lambda: hydrogen(10, 1e-10))
    lapack = bare_lapack(final_grid_matrices(10, 1e-10))
    print(f"55 hydrogen levels n <= 10, every l, tol 1e-10, fd (goal <= 60 ms, worst <= 1e-11):")
    print(f"  radsolve           {seconds * 1e3:7.1f} ms   {levels} levels, worst relative error {worst:.1e}")
    print(f"  bare LAPACK calls  {lapack * 1e3:7.1f} ms   (eigvalsh_tridiagonal, select='i', final grids only)")
    print(f"  ratio              {seconds / lapack:7.2f}      (goal < 1)")
    print("  eigenvalue searches: " + ", ".join(f"{k} {v}" for k, v in stats.items()))
    print()
    print("growth with nmax (fd, tol 1e-10):")
    for nmax in (10, 20) if opts.quick else (10, 20, 40):
        t = time.perf_counter()
        worst, levels, stats = hydrogen(nmax, 1e-10)
        print(f"  nmax = {nmax:2d}: {levels:4d} levels in {time.perf_counter() - t:6.2f} s, worst {worst:.1e}, "
              f"windows missed {stats['missed']} of {stats['missed'] + stats['confirmed']}")
    print()
    print("growth with tol (nmax = 10):")
    for tol in (1e-6, 1e-8, 1e-10, 1e-12):
        row = []
        for method in ("fd", "numerov"):
            try:
                s, (worst, _, _) = _best(lambda: hydrogen(10, tol, method), repeat=2)
                row.append(f"{method} {s:6.3f} s (worst {worst:.1e})")
            except AssertionError as exc:
                row.append(f"{method} not converged ({str(exc)[:40]}...)")
        print(f"  tol = {tol:.0e}: " + "   ".join(row))
    print()
    seconds, out = fit_time()
    print(f"fit of 2 parameters to 3 levels: {seconds:.3f} s (goal <= 0.2 s), status {out.status}")
    print()
    if not opts.quick:
        serial, res = sweep_rate(1, 1000)
        print(f"sweep (Yukawa, 1000 points, l = 0, 1, 3 levels, tol 1e-8): {serial:6.1f} points/s serial "
              f"(goal >= 200), status {res.status}")
        within, compared, mismatched = rows_against_single_solves(res, 1000)
        print(f"  rows against solving each point alone: {within} of {compared} levels within the two "
              f"estimates, {mismatched} bound in one only")
        two, _ = sweep_rate(2, 1000)
        print(f"  with 2 workers: {two:6.1f} points/s, speed-up {two / serial:.2f}")
        overhead = dask_overhead(200)
        if overhead is not None:
            print(f"  Dask path (local cluster, 2 workers, 200 points): {overhead * 1e3:+.2f} ms per point "
                  "beyond the 2-process pool")
        print()
    cli = min(whole_process([sys.executable, "-m", "radsolve", "levels", "coulomb"]) for _ in range(3))
    print(f"`radsolve levels coulomb`, whole process: {cli:.2f} s (goal <= 0.5 s)")
    first = min(whole_process([sys.executable, "-c", "import radsolve; radsolve.solve('coulomb', l=0, count=5)"])
                for _ in range(3))
    print(f"first solve of a fresh process (import included): {first:.2f} s")


if __name__ == "__main__":
    main()
