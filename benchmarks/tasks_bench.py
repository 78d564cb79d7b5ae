"""Speed of ``cvdfilter.tasks``: tasks per second at 1,000 trials, against a floor measured in the same run.

A "task" is one filter x observer x task cell of the result (scored without and with the filter).
Work: 4 filters (the bundled examples) x 5 observers x each task, 1,000 arrangement trials.

Prints, per task kind, cells per second (best of --repeat runs, after one warm-up run that builds the
caches), and for the arrangement a floor: the same arithmetic as the greedy arranger's distance steps
(every cap against every cap, (filters + 1) x trials x caps x caps x 2 floats, per observer) done in one
dense numpy pass, and the ratio of the whole task to it. Timings, not assertions: the machine is shared and noisy.

Usage: python benchmarks/tasks_bench.py [--trials 1000] [--repeat 3]
"""

from __future__ import annotations

import argparse
import time

import numpy as np


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--trials", type=int, default=1000)
    ap.add_argument("--repeat", type=int, default=3)
    a = ap.parse_args()
    import cvdfilter

    filters = ["larkhill-notch-575", "larkhill-double-notch", "larkhill-rose-tint", "larkhill-grey-reference"]
    observers = ["normal", "protanomalous", "deuteranomalous", "protanope", "deuteranope"]
    for task in ("arrangement", "arrangement-fine", "plates", "rayleigh"):
        cvdfilter.tasks(filters, observers=observers, tasks=[task], trials=a.trials)  # warm-up
        best = np.inf
        for _ in range(a.repeat):
            t0 = time.perf_counter()
            cvdfilter.tasks(filters, observers=observers, tasks=[task], trials=a.trials)
            best = min(best, time.perf_counter() - t0)
        cells = len(filters) * len(observers)
        line = f"{task:17s} {cells / best:8.1f} tasks/s ({cells} cells in {best:.3f} s, {a.trials} trials)"
        if task.startswith("arrangement"):
            n = 16 if task == "arrangement" else 24
            x = np.random.default_rng(0).standard_normal(((len(filters) + 1) * a.trials, n, 2))
            floor = np.inf
            for _ in range(a.repeat):
                t0 = time.perf_counter()
                for _ in range(len(observers)):
                    ((x[:, :, None, :] - x[:, None, :, :]) ** 2).sum(-1).argmin(-1)
                floor = min(floor, time.perf_counter() - t0)
            line += f"; floor {floor:.3f} s, ratio {best / floor:.1f}x"
        print(line)


if __name__ == "__main__":
    main()
