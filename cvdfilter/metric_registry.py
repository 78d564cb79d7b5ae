"""The scorecard's metrics by name: unit, definition, precision, and the typed array that carries them.

One registry (:data:`METRICS`) names every number the scorecard reports, by the dotted key of its JSON
document (``luminous_transmittance``, ``road_use.min_ratio_475_650``, ``discriminable_pairs.gained``), with
its level (a property of the ``filter``, or of the filter for one ``observer``), unit, one-line definition,
the decimals the JSON keeps, and where :class:`~cvdfilter.scorecard.Scorecard` holds it. The JSON, CSV and
table views, the figures and the report read names, units and precision from here.

:class:`MetricArray` is one metric as an array over named axes -- (filter,) for a filter property,
(filter, observer) for fixed observers, (filter, member) for a population's members -- with its name, unit
and definition: what ``Scorecard.metric(name)`` returns.

Public: :class:`MetricInfo`, :class:`MetricArray`, :data:`METRICS`, :func:`metric_info`,
:func:`metric_names`, :func:`json_round`, :data:`DERIVED_METRICS`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from .errors import InputError

__all__ = ["MetricInfo", "MetricArray", "METRICS", "DERIVED_METRICS", "metric_info", "metric_names", "json_round"]


@dataclass(frozen=True)
class MetricInfo:
    """What one metric is.

    Attributes
    ----------
    name : str
        The dotted key in the scorecard's JSON (``discriminable_pairs.gained``).
    level : str
        ``filter`` (a property of the filter) or ``observer`` (of the filter for one observer).
    unit : str
        Unit of the stored value (``fraction``, ``pairs``, ``ratio``, ``nm``, ...).
    definition : str
        One line: what the number is.
    digits : int or None
        Decimals kept in the JSON (None: an integer or a truth value, kept as is).
    store : str
        Key of the array in ``Scorecard.results`` (filter level) or ``Scorecard.per_observer[k]``.
    column : int or None
        Column of a 2-D stored array (chromaticity x = 0, y = 1).
    masked : bool
        Observer metric left out (NaN) where the observer's pair statistics are undefined (a filter that
        passes no light to a cone).
    """

    name: str
    level: str
    unit: str
    definition: str
    digits: int | None
    store: str
    column: int | None = None
    masked: bool = False


def _f(name, unit, definition, digits, store, column=None) -> MetricInfo:
    return MetricInfo(name, "filter", unit, definition, digits, store, column)


def _o(name, unit, definition, digits, store, masked=True) -> MetricInfo:
    return MetricInfo(name, "observer", unit, definition, digits, store, masked=masked)


_SIGNALS = ("red", "yellow", "green", "blue")
_PAIRS = {"without": "surface pairs discriminable without the filter",
          "with": "surface pairs discriminable with the filter",
          "gained": "pairs discriminable with the filter and not without it",
          "lost": "pairs discriminable without the filter and not with it"}
_CONFUSED = {"without": "confused pairs without the filter", "with": "confused pairs with the filter",
             "resolved": "pairs confused without the filter and not with it",
             "created": "pairs confused with the filter and not without it"}
_RATIO = "ratio (with / without)"


def _registry(distribution_thresholds=(1.0, 2.0, 4.0)) -> dict[str, MetricInfo]:
    entries = [
        _f("luminous_transmittance", "fraction", "luminous transmittance, CIE 1931 2 deg V(lambda), CIE D65 "
           "(ISO 12312-1)", 6, "luminous_transmittance"),
        _f("luminous_transmittance_illuminant", "fraction", "luminous transmittance under the chosen illuminant",
           6, "luminous_transmittance_illuminant"),
        _f("chromaticity.x", "CIE 1931 x", "chromaticity x of CIE D65 through the filter", 6, "chromaticity", 0),
        _f("chromaticity.y", "CIE 1931 y", "chromaticity y of CIE D65 through the filter", 6, "chromaticity", 1),
        _f("white_shift", "delta u'v'", "CIE 1976 u'v' distance of the filtered white from the illuminant", 6,
           "white_shift"),
        _f("iso12312_category", "category", "ISO 12312-1 filter category (0-4; null outside the bands)", None,
           "iso12312_category"),
        _f("road_use.suitable", "true/false", "suitable for road use by day (ISO 12312-1 checks)", None,
           "suitable"),
        _f("road_use.night_suitable", "true/false", "suitable for road use at night", None, "night_suitable"),
        _f("road_use.min_ratio_475_650", "ratio", "lowest spectral transmittance over 475-650 nm / luminous "
           "transmittance", 4, "min_ratio"),
        _f("road_use.min_ratio_at_nm", "nm", "wavelength of that lowest ratio", 2, "min_ratio_at_nm"),
        *(_f(f"signal_quotients.{c}", "quotient", f"ISO 12312-1 signal-light quotient, {c} lights", 4,
             f"signal_quotient_{c}") for c in _SIGNALS),
        _f("rendition.rf", "index", "CIE 224:2017 / TM-30 fidelity index Rf of the light through the filter", 2,
           "rf"),
        _f("rendition.rg", "index", "TM-30 gamut index Rg", 2, "rg"),
        _f("rendition.ra", "index", "CIE 13.3 general colour rendering index Ra", 2, "ra"),
        _f("rendition.chroma_shifts", "percent", "TM-30 local chroma shift per hue bin h1-h16", 2,
           "chroma_shifts"),
        _f("rendition.cct_k", "K", "correlated colour temperature of the light through the filter", 1, "cct_k"),
        _f("rendition.duv", "Duv", "distance from the Planckian locus (CIE 1960 uv)", 5, "duv"),
        _o("red_green_gain", _RATIO, "RMS red-green contrast of the surfaces with the filter / without it", 6,
           "red_green_gain", masked=False),
        _o("blue_yellow_gain", _RATIO, "RMS blue-yellow contrast with the filter / without it", 6,
           "blue_yellow_gain", masked=False),
        _o("luminance_contrast_gain", _RATIO, "RMS luminance contrast with the filter / without it", 6,
           "luminance_contrast_gain", masked=False),
        *(_o(f"discriminable_pairs.{k}", "pairs", d + " (receptor-noise model, Delta S >= the threshold)", None,
             f"discriminable_{k}") for k, d in _PAIRS.items()),
        *(_o(f"delta_s_distribution.{_at_key(t)}.{k}", "pairs", f"{d}, at Delta S >= {t:g} JND", None,
             f"discriminable_at_{t:g}_{k}") for t in distribution_thresholds for k, d in _PAIRS.items()),
        _o("delta_s_distribution.median_without", "JND", "median Delta S without the filter, over the pairs the "
           "normal observer discriminates", 4, "discriminable_median_without"),
        _o("delta_s_distribution.median_with", "JND", "median Delta S with the filter, same pairs", 4,
           "discriminable_median_with"),
        _o("delta_s_distribution.median_ratio", _RATIO, "median Delta S with the filter / without it", 6,
           "discriminable_median_ratio"),
        _o("confusion_pairs.normally_discriminable", "pairs", "pairs the normal observer discriminates without "
           "the filter", None, "confusion_normally_discriminable"),
        *(_o(f"confusion_pairs.{k}", "pairs", d, None, f"confusion_{k}") for k, d in _CONFUSED.items()),
        _o("confusion_pairs.median_delta_s_without", "JND", "median Delta S of this observer without the filter, "
           "over the normally discriminable pairs", 4, "confusion_median_without"),
        _o("confusion_pairs.median_delta_s_with", "JND", "the same median with the filter", 4,
           "confusion_median_with"),
        _o("confusion_pairs.median_delta_s_ratio", _RATIO, "median Delta S with the filter / without it, over "
           "the normally discriminable pairs", 6, "confusion_median_ratio"),
    ]
    return {m.name: m for m in entries}


def _at_key(t: float) -> str:
    """JSON key of a distribution threshold: 1 -> ``at_1_jnd``, 0.8 -> ``at_0_8_jnd``."""
    return f"at_{t:g}_jnd".replace(".", "_")


#: Every metric of the scorecard at the default distribution thresholds (1, 2, 4 JND), by JSON key.
METRICS = _registry()

#: Metrics computed from others (not JSON keys): name -> (unit, definition, parts).
DERIVED_METRICS = {
    "discriminable_pairs.net": ("pairs", "discriminable pairs gained - lost",
                                ("discriminable_pairs.gained", "discriminable_pairs.lost")),
    "confusion_pairs.net": ("pairs", "confused pairs resolved - created",
                            ("confusion_pairs.resolved", "confusion_pairs.created")),
    "median_delta_s_ratio": (_RATIO, "median Delta S ratio (confused-pair block where it exists, else the "
                                     "discriminable-pair distribution)",
                             ("confusion_pairs.median_delta_s_ratio", "delta_s_distribution.median_ratio")),
}


def metric_info(name: str, distribution_thresholds=None) -> MetricInfo:
    """The :class:`MetricInfo` of a JSON key; InputError naming the known keys for an unknown one."""
    table = METRICS if distribution_thresholds is None else _registry(tuple(distribution_thresholds))
    if name in table:
        return table[name]
    raise InputError(f"unknown metric '{name}'", hint=f"use one of {', '.join(table)} "
                                                      "(dots reach into objects, e.g. discriminable_pairs.gained)")


def metric_names(level: str | None = None, distribution_thresholds=None) -> list[str]:
    """Every metric name (JSON key), or those of one level (``filter`` / ``observer``)."""
    table = METRICS if distribution_thresholds is None else _registry(tuple(distribution_thresholds))
    return [k for k, m in table.items() if level is None or m.level == level]


def _round_one(x, digits: int) -> float:
    x = float(x)
    if x != x or x in (math.inf, -math.inf):
        return math.nan
    return round(x, digits) + 0.0


def json_round(values, digits: int | None) -> np.ndarray:
    """Values rounded exactly as the JSON rounds them (Python ``round`` per value), NaN kept; float array.

    ``digits`` None leaves the values as they are (integers and truth values).
    """
    a = np.asarray(values, dtype=float)
    if digits is None:
        return a.copy()
    flat = [_round_one(x, digits) for x in a.ravel().tolist()]
    return np.asarray(flat, dtype=float).reshape(a.shape)


@dataclass(frozen=True, eq=False)
class MetricArray:
    """One metric over named axes, with its name, unit and definition.

    Attributes
    ----------
    name : str
        The metric's JSON key (:data:`METRICS`) or derived name (:data:`DERIVED_METRICS`).
    unit, definition : str
    axes : tuple of str
        Names of the axes of ``values``: ``("filter",)``, ``("filter", "observer")``, ``("filter", "member")``
        (``("filter", "hue_bin")`` for the chroma shifts).
    values : numpy.ndarray
        Full precision, float; NaN where the metric does not apply.
    coords : dict
        Axis name -> labels along it (filter names, observer specs, member numbers).
    digits : int or None
        Decimals the JSON keeps (:meth:`rounded`).
    """

    name: str
    unit: str
    definition: str
    axes: tuple
    values: np.ndarray
    coords: dict = field(default_factory=dict)
    digits: int | None = None

    def __post_init__(self) -> None:
        if np.ndim(self.values) != len(self.axes):
            raise ValueError(f"{self.name}: values of shape {np.shape(self.values)} do not match axes {self.axes}")

    def rounded(self) -> np.ndarray:
        """The values as the JSON reports them (:func:`json_round`): what figures and tables show."""
        return json_round(self.values, self.digits)

    def along(self, axis: str, label) -> np.ndarray:
        """The values at one label of an axis (``card.metric(m).along("observer", "deuteranope")``)."""
        i = list(self.coords[axis]).index(label)
        return np.take(self.values, i, axis=self.axes.index(axis))
