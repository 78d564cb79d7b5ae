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

import functools
import json
import math
import pathlib
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ._version import __version__
from .cautions import CAVEAT, EYE_CARE_CAUTION, ROAD_CAUTION
from .metrics.confusion import DEFICIENT_THRESHOLD, NORMAL_THRESHOLD
from .metrics.discrimination import CONE_RATIOS, DISCRIMINATION_THRESHOLD, DISTRIBUTION_THRESHOLDS, WEBER_FRACTION
from .score_plan import (CONFUSION_KEYS as _CONFUSION_KEYS, CORE_METRICS, DEFAULT_OBSERVERS, METRIC_GROUPS,
                         PAIR_KEYS as _PAIR_KEYS, parse_metrics)
from .score_population import is_population
from .score_sensitivity import SENSITIVITY_RANGES

__all__ = ["score", "Scorecard", "DEFAULT_OBSERVERS", "METRIC_GROUPS", "CORE_METRICS", "parse_metrics",
           "SENSITIVITY_RANGES"]

#: Filters per chunk of the vectorised pass (bounded memory; progress is reported per chunk).
_CHUNK_FILTERS = 1024


def _adaptation_text(a: float) -> str:
    return "full" if a == 1.0 else "none" if a == 0.0 else f"{a:g}"


# --- rounding for the JSON ----------------------------------------------------

