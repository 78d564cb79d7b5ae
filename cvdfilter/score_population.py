"""Populations in the scorecard: members scored in batches, then summarised per metric.

A population (:class:`~cvdfilter.observers.population.Population`, a spec with ``n=N``) is scored member by
member through :func:`cvdfilter.score`'s per-observer path (:func:`population_scores`); its JSON entry
(:func:`population_entry`) gives every per-observer metric as ``{mean, sd, p2_5, p50, p97_5}`` over the
members and the share of members helped with a Wilson 95 % interval (:mod:`cvdfilter.metrics.population_stats`).

Public: :func:`is_population`, :func:`score_populations`, :func:`population_scores`, :func:`population_summaries`,
:func:`population_entry`, :data:`STATS`, :data:`CONTRAST_KEYS`.
"""

from __future__ import annotations

import numpy as np

from .score_plan import CONFUSION_KEYS as _CONFUSION_KEYS, PAIR_KEYS as _PAIR_KEYS

__all__ = ["is_population", "score_populations", "population_scores", "population_summaries", "population_entry",
           "STATS", "CONTRAST_KEYS"]

#: Statistics of a population metric (JSON keys), from metrics.population_stats.STATISTICS.
STATS = ("mean", "sd", "p2_5", "p50", "p97_5")
CONTRAST_KEYS = ("luminance_contrast_gain", "red_green_gain", "blue_yellow_gain")
_STATS = STATS
_CONTRAST_KEYS = CONTRAST_KEYS


def is_population(o) -> bool:
    """True for a :class:`~cvdfilter.observers.population.Population` (checked by name: no import)."""
    return type(o).__name__ == "Population"


def score_populations(inp, per_obs: list, groups, progress=None) -> None:
    """Fill ``per_obs[k]`` for every population among ``inp.observers`` (a
    :class:`~cvdfilter.score_plan.ScoreInputs`) with :func:`population_scores`, with the run's settings."""
    kwargs = dict(illuminant=inp.illuminant, surfaces=inp.surfaces, adaptation=inp.adaptation, grid=inp.grid,
                  weber_fraction=inp.weber_fraction, cone_ratios=inp.cone_ratios,
                  discrimination_threshold=inp.discrimination_threshold,
                  distribution_thresholds=inp.distribution_thresholds, normal_threshold=inp.normal_threshold,
                  deficient_threshold=inp.deficient_threshold)
    for k, pop in enumerate(inp.observers):
        if is_population(pop):
            per_obs[k] = population_scores(inp.filters, pop, groups, kwargs, progress)


def population_scores(fs, pop, groups, kwargs: dict, progress=None, batch: int = 64) -> dict:
    """Per-observer arrays of every member of ``pop``: (filters, members), or (members,) for values that do
    not depend on the filter. Members are scored in batches through :func:`score`'s per-observer path."""
    from .scorecard import score

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


def population_summaries(card) -> dict:
    """Per population index: metric -> statistics arrays over filters (computed once, vectorised)."""
    from .metrics.population_stats import RATIO_TOLERANCE, share_helped, spread

    out = {}
    for k, pop in enumerate(card.observers):
        if not is_population(pop):
            continue
        o = card.per_observer[k]
        undefined = o.get("undefined", np.zeros((len(card), pop.n), dtype=bool))
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
        if "discernible_ratio" in o:  # helped: more discernible colours with the filter than without
            r = np.asarray(o["discernible_ratio"], dtype=float)
            helped["discernible_ratio"] = share_helped(np.nan_to_num(r, nan=0.0) > 1.0 + RATIO_TOLERANCE,
                                                       np.isfinite(r))
        out[k] = (stats, helped)
    return out

def population_entry(card, i: int, k: int) -> dict:
    """A population's entry: every per-observer metric as ``{mean, sd, p2_5, p50, p97_5}`` over members
    (counts per count), ``helped`` shares with Wilson 95 % intervals, ``members`` when asked."""
    from .scorecard import _at_key, _num

    pop = card.observers[k]
    stats, helped = card._population_summaries[k]
    st = card.settings

    def s(key, digits: int = 6):
        v = stats[key]
        if v["n"].ndim:
            v = {name: a[i] for name, a in v.items()}
        if int(v["n"]) == 0:
            return None
        return {name: _num(v[name], digits) for name in _STATS}

    d = {"observer": pop.spec, "population": {"n": pop.n, "variation": pop.variation, "seed": pop.seed}}
    if "contrast" in card.metrics:
        for key in _CONTRAST_KEYS:
            d[key] = s(key)
    if "discrimination" in card.metrics:
        pairs = {key: s(f"discriminable_{key}") for key in _PAIR_KEYS}
        d["discriminable_pairs"] = None if pairs["with"] is None else {
            "threshold_jnd": st["discrimination_threshold"], **pairs}
        dist = {_at_key(t): {key: s(f"discriminable_at_{t:g}_{key}") for key in _PAIR_KEYS}
                for t in st["distribution_thresholds"]}
        dist["median_without"] = s("discriminable_median_without", 4)
        dist["median_with"] = s("discriminable_median_with", 4)
        dist["median_ratio"] = s("discriminable_median_ratio")
        d["delta_s_distribution"] = None if pairs["with"] is None else dist
    if "confusion" in card.metrics:
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
    if "discernible" in card.metrics:
        from .score_discernible import discernible_entry

        d["discernible_colours"] = discernible_entry(card, i, k, summary=s)
    d["helped"] = {key: {"share": _num(h["share"][i]), "ci_low": _num(h["ci_low"][i]),
                         "ci_high": _num(h["ci_high"][i]), "helped": int(h["helped"][i]), "n": int(h["n"][i])}
                   for key, h in helped.items()}
    if card.members:
        o = card.per_observer[k]
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
