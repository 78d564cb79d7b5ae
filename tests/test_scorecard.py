"""The scorecard API: JSON schema, invariants, a constructed metamer pair, output formats."""

from __future__ import annotations

import csv
import io
import json

import colour
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import cvdfilter.scorecard as scorecard_module
from cvdfilter.cautions import CAVEAT, EYE_CARE_CAUTION, ROAD_CAUTION
from cvdfilter.errors import InputError
from cvdfilter.scorecard import DEFAULT_OBSERVERS, Scorecard, parse_metrics, score
from cvdfilter.spectra.grid import DEFAULT_GRID
from cvdfilter.spectra.surfaces import SurfaceSet

TOP_KEYS = {"tool", "version", "caveat", "illuminant", "surfaces", "adaptation", "filters"}
FILTER_KEYS = {"name", "source", "luminous_transmittance", "iso12312_category", "road_use", "signal_quotients",
               "chromaticity", "white_shift", "rendition", "observers"}
ROAD_KEYS = {"suitable", "night_suitable", "min_ratio_475_650", "reasons"}
OBSERVER_KEYS = {"observer", "red_green_gain", "blue_yellow_gain", "luminance_contrast_gain", "discriminable_pairs",
                 "delta_s_distribution", "confusion_pairs"}
PAIR_KEYS = {"threshold_jnd", "without", "with", "gained", "lost"}
CONFUSION_KEYS = {"normal_threshold_jnd", "deficient_threshold_jnd", "normally_discriminable", "without", "with",
                  "resolved", "created", "median_delta_s_without", "median_delta_s_with", "median_delta_s_ratio"}
DISTRIBUTION_KEYS = {"at_1_jnd", "at_2_jnd", "at_4_jnd", "median_without", "median_with", "median_ratio"}


@pytest.fixture(scope="module")
def card():
    return score(["larkhill-notch-575", "nd:t=0.5", "notch:center=575,fwhm=30,depth=0.99"])


def test_json_schema_keys(card):
    # The issue's schema: top-level keys, per-filter keys, per-observer keys.
    d = card.to_dict()
    assert TOP_KEYS <= set(d)
    assert d["tool"] == "cvdfilter" and d["caveat"] == CAVEAT
    assert ROAD_CAUTION in d["cautions"] and EYE_CARE_CAUTION in d["cautions"]
    assert d["illuminant"]["name"] == "D65" and d["surfaces"]["name"] == "ces99" and d["surfaces"]["count"] == 99
    assert d["adaptation"]["spec"] == "full" and d["adaptation"]["degree"] == 1.0
    # Observer kinds, not today's default shifts (those may change with the observer models).
    assert [(o["kind"], o["deficiency"]) for o in d["observers"]] == [
        ("normal", None), ("anomalous", "protan"), ("anomalous", "deutan"), ("dichromat", "protan"),
        ("dichromat", "deutan")]
    # Every threshold and constant is named in the models section.
    m = d["models"]
    assert m["discrimination"]["threshold_jnd"] == 1.0 and m["discrimination"]["distribution_thresholds_jnd"] == [
        1.0, 2.0, 4.0]
    assert m["confusion"]["normal_threshold_jnd"] == 1.0 and m["confusion"]["deficient_threshold_jnd"] == 1.0
    assert m["road_use"]["signal_limits"] == {"red": 0.8, "yellow": 0.8, "green": 0.6, "blue": 0.6}
    assert m["road_use"]["signal_limits_reading"] == "guidance" and "blue-0.4" in m["road_use"]["other_readings"]
    for f in d["filters"]:
        assert FILTER_KEYS <= set(f)
        assert ROAD_KEYS <= set(f["road_use"])
        assert set(f["signal_quotients"]) == {"red", "yellow", "green", "blue"}
        assert set(f["chromaticity"]) == {"x", "y"}
        assert len(f["observers"]) == len(DEFAULT_OBSERVERS)
        for o in f["observers"]:
            assert OBSERVER_KEYS <= set(o)
            assert set(o["discriminable_pairs"]) == PAIR_KEYS
            assert set(o["delta_s_distribution"]) == DISTRIBUTION_KEYS
        assert f["observers"][0]["confusion_pairs"] is None  # normal observer: null
        for o in f["observers"][1:]:
            assert set(o["confusion_pairs"]) == CONFUSION_KEYS
        assert f["observers"][3]["red_green_gain"] is None  # protanope: no L-M axis
    json.dumps(d, allow_nan=False)  # strict JSON: no NaN anywhere


