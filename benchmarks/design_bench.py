"""Filter design: evaluations per second of the search against the scorer's own filters per second.

    .venv/bin/python benchmarks/design_bench.py [--budget 20000] [--pop-budget 2000] [--members 200]

Two cases (issue 16), each a two-notch family (``notch:k=2``) with two objectives (NSGA-II) and one
requirement (``white_shift<=0.02``):

1. one observer (``deuteranomalous``), objectives ``red_green_gain`` and ``luminous_transmittance``,
   ``--budget`` evaluations (the scorer's cheapest groups: photometry and contrast), and again with
   ``red_green_gain`` and ``confusion_pairs.net`` under ``luminous_transmittance>=0.43`` (the pair counts);
2. a population of ``--members`` (``deuteranomalous:n=M,seed=1``), objectives ``p2_5:red_green_gain``
   and ``luminous_transmittance`` (robust design), ``--pop-budget`` evaluations.

For each: the search's wall time and evaluations per second (everything: candidate curves, scoring,
reading the numbers, the optimiser), then the floor: the scorer alone (``cvdfilter.score`` on a FilterSet
of random candidates of the same family, the same observers and metric groups) on batches of the
search's population size, filters per second, and the ratio floor / search (target: at most 1.5, i.e.
the optimiser's overhead is small). The machine is shared; read the ratios. No test asserts any of this.
"""

from __future__ import annotations

import argparse
import time

import numpy as np


def _case(name: str, observer: str, maximise: list, budget: int, require: str = "white_shift<=0.02") -> None:
    from cvdfilter.designing.engine import DesignProblem, _Evaluator, _pop_size, score_batch, search
    from cvdfilter.designing.objectives import groups_needed, parse_metric, parse_requirement
    from cvdfilter.designing.spaces import parse_family
    from cvdfilter.spectra.filters import FilterSet

    space = parse_family("notch:k=2")
    objectives = [(parse_metric(m, observer), +1) for m in maximise]
    requirements = [parse_requirement(require, observer)]
    groups = groups_needed([m for m, _ in objectives] + [r.metric for r in requirements])
    problem = DesignProblem(space, [observer], objectives, requirements,
                            {"illuminant": "D65", "surfaces": "ces99", "adaptation": "full"}, groups)
    batch = _pop_size(budget, len(space.variables))
    # warm-up: reference data and caches, both paths
    _Evaluator(problem, batch, None, None)(np.random.default_rng(0).uniform(space.lower, space.upper, (4, 6)))

    t0 = time.perf_counter()
    archive, run = search(problem, budget=budget, seed=1)
    wall = time.perf_counter() - t0
    evals = run["evaluations"]

    rng = np.random.default_rng(2)
    reps = max(3, min(40, budget // batch // 5))
    sets = []
    for _ in range(reps):
        t = space.transmittance(rng.uniform(space.lower, space.upper, (batch, len(space.variables))))
        sets.append(FilterSet(tuple(f"f{i}" for i in range(batch)), t, space.grid, ("array",) * batch,
                              tuple({} for _ in range(batch))))
    t0 = time.perf_counter()
    for fs in sets:
        score_batch(fs, problem)
    floor = reps * batch / (time.perf_counter() - t0)
    rate = evals / wall
    print(f"{name}: {evals:,} evaluations ({run['generations']} generations of {batch}, stopped: {run['stopped']}) "
          f"in {wall:.1f} s = {rate:,.0f} evaluations/s")
    print(f"  scorer alone on batches of {batch} ({', '.join(groups)}): {floor:,.0f} filters/s; "
          f"ratio scorer / search = {floor / rate:.2f} (target <= 1.5)")


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--budget", type=int, default=20_000)
    ap.add_argument("--pop-budget", type=int, default=2_000)
    ap.add_argument("--members", type=int, default=200)
    args = ap.parse_args()
    _case("one observer", "deuteranomalous", ["red_green_gain", "luminous_transmittance"], args.budget)
    _case("one observer, pair counts", "deuteranomalous", ["red_green_gain", "confusion_pairs.net"], args.budget,
          require="luminous_transmittance>=0.43")
    _case(f"population of {args.members}", f"deuteranomalous:n={args.members},seed=1",
          ["p2_5:red_green_gain", "luminous_transmittance"], args.pop_budget)


if __name__ == "__main__":
    main()
