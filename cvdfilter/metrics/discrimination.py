"""Discriminable surface pairs: the receptor-noise-limited model of Vorobyev & Osorio (1998).

Each cone class i signals f_i = ln q_i, the log of its quantum catch, with
noise e_i (a Weber fraction). Two stimuli are discriminated at Delta S = 1,
one just-noticeable difference (JND), where for a trichromat (V&O 1998, eq. 4
for n = 3)

    Delta S^2 = [e_1^2 (Df_3 - Df_2)^2 + e_2^2 (Df_3 - Df_1)^2 + e_3^2 (Df_1 - Df_2)^2]
                / [(e_1 e_2)^2 + (e_1 e_3)^2 + (e_2 e_3)^2]

and for a dichromat (n = 2)

    Delta S^2 = (Df_1 - Df_2)^2 / (e_1^2 + e_2^2).

Both are chromatic: a change of all cone signals by the same factor (intensity,
a neutral-density filter, and von Kries adaptation, which adds a constant to
each f_i) leaves Delta S unchanged.

Delta S^2 is a quadratic form Df^T A Df with A positive semi-definite of rank
n - 1, so A = P^T P and Delta S is a Euclidean distance after the fixed
linear change y = P f (:func:`rnl_transform`). Counting pairs of surfaces at or
above 1 JND is then counting pairs of points in y at distance >= 1, which
:mod:`cvdfilter.metrics.pairs` does for thousands of filters at once.

Noise. e_i = nu / sqrt(eta_i), with eta_i the fraction of cones of class i and
nu the noise of a single cone, fixed by the Weber fraction of the L channel of
the normal trichromat:

* :data:`WEBER_FRACTION` = 0.02 for the L cones (from memory: the value used
  for human L cones in applications of this model following Vorobyev & Osorio
  1998; users can change it);
* :data:`CONE_RATIOS` L:M:S = 10:5:1 (from memory: L:M about 2:1 on average,
  with wide individual variation, Hofer et al. 2005, J Neurosci 25, 9669-9679;
  S cones about 5-7 % of all cones, Curcio et al. 1991, J Comp Neurol 312,
  610-624).

This gives e_L = 0.020, e_M = 0.028 and e_S = 0.063. Protanopes and
deuteranopes keep the normal number of long-wavelength cones with the missing
class replaced by the remaining one (replacement model; from memory: Carroll et
al. 2004, Vision Research 44, 2345-2357, found a normal cone density in a
deuteranope's fovea), so their remaining L or M cone has eta = 15/16 and
e = 0.016. Tritanopes lose the S cones and keep L and M noise unchanged.
Anomalous trichromats keep the normal cone numbers and noise.

Reference: Vorobyev, M., & Osorio, D. (1998). Receptor noise as a determinant
of colour thresholds. Proceedings of the Royal Society B, 265, 351-358.

Counts and distribution. On 99 natural surfaces almost every pair is over
1 JND for a normal observer, so counts at one threshold saturate. Besides the
counts at :data:`DISCRIMINATION_THRESHOLD` the module reports them at each of
:data:`DISTRIBUTION_THRESHOLDS` (1, 2 and 4 JND) and a threshold-free
measure: the median Delta S over all pairs with the filter divided by the
same median without it (``median_ratio``; above 1 the filter spreads the
surfaces apart in the model). The scorecard takes this median over the pairs
the normal observer discriminates without the filter (the set of
:mod:`cvdfilter.metrics.confusion`), so that one number serves both blocks.
Counts are exact (sort and sweep, :mod:`cvdfilter.metrics.pairs`); the median
is selected in float32 from the dense pair distances.

Public: :data:`WEBER_FRACTION`, :data:`CONE_RATIOS`, :data:`DISCRIMINATION_THRESHOLD`,
:data:`DISTRIBUTION_THRESHOLDS`, :func:`receptor_noise`, :func:`rnl_transform`, :func:`rnl_distance`,
:func:`log_catches`, :func:`rnl_coordinates`, :func:`rnl_reference`, :func:`rnl_points`,
:func:`close_changes`, :func:`median_changes`, :func:`dense_changes`, :func:`pair_masks`,
:func:`discriminable_from_points`,
:func:`discriminable_from_logs`, :func:`discriminable_pairs`.
"""

from __future__ import annotations

import numpy as np

from .pairs import (all_pair_sq_distances, close_pairs, count_close_among, count_close_pairs, median_rows,
                    offset_order, pair_count, pair_indices, pair_reference)

