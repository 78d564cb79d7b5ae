"""Filters made chunk by chunk: a sweep of a million filters without holding a million transmittances.

:func:`cvdfilter.load_filters` builds every filter at once and caps one spec at
:data:`~cvdfilter.spectra.filters.MAX_SWEEP_MEMBERS` filters (the transmittance of a 10^6 x 401 sweep is
3.2 GB as float64). A :class:`FilterSource` keeps a parametric sweep as its parameter values and builds
filters ``lo:hi`` when a chunk asks for them (:meth:`FilterSource.chunk`), in the order, with the names and
the values :func:`~cvdfilter.load_filters` gives (``tests/test_scale.py`` checks the bits). Anything else
(files, examples, stacks, arrays) is loaded once, as today.

Public: :class:`FilterSource`, :data:`MAX_STREAM_FILTERS`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from .errors import InputError

__all__ = ["FilterSource", "MAX_STREAM_FILTERS"]

#: Most filters one streamed run may describe (a guard against a typo in a step, not a memory limit).
MAX_STREAM_FILTERS = 10**9


@dataclass(frozen=True)
class _Sweep:
    """One parametric spec, kept as its parameter values (the filters of :func:`itertools.product` order)."""

    spec: str
    kind: str
    keys: tuple
    values: tuple  # per key, its values (in the order of ``keys``)
    words: dict = field(default_factory=dict)

    @property
    def size(self) -> int:
        return math.prod(len(v) for v in self.values)

    def build(self, lo: int, hi: int, grid) -> Any:
        """Filters ``lo:hi`` of the sweep as a FilterSet (the construction of
        ``spectra.filters.specs.parametric_filters``, on the rows of the product that the chunk covers)."""
        from .spectra.filters.specs import parametric_filters

        idx = np.unravel_index(np.arange(lo, hi), [len(v) for v in self.values])  # C order = product order
        p = {k: np.asarray(v, dtype=float)[i] for k, v, i in zip(self.keys, self.values, idx)}
        return parametric_filters(self.kind, self.keys, p, self.words, grid)


def _sweep(spec: str) -> _Sweep | None:
    """The sweep a single parametric spec describes (values checked now), else None."""
    from .spectra.filters.specs import _check_ranges, _count, _parametric_params, _parse_value, is_parametric

    text = spec.strip()
    if "*" in text or not is_parametric(text):
        return None
    kind, params, words = _parametric_params(text, text)
    keys = tuple(sorted(params))
    n = math.prod(_count(params[k], k, text) for k in keys)
    if n > MAX_STREAM_FILTERS:
        raise InputError(f"describes {n:,} filters; at most {MAX_STREAM_FILTERS:,} in one streamed run",
                         source=text, hint="use coarser sweep steps")
    values = {k: _parse_value(params[k], k, text) for k in keys}
    _check_ranges(values, text)  # every value of every parameter, before any chunk runs
    return _Sweep(text, kind, keys, tuple(values[k] for k in keys), dict(words))


@dataclass(frozen=True, eq=False)
class FilterSource:
    """The filters of a run as parts: sweeps (built per chunk) and loaded FilterSets, in the order given.

    Build with :meth:`from_specs`; ``len(source)`` filters; :meth:`chunk` gives filters ``lo:hi``.
    """

    parts: tuple
    grid: Any

    @classmethod
    def from_specs(cls, filters, *, grid=None, units: str | None = None,
                   bandwidth: float | None = None) -> FilterSource:
        """Sweeps stay sweeps; other items are loaded with :func:`cvdfilter.load_filters` (their names made
        unique together, as one call would)."""
        import pathlib

        from .spectra.filters import FilterSet, load_filters
        from .spectra.filters.loading import _unique_names
        from .spectra.grid import DEFAULT_GRID

        if grid is None:
            grid = filters.grid if isinstance(filters, FilterSet) else DEFAULT_GRID
        if isinstance(filters, (str, pathlib.Path, FilterSet, tuple, np.ndarray)):
            filters = [filters]
        items = list(filters)
        if not items:
            raise InputError("no filters given")
        parts: list = []
        loaded: list = []  # (index in parts, FilterSet)
        for item in items:
            sw = _sweep(item) if isinstance(item, str) else None
            if sw is not None:
                parts.append(sw)
            else:
                fs = load_filters(item, grid=grid, units=units, bandwidth=bandwidth)
                loaded.append(len(parts))
                parts.append(fs)
        if len(loaded) > 1:  # unique names across the loaded items, as load_filters gives in one call
            whole = _unique_names(FilterSet(
                sum((parts[i].names for i in loaded), ()), np.concatenate([parts[i].transmittance for i in loaded]),
                grid, sum((parts[i].sources for i in loaded), ()), sum((parts[i].info for i in loaded), ())))
            at = 0
            for i in loaded:
                n = len(parts[i])
                parts[i] = FilterSet(whole.names[at:at + n], parts[i].transmittance, grid, parts[i].sources,
                                     parts[i].info)
                at += n
        total = sum(p.size if isinstance(p, _Sweep) else len(p) for p in parts)
        if total > MAX_STREAM_FILTERS:
            raise InputError(f"the filter list describes {total:,} filters; at most {MAX_STREAM_FILTERS:,}")
        return cls(tuple(parts), grid)

    def _sizes(self) -> list:
        return [p.size if isinstance(p, _Sweep) else len(p) for p in self.parts]

    def __len__(self) -> int:
        return sum(self._sizes())

    def describe(self) -> list:
        """Per part: the sweep spec and its count, or the loaded filters' names and a hash of their values."""
        import hashlib

        out = []
        for p in self.parts:
            if isinstance(p, _Sweep):
                out.append({"sweep": p.spec, "filters": p.size})
            else:
                out.append({"filters": len(p), "names": hashlib.sha256("\n".join(p.names).encode()).hexdigest(),
                            "sha256": hashlib.sha256(np.ascontiguousarray(p.transmittance).tobytes()).hexdigest()})
        return out

    def probe(self) -> Any:
        """The first filter of every part (a small FilterSet whose rows show every column layout)."""
        from .spectra.filters import FilterSet

        sets = [p.build(0, 1, self.grid) if isinstance(p, _Sweep) else
                FilterSet(p.names[:1], p.transmittance[:1], self.grid, p.sources[:1], p.info[:1])
                for p in self.parts]
        out = sets[0]
        for s in sets[1:]:
            out = out.concat(s)
        return out

    def chunk(self, lo: int, hi: int) -> Any:
        """Filters ``lo:hi`` of the run as a FilterSet."""
        from .spectra.filters import FilterSet

        sets = []
        start = 0
        for p, n in zip(self.parts, self._sizes()):
            a, b = max(lo, start), min(hi, start + n)
            if a < b:
                if isinstance(p, _Sweep):
                    sets.append(p.build(a - start, b - start, self.grid))
                else:
                    s = slice(a - start, b - start)
                    sets.append(FilterSet(p.names[s], p.transmittance[s], self.grid, p.sources[s], p.info[s]))
            start += n
        if not sets:
            raise ValueError(f"no filters in {lo}:{hi}")
        out = sets[0]
        for s in sets[1:]:
            out = out.concat(s)
        return out
