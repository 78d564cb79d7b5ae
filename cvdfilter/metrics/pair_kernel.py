"""The compiled kernel of the dense pair statistics (numba): every pair's distance, counts and median, per set.

:func:`cvdfilter.metrics.pair_statistics.dense_pair_statistics` is the entry point; this module holds its
inner loop, compiled once by numba (cached on disk) and run without the GIL, so the execution layer's
threads run sets side by side. Per point set (a row of the coordinate planes) the kernel forms the
squared distance of every pair with the arithmetic of
:func:`~cvdfilter.metrics.pair_distances.all_pair_sq_distances` (differences in float64, squared and summed
coordinate by coordinate, then rounded to float32; the offset layout), and from those float32 values

* the close pairs at every radius and, per mask, the close pairs among the mask's pairs, as
  :func:`~cvdfilter.metrics.pair_distances.dense_close_counts` counts them (a value below float32(r^2));
* the exact median of the kept pairs' values, as
  :func:`~cvdfilter.metrics.pair_distances.median_of_kept` selects it: the middle order statistic (the mean
  of the two middle ones for an even count), found by a three-pass radix selection on the values' bit
  patterns (non-negative IEEE floats order like their bits as integers).

A row with a non-finite coordinate, or with a value *equal* to float32(r^2) at some radius (where the
count needs the float64 arithmetic of the count it stands for), is not finished here: it is flagged, and
the caller recomputes that row with the array path. The kernel's results are therefore identical, bit
for bit, to the array path's (tests/test_pair_kernel.py).

Also :func:`sq_distances_kernel`: the float64 squared distances themselves (a block's references).

Public: :func:`pair_statistics_kernel`, :func:`sq_distances_kernel`.
"""

from __future__ import annotations

import numpy as np
from numba import njit

__all__ = ["pair_statistics_kernel", "sq_distances_kernel"]


@njit(cache=True, nogil=True)
def _find(hist, size, kth):
    """The bucket holding the ``kth`` smallest of a histogram, and the rank within it."""
    below = 0
    for b in range(size):
        h = hist[b]
        if below + h > kth:
            return b, kth - below
        below += h
    return size - 1, 0  # not reached: kth < the histogram's total


@njit(cache=True, nogil=True)
def _radix_level(src, n, shift, width, kth, dst, hist, best):
    """One level of the radix selection: the bucket of the ``width`` bits above ``shift`` that holds the
    ``kth`` smallest of ``src[:n]``, its values copied to ``dst`` (returns bucket, rank within it, their
    number, and ``best`` raised to the largest value in a lower bucket)."""
    size = 1 << width
    mask = size - 1
    for b in range(size):
        hist[b] = 0
    for t in range(n):
        hist[(src[t] >> shift) & mask] += 1
    bucket, kth = _find(hist, size, kth)
    m = 0
    for t in range(n):
        x = src[t]
        h = (x >> shift) & mask
        dst[m] = x
        m += h == bucket
        best = max(best, x if h < bucket else np.int32(-1))
    return bucket, kth, m, best


@njit(cache=True, nogil=True)
def _median_keys(bits, keep, half, keys, tmp, hist):
    """The kept values' order statistics of rank ``half`` and ``half - 1`` as int32 bit patterns (radix
    selection on the top 10, middle 11 and low 10 bits of the non-negative keys); ``keys``, ``tmp`` and
    ``hist`` are scratch. The second one is the first again when it is repeated below rank ``half``, else
    the largest kept value below it (tracked during the passes, without branches)."""
    nk = 0
    for p in range(bits.shape[0]):  # the kept values
        keys[nk] = bits[p]
        nk += keep[p] != 0
    best = np.int32(-1)
    top, kth, m, best = _radix_level(keys, nk, 21, 10, half, tmp, hist, best)
    mid, kth, m, best = _radix_level(tmp, m, 10, 11, kth, keys, hist, best)
    low, kth, m, best = _radix_level(keys, m, 0, 10, kth, tmp, hist, best)
    u = (top << 21) | (mid << 10) | low
    return u, (u if kth >= 1 else best)


#: Values in the window the bracketing search leaves for a sort (see :func:`_median_bracket`).
_WINDOW = 48
#: Probes aimed at the median itself once the bracket is that small, before the window is sorted.
_TRIES = 16
#: A key above every finite non-negative float32 key (+inf's bits 0x7F800000 plus one).
_ABOVE = 0x7F800001


#: Values counted per block in float32 lanes (a count below 2**24 is exact) before it joins an int64 total.
_COUNT_BLOCK = 1 << 20


