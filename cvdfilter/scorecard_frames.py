"""A scorecard as a pandas DataFrame or an xarray Dataset, for notebooks (optional dependencies, lazy).

- :func:`to_dataframe` (``Scorecard.to_dataframe()``): one row per filter x observer (x statistic for a
  population: mean, sd, p2_5, p50, p97_5 over its members), the per-filter numbers repeated on each of the
  filter's rows, at full precision (the JSON and CSV round). Pair statistics of a filter that leaves a cone
  no light are NaN (the JSON's null).
- :func:`to_xarray` (``Scorecard.to_xarray()``): ``xarray.Dataset`` with the variable ``value`` over the
  dimensions (filter, observer, member, metric): every member's value of every per-observer metric (a fixed
  observer is member 0; members beyond an observer's ``n_members`` are NaN), and the per-filter numbers as
  variables over ``filter``. ``attrs`` carry the tool, version, caveat and settings.

Needs ``pip install 'cvdfilter[frames]'`` (pandas, xarray).

Public: :func:`to_dataframe`, :func:`to_xarray`, :func:`observer_metrics`.
"""

from __future__ import annotations

import json

import numpy as np

__all__ = ["to_dataframe", "to_xarray", "observer_metrics"]

#: Keys that are not pair statistics (kept for filters that leave a cone no light).
_NOT_MASKED = ("luminance_contrast_gain", "red_green_gain", "blue_yellow_gain")


def _need(module: str):
    import importlib

    try:
        return importlib.import_module(module)
    except ImportError:
        from .errors import InputError

        raise InputError(f"this view needs {module}", hint="pip install 'cvdfilter[frames]'") from None


def _filter_columns(card) -> dict:
    """Per-filter arrays as 1-D columns (``chromaticity`` -> ``chromaticity_x``/``_y``, vectors numbered)."""
    out = {}
    for key, v in card.results.items():
        v = np.asarray(v)
        if key == "chromaticity":
            out["chromaticity_x"], out["chromaticity_y"] = v[:, 0], v[:, 1]
        elif v.ndim == 1:
            out[key] = v
        elif v.ndim == 2:
            for j in range(v.shape[1]):
                out[f"{key}_{j + 1}"] = v[:, j]
    return out


def observer_metrics(card) -> list:
    """The per-observer metric names of the card, in first-seen order (``undefined`` left out)."""
    names: list = []
    for o in card.per_observer:
        for key in o:
            if key != "undefined" and key not in names:
                names.append(key)
    return names


def _member_values(card, k: int, key: str) -> np.ndarray:
    """(filters, members) float values of metric ``key`` for observer ``k``, NaN where undefined or absent."""
    n_f = len(card)
    o = card.per_observer[k]
    pop = getattr(card.observers[k], "n", None)
    n_m = int(pop) if pop is not None and type(card.observers[k]).__name__ == "Population" else 1
    if key not in o:
        return np.full((n_f, n_m), np.nan)
    v = np.asarray(o[key], dtype=float)
    if v.ndim == 0:
        v = np.full((n_f, n_m), float(v))
    elif n_m == 1 and v.ndim == 1:
        v = v[:, None]
    elif v.ndim == 1:  # (members,): does not depend on the filter
        v = np.broadcast_to(v[None, :], (n_f, n_m))
    undefined = o.get("undefined")
    if undefined is not None and key not in _NOT_MASKED:
        u = np.asarray(undefined, dtype=bool)
        v = np.where(u[:, None] if u.ndim == 1 else u, np.nan, v)
    return np.array(v, dtype=float)


def to_dataframe(card):
    """One row per filter x observer (x statistic for populations); see the module docstring."""
    pd = _need("pandas")
    from .score_population import STATS, is_population

    n_f = len(card)
    per_filter = _filter_columns(card)
    metrics = observer_metrics(card)
    frames = []
    for k, obs in enumerate(card.observers):
        if is_population(obs):
            stats, _ = card._population_summaries[k]
            for stat in STATS:
                cols = {"filter": list(card.filters.names), "observer": obs.spec, "statistic": stat,
                        **per_filter}
                for key in metrics:
                    s = stats.get(key)
                    cols[key] = (np.full(n_f, np.nan) if s is None else
                                 np.broadcast_to(np.asarray(s[stat], dtype=float), (n_f,)))
                frames.append(pd.DataFrame(cols))
        else:
            cols = {"filter": list(card.filters.names), "observer": obs.spec, "statistic": None, **per_filter}
            for key in metrics:
                cols[key] = _member_values(card, k, key)[:, 0]
            frames.append(pd.DataFrame(cols))
    df = pd.concat(frames, ignore_index=True)
    order = np.argsort(np.tile(np.arange(n_f), len(frames)), kind="stable")  # filter-major, as the CSV
    df = df.iloc[order].reset_index(drop=True)
    if not any(is_population(o) for o in card.observers):
        df = df.drop(columns="statistic")
    df.attrs.update(_attrs(card))
    return df


def _attrs(card) -> dict:
    head = card.header()
    return {"tool": head["tool"], "version": head["version"], "caveat": head["caveat"],
            "settings": json.dumps(card.settings, default=str), "inputs": json.dumps(card.inputs, default=str)}


def to_xarray(card):
    """``xarray.Dataset``: ``value`` over (filter, observer, member, metric) and per-filter variables."""
    xr = _need("xarray")
    from .score_population import is_population

    metrics = observer_metrics(card)
    n_members = [int(o.n) if is_population(o) else 1 for o in card.observers]
    n_m = max(n_members)
    value = np.full((len(card), len(card.observers), n_m, len(metrics)), np.nan)
    for k in range(len(card.observers)):
        for j, key in enumerate(metrics):
            value[:, k, :n_members[k], j] = _member_values(card, k, key)
    data = {"value": (("filter", "observer", "member", "metric"), value)}
    for key, v in _filter_columns(card).items():
        if v.dtype.kind in "fiub":
            data[key] = (("filter",), np.asarray(v))
        else:
            data[key] = (("filter",), np.asarray(v, dtype=str))
    coords = {"filter": list(card.filters.names), "observer": [o.spec for o in card.observers],
              "member": np.arange(n_m), "metric": metrics, "n_members": ("observer", n_members)}
    return xr.Dataset(data, coords=coords, attrs=_attrs(card))
