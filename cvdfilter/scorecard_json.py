"""The scorecard's JSON document: the header and one entry per filter (and per observer).

Views of a :class:`cvdfilter.scorecard.Scorecard`; ``Scorecard.to_dict()`` assembles them and its methods
``filter_dict`` and ``header`` delegate here. Numbers are rounded for output only (:func:`_num`); the arrays
keep full precision.

Public: :func:`filter_entry`, :func:`observer_entry`, :func:`header`.
"""

from __future__ import annotations

import math

import numpy as np

from ._version import __version__
from .cautions import CAVEAT, EYE_CARE_CAUTION, ROAD_CAUTION
from .metric_registry import _at_key
from .score_plan import CONFUSION_KEYS as _CONFUSION_KEYS, PAIR_KEYS as _PAIR_KEYS
from .score_population import is_population

__all__ = ["filter_entry", "observer_entry", "header"]


def _adaptation_text(a: float) -> str:
    return "full" if a == 1.0 else "none" if a == 0.0 else f"{a:g}"


def _num(x, digits: int = 6):
    """A finite float rounded to ``digits`` decimals, or None (NaN / inf -> null)."""
    x = float(x)
    if x != x or x in (math.inf, -math.inf):
        return None
    return round(x, digits) + 0.0  # + 0.0 turns -0.0 into 0.0


def filter_entry(card, i: int) -> dict:
    """The JSON entry of filter ``i`` (with its ``observers``)."""
    from .metrics.road_use import SIGNAL_COLOURS, road_use_reasons

    r = card._lists[0]
    fs = card.filters
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
    if "photometry" in card.metrics:
        d["luminous_transmittance"] = _num(r["luminous_transmittance"][i])
        d["luminous_transmittance_illuminant"] = _num(r["luminous_transmittance_illuminant"][i])
        d["chromaticity"] = {"x": _num(r["chromaticity"][i][0]), "y": _num(r["chromaticity"][i][1])}
        d["white_shift"] = _num(r["white_shift"][i])
    if "road_use" in card.metrics:
        cat = int(r["iso12312_category"][i])
        quot = {c: _num(r[f"signal_quotient_{c}"][i], 4) for c in SIGNAL_COLOURS}
        worst = {c: r[f"signal_light_{c}"][i] for c in SIGNAL_COLOURS}
        reasons = road_use_reasons(float(r["luminous_transmittance"][i]), cat, float(r["min_ratio"][i]),
                                   float(r["min_ratio_at_nm"][i]),
                                   {c: float(r[f"signal_quotient_{c}"][i]) for c in SIGNAL_COLOURS}, worst,
                                   limits=card.settings.get("signal_limits"))
        d["iso12312_category"] = cat if cat >= 0 else None
        d["road_use"] = {
            "suitable": bool(r["suitable"][i]),
            "night_suitable": bool(r["night_suitable"][i]),
            "min_ratio_475_650": _num(r["min_ratio"][i], 4),
            "min_ratio_at_nm": _num(r["min_ratio_at_nm"][i], 2),
            "reasons": reasons,
        }
        d["signal_quotients"] = quot
    if "rendition" in card.metrics:
        d["rendition"] = {
            "rf": _num(r["rf"][i], 2), "rg": _num(r["rg"][i], 2), "ra": _num(r["ra"][i], 2),
            "chroma_shifts": [_num(v, 2) for v in r["chroma_shifts"][i]],
            "cct_k": _num(r["cct_k"][i], 1), "duv": _num(r["duv"][i], 5),
        }
    d["observers"] = [observer_entry(card, i, k) for k in range(len(card.observers))]
    return d


def observer_entry(card, i: int, k: int) -> dict:
    """The JSON entry of observer ``k`` under filter ``i``."""
    if is_population(card.observers[k]):
        from .score_population import population_entry

        return population_entry(card, i, k)
    o = card._lists[1][k]
    d = {"observer": card.observers[k].spec}
    if "contrast" in card.metrics:
        d["red_green_gain"] = _num(o["red_green_gain"][i])
        d["blue_yellow_gain"] = _num(o["blue_yellow_gain"][i])
        d["luminance_contrast_gain"] = _num(o["luminance_contrast_gain"][i])
    undefined = bool(o["undefined"][i]) if "undefined" in o else False
    st = card.settings
    if "discrimination" in card.metrics:
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
    if "confusion" in card.metrics:
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
    if "discernible" in card.metrics:
        d["discernible_colours"] = discernible_entry(card, i, k)
    return d


