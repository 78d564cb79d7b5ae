"""Each member's own verdict on each task, and the spread of each task's main score change over members.

A population's scores are arrays over (1 + filters, members, ...) (:class:`~.result.TaskResult.scores`).
The functions here apply to every member at once the criteria the verdict of one observer uses
(:mod:`.result`: :data:`~.result.ARRANGEMENT_MARGIN`, :data:`~.result.PLATE_MARGIN`,
:data:`~.result.RAYLEIGH_MARGIN`), each member on its own trials, plates or match, vectorised over filters and
members:

* arrangement: the member's effect = share of its trials with a lower TES with the filter minus the share with
  a higher TES; easier at >= +margin, harder at <= -margin;
* plates: a plate gains (loses) when the member's legibility rises (falls) by >= margin; easier when more plates
  gain than lose, harder when more lose;
* rayleigh: the relative change of the member's matching range in log odds; easier at <= -margin, harder at
  >= +margin (no change where the range is not finite, as for one observer).

For one observer (one member) the verdict is the one :meth:`~.result.TaskResult.results` gives
(tests/test_tasks_population.py).

Main score changes (one value per filter x member; NaN where undefined, left out of the spread):
arrangement ``tes_change`` (median TES over the member's trials with the filter minus without) and ``effect``;
plates ``legibility_change.<plate>``; rayleigh ``range_log_odds_change`` (relative).

Public: :func:`member_verdicts`, :func:`member_changes`, :func:`member_values`, :data:`VERDICT_CODES`, and the
verdict rules one observer's verdict uses too: :func:`arrangement_rule`, :func:`plates_rule`,
:func:`rayleigh_rule`.
"""

from __future__ import annotations

import numpy as np

from .arrangement import ARRANGEMENT_DESIGNS
from .plates import PLATE_NAMES, READ_THRESHOLD

__all__ = ["member_verdicts", "member_changes", "member_values", "VERDICT_CODES", "arrangement_rule", "plates_rule",
           "rayleigh_rule", "TES_TOLERANCE"]

#: Verdict -> code in the arrays of :func:`member_verdicts`.
VERDICT_CODES = {"easier": 1, "harder": -1, "no change": 0}
#: Tolerance of "lower" and "higher" TES (one observer's verdict and each member's).
TES_TOLERANCE = 1e-9


def _arrangement_effect(s: dict) -> np.ndarray:
    t0, t1 = np.asarray(s["tes"][:1]), np.asarray(s["tes"][1:])  # (1, M, T), (F, M, T)
    return np.mean(t1 < t0 - TES_TOLERANCE, axis=-1) - np.mean(t1 > t0 + TES_TOLERANCE, axis=-1)


def _rayleigh_relative(s: dict) -> np.ndarray:
    w = np.asarray(s["range_log_odds"], dtype=float)
    w0, w1 = w[:1], w[1:]  # (1, M), (F, M)
    ok = np.isfinite(w0) & np.isfinite(w1) & (w0 > 0)
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(ok, (w1 - w0) / np.where(ok, w0, 1.0), np.nan)


def member_verdicts(task: str, s: dict, factors=(1.0,)) -> np.ndarray:
    """Each member's verdict on ``task``, for each filter, at each margin factor.

    Parameters
    ----------
    task : str
        A task of :data:`~.result.TASKS`.
    s : dict
        The task's scores for one observer (``TaskResult.scores[(task, observer)]``), arrays (1 + F, M, ...).
    factors : sequence of float
        Factors on the task's verdict margin.

    Returns
    -------
    numpy.ndarray
        int8 codes (:data:`VERDICT_CODES`), shape (len(factors), F, M).
    """
    from .result import ARRANGEMENT_MARGIN, PLATE_MARGIN, RAYLEIGH_MARGIN

    k = np.asarray(factors, dtype=float)[:, None, None]
    if task in ARRANGEMENT_DESIGNS:
        out = arrangement_rule(_arrangement_effect(s)[None], ARRANGEMENT_MARGIN * k)
    elif task == "plates":
        leg = np.asarray(s["legibility"], dtype=float)
        out = plates_rule((leg[1:] - leg[:1])[None], PLATE_MARGIN * k[..., None])  # change (1, F, M, P)
    else:  # undefined: no change, as for one observer
        out = rayleigh_rule(np.nan_to_num(_rayleigh_relative(s), nan=0.0)[None], RAYLEIGH_MARGIN * k)
    return out.astype(np.int8)


def arrangement_rule(effect, margin):
    """Verdict codes from an arrangement effect (share of trials lower minus share higher TES): easier at
    >= +margin, harder at <= -margin (one observer's verdict and each member's alike)."""
    return np.where(effect >= margin, 1, np.where(effect <= -margin, -1, 0))


def plates_rule(change, margin):
    """Verdict codes from legibility changes (..., plates): a plate gains (loses) at >= margin (<= -margin);
    easier when more plates gain than lose, harder when more lose."""
    return np.sign((change >= margin).sum(axis=-1) - (change <= -margin).sum(axis=-1))


def rayleigh_rule(rel, margin):
    """Verdict codes from the relative change of the matching range in log odds: easier at <= -margin, harder
    at >= +margin."""
    return np.where(rel <= -margin, 1, np.where(rel >= margin, -1, 0))


def member_changes(task: str, s: dict) -> dict:
    """Each member's main score change on ``task`` with each filter: name -> array (F, M), NaN where undefined.

    Returns
    -------
    dict
        arrangement: ``tes_change`` (median TES over the member's trials with the filter minus without) and
        ``effect`` (share of trials lower minus share higher); plates: ``legibility_change.<plate>``;
        rayleigh: ``range_log_odds_change`` (relative change of the matching range in log odds).
    """
    if task in ARRANGEMENT_DESIGNS:
        med = np.median(np.asarray(s["tes"], dtype=float), axis=-1)  # (1 + F, M)
        return {"tes_change": med[1:] - med[:1], "effect": _arrangement_effect(s)}
    if task == "plates":
        leg = np.asarray(s["legibility"], dtype=float)
        change = leg[1:] - leg[:1]
        return {f"legibility_change.{p}": change[..., i] for i, p in enumerate(PLATE_NAMES)}
    return {"range_log_odds_change": _rayleigh_relative(s)}


def member_values(task: str, key: str, s: dict) -> np.ndarray:
    """Each member's value of a task score with each filter, (F, M): the per-member form of the design's task
    keys (:mod:`cvdfilter.designing.task_scores`): arrangement scores as medians over the member's trials,
    ``effect``, plates ``read`` (number of plates at legibility >= the read threshold) and the legibility of
    one plate, Rayleigh ``red_fraction``, ``range``, ``range_log_odds``."""
    if task in ARRANGEMENT_DESIGNS:
        if key == "effect":
            return _arrangement_effect(s)
        return np.median(np.asarray(s[key][1:], dtype=float), axis=-1)
    if task == "plates":
        leg = np.asarray(s["legibility"][1:], dtype=float)  # (F, M, P)
        if key == "read":
            return (leg >= READ_THRESHOLD).sum(axis=-1).astype(float)
        return leg[..., PLATE_NAMES.index(key)]
    return np.asarray(s[key][1:], dtype=float)
