"""Distances of all pairs of many point sets at once: the dense path of :mod:`cvdfilter.metrics.pairs`.

Distributions. The scorecard also reports statistics over *all* pairs (counts
at several thresholds, the median distance). For those the distances of every
pair of every set are formed at once (:func:`pair_indices`,
:func:`pair_sq_distances`: one gather and subtraction per coordinate, about
5 million pairs per chunk of 1,024 filters) and reduced row by row
(:func:`count_rows`, :func:`median_rows`). This dense path is exact in float64
too; the sweep stays the faster choice when only close pairs matter.

Counts from the dense distances. When the float32 distances of all pairs are formed anyway (for the
median), the counts come from them too (:func:`dense_close_counts`), exactly: rounding float64 to float32
is monotone, so a float32 value below (above) the float32 of r^2 means the float64 value is below (above)
r^2; only a value *equal* to float32(r^2) (a relative window of about 6e-8 around the threshold) is
ambiguous, and those few pairs are recomputed in float64 with the arithmetic of the count they stand
for (:func:`count_close_pairs` or :func:`count_close_among`). A pair at exactly the threshold is not
close (the comparison is strict), as everywhere in this module.

Public: :func:`pair_count`, :func:`pair_indices`, :func:`pair_sq_distances`, :func:`offset_order`,
:func:`all_pair_sq_distances`, :func:`median_rows`, :func:`median_of_kept`, :func:`principal_rotations`,
:func:`gather_sq_distances`, :func:`offset_pairs`, :func:`dense_close_counts`
(all re-exported by :mod:`cvdfilter.metrics.pairs`).
"""

from __future__ import annotations

import numpy as np

__all__ = ["pair_count", "pair_indices", "pair_sq_distances", "offset_order", "all_pair_sq_distances", "median_rows",
           "median_of_kept", "principal_rotations", "gather_sq_distances", "offset_pairs",
           "dense_close_counts"]

#: Rows per selection (median) and per block of all-pair distances: about 2 MB of float32, in the CPU cache.
_SELECT_ROWS = 128
#: Sign mask of the float64-to-int64 sort key (``pairs._sort_rows`` and :func:`_sweep_values`).
_SIGN = np.int64(0x7FFFFFFFFFFFFFFF)


def pair_count(n: int) -> int:
    """Number of unordered pairs of ``n`` items, n (n - 1) / 2.

    >>> pair_count(99)
    4851
    """
    return n * (n - 1) // 2


def pair_indices(n: int) -> tuple[np.ndarray, np.ndarray]:
    """Index arrays (i, j), i < j, of all n (n - 1) / 2 unordered pairs, in row-major order.

    >>> [a.tolist() for a in pair_indices(3)]
    [[0, 0, 1], [1, 2, 2]]
    """
    i, j = np.triu_indices(int(n), k=1)
    return i.astype(np.intp), j.astype(np.intp)


def pair_sq_distances(planes, i, j) -> np.ndarray:
    """Squared Euclidean distances of the listed pairs, for every point set.

    Parameters
    ----------
    planes : sequence of array_like
        k coordinate planes, each (B, N).
    i, j : array_like of int
        Shape (P,): the pairs.

    Returns
    -------
    numpy.ndarray
        Shape (B, P), float64.

    Examples
    --------
    >>> pair_sq_distances([np.array([[0.0, 3.0, 0.0]]), np.array([[0.0, 0.0, 4.0]])], [0, 0, 1], [1, 2, 2]).tolist()
    [[9.0, 16.0, 25.0]]
    """
    d2 = None
    for c in planes:
        c = np.asarray(c, dtype=float)
        d = np.take(c, i, axis=1)
        d -= np.take(c, j, axis=1)
        d *= d
        if d2 is None:
            d2 = d
        else:
            d2 += d
    assert d2 is not None  # at least one plane
    return d2


def offset_order(i, j, n: int) -> np.ndarray:
    """Columns of the pairs (i, j), i < j, in the layout of :func:`all_pair_sq_distances`.

    >>> offset_order([0, 1, 0], [1, 2, 2], 3).tolist()
    [0, 1, 2]
    """
    i = np.asarray(i, dtype=np.intp)
    off = np.asarray(j, dtype=np.intp) - i
    start = (off - 1) * n - (off - 1) * off // 2  # pairs of offsets 1 .. off-1: sum of (n - o)
    return start + i


