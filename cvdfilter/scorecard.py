"""The scorecard: what each filter does for each observer, and what it costs.

:func:`score` takes one or many filters, a light, observers and a surface set
and returns a :class:`Scorecard`. ``Scorecard.to_dict()`` is exactly the JSON
``cvdfilter score --format json`` prints; its schema is documented in
``docs/metrics.md`` and kept stable.

Many filters are scored in one vectorised pass: the cone catches of every
surface (and of the white) through every filter, for every observer, come from
one matrix product per chunk of filters,

    Q[f, n, c] = sum_lambda T[f, lambda] E[lambda] R[lambda, n] Phi[lambda, c],

computed as ``T @ B`` with B = E R (x) Phi laid out as (wavelengths x
surfaces*cones); cone sensitivities shared by several observers (a dichromat
and the normal observer it derives from, the unshifted cones of an anomalous
trichromat) enter B once. The pair statistics are vectorised over filters too
(:mod:`cvdfilter.metrics.pairs`). Colour rendition (``metrics="all"``) calls
colour-science once per filter and is the slow part.

Every number is a model prediction (``CAVEAT``); road-use results come with
``ROAD_CAUTION``.

Public: :func:`score`, :class:`Scorecard`, :data:`DEFAULT_OBSERVERS`,
:data:`METRIC_GROUPS`, :data:`CORE_METRICS`, :func:`parse_metrics`.
"""

from __future__ import annotations

import csv
import functools
import io
import json
import math
import pathlib
import textwrap
from dataclasses import dataclass, field

import numpy as np

from . import tables as _tables

from ._version import __version__
from .cautions import CAVEAT, EYE_CARE_CAUTION, ROAD_CAUTION
from .errors import InputError
from .metrics.confusion import DEFICIENT_THRESHOLD, NORMAL_THRESHOLD
from .metrics.discrimination import CONE_RATIOS, DISCRIMINATION_THRESHOLD, DISTRIBUTION_THRESHOLDS, WEBER_FRACTION
from .observers.labels import label_legend, table_labels

__all__ = ["score", "Scorecard", "DEFAULT_OBSERVERS", "METRIC_GROUPS", "CORE_METRICS", "parse_metrics",
           "SENSITIVITY_RANGES"]

#: Observers scored when none are given.
DEFAULT_OBSERVERS = ("normal", "protanomalous", "deuteranomalous", "protanope", "deuteranope")
#: Metric groups, in output order.
METRIC_GROUPS = ("photometry", "road_use", "rendition", "contrast", "discrimination", "confusion")
#: ``metrics="core"``: everything but the (slow) rendition block.
CORE_METRICS = ("photometry", "road_use", "contrast", "discrimination", "confusion")
#: Filters per chunk of the vectorised pass (bounded memory; progress is reported per chunk).
_CHUNK_FILTERS = 1024


def _workers() -> int:
    """Threads for the chunks: the CPUs this process may use (at most 8); CVDFILTER_THREADS overrides."""
    import os

    env = os.environ.get("CVDFILTER_THREADS")
    if env and env.isdigit() and int(env) > 0:
        return int(env)
    try:
        n = len(os.sched_getaffinity(0))
    except (AttributeError, OSError):
        n = os.cpu_count() or 1
    return max(1, min(8, n))


def parse_metrics(metrics) -> tuple:
    """``"all"``, ``"core"``, a comma-separated list or a sequence of group names -> groups in order.

    >>> parse_metrics("core")
    ('photometry', 'road_use', 'contrast', 'discrimination', 'confusion')
    >>> parse_metrics("contrast,photometry")
    ('photometry', 'contrast')
    """
    if isinstance(metrics, str):
        text = metrics.strip().lower()
        if text == "all":
            return METRIC_GROUPS
        if text == "core":
            return CORE_METRICS
        items = [m.strip().replace("-", "_") for m in text.split(",") if m.strip()]
    else:
        items = [str(m).strip().lower().replace("-", "_") for m in metrics]
    unknown = [m for m in items if m not in METRIC_GROUPS]
    if unknown or not items:
        raise InputError(f"unknown metrics '{', '.join(unknown) or metrics}'",
                         hint=f"use all, core or a comma-separated list of {', '.join(METRIC_GROUPS)}")
    return tuple(m for m in METRIC_GROUPS if m in items)


def _adaptation_text(a: float) -> str:
    return "full" if a == 1.0 else "none" if a == 0.0 else f"{a:g}"


# --- rounding for the JSON ----------------------------------------------------

def _num(x, digits: int = 6):
    """A finite float rounded to ``digits`` decimals, or None (NaN / inf -> null)."""
    x = float(x)
    if x != x or x in (math.inf, -math.inf):
        return None
    return round(x, digits) + 0.0  # + 0.0 turns -0.0 into 0.0


def _int(x):
    return None if x is None else int(x)


