"""How the scorecard's verdicts move when a model constant or threshold moves (``score --sensitivity``).

Each variation of :data:`SENSITIVITY_RANGES` rescores the filters with one setting changed, the others at
their values of the run; a verdict is robust when the sign of its change is the same in every variation.
For a population every member's verdict is followed through the variations: each value is the share of
members helped, ``robust_share`` the share whose sign never changes, and ``robust`` that none changes.

With the ``discernible`` group the verdict ``discernible_ratio`` (pooled count with / without the filter,
against 1) is followed too: the threshold variations scale the counting cube (the count's just-discernible
step, ``cube_size``) by the same factors; the Weber fraction and cone ratios enter only the ``rnl`` space,
so for ``cielab`` and ``cam16ucs`` those variations are the run's own counts (not recomputed).

Public: :data:`SENSITIVITY_RANGES`, :func:`sensitivity_variants`, :func:`sensitivity`.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from .score_population import is_population
from .scorecard_views import median_ratio

__all__ = ["SENSITIVITY_RANGES", "sensitivity_variants", "sensitivity"]


#: The documented range over which ``score --sensitivity`` varies each model constant and threshold (one at
#: a time, the others at their values of the run). Choices of this project, to show whether a verdict is robust:
#: Weber fraction half and 1.5 times the default 0.02; L:M cone ratio 1:1 and 4:1 at the same S share (the
#: default is 2:1; individual ratios vary at least this much, Hofer et al. 2005, from memory); every JND
#: threshold together x0.8 and x1.25; the other reading of the signal-quotient limits.
SENSITIVITY_RANGES: dict[str, Any] = {
    "weber_fraction": (0.5, 1.5),
    "cone_ratios_lm": ((1.0, 1.0), (4.0, 1.0)),
    "threshold_factor": (0.8, 1.25),
    "signal_limits": ("guidance", "blue-0.4"),
}


def sensitivity_variants(settings: dict) -> list:
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


def _settings(kw: dict, discern, st: dict) -> dict:
    """A variation's settings for the JSON (with the discernible group, the threshold factor's cube size)."""
    out = {k: (list(v) if isinstance(v, tuple) else v) for k, v in kw.items()}
    if discern is not None and "discrimination_threshold" in kw:
        out["discernible_cube_size"] = discern.cube_size * kw["discrimination_threshold"] / \
            st["discrimination_threshold"]
    return out


def _sign(x) -> int:
    return 0 if x is None or x == 0 else (1 if x > 0 else -1)


def _member_measures(o: dict) -> dict:
    """A population's verdict measures per (filter, member), float, NaN where undefined."""
    out = {}
    if "discriminable_gained" in o:
        out["discriminable_net"] = (np.asarray(o["discriminable_gained"]) - np.asarray(o["discriminable_lost"]))
    if "confusion_resolved" in o:
        out["confused_net_resolved"] = (np.asarray(o["confusion_resolved"]) - np.asarray(o["confusion_created"]))
    ratio = o.get("confusion_median_ratio", o.get("discriminable_median_ratio"))
    if ratio is not None and out:
        out["median_delta_s_ratio"] = ratio
    undefined = o.get("undefined")
    for key, v in out.items():
        v = np.asarray(v, dtype=float).copy()
        if undefined is not None:
            v[np.asarray(undefined)] = np.nan
        out[key] = v
    return out


def _population_rows(measures: list, i: int, names: list) -> dict:
    """Per verdict of filter ``i``: the share of members helped under each variation, and how many keep
    the sign of their change in every variation."""
    rows = {}
    for key in measures[0]:
        ref = 1.0 if (key.startswith("median") or key == "discernible_ratio") else 0.0
        vals = np.stack([m[key][i] for m in measures])  # (variations, members), default first
        defined = np.isfinite(vals)
        with np.errstate(invalid="ignore"):
            signs = np.sign(vals - ref)
        shares = {}
        for name, v, d in zip(["default", *names], vals, defined):
            shares[name] = round(float(np.mean(v[d] > ref)), 6) if d.any() else None
        seen = defined.any(axis=0)
        lo = np.where(defined, signs, np.inf).min(axis=0)
        hi = np.where(defined, signs, -np.inf).max(axis=0)
        same = (lo == hi) & seen
        nums = [v for v in shares.values() if v is not None]
        n = int(seen.sum())
        rows[key] = {"statistic": "share of members helped", "values": shares,
                     "min": min(nums) if nums else None, "max": max(nums) if nums else None,
                     "robust": bool(n and same[seen].all()),
                     "robust_share": round(float(same[seen].mean()), 6) if n else None, "members": n}
    return rows