__all__ = ["WEBER_FRACTION", "CONE_RATIOS", "DISCRIMINATION_THRESHOLD", "DISTRIBUTION_THRESHOLDS", "receptor_noise",
           "rnl_transform", "rnl_distance", "log_catches", "rnl_coordinates", "rnl_reference", "rnl_points",
           "close_changes", "median_changes", "dense_changes", "pair_masks", "discriminable_from_points",
           "discriminable_from_logs",
           "discriminable_pairs"]

#: Weber fraction of the L-cone channel of the normal trichromat (from memory; see the module docstring).
WEBER_FRACTION = 0.02
#: Relative numbers of L, M and S cones of the normal trichromat, L:M:S = 10:5:1 (from memory; see above).
CONE_RATIOS = (10.0, 5.0, 1.0)
#: Delta S (JND) at or above which a pair counts as discriminable: 1 JND, the model's own unit (V&O 1998).
DISCRIMINATION_THRESHOLD = 1.0
#: Delta S thresholds (JND) of the reported distribution of pair differences (a choice of this project:
#: the model's unit, and two and four times it, so that a reader sees more than one cut).
DISTRIBUTION_THRESHOLDS = (1.0, 2.0, 4.0)
#: Catches are floored here before taking logs (only a black surface or filter reaches it).
_TINY = 1e-300


def receptor_noise(missing_cone: int | None = None, *, weber: float = WEBER_FRACTION,
                   cone_ratios=CONE_RATIOS, replacement: bool = True) -> np.ndarray:
    """Noise (Weber fractions) e_L, e_M, e_S of an observer's cone channels.

    Parameters
    ----------
    missing_cone : int or None
        0 (protanope), 1 (deuteranope), 2 (tritanope) or None (trichromat).
    weber : float
        Weber fraction of the normal trichromat's L channel, > 0.
    cone_ratios : sequence of 3 floats
        Relative numbers of L, M, S cones of the normal trichromat.
    replacement : bool
        For a missing L or M class, give its cones to the remaining L/M class
        (the replacement model); otherwise they are lost.

    Returns
    -------
    numpy.ndarray
        Shape (3,); NaN for the missing cone.

    Examples
    --------
    >>> receptor_noise().round(4).tolist()
    [0.02, 0.0283, 0.0632]
    >>> receptor_noise(1).round(4).tolist()
    [0.0163, nan, 0.0632]
    """
    if not weber > 0:
        raise ValueError(f"Weber fraction must be positive, got {weber}")
    eta = np.asarray(cone_ratios, dtype=float)
    if eta.shape != (3,) or np.any(eta <= 0):
        raise ValueError(f"cone_ratios must be three positive numbers, got {cone_ratios!r}")
    eta = eta / eta.sum()
    nu = weber * np.sqrt(eta[0])  # noise of a single cone
    if missing_cone is not None:
        eta = eta.copy()
        if replacement and missing_cone in (0, 1):
            eta[1 - missing_cone] += eta[missing_cone]
        eta[missing_cone] = np.nan
    return nu / np.sqrt(eta)


def rnl_transform(noise) -> np.ndarray:
    """The matrix P with Delta S = |P (f_1 - f_2)|, f = ln(cone catches).

    Parameters
    ----------
    noise : array_like
        e_L, e_M, e_S (shape (3,)); NaN marks a missing cone (dichromat).

    Returns
    -------
    numpy.ndarray
        Shape (2, 3) for a trichromat, (1, 3) for a dichromat (zero column for
        the missing cone). Rows are ordered by decreasing weight.

    Examples
    --------
    >>> P = rnl_transform(receptor_noise())
    >>> float(np.abs(P @ np.ones(3)).max()) < 1e-12   # equal log changes are invisible
    True
    """
    e = np.asarray(noise, dtype=float)
    present = np.isfinite(e)
    if present.sum() == 2:
        i, j = np.nonzero(present)[0]
        row = np.zeros(3)
        row[i], row[j] = 1.0, -1.0
        return (row / np.sqrt(e[i] ** 2 + e[j] ** 2))[None, :]
    if present.sum() != 3:
        raise ValueError("the receptor-noise model needs two or three cone classes")
    e1, e2, e3 = e
    den = (e1 * e2) ** 2 + (e1 * e3) ** 2 + (e2 * e3) ** 2
    u23 = np.array([0.0, 1.0, -1.0])
    u13 = np.array([1.0, 0.0, -1.0])
    u12 = np.array([1.0, -1.0, 0.0])
    a = (e1 ** 2 * np.outer(u23, u23) + e2 ** 2 * np.outer(u13, u13) + e3 ** 2 * np.outer(u12, u12)) / den
    values, vectors = np.linalg.eigh(a)  # ascending; the first is 0 (the achromatic direction)
    return (np.sqrt(np.clip(values[:0:-1], 0.0, None))[:, None] * vectors[:, :0:-1].T)


