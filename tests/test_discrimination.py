"""The receptor-noise-limited model (Vorobyev & Osorio 1998) and the vectorised pair counts."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from hypothesis.extra.numpy import arrays

from cvdfilter.metrics.discrimination import (discriminable_pairs, receptor_noise, rnl_coordinates, rnl_distance,
                                              rnl_transform)
from cvdfilter.metrics.pairs import (close_pair_matrix, close_pairs, count_close_among, count_close_pairs,
                                     pair_count)
from cvdfilter.observers.observer import observer
from cvdfilter.spectra.filters import load_filters
from cvdfilter.spectra.illuminants import illuminant
from cvdfilter.spectra.surfaces import surface_set


def _general_form(df, e):
    """Delta S from the opponent-channel (Mahalanobis) form of the model, for any number of cones.

    Channels B df insensitive to a common change of all signals carry noise B R B^T, R = diag(e^2),
    and Delta S^2 = (B df)^T (B R B^T)^-1 (B df) (Vorobyev & Osorio 1998: the derivation behind their
    eqs. for n = 2 and 3). B: successive differences, an independent choice of channels.
    """
    e = np.asarray(e, dtype=float)
    present = np.isfinite(e)
    df, e = np.asarray(df)[present], e[present]
    n = len(e)
    b = np.zeros((n - 1, n))
    for i in range(n - 1):
        b[i, i], b[i, i + 1] = 1.0, -1.0
    m = b @ np.diag(e ** 2) @ b.T
    v = b @ df
    return float(np.sqrt(v @ np.linalg.solve(m, v)))


catches = arrays(float, 3, elements=st.floats(0.01, 10.0))


@settings(max_examples=60, deadline=None)
@given(catches, catches, st.sampled_from([None, 0, 1, 2]))
def test_published_formula_equals_general_form_and_euclidean_transform(q1, q2, missing):
    # Source: Vorobyev & Osorio 1998, Proc R Soc B 265, 351-358: the trichromat (n = 3) and
    # dichromat (n = 2) formulas are the opponent-channel form written out.
    e = receptor_noise(missing)
    direct = float(rnl_distance(q1, q2, e))
    df = np.log(q1) - np.log(q2)
    assert direct == pytest.approx(_general_form(df, e), rel=1e-9, abs=1e-12)
    p = rnl_transform(e)
    assert p.shape == ((1, 3) if missing is not None else (2, 3))
    assert float(np.linalg.norm(p @ df)) == pytest.approx(direct, rel=1e-9, abs=1e-12)


@settings(max_examples=30, deadline=None)
@given(catches, catches, st.floats(0.001, 1000.0))
def test_common_scaling_is_invisible(q1, q2, k):
    # Invariant of the model (chromatic distance): intensity and von Kries scaling change nothing.
    e = receptor_noise()
    assert float(rnl_distance(q1 * k, q2 * k, e)) == pytest.approx(float(rnl_distance(q1, q2, e)), rel=1e-9,
                                                                    abs=1e-9)
    g = np.array([2.0, 0.5, 3.0])
    assert float(rnl_distance(q1 * g, q2 * g, e)) == pytest.approx(float(rnl_distance(q1, q2, e)), rel=1e-9,
                                                                    abs=1e-9)


def test_noise_from_weber_fraction_and_cone_ratios():
    # e_i = nu / sqrt(eta_i), nu fixed by e_L = 0.02 at L:M:S = 10:5:1 (values documented "from memory").
    assert receptor_noise() == pytest.approx([0.02, 0.02 * np.sqrt(2), 0.02 * np.sqrt(10)])
    # Replacement model for protanopes and deuteranopes; tritanopes keep L and M noise.
    assert receptor_noise(1)[[0, 2]] == pytest.approx([0.02 * np.sqrt(10 / 15), 0.02 * np.sqrt(10)])
    assert np.isnan(receptor_noise(1)[1])
    assert receptor_noise(2)[:2] == pytest.approx([0.02, 0.02 * np.sqrt(2)])
    assert receptor_noise(weber=0.05)[0] == pytest.approx(0.05)


@settings(max_examples=40, deadline=None)
@given(st.integers(1, 3), st.integers(2, 40), st.integers(1, 12), st.floats(0.2, 30.0), st.integers(0, 2**31 - 1))
def test_sort_and_sweep_counts_equal_brute_force(k, n, sets, scale, seed):
    # Invariant: the vectorised count equals the dense N x N count, NaN points included.
    rng = np.random.default_rng(seed)
    pts = rng.normal(size=(sets, n, k)) * scale
    if seed % 3 == 0:
        pts[0, 0, 0] = np.nan
    ref_i, ref_j = close_pairs(pts[-1])
    counts = count_close_pairs(pts)
    among = count_close_among(pts, ref_i, ref_j)
    for s in range(sets):
        dense = close_pair_matrix(pts[s])
        assert counts[s] == np.count_nonzero(np.triu(dense))
        assert among[s] == np.count_nonzero(dense[ref_i, ref_j])


def test_pair_count_of_ces99():
    # 99 CIE 2017 samples give 99 x 98 / 2 pairs.
    assert pair_count(99) == 4851


@pytest.fixture(scope="module")
def ces_catches():
    surf = surface_set("ces99")
    e = illuminant("D65").spd
    fs = load_filters(["notch:center=575,fwhm=30,depth=0.9", "longpass:edge=520,width=40,min=0.3", "nd:t=0.4"])
    out = {}
    for spec in ("normal", "deuteranomalous", "deuteranope"):
        o = observer(spec)
        q0 = (e[:, None] * surf.reflectance).T @ o.fundamentals
        q1 = np.einsum("fw,wn,wc->fnc", fs.transmittance, e[:, None] * surf.reflectance, o.fundamentals)
        out[spec] = (o, q0, q1)
    return out


@pytest.mark.parametrize("spec", ["normal", "deuteranomalous", "deuteranope"])
def test_counts_on_ces99_equal_all_pairs_by_the_published_formula(ces_catches, spec):
    # Source: Vorobyev & Osorio 1998 formulas applied to all 4,851 pairs one by one (rnl_distance).
    o, q0, q1 = ces_catches[spec]
    e = receptor_noise(o.missing_cone)
    iu = np.triu_indices(99, k=1)
    d0 = rnl_distance(q0[iu[0]], q0[iu[1]], e) >= 1.0
    res = discriminable_pairs(q1, q0, e)
    assert res["without"] == np.count_nonzero(d0)
    for f in range(q1.shape[0]):
        d1 = rnl_distance(q1[f][iu[0]], q1[f][iu[1]], e) >= 1.0
        assert res["with"][f] == np.count_nonzero(d1)
        assert res["gained"][f] == np.count_nonzero(d1 & ~d0)
        assert res["lost"][f] == np.count_nonzero(d0 & ~d1)


@pytest.mark.parametrize("spec", ["normal", "deuteranope"])
def test_distribution_on_ces99_equals_all_pairs_by_the_published_formula(ces_catches, spec):
    # Source: Vorobyev & Osorio 1998 Delta S for all 4,851 pairs one by one; counts at 1, 2 and 4 JND
    # (and at 0.8 and 1.25 JND) and the median ratio (numpy's median over all pairs).
    o, q0, q1 = ces_catches[spec]
    e = receptor_noise(o.missing_cone)
    iu = np.triu_indices(99, k=1)
    ds0 = rnl_distance(q0[iu[0]], q0[iu[1]], e)
    res = discriminable_pairs(q1, q0, e, threshold=1.25, thresholds=(0.8, 1.0, 2.0, 4.0))
    for f in range(q1.shape[0]):
        ds1 = rnl_distance(q1[f][iu[0]], q1[f][iu[1]], e)
        for t, counts in res["at"].items():
            a0, a1 = ds0 >= t, ds1 >= t
            assert (counts["without"], counts["with"][f], counts["gained"][f], counts["lost"][f]) == (
                a0.sum(), a1.sum(), (a1 & ~a0).sum(), (a0 & ~a1).sum()), t
        assert res["with"][f] == np.count_nonzero(ds1 >= 1.25)
        assert res["median_ratio"][f] == pytest.approx(np.median(ds1) / np.median(ds0), rel=1e-6)


@settings(max_examples=30, deadline=None)
@given(st.integers(2, 40), st.integers(1, 3), st.integers(0, 2**31 - 1))
def test_dense_pair_distances_and_median_equal_brute_force(n, k, seed):
    # Invariant: the offset layout holds every pair once; the median of a subset equals numpy's.
    from cvdfilter.metrics.pairs import all_pair_sq_distances, median_rows, offset_order

    rng = np.random.default_rng(seed)
    pts = rng.normal(size=(3, n, k)) * 5
    d2 = all_pair_sq_distances([pts[..., c] for c in range(k)], dtype=float)
    i, j = np.triu_indices(n, 1)
    brute = np.sum((pts[:, i] - pts[:, j]) ** 2, axis=-1)
    assert np.allclose(d2[:, offset_order(i, j, n)], brute, rtol=1e-12, atol=0)
    drop = rng.random(i.size) < 0.3
    if (~drop).any():
        d2x = all_pair_sq_distances([pts[..., c] for c in range(k)], exclude=offset_order(i[drop], j[drop], n))
        med = median_rows(d2x, count=int((~drop).sum()))
        assert np.allclose(med, np.median(brute[:, ~drop], axis=1), rtol=1e-6)


def test_neutral_density_gains_and_loses_nothing(ces_catches):
    # Invariant: a neutral filter scales every catch alike.
    o, q0, q1 = ces_catches["normal"]
    res = discriminable_pairs(q1[2:3], q0, receptor_noise())
    assert (res["with"][0], res["gained"][0], res["lost"][0]) == (res["without"], 0, 0)


def test_coordinates_are_in_jnd_units(ces_catches):
    o, q0, _ = ces_catches["normal"]
    e = receptor_noise()
    y = rnl_coordinates(q0, rnl_transform(e))
    assert np.linalg.norm(y[3] - y[7]) == pytest.approx(float(rnl_distance(q0[3], q0[7], e)), rel=1e-9)
