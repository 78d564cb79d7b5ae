"""Colour-vision tasks (cvdfilter.tasks): scoring, model observers, plates and the Rayleigh match.

Every outside check names its source in a comment and has a row in docs/validation.md.
"""

from __future__ import annotations

import itertools

import numpy as np
import pytest

import cvdfilter
from cvdfilter.metrics.discrimination import receptor_noise, rnl_transform
from cvdfilter.observers.fundamentals import cie1931_cmfs
from cvdfilter.observers.observer import observer
from cvdfilter.spectra.illuminants import illuminant
from cvdfilter.vision_tasks import ObserverMembers, tasks
from cvdfilter.vision_tasks.arrangement import arrange, cap_luv, caps, luv
from cvdfilter.vision_tasks.moments import crossings, moment_scores
from cvdfilter.vision_tasks.plates import PLATE_NAMES, READ_THRESHOLD, legibility, plate_designs
from cvdfilter.vision_tasks.rayleigh import rayleigh_match

SQUARE = np.array([[0.0, 0.0], [1.0, 0.0], [1.0, 1.0], [0.0, 1.0]])


# -- moment method (Vingrys & King-Smith 1988) ------------------------------------------------------------------

def test_moment_method_worked_example_by_hand():
    # Worked by hand from the formulas of Vingrys & King-Smith (1988), IOVS 29:50 (no test's data):
    # path 0-1-2-3 on a unit square: differences (1,0), (0,1), (-1,0); U2 = 2, V2 = 1, UV = 0, N = 3
    # -> R_maj = sqrt(2/3), R_min = sqrt(1/3), angle 0, TES = 1, S = sqrt(2), C = 1, no crossings.
    s = moment_scores(SQUARE, np.arange(4))
    assert float(s["r_major"]) == pytest.approx(np.sqrt(2 / 3))
    assert float(s["r_minor"]) == pytest.approx(np.sqrt(1 / 3))
    assert float(s["confusion_angle_deg"]) == pytest.approx(0.0, abs=1e-9)
    assert float(s["tes"]) == pytest.approx(1.0)
    assert float(s["s_index"]) == pytest.approx(np.sqrt(2))
    assert float(s["c_index"]) == pytest.approx(1.0)
    assert int(s["crossings"]) == 0
    # exchanging caps 1 and 2: differences (1,1), (0,-1), (-1,1); U2 = 2, V2 = 3, UV = 0
    # -> R_maj = 1 at 90 deg, R_min = sqrt(2/3), TES = sqrt(5/3), C = 1 / sqrt(2/3), one crossing.
    s = moment_scores(SQUARE, [0, 2, 1, 3])
    assert float(s["r_major"]) == pytest.approx(1.0)
    assert float(s["r_minor"]) == pytest.approx(np.sqrt(2 / 3))
    assert float(s["confusion_angle_deg"]) == pytest.approx(90.0)
    assert float(s["tes"]) == pytest.approx(np.sqrt(5 / 3))
    assert float(s["c_index"]) == pytest.approx(np.sqrt(3 / 2))
    assert int(s["crossings"]) == 1


def test_moment_identities_and_rotation_invariance():
    # The documented identities of the moment method (Vingrys & King-Smith 1988): TES^2 = (U2 + V2) / N,
    # R_maj^2 R_min^2 = det M; radii invariant under a rotation of all caps, the angle turns with them.
    rng = np.random.default_rng(3)
    t = np.linspace(0, 2 * np.pi, 15, endpoint=False)
    uv = np.stack([30 * np.cos(t), 25 * np.sin(t)], axis=1) + [2.0, -1.0]
    orders = np.array([np.r_[0, 1 + rng.permutation(14)] for _ in range(50)])
    s = moment_scores(uv, orders)
    d = np.diff(uv[orders], axis=-2)
    u2, v2, uvs = (d[..., 0] ** 2).sum(-1), (d[..., 1] ** 2).sum(-1), (d[..., 0] * d[..., 1]).sum(-1)
    n = d.shape[-2]
    np.testing.assert_allclose(s["tes"] ** 2, (u2 + v2) / n, rtol=1e-12)
    np.testing.assert_allclose(s["r_major"] ** 2 * s["r_minor"] ** 2, (u2 * v2 - uvs ** 2) / n ** 2, rtol=1e-9)
    a = np.radians(37.0)
    rot = np.array([[np.cos(a), -np.sin(a)], [np.sin(a), np.cos(a)]])
    r = moment_scores(uv @ rot.T + [5.0, 7.0], orders)
    for k in ("r_major", "r_minor", "tes", "s_index", "c_index", "crossings"):
        np.testing.assert_allclose(r[k], s[k], rtol=1e-9)
    turned = (s["confusion_angle_deg"] + 37.0 + 90.0) % 180.0 - 90.0
    diff = (r["confusion_angle_deg"] - turned + 90.0) % 180.0 - 90.0
    np.testing.assert_allclose(diff, 0.0, atol=1e-6)


