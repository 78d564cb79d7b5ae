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
                 "confusion_pairs"}


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
    assert [o["observer"] for o in d["observers"]] == [
        "normal", "protanomalous:separation=10", "deuteranomalous:separation=6", "protanope", "deuteranope"]
    for f in d["filters"]:
        assert FILTER_KEYS <= set(f)
        assert ROAD_KEYS <= set(f["road_use"])
        assert set(f["signal_quotients"]) == {"red", "yellow", "green", "blue"}
        assert set(f["chromaticity"]) == {"x", "y"}
        assert len(f["observers"]) == len(DEFAULT_OBSERVERS)
        for o in f["observers"]:
            assert OBSERVER_KEYS <= set(o)
            assert set(o["discriminable_pairs"]) == {"without", "with", "gained", "lost"}
        assert f["observers"][0]["confusion_pairs"] is None  # normal observer: null
        for o in f["observers"][1:]:
            assert set(o["confusion_pairs"]) == {"without", "with", "resolved", "created"}
        assert f["observers"][3]["red_green_gain"] is None  # protanope: no L-M axis
    json.dumps(d, allow_nan=False)  # strict JSON: no NaN anywhere


def test_counts_are_consistent(card):
    for f in card.to_dict()["filters"]:
        for o in f["observers"]:
            p = o["discriminable_pairs"]
            assert p["with"] - p["without"] == p["gained"] - p["lost"]
            assert 0 <= p["with"] <= 4851
            c = o["confusion_pairs"]
            if c is not None:
                assert c["with"] - c["without"] == c["created"] - c["resolved"]


@settings(max_examples=8, deadline=None)
@given(st.floats(0.02, 1.0), st.sampled_from(["full", "none", 0.5]))
def test_neutral_density_changes_no_contrast_and_no_pair(t, adaptation):
    # Invariant (issue 4): a neutral-density filter under full adaptation gives exactly 1 for every
    # gain; the ratios below are unchanged by any common scale, so this holds for any adaptation.
    d = score(f"nd:t={t:.6f}", adaptation=adaptation, metrics="contrast,discrimination,confusion").to_dict()
    for o in d["filters"][0]["observers"]:
        for key in ("red_green_gain", "blue_yellow_gain", "luminance_contrast_gain"):
            assert o[key] in (1.0, None)
        p = o["discriminable_pairs"]
        assert (p["gained"], p["lost"], p["with"]) == (0, 0, p["without"])
        if o["confusion_pairs"] is not None:
            c = o["confusion_pairs"]
            assert (c["resolved"], c["created"], c["with"]) == (0, 0, c["without"])


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


def test_constructed_deuteranope_metamers_are_resolved_by_a_separating_filter():
    # Outside reference: the pair is built from colour-science's Stockman & Sharpe fundamentals.
    surf = _deuteranope_metamers()
    d = score(["nd:t=0.5", "notch:center=575,fwhm=30,depth=0.9"], observers=["deuteranope", "normal"],
              surfaces=surf, metrics="core").to_dict()
    nd, notch = (f["observers"] for f in d["filters"])
    assert nd[0]["confusion_pairs"] == {"without": 1, "with": 1, "resolved": 0, "created": 0}
    assert nd[0]["discriminable_pairs"]["without"] == 0  # below 1 JND for the deuteranope
    assert notch[0]["confusion_pairs"] == {"without": 1, "with": 0, "resolved": 1, "created": 0}
    assert notch[0]["discriminable_pairs"]["gained"] == 1
    assert nd[1]["discriminable_pairs"]["without"] == 1  # the normal observer sees the M difference


def test_metamer_pair_lies_on_one_deutan_confusion_line():
    # Consistency with the confusion-line geometry (observers/confusion.py): the two surfaces the
    # scorecard calls a deuteranope confusion pair are collinear with the deutan copunctal point.
    from cvdfilter.observers.confusion import copunctal_point
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


def test_anomalous_confusion_pairs_are_a_subset_of_the_dichromats():
    # Invariant: a deuteranomalous observer shares L and S with the deuteranope, and its confusion
    # ellipse (across-line and weakened axis within tolerance) lies inside the deuteranope's strip.
    d = score(["nd:t=1", "larkhill-notch-575", "larkhill-rose-tint"], observers=["deuteranomalous", "deuteranope"],
              metrics="confusion").to_dict()
    for f in d["filters"]:
        anom, dich = f["observers"]
        assert anom["confusion_pairs"]["with"] <= dich["confusion_pairs"]["with"]


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