def all_pair_sq_distances(planes, *, dtype=np.float32, exclude=None) -> np.ndarray:
    """Squared distances of all pairs of every point set, laid out by offset (see :func:`offset_order`).

    Pairs (i, i + 1) come first, then (i, i + 2), and so on: each offset is one
    contiguous slice of the planes, which is several times faster than
    gathering pairs by index.

    Parameters
    ----------
    planes : sequence of array_like
        k coordinate planes, each (B, N).
    dtype : numpy dtype
        Of the result (differences are formed in float64 first).
    exclude : array_like of int, optional
        Columns (from :func:`offset_order`) set to +inf, so that they sort last.

    Returns
    -------
    numpy.ndarray
        Shape (B, N (N - 1) / 2).

    Examples
    --------
    >>> all_pair_sq_distances([np.array([[0.0, 1.0, 3.0]])], dtype=float).tolist()
    [[1.0, 4.0, 9.0]]
    """
    planes = [np.asarray(c, dtype=float) for c in planes]
    b, n = planes[0].shape
    out = np.empty((b, pair_count(n)), dtype=dtype)
    for lo in range(0, b, _SELECT_ROWS):  # blocks of rows that stay in the CPU cache
        hi = min(b, lo + _SELECT_ROWS)
        pos = 0
        for off in range(1, n):
            m = n - off
            acc = None
            for c in planes:
                d = c[lo:hi, off:] - c[lo:hi, :m]
                d *= d
                acc = d if acc is None else np.add(acc, d, out=acc)
            out[lo:hi, pos:pos + m] = acc
            pos += m
    if exclude is not None and len(exclude):
        out[:, np.asarray(exclude, dtype=np.intp)] = np.inf
    return out


def median_rows(values, count: int | None = None) -> np.ndarray:
    """Median of the ``count`` smallest values of each row of a (B, P) array, by selection.

    With ``count`` None, the median of each row. Rows may carry +inf in the
    columns beyond ``count`` (excluded values, see :func:`all_pair_sq_distances`).
    The selection runs in float32 (the values are distances reported to a few
    significant digits; float32 halves the memory traffic); the result is float64.

    >>> median_rows(np.array([[3.0, 1.0, 2.0], [4.0, 1.0, 9.0]])).tolist()
    [2.0, 4.0]
    >>> median_rows(np.array([[1.0, 2.0, 3.0, 10.0]])).tolist()
    [2.5]
    >>> median_rows(np.array([[1.0, np.inf, 3.0]]), count=2).tolist()
    [2.0]
    """
    v = np.asarray(values, dtype=np.float32)
    p = v.shape[1] if count is None else int(count)
    if p == 0:
        return np.full(v.shape[0], np.nan)
    k = p // 2
    if np.all(v >= 0):
        # Non-negative IEEE floats (inf included) order like their bit patterns as int32, and integer
        # selection is faster than float selection.
        part = np.partition(v.view(np.int32), k, axis=1).view(np.float32)
    else:
        part = np.partition(v, k, axis=1)
    upper = part[:, k].astype(float)
    if p % 2:
        return upper
    return 0.5 * (upper + part[:, :k].max(axis=1).astype(float))