def rnl_distance(catch_1, catch_2, noise) -> np.ndarray:
    """Delta S (JND) between stimuli from their cone catches, by the formulas of V&O (1998).

    The direct formula, for checks and small jobs; :func:`discriminable_pairs`
    uses the equivalent :func:`rnl_transform`.

    Parameters
    ----------
    catch_1, catch_2 : array_like
        Cone catches L, M, S, shape (..., 3), > 0 (any common scale).
    noise : array_like
        e_L, e_M, e_S; NaN for a missing cone.

    Returns
    -------
    numpy.ndarray
        Delta S, shape (...).

    Examples
    --------
    >>> e = receptor_noise()
    >>> round(float(rnl_distance([1.0, 1.0, 1.0], [1.02, 1.0, 1.0], e)), 3)
    0.606
    """
    df = np.log(np.asarray(catch_1, dtype=float)) - np.log(np.asarray(catch_2, dtype=float))
    e = np.asarray(noise, dtype=float)
    present = np.nonzero(np.isfinite(e))[0]
    if len(present) == 2:
        i, j = present
        return np.abs(df[..., i] - df[..., j]) / np.sqrt(e[i] ** 2 + e[j] ** 2)
    e1, e2, e3 = e
    d1, d2, d3 = df[..., 0], df[..., 1], df[..., 2]
    num = e1 ** 2 * (d3 - d2) ** 2 + e2 ** 2 * (d3 - d1) ** 2 + e3 ** 2 * (d1 - d2) ** 2
    den = (e1 * e2) ** 2 + (e1 * e3) ** 2 + (e2 * e3) ** 2
    return np.sqrt(num / den)


def log_catches(catches) -> np.ndarray:
    """Natural log of cone catches, with catches at or below 1e-300 floored there (a black surface)."""
    x = np.maximum(np.asarray(catches, dtype=float), _TINY)  # a new array: the log is taken in place
    return np.log(x, out=x) if isinstance(x, np.ndarray) else np.log(x)


def rnl_coordinates(catches, transform) -> np.ndarray:
    """Points y = P ln(q) in JND units; Euclidean distances between them are Delta S.

    Parameters
    ----------
    catches : array_like
        Cone catches, shape (..., N, 3) (see :func:`log_catches` for zeros).
    transform : array_like
        P from :func:`rnl_transform`, shape (k, 3).

    Returns
    -------
    numpy.ndarray
        Shape (..., N, k).
    """
    return log_catches(catches) @ np.asarray(transform, dtype=float).T


def rnl_reference(catches_without, noise, *, threshold: float = DISCRIMINATION_THRESHOLD,
                  thresholds=DISTRIBUTION_THRESHOLDS, median_pairs=None, extra_radii=()) -> dict:
    """The state without the filter, prepared once for :func:`discriminable_from_logs`.

    Parameters
    ----------
    catches_without : array_like
        Cone catches of the N surfaces without the filter, shape (N, 3).
    noise : array_like
        e_L, e_M, e_S (NaN for a missing cone).
    threshold : float
        JND count at or above which a pair counts as discriminable (the headline counts).
    thresholds : sequence of float
        JND counts of the distribution (:data:`DISTRIBUTION_THRESHOLDS`).
    median_pairs : (array_like, array_like), optional
        Index arrays (i, j) of the pairs the median runs over; default all pairs.
    extra_radii : sequence of float
        Further radii whose close pairs are prepared (e.g. the confused-pair threshold).

    Returns
    -------
    dict
        ``transform`` (P of :func:`rnl_transform`, rotated so that its first
        coordinate has the largest spread), ``close`` -> {radius: (i, j) of the
        pairs closer than it without the filter}, ``n``, ``threshold``,
        ``thresholds``, ``median_count`` and ``median_exclude`` (the median's pairs:
        their number, and the columns of :func:`~cvdfilter.metrics.pairs.all_pair_sq_distances`
        left out), ``median`` (median Delta S over those pairs without the filter, JND).
    """
    if not threshold > 0 or not all(t > 0 for t in (*thresholds, *extra_radii)):
        raise ValueError(f"JND thresholds must be positive, got {threshold} and {tuple(thresholds)}")
    logs = log_catches(catches_without)
    ref = pair_reference(logs, rnl_transform(noise), float(threshold))
    y0 = logs @ ref["transform"].T
    radii = sorted({float(threshold), *(float(t) for t in thresholds), *(float(t) for t in extra_radii)})
    close = {r: (ref["i"], ref["j"]) if r == float(threshold) else close_pairs(y0, r) for r in radii}
    if median_pairs is None:
        median_pairs = pair_indices(logs.shape[0])
    n = logs.shape[0]
    mi, mj = (np.asarray(a, dtype=np.intp) for a in median_pairs)
    keep = np.zeros(pair_count(n), dtype=bool)
    keep[offset_order(mi, mj, n)] = True
    exclude = np.nonzero(~keep)[0]
    d2 = all_pair_sq_distances([y0[None, :, r] for r in range(y0.shape[1])], exclude=exclude)
    median = float(np.sqrt(median_rows(d2, count=int(keep.sum()))[0])) if keep.any() else float("nan")
    return {"transform": ref["transform"], "close": close, "n": n, "threshold": float(threshold),
            "thresholds": tuple(float(t) for t in thresholds), "median_count": int(keep.sum()),
            "median_exclude": exclude, "median": median}