@dataclass
class Scorecard:
    """Scores of many filters for several observers (see :func:`score`).

    The arrays hold full precision; :meth:`to_dict` rounds for output.

    Attributes
    ----------
    filters : FilterSet
    illuminant : Illuminant
    surfaces : SurfaceSet
    observers : list of Observer
    adaptation : float
        Degree of von Kries adaptation to the filtered light, 0-1.
    metrics : tuple of str
        The metric groups computed.
    signal_lights : list of SignalLight
    results : dict of numpy.ndarray
        Per-filter arrays (first axis: filters).
    per_observer : list of dict of numpy.ndarray
        Per observer, arrays over filters.
    settings : dict
        Model constants and thresholds used (Weber fraction, cone ratios, JND
        thresholds, signal-quotient limits).
    inputs : dict
        The arguments that produced the scorecard.
    sensitivity : dict or None
        With ``score(..., sensitivity=True)``: the verdicts under each
        variation of :data:`SENSITIVITY_RANGES` (the JSON ``sensitivity`` section).
    members : bool
        Population entries carry every member's values (``members``).

    For a population (an entry of ``observers`` that is a :class:`~cvdfilter.observers.population.Population`)
    ``per_observer`` holds arrays shaped (filters, members) (and (members,) for values that do not depend
    on the filter); its JSON entry is :meth:`_population_dict`.
    """

    filters: object
    illuminant: object
    surfaces: object
    observers: list
    adaptation: float
    metrics: tuple
    signal_lights: list
    results: dict
    per_observer: list
    settings: dict = field(default_factory=dict)
    inputs: dict = field(default_factory=dict)
    sensitivity: dict | None = None
    members: bool = False

    def __len__(self) -> int:
        return len(self.filters)

    # -- the JSON document -----------------------------------------------------

    @functools.cached_property
    def _lists(self):
        """The result arrays as Python lists (indexing lists is much faster than numpy scalars)."""
        def conv(d):
            return {k: (v.tolist() if isinstance(v, np.ndarray) else v) for k, v in d.items()}

        return conv(self.results), [conv(o) for o in self.per_observer]

    def _filter_dict(self, i: int) -> dict:
        from .metrics.road_use import SIGNAL_COLOURS, road_use_reasons

        r = self._lists[0]
        fs = self.filters
        info = fs.info[i] if i < len(fs.info) else {}
        d = {"name": fs.names[i], "source": fs.sources[i] if i < len(fs.sources) else "array"}
        where = info.get("path") or info.get("spec")
        if where:
            d["input"] = where
        if info.get("column_number") is not None:  # files: the path and column each filter came from
            d["source"] = {"kind": d["source"], "path": info["path"], "column": info.get("column"),
                           "column_number": info["column_number"], "units": info.get("units"),
                           "units_reason": info.get("units_reason")}
        extrapolated = list(info.get("extrapolated", []))
        for part in info.get("parts") or []:
            extrapolated += part.get("extrapolated", [])
        d["extrapolated"] = extrapolated
        if info.get("sha256"):
            d["sha256"] = info["sha256"]
        warnings = list(info.get("warnings", []))
        for part in info.get("parts") or []:
            warnings += part.get("warnings", [])
        d["warnings"] = warnings
        if "photometry" in self.metrics:
            d["luminous_transmittance"] = _num(r["luminous_transmittance"][i])
            d["luminous_transmittance_illuminant"] = _num(r["luminous_transmittance_illuminant"][i])
            d["chromaticity"] = {"x": _num(r["chromaticity"][i][0]), "y": _num(r["chromaticity"][i][1])}
            d["white_shift"] = _num(r["white_shift"][i])
        if "road_use" in self.metrics:
            cat = int(r["iso12312_category"][i])
            quot = {c: _num(r[f"signal_quotient_{c}"][i], 4) for c in SIGNAL_COLOURS}
            worst = {c: r[f"signal_light_{c}"][i] for c in SIGNAL_COLOURS}
            reasons = road_use_reasons(float(r["luminous_transmittance"][i]), cat, float(r["min_ratio"][i]),
                                       float(r["min_ratio_at_nm"][i]),
                                       {c: float(r[f"signal_quotient_{c}"][i]) for c in SIGNAL_COLOURS}, worst,
                                       limits=self.settings.get("signal_limits"))
            d["iso12312_category"] = cat if cat >= 0 else None
            d["road_use"] = {
                "suitable": bool(r["suitable"][i]),
                "night_suitable": bool(r["night_suitable"][i]),
                "min_ratio_475_650": _num(r["min_ratio"][i], 4),
                "min_ratio_at_nm": _num(r["min_ratio_at_nm"][i], 2),
                "reasons": reasons,
            }
            d["signal_quotients"] = quot
        if "rendition" in self.metrics:
            d["rendition"] = {
                "rf": _num(r["rf"][i], 2), "rg": _num(r["rg"][i], 2), "ra": _num(r["ra"][i], 2),
                "chroma_shifts": [_num(v, 2) for v in r["chroma_shifts"][i]],
                "cct_k": _num(r["cct_k"][i], 1), "duv": _num(r["duv"][i], 5),
            }
        d["observers"] = [self._observer_dict(i, k) for k in range(len(self.observers))]
        return d

    def _observer_dict(self, i: int, k: int) -> dict:
        if _is_population(self.observers[k]):
            return self._population_dict(i, k)
        o = self._lists[1][k]
        d = {"observer": self.observers[k].spec}
        if "contrast" in self.metrics:
            d["red_green_gain"] = _num(o["red_green_gain"][i])
            d["blue_yellow_gain"] = _num(o["blue_yellow_gain"][i])
            d["luminance_contrast_gain"] = _num(o["luminance_contrast_gain"][i])
        undefined = bool(o["undefined"][i]) if "undefined" in o else False
        st = self.settings
        if "discrimination" in self.metrics:
            if undefined:
                d["discriminable_pairs"] = None
                d["delta_s_distribution"] = None
            else:
                d["discriminable_pairs"] = {"threshold_jnd": st["discrimination_threshold"],
                                            **{key: int(o[f"discriminable_{key}"][i]) for key in _PAIR_KEYS}}
                dist = {_at_key(t): {key: int(o[f"discriminable_at_{t:g}_{key}"][i]) for key in _PAIR_KEYS}
                        for t in st["distribution_thresholds"]}
                dist["median_without"] = _num(o["discriminable_median_without"], 4)
                dist["median_with"] = _num(o["discriminable_median_with"][i], 4)
                dist["median_ratio"] = _num(o["discriminable_median_ratio"][i])
                d["delta_s_distribution"] = dist
        if "confusion" in self.metrics:
            if o.get("confusion_with") is None or undefined:
                d["confusion_pairs"] = None
            else:
                d["confusion_pairs"] = {
                    "normal_threshold_jnd": st["normal_threshold"],
                    "deficient_threshold_jnd": st["deficient_threshold"],
                    "normally_discriminable": int(o["confusion_normally_discriminable"]),
                    **{key: int(o[f"confusion_{key}"][i]) for key in _CONFUSION_KEYS},
                    "median_delta_s_without": _num(o["confusion_median_without"], 4),
                    "median_delta_s_with": _num(o["confusion_median_with"][i], 4),
                    "median_delta_s_ratio": _num(o["confusion_median_ratio"][i]),
                }
        return d

    @functools.cached_property
    def _population_summaries(self) -> dict:
        """Per population index: metric -> statistics arrays over filters (computed once, vectorised)."""
        from .metrics.population_stats import RATIO_TOLERANCE, share_helped, spread

        out = {}
        for k, pop in enumerate(self.observers):
            if not _is_population(pop):
                continue
            o = self.per_observer[k]
            undefined = o.get("undefined", np.zeros((len(self), pop.n), dtype=bool))
            stats, helped = {}, {}
            for key, v in o.items():
                if key == "undefined":
                    continue
                v = np.asarray(v, dtype=float)
                if v.ndim == 2 and key not in _CONTRAST_KEYS:
                    v = np.where(undefined, np.nan, v)
                stats[key] = spread(v)
            defined = ~undefined
            if "red_green_gain" in o:
                for key in ("red_green_gain", "blue_yellow_gain"):
                    g = np.asarray(o[key], dtype=float)
                    helped[key] = share_helped(np.nan_to_num(g, nan=0.0) > 1.0 + RATIO_TOLERANCE, np.isfinite(g))
            if "discriminable_gained" in o:
                net = np.asarray(o["discriminable_gained"]) - np.asarray(o["discriminable_lost"])
                helped["discriminable_pairs_net"] = share_helped(net > 0, defined)
            if "confusion_resolved" in o:
                net = np.asarray(o["confusion_resolved"]) - np.asarray(o["confusion_created"])
                helped["confusion_pairs_net"] = share_helped(net > 0, defined)
            ratio = o.get("confusion_median_ratio", o.get("discriminable_median_ratio"))
            if ratio is not None:
                r = np.where(undefined, np.nan, np.asarray(ratio, dtype=float))
                helped["median_delta_s_ratio"] = share_helped(np.nan_to_num(r, nan=0.0) > 1.0 + RATIO_TOLERANCE,
                                                              np.isfinite(r))
            out[k] = (stats, helped)
        return out

    def _population_dict(self, i: int, k: int) -> dict:
        """A population's entry: every per-observer metric as ``{mean, sd, p2_5, p50, p97_5}`` over members
        (counts per count), ``helped`` shares with Wilson 95 % intervals, ``members`` when asked."""
        pop = self.observers[k]
        stats, helped = self._population_summaries[k]
        st = self.settings

        def s(key, digits: int = 6):
            v = stats[key]
            if v["n"].ndim:
                v = {name: a[i] for name, a in v.items()}
            if int(v["n"]) == 0:
                return None
            return {name: _num(v[name], digits) for name in _STATS}

        d = {"observer": pop.spec, "population": {"n": pop.n, "variation": pop.variation, "seed": pop.seed}}
        if "contrast" in self.metrics:
            for key in _CONTRAST_KEYS:
                d[key] = s(key)
        if "discrimination" in self.metrics:
            pairs = {key: s(f"discriminable_{key}") for key in _PAIR_KEYS}
            d["discriminable_pairs"] = None if pairs["with"] is None else {
                "threshold_jnd": st["discrimination_threshold"], **pairs}
            dist = {_at_key(t): {key: s(f"discriminable_at_{t:g}_{key}") for key in _PAIR_KEYS}
                    for t in st["distribution_thresholds"]}
            dist["median_without"] = s("discriminable_median_without", 4)
            dist["median_with"] = s("discriminable_median_with", 4)
            dist["median_ratio"] = s("discriminable_median_ratio")
            d["delta_s_distribution"] = None if pairs["with"] is None else dist
        if "confusion" in self.metrics:
            if "confusion_with" not in stats or s("confusion_with") is None:
                d["confusion_pairs"] = None
            else:
                d["confusion_pairs"] = {
                    "normal_threshold_jnd": st["normal_threshold"],
                    "deficient_threshold_jnd": st["deficient_threshold"],
                    "normally_discriminable": s("confusion_normally_discriminable"),
                    **{key: s(f"confusion_{key}") for key in _CONFUSION_KEYS},
                    "median_delta_s_without": s("confusion_median_without", 4),
                    "median_delta_s_with": s("confusion_median_with", 4),
                    "median_delta_s_ratio": s("confusion_median_ratio"),
                }
        d["helped"] = {key: {"share": _num(h["share"][i]), "ci_low": _num(h["ci_low"][i]),
                             "ci_high": _num(h["ci_high"][i]), "helped": int(h["helped"][i]), "n": int(h["n"][i])}
                       for key, h in helped.items()}
        if self.members:
            o = self.per_observer[k]
            undefined = o.get("undefined")
            mem = {}
            for key, v in o.items():
                if key == "undefined":
                    continue
                v = np.asarray(v)
                row = v[i] if v.ndim == 2 else v
                if undefined is not None and v.ndim == 2 and key not in _CONTRAST_KEYS:
                    row = np.where(undefined[i], np.nan, row.astype(float))
                mem[key] = [_num(x) if isinstance(x, float) else x for x in row.tolist()]
            d["members"] = mem
        return d

    def header(self) -> dict:
        """The top-level keys of :meth:`to_dict` other than ``filters``."""
        from .metrics.discrimination import receptor_noise
        from .metrics.pairs import pair_count
        from .metrics.population_stats import CONFIDENCE, RATIO_TOLERANCE
        from .metrics.road_use import (CATEGORY_BANDS, DEFAULT_SIGNAL_READING, NIGHT_MIN, RATIO_BAND_NM, RATIO_LIMIT,
                                       SIGNAL_COLOURS, SIGNAL_LIMIT_READINGS, SIGNAL_LIMIT_SOURCES, SIGNAL_LIMITS)

        ill, surf = self.illuminant, self.surfaces
        head = {
            "tool": "cvdfilter",
            "version": __version__,
            "caveat": CAVEAT,
            "cautions": [ROAD_CAUTION, EYE_CARE_CAUTION],
            "illuminant": {"name": ill.name, "source": ill.source},
            "surfaces": {"name": surf.name, "source": surf.source, "count": len(surf),
                         "pairs": pair_count(len(surf))},
            "adaptation": {"spec": _adaptation_text(self.adaptation), "degree": self.adaptation,
                           "model": "von Kries, to the illuminant seen through the filter"},
            "observers": [{"observer": o.spec, "kind": o.kind, "deficiency": o.deficiency,
                           **({"population": {"n": o.n, "variation": o.variation, "seed": o.seed}}
                              if _is_population(o) else {})} for o in self.observers],
            "metrics": list(self.metrics),
            "grid": {"start_nm": self.filters.grid.start, "end_nm": self.filters.grid.end,
                     "step_nm": self.filters.grid.step},
            "models": {
                "photometry": "CIE 1931 2 deg V(lambda) with CIE D65 (ISO 12312-1); white shift and "
                              "luminous_transmittance_illuminant under the chosen illuminant",
                "discrimination": {
                    "model": "receptor-noise-limited, Vorobyev & Osorio 1998",
                    "threshold_jnd": self.settings.get("discrimination_threshold"),
                    "distribution_thresholds_jnd": list(self.settings.get("distribution_thresholds", ())),
                    "median": "median Delta S over the pairs the normal observer (the observer's base, or itself) "
                              "discriminates without the filter, with the filter / without it",
                    "weber_fraction_l": self.settings.get("weber_fraction"),
                    "cone_ratios_lms": list(self.settings.get("cone_ratios", ())),
                    "noise_by_observer": {o.spec: [_num(v, 5) for v in receptor_noise(
                        o.missing_cone, weber=self.settings["weber_fraction"],
                        cone_ratios=self.settings["cone_ratios"])] for o in self.observers},
                },
                "confusion": {
                    "model": "pairs the normal observer (the observer's own base, same age and field) "
                             "discriminates without the filter (Delta S >= normal threshold) and the deficient "
                             "observer does not (Delta S < deficient threshold); receptor-noise-limited model",
                    "normal_threshold_jnd": self.settings.get("normal_threshold"),
                    "deficient_threshold_jnd": self.settings.get("deficient_threshold"),
                    "median": "median over the normally discriminable pairs of the deficient observer's "
                              "Delta S, with the filter / without it",
                },
                **({"populations": {
                    "model": "individual observers: Asano, Fairchild & Blonde (2016) variation of lens, macula, "
                             "photopigment densities and peaks on the CIE 170-1 observer (docs/models.md section 8)",
                    "statistics": "over members: mean, sd (ddof 1), p2_5, p50, p97_5 (linear interpolation); "
                                  "members for whom a metric is undefined are left out",
                    "helped": "share of members with red_green_gain or blue_yellow_gain above 1, net "
                              "discriminable or confused pairs (gained - lost, resolved - created) above 0, or "
                              "median_delta_s_ratio above 1 (ratios: above 1 + ratio_tolerance, a numerical "
                              "tolerance for rounding); Wilson (1927) score interval",
                    "confidence": CONFIDENCE, "ratio_tolerance": RATIO_TOLERANCE,
                }} if any(_is_population(o) for o in self.observers) else {}),
                "road_use": {
                    "signal_limits": dict(self.settings.get("signal_limits", SIGNAL_LIMITS)),
                    "signal_limits_reading": self.settings.get("signal_limits_reading", DEFAULT_SIGNAL_READING),
                    "signal_limits_source": SIGNAL_LIMIT_SOURCES.get(
                        self.settings.get("signal_limits_reading", DEFAULT_SIGNAL_READING), "given by the user"),
                    "other_readings": {k: v for k, v in SIGNAL_LIMIT_READINGS.items()},
                    "ratio_band_nm": list(RATIO_BAND_NM), "ratio_limit": RATIO_LIMIT, "night_min": NIGHT_MIN,
                    "category_bands": [{"category": c, "above": lo, "up_to": hi} for c, lo, hi in CATEGORY_BANDS],
                },
            },
            "inputs": self.inputs,
        }
        if "road_use" in self.metrics:
            head["signal_lights"] = {
                c: {"limit": self.settings.get("signal_limits", SIGNAL_LIMITS)[c],
                    "lights": [l.describe() for l in self.signal_lights if l.colour == c]}
                for c in SIGNAL_COLOURS}
        return head

    def to_dict(self) -> dict:
        """The scorecard as the JSON document ``cvdfilter score --format json`` prints."""
        d = self.header()
        d["filters"] = [self._filter_dict(i) for i in range(len(self))]
        if self.sensitivity is not None:
            d["sensitivity"] = self.sensitivity
        return d

    def to_json(self) -> str:
        return json.dumps(self.to_dict(), indent=2, ensure_ascii=False, allow_nan=False) + "\n"

    # -- CSV -------------------------------------------------------------------

    def csv_rows(self) -> tuple[list, list]:
        """Header and rows: one row per filter x observer, nested keys joined with dots; a population gives
        one row per statistic (column ``statistic``: mean, sd, p2_5, p50, p97_5), its ``helped`` shares on
        every row, and no per-member values."""
        head = self.header()
        run = {"tool": head["tool"], "version": head["version"], "illuminant": head["illuminant"]["name"],
               "surfaces": head["surfaces"]["name"], "adaptation": head["adaptation"]["spec"],
               "caveat": head["caveat"], "cautions": " ".join(head["cautions"])}
        if "road_use" in self.metrics:
            ru = head["models"]["road_use"]
            run["signal_limits"] = ",".join(f"{c}={v:g}" for c, v in ru["signal_limits"].items())
            run["signal_limits_reading"] = ru["signal_limits_reading"]
        rows, columns = [], []
        seen, layouts = set(), set()
        for i in range(len(self)):
            f = self._filter_dict(i)
            obs = f.pop("observers")
            flat_f = _flatten(f)
            for o in [r for o0 in obs for r in _population_csv_entries(o0)]:
                row = {**flat_f, **_flatten(o), **run}
                layout = tuple(row)
                if layout not in layouts:  # rows share a few key layouts: merge each new one once
                    layouts.add(layout)
                    for key in layout:
                        if key not in seen:
                            seen.add(key)
                            columns.append(key)
                rows.append(row)
        # Run-level columns last, whatever order the rows met them in.
        columns = [c for c in columns if c not in run] + list(run)
        return columns, [[row.get(c) for c in columns] for row in rows]

    def to_csv(self) -> str:
        columns, rows = self.csv_rows()
        buf = io.StringIO()
        w = csv.writer(buf, lineterminator="\n")
        w.writerow(columns)
        for r in rows:
            w.writerow(["" if v is None else ("true" if v is True else "false" if v is False else v) for v in r])
        return buf.getvalue()

    # -- Markdown and text -------------------------------------------------------

    def _summary_rows(self, doc: dict):
        filt_rows, obs_rows, rend_rows = [], [], []
        for f in doc["filters"]:
            if "road_use" in self.metrics or "photometry" in self.metrics:
                filt_rows.append(_filter_row(f))
            if "rendition" in self.metrics:
                rd = f["rendition"]
                rend_rows.append([f["name"], _fmt(rd["rf"], 1), _fmt(rd["rg"], 1), _fmt(rd["ra"], 1),
                                  _fmt(rd["cct_k"], 0), _fmt(rd["duv"], 4),
                                  " ".join(_fmt(v, 0) for v in rd["chroma_shifts"])])
            for o in f["observers"]:
                obs_rows.append(_observer_row(f["name"], o, self.metrics, f=f))
        return filt_rows, obs_rows, rend_rows

    def to_markdown(self) -> str:
        """A Markdown report: inputs, tables, road-use reasons, cautions."""
        doc = self.to_dict()
        filt_rows, obs_rows, rend_rows = self._summary_rows(doc)
        lines = ["# cvdfilter scorecard", "", f"_{doc['caveat']}_", ""]
        lines += _inputs_lines(doc, markdown=True) + [""]
        if filt_rows:
            lines += ["## Photometry and road use (normal observer, CIE D65, CIE 1931 2 deg)", ""]
            lines += _md_table(_FILTER_HEADER, filt_rows) + [""]
        if "road_use" in self.metrics:
            lines += ["### Road-use reasons", ""]
            for f in doc["filters"]:
                lines.append(f"- **{f['name']}**: " + " ".join(f["road_use"]["reasons"]))
            lines.append("")
        if rend_rows:
            lines += ["## Colour rendition of the illuminant through the filter (CIE 2017 / TM-30, CIE 13.3)", ""]
            lines += _md_table(_RENDITION_HEADER, rend_rows) + [""]
        if obs_rows and len(obs_rows[0]) > 2:
            lines += ["## Per observer", "", _observer_note(doc), ""]
            if any("population" in o for o in doc["observers"]):
                lines += [_POPULATION_NOTE, ""]
            lines += _md_table(_observer_header(self.metrics), obs_rows) + [""]
            helped = _helped_rows(doc)
            if helped:
                lines += ["### Share of population members helped (Wilson 95 % interval)", ""]
                lines += _md_table(helped[0], helped[1]) + [""]
        if self.sensitivity is not None:
            lines += ["## Sensitivity", "", _SENSITIVITY_NOTE, ""]
            for f, rows in _sensitivity_rows(self.sensitivity):
                lines += [f"### {f}", ""] + _md_table(_SENSITIVITY_HEADER, rows) + [""]
        lines += ["## Cautions", ""] + [f"- {c}" for c in [doc["caveat"], *doc["cautions"]]] + [""]
        return "\n".join(lines)

    def to_table(self, width: int = 100) -> str:
        """A plain-text summary at most ``width`` columns wide, cautions underneath."""
        doc = self.to_dict()
        filt_rows, obs_rows, rend_rows = self._summary_rows(doc)
        parts = []
        if filt_rows:
            parts.append(_tables.text_table(_FILTER_HEADER, filt_rows, "Photometry and road use (CIE D65, CIE 1931 2 deg)",
                                     width))
        if rend_rows:
            parts.append(_tables.text_table(_RENDITION_HEADER[:-1], [r[:-1] for r in rend_rows],
                                     "Colour rendition, illuminant x filter", width))
        if obs_rows and len(obs_rows[0]) > 2:
            parts.append(textwrap.fill(_observer_note(doc), width=width) + "\n")
            if any("population" in o for o in doc["observers"]):
                parts.append(textwrap.fill(_POPULATION_NOTE, width=width) + "\n")
            specs = [o["observer"] for o in doc["observers"]]
            labels = dict(zip(specs, table_labels(specs)))   # short labels; the legend line maps them to specs
            for f in doc["filters"]:
                rows = [_observer_row(f["name"], o, self.metrics, compact=True, labels=labels) for o in f["observers"]]
                parts.append(_tables.text_table(_observer_header(self.metrics, compact=True), rows,
                                         f"Per observer: {f['name']} - costs: {_costs_text(f)}", width))
            helped = _helped_rows(doc, labels)
            if helped:
                parts.append(_tables.text_table(helped[0], helped[1],
                                                "Share of population members helped (Wilson 95 % interval)", width))
            if label_legend(specs):
                parts.append(textwrap.fill(label_legend(specs), width=width, break_long_words=False,
                                           break_on_hyphens=False) + "\n")
        if self.sensitivity is not None:
            parts.append(textwrap.fill(_SENSITIVITY_NOTE, width=width) + "\n")
            for name, rows in _sensitivity_rows(self.sensitivity):
                parts.append(_tables.text_table(_SENSITIVITY_HEADER, rows, f"Sensitivity: {name}", width))
        notes = []
        if "road_use" in self.metrics:
            unsuitable = [f for f in doc["filters"] if not f["road_use"]["suitable"]]
            if len(doc["filters"]) <= 20:
                for f in unsuitable:
                    failing = [s for s in f["road_use"]["reasons"]
                               if any(w in s for w in ("not suitable", "falls to", "below the limit", "outside"))]
                    notes.append(f"{f['name']}: not for road use. " + " ".join(failing))
            elif unsuitable:
                notes.append(f"{len(unsuitable)} of {len(doc['filters'])} filters fail a road-use check "
                             "(see --format json for the reasons).")
            lights = "; ".join(f"{c}: " + ", ".join(l["name"] + (" (measured)" if l["kind"] == "measured" else "")
                                                    for l in v["lights"])
                               for c, v in doc["signal_lights"].items())
            modelled = any(l["kind"] == "modelled" for v in doc["signal_lights"].values() for l in v["lights"])
            notes.append("Signal lights: " + lights + (" - modelled spectra are an approximation, from memory."
                                                        if modelled else "."))
            notes.append(_limits_text(doc))
        notes += _inputs_lines(doc, markdown=False)
        notes += [doc["caveat"], *doc["cautions"]]
        wrapped = "\n".join(textwrap.fill(n, width=width) for n in notes)
        return "\n".join(parts) + "\n" + wrapped + "\n"


