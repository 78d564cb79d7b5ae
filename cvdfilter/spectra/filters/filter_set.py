"""The container of many filters on one grid, and the limits on how many one spec may describe.

Public: :class:`FilterSet`, :data:`MAX_SWEEP_MEMBERS`, :data:`MAX_FILTER_VALUES`, :func:`check_members`.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ...errors import InputError
from ..grid import DEFAULT_GRID, Grid

__all__ = ["FilterSet", "MAX_SWEEP_MEMBERS", "MAX_FILTER_VALUES", "check_members"]

#: Most filters one spec (a sweep or a stack) may describe, checked before anything is allocated.
MAX_SWEEP_MEMBERS = 50_000
#: Most transmittance values (filters x grid wavelengths) one spec may describe (160 MB as float64).
MAX_FILTER_VALUES = MAX_SWEEP_MEMBERS * 401


@dataclass(frozen=True)
class FilterSet:
    """Many filters on one grid.

    Attributes
    ----------
    names : tuple of str
        One name per filter.
    transmittance : numpy.ndarray
        Spectral transmittance, fraction 0-1, shape (n_filters, n_wl).
    grid : Grid
        The wavelength grid.
    sources : tuple of str
        Where each filter came from (``spec``, ``example``, ``file``, ``array``).
    info : tuple of dict
        Per filter: the spec or path, units and why, warnings, a SHA-256 of the file.
    """

    names: tuple
    transmittance: np.ndarray
    grid: Grid = DEFAULT_GRID
    sources: tuple = ()
    info: tuple = field(default=())

    def __post_init__(self) -> None:
        t = self.transmittance
        if t.ndim != 2 or t.shape[1] != self.grid.size:
            raise ValueError(f"transmittance must be (n_filters, {self.grid.size}), got {t.shape}")
        if len(self.names) != t.shape[0]:
            raise ValueError("one name per filter is needed")

    def __len__(self) -> int:
        return self.transmittance.shape[0]

    @property
    def wavelengths(self) -> np.ndarray:
        return self.grid.wavelengths

    def concat(self, other: FilterSet) -> FilterSet:
        if other.grid != self.grid:
            raise ValueError("filter sets on different grids")
        return FilterSet(self.names + other.names, np.vstack([self.transmittance, other.transmittance]),
                         self.grid, self.sources + other.sources, self.info + other.info)

    def stack(self, other: FilterSet) -> FilterSet:
        """Every filter of self times every filter of other (outer product)."""
        t = (self.transmittance[:, None, :] * other.transmittance[None, :, :]).reshape(-1, self.grid.size)
        names = tuple(f"{a}*{b}" for a in self.names for b in other.names)
        sources = tuple(a if a == b else f"{a}*{b}" for a in self.sources for b in other.sources)
        info = tuple({"parts": [ia, ib]} for ia in self.info for ib in other.info)
        return FilterSet(names, t, self.grid, sources, info)


def check_members(n: int, spec: str, grid: Grid) -> None:
    """Refuse a spec whose filters would exceed the limits, before allocating them."""
    if n > MAX_SWEEP_MEMBERS or n * grid.size > MAX_FILTER_VALUES:
        raise InputError(f"describes {n:,} filters; at most {MAX_SWEEP_MEMBERS:,} per spec "
                         f"({MAX_FILTER_VALUES:,} transmittance values on the grid)", source=spec,
                         hint="use coarser sweep steps or split the sweep")