def _measures(o: dict) -> dict:
    """The measures whose sign is a verdict, from one observer's JSON entry."""
    out = {}
    p = o.get("discriminable_pairs")
    if p is not None:
        out["discriminable_net"] = p["gained"] - p["lost"]
    c = o.get("confusion_pairs")
    if c is not None:
        out["confused_net_resolved"] = c["resolved"] - c["created"]
    if p is not None or c is not None:
        out["median_delta_s_ratio"] = median_ratio(o)
    return out


def _discernible_variations(inp, discern, per_obs: list, variations: list) -> list:
    """Per variation of ``variations`` (name, kwargs) the observers' ``discernible_ratio`` arrays: recounted
    where the variation changes the count (cube size; the noise for ``rnl``), else the run's own."""
    import dataclasses

    from .score_discernible import score_discernible

    own = [po.get("discernible_ratio") for po in per_obs]
    out = []
    for _, kw in variations:
        d, changes = discern, {}
        if "discrimination_threshold" in kw:  # the threshold factor: the counting cube scales with it
            d = dataclasses.replace(discern, cube_size=discern.cube_size * kw["discrimination_threshold"]
                                    / inp.discrimination_threshold)
        elif discern.method == "rnl":
            changes = {k: kw[k] for k in ("weber_fraction", "cone_ratios") if k in kw}
        if d is discern and not changes:
            out.append(own)
            continue
        store: list = [dict() for _ in inp.observers]
        score_discernible(dataclasses.replace(inp, **changes), d, store)
        out.append([po["discernible_ratio"] for po in store])
    return out


def _fixed_row(values: dict, ref: float) -> dict:
    nums = [v for v in values.values() if v is not None]
    signs = {_sign(v - ref) for v in nums}
    return {"values": values, "min": min(nums) if nums else None, "max": max(nums) if nums else None,
            "robust": len(signs) <= 1}


def _number(x) -> float | None:
    x = float(x)
    return round(x, 6) if np.isfinite(x) else None


def _observer_rows(o: dict, variants: list, i: int, k: int) -> dict:
    """A fixed observer's rows: each verdict measure of filter ``i`` under every variation, and whether its
    sign holds."""
    rows = {}
    for key, v0 in _measures(o).items():
        values = {"default": v0}
        for name, _, d in variants:
            values[name] = _measures(d["filters"][i]["observers"][k]).get(key)
        nums = [v for v in values.values() if v is not None]
        ref = 1.0 if key.startswith("median") else 0
        signs = {_sign(v - ref) for v in nums}
        rows[key] = {"values": values, "min": min(nums) if nums else None, "max": max(nums) if nums else None,
                     "robust": len(signs) <= 1}
    return rows