# --- presentation helpers -----------------------------------------------------

_FILTER_HEADER = ["filter", "tau_v %", "cat", "day", "night", "min T/tau_v", "lowest Q", "x", "y", "du'v'"]
_RENDITION_HEADER = ["filter", "Rf", "Rg", "Ra", "CCT K", "Duv", "chroma shifts h1-h16 %"]
#: Why a gain is not a recommendation (printed with every table of gains).
GAIN_CAUTION = ("A gain is not a recommendation: a smooth tint can raise the red-green gain as much as a notch; "
                "read every gain beside its costs (luminous transmittance, white shift, Rf for the normal "
                "observer, pairs lost).")


def _observer_note(doc: dict) -> str:
    """The note above the per-observer tables: what each column is, with every threshold named."""
    m = doc["models"]
    t = m["discrimination"]["threshold_jnd"]
    dist = "/".join(f"{x:g}" for x in m["discrimination"]["distribution_thresholds_jnd"])
    tn, td = m["confusion"]["normal_threshold_jnd"], m["confusion"]["deficient_threshold_jnd"]
    return ("Gains: RMS contrast with the filter / without it (1 = no change; RG red-green, BY blue-yellow, lum "
            "luminance). Surface pairs, receptor-noise model (Vorobyev & Osorio 1998), without -> with the "
            f"filter: discriminable at Delta S >= {t:g} JND (+gained/-lost; counts at {dist} JND in the JSON); "
            f"confused = Delta S >= {tn:g} JND for the normal observer and < {td:g} JND for this observer "
            "(-resolved/+created). dS ratio: median Delta S, over the pairs the normal observer discriminates, "
            "with / without the filter (no threshold of its own; above 1 the surfaces move apart). "
            + GAIN_CAUTION)