def test_counts_are_consistent(card):
    for f in card.to_dict()["filters"]:
        for o in f["observers"]:
            p = o["discriminable_pairs"]
            assert p["with"] - p["without"] == p["gained"] - p["lost"]
            assert 0 <= p["with"] <= 4851
            dist = o["delta_s_distribution"]
            assert {k: dist["at_1_jnd"][k] for k in ("without", "with", "gained", "lost")} == {
                k: p[k] for k in ("without", "with", "gained", "lost")}
            # More pairs clear 1 JND than 2 JND than 4 JND.
            assert dist["at_1_jnd"]["with"] >= dist["at_2_jnd"]["with"] >= dist["at_4_jnd"]["with"]
            c = o["confusion_pairs"]
            if c is not None:
                assert c["with"] - c["without"] == c["created"] - c["resolved"]
                assert 0 <= c["with"] <= c["normally_discriminable"] <= 4851
                assert c["median_delta_s_ratio"] == dist["median_ratio"]


@settings(max_examples=8, deadline=None)
@given(st.floats(0.02, 1.0), st.sampled_from(["full", "none", 0.5]), st.floats(0.3, 3.0), st.floats(0.3, 3.0))
def test_neutral_density_changes_no_contrast_and_no_pair(t, adaptation, t_normal, t_deficient):
    # Invariant (issue 4): a neutral-density filter under full adaptation gives exactly 1 for every
    # gain; the ratios below are unchanged by any common scale, so this holds for any adaptation.
    # Invariant (issue 9; Vorobyev & Osorio 1998: Delta S depends on log cone ratios only): a neutral
    # filter changes no count at any threshold, and every median ratio is 1.
    d = score(f"nd:t={t:.6f}", adaptation=adaptation, metrics="contrast,discrimination,confusion",
              discrimination_threshold=t_deficient, normal_threshold=t_normal, deficient_threshold=t_deficient,
              distribution_thresholds=(t_normal, 2.0, 4.0)).to_dict()
    for o in d["filters"][0]["observers"]:
        for key in ("red_green_gain", "blue_yellow_gain", "luminance_contrast_gain"):
            assert o[key] in (1.0, None)
        p = o["discriminable_pairs"]
        assert (p["gained"], p["lost"], p["with"]) == (0, 0, p["without"])
        for k, v in o["delta_s_distribution"].items():
            if k.startswith("at_"):
                assert (v["gained"], v["lost"], v["with"]) == (0, 0, v["without"])
        assert o["delta_s_distribution"]["median_ratio"] == 1.0
        if o["confusion_pairs"] is not None:
            c = o["confusion_pairs"]
            assert (c["resolved"], c["created"], c["with"]) == (0, 0, c["without"])
            assert c["median_delta_s_ratio"] == 1.0


