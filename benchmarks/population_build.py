"""Building observer populations: wall time and peak memory against a floor measured in the same run.

    .venv/bin/python benchmarks/population_build.py [--sizes 1000 10000] [--spec deuteranomalous]

For each size n, a fresh subprocess builds ``cvdfilter.population(f"{spec}:n={n},seed=1")`` and its
``.fundamentals`` (n, 401, 3) on the default grid, and reports

* wall time of the build (after the imports and the one-off scipy spline set-up, which a warm-up
  population of 2 members pays), members per second;
* the floor: one pass of ``10 ** (-x)`` over an (n, 441, 3) float64 array (the cheapest step the model
  cannot avoid: self-screening alone), and the ratio build / floor;
* the build subprocess's peak RSS, the part of it above the warmed-up process (imports and a
  2-member population), and the size of the result array.

Times are medians of ``--repeat`` runs in the subprocess; the machine is shared, read the ratios. No test
asserts any of this. The scoring benchmark for populations (members x filters) comes with the scorecard.
"""

from __future__ import annotations

import argparse
import json
import subprocess
import sys

_CHILD = r"""
import json, resource, sys, time
import numpy as np
mode, spec, n, repeat = sys.argv[1], sys.argv[2], int(sys.argv[3]), int(sys.argv[4])
times = []
if mode == "build":
    import cvdfilter
    cvdfilter.population(f"{spec}:n=2,seed=1").fundamentals  # warm-up: imports, splines, tables
    base = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * 1024
    for _ in range(repeat):
        t = time.perf_counter()
        pop = cvdfilter.population(f"{spec}:n={n},seed=1")
        f = pop.fundamentals
        times.append(time.perf_counter() - t)
        del pop, f
else:
    base = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * 1024
    for _ in range(repeat):
        x = np.random.default_rng(0).random((n, 441, 3))
        t = time.perf_counter()
        y = 10.0 ** (-x)
        times.append(time.perf_counter() - t)
        del x, y
rss = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * 1024
print(json.dumps({"time": float(np.median(times)), "rss": rss, "base": base}))
"""


def _child(mode: str, spec: str, n: int, repeat: int) -> dict:
    out = subprocess.run([sys.executable, "-c", _CHILD, mode, spec, str(n), str(repeat)],
                         capture_output=True, text=True, check=True)
    return json.loads(out.stdout.strip().splitlines()[-1])


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--sizes", type=int, nargs="+", default=[1000, 10000])
    ap.add_argument("--spec", default="deuteranomalous")
    ap.add_argument("--repeat", type=int, default=3)
    args = ap.parse_args()
    print(f"population build, spec {args.spec}:n=N,seed=1, default grid 380-780 nm / 1 nm")
    print(f"{'n':>7} {'wall s':>8} {'members/s':>10} {'floor s':>8} {'x floor':>8} {'peak RSS MiB':>13} "
          f"{'above warm MiB':>13} {'result MiB':>11}")
    for n in args.sizes:
        b = _child("build", args.spec, n, args.repeat)
        f = _child("floor", args.spec, n, args.repeat)
        print(f"{n:>7} {b['time']:>8.3f} {n / b['time']:>10.0f} {f['time']:>8.3f} {b['time'] / f['time']:>8.1f} "
              f"{b['rss'] / 2**20:>13.0f} {(b['rss'] - b['base']) / 2**20:>13.0f} {n * 401 * 3 * 8 / 2**20:>11.1f}")

if __name__ == "__main__":
    main()