def rnl_points(log_planes, reference: dict) -> list:
    """The surfaces through each filter as points in JND units: k planes (F, N), y = P ln q.

    Parameters
    ----------
    log_planes : array_like or sequence of 3 array_like
        ln L, ln M, ln S of the surfaces through each filter: shape (F, 3, N),
        or three planes of shape (F, N).
    reference : dict
        From :func:`rnl_reference` (its transform).
    """
    t = reference["transform"]
    if isinstance(log_planes, (list, tuple)):
        log_planes = np.stack(log_planes, axis=1)
    y = np.matmul(t, np.asarray(log_planes, dtype=float))  # (F, k, N): one small product per filter
    return [np.ascontiguousarray(y[:, r, :]) for r in range(t.shape[0])]


def close_changes(points, reference: dict) -> dict:
    """Per radius of the reference: (close without, close with (F,), close in both (F,)).

    Counted exactly by :mod:`cvdfilter.metrics.pairs` (sort and sweep).
    """
    out = {}
    for r, (i, j) in reference["close"].items():
        out[r] = (len(i), count_close_pairs(points, r), count_close_among(points, i, j, r))
    return out


def _at(total: int, close0: int, close1, both) -> dict:
    return {"without": np.int64(total - close0), "with": total - close1, "gained": close0 - both,
            "lost": close1 - both}


def discriminable_from_points(points, reference: dict, changes: dict | None = None,
                              median: dict | None = None) -> dict:
    """Discriminable-pair statistics from the points of :func:`rnl_points`.

    Returns
    -------
    dict
        ``without`` (int), ``with``, ``gained``, ``lost`` (int64 (F,)) at the
        reference's threshold; ``at`` -> {threshold: the same four}; ``median_without``
        (float), ``median_with`` and ``median_ratio`` (F,): the median Delta S
        (JND) over the reference's median pairs, and with / without.
    """
    changes = close_changes(points, reference) if changes is None else changes
    total = pair_count(reference["n"])
    out = _at(total, *changes[reference["threshold"]])
    out["at"] = {t: _at(total, *changes[t]) for t in reference["thresholds"]}
    out.update(median_changes(points, reference) if median is None else median)
    return out


def dense_changes(points, reference: dict, masks: dict, more=()) -> tuple:
    """:func:`close_changes` and :func:`median_changes` from one pass over every pair's distance.

    The distances of all pairs give the median and, exactly, every count
    (:func:`~cvdfilter.metrics.pairs.dense_pair_statistics`: the numbers of
    :func:`~cvdfilter.metrics.pairs.all_pair_sq_distances`, :func:`~cvdfilter.metrics.pairs.dense_close_counts`
    and :func:`~cvdfilter.metrics.pairs.median_of_kept`, from a compiled kernel for large batches); ``masks`` holds the
    reference's close pairs per radius as (1, P) masks of that layout (:func:`pair_masks`).
    ``more`` = (radius, [masks]): further masked counts at one radius (the confused-pair sets).

    Returns (changes, the further counts, the median dict).
    """
    from .pairs import dense_pair_statistics

    radii = list(masks["close"])
    listed = list(masks["close"].items())
    if more and more[0] in masks["close"]:
        listed += [(more[0], m) for m in more[1]]
    keep = masks["keep"] if reference["median_count"] else None
    close, among, med2 = dense_pair_statistics(points, radii, listed, keep, guess=reference["median"] ** 2)
    changes = {r: (len(reference["close"][r][0]), close[i], among[i]) for i, r in enumerate(radii)}
    extra = list(among[len(radii):])
    return changes, extra, _median_dict(np.sqrt(med2), reference)