def _costs_text(f: dict) -> str:
    """The costs of one filter, for the line beside its gains."""
    rf = (f.get("rendition") or {}).get("rf")
    rf_text = f"Rf {_fmt(rf, 1)}" if "rendition" in f else "Rf not computed (--metrics all)"
    if "luminous_transmittance" not in f:
        return f"tau_v and white shift not computed (add photometry to --metrics), {rf_text}"
    tv = f.get("luminous_transmittance")
    return (f"tau_v {_fmt(None if tv is None else 100 * tv, 1)} %, white shift du'v' {_fmt(f.get('white_shift'), 4)}, "
            + rf_text)


def _limits_text(doc: dict) -> str:
    from .metrics.road_use import describe_signal_limits

    ru = doc["models"]["road_use"]
    return describe_signal_limits(ru["signal_limits"], ru["signal_limits_reading"])


_SENSITIVITY_NOTE = ("Sensitivity: each verdict recomputed with one model constant or threshold moved at a time "
                     "(Weber fraction x0.5 and x1.5, L:M cone ratio 1:1 and 4:1, every JND threshold x0.8 and "
                     "x1.25, the other reading of the signal-quotient limits). 'robust' = the sign of the change "
                     "(net pairs, ratio - 1, road-use verdict) is the same in every variation.")
_SENSITIVITY_HEADER = ["observer", "measure", "default", "range", "robust"]
_SENSITIVITY_LABELS = {"discriminable_net": "discriminable gained - lost",
                       "confused_net_resolved": "confused resolved - created",
                       "median_delta_s_ratio": "dS ratio"}


def _sensitivity_rows(sens: dict):
    """(filter name, rows) for the sensitivity tables."""
    def show(v):
        return "-" if v is None else (f"{v:.3f}" if isinstance(v, float) else f"{v:+d}" if isinstance(v, int)
                                      and not isinstance(v, bool) else str(v))

    for f in sens["filters"]:
        rows = []
        if "road_use_suitable" in f:
            r = f["road_use_suitable"]
            vals = r["values"]
            rows.append(["-", "road use (day)", _yes(vals["default"]),
                         ", ".join(f"{k}: {_yes(v)}" for k, v in vals.items() if k != "default"), _yes(r["robust"])])
        for o in f["observers"]:
            for key, label in _SENSITIVITY_LABELS.items():
                if key in o:
                    r = o[key]
                    rows.append([o["observer"], label, show(r["values"]["default"]),
                                 f"{show(r['min'])} .. {show(r['max'])}", _yes(r["robust"])])
        yield f["name"], rows


def _fmt(x, digits: int) -> str:
    return "-" if x is None else f"{round(x, digits) + 0.0:.{digits}f}"


def _yes(b) -> str:
    return "yes" if b else "no"


def _filter_row(f: dict) -> list:
    ru = f.get("road_use")
    q = f.get("signal_quotients") or {}
    lowest = min(((v, c) for c, v in q.items() if v is not None), default=None)
    cat = f.get("iso12312_category", None)
    tv = f.get("luminous_transmittance")
    chrom = f.get("chromaticity") or {}
    return [f["name"], _fmt(None if tv is None else 100 * tv, 1),
            ("-" if ru is None else ("out" if cat is None else str(cat))),
            "-" if ru is None else _yes(ru["suitable"]), "-" if ru is None else _yes(ru["night_suitable"]),
            "-" if ru is None or ru["min_ratio_475_650"] is None else (
                f"{ru['min_ratio_475_650']:.2g}" if ru["min_ratio_475_650"] < 0.095 else
                _fmt(ru["min_ratio_475_650"], 2)),
            "-" if lowest is None else f"{lowest[0]:.2f} {lowest[1]}",
            _fmt(chrom.get("x"), 4), _fmt(chrom.get("y"), 4), _fmt(f.get("white_shift"), 4)]


