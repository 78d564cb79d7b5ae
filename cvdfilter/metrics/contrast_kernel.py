"""numba body of the contrast planes of :func:`cvdfilter.metrics.contrast.contrast_rms` (imported only when numba is
loaded already).

Per channel and point set (row b), ``c[b, j] = N[b, j] / D[b, j] - 1`` (or ``N[b, j] - 1`` without a
denominator), where N and D are sums over the channel's cones of ``catches[b, i, j] * factor[i, b]`` taken in
cone order, each product rounded once and added in turn: numpy's arithmetic in ``contrast_rms`` (a term, then
``np.add``; ``np.divide``; ``- 1.0``), so the same bits (tests/test_pair_kernel.py), row by row in the cache
instead of one array per operation.

Public: :func:`channel_contrast`.
"""

from __future__ import annotations

import numpy as np
from numba import njit

__all__ = ["channel_contrast"]


@njit(cache=True, nogil=True)
def _weighted(cat, b, cones, factors, out):
    """``out[:] = sum over cones (in order) of cat[b, i, :n] * factors[i, b]``, the first term assigned."""
    n = out.shape[0]
    i = cones[0]
    src = cat[b, i]
    f = factors[i, b]
    for j in range(n):
        out[j] = src[j] * f
    for t in range(1, cones.shape[0]):
        i = cones[t]
        src = cat[b, i]
        f = factors[i, b]
        for j in range(n):
            out[j] = out[j] + src[j] * f


@njit(cache=True, nogil=True, error_model="numpy")  # x / 0 gives inf or NaN, as in numpy
def channel_contrast(cat, num_cones, num_factors, den_cones, den_factors, out):
    """One channel's contrasts of every set into ``out`` (B, N): ``cat`` (B, 3, M >= N) the cone catches of
    the sets' points (the first N of each cone's row), ``*_cones`` the cones with a non-zero weight (int64, in
    order; no denominator: empty ``den_cones``), ``*_factors`` (3, B) each cone's weight times the set's gain
    over the white's weighted sum. Row by row, in the cache; the division and the subtraction in loops of
    their own (so that the compiler vectorises the division)."""
    n = out.shape[1]
    den = np.empty(n)
    for b in range(out.shape[0]):
        row = out[b]
        _weighted(cat, b, num_cones, num_factors, row)
        if den_cones.shape[0]:
            _weighted(cat, b, den_cones, den_factors, den)
            for j in range(n):
                row[j] = row[j] / den[j]
        for j in range(n):
            row[j] = row[j] - 1.0
