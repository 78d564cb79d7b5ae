"""Counting close pairs of points, many point sets at once.

Both pair statistics of the scorecard reduce to one question asked of
thousands of small point sets (one per filter and observer, typically 99
surfaces each): how many unordered pairs of points lie closer than a radius?
In the receptor-noise-limited model the points are surfaces in a space where
one unit is one just-noticeable difference (JND); for confusion pairs they are
surfaces on the observer's chromaticity axes divided by the tolerance.

The count is exact and vectorised over point sets, with no Python loop over
points or pairs ("sort and sweep"): every set is sorted along its first
coordinate, and candidate pairs are visited by *offset* in that order. For
offset k the pairs (i, i + k) of all sets of a chunk are compared in a few
array operations. A pair closer than the radius differs by less than the
radius in the first coordinate as well, and in sorted order that difference
only grows with k, so the sweep stops as soon as no set has a candidate left.
Surfaces are usually spread over many JNDs, so only a few offsets are needed
(about ten for the 99 CIE 2017 samples), far less work than forming every
N x N distance (Gram) matrix; when all points lie within one radius the sweep
visits every offset and does the same work as the full matrix. Rotating the
points so that the first coordinate has the largest spread (see
:func:`principal_rotation`) keeps the number of offsets small.

Distributions and the counts taken from them (the dense path) are in :mod:`cvdfilter.metrics.pair_distances`,
and the one-pass entry the scorer calls in :mod:`cvdfilter.metrics.pair_statistics`; both re-exported here.

Public: :func:`pair_count`, :func:`close_pair_matrix`, :func:`close_pairs`,
:func:`count_close_pairs`, :func:`count_close_among`, :func:`principal_rotation`,
:func:`pair_reference`, :func:`pair_changes`, :func:`pair_indices`,
:func:`pair_sq_distances`, :func:`offset_order`, :func:`all_pair_sq_distances`, :func:`median_rows`,
:func:`median_of_kept`, :func:`principal_rotations`, :func:`gather_sq_distances`, :func:`offset_pairs`,
:func:`dense_close_counts`, :func:`dense_pair_statistics`.
"""

from __future__ import annotations

import numpy as np

from .pair_distances import (_SIGN, all_pair_sq_distances, dense_close_counts, gather_sq_distances, median_of_kept,
                             median_rows, offset_order, offset_pairs, pair_count, pair_indices, pair_sq_distances,
                             principal_rotations)
from .pair_statistics import dense_pair_statistics

__all__ = ["pair_count", "close_pair_matrix", "close_pairs", "count_close_pairs", "count_close_among",
           "principal_rotation", "pair_reference", "pair_changes", "pair_indices", "pair_sq_distances",
           "offset_order", "all_pair_sq_distances", "median_rows", "median_of_kept", "principal_rotations",
           "gather_sq_distances", "offset_pairs", "dense_close_counts", "dense_pair_statistics"]

#: Points per chunk of point sets: small enough for the CPU cache (a few hundred kB per array).
_CHUNK_POINTS = 50_000


def _check_set(points) -> np.ndarray:
    p = np.asarray(points, dtype=float)
    if p.ndim == 1:
        p = p[:, None]
    if p.ndim != 2:
        raise ValueError(f"points must be (n, k), got shape {p.shape}")
    return p


def close_pair_matrix(points, radius: float = 1.0) -> np.ndarray:
    """Which pairs of one point set are closer than ``radius`` (dense; for one set).

    Parameters
    ----------
    points : array_like
        Shape (n, k) or (n,): n points in k dimensions.
    radius : float
        Euclidean distance; a pair is close when its distance is strictly below it.

    Returns
    -------
    numpy.ndarray
        Boolean, shape (n, n), symmetric, False on the diagonal. Points holding
        NaN are close to nothing.

    Examples
    --------
    >>> close_pair_matrix([[0.0], [0.5], [2.0]]).astype(int)
    array([[0, 1, 0],
           [1, 0, 0],
           [0, 0, 0]])
    """
    p = _check_set(points)
    with np.errstate(invalid="ignore"):
        d2 = np.sum((p[:, None, :] - p[None, :, :]) ** 2, axis=-1)
        close = d2 < radius * radius
    np.fill_diagonal(close, False)
    return close


def close_pairs(points, radius: float = 1.0) -> tuple[np.ndarray, np.ndarray]:
    """Index arrays (i, j), i < j, of the pairs of one point set closer than ``radius``.

    >>> i, j = close_pairs([[0.0], [0.5], [2.0], [2.2]])
    >>> list(zip(i.tolist(), j.tolist()))
    [(0, 1), (2, 3)]
    """
    i, j = np.nonzero(np.triu(close_pair_matrix(points, radius), k=1))
    return i, j


