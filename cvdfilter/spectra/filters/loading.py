"""Loading filters from anything a user hands over: specs, paths, example names, colour-science spectra,
arrays; names made unique within a call.

Public: :func:`load_filters`.
"""

from __future__ import annotations

import pathlib

import numpy as np

from ...errors import InputError, clip_text
from ..grid import DEFAULT_GRID, Grid
from .filter_set import FilterSet, check_members
from .specs import parse_filter_spec

__all__ = ["load_filters"]


def _unique_names(fs: FilterSet) -> FilterSet:
    """Make names unique within a run (never merged).

    Files of the same stem in different folders get their folder in front (``batch1/lens``,
    ``batch2/lens``); any name still repeated gets ``#2``, ``#3``... on its second and later uses.
    """
    given = list(fs.names)
    groups: dict = {}
    for i, n in enumerate(given):
        groups.setdefault(n, []).append(i)
    for n, idx in groups.items():
        if len(idx) < 2:
            continue
        files = [fs.info[i].get("file") if i < len(fs.info) else None for i in idx]
        if all(files):
            parents = [pathlib.Path(str(f)).resolve().parent.name for f in files]
            if len(set(parents)) == len(parents):
                for i, parent in zip(idx, parents):
                    given[i] = f"{parent}/{n}"
    seen: dict = {}
    names = []
    for n in given:
        k = seen.get(n, 0) + 1
        seen[n] = k
        names.append(n if k == 1 else f"{n} #{k}")
    taken = set(names)
    if len(taken) != len(names):  # a generated name collided with a given one: number every filter
        names = [f"{n} #{i + 1}" for i, n in enumerate(given)]
    if tuple(names) == fs.names:
        return fs
    return FilterSet(tuple(names), fs.transmittance, fs.grid, fs.sources, fs.info)


def load_filters(filters, *, grid: Grid = DEFAULT_GRID, units: str | None = None,
                 bandwidth: float | None = None) -> FilterSet:
    """Load filters from specs, paths, example names, colour-science spectra or arrays.

    Parameters
    ----------
    filters
        One item or a list of items. Each item is a spec string (or path or
        example name; a file term may select a column and set its own units:
        ``lenses.csv:"Lens A"``, ``lenses.csv:2``, ``lens.csv@units=od``), a
        ``colour.SpectralDistribution`` or ``colour.MultiSpectralDistributions``
        (values as fractions), a ``(wavelengths, transmittance)`` tuple, a
        :class:`FilterSet`, or an array already on ``grid`` of shape (n_wl,) or
        (n_filters, n_wl).
    grid
        The wavelength grid.
    units
        Units for every file that does not set its own (``fraction``,
        ``percent``, ``od``); default: the header's unit word, else the values
        when they allow only one reading, else an error asking for the units.
    bandwidth
        Instrument bandwidth in nm for files: apply the Stearns & Stearns correction.

    Returns
    -------
    FilterSet
        Names are unique within the call: a single-column file is named by its
        stem, a multi-column file ``stem:column``; same stems from different
        folders get the folder in front, other repeats ``#2``, ``#3``.

    Warns
    -----
    cvdfilter.errors.InputWarning
        For each file: extrapolation beyond its measured range, clipping, sorting.
    """
    from ...io.spectra_files import UNITS

    if units is not None and units not in UNITS:
        raise InputError(f"unknown units '{clip_text(units)}'", hint="use fraction, percent or od")
    if bandwidth is not None and not (0 < bandwidth <= 20):
        raise InputError(f"bandwidth {bandwidth:g} nm is outside 0-20 nm")
    if isinstance(filters, (str, pathlib.Path, FilterSet, tuple)) or _is_colour_sd(filters) or (
            isinstance(filters, np.ndarray)):
        filters = [filters]
    result: FilterSet | None = None
    for item in filters:
        fs = _load_one(item, grid, units, bandwidth)
        if result is not None:
            check_members(len(result) + len(fs), "the filter list", grid)
        result = fs if result is None else result.concat(fs)
    if result is None:
        raise InputError("no filters given")
    return _unique_names(result)


def _is_colour_sd(obj) -> bool:
    return type(obj).__name__ in ("SpectralDistribution", "MultiSpectralDistributions")


def _load_one(item, grid, units, bandwidth) -> FilterSet:
    from ..grid import resample

    if isinstance(item, FilterSet):
        if item.grid != grid:
            raise ValueError("FilterSet is on another grid")
        return item
    if isinstance(item, (str, pathlib.Path)):
        return parse_filter_spec(str(item), grid, units=units, bandwidth=bandwidth)
    if _is_colour_sd(item):
        values = np.asarray(item.values, dtype=float)
        values = values[:, None] if values.ndim == 1 else values
        t = resample(item.wavelengths, values, grid, method="linear").T
        labels = getattr(item, "labels", None) or [item.name] * values.shape[1]
        names = tuple(str(x) for x in labels)
        return FilterSet(names, np.clip(t, 0, 1), grid, ("array",) * len(names),
                         tuple({"spec": "colour-science spectral distribution"} for _ in names))
    if isinstance(item, tuple) and len(item) == 2:
        wl, vals = (np.asarray(x, dtype=float) for x in item)
        vals = vals.T if vals.ndim == 2 and vals.shape[0] != len(wl) else vals
        t = np.atleast_2d(resample(wl, vals, grid, method="linear").T)
        names = tuple(f"array:{i + 1}" for i in range(t.shape[0]))
        return FilterSet(names, np.clip(t, 0, 1), grid, ("array",) * len(names), tuple({} for _ in names))
    arr = np.atleast_2d(np.asarray(item, dtype=float))
    if arr.shape[1] != grid.size:
        raise ValueError(f"array filters must have {grid.size} columns (the grid), got {arr.shape}")
    if np.any(arr < 0) or np.any(arr > 1):
        raise ValueError("transmittance must be within 0-1")
    names = tuple(f"array:{i + 1}" for i in range(arr.shape[0]))
    return FilterSet(names, arr, grid, ("array",) * len(names), tuple({} for _ in names))
