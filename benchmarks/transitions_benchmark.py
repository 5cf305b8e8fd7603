"""Benchmark: every E1 line and lifetime of hydrogen for n <= 10, every l.

Goal: at most 3 s of wall time for the whole process (interpreter start-up,
imports, the solve, the matrix elements, the output).  Prints figures; it
asserts nothing (speed goals live here, never in tests).

    python benchmarks/transitions_benchmark.py [--repeat 3] [--nmax 10]

It runs ``python -m radsolve transitions coulomb --nmax N --mass
electron+proton --format json`` as a fresh process (from a neutral folder,
so that the installed package is used), then repeats the work in-process to
show where the time goes.
"""

from __future__ import annotations

import argparse
import json
import statistics
import subprocess
import sys
import tempfile
import time

GOAL_SECONDS = 3.0


def whole_process(nmax: int) -> tuple[float, dict]:
    cwd = tempfile.mkdtemp(prefix="radsolve-bench-")
    start = time.perf_counter()
    proc = subprocess.run(
        [sys.executable, "-m", "radsolve", "transitions", "coulomb", "--nmax", str(nmax),
         "--mass", "electron+proton", "--format", "json"],
        capture_output=True, text=True, cwd=cwd, timeout=600)
    elapsed = time.perf_counter() - start
    if proc.returncode not in (0, 3):
        raise SystemExit(f"radsolve failed ({proc.returncode}): {proc.stderr.strip()}")
    return elapsed, json.loads(proc.stdout)


def in_process(nmax: int) -> dict[str, float]:
    t0 = time.perf_counter()
    import radsolve
    from radsolve.analysis.radiative import transitions_from

    t1 = time.perf_counter()
    result = radsolve.solve("coulomb", l=list(range(nmax)), count=nmax, mass="electron+proton")
    t2 = time.perf_counter()
    tr = transitions_from(result, nmax)
    t3 = time.perf_counter()
    tr.to_dict("hartree")
    t4 = time.perf_counter()
    return {"import": t1 - t0, "solve": t2 - t1, "lines": t3 - t2, "render": t4 - t3,
            "levels": len(result.levels), "points": result.levels[0].samples[-1].r.size,
            "grids": len(result.levels[0].samples)}


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeat", type=int, default=3)
    parser.add_argument("--nmax", type=int, default=10)
    args = parser.parse_args()

    times, doc = [], None
    for _ in range(args.repeat):
        elapsed, doc = whole_process(args.nmax)
        times.append(elapsed)
    states = doc["states"]
    lines = doc["lines"]
    print(f"hydrogen (electron+proton reduced mass), all E1 lines and lifetimes for n <= {args.nmax}")
    print(f"  levels reported: {len(states)}   E1 lines: {len(lines)}   "
          f"metastable: {', '.join(s['label'] for s in states if s['metastable'])}")
    print(f"  whole process, {args.repeat} runs: " + ", ".join(f"{t:.2f} s" for t in times)
          + f"   median {statistics.median(times):.2f} s   (goal <= {GOAL_SECONDS:.1f} s: "
          + ("met" if statistics.median(times) <= GOAL_SECONDS else "NOT MET") + ")")
    lyman = next(x for x in lines if x["upper"] == "2p" and x["lower"] == "1s")
    print(f"  A(2p->1s) = {lyman['einstein_A']:.5e} s^-1 (NIST ASD: 6.2649e8), "
          f"tau(2p) = {next(s for s in states if s['label'] == '2p')['lifetime_s'] * 1e9:.4f} ns")
    print(f"  success: {doc['success']}   message: {doc['message']}")
    parts = in_process(args.nmax)
    print(f"  in-process: import {parts['import']:.2f} s, solve {parts['solve']:.2f} s "
          f"({parts['levels']} levels, {parts['grids']} grids, finest {parts['points']} points), "
          f"lines and lifetimes {parts['lines']:.2f} s, JSON data {parts['render']:.3f} s")


if __name__ == "__main__":
    main()
