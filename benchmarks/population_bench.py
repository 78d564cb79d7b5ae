"""Scoring an observer population: filter x member evaluations per second against a floor (issue 13).

    .venv/bin/python benchmarks/population_bench.py [--members 1000] [--filters 100] [--spec deuteranomalous]
                                                    [--repeat 3]

One population (``SPEC:n=MEMBERS,seed=1``) x ``--filters`` parametric notch filters x the 99 CES surfaces,
``score(..., metrics="core")`` (contrast gains and the pair counts and medians); prints

* wall time of the population build (every member's fundamentals and its normal counterpart's, made once
  per population whatever the filters) and of the scoring, filter x member evaluations per second (target
  at least 100,000 on this machine), and the same rate counting the build;
* the floor: float32 products giving every cone excitation of every member for every filter and
  surface, (filters x wavelengths) @ (wavelengths x members*3*(surfaces + 1)), timed in blocks of 1,000
  members, and the ratio scoring / floor (target at most 10x);
* the CPU time of the scoring and the load average (the machine is shared: CPU seconds say more than
  wall time under load);
* peak RSS of the process after scoring (target under 2 GB for 10,000 members x 100 filters), and with
  the floor's arrays.

The scoring runs ``--repeat`` times on the same population (every run gives the same bits): the figures are
the fastest run's, with the slowest and the median beside them, since a shared machine's neighbours only ever
slow a run down. Runs in one process; read the ratios. No test asserts any of this.
"""

from __future__ import annotations

import argparse
import os
import resource
import time

import numpy as np


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--members", type=int, default=1000)
    ap.add_argument("--filters", type=int, default=100)
    ap.add_argument("--spec", default="deuteranomalous")
    ap.add_argument("--repeat", type=int, default=3, help="scoring runs; the fastest is reported (default 3)")
    args = ap.parse_args()

    import cvdfilter as cf

    step = 90.0 / max(args.filters - 1, 1)
    centres = ",".join(f"{530 + step * i:.4f}" for i in range(args.filters))
    fs = cf.load_filters([f"notch:center={c},fwhm=30,depth=0.8" for c in centres.split(",")])
    surf = cf.surface_set("ces99")
    ill = cf.illuminant("D65")
    # warm-up: a block of 32 members loads (or compiles, the first time) the pair kernel outside the timing
    cf.score(fs, observers=[f"{args.spec}:n=32,seed=1"], metrics="core")

    t = time.perf_counter()
    pop = cf.population(f"{args.spec}:n={args.members},seed=1")
    fundamentals = pop.fundamentals
    base = pop.base_fundamentals  # each member's normal counterpart (the pair metrics' normally discriminable pairs)
    t_build = time.perf_counter() - t
    assert base.shape == fundamentals.shape

    runs = []
    for _ in range(max(1, args.repeat)):
        t, c = time.perf_counter(), time.process_time()
        card = cf.score(fs, observers=[pop], metrics="core", illuminant=ill, surfaces=surf)
        runs.append((time.perf_counter() - t, time.process_time() - c))
        assert len(card) == len(fs)
        del card
    t_score, c_score = min(runs)
    walls = sorted(w for w, _ in runs)

    rss_score = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    stimuli = (ill.spd[:, None] * np.concatenate([surf.reflectance, np.ones((len(ill.spd), 1))], axis=1))
    stimuli = stimuli.astype(np.float32)
    T = fs.transmittance.astype(np.float32)
    t_floor = 0.0
    for lo in range(0, args.members, 1000):  # blocks of members keep the floor's arrays near 0.5 GB
        f32 = fundamentals[lo:lo + 1000].astype(np.float32).transpose(1, 0, 2)
        B = (f32[:, :, :, None] * stimuli[:, None, None, :]).reshape(len(ill.spd), -1)
        t = time.perf_counter()
        Q = T @ B
        t_floor += time.perf_counter() - t
        del Q, B

    evals = len(fs) * args.members
    rss = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024  # including the floor's arrays
    print(f"population {pop.spec}")
    print(f"{len(fs)} filters x {args.members} members x {len(surf)} surfaces, metrics core")
    print(f"build        {t_build:8.3f} s")
    print(f"score        {t_score:8.3f} s   {evals / t_score:10.0f} filter x member evaluations/s (target >= 100,000)")
    print(f"runs         {len(runs):8d}     fastest {walls[0]:.3f} s, median {walls[len(walls) // 2]:.3f} s, slowest "
          f"{walls[-1]:.3f} s ({evals / walls[len(walls) // 2]:,.0f} evaluations/s at the median)")
    total = t_build + t_score
    print(f"with build   {total:8.3f} s   {evals / total:10.0f} filter x member evaluations/s")
    print(f"score CPU    {c_score:8.3f} s   (all threads; {evals / c_score:,.0f} evaluations per CPU-second; load "
          f"average {os.getloadavg()[0]:.1f} on {os.cpu_count()} CPUs)")
    print(f"floor        {t_floor:8.3f} s   (one float32 product, every cone excitation)")
    print(f"ratio        {t_score / t_floor:8.1f} x the floor (target <= 10)")
    print(f"peak RSS     {rss_score:8.0f} MiB after scoring (target < 2 GB at 10,000 members x 100 filters); "
          f"{rss:.0f} MiB with the floor's arrays")


if __name__ == "__main__":
    main()
