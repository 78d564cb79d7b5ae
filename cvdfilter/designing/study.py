"""``cvdfilter.design``: the best filters of a family for an observer, under requirements.

:func:`design` parses the family, objectives and requirements (every input checked before any
scoring), runs the search (:mod:`cvdfilter.designing.engine`), re-scores the chosen designs with the
ordinary scorer and returns a :class:`DesignResult`, whose views are the files ``cvdfilter design``
writes: ``designs.json`` (:meth:`DesignResult.to_dict`), ``designs.csv``, one curve file per design in
``curves/``, the Pareto figure and the spectrum figure of the best designs.

A design is the optimum of a model, not a clinical recommendation (docs/design.md).

Public: :func:`design`, :class:`DesignResult`, :data:`DEFAULT_BUDGET`, :data:`DEFAULT_TOP`.
"""

from __future__ import annotations

import shlex
from typing import Any

import numpy as np

from ..errors import InputError
from .engine import DesignProblem, score_batch, search, select
from .objectives import groups_needed, parse_metric, parse_requirement
from .result import DesignResult
from .reading import entry_value
from .spaces import parse_family
from .task_scores import DEFAULT_TASK_TRIALS, attach_task_scores

__all__ = ["design", "DesignResult", "DEFAULT_BUDGET", "DEFAULT_TOP", "MAX_BUDGET"]

DEFAULT_BUDGET = 2000
DEFAULT_TOP = 10
MAX_BUDGET = 10_000_000


def _as_list(x) -> list:
    if x is None:
        return []
    return [x] if isinstance(x, str) else list(x)


def _command(observers, maximise, minimise, require, family, budget, seed, top, references, illuminant,
             surfaces, adaptation, output, metrics="all") -> str:
    parts = ["cvdfilter", "design"]
    for o in observers:
        parts += ["--observer", o]
    for m in maximise:
        parts += ["--maximise", m]
    for m in minimise:
        parts += ["--minimise", m]
    for r in require:
        parts += ["--require", r]
    parts += ["--family", family, "--budget", str(budget), "--seed", str(seed), "--top", str(top)]
    if references is not None:
        for r in references:
            parts += ["--reference", r]
        if not references:
            parts += ["--no-references"]
    if illuminant != "D65":
        parts += ["--illuminant", str(illuminant)]
    if surfaces != "ces99":
        parts += ["--surfaces", str(surfaces)]
    if str(adaptation) != "full":
        parts += ["--adaptation", str(adaptation)]
    if metrics != "all":
        parts += ["--metrics", metrics if isinstance(metrics, str) else ",".join(metrics)]
    parts += ["-o", str(output or "DIR")]
    return " ".join(shlex.quote(p) for p in parts)


