"""The search: candidates scored a generation at a time, constraints as constraints, every result re-scored.

For one objective, scipy's differential evolution (Storn & Price 1997; ``vectorized=True``, the
requirements as ``NonlinearConstraint`` handled by Lampinen's (2002) feasibility rules); for two or
more, pymoo's NSGA-II (Deb et al. 2002; constraint violations with its constrained-domination rule).
Each generation is one call of :func:`score_batch`: every candidate's curve is built in one array
operation (:meth:`~cvdfilter.designing.spaces.DesignSpace.transmittance`) and the whole batch goes through
:func:`cvdfilter.score` as one :class:`~cvdfilter.spectra.filters.FilterSet`. Every candidate ever
scored is kept (:class:`Archive`), so a search stopped by its budget, its time limit, convergence or
Ctrl-C reports the best designs found so far.

The designs reported are taken from the archive (rounded to their spec precision, feasible, the
Pareto set or the best, no two curves closer than :data:`MIN_CURVE_DIFFERENCE`), re-scored with the
ordinary scorer from their spec strings or curves, and kept only if that re-score meets every
requirement.

Public: :class:`DesignProblem`, :class:`Archive`, :func:`score_batch`, :func:`search`, :func:`select`,
:data:`MIN_CURVE_DIFFERENCE`.
"""

from __future__ import annotations

import time
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ..errors import InputError
from .objectives import Metric, Requirement
from .reading import metric_values
from .spaces import DesignSpace

__all__ = ["DesignProblem", "Archive", "score_batch", "search", "select", "MIN_CURVE_DIFFERENCE",
           "WORST", "StopReason"]

#: Two reported designs differ somewhere by at least this much transmittance (a choice of ours, so that
#: the table does not list one design many times over in the last digits).
MIN_CURVE_DIFFERENCE = 0.01
#: The value an undefined objective takes inside the search (minimised; worse than any real value).
WORST = 1e12
#: Stop reasons written in the output.
StopReason = ("budget", "converged", "time", "interrupted")


@dataclass
class DesignProblem:
    """What is searched: the space, the observers scored, objectives (metric, +1 maximise / -1 minimise),
    requirements, and the scorer's settings (``illuminant``, ``surfaces``, ``adaptation``)."""

    space: DesignSpace
    observers: list
    objectives: list
    requirements: list
    score_kwargs: dict
    groups: list
    task_trials: int = 50
    task_seed: int = 0
    #: Where each generation's chunks run: a ``--scheduler`` value or an open
    #: :class:`~cvdfilter.execution.Executor` (design() opens one for the whole run).
    scheduler: Any = None

    def observer_index(self, metric: Metric) -> int | None:
        return None if metric.observer is None else self.observers.index(metric.observer)

    def metrics(self) -> list:
        """Every metric of the objectives and requirements."""
        return [m for m, _ in self.objectives] + [r.metric for r in self.requirements]


def score_batch(filters, problem: DesignProblem, metrics=None):
    """Score one batch of filters with the problem's observers and settings: the one place a
    generation is scored, on the problem's executor (:mod:`cvdfilter.execution`)."""
    from ..metrics import pair_kernel  # noqa: F401 - many small batches: the compiled pair statistics pay off
    from ..scorecard import score

    groups = metrics if isinstance(metrics, str) else list(metrics or problem.groups)
    return score(filters, observers=list(problem.observers), metrics=groups, scheduler=problem.scheduler,
                 **problem.score_kwargs)


@dataclass
class Archive:
    """Every candidate scored: parameters ``x`` (n, variables), objective values (n, objectives; the
    metrics' own values and signs), requirement violations (n, requirements; 0 = met)."""

    x: list = field(default_factory=list)
    values: list = field(default_factory=list)
    violations: list = field(default_factory=list)

    def arrays(self, n_var: int, n_obj: int, n_req: int):
        if not self.x:
            return np.zeros((0, n_var)), np.zeros((0, n_obj)), np.zeros((0, n_req))
        return np.vstack(self.x), np.vstack(self.values), np.vstack(self.violations)