def median_of_kept(values, keep, *, nonnegative: bool = False) -> np.ndarray:
    """Median of each row over the columns it keeps, for groups of rows with different kept columns.

    The exact middle order statistic (the mean of the two middle ones for an even count), as
    :func:`median_rows`, but one selection serves rows that keep different numbers of columns (e.g. the
    members of a population, each with its own set of pairs): the left-out columns of a row are filled
    so that its median sits at the same rank K = P // 2 in every row. With c kept columns (median rank
    c // 2), a = P // 2 - c // 2 of the P - c left-out columns get a value below every kept one (0 in
    the integer keys, or -inf) and the rest +inf; 0 <= a <= P - c always holds. The selection runs on
    the float32 values (as :func:`median_rows`, by their int32 bit patterns when none is negative);
    ties do not matter: an order statistic is a value, and the fillers are at or beyond every kept value.

    Parameters
    ----------
    values : array_like
        Shape (..., G, P): float32 values (e.g. squared distances of all pairs); overwritten in the
        left-out columns when it is a float32 array already.
    keep : array_like of bool
        Shape (G, P): the columns each group of rows keeps.
    nonnegative : bool
        The caller knows every value is >= 0 and none is NaN (squared distances of finite points): skips
        the pass that checks it.

    Returns
    -------
    numpy.ndarray
        Shape (..., G), float64; NaN where a group keeps no column.

    Examples
    --------
    >>> v = np.array([[3.0, 1.0, 2.0, 10.0], [4.0, 1.0, 9.0, 5.0]], dtype=np.float32)
    >>> median_of_kept(v, np.array([[True, True, True, False], [True, True, True, True]])).tolist()
    [2.0, 4.5]
    """
    v = np.asarray(values, dtype=np.float32)
    keep = np.asarray(keep, dtype=bool)
    p = v.shape[-1]
    if keep.ndim != 2 or keep.shape[1] != p or v.ndim < 2 or v.shape[-2] != keep.shape[0]:
        raise ValueError(f"keep must be (groups, columns) matching values {v.shape}, got {keep.shape}")
    count = keep.sum(axis=1)
    big = p // 2
    low = (p // 2 - count // 2)[:, None]  # left-out columns placed below every kept value, per group
    left = ~keep
    rank_left = np.cumsum(left, axis=1) - 1
    if p == 0:
        return np.full(v.shape[:-1], np.nan)
    below = rank_left < low
    flat = v.reshape(-1, keep.size)  # (rows of groups, G * P): the left-out columns are few, set them alone
    cols = np.flatnonzero(left)
    if cols.size:
        flat[:, cols] = np.where(below.ravel()[cols], np.float32(0.0), np.float32(np.inf))
    nonneg = nonnegative or bool(v.min() >= 0)  # False with a NaN or a negative value
    if not nonneg and (left & below).any():
        flat[:, np.flatnonzero(left & below)] = -np.inf
    rows = v.reshape(-1, p)
    upper_rows = np.empty(rows.shape[0], dtype=np.float32)
    lower_rows = np.empty(rows.shape[0], dtype=np.float32)
    for lo in range(0, rows.shape[0], _SELECT_ROWS):  # blocks of rows that stay in the CPU cache
        block = rows[lo:lo + _SELECT_ROWS]
        if nonneg:
            part = np.partition(block.view(np.int32), big, axis=-1).view(np.float32)
        else:
            part = np.partition(block, big, axis=-1)
        upper_rows[lo:lo + _SELECT_ROWS] = part[:, big]
        if big >= 1:
            lower_rows[lo:lo + _SELECT_ROWS] = part[:, :big].max(axis=-1)
    upper = upper_rows.reshape(v.shape[:-1]).astype(float)
    out = upper
    even = (count % 2 == 0) & (count > 0)
    if even.any() and big >= 1:
        lower = lower_rows.reshape(v.shape[:-1]).astype(float)
        with np.errstate(invalid="ignore"):
            out = np.where(even, 0.5 * (upper + lower), upper)
    return np.where(count > 0, out, np.nan)


def principal_rotations(points) -> np.ndarray:
    """:func:`principal_rotation` of many point sets at once: (G, N, k) -> (G, k, k).

    The same arithmetic per set (the covariance as :func:`numpy.cov` forms it, then
    :func:`numpy.linalg.eigh`); every point must be finite.
    """
    p = np.asarray(points, dtype=float)
    g, n, k = p.shape
    if k == 1 or n < 2:
        return np.broadcast_to(np.eye(k), (g, k, k)).copy()
    x = np.ascontiguousarray(p.transpose(0, 2, 1))  # (G, k, N), as np.cov's rows
    x -= x.mean(axis=2)[:, :, None]
    c = np.matmul(x, x.transpose(0, 2, 1))
    c *= np.true_divide(1, n - 1)
    _, vectors = np.linalg.eigh(c)
    return vectors[:, :, ::-1]


def gather_sq_distances(planes, i, j) -> np.ndarray:
    """Squared distances of pairs listed per group: planes (F, G, N), i and j (G, L) -> (F, G, L).

    The arithmetic of :func:`count_close_among` (difference, square, sum over coordinates in order);
    padding entries of i, j may point at any pair and are masked by the caller.
    """
    i = np.asarray(i, dtype=np.intp)
    j = np.asarray(j, dtype=np.intp)
    g, n_l = i.shape
    d2 = None
    for c in planes:
        c = np.asarray(c, dtype=float)
        f, _, n = c.shape
        flat = c.reshape(f, g * n)
        base = (np.arange(g, dtype=np.intp) * n)[:, None]
        d = np.take(flat, (i + base).ravel(), axis=1)
        d -= np.take(flat, (j + base).ravel(), axis=1)
        d2 = d * d if d2 is None else d2 + d * d
    assert d2 is not None  # at least one plane
    return d2.reshape(-1, g, n_l)


def offset_pairs(n: int) -> tuple[np.ndarray, np.ndarray]:
    """(i, j) of every column of :func:`all_pair_sq_distances` (the offset layout).

    >>> [a.tolist() for a in offset_pairs(3)]
    [[0, 1, 0], [1, 2, 2]]
    """
    n = int(n)
    if n < 2:
        return np.zeros(0, dtype=np.intp), np.zeros(0, dtype=np.intp)
    off = np.repeat(np.arange(1, n, dtype=np.intp), np.arange(n - 1, 0, -1))
    start = (off - 1) * n - (off - 1) * off // 2
    i = np.arange(pair_count(n), dtype=np.intp) - start
    return i, i + off


def _sweep_values(x: np.ndarray, n: int) -> np.ndarray:
    """The first coordinate of a set of ``n`` points as :func:`_sort_rows` hands it to the sweep (lowest
    mantissa bits cleared)."""
    nbits = max(1, (n - 1).bit_length())
    if nbits > 20:
        return x
    low = np.int64(-(1 << nbits))
    bits = np.ascontiguousarray(x, dtype=float).view(np.int64)
    key = ((bits >> 63) & _SIGN) ^ bits
    key &= low
    key ^= (key >> 63) & _SIGN
    return key.view(np.float64)


def dense_close_counts(d2, planes, radius: float, masks=()) -> tuple:
    """Pairs closer than ``radius`` from the float32 distances of all pairs, exactly (module docstring).

    Parameters
    ----------
    d2 : numpy.ndarray
        (B, P) float32 from :func:`all_pair_sq_distances` of ``planes`` (unmodified).
    planes : sequence of numpy.ndarray
        The k coordinate planes (B, N), float64, all finite.
    radius : float
    masks : sequence of numpy.ndarray
        Each (G, P) bool in the offset layout: the pairs of a group of rows (rows are (B // G, G)).

    Returns
    -------
    close : numpy.ndarray
        (B,) int64: equal to :func:`count_close_pairs` of ``planes``.
    among : list of numpy.ndarray
        Per mask (B,) int64: equal to :func:`count_close_among` of the mask's pairs.

    Examples
    --------
    >>> pl = [np.array([[0.0, 0.5, 2.0, 2.9]])]
    >>> close, (among,) = dense_close_counts(all_pair_sq_distances(pl), pl, 1.0, [np.ones((1, 6), bool)])
    >>> close.tolist(), among.tolist()
    ([2], [2])
    """
    planes = [np.asarray(c, dtype=float) for c in planes]
    b, n = planes[0].shape
    r2 = radius * radius
    r32 = np.float32(r2)
    acc = np.uint16 if d2.shape[1] < 65536 else np.int64  # uint16 sums are the fastest that cannot overflow
    close = np.zeros(b, dtype=np.int64)
    among = [np.zeros(b, dtype=np.int64) for _ in masks]
    step = int(np.lcm.reduce([m.shape[0] for m in masks] or [1]))
    step *= max(1, _SELECT_ROWS // step)  # blocks of whole groups that stay in the CPU cache
    tied = []
    for lo in range(0, b, step):
        hi = min(b, lo + step)
        lt = d2[lo:hi] < r32
        close[lo:hi] = np.add.reduce(lt.view(np.uint8), axis=1, dtype=acc)
        for m, a in zip(masks, among):
            g = m.shape[0]
            both = np.logical_and(lt.reshape((hi - lo) // g, g, -1), m)
            a[lo:hi] = np.add.reduce(both.view(np.uint8), axis=-1, dtype=acc).reshape(hi - lo)
        tie = d2[lo:hi] == r32
        if tie.any():
            tied.append(lo + np.flatnonzero(tie.any(axis=1)))
    if tied:
        some = np.concatenate(tied)  # the few rows with a tie, then their columns
        sub, cols = np.nonzero(d2[some] == r32)
        rows = some[sub]
        oi, oj = offset_pairs(n)
        i, j = oi[cols], oj[cols]
        d2u = None
        for c in planes:  # count_close_among's arithmetic
            d = c[rows, i] - c[rows, j]
            d2u = d * d if d2u is None else d2u + d * d
        assert d2u is not None  # at least one plane
        yes = d2u < r2
        for m, a in zip(masks, among):
            np.add.at(a, rows, (yes & m[rows % m.shape[0], cols]).astype(np.int64))
        if len(planes) == 1:  # count_close_pairs' arithmetic: the sorted difference against the radius
            sweep = np.abs(planes[0][rows, i] - planes[0][rows, j]) < radius
        else:
            dx = _sweep_values(planes[0][rows, i], n) - _sweep_values(planes[0][rows, j], n)
            dx = dx * dx
            for c in planes[1:]:
                dy = c[rows, i] - c[rows, j]
                dx = dx + dy * dy
            sweep = dx < r2
        np.add.at(close, rows, sweep.astype(np.int64))
    return close, among