def test_reversing_a_pair_raises_tes():
    # Vingrys & King-Smith (1988): any departure from the perfect order lengthens the path, so TES rises.
    t = np.linspace(0, 2 * np.pi, 16, endpoint=False)
    uv = np.stack([np.cos(t), np.sin(t)], axis=1)
    perfect = float(moment_scores(uv, np.arange(16))["tes"])
    for i in range(1, 15):
        order = np.arange(16)
        order[[i, i + 1]] = order[[i + 1, i]]
        assert float(moment_scores(uv, order)["tes"]) > perfect


def _segments_intersect(p1, p2, p3, p4):
    def orient(a, b, c):
        return np.sign((b[0] - a[0]) * (c[1] - a[1]) - (b[1] - a[1]) * (c[0] - a[0]))

    return orient(p1, p2, p3) * orient(p1, p2, p4) < 0 and orient(p3, p4, p1) * orient(p3, p4, p2) < 0


def test_crossings_are_geometric_intersections_for_caps_on_a_circle():
    # Elementary geometry (common practice): for points on a circle, two chords cross iff their ends interleave.
    t = np.linspace(0, 2 * np.pi, 10, endpoint=False)
    uv = np.stack([np.cos(t), np.sin(t)], axis=1)
    rng = np.random.default_rng(1)
    for _ in range(40):
        order = np.r_[0, 1 + rng.permutation(9)]
        seg = [(uv[a], uv[b]) for a, b in zip(order[:-1], order[1:])]
        expected = sum(_segments_intersect(*seg[i], *seg[j]) for i, j in itertools.combinations(range(9), 2))
        assert int(crossings(order)) == expected


# -- arrangement -----------------------------------------------------------------------------------------------

def test_cieluv_matches_colour_science():
    # CIE 15:2018 CIELUV, against colour-science's XYZ_to_Luv (reference library, test-only use).
    import colour

    spd = illuminant("D65").spd
    _, _, refl = caps("arrangement")
    w = spd[:, None] * cie1931_cmfs()
    ours = cap_luv(refl, spd)
    white = w.sum(0)
    ref = colour.XYZ_to_Luv(refl @ w / white[1], colour.XYZ_to_xy(white))
    np.testing.assert_allclose(ours, ref, atol=1e-8)


def test_caps_keep_their_munsell_design():
    # Caps reproduce their Munsell renotation colours (colour-science's renotation data, CAT02 to D65):
    # equal lightness (value 6, L* about 61) and a hue circle around the white.
    for task, n in (("arrangement", 16), ("arrangement-fine", 24)):
        names, notations, refl = caps(task)
        assert len(names) == n and all(x.endswith(" 6/6" if n == 16 else " 6/4") for x in notations)
        assert refl.min() >= 0 and refl.max() <= 1
        lab = cap_luv(refl, illuminant("D65").spd)
        assert np.ptp(lab[:, 0]) < 1.0 and abs(lab[:, 0].mean() - 61.0) < 1.5
        hue = np.unwrap(np.arctan2(lab[:, 2], lab[:, 1]))
        assert np.all(np.abs(np.diff(hue)) > 0) and abs(hue[-1] - hue[0]) > np.radians(300)


def test_greedy_arrangement_is_nearest_neighbour():
    assert arrange(np.array([[0.0], [3.0], [1.0], [2.0]])).tolist() == [0, 2, 3, 1]


