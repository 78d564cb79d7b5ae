"""Task scores from :func:`cvdfilter.tasks` as design objectives and requirements.

A task metric is ``tasks.TASK.KEY`` for the design observer (or ``tasks.TASK.KEY[SPEC]`` for another):
``KEY`` is a key of the ``with`` record of that task in ``cvdfilter tasks --format json`` (the median over
trials and members with the filter), plus ``tasks.arrangement.effect`` (the verdict's basis: share of
trials with a lower total error score with the filter minus the share with a higher one) and
``tasks.plates.read`` (the number of plates read)::

    tasks.arrangement.tes     tasks.arrangement.c_index     tasks.arrangement.effect
    tasks.plates.read         tasks.plates.legibility.<plate>
    tasks.rayleigh.range_log_odds

For a population observer (a spec with ``n=N``) each member gets its own value (the median over its own
trials, its own effect, its own plates read, ...: :func:`cvdfilter.vision_tasks.members.member_values`), and
the metric takes a statistic over members as prefix (``mean:tasks.arrangement.tes``,
``p2_5:tasks.arrangement.effect``); ``share:tasks.TASK.easier`` (``.harder``) is the share of members whose
own verdict on the task is easier (harder) with the filter (:mod:`cvdfilter.vision_tasks.members`, the
criteria of ``cvdfilter tasks``). On a design's entry the statistics sit in the observer's ``tasks`` block as
``{mean, sd, p2_5, p50, p97_5}`` and the shares in its ``helped`` block (``{share, ci_low, ci_high, helped,
n}``, Wilson 95 % interval), where the metric syntax reads them.

A generation's candidates are scored by one :func:`cvdfilter.tasks` call over the whole FilterSet (the
tasks vectorise over filters), with a fixed seed (the design's), so that every candidate sees the same
trial draws: the objective is deterministic and comparisons between candidates are trial-paired. The
cost grows with ``trials`` (:data:`DEFAULT_TASK_TRIALS`); the noise of a median over few trials is
what the search optimises too (docs/design.md).

Public: :data:`TASK_KEYS`, :data:`TASK_SHARE_KEYS`, :data:`DEFAULT_TASK_TRIALS`, :func:`task_values`,
:func:`attach_task_scores`.
"""

from __future__ import annotations

import numpy as np

__all__ = ["TASK_KEYS", "TASK_SHARE_KEYS", "DEFAULT_TASK_TRIALS", "task_values", "attach_task_scores",
           "is_task_key"]

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


def _task_names() -> tuple:
    from ..vision_tasks.result import TASKS

    return tuple(TASKS)


#: Metric key -> (task, score).
TASK_KEYS = _keys()
#: ``share:`` keys of a population: metric key -> (task, verdict) (the share of members with that verdict).
TASK_SHARE_KEYS = {f"tasks.{t}.{w}": (t, w) for t in _task_names() for w in ("easier", "harder")}


def is_task_key(key: str) -> bool:
    return key in TASK_KEYS or key in TASK_SHARE_KEYS


def _task_numbers(filters, problem) -> list:
    """[(metric, values (n_filters,), block)] for every task metric of the problem, from one
    :func:`cvdfilter.tasks` call over ``filters``. ``block`` is None for one observer; for a population the
    statistics over members (each (n_filters,)) or the share with its interval. Values rounded to 6 decimals
    (as written)."""
    from ..metrics.population_stats import STATISTICS, share_helped, spread
    from ..vision_tasks.core import tasks as run_tasks
    from ..vision_tasks.members import VERDICT_CODES, member_values, member_verdicts
    from ..vision_tasks.plates import PLATE_NAMES, READ_THRESHOLD

    metrics = list(dict.fromkeys(m for m in problem.metrics() if is_task_key(m.key)))
    if not metrics:
        return []
    keys = {**TASK_KEYS, **TASK_SHARE_KEYS}
    names = sorted({keys[m.key][0] for m in metrics})
    observers = list(dict.fromkeys(m.observer for m in metrics))
    r = run_tasks(filters, observers=observers, tasks=names, trials=problem.task_trials, seed=problem.task_seed,
                  illuminant=problem.score_kwargs.get("illuminant", "D65"),
                  scheduler=getattr(problem, "scheduler", None))
    out = []
    for m in metrics:
        task, key = keys[m.key]
        s = r.scores[(task, r.observers[observers.index(m.observer)])]
        block = None
        if m.stat == "share":  # a population: share of members whose own verdict is `key`
            codes = member_verdicts(task, s)[0]
            h = share_helped(codes == VERDICT_CODES[key], np.ones(codes.shape, dtype=bool))
            block = {"share": _round(h["share"]), "ci_low": _round(h["ci_low"]), "ci_high": _round(h["ci_high"]),
                     "helped": h["helped"], "n": h["n"]}
            v = block["share"]
        elif m.stat is not None:  # a population: a statistic of the members' own values
            st = spread(member_values(task, key, s))
            block = {k: np.where(st["n"] > 0, _round(st[k]), np.nan) for k in STATISTICS}
            v = block[m.stat]
        elif task == "plates":
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
        out.append((m, _round(v), block))
    return out


def _round(v) -> np.ndarray:
    return np.round(np.asarray(v, dtype=float), 6) + 0.0


def task_values(filters, problem) -> dict:
    """{metric text: values (n_filters,)} of every task metric of the problem's objectives and requirements,
    from one :func:`cvdfilter.tasks` call over ``filters`` (rounded to 6 decimals, as written)."""
    return {m.text: v for m, v, _ in _task_numbers(filters, problem)}


def attach_task_scores(entries: list, filters, problem) -> list:
    """The scorecard entries with each observer's task metrics under ``tasks`` (``{task: {key: value}}``; a
    population's statistics as ``{mean, sd, p2_5, p50, p97_5}``) and a population's task shares under
    ``helped`` (``{share, ci_low, ci_high, helped, n}``), so that
    :func:`~cvdfilter.designing.reading.entry_value` reads them like any other key."""
    numbers = _task_numbers(filters, problem)
    if not numbers:
        return entries
    out = []
    for i, e in enumerate(entries):
        e = dict(e, observers=[dict(o) for o in e["observers"]])
        for m, values, block in numbers:
            o = e["observers"][problem.observer_index(m)]
            if m.stat == "share":
                o["helped"] = dict(o.get("helped") or {})
                o["helped"][m.key] = {k: (int(a[i]) if k in ("helped", "n") else _float(a[i]))
                                      for k, a in block.items()}
                continue
            o["tasks"] = node = dict(o.get("tasks") or {})
            parts = m.key.split(".")[1:]
            for p in parts[:-1]:
                node[p] = dict(node.get(p) or {})
                node = node[p]
            if block is not None:
                node[parts[-1]] = {k: _float(a[i]) for k, a in block.items()}
            else:
                v = float(values[i])
                node[parts[-1]] = int(v) if parts[-1] == "read" else v
        out.append(e)
    return out


def _float(x) -> float | None:
    x = float(x)
    return x if np.isfinite(x) else None
