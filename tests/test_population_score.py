"""Scoring observer populations: statistics over members, shares helped, JSON/CSV contract."""

from __future__ import annotations

import csv
import io
import json

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from typer.testing import CliRunner

from cvdfilter.cli.app import app
from cvdfilter.metrics.population_stats import STATISTICS, share_helped, spread, wilson_interval
from cvdfilter.observers.population import population
from cvdfilter.scorecard import score

runner = CliRunner()
NOTCH = "notch:center=575,fwhm=35,depth=0.8"


# ------------------------------------------------------------------------------------------ statistics

@pytest.mark.parametrize("k, n", [(0, 1), (0, 10), (3, 10), (5, 10), (10, 10), (17, 50), (1, 1000), (999, 1000)])
def test_wilson_interval_matches_scipy(k, n):
    # Reference library: scipy.stats.binomtest(k, n).proportion_ci(method="wilson") (Wilson 1927 score interval).
    from scipy.stats import binomtest

    ref = binomtest(k, n).proportion_ci(confidence_level=0.95, method="wilson")
    lo, hi = wilson_interval(k, n)
    assert float(lo) == pytest.approx(ref.low, abs=1e-12)
    assert float(hi) == pytest.approx(ref.high, abs=1e-12)


@settings(max_examples=60, deadline=None)
@given(st.lists(st.tuples(st.booleans(), st.booleans()), min_size=0, max_size=60))
def test_share_helped_is_a_proportion_inside_its_interval(flags):
    # Property (issue 13): the share helped lies in [0, 1] and its interval contains it.
    helped = np.array([h for h, _ in flags], dtype=bool)
    defined = np.array([d for _, d in flags], dtype=bool)
    r = share_helped(helped, defined)
    if defined.sum() == 0:
        assert np.isnan(r["share"]) and int(r["n"]) == 0
        return
    share = float(r["share"])
    assert 0.0 <= share <= 1.0
    assert float(r["ci_low"]) <= share <= float(r["ci_high"])
    assert 0.0 <= float(r["ci_low"]) and float(r["ci_high"]) <= 1.0
    assert int(r["helped"]) == int((helped & defined).sum())


def test_spread_matches_numpy_and_skips_undefined_members():
    # Reference: numpy's mean, std (ddof 1) and percentile (linear interpolation) on the defined values.
    rng = np.random.default_rng(1)
    v = rng.normal(size=(4, 37))
    v[1, 3] = np.nan
    s = spread(v)
    for row in range(4):
        x = v[row][np.isfinite(v[row])]
        assert s["mean"][row] == pytest.approx(x.mean(), abs=1e-12)
        assert s["sd"][row] == pytest.approx(x.std(ddof=1), abs=1e-12)
        assert [s["p2_5"][row], s["p50"][row], s["p97_5"][row]] == pytest.approx(
            list(np.percentile(x, [2.5, 50, 97.5])), abs=1e-12)
    assert tuple(k for k in s if k != "n") == STATISTICS


# ------------------------------------------------------------------------------------------ scoring

@pytest.mark.parametrize("spec", ["normal:n=6,seed=2", "deuteranomalous:n=6,seed=2", "protanomalous:n=6,seed=3",
                                  "tritanomalous:n=4,seed=1", "deuteranope:n=5,seed=4", "tritanope:n=4",
                                  "protanomalous:severity=0.5,model=machado2009,n=4,seed=2"])
def test_neutral_filter_gives_gain_one_and_no_pair_changed_for_every_member(spec):
    # Invariant (issue 13, CONVENTIONS section 5): a neutral-density filter with full adaptation changes no
    # contrast and no pair, for every member; so no member is "helped".
    card = score(["nd:t=0.3"], observers=[spec], metrics="core", members=True)
    o = card.to_dict()["filters"][0]["observers"][0]
    m = o["members"]
    for key in ("red_green_gain", "blue_yellow_gain", "luminance_contrast_gain"):
        vals = [x for x in m[key] if x is not None]
        assert np.allclose(vals, 1.0, atol=1e-6), key
    for key in ("discriminable_gained", "discriminable_lost"):
        assert all(x == 0 for x in m[key]), key
    if "confusion_resolved" in m:
        assert all(x == 0 for x in m["confusion_resolved"]) and all(x == 0 for x in m["confusion_created"])
    for h in o["helped"].values():
        assert h["share"] in (0.0, None)


