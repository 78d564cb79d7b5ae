"""Task scores from :func:`cvdfilter.tasks` as design objectives and requirements.

A task metric is ``tasks.TASK.KEY`` for the design observer (or ``tasks.TASK.KEY[SPEC]`` for another):
``KEY`` is a key of the ``with`` record of that task in ``cvdfilter tasks --format json`` (the median over
trials and members with the filter), plus ``tasks.arrangement.effect`` (the verdict's basis: share of
trials with a lower total error score with the filter minus the share with a higher one) and
``tasks.plates.read`` (the number of plates read)::

    tasks.arrangement.tes     tasks.arrangement.c_index     tasks.arrangement.effect
    tasks.plates.read         tasks.plates.legibility.<plate>
    tasks.rayleigh.range_log_odds

A generation's candidates are scored by one :func:`cvdfilter.tasks` call over the whole FilterSet (the
tasks vectorise over filters), with a fixed seed (the design's), so that every candidate sees the same
trial draws: the objective is deterministic and comparisons between candidates are trial-paired. The
cost grows with ``trials`` (:data:`DEFAULT_TASK_TRIALS`); the noise of a median over few trials is
what the search optimises too (docs/design.md).

Public: :data:`TASK_KEYS`, :data:`DEFAULT_TASK_TRIALS`, :func:`task_values`, :func:`attach_task_scores`.
"""

from __future__ import annotations

import numpy as np

__all__ = ["TASK_KEYS", "DEFAULT_TASK_TRIALS", "task_values", "attach_task_scores", "is_task_key"]

#: Arrangement trials per candidate and observer during a design (``cvdfilter tasks`` uses 500).
DEFAULT_TASK_TRIALS = 50


def _keys() -> dict:
    from ..vision_tasks.arrangement import ARRANGEMENT_DESIGNS
    from ..vision_tasks.moments import SCORE_NAMES
    from ..vision_tasks.plates import PLATE_NAMES

    out = {}
    for task in ARRANGEMENT_DESIGNS:
        out.update({f"tasks.{task}.{k}": (task, k) for k in (*SCORE_NAMES, "effect")})
    out["tasks.plates.read"] = ("plates", "read")
    out.update({f"tasks.plates.legibility.{p}": ("plates", p) for p in PLATE_NAMES})
    out.update({f"tasks.rayleigh.{k}": ("rayleigh", k) for k in ("red_fraction", "range", "range_log_odds")})
    return out


#: Metric key -> (task, score).
TASK_KEYS = _keys()


def is_task_key(key: str) -> bool:
    return key in TASK_KEYS


def task_values(filters, problem) -> dict:
    """{metric text: values (n_filters,)} of every task metric of the problem's objectives and requirements,
    from one :func:`cvdfilter.tasks` call over ``filters`` (rounded to 6 decimals, as written)."""
    from ..vision_tasks.core import tasks as run_tasks
    from ..vision_tasks.plates import PLATE_NAMES, READ_THRESHOLD

    metrics = [m for m in problem.metrics() if m.key in TASK_KEYS]
    if not metrics:
        return {}
    names = sorted({TASK_KEYS[m.key][0] for m in metrics})
    observers = list(dict.fromkeys(m.observer for m in metrics))
    r = run_tasks(filters, observers=observers, tasks=names, trials=problem.task_trials, seed=problem.task_seed,
                  illuminant=problem.score_kwargs.get("illuminant", "D65"),
                  scheduler=getattr(problem, "scheduler", None))
    out = {}
    for m in metrics:
        task, key = TASK_KEYS[m.key]
        s = r.scores[(task, r.observers[observers.index(m.observer)])]
        if task == "plates":
            leg = np.median(s["legibility"][1:], axis=1)  # (F, plates), median over members
            v = (leg >= READ_THRESHOLD).sum(axis=1) if key == "read" else leg[:, PLATE_NAMES.index(key)]
        elif key == "effect":
            t0, t1 = s["tes"][:1], s["tes"][1:]
            flat = (t1 < t0 - 1e-9).reshape(len(t1), -1).mean(axis=1) - \
                (t1 > t0 + 1e-9).reshape(len(t1), -1).mean(axis=1)
            v = flat
        else:
            a = np.asarray(s[key][1:], dtype=float)
            v = np.median(a.reshape(len(a), -1), axis=1)
        out[m.text] = np.round(np.asarray(v, dtype=float), 6) + 0.0
    return out


def attach_task_scores(entries: list, filters, problem) -> list:
    """The scorecard entries with each observer's task metrics under ``tasks`` (``{task: {key: value}}``),
    so that :func:`~cvdfilter.designing.reading.entry_value` reads them like any other key."""
    values = task_values(filters, problem)
    if not values:
        return entries
    out = []
    for i, e in enumerate(entries):
        e = dict(e, observers=[dict(o) for o in e["observers"]])
        for m in problem.metrics():
            if m.text not in values:
                continue
            node = e["observers"][problem.observer_index(m)].setdefault("tasks", {})
            parts = m.key.split(".")[1:]
            for p in parts[:-1]:
                node = node.setdefault(p, {})
            v = float(values[m.text][i])
            node[parts[-1]] = int(v) if parts[-1] == "read" else v
        out.append(e)
    return out