def pair_masks(reference: dict, lists=()) -> dict:
    """The reference's close pairs per radius, its median's pairs and further pair lists ``lists`` as (1, P)
    masks in the layout of :func:`~cvdfilter.metrics.pairs.all_pair_sq_distances` (for :func:`dense_changes`)."""
    n = reference["n"]
    total = pair_count(n)

    def mask(i, j):
        m = np.zeros((1, total), dtype=bool)
        m[0, offset_order(i, j, n)] = True
        return m

    keep = np.ones((1, total), dtype=bool)
    keep[0, reference["median_exclude"]] = False
    return {"close": {r: mask(i, j) for r, (i, j) in reference["close"].items()}, "keep": keep,
            "lists": [mask(i, j) for i, j in lists]}


def median_changes(points, reference: dict) -> dict:
    """``median_without``, ``median_with`` (F,), ``median_ratio`` (F,) over the reference's median pairs."""
    n_f = points[0].shape[0]
    if reference["median_count"] == 0:
        med = np.full(n_f, np.nan)
    else:
        d2 = all_pair_sq_distances(points, exclude=reference["median_exclude"])
        med = np.sqrt(median_rows(d2, count=reference["median_count"]))
    return _median_dict(med, reference)


def _median_dict(med, reference: dict) -> dict:
    n_f = med.shape[0]
    m0 = reference["median"]
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = med / m0 if m0 > 0 else np.full(n_f, np.nan)
    return {"median_without": m0, "median_with": med, "median_ratio": ratio}


def discriminable_from_logs(log_planes, reference: dict) -> dict:
    """Discriminable-pair statistics from log cone catches laid out by cone (the fast path).

    Parameters
    ----------
    log_planes : array_like or sequence of 3 array_like
        ln L, ln M, ln S of the surfaces through each filter: shape (F, 3, N),
        or three planes of shape (F, N).
    reference : dict
        From :func:`rnl_reference`.

    Returns
    -------
    dict
        As :func:`discriminable_from_points`.
    """
    return discriminable_from_points(rnl_points(log_planes, reference), reference)


def discriminable_pairs(catches_with, catches_without, noise, *, threshold: float = DISCRIMINATION_THRESHOLD,
                        thresholds=DISTRIBUTION_THRESHOLDS) -> dict:
    """Surface pairs at or above ``threshold`` JND, with and without a filter, and their distribution.

    Parameters
    ----------
    catches_with : array_like
        Cone catches of the N surfaces seen through each filter, shape (F, N, 3).
    catches_without : array_like
        Cone catches without the filter, shape (N, 3).
    noise : array_like
        e_L, e_M, e_S (:func:`receptor_noise`); NaN for a missing cone.
    threshold : float
        JND count at or above which a pair counts as discriminable (1 in V&O 1998).
    thresholds : sequence of float
        The distribution's thresholds.

    Returns
    -------
    dict
        ``without`` (scalar), ``with``, ``gained`` (discriminable only with the
        filter), ``lost`` (discriminable only without it): int64 arrays of shape
        (F,); ``at``, ``median_without``, ``median_with``, ``median_ratio`` as in
        :func:`discriminable_from_points` (the median over all pairs).

    Examples
    --------
    >>> q0 = np.array([[1.0, 1.0, 1.0], [1.001, 1.0, 1.0], [1.5, 1.0, 1.0]])
    >>> q1 = q0 * np.array([1.1, 1.0, 1.0])            # a filter scaling L alone
    >>> r = discriminable_pairs(q1[None], q0, receptor_noise())
    >>> {k: int(np.ravel(r[k])[0]) for k in ("without", "with", "gained", "lost")}
    {'without': 2, 'with': 2, 'gained': 0, 'lost': 0}
    >>> round(float(r["median_ratio"][0]), 6)
    1.0
    """
    reference = rnl_reference(catches_without, noise, threshold=threshold, thresholds=thresholds)
    logs = log_catches(catches_with)
    return discriminable_from_logs([logs[..., 0], logs[..., 1], logs[..., 2]], reference)
