"""Every pair statistic of many point sets in one pass: the entry the scorer calls (array path or compiled kernel).

:func:`dense_pair_statistics` gives, per point set, the close pairs at every radius, the close pairs among
given pair sets, and the median squared distance over kept pairs: the numbers of ``all_pair_sq_distances``,
``dense_close_counts`` and ``median_of_kept`` of :mod:`cvdfilter.metrics.pair_distances` (the array path),
or the same bits from the numba kernel of :mod:`cvdfilter.metrics.pair_kernel`.

Public: :func:`dense_pair_statistics`, :func:`sq_distances`, :data:`KERNEL_MIN_PAIRS`.
"""

from __future__ import annotations

import sys

import numpy as np

from .pair_distances import all_pair_sq_distances, dense_close_counts, median_of_kept, pair_count

__all__ = ["dense_pair_statistics", "sq_distances", "KERNEL_MIN_PAIRS"]

#: Pair distances (sets x pairs) from which ``dense_pair_statistics(method="auto")`` runs the compiled
#: kernel (about 400 sets of 99 points): below it the array path is quicker than loading the kernel.
KERNEL_MIN_PAIRS = 2_000_000


def dense_pair_statistics(planes, radii, masks=(), keep=None, guess=None, *, method: str = "auto") -> tuple:
    """Close-pair counts and the median over kept pairs, from every pair's distance.

    The numbers of :func:`all_pair_sq_distances` followed by :func:`dense_close_counts` at every radius
    and :func:`median_of_kept` over ``keep`` (``method="array"``), or the same numbers, bit for bit, from a
    numba kernel (:mod:`cvdfilter.metrics.pair_kernel`, ``method="kernel"``) that handles one set at a
    time without storing the distances; rows the kernel leaves (non-finite coordinates, a distance at
    float32(r^2) exactly) are recomputed by the array path. ``"auto"`` takes the kernel from
    :data:`KERNEL_MIN_PAIRS` pair distances on, or whenever it is loaded already (below that, loading the
    compiled kernel takes longer than the work; a long run such as a design loads it up front): only the
    speed differs, never a bit of the result (tests/test_pair_kernel.py).

    Parameters
    ----------
    planes : sequence of numpy.ndarray, or numpy.ndarray
        The k coordinate planes (B, N), or one float64 array (k, B, N), used without a copy whatever its
        strides.
    radii : sequence of float
        Distinct radii.
    masks : sequence of (float, numpy.ndarray)
        (radius, (G, P) bool mask in the offset layout): pairs among which close pairs are counted at that
        radius; row b of the planes uses row b % G.
    keep : numpy.ndarray, optional
        (G, P) bool: the pairs the median runs over (default: no median, NaN).
    guess : array_like, optional
        (G,): a guess of each group's median squared distance (e.g. without the filter); only the speed
        depends on it.
    method : str
        ``auto``, ``kernel`` or ``array``.

    Returns
    -------
    close : numpy.ndarray
        (R, B) int64: pairs closer than each radius.
    among : numpy.ndarray
        (M, B) int64: close pairs among each mask's pairs at its radius.
    median : numpy.ndarray
        (B,) float64: the median squared distance over the kept pairs (NaN when a group keeps none).

    Examples
    --------
    >>> pl = [np.array([[0.0, 0.5, 2.0, 2.9]])]
    >>> close, among, med = dense_pair_statistics(pl, [1.0], [(1.0, np.ones((1, 6), bool))], np.ones((1, 6), bool))
    >>> close.tolist(), among.tolist(), med.tolist()
    ([[2]], [[2]], [2.2050000429153442])
    """
    arr = _planes_array(planes)
    k, b, n = arr.shape
    if not 1 <= k <= 3:
        raise ValueError(f"dense_pair_statistics takes 1 to 3 coordinate planes, got {k}")
    radii = [float(r) for r in radii]
    p = pair_count(n)
    if method not in ("auto", "kernel", "array"):
        raise ValueError(f"method must be auto, kernel or array, got {method!r}")
    if method == "array" or (method == "auto" and b * p < KERNEL_MIN_PAIRS
                             and "cvdfilter.metrics.pair_kernel" not in sys.modules):
        return _array_statistics(list(arr), radii, masks, keep)
    return _kernel_statistics(arr, radii, list(masks), keep, guess)


def _planes_array(planes) -> np.ndarray:
    """The coordinate planes as one (k, B, N) float64 array: a float64 array of that shape is taken as it is
    (any strides, e.g. a transposed view: no copy), anything else is stacked."""
    if isinstance(planes, np.ndarray) and planes.ndim == 3 and planes.dtype == np.float64:
        return planes
    return np.ascontiguousarray(np.stack([np.asarray(c, dtype=float) for c in planes]))


def sq_distances(planes, *, method: str = "auto") -> np.ndarray:
    """float64 squared distances of all pairs of every point set (B, P), offset layout: the numbers of
    ``all_pair_sq_distances(planes, dtype=float)`` (``method="array"``), or the same bits from the compiled
    kernel (``"kernel"``; ``"auto"`` as :func:`dense_pair_statistics` chooses)."""
    arr = _planes_array(planes)
    k, b, n = arr.shape
    if method not in ("auto", "kernel", "array"):
        raise ValueError(f"method must be auto, kernel or array, got {method!r}")
    if method == "array" or (method == "auto" and b * pair_count(n) < KERNEL_MIN_PAIRS
                             and "cvdfilter.metrics.pair_kernel" not in sys.modules):
        return all_pair_sq_distances(list(arr), dtype=float)
    from .pair_kernel import sq_distances_kernel

    out = np.empty((b, pair_count(n)))
    sq_distances_kernel(arr, out)
    return out