@njit(cache=True, nogil=True, fastmath={"reassoc"})
def _below(x, probe):
    """How many of ``x`` (at most :data:`_COUNT_BLOCK`) are below ``probe``, and how many equal it: counted in
    float32 lanes, whole numbers below 2**24, so exact in whatever order the compiler adds them."""
    one, zero = np.float32(1.0), np.float32(0.0)
    c = zero
    e = zero
    for p in range(x.shape[0]):
        v = x[p]
        c += one if v < probe else zero
        e += one if v == probe else zero
    return c, e


@njit(cache=True, nogil=True, fastmath={"reassoc"})
def _below_among(x, probe, mask):
    """How many of ``x`` are below ``probe`` where ``mask`` is set (as :func:`_below`, float32 lanes)."""
    one, zero = np.float32(1.0), np.float32(0.0)
    c = zero
    for p in range(x.shape[0]):
        c += one if (x[p] < probe) & (mask[p] != 0) else zero
    return c


@njit(cache=True, nogil=True, fastmath={"reassoc"})
def _below_keys(x, probe):
    """How many of the int32 keys ``x`` are below the int32 ``probe`` (as :func:`_below`: float32 lanes)."""
    one, zero = np.float32(1.0), np.float32(0.0)
    c = zero
    for p in range(x.shape[0]):
        c += one if x[p] < probe else zero
    return c


@njit(cache=True, nogil=True)
def _count_below(mk, probe):
    """How many of the int32 keys ``mk`` are below ``probe``, compared as int32 (16 lanes, not 8 as int64)
    in blocks of :data:`_COUNT_BLOCK`."""
    q = np.int32(probe)
    total = 0
    for start in range(0, mk.shape[0], _COUNT_BLOCK):
        total += np.int64(_below_keys(mk[start:start + _COUNT_BLOCK], q))
    return total


@njit(cache=True, nogil=True)
def _median_bracket(mk, kp, drop, count, half, guess, tmp):
    """The order statistics of rank ``half`` and ``half - 1`` of the kept keys (``mk``: the keys, ``kp`` the
    kept ones; ``drop``: the positions of the keys not kept that are not 0x7FFFFFFF already, taken off each
    count), by bracketing: counting passes (vectorised) at probe keys, starting at
    ``guess`` (e.g. the same member's median with the previous filter), until the bracket [lo, hi) holds
    both ranks and at most :data:`_WINDOW` values, which are then sorted. Exact: the probes only decide
    how fast the bracket closes. Returns (-1, -1) if it did not close (the caller then selects by radix).
    """
    need_lo = half - 1 if half >= 1 else 0
    lo, c_lo, has_lo = 0, 0, False
    hi, c_hi, has_hi = _ABOVE, count, False
    step = 1 << 18  # about 3 % of the value (the keys are nearly a log scale)
    p = min(max(guess, 1), _ABOVE - 1)
    slow = 0
    tries = 0
    for _ in range(80):
        c = _count_below(mk, p)
        for t in range(drop.shape[0]):
            c -= mk[drop[t]] < p
        size = c_hi - c_lo
        if c <= need_lo:
            lo, c_lo, has_lo = p, c, True
        elif c > half:
            hi, c_hi, has_hi = p, c, True
        else:  # exactly `half` keys below p: rank half is the least key >= p, rank half - 1 the largest < p
            a = np.int32(-1)
            b = np.int32(0x7FFFFFFF)
            q = np.int32(p)  # int32 comparisons: twice the lanes of int64 ones
            for t in range(mk.shape[0]):
                x = mk[t]
                a = max(a, x if (x < q) & (kp[t] != 0) else np.int32(-1))
                b = min(b, x if (x >= q) & (kp[t] != 0) else np.int32(0x7FFFFFFF))
            return b, (a if half >= 1 else b)
        if hi - lo <= 1 or (c_hi - c_lo <= _WINDOW and tries >= _TRIES):
            break
        slow = slow + 1 if 2 * (c_hi - c_lo) > size else 0
        if c_hi - c_lo <= _WINDOW:  # aim between ranks half - 1 and half: one min/max pass then answers
            tries += 1
            frac = (half - c_lo) / (c_hi - c_lo)
            p = lo + int((hi - lo) * frac)
            p = min(max(p, lo + 1), hi - 1)
        elif not has_hi:
            p = min(lo + step, _ABOVE - 1)
            step *= 2
        elif not has_lo:
            p = max(hi - step, 1)
            step *= 2
        elif slow >= 2:
            p = (lo + hi) // 2
            slow = 0
        else:  # interpolate the rank next to the looser side of the bracket
            target = need_lo - _WINDOW // 4 if need_lo - c_lo > c_hi - 1 - half else half + _WINDOW // 4
            frac = (target + 0.5 - c_lo) / (c_hi - c_lo)
            p = lo + int((hi - lo) * min(max(frac, 0.0), 1.0))
            p = min(max(p, lo + 1), hi - 1)
    else:
        return -1, -1
    if hi - lo <= 1:  # every value in the bracket is the key lo
        return lo, lo
    m = 0
    for t in range(mk.shape[0]):
        x = mk[t]
        if x >= lo and x < hi and kp[t] != 0:
            tmp[m] = x
            m += 1
    for i in range(1, m):  # insertion sort of the window
        x = tmp[i]
        j = i - 1
        while j >= 0 and tmp[j] > x:
            tmp[j + 1] = tmp[j]
            j -= 1
        tmp[j + 1] = x
    u = tmp[half - c_lo]
    return u, (tmp[half - 1 - c_lo] if half >= 1 else u)