def design(observer, *, maximise=(), minimise=(), require=(), family: str = "notch:k=1",
           budget: int = DEFAULT_BUDGET, seed: int = 0, top: int = DEFAULT_TOP, references=None,
           illuminant: str = "D65", surfaces: str = "ces99", adaptation="full", time_limit: float | None = None,
           metrics="all", progress=None, output: str | None = None, task_trials: int = DEFAULT_TASK_TRIALS,
           checkpoint=None, resume: bool = False, scheduler=None) -> DesignResult:
    """Search a family of filters for the best designs for an observer, under requirements.

    Parameters
    ----------
    observer : str or sequence of str
        The observer designed for (a spec; ``n=N`` makes it a population); further specs are scored too
        (metrics name them in brackets: ``discriminable_pairs.lost[normal]``).
    maximise, minimise : str or sequence of str
        Metrics (scorecard keys, ``discernible_colours.ratio``, task scores ``tasks.TASK.KEY``;
        :mod:`cvdfilter.designing.objectives`); one gives the best designs, two or more a Pareto set.
    require : str or sequence of str
        Requirements, e.g. ``luminous_transmittance>=0.43``, ``road_use.suitable``, ``white_shift<=0.01``.
    family : str
        ``notch:k=1..3[,...]`` or ``spline:k=K`` (:mod:`cvdfilter.designing.spaces`).
    budget, seed, top : int
        Most candidates scored; seed of the optimiser and of the task trials; most designs reported.
    references : sequence of str, optional
        Filters scored beside the designs for comparison; default the bundled (invented) examples.
    illuminant, surfaces, adaptation
        As for :func:`cvdfilter.score` (``discernible_colours`` needs ``surfaces="munsell"`` or a scene).
    metrics : str or sequence
        The scorer's metric groups in each design's scorecard entry, besides those the objectives need.
    time_limit : float, optional
        Stop the search after this many seconds (the result then depends on the machine's speed).
    progress : callable, optional
        ``progress(evaluations, budget)`` after every generation.
    output : str, optional
        The folder the result will be written to (named in the reproducing command and curve files).
    task_trials : int
        Arrangement trials per candidate for task metrics (:mod:`cvdfilter.designing.task_scores`).
    checkpoint, resume : path, bool
        Where the scored candidates are kept (:mod:`~cvdfilter.designing.checkpoint`); resume its search.
    scheduler : str or Executor, optional
        Where each generation's chunks run (:mod:`cvdfilter.execution`): ``local`` (default; or
        ``$CVDFILTER_SCHEDULER``), ``local:N`` (one Dask LocalCluster for the whole run) or a Dask scheduler
        address; an open :class:`~cvdfilter.execution.Executor` is used as given. The designs are the same.

    Returns
    -------
    DesignResult

    Raises
    ------
    cvdfilter.errors.InputError
        For a bad observer, metric, requirement, family or option (before any search), or when no
        design meets every requirement.

    Examples
    --------
    >>> r = design("deuteranomalous", maximise="red_green_gain", require="luminous_transmittance>=0.5",
    ...            budget=200, seed=1, references=[])   # doctest: +SKIP
    >>> r.designs[0]["spec"]                             # doctest: +SKIP
    'notch:center=...'
    """
    if not hasattr(scheduler, "map"):  # one executor (one LocalCluster) for the whole run, not one per batch
        args = dict(locals())  # the arguments (first, before any other name is bound here)
        from ..execution import executor

        with executor(scheduler) as ex:
            return design(**{**args, "scheduler": ex})
    return _run(**locals())


def _run(observer, *, maximise, minimise, require, family, budget, seed, top, references, illuminant, surfaces,
         adaptation, time_limit, metrics, progress, output, task_trials, checkpoint, resume, scheduler):
    """:func:`design` once its executor is open."""
    from ..spectra.filters import example_names

    maximise, minimise, require = _as_list(maximise), _as_list(minimise), _as_list(require)
    budget, seed, top, task_trials = _check_numbers(budget, seed, top, task_trials, time_limit)
    problem = _problem(observer, maximise, minimise, require, family, illuminant, surfaces, adaptation,
                       task_trials, seed)
    problem.scheduler = scheduler
    ref_specs = list(example_names()) if references is None else [str(r) for r in references]
    # checks the scorer's own inputs (illuminant, surfaces, adaptation) and the references before searching
    ref_card = score_batch(ref_specs, problem, metrics=_union(metrics, problem.groups)) if ref_specs else None
    saver = _checkpoint(checkpoint, problem, seed, resume)
    archive, run = search(problem, budget=budget, seed=seed, time_limit=time_limit, progress=progress,
                          checkpoint=saver)
    try:
        designs, header = _designs(problem, archive, top, output, metrics)
    except InputError:
        if saver is not None:
            saver.discard()
        raise
    references_out = _references(problem, ref_card, ref_specs)
    run["reported"] = len(designs)
    inputs = _inputs(problem, observer, maximise, minimise, require, budget, seed, top, references, ref_specs,
                     illuminant, surfaces, adaptation, output, metrics)
    return DesignResult(designs, references_out, problem, archive, run, inputs, header)


def _designs(problem: DesignProblem, archive, top: int, output, metrics) -> tuple[list, dict]:
    """The designs chosen from the archive and re-scored; InputError when none is left."""
    candidates = select(problem, archive, top=top)
    designs, header = _rescore(problem, candidates, top=top, output=output, metrics=metrics)
    if not designs:
        raise InputError("no design kept its requirements when re-scored from its spec string "
                         f"({len(candidates)} tried)", hint="loosen a requirement slightly: the rounding of the "
                                                            "spec moved every candidate across a bound")
    return designs, header


def _references(problem: DesignProblem, card, specs: list) -> list:
    """The references summarised as the designs are (their task scores included)."""
    if card is None:
        return []
    entries = attach_task_scores([card.filter_dict(i) for i in range(len(card))], specs, problem)
    return [_summary(problem, e, spec) for e, spec in zip(entries, specs)]