def _deuteranope_metamers():
    """Two reflectances with equal L and S catches under D65 (a deuteranope metamer pair).

    Built with colour-science's Stockman & Sharpe (2000) 2 deg cone fundamentals and CIE D65,
    independently of the tool's own CIE 2006 tables: r2 = r1 + delta, delta a bump at 530 nm made
    orthogonal to D65 x L-bar and D65 x S-bar, so it changes the M catch only.
    """
    wl = DEFAULT_GRID.wavelengths
    shape = colour.SpectralShape(380, 780, 1)
    lms = colour.colorimetry.MSDS_CMFS_LMS["Stockman & Sharpe 2 Degree Cone Fundamentals"].copy().align(
        shape, extrapolator_kwargs={"method": "Constant", "left": 0, "right": 0}).values
    d65 = colour.SDS_ILLUMINANTS["D65"].copy().align(shape).values
    basis = np.stack([d65 * lms[:, 0], d65 * lms[:, 2]], axis=1)
    bump = np.exp(-0.5 * ((wl - 530.0) / 30.0) ** 2)
    delta = bump - basis @ np.linalg.lstsq(basis, bump, rcond=None)[0]
    delta *= 0.3 / np.abs(delta).max()
    r1 = np.full(wl.size, 0.5)
    r2 = r1 + delta
    assert np.abs(basis.T @ delta).max() < 1e-9 * np.abs(basis.T @ r1).max()  # L and S unchanged
    assert abs((d65 * lms[:, 1]) @ delta) > 0.05 * (d65 * lms[:, 1]) @ r1  # M changes by over 5 %
    return SurfaceSet("metamers", ("a", "b"), np.stack([r1, r2], axis=1), DEFAULT_GRID, "constructed")


def _counts(c: dict) -> dict:
    return {k: c[k] for k in ("without", "with", "resolved", "created")}


def test_constructed_deuteranope_metamers_are_resolved_by_a_separating_filter():
    # Outside reference: the pair is built from colour-science's Stockman & Sharpe fundamentals.
    # Confused pair (issue 9): the normal observer discriminates it (>= 1 JND), the deuteranope does not.
    surf = _deuteranope_metamers()
    d = score(["nd:t=0.5", "notch:center=575,fwhm=30,depth=0.9"], observers=["deuteranope", "normal"],
              surfaces=surf, metrics="core").to_dict()
    nd, notch = (f["observers"] for f in d["filters"])
    assert nd[1]["discriminable_pairs"]["without"] == 1  # the normal observer sees the M difference
    assert nd[0]["discriminable_pairs"]["without"] == 0  # below 1 JND for the deuteranope
    assert nd[0]["confusion_pairs"]["normally_discriminable"] == 1
    assert _counts(nd[0]["confusion_pairs"]) == {"without": 1, "with": 1, "resolved": 0, "created": 0}
    assert _counts(notch[0]["confusion_pairs"]) == {"without": 1, "with": 0, "resolved": 1, "created": 0}
    assert notch[0]["discriminable_pairs"]["gained"] == 1
    # The continuous measure says the same without a threshold: the pair moves far apart.
    assert notch[0]["confusion_pairs"]["median_delta_s_ratio"] > 1e3
    # At every pair of thresholds the pair stays confused without the filter (the normal observer's Delta S
    # is far above 1 JND, the deuteranope's far below).
    for tn, td in ((0.5, 0.5), (0.8, 1.25), (2.0, 0.8), (1.0, 2.0)):
        c = score("nd:t=0.5", observers=["deuteranope"], surfaces=surf, metrics="confusion", normal_threshold=tn,
                  deficient_threshold=td).to_dict()["filters"][0]["observers"][0]["confusion_pairs"]
        assert _counts(c) == {"without": 1, "with": 1, "resolved": 0, "created": 0}


def test_a_pair_the_normal_observer_cannot_tell_apart_is_not_confused():
    # Definition (issue 9): two identical surfaces are below 1 JND for everyone, so they are not
    # "confused" by the deuteranope, whatever the filter.
    wl = DEFAULT_GRID.wavelengths
    r = np.full(wl.size, 0.4)
    surf = SurfaceSet("twins", ("a", "b", "c"), np.stack([r, r, 0.8 * r + 0.1 * (wl > 550)], axis=1),
                      DEFAULT_GRID, "constructed")
    d = score(["nd:t=1", "notch:center=575,fwhm=30,depth=0.9"], observers=["deuteranope"], surfaces=surf,
              metrics="confusion").to_dict()
    for f in d["filters"]:
        c = f["observers"][0]["confusion_pairs"]
        assert c["normally_discriminable"] == 2
        assert c["without"] <= 2 and c["with"] <= 2