def _line_angle(copunctal_xy, task):
    # Angle in u*v* of the confusion line through the caps' centre toward a copunctal point.
    spd = illuminant("D65").spd
    w = spd[:, None] * cie1931_cmfs()
    _, _, refl = caps(task)
    c = (refl @ w).mean(0)
    xy = c[:2] / c.sum()
    step = np.asarray(copunctal_xy) - xy
    p = xy + 0.005 * step / np.linalg.norm(step)
    y = c[1]
    pts = np.array([[q[0] * y / q[1], y, (1 - q.sum()) * y / q[1]] for q in (xy, p)])
    d = np.diff(luv(pts, w.sum(0))[:, 1:], axis=0)[0]
    return (np.degrees(np.arctan2(d[1], d[0])) + 90.0) % 180.0 - 90.0


#: Copunctal points in CIE 1931 xy (from memory: Wyszecki & Stiles 1982, Color Science, 2nd ed., table of
#: dichromatic confusion points: protan (0.747, 0.253), deutan (1.40, -0.40), tritan (0.171, 0.0)).
COPUNCTAL = {"protanope": (0.747, 0.253), "deuteranope": (1.40, -0.40), "tritanope": (0.171, 0.0)}
#: Window (degrees) around the confusion-line angle in which a dichromat's confusion angle must lie (ours).
ANGLE_WINDOW = 10.0


@pytest.mark.parametrize("task", ["arrangement", "arrangement-fine"])
def test_dichromat_confusion_angles_follow_confusion_lines(task):
    res = tasks(["nd:t=0.5"], observers=list(COPUNCTAL), tasks=[task], trials=200, seed=2).results()
    for r in res:
        angle = r["without"]["confusion_angle_deg"]
        line = _line_angle(COPUNCTAL[r["observer"]], task)
        off = (angle - line + 90.0) % 180.0 - 90.0
        assert abs(off) <= ANGLE_WINDOW, (r["observer"], angle, line)
        assert r["without"]["c_index"] > 2.0 and r["without"]["s_index"] > 2.0


@pytest.mark.parametrize("task", ["arrangement", "arrangement-fine"])
def test_normal_observer_is_near_perfect_at_low_noise(task):
    # Vingrys & King-Smith (1988): a perfect arrangement has C-index 1 and no crossings.
    r = tasks(["nd:t=0.5"], observers=["normal"], tasks=[task], trials=100, trial_noise=0.05).results()[0]
    assert r["without"]["c_index"] == pytest.approx(1.0, abs=0.05)
    assert r["without"]["crossings"] == 0


def test_neutral_filter_changes_nothing():
    # Invariant: a neutral-density filter scales every catch alike, which the receptor-noise model cannot see;
    # the instrument's primaries keep their ratio, so the Rayleigh reading is unchanged.
    res = tasks(["nd:t=0.3"], observers=["normal", "deuteranomalous", "protanope"], trials=60).results()
    for r in res:
        assert r["verdict"] == "no change"
        if r["task"] == "plates":
            for k, v in r["without"]["legibility"].items():
                assert r["with"]["legibility"][k] == pytest.approx(v, abs=1e-9)
        else:
            for k, v in r["without"].items():
                assert r["with"][k] == pytest.approx(v, abs=1e-9)


def test_population_members_as_a_stack_of_fundamentals():
    # Members given as fundamentals (n, n_wl, 3) run as one array; identical members give identical scores.
    o = observer("deuteranomalous")
    members = ObserverMembers("deutan-pair", np.stack([o.fundamentals, o.fundamentals]), None)
    res = tasks(["larkhill-notch-575"], observers=[members, "deuteranomalous"], tasks=["arrangement", "rayleigh"],
                trials=40)
    stack = res.scores[("arrangement", "deutan-pair")]["tes"]
    assert stack.shape == (2, 2, 40)
    np.testing.assert_array_equal(stack[:, 0], stack[:, 1])
    single = res.scores[("arrangement", o.spec)]["tes"]
    np.testing.assert_array_equal(stack[:, 0], single[:, 0])


def test_population_spec_strings_run_as_members():
    # A population spec (n=N) runs its members as one stack; with variation=none every member is the centre
    # observer, so each member scores exactly as the single observer does (invariant of the population model).
    res = tasks(["larkhill-notch-575"], observers=["deuteranomalous:n=3,variation=none,seed=1", "deuteranomalous"],
                tasks=["arrangement"], trials=20)
    pop_name = next(name for (task, name) in res.scores if "n=3" in name)
    stack = res.scores[("arrangement", pop_name)]["tes"]
    assert stack.shape[1] == 3
    single = res.scores[("arrangement", observer("deuteranomalous").spec)]["tes"]
    for m in range(3):
        np.testing.assert_array_equal(stack[:, m], single[:, 0])


