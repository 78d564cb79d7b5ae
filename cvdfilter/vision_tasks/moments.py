"""Scoring an arrangement: the moment method of Vingrys & King-Smith (1988), and path crossings.

Vingrys, A. J., & King-Smith, P. E. (1988). A quantitative scoring technique for
panel tests of color vision. Investigative Ophthalmology & Visual Science, 29(1), 50-63.

From the difference vectors (dU, dV) between successive caps of an arrangement
in CIELUV u*, v* (the caps under the reference light),

    U2 = sum dU^2,  V2 = sum dV^2,  UV = sum dU dV,
    M  = (1/N) [[U2, UV], [UV, V2]]   (N = the number of difference vectors),

the major and minor radii are R_maj = sqrt(l1), R_min = sqrt(l2) with l1 >= l2
the eigenvalues of M; the confusion angle is the angle of the major eigenvector
(degrees in (-90, 90], measured from +u* toward +v*); the total error score is
TES = sqrt(R_maj^2 + R_min^2); the selectivity index S = R_maj / R_min; the
confusion index C = R_maj / R_maj(perfect arrangement).

Identities used as checks: TES^2 = (U2 + V2) / N (the trace), R_maj^2 R_min^2 = det M,
and the radii do not change when all caps are rotated about any point.

Crossings (our definition): two segments of the arrangement path cross when their
end caps interleave around the hue circle (a < c < b < d). For caps on a convex
circle this is exactly a geometric intersection; counting on the circle order
avoids any rounding. A perfect arrangement has none; exchanging two neighbours
gives one.

Public: :func:`moment_scores`, :func:`crossings`, :data:`SCORE_NAMES`.
"""

from __future__ import annotations

import numpy as np

__all__ = ["moment_scores", "crossings", "SCORE_NAMES"]

#: The per-arrangement scores, in the order of the JSON.
SCORE_NAMES = ("confusion_angle_deg", "r_major", "r_minor", "tes", "s_index", "c_index", "crossings")


def _moments(uv: np.ndarray, order: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    path = uv[order]  # (..., N_caps, 2)
    d = np.diff(path, axis=-2)
    n = d.shape[-2]
    u2 = (d[..., 0] ** 2).sum(-1) / n
    v2 = (d[..., 1] ** 2).sum(-1) / n
    uvs = (d[..., 0] * d[..., 1]).sum(-1) / n
    return u2, v2, uvs


def moment_scores(uv, order) -> dict[str, np.ndarray]:
    """Moment-method scores of arrangements (Vingrys & King-Smith 1988).

    Parameters
    ----------
    uv : array_like
        CIELUV u*, v* of the caps in their hue-circle order, shape (N_caps, 2).
    order : array_like of int
        Arrangements: cap indices in the order placed, shape (..., N_caps).

    Returns
    -------
    dict of numpy.ndarray, each shape (...)
        ``confusion_angle_deg`` (degrees, (-90, 90]), ``r_major``, ``r_minor`` and
        ``tes`` (CIELUV units), ``s_index`` and ``c_index`` (ratios), ``crossings``
        (count, see :func:`crossings`).

    Examples
    --------
    >>> t = np.linspace(0, 2 * np.pi, 8, endpoint=False)
    >>> caps = np.stack([np.cos(t), np.sin(t)], axis=1)
    >>> s = moment_scores(caps, np.arange(8))
    >>> float(s["c_index"]), int(s["crossings"])
    (1.0, 0)
    """
    uv = np.asarray(uv, dtype=float)
    order = np.asarray(order)
    u2, v2, uvs = _moments(uv, order)
    half_trace = (u2 + v2) / 2
    root = np.sqrt(((u2 - v2) / 2) ** 2 + uvs ** 2)
    l1, l2 = half_trace + root, np.clip(half_trace - root, 0.0, None)
    angle = 0.5 * np.degrees(np.arctan2(2 * uvs, u2 - v2))  # major axis, in (-90, 90]
    pu2, pv2, puv = _moments(uv, np.arange(uv.shape[0]))
    p_major = np.sqrt((pu2 + pv2) / 2 + np.sqrt(((pu2 - pv2) / 2) ** 2 + puv ** 2))
    r_maj, r_min = np.sqrt(l1), np.sqrt(l2)
    with np.errstate(divide="ignore", invalid="ignore"):
        s_index = np.where(r_min > 0, r_maj / np.where(r_min > 0, r_min, 1.0), np.inf)
    return {"confusion_angle_deg": np.where(angle <= -90.0, angle + 180.0, angle), "r_major": r_maj,
            "r_minor": r_min, "tes": np.sqrt(l1 + l2), "s_index": s_index, "c_index": r_maj / p_major,
            "crossings": crossings(order)}


def crossings(order) -> np.ndarray:
    """Number of pairs of path segments whose end caps interleave around the hue circle.

    Parameters
    ----------
    order : array_like of int
        Arrangements, shape (..., N_caps); cap k is the k-th cap around the circle.

    Returns
    -------
    numpy.ndarray of int, shape (...)

    Examples
    --------
    >>> int(crossings([0, 1, 2, 3, 4])), int(crossings([0, 2, 1, 3, 4]))
    (0, 1)
    """
    order = np.asarray(order)
    a = np.minimum(order[..., :-1], order[..., 1:])
    b = np.maximum(order[..., :-1], order[..., 1:])
    ai, bi = a[..., :, None], b[..., :, None]
    aj, bj = a[..., None, :], b[..., None, :]
    cross = (ai < aj) & (aj < bi) & (bi < bj)  # i's ends interleave with j's (i starts first); counts each pair once
    return cross.sum(axis=(-2, -1))
