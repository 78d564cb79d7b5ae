"""The compiled pair-statistics kernel gives, bit for bit, the array path's counts and medians.

``dense_pair_statistics`` (metrics/pair_distances.py, kernel in metrics/pair_kernel.py) replaces
``all_pair_sq_distances`` + ``dense_close_counts`` + ``median_of_kept`` in the scorer. The array path is
held to the definitions in tests/test_pairs_exact.py (the sort-and-sweep and index-list counts, numpy's
median); here the kernel is held to the array path on sets built to reach every branch: ties at the radii
(points on a lattice), many equal distances (duplicate points), non-finite coordinates, groups of rows with
different kept pairs, odd and even counts, empty and full keeps, dense and sparse (listed) pair masks, and
guesses good, bad and missing.
Internal consistency checks: the outside reference is numpy's median and the exact counts they rest on.
"""

from __future__ import annotations

import numpy as np
import pytest

from cvdfilter.metrics.pairs import all_pair_sq_distances, dense_close_counts, dense_pair_statistics, median_of_kept


def _array_path(planes, radii, masks, keep):
    d2 = all_pair_sq_distances(planes)
    close, among = [], [None] * len(masks)
    for r in radii:
        mine = [i for i, (mr, _) in enumerate(masks) if mr == r]
        c, a = dense_close_counts(d2, planes, r, [masks[i][1] for i in mine])
        close.append(c)
        for i, x in zip(mine, a):
            among[i] = x
    g = keep.shape[0]
    med = median_of_kept(d2.reshape(-1, g, d2.shape[1]), keep).ravel()
    return np.array(close), np.array(among).reshape(len(masks), -1), med