# -- Rayleigh match ----------------------------------------------------------------------------------------------

def test_rayleigh_normal_match_agrees_with_colour_science_fundamentals():
    # Independent computation with colour-science's Stockman & Sharpe (2000) 2 deg cone fundamentals
    # (reference library): the radiance odds red:green of the mixture whose L/M equals the yellow's.
    import colour

    from cvdfilter.vision_tasks.rayleigh import primaries

    ss = colour.MSDS_CMFS["Stockman & Sharpe 2 Degree Cone Fundamentals"]
    wl = np.arange(390.0, 781.0)
    fund = np.stack([np.interp(wl, ss.wavelengths, np.nan_to_num(ss.values[:, i])) for i in range(3)], axis=1)
    prim = primaries(wl)
    (lr, mr), (lg, mg), (ly, my) = (prim @ fund[:, :2])
    rho = ly / my
    odds_ref = (rho * mg - lg) / (lr - rho * mr)
    ours = rayleigh_match(observer("normal").fundamentals, observer("normal").wavelengths, receptor_noise(),
                          calibration=1.0)
    odds_ours = ours["match"] / (1 - ours["match"])
    assert float(odds_ours) == pytest.approx(odds_ref, rel=0.02)


def test_rayleigh_classic_directions_and_dichromats():
    # Classic anomaloscope findings (from memory: Pokorny, Smith, Verriest & Pinckers 1979, Congenital and
    # Acquired Color Vision Defects): protanomalous observers need more red, deuteranomalous more green;
    # protanopes and deuteranopes accept the whole range.
    wl = observer("normal").wavelengths
    r = {s: rayleigh_match(observer(s).fundamentals, wl, receptor_noise(m))
         for s, m in (("normal", None), ("protanomalous", None), ("deuteranomalous", None), ("protanope", 0),
                      ("deuteranope", 1))}
    assert float(r["normal"]["red_fraction"]) == pytest.approx(0.5, abs=0.01)
    assert float(r["protanomalous"]["red_fraction"]) > float(r["normal"]["red_fraction"]) + 0.1
    assert float(r["deuteranomalous"]["red_fraction"]) < float(r["normal"]["red_fraction"]) - 0.1
    for d in ("protanope", "deuteranope"):
        assert float(r[d]["range"]) == 1.0
    assert 0 < float(r["normal"]["range"]) < 0.1


def test_rayleigh_filter_shifts_the_reading_by_the_transmittance_ratio_and_keeps_the_range():
    # Physics of the set-up (common practice): a filter in front of the instrument scales each narrowband
    # primary by its transmittance there; the match in cone terms cannot change, so the reading's odds move
    # by T(545)/T(670) and the range in log odds stays the same.
    o = observer("deuteranomalous")
    wl = o.wavelengths
    t = 0.2 + 0.7 * (wl - 380.0) / 400.0  # a smooth tint, rising toward the red
    e = receptor_noise()
    odds = lambda x: float(x / (1 - x))  # noqa: E731
    ratio = np.interp(545, wl, t) / np.interp(670, wl, t)
    for fwhm, tol in ((1.0, 1e-4), (5.0, 5e-3)):  # near the narrowband limit, and the default 5 nm primaries
        a = rayleigh_match(o.fundamentals, wl, e, fwhm=fwhm)
        b = rayleigh_match(o.fundamentals, wl, e, transmittance=t, fwhm=fwhm)
        assert odds(b["match"]) == pytest.approx(odds(a["match"]) * ratio, rel=tol)
        assert float(b["range_log_odds"]) == pytest.approx(float(a["range_log_odds"]), rel=tol)
    assert float(b["red_fraction"]) < float(a["red_fraction"])  # more red light gets through: less red needed


# -- plates -----------------------------------------------------------------------------------------------------

def _legibility(spec, missing, plate, transmittance=None):
    o = observer(spec)
    light = illuminant("D65").spd * (1.0 if transmittance is None else transmittance)
    y = np.log(plate.reflectance @ (o.fundamentals * light[:, None])) @ rnl_transform(receptor_noise(missing)).T
    return float(legibility(y, plate.figure))