def _observer_header(metrics, *, compact: bool = False) -> list:
    h = [] if compact else ["filter"]
    h.append("observer")
    if "contrast" in metrics:
        h += ["RG gain", "BY gain", "lum gain"]
    if "discrimination" in metrics:
        h += ["discriminable", "+/-"] if compact else [
            "discriminable without", "with", "gained", "lost"]
    if "confusion" in metrics:
        h += ["confused", "res./new"] if compact else ["confused without", "with", "resolved", "created"]
    if "discrimination" in metrics or "confusion" in metrics:
        h += ["dS ratio"]
    if not compact:
        h += ["tau_v %", "du'v'", "Rf"]
    return h


def _observer_row(name: str, o: dict, metrics, *, compact: bool = False, f: dict | None = None,
                  labels: dict | None = None) -> list:
    if "population" in o:  # tables show the median member (JSON: the spread and the shares helped)
        o = _population_csv_entries(o, statistics=("p50",))[0]
    row = [] if compact else [name]
    row.append((labels or {}).get(o["observer"], o["observer"]))
    if "contrast" in metrics:
        row += [_fmt(o["red_green_gain"], 3), _fmt(o["blue_yellow_gain"], 3), _fmt(o["luminance_contrast_gain"], 3)]
    if "discrimination" in metrics:
        p = o["discriminable_pairs"]
        if compact:
            row += ["-", "-"] if p is None else [f"{p['without']}->{p['with']}", f"+{p['gained']}/-{p['lost']}"]
        else:
            row += ["-"] * 4 if p is None else [p["without"], p["with"], p["gained"], p["lost"]]
    if "confusion" in metrics:
        c = o["confusion_pairs"]
        if compact:
            row += ["-", "-"] if c is None else [f"{c['without']}->{c['with']}", f"-{c['resolved']}/+{c['created']}"]
        else:
            row += ["-"] * 4 if c is None else [c["without"], c["with"], c["resolved"], c["created"]]
    if "discrimination" in metrics or "confusion" in metrics:
        row.append(_fmt(_median_ratio(o), 3))
    if f is not None:
        tv = f.get("luminous_transmittance")
        row += [_fmt(None if tv is None else 100 * tv, 1), _fmt(f.get("white_shift"), 4),
                _fmt((f.get("rendition") or {}).get("rf"), 1)]
    return row


def _median_ratio(o: dict):
    """The median Delta S ratio of an observer entry (the same number in both pair blocks)."""
    c = o.get("confusion_pairs")
    if c is not None:
        return c["median_delta_s_ratio"]
    d = o.get("delta_s_distribution")
    return None if d is None else d["median_ratio"]


def _inputs_lines(doc: dict, *, markdown: bool) -> list:
    b = "- " if markdown else ""
    ill, surf = doc["illuminant"], doc["surfaces"]
    lines = [f"{b}Illuminant: {ill['name']} ({ill['source']}).",
             f"{b}Surfaces: {surf['name']}, {surf['count']} samples, {surf['pairs']} pairs ({surf['source']}).",
             f"{b}Adaptation: {doc['adaptation']['spec']} ({doc['adaptation']['model']}).",
             f"{b}Observers: " + ", ".join(o["observer"] for o in doc["observers"]) + "."]
    if markdown and "signal_lights" in doc:
        for c, v in doc["signal_lights"].items():
            names = ", ".join(f"{l['name']} ({l['kind']}: {l['source']})" for l in v["lights"])
            lines.append(f"- Signal lights, {c} (limit {v['limit']:g}): {names}.")
        lines.append(f"- {_limits_text(doc)}")
    return lines


def _md_cell(v) -> str:
    return ("" if v is None else str(v)).replace("|", "\\|")


def _md_table(header, rows) -> list:
    out = ["| " + " | ".join(header) + " |", "|" + "|".join("---" for _ in header) + "|"]
    out += ["| " + " | ".join(_md_cell(v) for v in r) + " |" for r in rows]
    return out


#: Printed with the tables when an observer is a population.
_POPULATION_NOTE = ("Population rows (a spec with n=N) show the median member; --format json gives each metric's "
                    "mean, SD and 2.5/50/97.5 percentiles over the members and the share of members helped, with a "
                    "Wilson 95 % interval (--format csv: one row per statistic).")
#: Statistics of a population metric (JSON keys), from metrics.population_stats.STATISTICS.
_STATS = ("mean", "sd", "p2_5", "p50", "p97_5")
_CONTRAST_KEYS = ("luminance_contrast_gain", "red_green_gain", "blue_yellow_gain")


def _is_population(o) -> bool:
    return type(o).__name__ == "Population"


def _pick(v, stat: str):
    if isinstance(v, dict):
        if set(v) == set(_STATS):
            return v[stat]
        return {k: _pick(x, stat) for k, x in v.items()}
    return v


_HELPED_LABELS = {"red_green_gain": "RG gain > 1", "blue_yellow_gain": "BY gain > 1",
                  "discriminable_pairs_net": "discr. net > 0", "confusion_pairs_net": "confused net > 0",
                  "median_delta_s_ratio": "dS ratio > 1"}


def _helped_rows(doc: dict, labels: dict | None = None):
    """(header, rows) of the shares helped, one row per filter x population; None without populations."""
    rows, keys = [], []
    for f in doc["filters"]:
        for o in f["observers"]:
            if "population" not in o:
                continue
            for k in o["helped"]:
                if k not in keys:
                    keys.append(k)
            rows.append((f["name"], o))
    if not rows:
        return None

    def cell(h):
        if h is None or h["share"] is None:
            return "-"
        return f"{100 * h['share']:.0f} % ({100 * h['ci_low']:.0f}-{100 * h['ci_high']:.0f})"

    header = ["filter", "population", *(_HELPED_LABELS.get(k, k) for k in keys)]
    return header, [[name, (labels or {}).get(o["observer"], o["observer"]), *(cell(o["helped"].get(k)) for k in keys)] for name, o in rows]


def _population_csv_entries(o: dict, statistics=_STATS) -> list:
    """A fixed observer's entry as is; a population's as one entry per statistic (``statistic`` key)."""
    if "population" not in o:
        return [o]
    body = {k: v for k, v in o.items() if k not in ("members", "helped", "population", "observer")}
    return [{"observer": o["observer"], "statistic": stat, "population": o["population"], **_pick(body, stat),
             "helped": o["helped"]} for stat in statistics]


def _population_scores(fs, pop, groups, kwargs: dict, progress=None, batch: int = 64) -> dict:
    """Per-observer arrays of every member of ``pop``: (filters, members), or (members,) for values that do
    not depend on the filter. Members are scored in batches through :func:`score`'s per-observer path."""
    parts = []
    for lo in range(0, pop.n, batch):
        sub = score(fs, observers=pop.members(lo, lo + batch), metrics=list(groups), **kwargs)
        parts.append(sub.per_observer)
        if progress is not None:
            progress("members", min(pop.n, lo + batch), pop.n)
    out = {}
    for key in parts[0][0]:
        vals = [np.asarray(p[key]) for part in parts for p in part]
        out[key] = np.stack(vals, axis=-1)
    return out


def _flatten(d: dict, prefix: str = "") -> dict:
    """Nested dicts -> dotted keys; lists of numbers -> key.1, key.2, ...; lists of text -> one joined cell."""
    out = {}
    for k, v in d.items():
        key = f"{prefix}{k}"
        if isinstance(v, dict):
            out.update(_flatten(v, key + "."))
        elif v is None and k in _DICT_KEYS:
            out.update({f"{key}.{s}": None for s in _DICT_KEYS[k]})
        elif isinstance(v, list) and (k in _TEXT_LISTS or (v and all(isinstance(x, str) for x in v))):
            out[key] = " ".join(v)
        elif isinstance(v, list):
            out.update({f"{key}.{j + 1}": x for j, x in enumerate(v)})
        else:
            out[key] = v
    return out


#: Keys whose value is a list of sentences: one CSV cell, even when empty.
_TEXT_LISTS = ("reasons", "warnings")
#: Counts of the discriminable-pair blocks.
_PAIR_KEYS = ("without", "with", "gained", "lost")
#: Counts of the confused-pair block.
_CONFUSION_KEYS = ("without", "with", "resolved", "created")
#: Keys whose value is a dict or null, with the sub-keys a null flattens to (CSV columns stay aligned).
_DICT_KEYS = {"confusion_pairs": ("normal_threshold_jnd", "deficient_threshold_jnd", "normally_discriminable",
                                  *_CONFUSION_KEYS, "median_delta_s_without", "median_delta_s_with",
                                  "median_delta_s_ratio"),
              "discriminable_pairs": ("threshold_jnd", *_PAIR_KEYS),
              "delta_s_distribution": (*(f"{_at}.{k}" for _at in ("at_1_jnd", "at_2_jnd", "at_4_jnd")
                                         for k in _PAIR_KEYS), "median_without", "median_with", "median_ratio")}