def _num(x, digits: int = 6):
    """A finite float rounded to ``digits`` decimals, or None (NaN / inf -> null)."""
    x = float(x)
    if x != x or x in (math.inf, -math.inf):
        return None
    return round(x, digits) + 0.0  # + 0.0 turns -0.0 into 0.0


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
    on the filter); its JSON entry is :func:`cvdfilter.score_population.population_entry`.
    """

    filters: Any  # FilterSet
    illuminant: Any  # Illuminant
    surfaces: Any  # SurfaceSet
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

    def filter_dict(self, i: int) -> dict:
        """The JSON entry of filter ``i`` (with its ``observers``)."""
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
        if is_population(self.observers[k]):
            from .score_population import population_entry

            return population_entry(self, i, k)
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
        if "discernible" in self.metrics:
            from .score_discernible import discernible_entry

            d["discernible_colours"] = discernible_entry(self, i, k)
        return d

    @functools.cached_property
    def _population_summaries(self) -> dict:
        """Per population index: metric -> statistics arrays over filters (computed once, vectorised)."""
        from .score_population import population_summaries

        return population_summaries(self)

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
                              if is_population(o) else {})} for o in self.observers],
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
                }} if any(is_population(o) for o in self.observers) else {}),
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
        if "discernible" in self.metrics:
            from .score_discernible import discernible_model

            models: dict = head["models"]  # type: ignore[assignment]
            models["discernible"] = discernible_model(self)
        if "road_use" in self.metrics:
            head["signal_lights"] = {
                c: {"limit": self.settings.get("signal_limits", SIGNAL_LIMITS)[c],
                    "lights": [l.describe() for l in self.signal_lights if l.colour == c]}
                for c in SIGNAL_COLOURS}
        return head

    def to_dict(self) -> dict:
        """The scorecard as the JSON document ``cvdfilter score --format json`` prints."""
        d = self.header()
        d["filters"] = [self.filter_dict(i) for i in range(len(self))]
        if self.sensitivity is not None:
            d["sensitivity"] = self.sensitivity
        return d

    def to_json(self) -> str:
        return json.dumps(self.to_dict(), indent=2, ensure_ascii=False, allow_nan=False) + "\n"

    # -- typed results (cvdfilter.scorecard_arrays) -------------------------------

    def metric(self, name: str, *, population=None):
        """One metric as a :class:`~cvdfilter.metric_registry.MetricArray` over (filter[, observer]), or
        (filter, member) for ``population`` (:func:`cvdfilter.scorecard_arrays.metric`)."""
        from .scorecard_arrays import metric

        return metric(self, name, population=population)

    def metric_statistics(self, name: str) -> dict:
        """An observer metric over every observer, populations as statistics over their members
        (:func:`cvdfilter.scorecard_arrays.metric_statistics`)."""
        from .scorecard_arrays import metric_statistics

        return metric_statistics(self, name)

    def population_helped(self, population) -> dict:
        """Shares of a population's members helped, arrays over filters
        (:func:`cvdfilter.scorecard_arrays.population_helped`)."""
        from .scorecard_arrays import population_helped

        return population_helped(self, population)

    def filter_records(self) -> list:
        """How each filter was made (:class:`cvdfilter.scorecard_arrays.FilterRecord`)."""
        from .scorecard_arrays import filter_records

        return filter_records(self.filters)

    # -- views (cvdfilter.scorecard_views) ---------------------------------------

    def csv_rows(self) -> tuple[list, list]:
        """Header and rows: one row per filter x observer, nested keys joined with dots."""
        from .scorecard_views import csv_rows

        return csv_rows(self)

    def to_csv(self) -> str:
        from .scorecard_views import to_csv

        return to_csv(self)

    def to_markdown(self) -> str:
        """A Markdown report: inputs, tables, road-use reasons, cautions."""
        from .scorecard_views import to_markdown

        return to_markdown(self)

    def to_table(self, width: int = 100) -> str:
        """A plain-text summary at most ``width`` columns wide, cautions underneath."""
        from .scorecard_views import to_table

        return to_table(self, width)

    def to_dataframe(self):
        """pandas DataFrame: one row per filter x observer (x statistic), full precision (scorecard_frames)."""
        from .scorecard_frames import to_dataframe

        return to_dataframe(self)

    def to_xarray(self):
        """xarray Dataset over (filter, observer, member, metric) (scorecard_frames)."""
        from .scorecard_frames import to_xarray

        return to_xarray(self)


def _at_key(t: float) -> str:
    """JSON key of a distribution threshold: 1 -> ``at_1_jnd``, 0.8 -> ``at_0_8_jnd``."""
    return f"at_{t:g}_jnd".replace(".", "_")


# --- the computation (steps in cvdfilter.score_plan) ------------------------------

def score(filters, *, illuminant="D65", observers=DEFAULT_OBSERVERS, surfaces="ces99", adaptation="full",
          metrics="all", signal_spectra=None, grid=None, weber_fraction: float = WEBER_FRACTION,
          cone_ratios=CONE_RATIOS, discrimination_threshold: float = DISCRIMINATION_THRESHOLD,
          distribution_thresholds=DISTRIBUTION_THRESHOLDS, normal_threshold: float = NORMAL_THRESHOLD,
          deficient_threshold: float = DEFICIENT_THRESHOLD, signal_limits=None, sensitivity: bool = False,
          members: bool = False, progress=None, units: str | None = None,
          bandwidth: float | None = None, scenes=None, discernible_method: str = "cielab",
          scheduler=None) -> Scorecard:
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
    scenes : path, Cube or sequence of them, optional
        With the ``discernible`` group: reflectance cubes whose colours are counted (each per scene and
        pooled); without them the surface set is counted.
    discernible_method : str
        ``cielab`` (Linhares et al. 2008, default), ``cam16ucs`` or ``rnl``
        (:data:`cvdfilter.score_discernible.DISCERNIBLE_METHODS`).
    scheduler : str or Executor, optional
        Where the chunks of filters run (:mod:`cvdfilter.execution`): ``local`` (default, threads in this
        process), ``local:N`` (a Dask LocalCluster) or a Dask scheduler address; the results are the same.

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
    args = dict(locals())  # the arguments (first, before any other name is bound here)
    from .execution import opens_cluster

    if opens_cluster(scheduler):  # one cluster for the run: fixed observers, populations, scenes
        from .execution import executor

        with executor(scheduler) as ex:
            return score(**{**args, "scheduler": ex})
    from .score_plan import ScoreInputs, filter_results, plan_observers, run_chunks

    inp = ScoreInputs.validate(
        filters, illuminant=illuminant, observers=observers, surfaces=surfaces, adaptation=adaptation,
        metrics=metrics, signal_spectra=signal_spectra, grid=grid, weber_fraction=weber_fraction,
        cone_ratios=cone_ratios, discrimination_threshold=discrimination_threshold,
        distribution_thresholds=distribution_thresholds, normal_threshold=normal_threshold,
        deficient_threshold=deficient_threshold, signal_limits=signal_limits, units=units, bandwidth=bandwidth,
        sensitivity=sensitivity)
    groups, n_f = inp.groups, len(inp.filters)
    discern = None
    if "discernible" in groups:  # checked before the heavy work, like every input
        from .score_discernible import discernible_inputs

        discern = discernible_inputs(scenes, inp.surfaces, method=discernible_method, grid=inp.grid)
    elif scenes:
        from .errors import InputError

        raise InputError("scenes are only used by the discernible group", hint="add discernible to --metrics")
    results = filter_results(inp)
    per_obs: list = [dict() for _ in inp.observers]
    per_observer_groups = [g for g in ("contrast", "discrimination", "confusion") if g in groups]
    # populations are scored below, in batches of members; the plans score the fixed observers
    fixed = [k for k, o in enumerate(inp.observers) if not is_population(o)]
    if per_observer_groups and fixed:
        plans, runner = plan_observers(inp, [inp.observers[k] for k in fixed])
        run_chunks(runner, n_f, chunk=_CHUNK_FILTERS, progress=progress, scheduler=scheduler)
        runner.mark_undefined()
        for k, plan in zip(fixed, plans):
            per_obs[k] = plan.store
    elif progress is not None:
        progress("filters", n_f, n_f)
    if per_observer_groups and len(fixed) < len(inp.observers):
        from .score_population import score_populations

        score_populations(inp, per_obs, per_observer_groups, progress, scheduler=scheduler)
    if discern is not None:
        from .score_discernible import score_discernible

        score_discernible(inp, discern, per_obs, progress, scheduler=scheduler)
    if "rendition" in groups:  # colour-science, one call per filter
        from .metrics.rendition import rendition_many

        results.update(rendition_many(inp.filters.transmittance * inp.illuminant.spd, inp.grid.wavelengths,
                                      progress=None if progress is None else
                                      (lambda done, total: progress("rendition", done, total))))
    record = {"filters": _describe_inputs(filters), "illuminant": inp.illuminant.name,
              "observers": [o.spec for o in inp.observers], "surfaces": inp.surfaces.name,
              "adaptation": _adaptation_text(inp.adaptation), "metrics": list(groups),
              "signal_spectra": None if signal_spectra is None else (
                  str(signal_spectra) if isinstance(signal_spectra, (str, pathlib.Path)) else "given as arrays")}
    settings = inp.settings()
    if discern is not None:
        record["scenes"] = list(discern.sources)
        record["discernible_method"] = discern.method
        settings["discernible"] = discern.settings()
    card = Scorecard(inp.filters, inp.illuminant, inp.surfaces, inp.observers, inp.adaptation, groups,
                     inp.signal_lights, results, per_obs, settings, record, members=members)
    if sensitivity:
        from .score_sensitivity import sensitivity as _sensitivity

        card.sensitivity = _sensitivity(card, inp.filters, inp.illuminant, inp.surfaces, inp.observers,
                                        inp.adaptation, signal_spectra, inp.grid)
    return card


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