def test_confused_pairs_equal_the_published_formula_pair_by_pair():
    # Outside reference: Vorobyev & Osorio (1998) Delta S applied to every pair one by one (rnl_distance),
    # for the deuteranope against its normal base, on the 99 CIE 2017 samples; the median with numpy.
    from cvdfilter.metrics.discrimination import receptor_noise, rnl_distance
    from cvdfilter.observers.observer import observer
    from cvdfilter.spectra.filters import load_filters
    from cvdfilter.spectra.illuminants import illuminant
    from cvdfilter.spectra.surfaces import surface_set

    specs = ["larkhill-notch-575", "larkhill-rose-tint", "notch:center=540,fwhm=20,depth=0.7"]
    d = score(specs, observers=["deuteranope", "protanomalous"], metrics="confusion").to_dict()
    surf = surface_set("ces99")
    e = illuminant("D65").spd
    T = load_filters(specs).transmittance
    i, j = np.triu_indices(len(surf), 1)
    for k, spec in enumerate(["deuteranope", "protanomalous"]):
        o = observer(spec)
        stim = e[:, None] * surf.reflectance
        q0 = stim.T @ o.fundamentals
        normal = stim.T @ o.base.fundamentals
        seen = rnl_distance(normal[i], normal[j], receptor_noise()) >= 1.0
        noise = receptor_noise(o.missing_cone)
        ds0 = rnl_distance(q0[i], q0[j], noise)
        for n, f in enumerate(d["filters"]):
            q1 = (stim * T[n][:, None]).T @ o.fundamentals
            ds1 = rnl_distance(q1[i], q1[j], noise)
            c = f["observers"][k]["confusion_pairs"]
            conf0, conf1 = seen & (ds0 < 1.0), seen & (ds1 < 1.0)
            assert _counts(c) == {"without": int(conf0.sum()), "with": int(conf1.sum()),
                                  "resolved": int((conf0 & ~conf1).sum()), "created": int((conf1 & ~conf0).sum())}
            ratio = np.median(ds1[seen]) / np.median(ds0[seen])
            assert abs(c["median_delta_s_ratio"] - ratio) < 1e-5  # float32 selection, 6-decimal rounding


def test_metamer_pair_lies_on_one_deutan_confusion_line():
    # Consistency with the confusion-line geometry (observers/copunctal.py): the two surfaces the
    # scorecard calls a deuteranope confusion pair are collinear with the deutan copunctal point.
    from cvdfilter.observers.copunctal import copunctal_point
    from cvdfilter.observers.fundamentals import LMS_TO_XYZ_2DEG
    from cvdfilter.observers.observer import observer
    from cvdfilter.spectra.illuminants import illuminant

    obs = observer("deuteranope")
    surf = _deuteranope_metamers()
    lms = (illuminant("D65").spd[:, None] * surf.reflectance).T @ obs.fundamentals
    xyz = lms @ LMS_TO_XYZ_2DEG.T
    p1, p2 = xyz[:, :2] / xyz.sum(axis=1, keepdims=True)
    c = copunctal_point(obs, "deutan", xy_system="own-2")
    u, v = p2 - p1, c - p1
    assert abs(u[0] * v[1] - u[1] * v[0]) / (np.linalg.norm(u) * np.linalg.norm(v)) < 1e-3