def sensitivity(card, fs, ill, surf, obs, a, signal_spectra, grid, *, inp=None, discern=None) -> dict:
    """How each verdict moves over :data:`SENSITIVITY_RANGES` (the JSON ``sensitivity`` section); with the
    run's ``inp`` (ScoreInputs) and ``discern`` (DiscernibleInputs), the discernible ratio too."""
    from .scorecard import score

    st = card.settings
    pair_groups = [g for g in ("discrimination", "confusion") if g in card.metrics]
    base = {"illuminant": ill, "observers": obs, "surfaces": surf, "adaptation": a, "grid": grid,
            "weber_fraction": st["weber_fraction"], "cone_ratios": st["cone_ratios"],
            "discrimination_threshold": st["discrimination_threshold"],
            "distribution_thresholds": st["distribution_thresholds"],
            "normal_threshold": st["normal_threshold"], "deficient_threshold": st["deficient_threshold"],
            "signal_limits": st["signal_limits"]}
    variants, variant_cards = [], []
    discernible = discern is not None and inp is not None and "discernible" in card.metrics
    listed = sensitivity_variants(st) if (pair_groups or discernible) else []
    names = [name for name, _ in listed]
    ratios = _discernible_variations(inp, discern, card.per_observer, listed) if discernible else []
    if pair_groups:
        for name, kw in listed:
            v = score(fs, metrics=pair_groups, **{**base, **kw})
            variants.append((name, kw, v.to_dict()))
            variant_cards.append(v)
    road = []
    if "road_use" in card.metrics:
        for reading in SENSITIVITY_RANGES["signal_limits"]:
            if reading != st["signal_limits_reading"]:
                road.append((f"signal_limits={reading}", score(fs, metrics="road_use", signal_spectra=signal_spectra,
                                                              **{**base, "signal_limits": reading}).to_dict()))
    doc = card.to_dict() if card.sensitivity is None else None
    own = doc["filters"] if doc else []

    # Populations: every member's verdict under every variation, summarised as shares of members.
    populations = {k: [_member_measures(card.per_observer[k])] + [_member_measures(v.per_observer[k])
                                                                   for v in variant_cards]
                   for k, o in enumerate(card.observers) if is_population(o)}
    if discernible:
        for k, measures in populations.items():
            if not pair_groups:
                measures.extend({} for _ in listed)
            for m, r in zip(measures, [card.per_observer[k]["discernible_ratio"], *(v[k] for v in ratios)]):
                m["discernible_ratio"] = np.asarray(r, dtype=float)
    filters = []
    for i, f in enumerate(own):
        entry = {"name": f["name"], "observers": []}
        if road:
            values = {"default": f["road_use"]["suitable"],
                      **{name: d["filters"][i]["road_use"]["suitable"] for name, d in road}}
            entry["road_use_suitable"] = {"values": values, "robust": len(set(values.values())) == 1}
        for k, o in enumerate(f["observers"]):
            if k in populations:
                entry["observers"].append({"observer": o["observer"], **_population_rows(populations[k], i, names)})
                continue
            rows = _observer_rows(o, variants, i, k)
            if discernible:
                own = card.per_observer[k]["discernible_ratio"]
                rows["discernible_ratio"] = _fixed_row(
                    {"default": _number(own[i]), **{n: _number(v[k][i]) for n, v in zip(names, ratios)}}, 1.0)
            entry["observers"].append({"observer": o["observer"], **rows})
        filters.append(entry)
    return {
        "what": "each verdict recomputed with one constant or threshold moved at a time over a documented range; "
                "'robust' means the sign of the change (net pairs, median ratio - 1, or the road-use verdict) is "
                "the same in every variation; for a population each value is the share of members helped (change "
                "above 0, or median ratio above 1), 'robust_share' the share of members whose sign is the same "
                "in every variation, and 'robust' that every member's is"
                + ("; discernible_ratio (discernible colours with / without, against 1): the threshold factors "
                   "scale the counting cube, the Weber fraction and cone ratios change only the rnl space"
                   if discernible else ""),
        "ranges": {"weber_fraction_factors": list(SENSITIVITY_RANGES["weber_fraction"]),
                   "cone_ratios_lm": [list(x) for x in SENSITIVITY_RANGES["cone_ratios_lm"]],
                   "threshold_factors": list(SENSITIVITY_RANGES["threshold_factor"]),
                   "signal_limit_readings": list(SENSITIVITY_RANGES["signal_limits"])},
        "variations": [{"name": name, "settings": _settings(kw, discern if discernible else None, st)}
                       for name, kw in listed] + [{"name": name, "settings": {}} for name, _ in road],
        "filters": filters,
    }