def _at_key(t: float) -> str:
    """JSON key of a distribution threshold: 1 -> ``at_1_jnd``, 0.8 -> ``at_0_8_jnd``."""
    return f"at_{t:g}_jnd".replace(".", "_")


# --- the computation ----------------------------------------------------------

def _signal_lights(signal_spectra, grid, ybar):
    """Measured lights (from a file or a dict) plus modelled lights for the colours they leave out."""
    from .metrics.road_use import SignalLight, modelled_signal_lights, signal_colour
    from .spectra.illuminants import illuminant as make_illuminant

    measured = []
    if signal_spectra is not None:
        if isinstance(signal_spectra, (str, pathlib.Path)):
            from .io.spectra_files import read_spectra
            from .spectra.grid import resample

            path = str(signal_spectra)
            table = read_spectra(path, kind="spd")
            items = [(n, resample(table.wavelengths, v, grid, method="linear", outside="zero"), f"file {path}")
                     for n, v in zip(table.names, table.values)]
        elif isinstance(signal_spectra, dict):
            items = []
            path = "signal_spectra"
            for n, v in signal_spectra.items():
                if isinstance(v, tuple) and len(v) == 2:
                    from .spectra.grid import resample

                    v = resample(np.asarray(v[0], float), np.asarray(v[1], float), grid, method="linear",
                                 outside="zero")
                items.append((str(n), np.asarray(v, dtype=float), "given as an array"))
        else:
            raise InputError("signal spectra must be a file path or a dict of name -> spectrum")
        for name, spd, src in items:
            try:
                colour = signal_colour(name)
            except ValueError as exc:
                raise InputError(str(exc), source=path,
                                 hint="name each column red, yellow, amber, green or blue (e.g. 'red LED')") from None
            if spd.shape != (grid.size,):
                raise InputError(f"signal spectrum '{name}' is not on the grid ({grid.size} values)", source=path)
            if not float(np.sum(np.clip(spd, 0, None) * ybar)) > 0:
                raise InputError(f"signal spectrum '{name}' has no luminous power in {grid.start:g}-{grid.end:g} nm",
                                 source=path)
            measured.append(SignalLight(name, colour, np.clip(spd, 0, None), "measured", src))
    covered = {l.colour for l in measured}
    a = make_illuminant("A", grid).spd
    modelled = [l for l in modelled_signal_lights(grid.wavelengths, a) if l.colour not in covered]
    return measured + modelled


def _cone_basis(observers):
    """Unique cone-sensitivity columns (n_wl, K) and, per observer, the indices of its L, M, S columns."""
    columns, index, seen = [], [], {}
    for o in observers:
        idx = []
        for c in range(3):
            col = np.ascontiguousarray(o.fundamentals[:, c], dtype=float)
            key = col.tobytes()  # equal bytes = equal columns (one dictionary look-up, not a scan)
            if key not in seen:
                seen[key] = len(columns)
                columns.append(col)
            idx.append(seen[key])
        index.append(idx)
    return np.stack(columns, axis=1), index