def test_one_filter_alone_scores_as_in_a_batch(monkeypatch):
    specs = ["larkhill-double-notch", "notch:center=560,fwhm=25,depth=0.7", "longpass:edge=480,width=30,min=0.2"]
    batch = score(specs, metrics="core").to_dict()["filters"]
    for spec, row in zip(specs, batch):
        assert score(spec, metrics="core").to_dict()["filters"][0] == row
    # Chunks of 2 filters run on two threads give the same numbers.
    monkeypatch.setattr(scorecard_module, "_CHUNK_FILTERS", 2)
    monkeypatch.setenv("CVDFILTER_THREADS", "2")
    assert score(specs, metrics="core").to_dict()["filters"] == batch


def test_parametric_sweep():
    d = score("notch:center=540..600/5,fwhm=30,depth=0.8", observers=["normal", "deuteranope"],
              metrics="core").to_dict()
    names = [f["name"] for f in d["filters"]]
    assert len(names) == 13 and names[0] == "notch:center=540,depth=0.8,fwhm=30"
    tau = [f["luminous_transmittance"] for f in d["filters"]]
    # The notch that costs most light sits near the peak of D65 x V(lambda) (about 550-560 nm).
    lowest = names[int(np.argmin(tau))]
    assert lowest in ("notch:center=550,depth=0.8,fwhm=30", "notch:center=555,depth=0.8,fwhm=30")


def test_metric_groups():
    assert parse_metrics("all") == scorecard_module.METRIC_GROUPS
    assert "rendition" not in parse_metrics("core")
    with pytest.raises(InputError):
        parse_metrics("photometry,colourfulness")
    d = score("nd:t=0.5", observers=["normal"], metrics="contrast").to_dict()
    f = d["filters"][0]
    assert "road_use" not in f and "luminous_transmittance" not in f
    assert set(f["observers"][0]) == {"observer", "red_green_gain", "blue_yellow_gain", "luminance_contrast_gain"}


def test_black_filter_gives_nulls_not_errors():
    d = score("nd:t=0", metrics="core").to_dict()
    f = d["filters"][0]
    assert f["luminous_transmittance"] == 0.0 and f["iso12312_category"] is None
    for o in f["observers"]:
        assert o["luminance_contrast_gain"] is None and o["discriminable_pairs"] is None
    json.dumps(d, allow_nan=False)


def test_adaptation_matters_for_a_coloured_filter():
    full = score("larkhill-rose-tint", observers=["normal"], metrics="contrast").to_dict()
    none = score("larkhill-rose-tint", observers=["normal"], adaptation="none", metrics="contrast").to_dict()
    assert full["filters"][0]["observers"][0] != none["filters"][0]["observers"][0]


def test_bad_inputs_raise_input_error_before_work():
    for kw in ({"adaptation": "half"}, {"observers": ["martian"]}, {"surfaces": "nowhere"},
               {"illuminant": "candle"}, {"metrics": "speed"}):
        with pytest.raises(InputError):
            score("nd:t=0.5", **kw)
    with pytest.raises(InputError):
        score("no-such-filter.csv")


def test_progress_is_reported():
    seen = []
    score(["nd:t=0.5", "nd:t=0.2"], observers=["normal"], metrics="core", progress=lambda *a: seen.append(a))
    assert seen[-1] == ("filters", 2, 2)


def test_csv_one_row_per_filter_and_observer(card):
    rows = list(csv.DictReader(io.StringIO(card.to_csv())))
    assert len(rows) == 3 * len(DEFAULT_OBSERVERS)
    first = rows[0]
    for key in ("name", "observer", "luminous_transmittance", "road_use.suitable", "signal_quotients.red",
                "discriminable_pairs.gained", "confusion_pairs.resolved", "rendition.chroma_shifts.16",
                "tool", "version", "caveat", "cautions"):
        assert key in first
    assert first["confusion_pairs.resolved"] == ""  # normal observer: null
    assert ROAD_CAUTION in first["cautions"]
    assert first["road_use.suitable"] in ("true", "false")
    assert float(rows[5]["luminous_transmittance"]) == 0.5


