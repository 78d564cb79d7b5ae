"""The typed scorecard (Scorecard.metric, metric_statistics, filter_records) against its own JSON document:
the same numbers before rounding, a unit and a definition for every metric the JSON reports, and filter
records that keep each filter's spec parameters."""

from __future__ import annotations

import math

import numpy as np
import pytest

from cvdfilter.metric_registry import METRICS, MetricArray, json_round, metric_info

FILTERS = ["larkhill-notch-575", "notch:center=540..560/20,fwhm=30,depth=0.8", "nd:t=0.5"]
OBSERVERS = ["normal", "deuteranomalous:shift=8", "protanope", "deuteranomalous:n=6,seed=3"]
#: JSON keys that describe a filter or an observer rather than measure it.
_NOT_METRICS = {"name", "source", "input", "extrapolated", "sha256", "warnings", "observer", "road_use.reasons",
                "discriminable_pairs.threshold_jnd", "confusion_pairs.normal_threshold_jnd",
                "confusion_pairs.deficient_threshold_jnd"}


@pytest.fixture(scope="module")
def card():
    import cvdfilter

    return cvdfilter.score(FILTERS, observers=OBSERVERS, metrics="all", members=True)


@pytest.fixture(scope="module")
def doc(card):
    return card.to_dict()


def _leaves(d: dict, prefix: str = ""):
    for k, v in d.items():
        key = f"{prefix}{k}"
        if isinstance(v, dict) and not set(v) >= {"mean", "p50"}:
            yield from _leaves(v, key + ".")
        else:
            yield key, v


def _same(a, b) -> bool:
    if b is None:
        return a is None or (isinstance(a, float) and math.isnan(a))
    if isinstance(b, bool):
        return float(a) == float(b)
    return float(a) == float(b)


def test_every_json_metric_has_a_unit_and_a_definition(doc):
    keys = set()
    for f in doc["filters"]:
        keys |= {k for k, _ in _leaves({k: v for k, v in f.items() if k != "observers"})}
        for o in f["observers"]:
            keys |= {k for k, _ in _leaves({k: v for k, v in o.items()
                                            if k not in ("population", "helped", "members")})}
    keys = {k for k in keys if k not in _NOT_METRICS and not k.startswith("source.")}
    # a block that does not apply is null (confusion_pairs of the normal observer): its keys are in the registry
    keys = {k for k in keys if not any(m.startswith(k + ".") for m in METRICS)}
    missing = sorted(k for k in keys if k not in METRICS)
    assert not missing, missing
    for k in keys:
        assert METRICS[k].unit and METRICS[k].definition, k


def test_filter_metrics_are_the_json_numbers_before_rounding(card, doc):
    for name, m in METRICS.items():
        if m.level != "filter":
            continue
        arr = card.metric(name)
        assert isinstance(arr, MetricArray) and arr.axes[0] == "filter" and arr.unit == m.unit
        shown = arr.rounded()
        for i, f in enumerate(doc["filters"]):
            v = dict(_leaves(f)).get(name)
            if isinstance(v, list):
                assert all(_same(a, b) for a, b in zip(shown[i], v)), (name, i)
            else:
                assert _same(shown[i], v), (name, i, shown[i], v)


def test_observer_metrics_are_the_json_numbers_before_rounding(card, doc):
    fixed = [k for k, o in enumerate(OBSERVERS) if "n=" not in o]
    for name, m in METRICS.items():
        if m.level != "observer":
            continue
        arr = card.metric(name)
        assert arr.axes == ("filter", "observer") and arr.coords["observer"] == tuple(OBSERVERS[k] for k in fixed)
        shown = arr.rounded()
        for i, f in enumerate(doc["filters"]):
            for j, k in enumerate(fixed):
                v = dict(_leaves(f["observers"][k])).get(name)
                assert _same(shown[i, j], v), (name, OBSERVERS[k], i, shown[i, j], v)
        # the typed values are full precision: rounding them as the JSON does gives the JSON
        assert np.array_equal(json_round(arr.values, m.digits), shown, equal_nan=True)


