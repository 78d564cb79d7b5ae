"""What figures read from a scorecard: metric values as arrays, labels and units, and the run's context.

The figures never compute a metric themselves and never read numbers back out of the rounded JSON of a
run they scored: they take the :class:`~cvdfilter.scorecard.Scorecard` and read its typed arrays
(``Scorecard.metric`` / ``metric_statistics``, :mod:`cvdfilter.scorecard_arrays`) through
:class:`FigureResults`, at the precision the JSON reports (``MetricArray.rounded``), so a figure always
shows exactly what ``cvdfilter score`` reports. A scorecard given as a JSON document (a dict, e.g. read
from a file written by ``cvdfilter score --format json``) goes through the one adapter,
:meth:`FigureResults.from_document`.

A metric name is a JSON key (:data:`cvdfilter.metric_registry.METRICS`): of a filter entry
(``luminous_transmittance``, ``road_use.min_ratio_475_650``) or of an observer entry (``red_green_gain``,
``discriminable_pairs.gained``); dots go into nested objects.

Public: :class:`FigureResults`, :func:`figure_results`, :func:`metric_label`, :data:`METRIC_LABELS`,
:data:`RATIO_METRICS`, :func:`score_for_figure`.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ..errors import InputError

__all__ = ["FigureResults", "figure_results", "METRIC_LABELS", "RATIO_METRICS", "metric_label",
           "score_for_figure"]

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


def score_for_figure(filters, *, illuminant="D65", observers=None, surfaces=None, adaptation="full",
                     metrics: str = "core", members: bool = False):
    """Score the filters with :func:`cvdfilter.scorecard.score` (its defaults where None)."""
    from ..scorecard import score

    kwargs = {"illuminant": illuminant, "adaptation": adaptation, "metrics": metrics}
    if observers is not None:
        kwargs["observers"] = observers
    if surfaces is not None:
        kwargs["surfaces"] = surfaces
    if members:
        kwargs["members"] = True
    return score(filters, **kwargs)


@dataclass
class FigureResults:
    """A scorecard as the figures read it: names, observers, metric arrays at JSON precision, context.

    Build it with :func:`figure_results` (a Scorecard, or a JSON document through :meth:`from_document`).

    Attributes
    ----------
    filters : list of str
        Filter names.
    observers : list of str
        Observer specs, every observer (populations included).
    populations : list of bool
        Per observer: a population (a spec with ``n=N``)?
    context : dict
        ``illuminant``, ``surfaces``, ``adaptation`` as the JSON header gives them, ``threshold_jnd``.
    """

    filters: list
    observers: list
    populations: list
    context: dict
    _card: Any = None     # the Scorecard, or None for a document
    _doc: Any = None      # the JSON document (dict), or None for a Scorecard
    _observer_objects: list | None = None
    _cache: dict = field(default_factory=dict)

    # -- constructors -----------------------------------------------------------------------------

    @classmethod
    def from_scorecard(cls, card) -> FigureResults:
        from ..score_population import is_population

        head = {k: v for k, v in card.header().items() if k in ("illuminant", "surfaces", "adaptation")}
        head["threshold_jnd"] = card.settings.get("discrimination_threshold", 1.0)
        return cls(list(card.filters.names), [o.spec for o in card.observers],
                   [is_population(o) for o in card.observers], head, _card=card,
                   _observer_objects=list(card.observers))

    @classmethod
    def from_document(cls, doc: dict) -> FigureResults:
        """The adapter for a scorecard JSON document (``Scorecard.to_dict()`` or a file of it)."""
        fl = doc.get("filters") or []
        obs = fl[0]["observers"] if fl and fl[0].get("observers") else []
        context = {k: doc.get(k) for k in ("illuminant", "surfaces", "adaptation")}
        context["threshold_jnd"] = (doc.get("models", {}).get("discrimination") or {}).get("threshold_jnd", 1.0)
        return cls([f["name"] for f in fl], [o["observer"] for o in obs], ["population" in o for o in obs],
                   context, _doc=doc)

    def observer_labels(self) -> list[str]:
        """Readable observer labels (:func:`cvdfilter.observers.labels.observer_label`), from the scorecard's
        Observer objects (a document's specs are read by the observer parser)."""
        from ..observers.labels import observer_label

        return [observer_label(o) for o in (self._observer_objects or self.observers)]

    # -- filter properties ---------------------------------------------------------------------------

    def has_filter_metric(self, name: str) -> bool:
        """Whether the scorecard carries this filter property (its metric group was computed)."""
        if self._card is not None:
            from ..metric_registry import METRICS

            m = METRICS.get(name)
            return m is not None and m.level == "filter" and m.store in self._card.results
        return bool(self._doc["filters"]) and _has(self._doc["filters"][0], name)

    def filter_values(self, name: str) -> np.ndarray:
        """A filter property over the filters (n_filters,), NaN where missing."""
        if self._card is not None:
            return self._card.metric(name).rounded()
        values = [_get_or_none(f, name) for f in self._doc["filters"]]
        if values and all(isinstance(v, list) for v in values):    # a vector per filter (chroma shifts)
            return np.array([[_number(x) for x in v] for v in values])
        return np.array([_number(v) for v in values])

    # -- observer metrics ------------------------------------------------------------------------------

    def level(self, name: str) -> str:
        """``filter`` or ``observer``: InputError for an unknown metric."""
        if self._card is not None:
            from ..metric_registry import metric_info

            return metric_info(name, self._card.settings.get("distribution_thresholds")).level
        return _document_level(self._doc, name)

    def statistic(self, name: str, stat: str = "p50") -> np.ndarray:
        """An observer metric (n_filters, n_observers): a fixed observer's value for ``p50`` (NaN for the other
        statistics), a population's statistic over its members; NaN where it does not apply."""
        key = (name, stat)
        if key not in self._cache:
            if self._card is not None:
                self._cache[key] = self._card.metric_statistics(name)[stat].rounded()
            else:
                self._cache[key] = _document_statistic(self._doc, name, stat)
        return self._cache[key]

    def members(self, name: str, k: int) -> np.ndarray:
        """Population ``k``'s members' values of ``name`` (n_filters, n_members), NaN where undefined."""
        if self._card is not None:
            return self._card.metric(name, population=k).rounded()
        return np.stack([_document_members(f["observers"][k], name) for f in self._doc["filters"]])

    def has_members(self, k: int) -> bool:
        if self._card is not None:
            return True
        return "members" in self._doc["filters"][0]["observers"][k]

    def helped(self, key: str, k: int) -> np.ndarray:
        """(3, n_filters): share, ci_low, ci_high of population ``k`` helped by criterion ``key``; NaN if none."""
        from ..metric_registry import json_round

        out = np.full((3, len(self.filters)), np.nan)
        if self._card is not None:
            h = self._card.population_helped(k).get(key)
            if h is not None:
                for r, s in enumerate(("share", "ci_low", "ci_high")):
                    out[r] = json_round(h[s], 6)
            return out
        for i, f in enumerate(self._doc["filters"]):
            h = (f["observers"][k].get("helped") or {}).get(key)
            if h and h.get("share") is not None:
                out[:, i] = h["share"], h["ci_low"], h["ci_high"]
        return out


def figure_results(card) -> FigureResults:
    """A :class:`FigureResults` of a Scorecard, a JSON document (dict) or a FigureResults."""
    if isinstance(card, FigureResults):
        return card
    if isinstance(card, dict):
        return FigureResults.from_document(card)
    return FigureResults.from_scorecard(card)


def swept_parameters(records) -> tuple[list[str], dict[str, np.ndarray]]:
    """Parameters of the filters (from their :class:`~cvdfilter.scorecard_arrays.FilterRecord`) and which
    of them vary.

    Returns
    -------
    varying : list of str
        Keys whose value differs between filters, in the order they appear.
    values : dict
        key -> values (n_filters,) for every key present in all filters.
    """
    records = list(records)
    if records and all(isinstance(r, str) for r in records):
        records = _records_of_specs(records)
    table = [r.parameters for r in records]
    keys = [k for k in table[0] if all(k in r for r in table)] if table else []
    values = {k: np.array([r[k] for r in table], dtype=float) for k in keys}
    varying = [k for k in keys if np.ptp(values[k]) > 0]
    return varying, values


def _records_of_specs(names: list) -> list:
    """Filter records of names that carry no record (a JSON document, a legend): each name read as the spec
    grammar writes it (``kind:key=value,...``, stacked with ``*``; numeric values only)."""
    from ..scorecard_arrays import FilterRecord

    out = []
    for name in names:
        params: dict[str, float] = {}
        for term in str(name).split("*"):
            for part in term.partition(":")[2].split(","):
                key, eq, value = part.partition("=")
                key = key.strip().lower()
                try:
                    number = float(value)
                except ValueError:
                    continue
                if not eq or not key or not np.isfinite(number):
                    continue
                k, n = key, 2
                while k in params:
                    k = f"{key}#{n}"
                    n += 1
                params[k] = number
        out.append(FilterRecord(str(name), "name", parameters=params))
    return out


# --- the JSON-document adapter ---------------------------------------------------------------------

def _get(entry: dict, metric: str):
    value = entry
    for part in metric.split("."):
        if not isinstance(value, dict) or part not in value:
            raise KeyError(metric)
        value = value[part]
    return value


def _get_or_none(entry: dict, metric: str):
    try:
        return _get(entry, metric)
    except KeyError:
        return None


def _has(entry: dict, metric: str) -> bool:
    try:
        _get(entry, metric)
        return True
    except KeyError:
        return False


def _document_level(doc: dict, metric: str) -> str:
    first = doc["filters"][0]
    if _has(first, metric):
        return "filter"
    if first.get("observers") and _has(first["observers"][0], metric):
        return "observer"
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


def _document_statistic(doc: dict, name: str, stat: str) -> np.ndarray:
    fl = doc["filters"]
    n_o = len(fl[0]["observers"]) if fl else 0
    out = np.full((len(fl), n_o), np.nan)
    for i, f in enumerate(fl):
        for k, o in enumerate(f["observers"]):
            v = _get_or_none(o, name)
            if isinstance(v, dict):
                v = v.get(stat)
                out[i, k] = np.nan if v is None else float(v)
            elif v is not None and stat == "p50":    # a fixed observer has no spread
                out[i, k] = _number(v)
    return out


def _document_members(entry: dict, metric: str) -> np.ndarray:
    """One population entry's per-member values of ``metric`` (its ``members`` block)."""
    m = entry["members"]
    if metric in ("red_green_gain", "blue_yellow_gain"):
        v = m[metric]
    elif metric == "median_delta_s_ratio":
        v = m.get("confusion_median_ratio", m.get("discriminable_median_ratio"))
    elif metric == "discriminable_pairs.net":
        v = np.asarray(m["discriminable_gained"], dtype=float) - np.asarray(m["discriminable_lost"], dtype=float)
    else:
        v = np.asarray(m["confusion_resolved"], dtype=float) - np.asarray(m["confusion_created"], dtype=float)
    return np.asarray([np.nan if x is None else x for x in np.asarray(v, dtype=object).tolist()], dtype=float)