def test_markdown_and_table_carry_the_cautions(card):
    md = card.to_markdown()
    assert md.startswith("# cvdfilter scorecard")
    for text in (CAVEAT, ROAD_CAUTION, EYE_CARE_CAUTION, "| larkhill-notch-575 |", "approximation, from memory"):
        assert text in md
    table = card.to_table()
    assert max(len(line) for line in table.splitlines()) <= 100
    flat = " ".join(table.split())
    for text in (CAVEAT, ROAD_CAUTION, "larkhill-notch-575: not for road use"):
        assert " ".join(text.split()) in flat


def test_scorecard_type(card):
    assert isinstance(card, Scorecard) and len(card) == 3
    assert card.to_json() == json.dumps(card.to_dict(), indent=2, ensure_ascii=False) + "\n"


# --- robustness and continuity (issue 9) ---------------------------------------

_DEFICIENT = ["protanomalous", "deuteranomalous", "protanope", "deuteranope"]


def _median_ratios(card) -> np.ndarray:
    return np.array([[o["confusion_pairs"]["median_delta_s_ratio"] for o in f["observers"]]
                     for f in card["filters"]])


def test_median_ratio_ranks_notches_alike_when_the_threshold_moves():
    # Issue 9: ranking notch centres 530-620 nm by the old tolerance-based counts gave rank correlations of
    # 0.06-0.50 between neighbouring tolerances. The median Delta S ratio has no threshold of its own; moving
    # every JND threshold x0.8 or x1.25 (which moves the set of normally discriminable pairs) must keep the
    # ranking (measured 0.95-1.00; benchmarks/metric_robustness.py prints the figures).
    from scipy.stats import spearmanr

    sweep = "notch:center=530..620/5,fwhm=30,depth=0.8"
    base = _median_ratios(score(sweep, observers=_DEFICIENT, metrics="confusion").to_dict())
    for t in (0.8, 1.25):
        moved = _median_ratios(score(sweep, observers=_DEFICIENT, metrics="confusion", normal_threshold=t,
                                     deficient_threshold=t, discrimination_threshold=t).to_dict())
        for k, spec in enumerate(_DEFICIENT):
            # Dichromats are fixed models; the anomalous defaults may change with the observer models, so
            # their bound is looser.
            bound = 0.9 if spec.endswith("ope") else 0.8
            assert spearmanr(base[:, k], moved[:, k]).statistic >= bound, (t, spec)


def test_a_small_ripple_on_a_grey_filter_moves_the_median_ratio_little():
    # Issue 9: a 0.5 % ripple on a grey filter moved the old net counts by up to 4. The median ratio of the
    # rippled filters must stay within 0.004 of the plain grey filter's 1 (measured <= 0.0016; a long-period
    # ripple is a faint colour filter), under a tenth of its spread over a notch sweep (about 0.05-0.08).
    wl = DEFAULT_GRID.wavelengths
    grey = np.full(wl.size, 0.5)
    rippled = [grey * (1 + 0.005 * np.sin(2 * np.pi * wl / p + ph)) for p in (5, 10, 20, 40, 80) for ph in (0, 1.3)]
    r = _median_ratios(score(np.stack([grey, *rippled]), observers=_DEFICIENT, metrics="confusion").to_dict())
    assert np.all(r[0] == 1.0)
    assert np.abs(r[1:] - 1.0).max() < 0.004


def _continuous_metrics(card) -> dict:
    """Every continuous scorecard default, full precision: name -> array over filters."""
    out = {k: card.results[k] for k in ("luminous_transmittance", "white_shift", "min_ratio")}
    out.update({f"signal_quotient_{c}": card.results[f"signal_quotient_{c}"] for c in ("red", "yellow", "green",
                                                                                        "blue")})
    for o, per in zip(card.observers, card.per_observer):
        for key in ("red_green_gain", "blue_yellow_gain", "luminance_contrast_gain", "discriminable_median_ratio",
                    "confusion_median_ratio"):
            if key in per and np.all(np.isfinite(per[key])):
                out[f"{o.spec}:{key}"] = per[key]
    return out