def score(filters, *, illuminant="D65", observers=DEFAULT_OBSERVERS, surfaces="ces99", adaptation="full",
          metrics="all", signal_spectra=None, grid=None, weber_fraction: float = WEBER_FRACTION,
          cone_ratios=CONE_RATIOS, discrimination_threshold: float = DISCRIMINATION_THRESHOLD,
          distribution_thresholds=DISTRIBUTION_THRESHOLDS, normal_threshold: float = NORMAL_THRESHOLD,
          deficient_threshold: float = DEFICIENT_THRESHOLD, signal_limits=None, sensitivity: bool = False,
          members: bool = False, progress=None, units: str | None = None,
          bandwidth: float | None = None) -> Scorecard:
    """Score filters: photometry and road use, rendition, and per-observer contrast and pair counts.

    Parameters
    ----------
    filters
        Anything :func:`cvdfilter.load_filters` accepts: spec strings (with
        sweeps such as ``notch:center=540..600/5,fwhm=30,depth=0.8``), file
        paths (every column a filter), example names, colour-science spectra,
        arrays on the grid or a FilterSet.
    illuminant : str or Illuminant
        The light the surfaces are seen in (photometry and road use always use
        CIE D65, as ISO 12312-1 prescribes).
    observers : sequence of str, Observer or Population
        Observer specs; default :data:`DEFAULT_OBSERVERS`. A population spec (any spec plus ``n=N``,
        :func:`cvdfilter.population`) is scored member by member and reported as statistics over its
        members (``{mean, sd, p2_5, p50, p97_5}`` per metric) and the share ``helped`` with a Wilson 95 %
        interval (:mod:`cvdfilter.metrics.population_stats`).
    surfaces : str or SurfaceSet
        ``ces99`` (default), ``chart24``, ``tcs14``, ``vs15`` or a reflectance file.
    adaptation : str or float
        ``full`` (default: von Kries adaptation to the filtered light),
        ``none`` (adapted to the unfiltered light) or a degree 0-1.
    metrics : str or sequence
        ``all`` (default), ``core`` (all but rendition) or group names from
        :data:`METRIC_GROUPS`.
    signal_spectra : str, pathlib.Path or dict, optional
        Measured signal-light spectra: a file whose value columns are named
        by colour (``red``, ``yellow``/``amber``, ``green``, ``blue``, any
        suffix), or a dict name -> spectrum on the grid or (wavelengths, values).
        They replace the modelled lights of their colours.
    grid : Grid, optional
        Default: the FilterSet's grid, else 380-780 nm at 1 nm.
    weber_fraction : float
        L-cone Weber fraction of the receptor-noise model.
    cone_ratios : sequence of 3 floats
        L:M:S cone numbers of the receptor-noise model.
    discrimination_threshold : float
        Delta S (JND) at or above which a pair is discriminable (headline counts).
    distribution_thresholds : sequence of float
        Delta S (JND) of the reported distribution (default 1, 2, 4).
    normal_threshold, deficient_threshold : float
        Delta S (JND) of the confused-pair definition (:mod:`cvdfilter.metrics.confusion`).
    signal_limits : None, str or dict
        Signal-quotient limits: a reading name, ``red=0.8,...`` or a dict
        (:func:`cvdfilter.metrics.road_use.parse_signal_limits`); default the
        ``guidance`` reading.
    sensitivity : bool
        Also score every filter under the documented variations of
        :data:`SENSITIVITY_RANGES` and report how the verdicts move
        (``Scorecard.sensitivity``, JSON key ``sensitivity``).
    members : bool
        With populations: also carry every member's values in the JSON (``members``).
    progress : callable, optional
        ``progress(stage, done, total)``; stages ``filters``, ``members`` (populations) and ``rendition``.
    units, bandwidth : optional
        Units (``fraction``, ``percent``, ``od``) and instrument bandwidth (nm) of
        filter files that do not set their own (``FILE@units=od``); see
        :func:`cvdfilter.load_filters`.

    Returns
    -------
    Scorecard

    Raises
    ------
    cvdfilter.errors.InputError
        For a bad filter, illuminant, observer, surface set, adaptation, metric
        name or signal-spectra file; raised before any heavy work.

    Examples
    --------
    >>> card = score("nd:t=0.5", observers=["normal", "deuteranope"], metrics="core")
    >>> f = card.to_dict()["filters"][0]
    >>> f["luminous_transmittance"], f["iso12312_category"], f["observers"][0]["red_green_gain"]
    (0.5, 1, 1.0)
    """
    from .metrics.confusion import confusion_from_points, confusion_reference, normally_discriminable
    from .metrics.contrast import gains_from_planes, opponent_channels, rms_without
    from .metrics.discrimination import (close_changes, discriminable_from_points, log_catches, receptor_noise,
                                         rnl_points, rnl_reference)
    from .metrics.photometry import luminous_transmittance, xyz_to_uv_prime, xyz_to_xy
    from .metrics.road_use import (SIGNAL_COLOURS, iso12312_category, min_ratio_in_band, parse_signal_limits,
                                   road_use_flags, signal_quotients)
    from .observers.fundamentals import cie1931_cmfs
    from .observers.observer import observer as make_observer
    from .observers.spaces import parse_adaptation
    from .spectra.filters import FilterSet, load_filters
    from .spectra.grid import DEFAULT_GRID
    from .spectra.illuminants import illuminant as make_illuminant
    from .spectra.surfaces import surface_set

    # -- inputs, all validated before any heavy work --------------------------
    groups = parse_metrics(metrics)
    a = parse_adaptation(adaptation)
    if grid is None:
        grid = filters.grid if isinstance(filters, FilterSet) else DEFAULT_GRID
    if isinstance(observers, str) or not hasattr(observers, "__iter__"):
        observers = [observers]
    observers = list(observers)
    if not observers:
        raise InputError("no observers given", hint=f"e.g. {', '.join(DEFAULT_OBSERVERS)}")
    thresholds = {"discrimination threshold": discrimination_threshold, "normal threshold": normal_threshold,
                  "deficient threshold": deficient_threshold}
    try:
        distribution_thresholds = tuple(float(t) for t in distribution_thresholds)
    except (TypeError, ValueError):
        raise InputError(f"distribution thresholds must be numbers, got {distribution_thresholds!r}") from None
    for name, t in [*thresholds.items(), *(("distribution threshold", t) for t in distribution_thresholds)]:
        try:
            ok = math.isfinite(float(t)) and float(t) > 0
        except (TypeError, ValueError):
            ok = False
        if not ok:
            raise InputError(f"{name} must be a positive number of JND, got {t!r}")
    try:
        noise_check = receptor_noise(None, weber=weber_fraction, cone_ratios=cone_ratios)
        limits, reading = parse_signal_limits(signal_limits)
    except (ValueError, TypeError) as exc:
        raise InputError(str(exc)) from None
    del noise_check
    fs = load_filters(filters, grid=grid, units=units, bandwidth=bandwidth)
    ill = make_illuminant(illuminant, grid)
    surf = surface_set(surfaces, grid)
    from .observers.population import Population, is_population_spec
    from .observers.population import population as make_population

    obs = [o if isinstance(o, Population) else make_population(o, grid) if is_population_spec(o)
           else make_observer(o, grid) for o in observers]
    populations = {k: o for k, o in enumerate(obs) if isinstance(o, Population)}
    if populations and sensitivity:
        raise InputError("sensitivity is not available for population observers yet",
                         hint="score the population without --sensitivity, or its centre observer with it")
    cmfs = cie1931_cmfs(grid)
    ybar = cmfs[:, 1]
    d65 = make_illuminant("D65", grid).spd
    lights = _signal_lights(signal_spectra, grid, ybar) if "road_use" in groups else []

    T = fs.transmittance
    n_f, n_s = len(fs), len(surf)
    wl = grid.wavelengths
    E = ill.spd
    results: dict = {}
    per_obs = [dict() for _ in obs]

    # -- photometry and road use (normal observer, CIE D65) ---------------------
    tau_v = luminous_transmittance(T, d65, ybar)
    results["luminous_transmittance"] = tau_v
    results["luminous_transmittance_illuminant"] = luminous_transmittance(T, E, ybar)
    xyz_d65 = T @ (d65[:, None] * cmfs)
    results["chromaticity"] = xyz_to_xy(xyz_d65)
    uv1 = xyz_to_uv_prime(T @ (E[:, None] * cmfs))
    uv0 = xyz_to_uv_prime(E @ cmfs)
    results["white_shift"] = np.hypot(uv1[:, 0] - uv0[0], uv1[:, 1] - uv0[1])
    if "road_use" in groups:
        cat = iso12312_category(tau_v)
        ratio, at_nm = min_ratio_in_band(T, tau_v, wl)
        by_colour, by_light = signal_quotients(T, tau_v, lights, ybar)
        suitable, night = road_use_flags(cat, ratio, by_colour, tau_v, limits)
        results.update({"iso12312_category": cat, "min_ratio": ratio, "min_ratio_at_nm": at_nm,
                        "suitable": suitable, "night_suitable": night})
        for c in SIGNAL_COLOURS:
            results[f"signal_quotient_{c}"] = by_colour[c]
            names = [l.name for l in lights if l.colour == c]
            stack = np.stack([by_light[n] for n in names], axis=1)
            worst = np.argmin(np.nan_to_num(stack, nan=np.inf), axis=1)
            results[f"signal_light_{c}"] = np.array(names, dtype=object)[worst]

    # -- per observer: one product gives every cone catch ----------------------
    per_observer_groups = [g for g in ("contrast", "discrimination", "confusion") if g in groups]
    # populations are scored below, in batches of members; this block scores the fixed observers
    run_obs = [o for o in obs if not isinstance(o, Population)]
    run_store = [per_obs[k] for k, o in enumerate(obs) if not isinstance(o, Population)]
    if per_observer_groups and run_obs:
        basis, cols = _cone_basis(run_obs)
        k_cols = basis.shape[1]
        stimuli = E[:, None] * np.concatenate([surf.reflectance, np.ones((grid.size, 1))], axis=1)
        # B[lambda, (cone, sample)]: the last sample is the white (the light itself).
        B = (basis[:, :, None] * stimuli[:, None, :]).reshape(grid.size, k_cols * (n_s + 1))
        Q0 = B.sum(axis=0).reshape(k_cols, n_s + 1)  # without the filter (T = 1)
        whites = np.empty((n_f, k_cols))
        normal_noise = receptor_noise(None, weber=weber_fraction, cone_ratios=cone_ratios)
        setup = []
        for k, o in enumerate(run_obs):
            c = cols[k]
            q0, w0 = Q0[c, :n_s].T, Q0[c, n_s]
            s = {"cols": c, "w0": w0}
            store = run_store[k]
            if "contrast" in groups:
                s["channels"] = opponent_channels(o.kind, o.deficiency, o.luminance_weights)
                s["rms0"] = rms_without(q0, w0, s["channels"])
                for key in ("luminance_contrast_gain", "red_green_gain", "blue_yellow_gain"):
                    store[key] = np.full(n_f, np.nan)
            noise = receptor_noise(o.missing_cone, weber=weber_fraction, cone_ratios=cone_ratios)
            if "discrimination" in groups or "confusion" in groups:
                # The pairs the normal observer (this observer's base, or itself) tells apart without a filter:
                # the set the median runs over and the confused pairs are drawn from.
                normal = o.base if o.base is not None else o
                sets = normally_discriminable(stimuli[:, :n_s].T @ normal.fundamentals, normal_noise,
                                              normal_threshold)
                with_confusion = "confusion" in groups and o.kind != "normal" and o.base is not None
                s["rnl"] = rnl_reference(q0, noise, threshold=discrimination_threshold,
                                         thresholds=distribution_thresholds if "discrimination" in groups else (),
                                         median_pairs=sets[0],
                                         extra_radii=(deficient_threshold,) if with_confusion else ())
            if "confusion" in groups and o.kind != "normal" and o.base is not None:
                s["confusion"] = confusion_reference(
                    q0, noise, None, None, normal_threshold=normal_threshold,
                    deficient_threshold=deficient_threshold, rnl=s["rnl"], sets=sets)
                for key in _CONFUSION_KEYS:
                    store[f"confusion_{key}"] = np.zeros(n_f, dtype=np.int64)
                store["confusion_normally_discriminable"] = s["confusion"]["count"]
                store["confusion_median_without"] = s["rnl"]["median"]
                store["confusion_median_with"] = np.full(n_f, np.nan)
                store["confusion_median_ratio"] = np.full(n_f, np.nan)
            if "discrimination" in groups:
                for key in _PAIR_KEYS:
                    store[f"discriminable_{key}"] = np.zeros(n_f, dtype=np.int64)
                for t in distribution_thresholds:
                    for key in _PAIR_KEYS:
                        store[f"discriminable_at_{t:g}_{key}"] = np.zeros(n_f, dtype=np.int64)
                store["discriminable_median_without"] = s["rnl"]["median"]
                store["discriminable_median_with"] = np.full(n_f, np.nan)
                store["discriminable_median_ratio"] = np.full(n_f, np.nan)
            setup.append(s)
        need_logs = "discrimination" in groups or "confusion" in groups

        def chunk(lo: int, hi: int) -> int:
            Q = (T[lo:hi] @ B).reshape(hi - lo, k_cols, n_s + 1)
            S, white = Q[:, :, :n_s], Q[:, :, n_s]
            whites[lo:hi] = white
            logs = log_catches(S) if need_logs else None
            points = changes = None
            for k, s in enumerate(setup):
                c = s["cols"]
                planes = [S[:, i, :] for i in c]
                store = run_store[k]
                if "contrast" in groups:
                    g = gains_from_planes(planes, white[:, c], s["w0"], s["rms0"], s["channels"], adaptation=a)
                    store["luminance_contrast_gain"][lo:hi] = g[:, 0]
                    store["red_green_gain"][lo:hi] = g[:, 1]
                    store["blue_yellow_gain"][lo:hi] = g[:, 2]
                if need_logs:
                    points = rnl_points(logs[:, c, :], s["rnl"])  # y = P ln q: Delta S is their distance
                    changes = close_changes(points, s["rnl"])
                    med = None
                if "discrimination" in groups:
                    d = discriminable_from_points(points, s["rnl"], changes)
                    med = d
                    for key in _PAIR_KEYS:
                        store[f"discriminable_{key}"][lo:hi] = d[key]
                    for t, counts in d["at"].items():
                        for key in _PAIR_KEYS:
                            store[f"discriminable_at_{t:g}_{key}"][lo:hi] = counts[key]
                    store["discriminable_median_with"][lo:hi] = d["median_with"]
                    store["discriminable_median_ratio"][lo:hi] = d["median_ratio"]
                if "confusion" in s:
                    d = confusion_from_points(points, s["confusion"], changes, median=med)
                    for key in _CONFUSION_KEYS:
                        store[f"confusion_{key}"][lo:hi] = d[key]
                    store["confusion_median_with"][lo:hi] = d["median_with"]
                    store["confusion_median_ratio"][lo:hi] = d["median_ratio"]
            return hi

        bounds = [(lo, min(n_f, lo + _CHUNK_FILTERS)) for lo in range(0, n_f, _CHUNK_FILTERS)]
        workers = min(_workers(), len(bounds))
        if workers <= 1:
            for lo, hi in bounds:
                chunk(lo, hi)
                if progress is not None:
                    progress("filters", hi, n_f)
        else:
            # Chunks are independent and numpy releases the GIL in its array loops, so
            # threads share the work; each writes its own slice of the result arrays.
            from concurrent.futures import ThreadPoolExecutor, as_completed

            done = 0
            with ThreadPoolExecutor(max_workers=workers) as pool:
                futures = [pool.submit(chunk, lo, hi) for lo, hi in bounds]
                for fut in as_completed(futures):
                    fut.result()
                    done += 1
                    if progress is not None:
                        progress("filters", min(n_f, done * _CHUNK_FILTERS), n_f)
        # A filter that leaves some cone no light (a black filter) has no defined pair statistics.
        for k, s in enumerate(setup):
            present = [c for i, c in enumerate(s["cols"]) if i != run_obs[k].missing_cone]
            run_store[k]["undefined"] = ~np.all(whites[:, present] > 0, axis=1)
    elif progress is not None:
        progress("filters", n_f, n_f)
    if per_observer_groups and populations:
        kwargs = dict(illuminant=ill, surfaces=surf, adaptation=a, grid=grid, weber_fraction=weber_fraction,
                      cone_ratios=cone_ratios, discrimination_threshold=discrimination_threshold,
                      distribution_thresholds=distribution_thresholds, normal_threshold=normal_threshold,
                      deficient_threshold=deficient_threshold)
        for k, pop in populations.items():
            per_obs[k] = _population_scores(fs, pop, per_observer_groups, kwargs, progress)

    # -- colour rendition (colour-science, one call per filter) -----------------
    if "rendition" in groups:
        from .metrics.rendition import rendition_many

        results.update(rendition_many(T * E, wl, progress=None if progress is None else
                                      (lambda done, total: progress("rendition", done, total))))

    inputs = {"filters": _describe_inputs(filters), "illuminant": ill.name, "observers": [o.spec for o in obs],
              "surfaces": surf.name, "adaptation": _adaptation_text(a), "metrics": list(groups),
              "signal_spectra": None if signal_spectra is None else (
                  str(signal_spectra) if isinstance(signal_spectra, (str, pathlib.Path)) else "given as arrays")}
    settings = {"weber_fraction": float(weber_fraction), "cone_ratios": [float(x) for x in cone_ratios],
                "discrimination_threshold": float(discrimination_threshold),
                "distribution_thresholds": [float(t) for t in distribution_thresholds],
                "normal_threshold": float(normal_threshold), "deficient_threshold": float(deficient_threshold),
                "signal_limits": limits, "signal_limits_reading": reading}
    card = Scorecard(fs, ill, surf, obs, a, groups, lights, results, per_obs, settings, inputs, members=members)
    if sensitivity:
        card.sensitivity = _sensitivity(card, fs, ill, surf, obs, a, signal_spectra, grid)
    return card