def _checkpoint(path, problem: DesignProblem, seed: int, resume: bool):
    """The search's :class:`~cvdfilter.designing.checkpoint.Checkpoint` (None without a path)."""
    if path is None:
        if resume:
            raise InputError("resume needs the checkpoint of the interrupted run", hint="give -o DIR of that run")
        return None
    from .checkpoint import Checkpoint

    return Checkpoint(path, problem, seed, resume=resume)


def _check_numbers(budget, seed, top, task_trials, time_limit) -> tuple[int, int, int, int]:
    try:
        budget, seed, top, task_trials = int(budget), int(seed), int(top), int(task_trials)
    except (TypeError, ValueError):
        raise InputError("budget, seed, top and task trials must be whole numbers") from None
    if not 10 <= budget <= MAX_BUDGET:
        raise InputError(f"budget {budget} is outside 10-{MAX_BUDGET:,} evaluations")
    if seed < 0:
        raise InputError(f"seed {seed} must be 0 or more")
    if not 1 <= top <= 50:
        raise InputError(f"top {top} is outside 1-50")
    if not 1 <= task_trials <= 10_000:
        raise InputError(f"task trials {task_trials} is outside 1-10,000")
    if time_limit is not None and not time_limit > 0:
        raise InputError(f"time limit {time_limit} must be a positive number of seconds")
    return budget, seed, top, task_trials


def _problem(observer, maximise, minimise, require, family, illuminant, surfaces, adaptation, task_trials,
             seed) -> DesignProblem:
    """The problem, every input checked before any scoring."""
    from ..observers.observer import observer as make_observer
    from ..observers.population import is_population_spec
    from ..observers.population import population as make_population

    observers = [str(o).strip() for o in _as_list(observer)]
    if not observers or not observers[0]:
        raise InputError("design needs an observer", hint="e.g. --observer deuteranomalous")
    if not maximise and not minimise:
        raise InputError("nothing to optimise", hint="give --maximise METRIC, e.g. --maximise red_green_gain")
    space = parse_family(family)
    primary = observers[0]
    objectives = [(parse_metric(m, primary), +1) for m in maximise] + [(parse_metric(m, primary), -1)
                                                                      for m in minimise]
    names = [m.text for m, _ in objectives]
    if len(set(names)) != len(names):
        raise InputError("the same metric is given twice as an objective")
    requirements = [parse_requirement(r, primary) for r in require]
    for m in [m for m, _ in objectives] + [r.metric for r in requirements]:
        if m.observer is not None and m.observer not in observers:
            observers.append(m.observer)
    for o in observers:  # every observer checked before the search
        (make_population if is_population_spec(o) else make_observer)(o)
    groups = groups_needed([m for m, _ in objectives] + [r.metric for r in requirements])
    score_kwargs = {"illuminant": illuminant, "surfaces": surfaces, "adaptation": adaptation}
    return DesignProblem(space, observers, objectives, requirements, score_kwargs, groups,
                         task_trials=task_trials, task_seed=seed)


def _inputs(problem, observer, maximise, minimise, require, budget, seed, top, references, ref_specs,
            illuminant, surfaces, adaptation, output, metrics) -> dict:
    """The inputs record of designs.json, with the command that reproduces the run."""
    observers = problem.observers
    tasks = any(m.group == "tasks" for m in problem.metrics())
    command = _command(observers[:1] if len(observers) == 1 else _as_list(observer), maximise, minimise,
                       require, problem.space.family, budget, seed, top, references, illuminant, surfaces,
                       adaptation, output, metrics)
    if tasks and problem.task_trials != DEFAULT_TASK_TRIALS:
        command = command.replace(" -o ", f" --task-trials {problem.task_trials} -o ")
    return {
        "observers": observers, "maximise": maximise, "minimise": minimise, "require": require,
        "requirements": [{"expression": r.text, "metric": r.metric.text, "op": r.op, "value": r.value}
                         for r in problem.requirements],
        "family": problem.space.describe(), "budget": budget, "seed": seed, "top": top,
        "illuminant": str(illuminant), "surfaces": str(surfaces), "adaptation": str(adaptation),
        "references": ref_specs, "metric_groups_searched": problem.groups,
        "metric_groups_reported": _union(metrics, problem.groups),
        **({"task_trials": problem.task_trials, "task_seed": problem.task_seed} if tasks else {}),
        "command": command,
    }


