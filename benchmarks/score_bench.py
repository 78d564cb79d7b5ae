"""Throughput of ``cvdfilter.score`` on a parametric sweep, against two references measured in the same run.

Work: 10,000 parametric notch filters (a sweep of centre x FWHM x depth) x the 99
CIE 2017 colour evaluation samples x 4 observers (normal, protanomalous,
deuteranomalous, deuteranope), ``metrics="core"``: photometry, road use,
contrast gains, discriminable pairs and confusion pairs (the pair counts over
all 4,851 surface pairs included).

Prints
  * filters per second of ``score`` (best of --repeat runs, on a prebuilt FilterSet);
  * the floor: one float32 matmul giving every cone excitation,
    transmittances (filters x wavelengths) @ (wavelengths x surfaces*observers*3),
    and the ratio of ``score``'s time to it (target: at most 10x);
  * a per-filter colour-science loop doing only the cone excitations for one
    observer (``colour.msds_to_XYZ`` with the fundamentals as CMFs), timed on a
    subset, and ``score``'s speed-up over it (target: at least 20x);
  * against the absolute target of 10,000 filters/s.
Timings, not assertions: the machine is shared and noisy.

Each score run is bracketed by floor runs and followed by the loop; ratios are medians over the runs
(the machine's load changes from second to second). Best times are printed too.

Usage: python benchmarks/score_bench.py [--filters 10000] [--repeat 5] [--loop 50]
"""

from __future__ import annotations

import argparse
import pathlib
import sys
import time

import numpy as np

# Import the package from this checkout (robust to how it was installed).
sys.path.insert(0, str(pathlib.Path(__file__).resolve().parent.parent))

OBSERVERS = ["normal", "protanomalous", "deuteranomalous", "deuteranope"]
#: 100 centres x 10 FWHMs x 10 depths = 10,000 filters.
SWEEP = "notch:center=450..648/2,fwhm=10..100/10,depth=0.5..0.95/0.05"


def best_of(fn, repeat: int) -> float:
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return min(times)


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--filters", type=int, default=10_000)
    ap.add_argument("--repeat", type=int, default=5)
    ap.add_argument("--loop", type=int, default=50, help="filters in the colour-science loop per run (timed subset)")
    args = ap.parse_args()

    import cvdfilter
    from cvdfilter.observers.observer import observer
    from cvdfilter.spectra.filters import FilterSet, load_filters
    from cvdfilter.spectra.illuminants import illuminant
    from cvdfilter.spectra.surfaces import surface_set

    t0 = time.perf_counter()
    fs = load_filters(SWEEP)
    if len(fs) < args.filters:
        raise SystemExit(f"the sweep has {len(fs)} filters, fewer than --filters {args.filters}")
    fs = FilterSet(fs.names[:args.filters], fs.transmittance[:args.filters], fs.grid, fs.sources[:args.filters],
                   fs.info[:args.filters])
    t_build = time.perf_counter() - t0
    n = len(fs)
    surf = surface_set("ces99", fs.grid)
    ill = illuminant("D65", fs.grid)
    obs = [observer(o, fs.grid) for o in OBSERVERS]

    # Warm-up: caches, observers, first-call costs.
    cvdfilter.score(FilterSet(fs.names[:8], fs.transmittance[:8], fs.grid, fs.sources[:8], fs.info[:8]),
                    observers=OBSERVERS, metrics="core")

    # Floor: one float32 matmul giving every cone excitation.
    t32 = fs.transmittance.astype(np.float32)
    stim = ill.spd[:, None] * surf.reflectance  # (n_wl, n_surfaces)
    fund = np.concatenate([o.fundamentals for o in obs], axis=1)  # (n_wl, 3 * n_observers)
    basis = (stim[:, :, None] * fund[:, None, :]).reshape(fs.grid.size, -1).astype(np.float32)

    def floor():
        return t32 @ basis

    card = None

    def run():
        nonlocal card
        card = cvdfilter.score(fs, observers=OBSERVERS, metrics="core")

    # A per-filter colour-science loop doing only the cone excitations, one observer.
    import colour

    wl = fs.grid.wavelengths
    shape = colour.SpectralShape(wl[0], wl[-1], fs.grid.step)
    cmfs = colour.MultiSpectralDistributions(obs[0].fundamentals, wl, labels=["l", "m", "s"])
    msds = colour.MultiSpectralDistributions(surf.reflectance, wl)
    m = min(args.loop, n)

    def loop():
        for i in range(m):
            sd = colour.SpectralDistribution(ill.spd * fs.transmittance[i], wl)
            colour.msds_to_XYZ(msds, cmfs=cmfs, illuminant=sd, shape=shape, method="Integration")

    # Interleave: each score run is bracketed by floor runs and followed by the loop, so that
    # the ratios compare like with like on a machine whose load changes from second to second.
    scores, floors, loops, ratios, speedups = [], [], [], [], []
    for _ in range(args.repeat):
        f0 = best_of(floor, 3)
        t = best_of(run, 1)
        f1 = best_of(floor, 3)
        tl = best_of(loop, 1) / m  # seconds per filter
        scores.append(t)
        floors += [f0, f1]
        loops.append(tl)
        ratios.append(t / min(f0, f1))
        speedups.append((n / t) * tl)
    t_score, t_floor, t_loop = min(scores), min(floors), min(loops)

    rate = n / t_score
    floor_rate = n / t_floor
    loop_rate = 1.0 / t_loop
    ratio = float(np.median(ratios))
    speedup = float(np.median(speedups))
    print(f"filters x surfaces x observers : {n} x {len(surf)} x {len(obs)} (metrics=core, pair counts included)")
    print(f"building the sweep (spec parse): {t_build:.3f} s")
    print(f"score                          : {t_score:.3f} s = {rate:,.0f} filters/s  (target >= 10,000)")
    print(f"floor (one float32 matmul)     : {t_floor:.4f} s = {floor_rate:,.0f} filters/s")
    print(f"score / floor                  : {ratio:.1f}x  (target <= 10x; median of {len(ratios)} bracketed "
          f"runs: {', '.join(f'{r:.1f}' for r in ratios)})")
    print(f"colour-science loop, 1 observer: {loop_rate:,.0f} filters/s (msds_to_XYZ, {m} filters per run)")
    print(f"speed-up over the loop         : {speedup:.0f}x  (target >= 20x; median of runs: "
          f"{', '.join(f'{v:.0f}' for v in speedups)})")
    verdict = [("filters/s", rate >= 10_000), ("floor ratio", ratio <= 10), ("loop speed-up", speedup >= 20)]
    print("targets                        : " + ", ".join(f"{k} {'met' if ok else 'NOT met'}" for k, ok in verdict))
    d = card.to_dict()["filters"][0]
    print(f"first filter                   : {d['name']}, tau_v {d['luminous_transmittance']:.3f}, "
          f"deuteranope pairs {d['observers'][3]['discriminable_pairs']}")


if __name__ == "__main__":
    main()