def header(card) -> dict:
    """The top-level keys of ``Scorecard.to_dict()`` other than ``filters``."""
    from .metrics.pairs import pair_count
    from .metrics.road_use import SIGNAL_COLOURS, SIGNAL_LIMITS

    ill, surf = card.illuminant, card.surfaces
    head = {
        "tool": "cvdfilter",
        "version": __version__,
        "caveat": CAVEAT,
        "cautions": [ROAD_CAUTION, EYE_CARE_CAUTION],
        "illuminant": {"name": ill.name, "source": ill.source},
        "surfaces": {"name": surf.name, "source": surf.source, "count": len(surf),
                     "pairs": pair_count(len(surf))},
        "adaptation": {"spec": _adaptation_text(card.adaptation), "degree": card.adaptation,
                       "model": "von Kries, to the illuminant seen through the filter"},
        "observers": [{"observer": o.spec, "kind": o.kind, "deficiency": o.deficiency,
                       **({"population": {"n": o.n, "variation": o.variation, "seed": o.seed}}
                          if is_population(o) else {})} for o in card.observers],
        "metrics": list(card.metrics),
        "grid": {"start_nm": card.filters.grid.start, "end_nm": card.filters.grid.end,
                 "step_nm": card.filters.grid.step},
        "models": _models(card),
        "inputs": card.inputs,
    }
    if "discernible" in card.metrics:
        models: dict = head["models"]  # type: ignore[assignment]
        models["discernible"] = discernible_model(card)
    if "road_use" in card.metrics:
        head["signal_lights"] = {
            c: {"limit": card.settings.get("signal_limits", SIGNAL_LIMITS)[c],
                "lights": [l.describe() for l in card.signal_lights if l.colour == c]}
            for c in SIGNAL_COLOURS}
    return head


def _models(card) -> dict:
    """The ``models`` section: each model's name, source, thresholds and constants."""
    from .metrics.discrimination import receptor_noise

    st = card.settings
    return {
        "photometry": "CIE 1931 2 deg V(lambda) with CIE D65 (ISO 12312-1); white shift and "
                      "luminous_transmittance_illuminant under the chosen illuminant",
        "discrimination": {
            "model": "receptor-noise-limited, Vorobyev & Osorio 1998",
            "threshold_jnd": st.get("discrimination_threshold"),
            "distribution_thresholds_jnd": list(st.get("distribution_thresholds", ())),
            "median": "median Delta S over the pairs the normal observer (the observer's base, or itself) "
                      "discriminates without the filter, with the filter / without it",
            "weber_fraction_l": st.get("weber_fraction"),
            "cone_ratios_lms": list(st.get("cone_ratios", ())),
            "noise_by_observer": {o.spec: [_num(v, 5) for v in receptor_noise(
                o.missing_cone, weber=st["weber_fraction"],
                cone_ratios=st["cone_ratios"])] for o in card.observers},
        },
        "confusion": {
            "model": "pairs the normal observer (the observer's own base, same age and field) "
                     "discriminates without the filter (Delta S >= normal threshold) and the deficient "
                     "observer does not (Delta S < deficient threshold); receptor-noise-limited model",
            "normal_threshold_jnd": st.get("normal_threshold"),
            "deficient_threshold_jnd": st.get("deficient_threshold"),
            "median": "median over the normally discriminable pairs of the deficient observer's "
                      "Delta S, with the filter / without it",
        },
        **({"populations": _population_model()} if any(is_population(o) for o in card.observers) else {}),
        "road_use": _road_use_model(st),
    }


