"""Copunctal points, confusion lines and neutral points (cvdfilter.observers.copunctal)."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from cvdfilter.errors import InputError
from cvdfilter.observers.copunctal import (DEFICIENCIES, confusion_direction_lms, confusion_line, copunctal_point,
                                           copunctal_points, lms_to_xyz_matrix, neutral_points, spectrum_locus,
                                           xy_cmfs, xy_system_for)
from cvdfilter.observers.fundamentals import cie1931_cmfs, cie2015_cmfs
from cvdfilter.observers.observer import observer


def test_copunctal_points_stockman_sharpe_cie2015():
    # Stockman & Sharpe 2 deg fundamentals in the CIE 2015 2 deg xy (CIE 170-2): protan
    # (0.7384, 0.2616), deutan (1.3267, -0.3267), tritan (0.1586, 0.0000); computed with
    # colour-science's tables (issue 3), tolerance 0.001.
    expected = np.array([[0.7384, 0.2616], [1.3267, -0.3267], [0.1586, 0.0000]])
    for spec in ("normal:data=ss2", "normal"):  # tabulated S&S and our CIE 2006 model at 32 years, 2 deg
        got = copunctal_points(observer(spec).fundamentals, cie2015_cmfs(field=2))
        assert np.allclose(got, expected, atol=1e-3)
    assert np.allclose(copunctal_point("protanope"), expected[0], atol=1e-3)
    assert np.allclose(copunctal_point("deuteranope"), expected[1], atol=1e-3)
    assert np.allclose(copunctal_point("tritanope"), expected[2], atol=1e-3)
    # exact linear relation: the least-squares fit has no residual
    assert lms_to_xyz_matrix(observer("normal:data=ss2").fundamentals, cie2015_cmfs(field=2))[1] < 1e-4


def test_copunctal_points_smith_pokorny_judd_vos():
    # Smith & Pokorny (1975) fundamentals in the Judd-Vos modified CIE 1931 xy: protan
    # (0.7465, 0.2535), deutan (1.4000, -0.4000), tritan (0.1748, 0.0000) (Smith & Pokorny 1975;
    # from memory), tolerance 0.005. Judd-Vos CMFs from luxpy 1.12.5 ('1931_2_juddvos1978'),
    # test-only (colour-science does not ship them).
    import luxpy

    bar = luxpy._CMF["1931_2_juddvos1978"]["bar"]
    obs = observer("normal:data=sp1975")
    wl = obs.wavelengths
    jv = np.stack([np.interp(wl, bar[0], bar[i], left=0, right=0) for i in (1, 2, 3)], axis=1)
    got = copunctal_points(obs.fundamentals, jv)
    expected = np.array([[0.7465, 0.2535], [1.4000, -0.4000], [0.1748, 0.0000]])
    assert np.allclose(got, expected, atol=0.005)
    # In the unmodified CIE 1931 xy (what colour-science ships, the default for sp1975) the fit is
    # only approximate (Judd's correction below 460 nm): within 0.05 (measured 0.034 for the deutan x).
    approx = copunctal_points(obs.fundamentals, cie1931_cmfs())
    assert np.allclose(approx, expected, atol=0.05)
    assert xy_system_for(obs) == "cie1931"


def test_xy_system_choice():
    assert xy_system_for(observer("normal")) == "cie2015-2"
    assert xy_system_for(observer("normal:field=10")) == "cie2015-10"
    assert xy_system_for(observer("normal:data=ss10")) == "cie2015-10"
    assert xy_system_for(observer("deuteranope:data=sp1975")) == "cie1931"
    assert xy_system_for(observer("deuteranope:age=70")) == "own-2"
    assert xy_system_for(observer("deuteranope:field=8")) == "own-10"
    # in its own cone-fundamental-based xy, any CIE 2006 observer has the standard copunctal points
    assert np.allclose(copunctal_point("deuteranope:age=70"), [1.3267, -0.3267], atol=1e-3)
    with pytest.raises(InputError, match="needs an observer"):
        xy_cmfs("own-2", observer("normal").grid)
    # S&S 10 deg in the CIE 2015 10 deg xy is exact too
    grid = observer("normal").grid
    assert lms_to_xyz_matrix(observer("normal:data=ss10").fundamentals, xy_cmfs("cie2015-10", grid))[1] < 1e-4
    with pytest.raises(InputError, match="xy system"):
        xy_cmfs("cie1976", observer("normal").grid)


@pytest.mark.parametrize("spec,white,expected", [
    # Neutral points (Wyszecki & Stiles 1982, Color Science, table 5.14.2 region; from memory):
    # protanopes about 492 nm, deuteranopes about 498 nm, tritanopes about 570 nm, for an
    # equal-energy or daylight white. Tolerance 4 nm: published values scatter by about that
    # much between observers and studies.
    ("protanope", None, 492.0), ("protanope", "D65", 492.0),
    ("deuteranope", None, 498.0), ("deuteranope", "D65", 498.0),
    ("tritanope", None, 570.0), ("tritanope", "D65", 570.0),
])
def test_neutral_points(spec, white, expected):
    pts = neutral_points(spec, white)
    assert len(pts) >= 1
    main = min(pts, key=lambda p: abs(p["wavelength"] - expected))
    assert abs(main["wavelength"] - expected) < 4.0


@pytest.mark.parametrize("spec", ["protanope", "deuteranope", "tritanope", "deuteranope:age=70,field=10"])
@pytest.mark.parametrize("white", [None, "D65", "A"])
def test_neutral_point_is_confused_with_white(spec, white):
    # Invariant: the neutral wavelength, the white and the copunctal point are collinear in xy
    # (the neutral point lies on the confusion line through the white), and in cone space the
    # light's two remaining signals have the white's ratio.
    from cvdfilter.observers.simulate import reference_white_spectrum

    obs = observer(spec)
    spd = reference_white_spectrum(obs, white)
    system = xy_system_for(obs)
    cm = xy_cmfs(system, obs.grid, observer=obs)
    xyz_w = spd @ cm
    white_xy = xyz_w[:2] / xyz_w.sum()
    line = confusion_line(white_xy, copunctal_point(obs))
    for p in neutral_points(obs, white):
        # collinear: in the observer's xy system (CIE 2015 for the 32-year observer, its own
        # cone-fundamental-based xy otherwise) its fundamentals are an exact linear transform of the CMFs
        assert line.distance(p["xy"]) < 2e-3
        f = np.array([np.interp(p["wavelength"], obs.wavelengths, obs.fundamentals[:, i]) for i in range(3)])
        w = spd @ obs.fundamentals
        a, b = obs.cones_present
        assert f[a] / f[b] == pytest.approx(w[a] / w[b], rel=2e-3)


@settings(max_examples=50, deadline=None)
@given(st.floats(0.2, 0.5), st.floats(0.2, 0.5), st.sampled_from(DEFICIENCIES))
def test_confusion_line_is_a_line_of_equal_remaining_cone_signals(x, y, deficiency):
    # Invariant: chromaticities on one confusion line come from stimuli whose remaining two
    # cone signals are proportional (Smith & Pokorny 1975 definition of a confusion locus).
    obs = observer("normal")
    m, _ = lms_to_xyz_matrix(obs.fundamentals, cie2015_cmfs(field=2))
    cop = copunctal_points(obs.fundamentals, cie2015_cmfs(field=2))[DEFICIENCIES.index(deficiency)]
    line = confusion_line([x, y], cop)
    k = DEFICIENCIES.index(deficiency)
    keep = [i for i in range(3) if i != k]
    ratios = []
    for t in (-0.05, 0.0, 0.05):
        px, py = line.points(t)
        xyz = np.array([px / py, 1.0, (1 - px - py) / py])
        lms = np.linalg.solve(m, xyz)
        v = lms[keep]
        ratios.append(v / np.linalg.norm(v) * np.sign(v.sum()))
    assert np.allclose(ratios, ratios[1], rtol=0, atol=1e-9)


def test_confusion_line_geometry_and_errors():
    line = confusion_line([0.3, 0.3], [0.7, 0.3])
    assert np.allclose(line.direction, [-1.0, 0.0])
    assert np.allclose(line.points([0.1]), [[0.2, 0.3]])
    assert np.isclose(line.distance([0.5, 0.35]), 0.05)
    with pytest.raises(InputError):
        confusion_line([0.7, 0.3], [0.7, 0.3])
    with pytest.raises(InputError, match="dichromat"):
        neutral_points("deuteranomalous:shift=8")
    with pytest.raises(InputError, match="deficiency"):
        copunctal_point("normal")


def test_spectrum_locus_and_direction():
    wl, xy = spectrum_locus("normal")
    i = int(np.argmin(np.abs(wl - 520)))
    assert xy[i, 1] > 0.8  # the locus peaks in y near 520 nm (CIE 2015 2 deg)
    assert np.array_equal(confusion_direction_lms("protanope"), [1, 0, 0])
    assert np.array_equal(confusion_direction_lms("tritanomalous:shift=15"), [0, 0, 1])
    with pytest.raises(InputError):
        confusion_direction_lms("normal")
    # anomalous observers converge on their base observer's copunctal point
    assert np.allclose(copunctal_point("deuteranomalous:shift=8"), copunctal_point("deuteranope"))