def _notch_row(center, depth, fwhm, axis, step, n):
    if axis == "center":
        return [f"notch:center={center + step * s:.6f},fwhm={fwhm:.3f},depth={depth:.5f}" for s in range(n)]
    return [f"notch:center={center:.4f},fwhm={fwhm:.3f},depth={min(depth + step * s, 0.99):.7f}" for s in range(n)]


@settings(max_examples=12, deadline=None)
@given(st.floats(440.0, 660.0), st.floats(0.2, 0.95), st.floats(15.0, 80.0), st.sampled_from(["center", "depth"]))
def test_scorecard_defaults_are_continuous_in_notch_centre_and_depth(center, depth, fwhm, axis):
    # Issue 9, continuity of every scorecard default: between neighbouring notch centres (0.25 nm apart) or
    # depths (0.0025 apart) no continuous metric jumps by more than a few times its neighbouring steps.
    # The median ratios are order statistics: continuous, but their slope changes when another pair
    # becomes the median, and it can be steep over a few hundredths of a nm. A step above 6x the typical
    # one is therefore refined into 10 sub-steps, up to three times (each time around the largest
    # sub-step): a jump keeps its whole size at every refinement, a steep but continuous stretch shrinks
    # to at most 0.6 of it within the three refinements.
    observers = ["normal", "deuteranomalous", "deuteranope"]
    step = 0.25 if axis == "center" else 0.0025
    card = score(_notch_row(center, depth, fwhm, axis, step, 9), metrics="core", observers=observers)
    for name, v in _continuous_metrics(card).items():
        d = np.abs(np.diff(np.asarray(v, dtype=float)))
        i = int(np.argmax(d))
        if d[i] <= 6 * np.median(d) + 1e-6:  # 1e-6: float32 selection of the medians, rounding noise
            continue
        lo = (center if axis == "center" else depth) + step * i
        size, h, history = d[i], step, []
        for _ in range(3):
            h /= 10
            c, dep = (lo, depth) if axis == "center" else (center, min(lo, 0.99))
            fine = score(_notch_row(c, dep, fwhm, axis, h, 11), metrics="core", observers=observers)
            sub = np.abs(np.diff(np.asarray(_continuous_metrics(fine)[name], dtype=float)))
            history.append(sub.tolist())
            j = int(np.argmax(sub))
            if sub[j] <= 0.6 * size + 1e-6:
                break
            lo, size = lo + h * j, sub[j]
        else:
            raise AssertionError((name, d.tolist(), history))


def test_costs_sit_beside_every_gain(card):
    # Issue 9: the scorecard never reads as a recommendation; every gain is printed with its costs.
    from cvdfilter.figures.gains import cost_label, gains_figure
    from cvdfilter.reporting import Report

    md = card.to_markdown()
    header = next(line for line in md.splitlines() if line.startswith("| filter | observer | RG gain"))
    for col in ("tau_v %", "du'v'", "Rf", "lost", "dS ratio"):
        assert f"| {col} |" in header
    assert "A gain is not a recommendation" in md
    flat = " ".join(card.to_table().split())
    assert "Per observer: larkhill-notch-575 - costs: tau_v" in flat and "Rf " in flat
    d = card.to_dict()
    fig = gains_figure(None, card=d)
    texts = [t.get_text() for t in fig.figure.legends[0].get_texts()] if fig.figure.legends else [
        t.get_text() for ax in fig.figure.axes if ax.get_legend() for t in ax.get_legend().get_texts()]
    assert all(cost_label(f) in t for f, t in zip(d["filters"], texts)) and len(texts) == len(d["filters"])
    rep = Report.__new__(Report)
    rep.card = d
    head, rows = rep._observer_table()
    assert "cost: luminous transmittance (%)" in head and "cost: Rf (normal observer)" in head
    assert all(len(r) == len(head) for r in rows)
