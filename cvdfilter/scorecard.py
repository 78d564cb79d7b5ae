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
import pathlib
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from .metrics.confusion import DEFICIENT_THRESHOLD, NORMAL_THRESHOLD
from .metrics.discrimination import CONE_RATIOS, DISCRIMINATION_THRESHOLD, DISTRIBUTION_THRESHOLDS, WEBER_FRACTION
from .execution import opens_cluster
from .score_plan import CORE_METRICS, DEFAULT_OBSERVERS, METRIC_GROUPS, parse_metrics
from .score_population import is_population
from .scorecard_json import _adaptation_text, _at_key, _num  # noqa: F401  (used by score_population, score_stream)
from .score_sensitivity import SENSITIVITY_RANGES

__all__ = ["score", "Scorecard", "DEFAULT_OBSERVERS", "METRIC_GROUPS", "CORE_METRICS", "parse_metrics",
           "SENSITIVITY_RANGES"]

#: Filters per chunk of the vectorised pass (bounded memory; progress is reported per chunk).
_CHUNK_FILTERS = 1024


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
        """The JSON entry of filter ``i`` (with its ``observers``; :func:`cvdfilter.scorecard_json.filter_entry`)."""
        from .scorecard_json import filter_entry

        return filter_entry(self, i)

    @functools.cached_property
    def _population_summaries(self) -> dict:
        """Per population index: metric -> statistics arrays over filters (computed once, vectorised)."""
        from .score_population import population_summaries

        return population_summaries(self)

    def header(self) -> dict:
        """The top-level keys of :meth:`to_dict` other than ``filters`` (:func:`cvdfilter.scorecard_json.header`)."""
        from .scorecard_json import header

        return header(self)

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
        Anything :func:`cvdfilter.load_filters` accepts: spec strings (with sweeps such as
        ``notch:center=540..600/5,fwhm=30,depth=0.8``), file paths (every column a filter), example names,
        colour-science spectra, arrays on the grid or a FilterSet.
    illuminant : str or Illuminant
        The light the surfaces are seen in (photometry and road use always use CIE D65, as ISO 12312-1 prescribes).
    observers : sequence of str, Observer or Population
        Observer specs; default :data:`DEFAULT_OBSERVERS`. A population spec (any spec plus ``n=N``) is scored
        member by member and reported as statistics over its members (``{mean, sd, p2_5, p50, p97_5}`` per
        metric) and the share ``helped`` with a Wilson 95 % interval (:mod:`cvdfilter.metrics.population_stats`).
    surfaces : str or SurfaceSet
        ``ces99`` (default), ``chart24``, ``tcs14``, ``vs15`` or a reflectance file.
    adaptation : str or float
        ``full`` (default: von Kries to the filtered light), ``none`` (to the unfiltered light) or a degree 0-1.
    metrics : str or sequence
        ``all`` (default), ``core`` (all but rendition) or group names from :data:`METRIC_GROUPS`.
    signal_spectra : str, pathlib.Path or dict, optional
        Measured signal-light spectra replacing the modelled lights of their colours: a file whose value columns
        are named by colour (``red``, ``yellow``/``amber``, ``green``, ``blue``, any suffix), or a dict name ->
        spectrum on the grid or (wavelengths, values).
    grid : Grid, optional
        Default: the FilterSet's grid, else 380-780 nm at 1 nm.
    weber_fraction, cone_ratios, discrimination_threshold, distribution_thresholds, signal_limits
        Model constants and thresholds, with ``normal_threshold`` and ``deficient_threshold``
        (:meth:`cvdfilter.score_inputs.ScoreInputs.validate` says each).
    sensitivity, members : bool
        Also report how the verdicts move under the variations of :data:`SENSITIVITY_RANGES` (JSON key
        ``sensitivity``); with populations, also carry every member's values in the JSON (``members``).
    progress : callable, optional
        ``progress(stage, done, total)``; stages ``filters``, ``members`` (populations) and ``rendition``.
    units, bandwidth : optional
        Units and bandwidth of filter files that do not set their own (as ``ScoreInputs.validate``).
    scenes : path, Cube or sequence of them, optional
        With the ``discernible`` group: reflectance cubes whose colours are counted (each per scene and pooled);
        without them the surface set is counted.
    discernible_method : str
        ``cielab`` (Linhares et al. 2008, default), ``cam16ucs`` or ``rnl`` (``score_discernible.DISCERNIBLE_METHODS``).
    scheduler : str or Executor, optional
        Where the chunks of filters run (:mod:`cvdfilter.execution`): ``local`` (default, threads in this
        process), ``local:N`` (a Dask LocalCluster) or a Dask scheduler address; the results are the same.

    Returns
    -------
    Scorecard
        Raises :class:`cvdfilter.errors.InputError` before any heavy work for a bad filter, illuminant,
        observer, surface set, adaptation, metric name or signal-spectra file.

    Examples
    --------
    >>> card = score("nd:t=0.5", observers=["normal", "deuteranope"], metrics="core")
    >>> f = card.to_dict()["filters"][0]
    >>> f["luminous_transmittance"], f["iso12312_category"], f["observers"][0]["red_green_gain"]
    (0.5, 1, 1.0)
    """
    args = dict(locals())  # the arguments (first, before any other name is bound here)
    if opens_cluster(scheduler):  # one cluster for the run: fixed observers, populations, scenes
        return _score_on_cluster(args)
    from .score_plan import ScoreInputs

    inp = ScoreInputs.validate(
        filters, illuminant=illuminant, observers=observers, surfaces=surfaces, adaptation=adaptation,
        metrics=metrics, signal_spectra=signal_spectra, grid=grid, weber_fraction=weber_fraction,
        cone_ratios=cone_ratios, discrimination_threshold=discrimination_threshold,
        distribution_thresholds=distribution_thresholds, normal_threshold=normal_threshold,
        deficient_threshold=deficient_threshold, signal_limits=signal_limits, units=units, bandwidth=bandwidth,
        sensitivity=sensitivity)
    discern = _discernible_inputs(inp, scenes, discernible_method)  # checked before the heavy work
    results, per_obs = _score_validated(inp, discern, progress, scheduler)
    return _scorecard(inp, filters, signal_spectra, discern, results, per_obs, members, sensitivity)


def _score_on_cluster(args: dict) -> Scorecard:
    """:func:`score` with one executor (a Dask cluster) opened for the whole run and closed after it."""
    from .execution import executor

    with executor(args["scheduler"]) as ex:
        return score(**{**args, "scheduler": ex})


def _discernible_inputs(inp, scenes, method: str):
    """The discernible group's scenes and method (None without the group), checked like every input."""
    if "discernible" in inp.groups:
        from .score_discernible import discernible_inputs

        return discernible_inputs(scenes, inp.surfaces, method=method, grid=inp.grid)
    if scenes:
        from .errors import InputError

        raise InputError("scenes are only used by the discernible group", hint="add discernible to --metrics")
    return None


