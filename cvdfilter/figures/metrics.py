"""Reading scorecard numbers for figures: metric names, labels, units and values.

The figures never compute a metric themselves: they take the scorecard's
dictionary (:meth:`cvdfilter.scorecard.Scorecard.to_dict`) and read values
from it by name, so a figure always shows exactly what ``cvdfilter score``
reports.

A metric name is a key of a filter entry (``luminous_transmittance``,
``white_shift``, ``road_use.min_ratio_475_650``) or of an observer entry
(``red_green_gain``, ``discriminable_pairs.gained``); dots go into nested
objects.

Public: :func:`metric_label`, :func:`metric_values`, :func:`metric_level`,
:data:`METRIC_LABELS`, :func:`scorecard_dict`.
"""

from __future__ import annotations

import numpy as np

from ..errors import InputError

__all__ = ["METRIC_LABELS", "metric_label", "metric_level", "metric_values", "scorecard_dict"]

#: metric -> (axis label with unit, scale factor applied for display)
METRIC_LABELS = {
    "luminous_transmittance": ("Luminous\ntransmittance (%)", 100.0),
    "white_shift": ("White shift\n\u0394u\u2032v\u2032", 1.0),
    "red_green_gain": ("Red-green gain\n(with / without)", 1.0),
    "blue_yellow_gain": ("Blue-yellow gain\n(with / without)", 1.0),
    "luminance_contrast_gain": ("Luminance contrast\ngain (with / without)", 1.0),
    "discriminable_pairs.gained": ("Discriminable\npairs gained", 1.0),
    "discriminable_pairs.lost": ("Discriminable\npairs lost", 1.0),
    "discriminable_pairs.with": ("Discriminable pairs\nwith filter", 1.0),
    "discriminable_pairs.without": ("Discriminable pairs\nwithout filter", 1.0),
    "confusion_pairs.resolved": ("Confused pairs\nresolved", 1.0),
    "confusion_pairs.created": ("Confused pairs\ncreated", 1.0),
    "confusion_pairs.median_delta_s_ratio": ("Median \u0394S ratio\n(with / without)", 1.0),
    "delta_s_distribution.median_ratio": ("Median \u0394S ratio\n(with / without)", 1.0),
    "road_use.min_ratio_475_650": ("Min. T(\u03bb) / \u03c4v\n475-650 nm", 1.0),
}

#: Ratios drawn with a reference line at 1 (no change).
RATIO_METRICS = ("red_green_gain", "blue_yellow_gain", "luminance_contrast_gain",
                 "confusion_pairs.median_delta_s_ratio", "delta_s_distribution.median_ratio")


def metric_label(metric: str) -> tuple[str, float]:
    """(axis label with unit, display scale) for a metric name."""
    return METRIC_LABELS.get(metric, (metric.replace("_", " ").replace(".", ": "), 1.0))


def _get(entry: dict, metric: str):
    value = entry
    for part in metric.split("."):
        if not isinstance(value, dict) or part not in value:
            raise KeyError(metric)
        value = value[part]
    return value


def metric_level(card: dict, metric: str) -> str:
    """``filter`` or ``observer``: where the metric lives in the scorecard dict."""
    first = card["filters"][0]
    try:
        _get(first, metric)
        return "filter"
    except KeyError:
        pass
    try:
        _get(first["observers"][0], metric)
        return "observer"
    except (KeyError, IndexError):
        pass
    known = sorted(k for k in first if not isinstance(first[k], (dict, list)))
    known += sorted(k for k in first.get("observers", [{}])[0] if k != "observer")
    raise InputError(f"unknown metric '{metric}'", hint=f"use one of {', '.join(known)} "
                                                        "(dots reach into objects, e.g. discriminable_pairs.gained)")


def _number(value) -> float:
    if value is None:
        return float("nan")
    if isinstance(value, (bool, np.bool_)):
        return float(value)
    try:
        return float(value)
    except (TypeError, ValueError):
        raise InputError(f"metric value {value!r} is not a number") from None


def metric_values(card: dict, metric: str) -> dict:
    """Values of one metric for every filter.

    Returns
    -------
    dict
        For a filter metric ``{"": array (n_filters,)}``; for an observer
        metric ``{observer spec: array (n_filters,)}``. Missing values are NaN.
    """
    level = metric_level(card, metric)
    if level == "filter":
        return {"": np.array([_number(_get(f, metric)) for f in card["filters"]])}
    out: dict[str, list] = {}
    for f in card["filters"]:
        for o in f["observers"]:
            try:
                v = _get(o, metric)
            except KeyError:
                v = None
            out.setdefault(o["observer"], []).append(_number(v))
    return {k: np.array(v) for k, v in out.items()}


def scorecard_dict(filters, *, illuminant="D65", observers=None, surfaces=None, adaptation="full",
                   metrics: str = "core") -> dict:
    """Score the filters with :func:`cvdfilter.scorecard.score` and return ``to_dict()``."""
    from ..scorecard import score

    kwargs = {"illuminant": illuminant, "adaptation": adaptation, "metrics": metrics}
    if observers is not None:
        kwargs["observers"] = observers
    if surfaces is not None:
        kwargs["surfaces"] = surfaces
    return score(filters, **kwargs).to_dict()