class _Stop(Exception):
    pass


class _Evaluator:
    """Scores batches of candidates (one :func:`score_batch` call each), keeps the archive, counts
    evaluations and says when to stop."""

    def __init__(self, problem: DesignProblem, budget: int, time_limit: float | None, progress,
                 checkpoint=None) -> None:
        self.problem = problem
        self.checkpoint = checkpoint  # a designing.checkpoint.Checkpoint: earlier scores, saved as it goes
        self.budget = budget
        self.time_limit = time_limit
        self.progress = progress
        self.archive = Archive()
        self.evaluations = 0
        self.start = time.perf_counter()
        self.cache: dict = {}
        self.use_cache = len(problem.objectives) == 1

    def __call__(self, x: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Objective values (n, objectives) and violations (n, requirements) of candidates x (n, variables);
        candidates a resumed checkpoint holds are answered from it, the others scored in one batch."""
        p = self.problem
        x = np.clip(np.atleast_2d(np.asarray(x, dtype=float)), p.space.lower, p.space.upper)
        if self.checkpoint is None:
            values, viol = self._score(x)
        else:
            values, viol = self.checkpoint.answer(x, self._score)
        self.archive.x.append(x)
        self.archive.values.append(values)
        self.archive.violations.append(viol)
        self.evaluations += len(x)
        if self.checkpoint is not None:
            self.checkpoint.save_every(self.archive, self.evaluations)
        if self.use_cache:  # differential evolution asks for constraints and energies separately
            for row, v, g in zip(x, values, viol):
                self.cache[row.tobytes()] = (v, g)
            if len(self.cache) > 200_000:
                self.cache.clear()
        if self.progress is not None:
            self.progress(self.evaluations, self.budget)
        return values, viol

    def _score(self, x: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Score candidates x (n, variables): one scorer batch, and one tasks call when a metric needs it."""
        from ..spectra.filters import FilterSet
        from .task_scores import task_values

        p = self.problem
        t = p.space.transmittance(x)
        n = len(x)
        fs = FilterSet(tuple(f"candidate {i + 1}" for i in range(n)), t, p.space.grid, ("array",) * n,
                       tuple({} for _ in range(n)))
        card = score_batch(fs, p)
        tasks = task_values(fs, p)

        def read(m):
            return tasks[m.text] if m.text in tasks else metric_values(card, m, p.observer_index(m))

        values = np.column_stack([read(m) for m, _ in p.objectives]) if p.objectives else np.zeros((n, 0))
        viol = np.column_stack([r.violation(read(r.metric)) for r in p.requirements]) \
            if p.requirements else np.zeros((n, 0))
        return values, viol

    def minimised(self, values: np.ndarray) -> np.ndarray:
        """Objective values turned into quantities to minimise (undefined -> :data:`WORST`)."""
        signs = np.array([-s for _, s in self.problem.objectives], dtype=float)
        f = values * signs
        return np.where(np.isfinite(f), f, WORST)

    def lookup(self, x: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Values and violations of candidates, scoring in one batch those not yet scored."""
        x = np.atleast_2d(x)
        if x.shape[0] == 0:
            return (np.zeros((0, len(self.problem.objectives))), np.zeros((0, len(self.problem.requirements))))
        missing = [i for i, row in enumerate(x) if row.tobytes() not in self.cache]
        if missing:
            self(x[missing])
        got = [self.cache.get(row.tobytes()) for row in x]
        if any(g is None for g in got):  # clipped rows are stored clipped: score those again
            return self(x)
        return np.vstack([g[0] for g in got if g is not None]), np.vstack([g[1] for g in got if g is not None])

    def out_of_time(self) -> bool:
        return self.time_limit is not None and time.perf_counter() - self.start > self.time_limit


def _pop_size(budget: int, n_var: int) -> int:
    """NSGA-II population: about a twentieth of the budget, 20-100, even."""
    return int(min(100, max(20, budget // 20))) // 2 * 2


def search(problem: DesignProblem, *, budget: int, seed: int, time_limit: float | None = None,
           progress=None, checkpoint=None) -> tuple[Archive, dict]:
    """Run the optimiser; returns the archive and a record of the run (algorithm, evaluations, stop).

    ``checkpoint`` (:class:`~cvdfilter.designing.checkpoint.Checkpoint`) keeps the archive on disk as the
    search goes and answers, on a resumed run, the candidates it already holds (the optimiser is replayed
    from its seed, so a resumed run asks for the same candidates as an uninterrupted one)."""
    ev = _Evaluator(problem, budget, time_limit, progress, checkpoint)
    n_obj = len(problem.objectives)
    stopped = "budget"
    try:
        if n_obj == 1:
            record, stopped = _differential_evolution(problem, ev, budget, seed)
        else:
            record, stopped = _nsga2(problem, ev, budget, seed)
    except KeyboardInterrupt:  # Ctrl-C: the archive holds every candidate scored so far
        record = {"algorithm": "differential evolution (scipy)" if n_obj == 1 else "NSGA-II (pymoo)"}
        stopped = "interrupted"
    record.update({"evaluations": ev.evaluations, "budget": budget, "stopped": stopped, "seed": seed})
    if checkpoint is not None:
        checkpoint.save(ev.archive, ev.evaluations, stopped)
        record.update(checkpoint.record())
    return ev.archive, record


def _differential_evolution(problem: DesignProblem, ev: _Evaluator, budget: int, seed: int):
    import scipy
    from scipy.optimize import NonlinearConstraint, differential_evolution

    space = problem.space
    n_var = len(space.variables)
    popsize = 15 if budget >= 15 * n_var * 4 else max(2, budget // (4 * n_var))
    per_generation = popsize * n_var
    state = {"stopped": "converged", "generations": 0}

    def energy(x):  # x: (variables, candidates), as vectorized=True sends it
        values, _ = ev.lookup(x.T)
        return ev.minimised(values)[:, 0]

    constraints: tuple = ()
    if problem.requirements:
        def violations(x):
            return ev.lookup(x.T)[1].T

        constraints = (NonlinearConstraint(violations, -np.inf, 0.0),)

    def callback(intermediate_result):
        state["generations"] += 1
        if ev.evaluations + per_generation > budget:
            state["stopped"] = "budget"
            return True
        if ev.out_of_time():
            state["stopped"] = "time"
            return True
        return False

    differential_evolution(energy, list(zip(space.lower, space.upper)), popsize=popsize, maxiter=10**6,
                           rng=np.random.default_rng(seed), polish=False, vectorized=True, updating="deferred",
                           constraints=constraints, callback=callback, init="latinhypercube")
    return ({"algorithm": "differential evolution (Storn & Price 1997), scipy.optimize.differential_evolution, "
                          "best1bin; requirements as constraints with Lampinen's feasibility rules",
             "library": f"scipy {scipy.__version__}", "population": per_generation,
             "generations": state["generations"], "convergence_tol": 0.01}, state["stopped"])


def _nsga2(problem: DesignProblem, ev: _Evaluator, budget: int, seed: int):
    import pymoo
    from pymoo.algorithms.moo.nsga2 import NSGA2
    from pymoo.core.problem import Problem
    from pymoo.termination.default import DefaultMultiObjectiveTermination

    space = problem.space
    n_var, n_obj, n_req = len(space.variables), len(problem.objectives), len(problem.requirements)

    class _Problem(Problem):
        def __init__(self):
            super().__init__(n_var=n_var, n_obj=n_obj, n_ieq_constr=n_req, xl=space.lower, xu=space.upper)

        def _evaluate(self, x, out, *args, **kwargs):
            values, viol = ev(x)
            out["F"] = ev.minimised(values)
            if n_req:
                out["G"] = viol

    pop = _pop_size(budget, n_var)
    # Duplicate elimination off: with real-valued SBX crossover and polynomial mutation an offspring equals
    # a parent only when neither operator fires (a few per cent), and pymoo's elimination (pairwise distances
    # and repeated mating in Python) cost about 40 % of the search's time in benchmarks/design_bench.py.
    algorithm = NSGA2(pop_size=pop, eliminate_duplicates=False)
    termination = DefaultMultiObjectiveTermination(xtol=1e-8, cvtol=1e-6, ftol=0.0025, period=30,
                                                   n_max_gen=10**6, n_max_evals=budget)
    pm = _Problem()
    algorithm.setup(pm, termination=termination, seed=seed, verbose=False)
    stopped = "converged"
    while algorithm.has_next():
        if ev.evaluations + pop > budget and ev.evaluations > 0:
            stopped = "budget"
            break
        if ev.out_of_time():
            stopped = "time"
            break
        infills = algorithm.ask()
        algorithm.evaluator.eval(pm, infills)
        algorithm.tell(infills=infills)
    else:
        stopped = "budget" if ev.evaluations >= budget - pop else "converged"
    return ({"algorithm": "NSGA-II (Deb et al. 2002), pymoo; requirements as inequality constraints "
                          "(constrained domination)", "library": f"pymoo {pymoo.__version__}",
             "population": pop, "generations": int(algorithm.n_gen or 0), "duplicate_elimination": False,
             "convergence": "pymoo default multi-objective termination: ftol 0.0025 over 30 generations"},
            stopped)


def _nondominated(f: np.ndarray) -> np.ndarray:
    """Indices of the rows of f (to minimise) that no other row dominates."""
    if len(f) == 0:
        return np.zeros(0, dtype=int)
    from pymoo.util.nds.non_dominated_sorting import NonDominatedSorting

    return np.sort(NonDominatedSorting().do(f, only_non_dominated_front=True))


def select(problem: DesignProblem, archive: Archive, *, top: int) -> np.ndarray:
    """Candidate designs from the archive, best first: rounded, feasible, distinct (a few more than
    ``top``, since the re-score may drop some). Raises InputError when no candidate met every requirement."""
    space = problem.space
    n_var, n_obj, n_req = len(space.variables), len(problem.objectives), len(problem.requirements)
    x, values, viol = archive.arrays(n_var, n_obj, n_req)
    feasible = np.all(viol <= 0, axis=1) if n_req else np.ones(len(x), dtype=bool)
    if not feasible.any():
        raise InputError(_infeasible_message(problem, viol))
    x, values = x[feasible], values[feasible]
    signs = np.array([-s for _, s in problem.objectives], dtype=float)
    f = np.where(np.isfinite(values * signs), values * signs, WORST)
    if n_obj == 1:
        order = np.lexsort((np.arange(len(f)), f[:, 0]))
    else:
        front = _nondominated(f)
        order = front[np.lexsort((front, f[front, 0]))]
    x = space.round(x[order])
    curves = space.transmittance(x)
    chosen: list[int] = []
    for i in range(len(x)):
        if chosen and np.min(np.max(np.abs(curves[chosen] - curves[i]), axis=1)) < MIN_CURVE_DIFFERENCE:
            continue
        chosen.append(i)
        if len(chosen) >= 3 * top and n_obj == 1:
            break
    picked = x[chosen]
    if n_obj > 1 and len(picked) > 3 * top:  # thin the front evenly along the first objective
        idx = np.unique(np.round(np.linspace(0, len(picked) - 1, 3 * top)).astype(int))
        picked = picked[idx]
    return picked


def _infeasible_message(problem: DesignProblem, viol: np.ndarray) -> str:
    """One line: no design met every requirement, and which requirement the nearest candidate missed."""
    reqs: list[Requirement] = problem.requirements
    total = viol.sum(axis=1)
    best = int(np.argmin(total)) if len(total) else 0
    missed = [r.text for r, g in zip(reqs, viol[best]) if g > 0] if len(total) else [r.text for r in reqs]
    return (f"no design in the family meets every requirement ({len(viol)} candidates scored); the nearest "
            f"still misses: {'; '.join(missed)} (relax it, or widen the family's bounds)")
