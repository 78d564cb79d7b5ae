"""Number of discernible colours: speed against a floor measured in the same run (issue 15).

    .venv/bin/python benchmarks/discernible_bench.py [--repeat 5] [--size 1000]

A 1-megapixel (1000 x 1000), 31-band synthetic scene (``cvdfilter.synthetic_scene``), five
observers (normal, protanomalous, deuteranomalous, protanope, deuteranope), with and without
one notch filter: ``cvdfilter.discernible_colours`` against a floor made of

* the cube-to-cone products (one float32 (pixels x 31) @ (31 x 3 x conditions) matmul),
* per condition: one 3x3 product to XYZ, CIELAB, integer cube indices and the occupied-cell count
  (the same plane functions the API uses).

The API does more: float64 products (so that a model invariance is not broken by rounding at a cube
boundary), the von Kries gains and the simulation's half-space test for dichromats.

Also the scorecard's ``discernible`` group on the same scene, and a 150-filter sweep on the ``munsell`` set
(filter x observer counts per second). Target (issue 15): at most 2 s. Times are medians; the machine is
shared, so read the ratio.

Populations (``--population``, default ``deuteranomalous:n=50,seed=1``): the group for every member of a
population at once, on the ``munsell`` set with 1 and 150 filters and on the scene (edge ``--population-size``)
with one filter; each case once after a warm-up, with wall and CPU seconds, the load average and the peak
resident memory of the run (VmHWM, reset before the case; Linux). ``--population-only`` skips the rest.
No test asserts any of this.
"""

from __future__ import annotations

import argparse
import os
import statistics
import time

import numpy as np