def _summary(problem: DesignProblem, entry: dict, spec: str) -> dict:
    objectives = {m.text: _value(entry_value(entry, m, problem.observer_index(m))) for m, _ in problem.objectives}
    reqs = {r.text: _value(entry_value(entry, r.metric, problem.observer_index(r.metric)))
            for r in problem.requirements}
    meets = all(bool(r.satisfied(entry_value(entry, r.metric, problem.observer_index(r.metric))))
                for r in problem.requirements)
    return {"spec": spec, "objectives": objectives, "requirements": reqs, "meets_requirements": meets}


def _value(v: float):
    return None if v != v else (int(v) if float(v).is_integer() and abs(v) < 2**53 else float(v))


def _union(metrics, groups) -> list:
    """The scorer's groups named by ``metrics`` (all, core or a list) together with ``groups``."""
    from ..score_plan import METRIC_GROUPS, OPTIONAL_GROUPS, parse_metrics

    wanted = set(parse_metrics(metrics)) | set(groups)
    return [g for g in METRIC_GROUPS + OPTIONAL_GROUPS if g in wanted]


def _rescore(problem: DesignProblem, candidates: np.ndarray, *, top: int, output: str | None, metrics="all"):
    """Re-score the candidates with the ordinary scorer (every metric group) from their spec strings
    (notch families) or curves; keep those whose re-score meets every requirement, best first."""
    from ..spectra.filters import FilterSet

    space = problem.space
    curves = np.vstack([space.curve(x) for x in candidates])
    folder = (output.rstrip("/\\") + "/") if output else ""
    specs: list[str] = [space.spec(x) or "" for x in candidates]
    names = tuple(f"candidate-{i + 1}" for i in range(len(candidates)))
    filters: Any = specs
    if space.kind != "notch":
        filters = FilterSet(tuple(f"candidate-{i + 1}" for i in range(len(candidates))), curves, space.grid,
                            ("file",) * len(candidates), tuple({} for _ in candidates))

    def meets(entry):
        return all(bool(r.satisfied(entry_value(entry, r.metric, problem.observer_index(r.metric))))
                   for r in problem.requirements)

    # 1. every candidate re-scored with the metric groups the search used (fast), requirements checked
    card = score_batch(filters, problem)
    entries = attach_task_scores([card.filter_dict(i) for i in range(len(candidates))], filters, problem)
    kept = [(i, e) for i, e in enumerate(entries) if meets(e)]
    first, sense = problem.objectives[0]
    k0 = problem.observer_index(first)

    def order(item):
        v = entry_value(item[1], first, k0)
        return (v != v, -sense * (v if v == v else 0.0), item[0])

    kept.sort(key=order)
    if len(problem.objectives) > 1 and len(kept) > top:  # thin the front evenly along the first objective
        pick = np.unique(np.round(np.linspace(0, len(kept) - 1, top)).astype(int))
        kept = [kept[j] for j in pick]
    kept = kept[:top]
    # 2. the designs kept, re-scored with every group asked for (the scorecard entry written), checked again
    idx = [i for i, _ in kept]
    final: Any = [specs[i] for i in idx] if space.kind == "notch" else FilterSet(
        tuple(names[i] for i in idx), curves[idx], space.grid, ("file",) * len(idx),
        tuple({} for _ in idx))
    card = score_batch(final, problem, metrics=_union(metrics, problem.groups)) if idx else card
    entries = attach_task_scores([card.filter_dict(j) for j in range(len(idx))], final, problem) if idx else []
    kept = [(i, e) for i, e in zip(idx, entries) if meets(e)]
    designs = []
    for rank, (i, entry) in enumerate(kept, start=1):
        spec = specs[i] if space.kind == "notch" else f"{folder}curves/design-{rank:02d}.csv"
        entry = dict(entry)
        if space.kind != "notch":
            entry.update({"name": f"design-{rank:02d}", "source": "file", "input": spec})
        s = _summary(problem, entry, spec)
        designs.append({"rank": rank, "spec": spec, "parameters": space.parameters(candidates[i]),
                        "objectives": s["objectives"], "requirements": s["requirements"],
                        "scorecard": entry, "curve": curves[i]})
    return designs, card.header()
