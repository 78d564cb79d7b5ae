"""Confused surface pairs: what a normal observer tells apart and a deficient observer does not.

Both judgements use the one noise model of the tool, the receptor-noise-limited
model of Vorobyev & Osorio (1998) (:mod:`cvdfilter.metrics.discrimination`),
with Delta S in units of one just-noticeable difference (JND). For an observer
with a colour-vision deficiency, a pair of surfaces is *confused* when

* the normal observer it derives from (same age and field; its ``base``)
  discriminates the pair without a filter: Delta S_normal >= :data:`NORMAL_THRESHOLD`, and
* the deficient observer does not: Delta S_deficient < :data:`DEFICIENT_THRESHOLD`.

The pairs of the first condition (the *normally discriminable* pairs) are a
fixed set, judged once without the filter: the filter is worn by the deficient
observer. Over that set, with the deficient observer's Delta S without and
with the filter,

* ``resolved``: confused without the filter, not with it;
* ``created``: confused only with the filter;
* ``median_ratio``: the median over the set of Delta S_deficient with the
  filter, divided by the same median without it. This needs no threshold
  other than the one that defines the set (above 1 the filter spreads these
  surfaces apart for the deficient observer).

Both thresholds are 1 JND, the model's own unit (a choice of this project;
users can change them, and ``score --sensitivity`` shows what moves).
Dichromats use the two remaining cone classes, anomalous trichromats their
shifted pigment with normal noise (see the discrimination module for the
noise values). A normal observer has no confused pairs (``None``).

Because Delta S is chromatic and depends only on log cone ratios, neutral
density and von Kries adaptation change no count and leave ``median_ratio`` at 1.

Counts are exact: the deficient observer's close pairs come from the sort and
sweep of :mod:`cvdfilter.metrics.pairs` (shared with the discrimination
counts), minus the few close pairs the normal observer does not discriminate either.

Public: :data:`NORMAL_THRESHOLD`, :data:`DEFICIENT_THRESHOLD`, :func:`normally_discriminable`,
:func:`confusion_reference`, :func:`confusion_from_points`, :func:`confusion_from_logs`,
:func:`confusion_pairs`.
"""

from __future__ import annotations

import numpy as np

from .discrimination import (close_changes, log_catches, median_changes, rnl_points, rnl_reference,
                             rnl_transform)
from .pairs import count_close_among, pair_indices, pair_sq_distances

__all__ = ["NORMAL_THRESHOLD", "DEFICIENT_THRESHOLD", "normally_discriminable", "confusion_reference",
           "confusion_from_points", "confusion_from_logs", "confusion_pairs"]

#: Delta S (JND) at or above which the normal observer discriminates a pair (the model's unit).
NORMAL_THRESHOLD = 1.0
#: Delta S (JND) below which the deficient observer does not discriminate a pair (the model's unit).
DEFICIENT_THRESHOLD = 1.0


def normally_discriminable(normal_catches_without, normal_noise, normal_threshold: float = NORMAL_THRESHOLD):
    """The pairs the normal observer discriminates without a filter, and the others.

    Parameters
    ----------
    normal_catches_without : array_like
        The normal observer's cone catches of N surfaces, shape (N, 3).
    normal_noise : array_like
        Its e_L, e_M, e_S.
    normal_threshold : float
        JND, > 0.

    Returns
    -------
    seen : (numpy.ndarray, numpy.ndarray)
        (i, j) of the pairs with Delta S_normal >= ``normal_threshold``.
    unseen : (numpy.ndarray, numpy.ndarray)
        (i, j) of the others.
    """
    if not normal_threshold > 0:
        raise ValueError(f"the normal threshold must be positive, got {normal_threshold}")
    logs = log_catches(normal_catches_without)
    y = logs @ rnl_transform(normal_noise).T
    i, j = pair_indices(logs.shape[0])
    d2 = pair_sq_distances([y[None, :, r] for r in range(y.shape[1])], i, j)[0]
    keep = d2 >= float(normal_threshold) ** 2
    return (i[keep], j[keep]), (i[~keep], j[~keep])


def confusion_reference(catches_without, noise, normal_catches_without, normal_noise, *,
                        normal_threshold: float = NORMAL_THRESHOLD,
                        deficient_threshold: float = DEFICIENT_THRESHOLD, rnl: dict | None = None,
                        sets=None) -> dict:
    """The state without the filter, prepared once for :func:`confusion_from_points`.

    Parameters
    ----------
    catches_without : array_like
        The deficient observer's cone catches of the N surfaces, shape (N, 3).
    noise : array_like
        Its e_L, e_M, e_S (NaN for a missing cone).
    normal_catches_without : array_like
        The normal observer's cone catches of the same surfaces, shape (N, 3).
    normal_noise : array_like
        The normal observer's noise.
    normal_threshold, deficient_threshold : float
        JND, > 0.
    rnl : dict, optional
        The deficient observer's :func:`~cvdfilter.metrics.discrimination.rnl_reference`,
        made with ``median_pairs`` = the normally discriminable pairs and
        ``deficient_threshold`` among its radii (the scorecard shares it).
    sets : tuple, optional
        :func:`normally_discriminable` of the normal observer, if already made.

    Returns
    -------
    dict
        ``rnl``, ``count`` (normally discriminable pairs), ``unseen`` (i, j),
        ``unseen_close`` (i, j: those also closer than the deficient threshold
        for the deficient observer without the filter) and the two thresholds.
    """
    if not normal_threshold > 0 or not deficient_threshold > 0:
        raise ValueError(f"JND thresholds must be positive, got {normal_threshold} and {deficient_threshold}")
    td = float(deficient_threshold)
    seen, unseen = sets if sets is not None else normally_discriminable(normal_catches_without, normal_noise,
                                                                        normal_threshold)
    if rnl is None:
        rnl = rnl_reference(catches_without, noise, median_pairs=seen, extra_radii=(td,))
    if td not in rnl["close"]:
        raise ValueError("the discrimination reference lacks the deficient threshold among its radii")
    y0 = log_catches(catches_without) @ rnl["transform"].T
    ui, uj = unseen
    d2 = pair_sq_distances([y0[None, :, r] for r in range(y0.shape[1])], ui, uj)[0]
    near = d2 < td * td
    return {"rnl": rnl, "count": int(len(seen[0])), "unseen": (ui, uj), "unseen_close": (ui[near], uj[near]),
            "normal_threshold": float(normal_threshold), "deficient_threshold": td}