@njit(cache=True, nogil=True)
def _distances(row, k, n, d2):
    """Squared distances of every pair of one set (coordinates ``row[:k]``) into ``d2`` (float32, or float64 for
    :func:`sq_distances_kernel`), in the offset layout: ``all_pair_sq_distances``' arithmetic
    ((d0 d0 + d1 d1) + d2 d2 in float64, then stored in ``d2``'s type), one loop per dimension count so that
    the compiler vectorises it."""
    x0, x1, x2 = row[0], row[1], row[2]
    pos = 0
    for off in range(1, n):
        m = n - off
        seg = d2[pos:pos + m]  # a slice indexed from 0: contiguous vector stores, not a scatter
        if k == 1:
            for i in range(m):
                d = x0[i + off] - x0[i]
                seg[i] = d * d
        elif k == 2:
            for i in range(m):
                d = x0[i + off] - x0[i]
                e = x1[i + off] - x1[i]
                seg[i] = d * d + e * e
        else:
            for i in range(m):
                d = x0[i + off] - x0[i]
                e = x1[i + off] - x1[i]
                f = x2[i + off] - x2[i]
                seg[i] = d * d + e * e + f * f
        pos += m


@njit(cache=True, nogil=True)
def pair_statistics_kernel(planes, groups, r32, masks, mask_radius, sparse_idx, sparse_len, keep, keep_count, drop_idx,
                           drop_len, guess, close, among, upper, lower, fallback):
    """Fills the pair statistics of every row of ``planes`` (see the module docstring).

    Parameters
    ----------
    planes : float64 (k, B, N)
        The coordinate planes of B point sets of N points, k = 1, 2 or 3.
    groups : int
        G: row b uses row ``b % G`` of ``masks`` and ``keep``.
    r32 : float32 (R,)
        float32(r^2) of each radius.
    masks : uint8 (M, G, P)
        Pair masks in the offset layout; mask m counts at radius ``mask_radius[m]``.
    sparse_idx, sparse_len : int32 (M, G, L), int64 (M, G)
        A sparse mask's pairs as a list (its first ``sparse_len[m, g]`` entries), counted by looking those
        pairs up instead of a pass over every pair; ``sparse_len[m, g] < 0``: mask m is counted densely.
    keep, keep_count : uint8 (G, P), int64 (G,)
        The median's pairs per group and how many they are.
    drop_idx, drop_len : int32 (G, L), int64 (G,)
        The pairs a group does not keep, listed when they are few (``drop_len[g] < 0``: not listed).
    guess : float64 (G,)
        A first guess of each group's median squared distance (NaN: none); the previous row of the same
        group is used when there is one. Only the speed depends on it.
    close, among : int64 (B, R), (B, M)
        Out: close pairs per radius; close pairs among each mask's pairs.
    upper, lower : float64 (B,)
        Out: the kept values' order statistics of rank c // 2 and c // 2 - 1 (the median is ``upper`` for
        an odd count c, their mean for an even one; NaN when c is 0).
    fallback : bool (B,)
        Out: True for rows the kernel did not finish (non-finite coordinates, or a value equal to a
        radius' float32(r^2)).
    """
    k, n_rows, n = planes.shape
    n_pairs = n * (n - 1) // 2
    d2 = np.empty(n_pairs, dtype=np.float32)
    row = np.empty((3, n))
    work = (np.empty(n_pairs, dtype=np.int32), np.empty(n_pairs, dtype=np.int32), np.empty(n_pairs, dtype=np.int32),
            np.empty(1 << 11, dtype=np.int64), np.empty(2, dtype=np.int32))
    for b in range(n_rows):
        g = b % groups
        if not _load_row(planes, b, row):
            fallback[b] = True
            continue
        _distances(row, k, n, d2)
        if not _row_counts(d2, r32, masks[:, g], mask_radius, sparse_idx[:, g], sparse_len[:, g], close[b], among[b]):
            fallback[b] = True
            continue
        if keep_count[g] == 0:
            upper[b] = np.nan
            lower[b] = np.nan
            continue
        prev = upper[b - groups] if b >= groups else guess[g]
        upper[b], lower[b] = _row_median(d2, keep[g], keep_count[g], prev, work, drop_idx[g], drop_len[g])