def principal_rotation(points) -> np.ndarray:
    """Rotation (k, k) that turns a point set's axis of largest spread into the first coordinate.

    Distances are unchanged by it; :func:`count_close_pairs` then needs fewer offsets.
    ``points @ principal_rotation(points)`` gives the rotated set.
    """
    p = _check_set(points)
    p = p[np.all(np.isfinite(p), axis=1)]
    # One arithmetic with the batched form, so that a set gives the same rotation either way.
    return principal_rotations(p[None])[0]


def _planes(points) -> list:
    """Points as a list of k coordinate planes, each (B, N) float64 C-contiguous."""
    if isinstance(points, (list, tuple)):
        planes = [np.ascontiguousarray(c, dtype=float) for c in points]
        if not planes or any(c.ndim != 2 or c.shape != planes[0].shape for c in planes):
            raise ValueError("coordinate planes must be k arrays of one shape (sets, points)")
        return planes
    p = np.asarray(points, dtype=float)
    if p.ndim != 3 or p.shape[2] < 1:
        raise ValueError(f"points must be (sets, points, dims), got shape {p.shape}")
    return [np.ascontiguousarray(p[..., c]) for c in range(p.shape[2])]


def count_close_pairs(points, radius: float = 1.0) -> np.ndarray:
    """Count, for every point set, the unordered pairs closer than ``radius``.

    Parameters
    ----------
    points : array_like or sequence of array_like
        Shape (B, N, k): B point sets of N points in k dimensions (k >= 1);
        or k coordinate planes of shape (B, N) each. Points holding NaN are
        close to nothing.
    radius : float
        A pair is close when its Euclidean distance is strictly below ``radius``.

    Returns
    -------
    numpy.ndarray
        Shape (B,), int64: the number of close pairs in each set.

    Examples
    --------
    >>> pts = np.array([[[0.0], [0.5], [2.0], [2.9]], [[0.0], [3.0], [6.0], [9.0]]])
    >>> count_close_pairs(pts).tolist()
    [2, 0]
    """
    planes = _planes(points)
    n_sets, n_pts = planes[0].shape
    out = np.zeros(n_sets, dtype=np.int64)
    if n_sets == 0 or n_pts < 2:
        return out
    bad = ~np.isfinite(planes[0])
    for c in planes[1:]:
        bad |= ~np.isfinite(c)
    if bad.any():
        # NaN points go far beyond the rest and far from each other: they match nothing.
        good = ~bad
        top = float(np.abs(planes[0][good]).max()) if good.any() else 0.0
        far = top + (np.arange(n_pts, dtype=float) + 2.0) * (10.0 * radius + 1.0)
        planes = [np.where(bad, far, planes[0])] + [np.where(bad, 0.0, c) for c in planes[1:]]
    step = max(1, _CHUNK_POINTS // n_pts)
    step = -(-n_sets // -(-n_sets // step))  # equal chunks, none left tiny
    for lo in range(0, n_sets, step):
        hi = min(n_sets, lo + step)
        out[lo:hi] = _sweep([c[lo:hi] for c in planes], radius)
    return out




def _sort_rows(x: np.ndarray):
    """Sort each row of ``x`` (float64) and return (sorted values, original indices).

    Faster than argsort: each float is mapped to an int64 with the same order
    (the IEEE-754 bit trick), its lowest bits replaced by the point's index,
    and the keys sorted with numpy's vectorised integer sort. The returned
    values are the keys decoded back, i.e. the inputs with their last few
    mantissa bits cleared (a relative change below 1e-11), which keeps them
    exactly in sorted order.
    """
    n = x.shape[1]
    nbits = max(1, (n - 1).bit_length())
    if nbits > 20:
        order = np.argsort(x, axis=1)
        return np.take_along_axis(x, order, axis=1), order
    low = np.int64(-(1 << nbits))  # ...111000: clears the index bits
    bits = np.ascontiguousarray(x).view(np.int64)
    key = (bits >> 63) & _SIGN
    key ^= bits
    key &= low
    key |= np.arange(n, dtype=np.int64)
    key.sort(axis=1)
    index = key & np.int64((1 << nbits) - 1)
    key &= low
    key ^= (key >> 63) & _SIGN
    return key.view(np.float64), index


def _sweep(planes: list, radius: float) -> np.ndarray:
    """Sort and sweep over one chunk of point sets (see the module docstring)."""
    x = planes[0]
    c, n = x.shape
    if len(planes) == 1:
        cols = [np.sort(x, axis=1).T.copy()]
    else:
        xs, order = _sort_rows(x)
        # Flat indices in the (point, set) layout gather the other coordinates directly.
        flat = (order + (np.arange(c) * n)[:, None]).T.copy()
        cols = [xs.T.copy()] + [np.ascontiguousarray(p).ravel().take(flat) for p in planes[1:]]
    # Coordinates are laid out (point, set), so every offset slice below is contiguous.
    xs = cols[0]
    bx = np.empty((n - 1, c))
    by = np.empty((n - 1, c))
    bb = np.empty((n - 1, c), dtype=bool)
    acc = np.zeros(c, dtype=np.int64)
    r2 = radius * radius
    for off in range(1, n):
        m = n - off
        dx = np.subtract(xs[off:], xs[:-off], out=bx[:m])
        close = np.less(dx, radius, out=bb[:m])
        if not close.any():
            break
        if len(cols) > 1:
            np.multiply(dx, dx, out=dx)
            for ys in cols[1:]:
                dy = np.subtract(ys[off:], ys[:-off], out=by[:m])
                np.multiply(dy, dy, out=dy)
                np.add(dx, dy, out=dx)
            close = np.less(dx, r2, out=bb[:m])
        acc += np.add.reduce(close.view(np.uint8), axis=0, dtype=np.uint16)
    return acc


def count_close_among(points, i, j, radius: float = 1.0) -> np.ndarray:
    """For every point set, how many of the listed pairs (i, j) are closer than ``radius``.

    Parameters
    ----------
    points : array_like or sequence of array_like
        Shape (B, N, k), or k coordinate planes (B, N).
    i, j : array_like of int
        Shape (P,): the pairs to test (e.g. the pairs close without the filter).
    radius : float

    Returns
    -------
    numpy.ndarray
        Shape (B,), int64.

    Examples
    --------
    >>> pts = np.array([[[0.0], [0.5], [2.0]], [[0.0], [1.5], [2.0]]])
    >>> count_close_among(pts, [0, 1], [1, 2]).tolist()
    [1, 1]
    """
    planes = _planes(points)
    i = np.asarray(i, dtype=np.intp)
    j = np.asarray(j, dtype=np.intp)
    if i.size == 0:
        return np.zeros(planes[0].shape[0], dtype=np.int64)
    d2 = None
    for c in planes:
        d = np.take(c, i, axis=1) - np.take(c, j, axis=1)
        d2 = d * d if d2 is None else d2 + d * d
    with np.errstate(invalid="ignore"):
        return np.count_nonzero(d2 < radius * radius, axis=1).astype(np.int64)


def pair_reference(features_without, transform, radius: float = 1.0) -> dict:
    """The reference state (e.g. without a filter) for :func:`pair_changes`.

    Parameters
    ----------
    features_without : array_like
        Shape (N, m): the features of N points (e.g. log cone catches).
    transform : array_like
        Shape (k, m): points are y = transform @ features.
    radius : float

    Returns
    -------
    dict
        ``transform`` (k, m), rotated so that y's first coordinate has the
        largest spread in the reference; ``i``, ``j``: the close pairs of the
        reference; ``n``: the number of points.
    """
    f0 = np.asarray(features_without, dtype=float)
    t = np.atleast_2d(np.asarray(transform, dtype=float))
    y0 = f0 @ t.T
    t = (t.T @ principal_rotation(y0)).T
    i, j = close_pairs(f0 @ t.T, radius)
    return {"transform": t, "i": i, "j": j, "n": f0.shape[0], "radius": radius}


def pair_changes(features_with, reference: dict):
    """Close pairs with a change (e.g. a filter), and how many of the reference's close pairs stay close.

    Parameters
    ----------
    features_with : array_like or sequence of array_like
        Shape (B, m, N): the m features of N points in each of B sets; or m
        feature planes, each (B, N).
    reference : dict
        From :func:`pair_reference`.

    Returns
    -------
    close_without : int
        Close pairs in the reference.
    close_with : numpy.ndarray
        Shape (B,): close pairs in each set.
    close_both : numpy.ndarray
        Shape (B,): pairs close in both.
    """
    t = reference["transform"]
    if isinstance(features_with, (list, tuple)):
        features_with = np.stack(features_with, axis=1)
    f = np.asarray(features_with, dtype=float)
    y = np.matmul(t, f)  # (B, k, N): one small matrix product per set
    planes = [y[:, r, :] for r in range(t.shape[0])]
    radius = reference["radius"]
    close_with = count_close_pairs(planes, radius)
    both = count_close_among(planes, reference["i"], reference["j"], radius)
    return len(reference["i"]), close_with, both
