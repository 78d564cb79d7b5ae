"""Counts and medians from the dense float32 pair distances equal the exact definitions.

The scorecard takes every pair count and the median Delta S from one array of float32 squared distances
(metrics/pairs.py: ``dense_close_counts``, ``median_of_kept``). These tests hold them to the definitions:
counts against the float64 sort-and-sweep and index-list counts (with pairs placed exactly at the
thresholds, so that the float32 ties are exercised), medians against numpy's median of the kept values.
"""

from __future__ import annotations

import numpy as np
import pytest

from cvdfilter.metrics.pairs import (all_pair_sq_distances, count_close_among, count_close_pairs, dense_close_counts,
                                     median_of_kept, median_rows, offset_pairs)
from cvdfilter.observers.population import population
from cvdfilter.scorecard import score


@pytest.mark.parametrize("seed", range(12))
def test_dense_counts_equal_the_sweep_and_the_pair_lists(seed):
    rng = np.random.default_rng(seed)
    k, g, f, n = int(rng.integers(1, 3)), int(rng.integers(1, 4)), int(rng.integers(1, 4)), int(rng.integers(2, 40))
    planes = [rng.normal(size=(f * g, n)) * rng.uniform(0.5, 5) for _ in range(k)]
    if seed % 2 == 0:  # points on a half-unit lattice: many distances exactly 1, 2, ... (ties at the thresholds)
        planes = [np.round(p * 2) / 2 for p in planes]
    d2 = all_pair_sq_distances(planes)
    oi, oj = offset_pairs(n)
    for r in (0.5, 1.0, 1.5, 2.0):
        masks = [rng.random((g, d2.shape[1])) < 0.5, np.ones((g, d2.shape[1]), dtype=bool)]
        close, among = dense_close_counts(d2, planes, r, masks)
        assert np.array_equal(close, count_close_pairs(planes, r))
        for m, a in zip(masks, among):
            for row in range(f * g):
                sel = m[row % g]
                assert a[row] == count_close_among([p[row:row + 1] for p in planes], oi[sel], oj[sel], r)[0]


def test_a_pair_exactly_at_the_threshold_is_not_close():
    # Strict comparison everywhere (a pair at exactly 1 JND is discriminable, not close).
    pl = [np.array([[0.0, 1.0, 3.0]])]
    close, (among,) = dense_close_counts(all_pair_sq_distances(pl), pl, 1.0, [np.ones((1, 3), dtype=bool)])
    assert close.tolist() == [0] == among.tolist() == count_close_pairs(pl, 1.0).tolist()


@pytest.mark.parametrize("seed", range(10))
def test_median_of_kept_is_numpys_median_of_the_kept_values(seed):
    # Reference: numpy.median of each row's kept float32 values (in float64).
    rng = np.random.default_rng(seed)
    g, f, n = int(rng.integers(1, 5)), int(rng.integers(1, 4)), int(rng.integers(2, 30))
    pts = [rng.normal(size=(f * g, n)) for _ in range(2)]
    if seed % 3 == 0:
        pts = [np.round(p, 1) for p in pts]  # ties
    v = all_pair_sq_distances(pts).reshape(f, g, -1)
    keep = rng.random((g, v.shape[-1])) < rng.uniform(0.05, 1.0)
    got = median_of_kept(v.copy(), keep)
    for a in range(f):
        for b in range(g):
            vals = v[a, b][keep[b]].astype(float)
            want = np.median(vals) if vals.size else np.nan
            assert (np.isnan(want) and np.isnan(got[a, b])) or got[a, b] == want
            if vals.size:
                row = v[a, b].copy()
                row[~keep[b]] = np.inf
                assert median_rows(row[None], count=int(keep[b].sum()))[0] == got[a, b]


@pytest.mark.parametrize("spec", ["normal:n=4,seed=2", "deuteranomalous:n=5,seed=2", "protanomalous:n=4,seed=3",
                                  "tritanomalous:n=3,seed=1", "deuteranope:n=4,seed=4", "tritanope:n=3",
                                  "deuteranomalous:severity=0.6,model=machado2009,n=3,seed=5"])
def test_population_arrays_equal_each_member_scored_alone_bit_for_bit(spec):
    # The vectorised population path (members x filters at once) against the fixed-observer path per member.
    pop = population(spec)
    filters = ["notch:center=575,fwhm=35,depth=0.8", "longpass:edge=500,width=10", "nd:t=0.3"]
    card = score(filters, observers=[pop], metrics="core")
    each = score(filters, observers=pop.members(), metrics="core")
    got = card.per_observer[0]
    assert list(got) == list(each.per_observer[0])
    for key, v in got.items():
        ref = np.stack([np.asarray(o[key]) for o in each.per_observer], axis=-1)
        assert v.shape == ref.shape and v.dtype == ref.dtype, key
        assert np.array_equal(v, ref, equal_nan=v.dtype.kind == "f"), key