def _population_model() -> dict:
    from .metrics.population_stats import CONFIDENCE, RATIO_TOLERANCE

    return {
        "model": "individual observers: Asano, Fairchild & Blonde (2016) variation of lens, macula, "
                 "photopigment densities and peaks on the CIE 170-1 observer (docs/models.md section 8)",
        "statistics": "over members: mean, sd (ddof 1), p2_5, p50, p97_5 (linear interpolation); "
                      "members for whom a metric is undefined are left out",
        "helped": "share of members with red_green_gain or blue_yellow_gain above 1, net "
                  "discriminable or confused pairs (gained - lost, resolved - created) above 0, or "
                  "median_delta_s_ratio above 1 (ratios: above 1 + ratio_tolerance, a numerical "
                  "tolerance for rounding); Wilson (1927) score interval",
        "confidence": CONFIDENCE, "ratio_tolerance": RATIO_TOLERANCE,
    }


def _road_use_model(st: dict) -> dict:
    from .metrics.road_use import (CATEGORY_BANDS, DEFAULT_SIGNAL_READING, NIGHT_MIN, RATIO_BAND_NM, RATIO_LIMIT,
                                   SIGNAL_LIMIT_READINGS, SIGNAL_LIMIT_SOURCES, SIGNAL_LIMITS)

    return {
        "signal_limits": dict(st.get("signal_limits", SIGNAL_LIMITS)),
        "signal_limits_reading": st.get("signal_limits_reading", DEFAULT_SIGNAL_READING),
        "signal_limits_source": SIGNAL_LIMIT_SOURCES.get(
            st.get("signal_limits_reading", DEFAULT_SIGNAL_READING), "given by the user"),
        "other_readings": {k: v for k, v in SIGNAL_LIMIT_READINGS.items()},
        "ratio_band_nm": list(RATIO_BAND_NM), "ratio_limit": RATIO_LIMIT, "night_min": NIGHT_MIN,
        "category_bands": [{"category": c, "above": lo, "up_to": hi} for c, lo, hi in CATEGORY_BANDS],
    }


# --- the discernible group -------------------------------------------------------------------------------------------

def discernible_model(card) -> dict:
    """The ``models.discernible`` block of the scorecard's JSON."""
    return dict(card.settings.get("discernible", {}))


def discernible_entry(card, i: int, k: int, summary=None) -> dict:
    """The ``discernible_colours`` entry of observer ``k`` for filter ``i``.

    Keys: ``without``, ``with``, ``ratio`` (with / without), ``method``, ``normal_without``,
    ``ratio_to_normal`` (without / normal without), ``ratio_to_normal_with`` (with / normal without),
    pooled over the stimuli; ``scenes`` (stimulus name -> the same keys) and ``mean_scene_ratio`` when
    there are several. For a population ``summary(key)`` gives the statistics of a key (its counts and
    ratios become ``{mean, sd, p2_5, p50, p97_5}``).
    """
    from .score_discernible import DEFAULT_METHOD

    info = card.settings.get("discernible", {})
    o = card.per_observer[k]

    def value(key, digits=6, count=False):
        if summary is not None:
            return summary(f"discernible_{key}", digits)
        v = np.asarray(o[f"discernible_{key}"], dtype=float)
        x = float(v[i]) if v.ndim else float(v)
        if count:
            return int(x) if np.isfinite(x) else None
        return _num(x, digits)

    def block(prefix):
        return {"without": value(prefix + "without", count=True), "with": value(prefix + "with", count=True),
                "ratio": value(prefix + "ratio"), "normal_without": value(prefix + "normal_without", count=True),
                "ratio_to_normal": value(prefix + "ratio_to_normal"),
                "ratio_to_normal_with": value(prefix + "ratio_to_normal_with")}

    d = {**block(""), "method": info.get("method", DEFAULT_METHOD)}
    stimuli = [s["name"] for s in info.get("stimuli", [])]
    if len(stimuli) > 1:
        d["pooled"] = "union"
        d["mean_scene_ratio"] = value("mean_scene_ratio")
        d["scenes"] = {name: block(f"scene{j}_") for j, name in enumerate(stimuli)}
    if info.get("method") == "cam16ucs":
        d["excluded_pixels"] = value("excluded_pixels", count=True) if summary is None else \
            summary("discernible_excluded_pixels", 0)
    return d