def test_plate_metamers_are_invisible_to_their_dichromat():
    # Silent substitution (metamer construction, common practice in vision science): figure and ground with
    # equal catches for the dichromat's two cones give legibility 0 for it, and above threshold for the normal.
    plates = {p.name: p for p in plate_designs()}
    assert _legibility("protanope", 0, plates["hidden-protan"]) < 1e-6
    assert _legibility("deuteranope", 1, plates["hidden-deutan"]) < 1e-6
    for name in ("hidden-protan", "hidden-deutan"):
        assert _legibility("normal", None, plates[name]) >= READ_THRESHOLD
    assert _legibility("normal", None, plates["filter-only"]) < 1e-6
    for spec, m in (("protanope", 0), ("deuteranope", 1)):
        assert _legibility(spec, m, plates["filter-only"]) < 1e-6


def test_reverse_plates_read_by_the_dichromat_not_by_the_normal():
    plates = {p.name: p for p in plate_designs()}
    assert _legibility("protanope", 0, plates["reverse-protan"]) >= READ_THRESHOLD
    assert _legibility("deuteranope", 1, plates["reverse-deutan"]) >= READ_THRESHOLD
    for name in ("reverse-protan", "reverse-deutan"):
        assert _legibility("normal", None, plates[name]) < READ_THRESHOLD


def test_filter_only_plate_needs_a_filter():
    plates = {p.name: p for p in plate_designs()}
    notch = cvdfilter.load_filters("notch:center=575,fwhm=35,depth=0.9").transmittance[0]
    assert _legibility("normal", None, plates["filter-only"], notch) >= READ_THRESHOLD


def test_legibility_index_definition():
    y = np.array([[0.0], [2.0], [5.0], [7.0]])
    # group means 1 and 6: D = 5; every dot 1 from its mean: s^2 = 1 -> 5 / sqrt(2)
    assert float(legibility(y, np.array([False, False, True, True]))) == pytest.approx(5 / np.sqrt(2))


# -- contract ---------------------------------------------------------------------------------------------------

def test_api_contract():
    res = cvdfilter.tasks(["larkhill-notch-575"], observers=["normal", "deuteranope"], tasks=["arrangement",
                          "plates", "rayleigh"], trials=30, seed=1)
    d = res.to_dict()
    assert {"tool", "version", "caveat", "inputs", "results"} <= set(d)
    assert len(d["results"]) == 1 * 2 * 3
    for r in d["results"]:
        assert {"filter", "observer", "task", "without", "with", "verdict"} <= set(r)
        assert r["verdict"] in ("easier", "harder", "no change")
        if r["task"] == "arrangement":
            assert set(r["without"]) == {"confusion_angle_deg", "r_major", "r_minor", "tes", "s_index", "c_index",
                                         "crossings"}
        elif r["task"] == "rayleigh":
            assert {"red_fraction", "range"} <= set(r["with"])
        else:
            assert set(r["with"]["legibility"]) == set(PLATE_NAMES)
    again = cvdfilter.tasks(["larkhill-notch-575"], observers=["normal", "deuteranope"],
                            tasks=["arrangement", "plates", "rayleigh"], trials=30, seed=1).to_dict()
    assert again == d  # the seed fixes the trials


def test_bad_input_is_one_input_error():
    with pytest.raises(cvdfilter.InputError):
        tasks(["nd:t=0.5"], tasks=["sorting"])
    with pytest.raises(cvdfilter.InputError):
        tasks(["nd:t=0.5"], trials=0)


def test_arranger_chunks_give_the_same_result(monkeypatch):
    # Large populations run in chunks of members; the chunking must not change a single arrangement.
    from cvdfilter.vision_tasks import core

    o = observer("protanomalous")
    members = ObserverMembers("three", np.stack([o.fundamentals] * 3), None)
    whole = tasks(["larkhill-notch-575"], observers=[members], tasks=["arrangement"], trials=25).scores
    monkeypatch.setattr(core, "_CHUNK_CAPS", 1)
    chunked = tasks(["larkhill-notch-575"], observers=[members], tasks=["arrangement"], trials=25).scores
    np.testing.assert_array_equal(whole[("arrangement", "three")]["order"], chunked[("arrangement", "three")]["order"])


def test_every_verdict_says_whether_it_is_robust():
    res = tasks(["larkhill-notch-575"], observers=["deuteranomalous"], trials=50).results()
    assert all(isinstance(r["basis"]["robust"], bool) and r["basis"]["criterion"] for r in res)