def test_population_entry_contract():
    card = score([NOTCH, "nd:t=0.5"], observers=["deuteranomalous:n=40,seed=7", "normal"], metrics="core")
    doc = card.to_dict()
    assert doc["observers"][0]["population"] == {"n": 40, "variation": "asano2016", "seed": 7}
    assert "population" not in doc["observers"][1]
    assert doc["models"]["populations"]["confidence"] == 0.95
    o = doc["filters"][0]["observers"][0]
    assert o["observer"] == "deuteranomalous:separation=6,n=40,variation=asano2016,seed=7,separation_sd=2.5"
    assert o["population"] == {"n": 40, "variation": "asano2016", "seed": 7}
    for key in ("red_green_gain", "blue_yellow_gain", "luminance_contrast_gain"):
        assert set(o[key]) == set(STATISTICS)
        assert o[key]["p2_5"] <= o[key]["p50"] <= o[key]["p97_5"]
    for key in ("without", "with", "gained", "lost"):
        assert set(o["discriminable_pairs"][key]) == set(STATISTICS)
    for key in ("without", "with", "resolved", "created", "normally_discriminable", "median_delta_s_ratio"):
        assert set(o["confusion_pairs"][key]) == set(STATISTICS)
    assert {"red_green_gain", "blue_yellow_gain", "confusion_pairs_net"} <= set(o["helped"])
    for h in o["helped"].values():
        assert 0 <= h["share"] <= 1 and h["ci_low"] <= h["share"] <= h["ci_high"] and h["n"] == 40
    # a fixed observer's entry is unchanged in form
    assert isinstance(doc["filters"][0]["observers"][1]["red_green_gain"], float)
    assert "members" not in o


def test_population_values_equal_scoring_each_member_as_an_observer():
    # The batched population path gives exactly what the fixed-observer path gives for each member.
    pop = population("protanomalous:n=7,seed=5")
    card = score([NOTCH, "longpass:edge=500,width=10"], observers=[pop.spec], metrics="core", members=True)
    each = score([NOTCH, "longpass:edge=500,width=10"], observers=pop.members(), metrics="core")
    for i in range(2):
        m = card.to_dict()["filters"][i]["observers"][0]["members"]
        ref = [each.to_dict()["filters"][i]["observers"][k] for k in range(7)]
        assert m["red_green_gain"] == [r["red_green_gain"] for r in ref]
        assert m["confusion_resolved"] == [r["confusion_pairs"]["resolved"] for r in ref]
        assert m["discriminable_lost"] == [r["discriminable_pairs"]["lost"] for r in ref]
        vals = np.array(m["red_green_gain"])
        o = card.to_dict()["filters"][i]["observers"][0]
        assert o["red_green_gain"]["mean"] == pytest.approx(vals.mean(), abs=1e-6)
        assert o["helped"]["red_green_gain"]["helped"] == int(np.sum(vals > 1))


def test_zero_variation_population_scores_as_its_centre_observer():
    card = score([NOTCH], observers=["deuteranomalous:n=3,variation=none", "deuteranomalous"], metrics="core")
    pop, fixed = card.to_dict()["filters"][0]["observers"]
    assert pop["red_green_gain"]["mean"] == pytest.approx(fixed["red_green_gain"], abs=1e-6)
    assert pop["red_green_gain"]["sd"] == pytest.approx(0.0, abs=1e-9)
    assert pop["confusion_pairs"]["resolved"]["p50"] == fixed["confusion_pairs"]["resolved"]


@pytest.mark.parametrize("n_filters", [1, 7, 100])
@pytest.mark.parametrize("spec, fixed", [("deuteranomalous:n=40,variation=none,separation_sd=0", "deuteranomalous"),
                                         ("normal:n=33,variation=none", "normal"),
                                         ("protanope:n=35,variation=none", "protanope")])
