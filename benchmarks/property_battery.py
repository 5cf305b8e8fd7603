"""The property battery at scale: radsolve against the independent reference on random potentials.

Run:  python benchmarks/property_battery.py [--cases 2000] [--seed 0] [--workers 2]
                                            [--kinds smooth,core,...] [--only INDEX ...]

Each case is drawn by tests/battery.py from (seed, index); its kind is fixed by
the index, so ``--only INDEX`` (with the same ``--seed``) rebuilds any case the
summary lists.  Prints per kind: cases, levels expected, levels compared,
missed, extra, bad certified counts, honesty failures (converged levels more
than 10 estimates from the reference), the worst ratio, reference-inconclusive
levels and counts, levels radsolve flagged as count-uncertain, unconverged
levels, exceptions, reference errors and wall time of each side; then the
failing cases.  Exit status 1 if any case missed a level, returned an extra
one, certified a wrong count, failed honesty or raised.

The figures are a check of the solver's own claims against a model
calculation of the same equations; they say nothing about any physical system.
"""

from __future__ import annotations

import os

# Worker processes share two cores: one BLAS thread each (set before numpy loads).
for _var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_var, "1")

import argparse  # noqa: E402
import multiprocessing as mp  # noqa: E402
import sys  # noqa: E402
import time  # noqa: E402
from pathlib import Path  # noqa: E402

sys.path.insert(0, str(Path(__file__).resolve().parent.parent / "tests"))

import battery  # noqa: E402


def _one(args):
    seed, index = args
    import warnings

    warnings.simplefilter("ignore")
    try:
        return battery.compare(battery.make_case(seed, index))
    except Exception as exc:   # a generator or comparison bug: show it, do not stop the run
        rec = battery.Record(battery.KINDS[index % len(battery.KINDS)], index, "(case could not be built)")
        rec.reference_error = f"{type(exc).__name__}: {exc}"
        return rec


def _parse(argv):
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--cases", type=int, default=2000, help="number of cases (default 2000)")
    p.add_argument("--seed", type=int, default=0, help="seed of the case generator (default 0)")
    p.add_argument("--workers", type=int, default=2, help="worker processes (default 2)")
    p.add_argument("--kinds", default="", help="comma-separated kinds to run (default all: "
                   + ",".join(battery.KINDS) + ")")
    p.add_argument("--only", type=int, nargs="+", default=None, metavar="INDEX",
                   help="run only these seed indices (and print each case in full)")
    args = p.parse_args(argv)
    kinds = [k.strip() for k in args.kinds.split(",") if k.strip()] or list(battery.KINDS)
    bad = [k for k in kinds if k not in battery.KINDS]
    if bad:
        p.error(f"--kinds: unknown {', '.join(bad)}; allowed: {', '.join(battery.KINDS)}")
    if args.cases < 1:
        p.error("--cases must be >= 1")
    if args.workers < 1:
        p.error("--workers must be >= 1")
    if args.only is not None and any(i < 0 for i in args.only):
        p.error("--only: seed indices are >= 0")
    return args, kinds


def main(argv=None) -> int:
    args, kinds = _parse(argv)
    if args.only is not None:
        indices = list(args.only)
    else:
        wanted = {battery.KINDS.index(k) for k in kinds}
        indices = []
        i = 0
        while len(indices) < args.cases:
            if i % len(battery.KINDS) in wanted:
                indices.append(i)
            i += 1
    start = time.perf_counter()
    records = []
    jobs = [(args.seed, i) for i in indices]
    done = 0
    if args.workers == 1 or len(jobs) == 1:
        results = map(_one, jobs)
        pool = None
    else:
        pool = mp.get_context("spawn").Pool(args.workers, maxtasksperchild=50)
        results = pool.imap_unordered(_one, jobs, chunksize=1)
    try:
        for rec in results:
            records.append(rec)
            done += 1
            if args.only is not None:
                case = battery.make_case(args.seed, rec.index)
                print(f"[{rec.index}] {rec.kind}: {rec.description}")
                print(f"    l={case.ls} d={case.dimension} mass={case.mass:.6g} count={case.count} "
                      f"tol={case.tol:.3g} method={case.method} breakpoints={case.breakpoints} "
                      f"declared={case.declare_breakpoints} hooks={list(case.hooks)}")
                print(f"    expected {rec.expected}, compared {rec.compared}, worst ratio {rec.worst_ratio:.3g}, "
                      f"reference {rec.t_reference:.2f} s, radsolve {rec.t_radsolve:.2f} s")
                for line in rec.failures:
                    print("    " + line)
            elif done % 50 == 0 or done == len(jobs):
                bad = sum(r.failed for r in records)
                print(f"... {done}/{len(jobs)} cases, {bad} failing, {time.perf_counter() - start:.0f} s",
                      file=sys.stderr, flush=True)
    finally:
        if pool is not None:
            pool.close()
            pool.join()
    records.sort(key=lambda r: r.index)
    print()
    print(f"property battery: seed {args.seed}, {len(records)} cases, {args.workers} workers, "
          f"{time.perf_counter() - start:.0f} s wall")
    print(battery.summarize(records))
    lines = battery.failure_lines(records)
    if lines:
        print()
        print(f"failing cases (rerun with --seed {args.seed} --only INDEX):")
        print("\n".join(lines))
    failed = any(r.failed for r in records)
    print()
    print("verdict:", "FAIL" if failed else "PASS",
          f"({sum(r.failed for r in records)} of {len(records)} cases failing)")
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main())
