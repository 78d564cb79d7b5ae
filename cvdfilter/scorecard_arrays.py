"""The scorecard as typed arrays: one :class:`~cvdfilter.metric_registry.MetricArray` per metric, and a
record per filter of how it was made.

``Scorecard.metric(name)``, ``Scorecard.metric_statistics(name)``, ``Scorecard.filter_records()`` and
``Scorecard.population_helped(k)`` are these functions; figures and the report read them instead of the
rounded JSON. Values are the full-precision arrays of the scorecard; ``MetricArray.rounded()`` gives the
numbers the JSON prints.

Public: :func:`metric`, :func:`metric_statistics`, :func:`filter_records`, :func:`population_helped`,
:class:`FilterRecord`, :data:`STATISTICS`.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from .metric_registry import DERIVED_METRICS, MetricArray, MetricInfo, metric_info
from .score_population import STATS, is_population

__all__ = ["metric", "metric_statistics", "filter_records", "population_helped", "FilterRecord", "STATISTICS"]

#: Statistics of :func:`metric_statistics`: the population statistics of the JSON, ``p50`` also the value of
#: a fixed observer.
STATISTICS = STATS


@dataclass(frozen=True)
class FilterRecord:
    """How one filter was made.

    Attributes
    ----------
    name : str
        Its name in the run.
    source : str
        ``spec``, ``file``, ``example``, ``array``, ``spec*file`` (stacks), ...
    spec : str or None
        The parametric spec it was built from (``notch:center=560,depth=0.8,fwhm=30``).
    kind : str or None
        Its parametric shape (``notch``, ``nd``, ``longpass``, ``shortpass``).
    parameters : dict
        Parameter -> value of a parametric filter; a stack's terms in order, a key met again in a later term
        as ``key#2``, ``key#3``, ...
    path, column : str or None
        The file and column of a measured filter.
    parts : tuple of FilterRecord
        The terms of a stack (``a*b``).
    """

    name: str
    source: str
    spec: str | None = None
    kind: str | None = None
    parameters: dict = field(default_factory=dict)
    path: str | None = None
    column: str | None = None
    parts: tuple = ()


def _record(name: str, source: str, info: dict) -> FilterRecord:
    parts = tuple(_record(name, source, p) for p in info.get("parts") or ())
    if parts:
        params: dict[str, float] = {}
        for part in parts:
            for key, value in part.parameters.items():
                k, n = key.split("#")[0], 2
                new = k
                while new in params:
                    new = f"{k}#{n}"
                    n += 1
                params[new] = value
        return FilterRecord(name, source, spec="*".join(p.spec or p.path or "?" for p in parts), parameters=params,
                            parts=parts)
    return FilterRecord(name, source, spec=info.get("spec"), kind=info.get("kind"),
                        parameters=dict(info.get("parameters") or {}), path=info.get("path"),
                        column=info.get("column"))


def filter_records(fs) -> list[FilterRecord]:
    """One :class:`FilterRecord` per filter of a FilterSet, from the records the loader kept."""
    infos = list(fs.info or ())
    return [_record(name, fs.sources[i] if i < len(fs.sources) else "array", infos[i] if i < len(infos) else {})
            for i, name in enumerate(fs.names)]


def _info(card, name: str) -> MetricInfo:
    return metric_info(name, card.settings.get("distribution_thresholds"))


def _filter_metric(card, m: MetricInfo) -> MetricArray:
    n_f = len(card)
    v = card.results.get(m.store)
    if v is None:
        values = np.full(n_f, np.nan)
    else:
        values = np.asarray(v, dtype=float)
        if m.column is not None:
            values = values[:, m.column]
        if m.name == "iso12312_category":
            values = np.where(values >= 0, values, np.nan)   # outside every band: null in the JSON
    axes = ("filter", "hue_bin") if values.ndim == 2 else ("filter",)
    coords = {"filter": tuple(card.filters.names)}
    return MetricArray(m.name, m.unit, m.definition, axes, values, coords, m.digits)


def _observer_values(card, m: MetricInfo, k: int) -> np.ndarray:
    """Observer ``k``'s values of ``m``: (filters,) for a fixed observer, (filters, members) for a population."""
    o = card.per_observer[k]
    pop = is_population(card.observers[k])
    shape = (len(card), card.observers[k].n) if pop else (len(card),)
    if m.store not in o:
        return np.full(shape, np.nan)
    v = np.broadcast_to(np.asarray(o[m.store], dtype=float), shape).copy()
    if m.masked and "undefined" in o:
        v[np.asarray(o["undefined"], dtype=bool)] = np.nan
    return v