def _score_validated(inp, discern, progress, scheduler) -> tuple[dict, list]:
    """Per-filter results and per-observer arrays of validated inputs (chunks run through ``scheduler``)."""
    from .score_plan import filter_results, plan_observers, run_chunks

    groups, n_f = inp.groups, len(inp.filters)
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
    score_after_fixed(inp, per_obs, results, discern, progress, scheduler)
    return results, per_obs


def score_after_fixed(inp, per_obs: list, results: dict, discern=None, progress=None, scheduler=None) -> None:
    """What follows the fixed observers' plans (filled into ``per_obs`` and ``results``): the populations, the
    discernible group (``discern``) and colour rendition; shared by :func:`score` and the streamed chunks."""
    per_observer_groups = [g for g in ("contrast", "discrimination", "confusion") if g in inp.groups]
    if per_observer_groups and any(is_population(o) for o in inp.observers):
        from .score_population import score_populations

        score_populations(inp, per_obs, per_observer_groups, progress, scheduler=scheduler)
    if discern is not None:
        from .score_discernible import score_discernible

        score_discernible(inp, discern, per_obs, progress, scheduler=scheduler)
    if "rendition" in inp.groups:  # colour-science, one call per filter
        from .metrics.rendition import rendition_many

        results.update(rendition_many(inp.filters.transmittance * inp.illuminant.spd, inp.grid.wavelengths,
                                      progress=None if progress is None else
                                      (lambda done, total: progress("rendition", done, total))))


def _scorecard(inp, filters, signal_spectra, discern, results: dict, per_obs: list, members: bool,
               sensitivity: bool) -> Scorecard:
    """The Scorecard with the record of its inputs and the settings used (and the sensitivity section)."""
    record = _input_record(filters, inp, signal_spectra)
    settings = inp.settings()
    if discern is not None:
        record["scenes"] = list(discern.sources)
        record["discernible_method"] = discern.method
        settings["discernible"] = discern.settings()
    card = Scorecard(inp.filters, inp.illuminant, inp.surfaces, inp.observers, inp.adaptation, inp.groups,
                     inp.signal_lights, results, per_obs, settings, record, members=members)
    if sensitivity:
        from .score_sensitivity import sensitivity as _sensitivity

        card.sensitivity = _sensitivity(card, inp.filters, inp.illuminant, inp.surfaces, inp.observers,
                                        inp.adaptation, inp.signal_spectra, inp.grid, inp=inp, discern=discern)
    return card


def _input_record(filters, inp, signal_spectra) -> dict:
    """The ``inputs`` record of a run (also the streamed run's, :mod:`cvdfilter.score_stream`)."""
    return {"filters": _describe_inputs(filters), "illuminant": inp.illuminant.name,
            "observers": [o.spec for o in inp.observers], "surfaces": inp.surfaces.name,
            "adaptation": _adaptation_text(inp.adaptation), "metrics": list(inp.groups),
            "signal_spectra": None if signal_spectra is None else (
                str(signal_spectra) if isinstance(signal_spectra, (str, pathlib.Path)) else "given as arrays")}


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