#: The documented range over which ``score --sensitivity`` varies each model constant and threshold (one at
#: a time, the others at their values of the run). Choices of this project, to show whether a verdict is robust:
#: Weber fraction half and 1.5 times the default 0.02; L:M cone ratio 1:1 and 4:1 at the same S share (the
#: default is 2:1; individual ratios vary at least this much, Hofer et al. 2005, from memory); every JND
#: threshold together x0.8 and x1.25; the other reading of the signal-quotient limits.
SENSITIVITY_RANGES = {
    "weber_fraction": (0.5, 1.5),
    "cone_ratios_lm": ((1.0, 1.0), (4.0, 1.0)),
    "threshold_factor": (0.8, 1.25),
    "signal_limits": ("guidance", "blue-0.4"),
}


def _sensitivity_variants(settings: dict) -> list:
    """(name, score keyword arguments) of every variation, from the run's own settings."""
    w = settings["weber_fraction"]
    cr = settings["cone_ratios"]
    lm = cr[0] + cr[1]
    out = [(f"weber_fraction={w * f:g}", {"weber_fraction": w * f}) for f in SENSITIVITY_RANGES["weber_fraction"]]
    for a, b in SENSITIVITY_RANGES["cone_ratios_lm"]:
        ratios = (lm * a / (a + b), lm * b / (a + b), cr[2])
        out.append((f"cone_ratios={':'.join(f'{x:g}' for x in ratios)}", {"cone_ratios": ratios}))
    for f in SENSITIVITY_RANGES["threshold_factor"]:
        out.append((f"thresholds x{f:g}", {
            "discrimination_threshold": settings["discrimination_threshold"] * f,
            "normal_threshold": settings["normal_threshold"] * f,
            "deficient_threshold": settings["deficient_threshold"] * f}))
    return out


def _sign(x) -> int:
    return 0 if x is None or x == 0 else (1 if x > 0 else -1)


def _sensitivity(card, fs, ill, surf, obs, a, signal_spectra, grid) -> dict:
    """How each verdict moves over :data:`SENSITIVITY_RANGES` (the JSON ``sensitivity`` section)."""
    st = card.settings
    pair_groups = [g for g in ("discrimination", "confusion") if g in card.metrics]
    base = {"illuminant": ill, "observers": obs, "surfaces": surf, "adaptation": a, "grid": grid,
            "weber_fraction": st["weber_fraction"], "cone_ratios": st["cone_ratios"],
            "discrimination_threshold": st["discrimination_threshold"],
            "distribution_thresholds": st["distribution_thresholds"],
            "normal_threshold": st["normal_threshold"], "deficient_threshold": st["deficient_threshold"],
            "signal_limits": st["signal_limits"]}
    variants = []
    if pair_groups:
        for name, kw in _sensitivity_variants(st):
            variants.append((name, kw, score(fs, metrics=pair_groups, **{**base, **kw}).to_dict()))
    road = []
    if "road_use" in card.metrics:
        for reading in SENSITIVITY_RANGES["signal_limits"]:
            if reading != st["signal_limits_reading"]:
                road.append((f"signal_limits={reading}", score(fs, metrics="road_use", signal_spectra=signal_spectra,
                                                              **{**base, "signal_limits": reading}).to_dict()))
    doc = card.to_dict() if card.sensitivity is None else None
    own = doc["filters"] if doc else []

    def measures(o: dict) -> dict:
        out = {}
        p = o.get("discriminable_pairs")
        if p is not None:
            out["discriminable_net"] = p["gained"] - p["lost"]
        c = o.get("confusion_pairs")
        if c is not None:
            out["confused_net_resolved"] = c["resolved"] - c["created"]
        if p is not None or c is not None:
            out["median_delta_s_ratio"] = _median_ratio(o)
        return out

    filters = []
    for i, f in enumerate(own):
        entry = {"name": f["name"], "observers": []}
        if road:
            values = {"default": f["road_use"]["suitable"],
                      **{name: d["filters"][i]["road_use"]["suitable"] for name, d in road}}
            entry["road_use_suitable"] = {"values": values, "robust": len(set(values.values())) == 1}
        for k, o in enumerate(f["observers"]):
            m0 = measures(o)
            rows = {}
            for key, v0 in m0.items():
                values = {"default": v0}
                for name, _, d in variants:
                    values[name] = measures(d["filters"][i]["observers"][k]).get(key)
                nums = [v for v in values.values() if v is not None]
                ref = 1.0 if key.startswith("median") else 0
                signs = {_sign(v - ref) for v in nums}
                rows[key] = {"values": values, "min": min(nums) if nums else None, "max": max(nums) if nums else None,
                             "robust": len(signs) <= 1}
            entry["observers"].append({"observer": o["observer"], **rows})
        filters.append(entry)
    return {
        "what": "each verdict recomputed with one constant or threshold moved at a time over a documented range; "
                "'robust' means the sign of the change (net pairs, median ratio - 1, or the road-use verdict) is "
                "the same in every variation",
        "ranges": {"weber_fraction_factors": list(SENSITIVITY_RANGES["weber_fraction"]),
                   "cone_ratios_lm": [list(x) for x in SENSITIVITY_RANGES["cone_ratios_lm"]],
                   "threshold_factors": list(SENSITIVITY_RANGES["threshold_factor"]),
                   "signal_limit_readings": list(SENSITIVITY_RANGES["signal_limits"])},
        "variations": [{"name": name, "settings": {k: (list(v) if isinstance(v, tuple) else v) for k, v in kw.items()}}
                       for name, kw, _ in variants] + [{"name": name, "settings": {}} for name, _ in road],
        "filters": filters,
    }


def _describe_inputs(filters) -> list:
    if isinstance(filters, np.ndarray):
        return ["array"]
    if isinstance(filters, (str, pathlib.Path)):
        filters = [filters]
    out = []
    try:
        for f in filters:
            out.append(str(f) if isinstance(f, (str, pathlib.Path)) else type(f).__name__)
    except TypeError:
        out.append(type(filters).__name__)
    return out