@njit(cache=True, nogil=True)
def _load_row(planes, b, row):
    """Copies set ``b``'s coordinates into ``row``; False if one is not finite."""
    k, _, n = planes.shape
    finite = True
    for c in range(k):
        for i in range(n):
            v = planes[c, b, i]
            row[c, i] = v
            if not (v - v == 0.0):  # NaN or +-inf
                finite = False
    return finite


@njit(cache=True, nogil=True)
def _row_counts(d2, r32, masks, mask_radius, idx, lengths, close, among):
    """Counts of one set from its distances ``d2``: pairs below each radius, and among each mask's pairs
    (``masks`` (M, P) of its group, or the pair lists ``idx[m, :lengths[m]]`` of the sparse ones); False
    (counts unfinished) if a value equals a radius' float32(r^2). Dense counts go block by block
    (:func:`_below`, :func:`_below_among`) into int64 totals."""
    n_pairs = d2.shape[0]
    for r in range(r32.shape[0]):
        cnt = 0
        eq = 0
        for start in range(0, n_pairs, _COUNT_BLOCK):
            c, e = _below(d2[start:start + _COUNT_BLOCK], r32[r])
            cnt += np.int64(c)
            eq += np.int64(e)
        close[r] = cnt
        if eq:
            return False
    for m in range(masks.shape[0]):
        rr = r32[mask_radius[m]]
        cnt = 0
        if lengths[m] >= 0:
            ids = idx[m]
            for t in range(lengths[m]):
                cnt += d2[ids[t]] < rr
        else:
            for start in range(0, n_pairs, _COUNT_BLOCK):
                cnt += np.int64(_below_among(d2[start:start + _COUNT_BLOCK], rr, masks[m, start:start + _COUNT_BLOCK]))
        among[m] = cnt
    return True


@njit(cache=True, nogil=True)
def _row_median(d2, keep, count, prev, work, drop, n_drop):
    """The kept values' order statistics of rank count // 2 and count // 2 - 1 (NaN when count < 2), as
    float64, from the set's float32 distances ``d2``; ``prev`` a guess of the median (NaN: none). With the
    pairs not kept listed (``drop[:n_drop]``, ``n_drop >= 0``) the keys are the distances' own bits and the
    listed pairs are taken off each count; else (``n_drop < 0``) keys are built with the pairs not kept
    above every key."""
    mk, tmp, keys, hist, pair = work
    bits = d2.view(np.int32)
    as_float = pair.view(np.float32)
    half = count // 2
    if n_drop >= 0:
        mk = bits
        drop = drop[:n_drop]
    else:
        for p in range(d2.shape[0]):  # the kept keys; the others above every key
            mk[p] = bits[p] if keep[p] != 0 else np.int32(0x7FFFFFFF)
        drop = drop[:0]
    start = np.int32(0x3F800000)  # 1.0, when there is nothing better
    if prev == prev and prev > 0.0:
        as_float[0] = np.float32(prev)
        start = pair[0]
    u, w = _median_bracket(mk, keep, drop, count, half, start, tmp)
    if u < 0:
        u, w = _median_keys(bits, keep, half, keys, tmp, hist)
    pair[0] = u
    pair[1] = w
    return np.float64(as_float[0]), (np.float64(as_float[1]) if half >= 1 else np.nan)


@njit(cache=True, nogil=True)
def sq_distances_kernel(planes, out):
    """float64 squared distances of every pair of every set of ``planes`` (k, B, N) into ``out`` (B, P), in
    the offset layout, with :func:`~cvdfilter.metrics.pair_distances.all_pair_sq_distances`' arithmetic
    (``dtype=float``; :func:`_distances` with a float64 output)."""
    k, n_rows, n = planes.shape
    row = np.zeros((3, n))
    for b in range(n_rows):
        _load_row(planes, b, row)  # non-finite coordinates give non-finite distances, as in numpy
        _distances(row, k, n, out[b])