def confusion_from_points(points, reference: dict, changes: dict | None = None, median: dict | None = None,
                          among=None) -> dict:
    """Confused-pair statistics from the deficient observer's points with the filter.

    Parameters
    ----------
    points : list of numpy.ndarray
        From :func:`cvdfilter.metrics.discrimination.rnl_points`.
    reference : dict
        From :func:`confusion_reference`.
    changes : dict, optional
        :func:`cvdfilter.metrics.discrimination.close_changes` of these points, if already made.
    median : dict, optional
        :func:`cvdfilter.metrics.discrimination.median_changes` of these points, if already made.
    among : (numpy.ndarray, numpy.ndarray), optional
        How many of ``unseen`` and of ``unseen_close`` are closer than the deficient threshold with the
        filter (F,) each, if already counted (:func:`cvdfilter.metrics.discrimination.dense_changes`).

    Returns
    -------
    dict
        ``without`` (int), ``with``, ``resolved``, ``created`` (int64 (F,));
        ``normally_discriminable`` (int); ``median_without`` (float),
        ``median_with`` and ``median_ratio`` (F,).
    """
    rnl = reference["rnl"]
    td = reference["deficient_threshold"]
    if changes is None or td not in changes:
        changes = close_changes(points, {"close": {td: rnl["close"][td]}})
    close0, close1, both = changes[td]
    # Confused = close for the deficient observer, minus the close pairs the normal observer does not see either.
    ui, uj = reference["unseen"]
    ci, cj = reference["unseen_close"]
    without = close0 - len(ci)
    if among is None:
        among = (count_close_among(points, ui, uj, td), count_close_among(points, ci, cj, td))
    with_ = close1 - among[0]
    both_set = both - among[1]
    out = {"without": np.int64(without), "with": with_, "resolved": without - both_set,
           "created": with_ - both_set, "normally_discriminable": reference["count"]}
    m = median_changes(points, rnl) if median is None else median
    out.update({k: m[k] for k in ("median_without", "median_with", "median_ratio")})
    return out


def confusion_from_logs(log_planes, reference: dict) -> dict:
    """:func:`confusion_from_points` from log cone catches, shape (F, 3, N) or three planes (F, N)."""
    return confusion_from_points(rnl_points(log_planes, reference["rnl"]), reference)


def confusion_pairs(catches_with, catches_without, noise, normal_catches_without, normal_noise, *,
                    normal_threshold: float = NORMAL_THRESHOLD,
                    deficient_threshold: float = DEFICIENT_THRESHOLD) -> dict:
    """Confused pairs without and with a filter, the pairs it resolves or creates, and the median ratio.

    Parameters
    ----------
    catches_with : array_like
        The deficient observer's cone catches through each filter, shape (F, N, 3).
    catches_without : array_like
        Without the filter, shape (N, 3).
    noise : array_like
        The deficient observer's e_L, e_M, e_S (NaN for a missing cone).
    normal_catches_without : array_like
        The normal observer's catches without the filter, shape (N, 3).
    normal_noise : array_like
        The normal observer's noise.
    normal_threshold, deficient_threshold : float
        JND.

    Returns
    -------
    dict
        As :func:`confusion_from_points`.

    Examples
    --------
    >>> from cvdfilter.metrics.discrimination import receptor_noise
    >>> q0 = np.array([[1.0, 0.5, 0.2], [1.0, 0.6, 0.2], [1.0, 0.5, 0.6]])  # rows 0, 1 differ in M only
    >>> q1 = q0 * [[1.0, 1, 1], [1.3, 1, 1], [1.0, 1, 1]]                   # the filter raises L of row 1
    >>> r = confusion_pairs(q1[None], q0, receptor_noise(1), q0, receptor_noise())
    >>> {k: int(np.ravel(r[k])[0]) for k in ("without", "with", "resolved", "created")}
    {'without': 1, 'with': 0, 'resolved': 1, 'created': 0}
    """
    reference = confusion_reference(catches_without, noise, normal_catches_without, normal_noise,
                                    normal_threshold=normal_threshold, deficient_threshold=deficient_threshold)
    logs = log_catches(catches_with)
    return confusion_from_logs([logs[..., 0], logs[..., 1], logs[..., 2]], reference)