def _derived(card, name: str, k: int) -> np.ndarray:
    unit, definition, parts = DERIVED_METRICS[name]
    if name == "median_delta_s_ratio":
        which = parts[0] if "confusion_with" in card.per_observer[k] else parts[1]
        return _observer_values(card, _info(card, which), k)
    a, b = (_observer_values(card, _info(card, p), k) for p in parts)
    return a - b


def metric(card, name: str, *, population=None) -> MetricArray:
    """One metric of a scorecard as a :class:`MetricArray`.

    Parameters
    ----------
    card : Scorecard
    name : str
        A JSON key (:data:`cvdfilter.metric_registry.METRICS`) or a derived name
        (:data:`cvdfilter.metric_registry.DERIVED_METRICS`).
    population : int or str, optional
        An observer population (its index among the card's observers or its spec): the values of its members.

    Returns
    -------
    MetricArray
        Axes ``("filter",)`` for a filter property; ``("filter", "observer")`` over the fixed (non-population)
        observers; ``("filter", "member")`` for one population. NaN where the metric does not apply.

    Examples
    --------
    >>> from cvdfilter import score
    >>> card = score("nd:t=0.5", observers=["normal", "deuteranope"], metrics="core")
    >>> m = card.metric("red_green_gain")
    >>> m.axes, m.unit, m.values.shape
    (('filter', 'observer'), 'ratio (with / without)', (1, 2))
    """
    if name in DERIVED_METRICS:
        unit, definition, _ = DERIVED_METRICS[name]
        digits = None if name.endswith(".net") else 6
        m = None
    else:
        m = _info(card, name)
        unit, definition, digits = m.unit, m.definition, m.digits
        if m.level == "filter":
            return _filter_metric(card, m)

    def values(k):
        return _derived(card, name, k) if m is None else _observer_values(card, m, k)

    names = tuple(card.filters.names)
    if population is not None:
        k = _population_index(card, population)
        v = values(k)
        # the JSON gives each member's value to 6 decimals
        return MetricArray(name, unit, definition, ("filter", "member"), v,
                           {"filter": names, "member": tuple(range(v.shape[1]))}, 6)
    fixed = [k for k, o in enumerate(card.observers) if not is_population(o)]
    v = np.stack([values(k) for k in fixed], axis=1) if fixed else np.zeros((len(card), 0))
    return MetricArray(name, unit, definition, ("filter", "observer"), v,
                       {"filter": names, "observer": tuple(card.observers[k].spec for k in fixed)}, digits)


def _population_index(card, population) -> int:
    if isinstance(population, (int, np.integer)):
        k = int(population)
    else:
        specs = [o.spec for o in card.observers]
        if population not in specs:
            raise KeyError(f"no observer {population!r} in this scorecard")
        k = specs.index(population)
    if not is_population(card.observers[k]):
        raise KeyError(f"observer {card.observers[k].spec!r} is not a population")
    return k


def metric_statistics(card, name: str) -> dict[str, MetricArray]:
    """An observer metric over every observer: statistic -> MetricArray (filter, observer).

    For a population the statistics over its members (``mean``, ``sd``, ``p2_5``, ``p50``, ``p97_5``, as
    the JSON reports them; NaN where no member is defined); for a fixed observer its value as ``mean`` and
    ``p50`` and NaN for the spread.
    """
    m = _info(card, name)
    if m.level != "observer":
        raise KeyError(f"{name} is a property of the filter, not of an observer")
    n_f, n_o = len(card), len(card.observers)
    out = {s: np.full((n_f, n_o), np.nan) for s in STATISTICS}
    for k, obs in enumerate(card.observers):
        if not is_population(obs):
            v = _observer_values(card, m, k)
            out["mean"][:, k] = v
            out["p50"][:, k] = v
            continue
        stats = card._population_summaries[k][0].get(m.store)
        if stats is None:
            continue
        defined = np.broadcast_to(np.asarray(stats["n"]) > 0, (n_f,))
        for s in STATISTICS:
            out[s][:, k] = np.where(defined, np.broadcast_to(np.asarray(stats[s], dtype=float), (n_f,)), np.nan)
    digits = 6 if m.digits is None else m.digits     # statistics of counts are floats: 6 decimals in the JSON
    coords = {"filter": tuple(card.filters.names), "observer": tuple(o.spec for o in card.observers)}
    return {s: MetricArray(name, m.unit, f"{m.definition} ({s})", ("filter", "observer"), v, coords, digits)
            for s, v in out.items()}


def population_helped(card, population) -> dict[str, dict[str, np.ndarray]]:
    """The share of a population's members helped, per criterion: ``share``, ``ci_low``, ``ci_high`` (Wilson
    95 % interval), ``helped``, ``n``, each an array over filters."""
    k = _population_index(card, population)
    return card._population_summaries[k][1]