def _kernel_statistics(arr: np.ndarray, radii: list, masks: list, keep, guess) -> tuple:
    """:func:`dense_pair_statistics` by the compiled kernel; its fallback rows by the array path."""
    from .pair_kernel import pair_statistics_kernel

    b, p = arr.shape[1], pair_count(arr.shape[2])
    groups = keep.shape[0] if keep is not None else (masks[0][1].shape[0] if masks else 1)
    keep_u8 = np.zeros((groups, p), dtype=np.uint8) if keep is None else np.ascontiguousarray(keep, dtype=np.uint8)
    mask_u8 = (np.ascontiguousarray(np.stack([np.broadcast_to(m, (groups, p)) for _, m in masks]), dtype=np.uint8)
               if masks else np.zeros((0, groups, p), dtype=np.uint8))
    mask_radius = np.array([radii.index(float(r)) for r, _ in masks], dtype=np.int64)
    close = np.zeros((b, len(radii)), dtype=np.int64)
    among = np.zeros((b, len(masks)), dtype=np.int64)
    upper = np.full(b, np.nan)
    lower = np.full(b, np.nan)
    fallback = np.zeros(b, dtype=bool)
    r32 = np.array([r * r for r in radii], dtype=np.float32)
    start = np.full(groups, np.nan) if guess is None else np.broadcast_to(np.asarray(guess, dtype=float), (groups,))
    keep_count = keep_u8.sum(axis=1, dtype=np.int64)
    sparse_idx, sparse_len = _sparse_lists(mask_u8)
    drop_idx, drop_len = _sparse_lists((keep_u8 == 0).view(np.uint8)[None])  # the pairs not kept, when few
    pair_statistics_kernel(arr, groups, r32, mask_u8, mask_radius, sparse_idx, sparse_len, keep_u8, keep_count,
                           drop_idx[0], drop_len[0], np.ascontiguousarray(start), close, among, upper, lower,
                           fallback)
    count = keep_count[np.arange(b) % groups]
    even = (count % 2 == 0) & (count > 0)
    med = np.where(even, 0.5 * (upper + lower), upper)  # NaN where a group keeps no pair (upper is NaN)
    for row in np.flatnonzero(fallback):  # rare: recomputed by the array path
        g = row % groups
        c1, a1, m1 = _array_statistics([c[row:row + 1] for c in arr], radii,
                                       [(r, m[g:g + 1]) for r, m in masks],
                                       None if keep is None else keep[g:g + 1])
        close[row], among[row], med[row] = c1[:, 0], a1[:, 0], m1[0]
    return close.T, among.T, med


#: A mask is counted from its list of pairs when no group's mask holds more than this share of the pairs
#: (looking a pair up costs several times a dense pass's share per pair).
SPARSE_SHARE = 1 / 16


def _sparse_lists(masks: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Pair lists of the sparse masks among ``masks`` (M, G, P), uint8 0/1, C-ordered: (M, G, L) int32 indices
    and (M, G) lengths, -1 for the masks counted densely (see :data:`SPARSE_SHARE`)."""
    m_count, g_count, p = masks.shape
    lengths = np.full((m_count, g_count), -1, dtype=np.int64)
    lists = []
    for m in range(m_count):
        mask = masks[m].view(bool)  # 0/1 bytes: nonzero on booleans is several times quicker
        counts = np.count_nonzero(mask, axis=1)
        if counts.size and counts.max() <= p * SPARSE_SHARE:
            rows, cols = np.divmod(np.flatnonzero(mask), p)
            starts = np.concatenate([[0], np.cumsum(counts)[:-1]])
            idx = np.zeros((g_count, max(int(counts.max()), 1)), dtype=np.int32)
            idx[rows, np.arange(rows.size) - starts[rows]] = cols
            lengths[m] = counts
            lists.append((m, idx))
    width = max([idx.shape[1] for _, idx in lists], default=1)
    out = np.zeros((m_count, g_count, width), dtype=np.int32)
    for m, idx in lists:
        out[m, :, :idx.shape[1]] = idx
    return out, lengths


def _array_statistics(planes, radii, masks, keep) -> tuple:
    """:func:`dense_pair_statistics` by the array path: (R, B), (M, B), (B,)."""
    b = planes[0].shape[0]
    d2 = all_pair_sq_distances(planes)
    close = np.zeros((len(radii), b), dtype=np.int64)
    among = np.zeros((len(masks), b), dtype=np.int64)
    for ri, r in enumerate(radii):
        mine = [mi for mi, (mr, _) in enumerate(masks) if float(mr) == r]
        groups = [np.asarray(masks[mi][1], dtype=bool) for mi in mine]
        c1, am = dense_close_counts(d2, planes, r, groups)
        close[ri] = c1
        for mi, a in zip(mine, am):
            among[mi] = a
    if keep is None:
        return close, among, np.full(b, np.nan)
    keep = np.asarray(keep, dtype=bool)
    finite = all(bool(np.isfinite(c).all()) for c in planes)  # then every squared distance is >= 0
    med = median_of_kept(d2.reshape(-1, keep.shape[0], d2.shape[1]), keep, nonnegative=finite).ravel()
    return close, among, med