def _case(seed):
    rng = np.random.default_rng(seed)
    k, n, g = int(rng.integers(1, 4)), int(rng.integers(2, 45)), int(rng.integers(1, 5))
    b = g * int(rng.integers(1, 6))
    planes = [rng.normal(0, rng.choice([0.5, 3.0, 10.0]), (b, n)) for _ in range(k)]
    kind = seed % 6
    if kind == 1:  # a half-unit lattice: distances exactly at the radii (float32 ties)
        planes = [np.round(p * 2) / 2 for p in planes]
    elif kind == 2:  # duplicate points: many equal distances, zeros among them
        planes = [np.round(p / 8) for p in planes]
    elif kind == 3:
        planes[0][0, n // 2] = np.nan
        planes[-1][-1, 0] = -np.inf
    elif kind == 4:  # neighbouring rows alike (as filters of a sweep): the previous row's median is a good guess
        planes = [p[:1] + 0.01 * np.arange(b)[:, None] * rng.normal(size=(1, n)) for p in planes]
    p = n * (n - 1) // 2
    radii = [1.0, 2.0, 4.0]
    # dense masks and sparse ones (at most 1/16 of the pairs in every group: counted from pair lists)
    masks = [(r, rng.random((g, p)) < rng.choice([0.4, 0.05, 0.01])) for r in radii] + \
        [(1.0, rng.random((g, p)) < 0.3), (2.0, rng.random((g, p)) < 0.02), (4.0, np.zeros((g, p), bool))]
    keep = rng.random((g, p)) < rng.choice([0.0, 0.3, 0.97, 1.0])
    guess = [None, rng.uniform(0.001, 1000.0, g), np.full(g, np.nan)][seed % 3]
    return planes, radii, masks, keep, guess


@pytest.mark.parametrize("seed", range(60))
def test_kernel_equals_the_array_path_bit_for_bit(seed):
    planes, radii, masks, keep, guess = _case(seed)
    close, among, med = dense_pair_statistics(planes, radii, masks, keep, guess, method="kernel")
    c0, a0, m0 = _array_path([p.copy() for p in planes], radii, masks, keep)
    assert np.array_equal(close, c0)
    assert np.array_equal(among, a0)
    assert np.array_equal(med, m0, equal_nan=True)
    c1, a1, m1 = dense_pair_statistics(planes, radii, masks, keep, method="array")
    assert np.array_equal(close, c1) and np.array_equal(among, a1) and np.array_equal(med, m1, equal_nan=True)
    # one (k, B, N) array with other strides (a transposed view, as the population blocks pass it): no copy,
    # the same numbers
    view = np.ascontiguousarray(np.stack(planes).transpose(1, 0, 2)).transpose(1, 0, 2)
    assert not view.flags.c_contiguous or len(planes) == 1 or view.shape[1] == 1
    c2, a2, m2 = dense_pair_statistics(view, radii, masks, keep, guess, method="kernel")
    assert np.array_equal(close, c2) and np.array_equal(among, a2) and np.array_equal(med, m2, equal_nan=True)


def test_median_of_an_even_count_is_the_mean_of_the_two_middle_values():
    # numpy.median's definition (reference: numpy), on distances 1, 2, 3 (squared 1, 4, 9) and 4 (16)
    planes = [np.array([[0.0, 1.0, 3.0, 6.0, 10.0]])]
    d2 = all_pair_sq_distances(planes)[0]
    keep = np.zeros((1, d2.size), dtype=bool)
    keep[0, :4] = True  # the four neighbouring pairs: squared distances 1, 4, 9, 16
    _, _, med = dense_pair_statistics(planes, [1.0], [], keep, method="kernel")
    assert med[0] == np.median(d2[:4].astype(np.float64)) == 6.5


def test_no_kept_pair_gives_nan_and_no_keep_gives_nan():
    planes = [np.array([[0.0, 1.0, 3.0]])]
    for method in ("kernel", "array"):
        _, _, med = dense_pair_statistics(planes, [1.0], [], np.zeros((1, 3), dtype=bool), method=method)
        assert np.isnan(med).all()
        close, among, med = dense_pair_statistics(planes, [1.5], [], method=method)
        assert close.tolist() == [[1]] and among.shape == (0, 1) and np.isnan(med).all()


def test_more_than_three_planes_are_refused():
    with pytest.raises(ValueError, match="1 to 3"):
        dense_pair_statistics([np.zeros((1, 3))] * 4, [1.0])


@pytest.mark.parametrize("seed", range(40))
def test_both_selections_return_numpys_order_statistics(seed):
    # The two selections inside the kernel (bracketing from a guess; radix by bits), called directly on
    # non-negative float32 keys, against numpy's sort (reference: numpy). Duplicated values and guesses
    # far off, at the answer, and at the edges reach every branch.
    from cvdfilter.metrics.pair_kernel import _median_bracket, _median_keys

    rng = np.random.default_rng(seed)
    n = int(rng.integers(1, 3000))
    values = rng.lognormal(2.0, 1.5, n).astype(np.float32)
    if seed % 4 == 1:
        values = np.round(values / 10).astype(np.float32)  # many duplicates, zeros included
    if seed % 4 == 2:
        values[:] = values[0]  # all equal
    keep = (rng.random(n) < 0.9).astype(np.uint8)
    keys = values.view(np.int32)
    kept = np.sort(keys[keep != 0])
    if kept.size == 0:
        return
    half = kept.size // 2
    lower = kept[half - 1] if half >= 1 else kept[half]
    mk = np.where(keep != 0, keys, np.int32(0x7FFFFFFF)).astype(np.int32)
    scratch = np.empty(n, dtype=np.int32)
    dropped = np.flatnonzero(keep == 0).astype(np.int32)
    for guess in (int(kept[half]), int(kept[0]), 1, 0x7F800000, int(rng.integers(1, 0x7F800000))):
        # keys built with the pairs not kept above every key, or the values' own keys with those pairs listed
        for the_keys, drop in ((mk, dropped[:0]), (keys, dropped)):
            u, w = _median_bracket(the_keys, keep, drop, kept.size, half, np.int32(guess), scratch)
            assert (u, w) == (kept[half], lower) or (u, w) == (-1, -1)
    u, w = _median_keys(keys, keep, half, np.empty(n, np.int32), np.empty(n, np.int32), np.empty(2048, np.int64))
    assert (u, w) == (kept[half], lower)


@pytest.mark.parametrize("k", [1, 2, 3])
def test_compiled_float64_distances_equal_all_pair_sq_distances(k):
    # Internal consistency: a block's reference distances (pair_statistics.sq_distances) from the compiled
    # loop equal all_pair_sq_distances(dtype=float), itself held to the definition in test_pairs_exact.py,
    # including non-finite coordinates and the smallest sets.
    from cvdfilter.metrics.pair_statistics import sq_distances

    rng = np.random.default_rng(k)
    for n in (1, 2, 3, 17, 99):
        planes = [rng.normal(0, 3.0, (5, n)) for _ in range(k)]
        if n > 3:
            planes[0][1, 2] = np.nan
            planes[-1][3, 0] = np.inf
            planes[0][4] = np.round(planes[0][4])  # ties
        a = sq_distances(planes, method="array")
        b = sq_distances(planes, method="kernel")
        assert a.dtype == b.dtype == np.float64 and a.shape == b.shape
        np.testing.assert_array_equal(a, b)


def test_compiled_member_basis_equals_numpys_multiply_and_sum():
    # Internal consistency: a population block's cone basis and its catches without a filter
    # (metrics/basis_kernel.py) from the compiled pass equal numpy's multiply, then sum over wavelength
    # (the fixed-observer path's arithmetic), bit for bit; zeros, signed zeros and infinities included.
    from cvdfilter.metrics.basis_kernel import basis_and_catches

    rng = np.random.default_rng(3)
    fund = rng.random((7, 41, 3))
    fund[:, :4] = 0.0
    fund[2, 5, 1] = -0.0
    fund[3, 9, 2] = np.inf
    stimuli = rng.random((41, 12)) * 100.0
    stimuli[0, 3] = 0.0
    b1, q1 = basis_and_catches(fund, stimuli, method="array")
    out = np.empty(b1.size)
    b2, q2 = basis_and_catches(fund, stimuli, out, method="kernel")
    assert b2.base is out or b2.base is out.base  # written into the buffer given
    np.testing.assert_array_equal(b1, b2)
    np.testing.assert_array_equal(q1, q2)
    assert np.array_equal(np.signbit(q1), np.signbit(q2))
    with pytest.raises(ValueError):
        basis_and_catches(fund, stimuli, method="fast")


def test_sparse_pair_lists_list_exactly_the_masks_pairs():
    # Internal consistency: the pair lists the kernel counts sparse masks from hold each group's pairs in
    # order, and dense masks are marked -1.
    from cvdfilter.metrics.pair_statistics import SPARSE_SHARE, _sparse_lists

    rng = np.random.default_rng(5)
    masks = np.stack([rng.random((3, 400)) < 0.02, rng.random((3, 400)) < 0.5, np.zeros((3, 400), bool)])
    idx, lengths = _sparse_lists(masks.astype(np.uint8))
    assert (lengths[1] == -1).all() and (lengths[2] == 0).all()
    for g in range(3):
        assert masks[0, g].sum() <= 400 * SPARSE_SHARE
        assert idx[0, g, :lengths[0, g]].tolist() == np.flatnonzero(masks[0, g]).tolist()


def test_compiled_contrast_planes_equal_numpys():
    # Internal consistency: the contrast planes of contrast_rms from the compiled row loop
    # (metrics/contrast_kernel.py; population blocks) equal numpy's array-by-array arithmetic bit for bit,
    # for every observer kind's channels, zeros, infinities and NaN included.
    import numba  # noqa: F401  (the compiled path is taken when numba is loaded)

    from cvdfilter.metrics.contrast import _array_planes, _compiled_planes, contrast_rms, opponent_channels

    rng = np.random.default_rng(11)
    cat = rng.random((40, 3, 13)) * 10.0
    cat[0, 0, :5] = 0.0
    cat[1, 1, 3] = np.inf
    cat[2, 2, 7] = np.nan
    cat[3, :, 2] = 0.0  # 0 / 0
    white = cat[:, :, 12]
    gains = rng.random((40, 3)) + 0.5
    planes = [cat[:, i, :12] for i in range(3)]
    for kind, d in [("normal", None), ("anomalous", "deutan"), ("anomalous", "protan"), ("dichromat", "deutan"),
                    ("dichromat", "protan"), ("dichromat", "tritan")]:
        ch = opponent_channels(kind, d, (0.69, 0.35))
        with np.errstate(all="ignore"):
            a = _array_planes(planes, white * gains, gains, ch)
            b = _compiled_planes(cat, 12, white * gains, gains, ch)
            r1 = contrast_rms(planes, white, ch, gains=gains)
            r2 = contrast_rms(planes, white, ch, gains=gains, catches=cat)
        for x, y in zip(a, b):
            assert (x is None) == (y is None)
            if x is not None:
                assert np.array_equal(x, y, equal_nan=True) and np.array_equal(np.signbit(x), np.signbit(y))
        assert np.array_equal(r1, r2, equal_nan=True)
