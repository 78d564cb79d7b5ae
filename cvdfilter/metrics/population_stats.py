"""Statistics over the members of an observer population: spread of a metric and the share helped.

Pure functions on arrays shaped (..., n_members); NaN marks a member for which the metric is undefined
(for example a filter that leaves one of its cones no light) and is left out of every statistic.

* :func:`spread`: mean, SD (ddof 1), and the 2.5, 50 and 97.5 percentiles (numpy's default linear
  interpolation between order statistics), over members.
* :func:`wilson_interval`: the Wilson (1927) score interval for a binomial proportion, the interval
  reported with every share "helped" (the share of members for whom a filter helps on a metric).

Reference: Wilson, E. B. (1927). Probable inference, the law of succession, and statistical inference.
JASA 22, 209-212.

Public: :func:`spread`, :func:`share_helped`, :func:`wilson_interval`, :data:`STATISTICS`,
:data:`CONFIDENCE`, :data:`RATIO_TOLERANCE`.
"""

from __future__ import annotations

import numpy as np

__all__ = ["spread", "share_helped", "wilson_interval", "STATISTICS", "CONFIDENCE", "RATIO_TOLERANCE"]

#: The statistics of :func:`spread`, in order (JSON keys).
STATISTICS = ("mean", "sd", "p2_5", "p50", "p97_5")
#: Two-sided confidence of the intervals on shares.
CONFIDENCE = 0.95
#: A ratio metric (gain, median Delta S ratio) counts as "helped" above 1 + this: a numerical tolerance
#: that keeps floating-point rounding of an exact 1 (a neutral filter) from counting, far below any
#: difference a model could resolve; not a verdict threshold.
RATIO_TOLERANCE = 1e-9


def spread(values) -> dict:
    """Mean, SD and percentiles over the last axis, ignoring NaN.

    Parameters
    ----------
    values : array_like
        Shape (..., n_members).

    Returns
    -------
    dict
        :data:`STATISTICS` -> arrays shaped (...); NaN where no member is defined; ``n`` the number of
        defined members. SD is 0 for one defined member.

    Examples
    --------
    >>> s = spread([1.0, 2.0, 3.0, np.nan])
    >>> float(s["mean"]), float(s["sd"]), float(s["p50"]), int(s["n"])
    (2.0, 1.0, 2.0, 3)
    """
    v = np.asarray(values, dtype=float)
    ok = np.isfinite(v)
    n = ok.sum(axis=-1)
    with np.errstate(invalid="ignore", divide="ignore"):
        total = np.where(ok, v, 0.0).sum(axis=-1)
        mean = np.where(n > 0, total / np.maximum(n, 1), np.nan)
        dev = np.where(ok, v - mean[..., None], 0.0)
        var = np.where(n > 1, (dev ** 2).sum(axis=-1) / np.maximum(n - 1, 1), np.where(n == 1, 0.0, np.nan))
    if np.all(ok):
        p = np.percentile(v, [2.5, 50.0, 97.5], axis=-1)
    else:
        import warnings

        with warnings.catch_warnings():
            warnings.simplefilter("ignore", RuntimeWarning)  # all-NaN slices give NaN, as intended
            p = np.nanpercentile(v, [2.5, 50.0, 97.5], axis=-1)
    return {"mean": mean, "sd": np.sqrt(var), "p2_5": p[0], "p50": p[1], "p97_5": p[2], "n": n}


def wilson_interval(successes, trials, *, confidence: float = CONFIDENCE):
    """Wilson score interval for a binomial proportion (Wilson 1927), vectorised.

    p_hat = k / n, z the two-sided normal quantile, and
    centre = (p_hat + z^2 / 2n) / (1 + z^2 / n), half = z sqrt(p_hat (1 - p_hat) / n + z^2 / 4n^2) / (1 + z^2 / n).
    The interval always lies in [0, 1] and contains p_hat. NaN where n = 0.

    Returns
    -------
    (low, high) : arrays shaped like the broadcast inputs

    Examples
    --------
    >>> lo, hi = wilson_interval(5, 10)
    >>> round(float(lo), 4), round(float(hi), 4)
    (0.2366, 0.7634)
    """
    from scipy.special import ndtri

    k = np.asarray(successes, dtype=float)
    n = np.asarray(trials, dtype=float)
    z = float(ndtri(0.5 + confidence / 2.0))
    with np.errstate(invalid="ignore", divide="ignore"):
        p = k / n
        den = 1.0 + z * z / n
        centre = (p + z * z / (2 * n)) / den
        half = z * np.sqrt(p * (1 - p) / n + z * z / (4 * n * n)) / den
        low = np.where(n > 0, np.clip(centre - half, 0.0, 1.0), np.nan)
        high = np.where(n > 0, np.clip(centre + half, 0.0, 1.0), np.nan)
    # at k = 0 and k = n the closed form gives exactly 0 and 1 in exact arithmetic; pin them
    low = np.where((n > 0) & (k == 0), 0.0, low)
    high = np.where((n > 0) & (k == n), 1.0, high)
    return low, high


def share_helped(helped, defined, *, confidence: float = CONFIDENCE) -> dict:
    """Share of defined members that are helped, with its Wilson interval, over the last axis.

    Parameters
    ----------
    helped, defined : array_like of bool
        Shape (..., n_members); ``helped`` counts only where ``defined``.

    Returns
    -------
    dict
        ``share``, ``ci_low``, ``ci_high`` (arrays shaped (...), NaN where no member is defined), ``helped``
        and ``n`` (counts).

    Examples
    --------
    >>> r = share_helped([True, True, False, False], [True, True, True, False])
    >>> round(float(r["share"]), 4), int(r["n"])
    (0.6667, 3)
    """
    d = np.asarray(defined, dtype=bool)
    h = np.asarray(helped, dtype=bool) & d
    n = d.sum(axis=-1)
    k = h.sum(axis=-1)
    with np.errstate(invalid="ignore", divide="ignore"):
        share = np.where(n > 0, k / np.maximum(n, 1), np.nan)
    low, high = wilson_interval(k, n, confidence=confidence)
    return {"share": share, "ci_low": low, "ci_high": high, "helped": k, "n": n}