def _floor(samples: np.ndarray, weights: np.ndarray, m: np.ndarray) -> int:
    """The least work: one float32 product for every condition, then per condition one 3x3 product,
    CIELAB (float32 after the ratio to the white) and the count (both on planes, as the API)."""
    from cvdfilter.metrics.discernible import count_planes, lab_planes

    lms = weights.T @ samples.T  # (3 x conditions, pixels)
    white = m @ np.ones(3)
    total = 0
    for c in range(weights.shape[1] // 3):
        xyz = m.astype(np.float32) @ lms[3 * c:3 * c + 3]
        total += count_planes(lab_planes(xyz, white, dtype=np.float32))
    return total


def _peak_reset() -> bool:
    """Reset the process's peak resident memory (Linux: /proc/self/clear_refs, 5); False where unsupported."""
    try:
        with open("/proc/self/clear_refs", "w") as fh:
            fh.write("5")
        return True
    except OSError:
        return False


def _peak_mib() -> float:
    """Peak resident memory of this process since the last reset (VmHWM), MiB; nan where unknown."""
    try:
        with open("/proc/self/status") as fh:
            for line in fh:
                if line.startswith("VmHWM:"):
                    return int(line.split()[1]) / 1024
    except OSError:
        pass
    return float("nan")


def _population_cases(pop: str, size: int) -> None:
    """The group for a population's members: wall and CPU seconds, load average, peak memory per case."""
    import cvdfilter
    from cvdfilter.scorecard import score

    scene = cvdfilter.synthetic_scene(seed=1, shape=(size, size), bands=31)
    flt = "notch:center=575,fwhm=35,depth=0.8"
    sweep = "notch:center=500..649/1,fwhm=30,depth=0.8"
    score(flt, surfaces="munsell", metrics="discernible", observers=[pop])  # warm-up (caches, imports)
    cases = [(f"munsell, 1 filter x {pop}", dict(filters=flt, surfaces="munsell")),
             (f"munsell, 150 filters x {pop}", dict(filters=sweep, surfaces="munsell")),
             (f"scene {size}x{size}, 1 filter x {pop}", dict(filters=flt, scenes=[scene]))]
    for label, kw in cases:
        reset = _peak_reset()
        t, c = time.perf_counter(), time.process_time()
        card = score(metrics="discernible", observers=[pop], **kw)
        wall, cpu = time.perf_counter() - t, time.process_time() - c
        load = os.getloadavg()
        peak = f"peak RSS {_peak_mib():.0f} MiB" if reset else "peak RSS n/a"
        w = card.per_observer[0]["discernible_with"]
        print(f"population: {label}: wall {wall:.2f} s, CPU {cpu:.2f} s, load {load[0]:.2f} {load[1]:.2f}, "
              f"{peak}; {w.size} counts (filters x members), sum {int(np.nansum(w))}")


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--repeat", type=int, default=5)
    ap.add_argument("--size", type=int, default=1000, help="scene edge, pixels (default 1000: 1 MP)")
    ap.add_argument("--population", default="deuteranomalous:n=50,seed=1", help="population spec of the "
                    "population cases")
    ap.add_argument("--population-size", type=int, default=500, help="scene edge of the population case")
    ap.add_argument("--population-only", action="store_true", help="run only the population cases")
    args = ap.parse_args()
    if args.population_only:
        _population_cases(args.population, args.population_size)
        return

    import cvdfilter
    from cvdfilter.observers.fundamentals import LMS_TO_XYZ_2DEG

    t0 = time.perf_counter()
    scene = cvdfilter.synthetic_scene(seed=1, shape=(args.size, args.size), bands=31)
    print(f"scene {args.size}x{args.size}x31 made in {time.perf_counter() - t0:.2f} s")
    observers = ["normal", "protanomalous", "deuteranomalous", "protanope", "deuteranope"]
    flt = "notch:center=575,fwhm=35,depth=0.8"
    r = cvdfilter.discernible_colours(scene, filter=flt, observers=observers)  # warm-up (caches)
    samples = scene.data.reshape(-1, 31)
    rng = np.random.default_rng(0)
    n_cond = len(observers) * 2 + 1  # + the normal reference (shared base)
    weights = rng.uniform(0, 1, (31, 3 * n_cond)).astype(np.float32)
    api, floor = [], []
    for _ in range(args.repeat):
        t = time.perf_counter()
        cvdfilter.discernible_colours(scene, filter=flt, observers=observers)
        api.append(time.perf_counter() - t)
        t = time.perf_counter()
        _floor(samples, weights, LMS_TO_XYZ_2DEG)
        floor.append(time.perf_counter() - t)
    a, f = statistics.median(api), statistics.median(floor)
    print(f"discernible_colours: median {a:.3f} s (best {min(api):.3f} s) over {args.repeat} runs; target <= 2 s")
    print(f"floor (products + CIELAB + unique count, {n_cond} conditions): median {f:.3f} s; ratio {a / f:.2f}x")
    for j, o in enumerate(r.observers):
        print(f"  {o:32s} without {r.without[j]:7d}  with {r.with_filter[0, j]:7d}  "
              f"ratio {r.ratio[0, j]:.3f}  to normal {r.ratio_to_normal[j]:.3f}")
    # the scorecard's group (score --metrics discernible --scene): chunks of filters, vectorised over them
    from cvdfilter.scorecard import score

    card_t = []
    for _ in range(args.repeat):
        t = time.perf_counter()
        score(flt, scenes=[scene], metrics="discernible", observers=observers)
        card_t.append(time.perf_counter() - t)
    c = statistics.median(card_t)
    print(f"score --metrics discernible --scene (1 filter): median {c:.3f} s; ratio to the floor {c / f:.2f}x")
    sweep = "notch:center=500..649/1,fwhm=30,depth=0.8"  # 150 filters on the munsell set
    t = time.perf_counter()
    card = score(sweep, surfaces="munsell", metrics="discernible", observers=observers)
    s_t = time.perf_counter() - t
    n = len(card) * len(observers)
    print(f"score --metrics discernible --surfaces munsell, {len(card)} filters x 5 observers: {s_t:.2f} s, "
          f"{n / s_t:.0f} filter-observer counts/s")
    _population_cases(args.population, args.population_size)


if __name__ == "__main__":
    main()