def test_population_members_and_statistics_are_the_json_numbers(card, doc):
    k = 3
    for name, key in (("red_green_gain", "red_green_gain"), ("discriminable_pairs.gained", "discriminable_gained")):
        members = card.metric(name, population=card.observers[k].spec)   # or its index, k
        assert members.axes == ("filter", "member") and members.values.shape == (len(card), 6)
        for i, f in enumerate(doc["filters"]):
            json_members = f["observers"][k]["members"][key]
            assert all(_same(a, b) for a, b in zip(members.rounded()[i], json_members)), (name, i)
        stats = card.metric_statistics(name)
        for i, f in enumerate(doc["filters"]):
            entry = dict(_leaves(f["observers"][k]))[name]
            for s in ("mean", "p2_5", "p50", "p97_5"):
                assert _same(stats[s].rounded()[i, k], None if entry is None else entry[s]), (name, s, i)
            # a fixed observer's value is its p50; it has no spread
            assert _same(stats["p50"].rounded()[i, 1], dict(_leaves(f["observers"][1]))[name])
            assert math.isnan(stats["p2_5"].values[i, 1])


def test_filter_records_keep_the_spec_parameters(card):
    recs = card.filter_records()
    assert recs[0].path == "example:larkhill-notch-575" and recs[0].parameters == {}
    assert [r.parameters["center"] for r in recs[1:3]] == [540.0, 560.0]
    assert recs[1].kind == "notch" and recs[1].parameters["fwhm"] == 30.0 and recs[1].spec == card.filters.names[1]
    assert recs[3].parameters == {"t": 0.5} and len(recs) == 4


def test_stacked_records_number_repeated_keys():
    from cvdfilter.scorecard_arrays import filter_records
    from cvdfilter.spectra.filters import load_filters

    fs = load_filters(["notch:center=540,fwhm=20,depth=0.5*notch:center=600,fwhm=30,depth=0.4"])
    (rec,) = filter_records(fs)
    assert rec.parameters == {"center": 540.0, "depth": 0.5, "fwhm": 20.0, "center#2": 600.0, "depth#2": 0.4,
                              "fwhm#2": 30.0}
    assert len(rec.parts) == 2 and rec.parts[1].kind == "notch"


def test_unknown_metric_is_an_input_error():
    from cvdfilter.errors import InputError

    with pytest.raises(InputError, match="unknown metric"):
        metric_info("beauty")


def test_metric_array_checks_its_axes():
    with pytest.raises(ValueError):
        MetricArray("x", "ratio", "a ratio", ("filter", "observer"), np.zeros(3))
    a = MetricArray("x", "ratio", "a ratio", ("filter", "observer"), np.arange(6.0).reshape(3, 2),
                    {"filter": ("a", "b", "c"), "observer": ("normal", "protanope")}, 6)
    assert a.along("observer", "protanope").tolist() == [1.0, 3.0, 5.0]


def test_sweep_draws_a_population_at_its_median_member():
    # Before the typed results, a sweep given a scorecard with a population (as the report gives it) stopped on
    # the population's statistics dict; it now draws the median member, labelled so.
    import cvdfilter
    from cvdfilter.figures.sweep import sweep_figure

    spec = ["notch:center=540..580/20,fwhm=30,depth=0.8"]
    card = cvdfilter.score(spec, observers=["normal", "deuteranomalous:n=8,seed=1"], metrics="core")
    r = sweep_figure(spec, card=card)
    line = next(a for a in r.figure.findobj() if getattr(a, "get_gid", lambda: None)() == "sweep-red_green_gain-1")
    p50 = card.metric_statistics("red_green_gain")["p50"].rounded()[:, 1]
    assert np.allclose(line.get_ydata(), p50) and "median member" in line.get_label()