def test_zero_variation_members_score_bit_for_bit_as_the_observer_alone(spec, fixed, n_filters):
    # Invariant (issue 13: zero variation reproduces the fixed observer exactly): every member of a population
    # without variation gets the fixed observer's numbers bit for bit, whatever the number of filters, the
    # member's place in its block (blocks of 32, a short last block) and the fixed path's chunks
    # (cvdfilter.catch_products keeps the BLAS product's bits independent of its size).
    filters = [f"notch:center={530 + 90 * i / max(n_filters - 1, 1):.4f},fwhm=30,depth=0.8" for i in range(n_filters)]
    card = score(filters, observers=[spec], metrics="core")
    alone = score(filters, observers=[fixed], metrics="core")
    got, want = card.per_observer[0], alone.per_observer[0]
    for key, v in got.items():
        if key == "undefined":
            continue
        ref = np.asarray(want[key])
        v = np.asarray(v)
        wide = np.broadcast_to(ref[..., None], v.shape) if v.ndim == ref.ndim + 1 else ref
        assert np.array_equal(v, wide, equal_nan=v.dtype.kind == "f"), key


def test_same_seed_gives_byte_identical_json():
    a = score([NOTCH], observers=["deuteranomalous:n=12,seed=3"], metrics="core", members=True).to_json()
    b = score([NOTCH], observers=["deuteranomalous:n=12,seed=3"], metrics="core", members=True).to_json()
    assert a == b


def test_csv_has_one_row_per_filter_population_statistic():
    card = score([NOTCH, "nd:t=0.5"], observers=["normal:n=5,seed=1", "deuteranope"], metrics="core")
    rows = list(csv.DictReader(io.StringIO(card.to_csv())))
    assert len(rows) == 2 * (len(STATISTICS) + 1)
    pop_rows = [r for r in rows if r["population.n"]]
    assert [r["statistic"] for r in pop_rows[:5]] == list(STATISTICS)
    assert all(r["helped.red_green_gain.share"] != "" for r in pop_rows)
    assert all(r["statistic"] == "" for r in rows if not r["population.n"])


def test_sensitivity_with_a_population_follows_every_member():
    # Each member's verdict under every variation equals that member scored alone as a fixed observer with
    # --sensitivity; the population rows are the share helped per variation and the share whose sign holds.
    pop = population("deuteranomalous:n=5,seed=3")
    filters = [NOTCH, "longpass:edge=500,width=10"]
    card = score(filters, observers=[pop.spec], metrics="core", sensitivity=True)
    each = score(filters, observers=pop.members(), metrics="core", sensitivity=True)
    for i in range(len(filters)):
        rows = card.sensitivity["filters"][i]["observers"][0]
        ref = each.sensitivity["filters"][i]["observers"]
        assert rows["observer"] == pop.spec
        for key in ("discriminable_net", "confused_net_resolved", "median_delta_s_ratio"):
            r = rows[key]
            centre = 1.0 if key.startswith("median") else 0
            for name, share in r["values"].items():
                vals = [m[key]["values"][name] for m in ref]
                assert share == pytest.approx(np.mean([v > centre for v in vals]), abs=1e-6), (key, name)
            robust = [m[key]["robust"] for m in ref]
            assert r["robust_share"] == pytest.approx(np.mean(robust), abs=1e-6)
            assert r["robust"] == all(robust) and r["members"] == 5
            assert 0 <= r["min"] <= r["max"] <= 1


def test_sensitivity_neutral_filter_helps_no_member_in_any_variation():
    card = score(["nd:t=0.4"], observers=["protanope:n=4,seed=2"], metrics="core", sensitivity=True)
    rows = card.sensitivity["filters"][0]["observers"][0]
    for key in ("discriminable_net", "confused_net_resolved"):
        assert set(rows[key]["values"].values()) == {0.0} and rows[key]["robust_share"] == 1.0
    assert "share" in card.to_dict()["sensitivity"]["what"]


def test_score_cli_with_a_population():
    r = runner.invoke(app, ["score", NOTCH, "--observer", "deuteranomalous:n=20,seed=7", "--metrics", "core",
                            "--format", "json", "--members"])
    assert r.exit_code == 0, r.output
    o = json.loads(r.stdout)["filters"][0]["observers"][0]
    assert len(o["members"]["red_green_gain"]) == 20
    r = runner.invoke(app, ["score", NOTCH, "--observer", "deuteranomalous:n=20,seed=7", "--metrics", "core"])
    assert r.exit_code == 0 and "median member" in r.stdout
    assert "Share of population members helped (Wilson 95 % interval)" in r.stdout
    r = runner.invoke(app, ["score", NOTCH, "--observer", "normal:n=0", "--metrics", "core"])
    assert r.exit_code == 2 and "Traceback" not in r.output
