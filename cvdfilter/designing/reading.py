"""Reading a scorecard's numbers for design: the one place that knows where they live.

:func:`metric_values` reads one metric for every filter of a :class:`~cvdfilter.scorecard.Scorecard`
from its full-precision arrays (vectorised: the search reads every generation this way);
:func:`entry_value` reads the same metric from one filter's JSON entry (``Scorecard.filter_dict``), the
form every reported design is checked in. Both give NaN where the scorecard has no number (null).
tests/test_design.py checks that the two agree for every key.

Public: :func:`metric_values`, :func:`entry_value`.
"""

from __future__ import annotations

import numpy as np

from .objectives import _AT, Metric

__all__ = ["metric_values", "entry_value", "DIGITS"]

_CONTRAST = ("red_green_gain", "blue_yellow_gain", "luminance_contrast_gain")


#: Decimals the JSON keeps for a key (Scorecard.filter_dict, population_entry); 6 for the others. The arrays
#: are rounded the same way, so that the search and the re-score judge a requirement alike.
DIGITS = {"road_use.min_ratio_475_650": 4, "road_use.min_ratio_at_nm": 2,
          **{f"signal_quotients.{c}": 4 for c in ("red", "yellow", "green", "blue")},
          "rendition.rf": 2, "rendition.rg": 2, "rendition.ra": 2, "rendition.cct_k": 1, "rendition.duv": 5,
          "delta_s_distribution.median_without": 4, "delta_s_distribution.median_with": 4,
          "confusion_pairs.median_delta_s_without": 4, "confusion_pairs.median_delta_s_with": 4}


def _array_name(key: str) -> str:
    """The per-observer array of the scorer (``score_plan.ObserverPlan.store``) behind a JSON key."""
    head, _, tail = key.partition(".")
    if head == "discriminable_pairs":
        return f"discriminable_{tail}"
    if head == "delta_s_distribution":
        at, _, k = tail.partition(".")
        if at in _AT:
            return f"discriminable_at_{_AT[at]:g}_{k}"
        return f"discriminable_{tail}"
    if head == "discernible_colours":
        return f"discernible_{tail}"
    if head == "confusion_pairs":
        if tail.startswith("median_delta_s_"):
            return "confusion_median_" + tail[len("median_delta_s_"):]
        return f"confusion_{tail}"
    return key


def _filter_array(card, key: str) -> np.ndarray:
    r = card.results
    n = len(card)
    if key == "chromaticity.x":
        return np.asarray(r["chromaticity"], dtype=float)[:, 0]
    if key == "chromaticity.y":
        return np.asarray(r["chromaticity"], dtype=float)[:, 1]
    if key == "iso12312_category":
        c = np.asarray(r["iso12312_category"], dtype=float)
        return np.where(c >= 0, c, np.nan)
    name = {"road_use.suitable": "suitable", "road_use.night_suitable": "night_suitable",
            "road_use.min_ratio_475_650": "min_ratio", "road_use.min_ratio_at_nm": "min_ratio_at_nm"}.get(key)
    if name is None:
        head, _, tail = key.partition(".")
        name = {"signal_quotients": f"signal_quotient_{tail}", "rendition": tail}.get(head, key)
    return np.broadcast_to(np.asarray(r[name], dtype=float), (n,)).copy()


def metric_values(card, metric: Metric, k: int | None) -> np.ndarray:
    """One metric for every filter of ``card`` (float array (n_filters,), NaN where undefined), rounded to
    the decimals its JSON keeps (:data:`DIGITS`).

    ``k`` is the index of ``metric.observer`` among ``card.observers`` (None for per-filter keys).
    """
    return np.round(_values(card, metric, k), DIGITS.get(metric.key, 6)) + 0.0


def _values(card, metric: Metric, k: int | None) -> np.ndarray:
    if not metric.per_observer:
        return _filter_array(card, metric.key)
    n = len(card)
    o = card.per_observer[k]
    if metric.stat is not None:  # a population: statistics over members, summarised once per scorecard
        stats, helped = card._population_summaries[k]
        if metric.stat == "share":
            h = helped.get(metric.key)
            return np.full(n, np.nan) if h is None else np.asarray(h["share"], dtype=float).copy()
        s = stats.get(_array_name(metric.key))
        if s is None:
            return np.full(n, np.nan)
        v = np.broadcast_to(np.asarray(s[metric.stat], dtype=float), (n,))
        count = np.broadcast_to(np.asarray(s["n"]), (n,))
        return np.where(count > 0, v, np.nan)
    if metric.key.endswith(".net"):
        a, b = (("discriminable_gained", "discriminable_lost") if metric.key.startswith("discriminable")
                else ("confusion_resolved", "confusion_created"))
        if a not in o or (a.startswith("confusion") and o.get("confusion_with") is None):
            return np.full(n, np.nan)
        v = np.asarray(o[a], dtype=float) - np.asarray(o[b], dtype=float)
    else:
        name = _array_name(metric.key)
        if name not in o or (name.startswith("confusion") and o.get("confusion_with") is None):
            return np.full(n, np.nan)
        v = np.broadcast_to(np.asarray(o[name], dtype=float), (n,)).copy()
    if metric.key not in _CONTRAST and "undefined" in o:
        v = np.where(np.asarray(o["undefined"], dtype=bool), np.nan, v)
    return v


def entry_value(entry: dict, metric: Metric, k: int | None) -> float:
    """One metric from a filter's JSON entry (``Scorecard.filter_dict``); NaN for null or missing."""
    node = entry if not metric.per_observer else entry["observers"][k]
    if metric.stat == "share":
        h = node.get("helped", {}).get(metric.key)
        return _float(None if h is None else h.get("share"))
    if metric.key.endswith(".net"):
        block = node.get(metric.key.split(".")[0])
        if block is None:
            return float("nan")
        a, b = ("gained", "lost") if metric.key.startswith("discriminable") else ("resolved", "created")
        return _float(block.get(a)) - _float(block.get(b))
    for part in metric.key.split("."):
        if not isinstance(node, dict):
            return float("nan")
        node = node.get(part)
    if metric.stat is not None:
        node = None if node is None else node.get(metric.stat)
    return _float(node)


def _float(x) -> float:
    if x is None or isinstance(x, (dict, list)):
        return float("nan")
    return float(x)
