"""The inputs of a figure kind: filters (refusing none), illuminant, observers and surface set on one grid.

Public: :func:`load_filters_checked`, :func:`load_inputs`.
"""

from __future__ import annotations

from ..spectra.grid import DEFAULT_GRID

__all__ = ["load_filters_checked", "load_inputs"]


def load_filters_checked(filters, grid=DEFAULT_GRID):
    from ..errors import InputError
    from ..spectra.filters import load_filters

    if filters is None or (isinstance(filters, (list, tuple)) and not filters):
        raise InputError("no filters given", hint="give a filter file, an example name or a spec")
    return load_filters(filters, grid=grid)


def load_inputs(filters=None, *, illuminant="D65", observers=None, surfaces=None, grid=DEFAULT_GRID):
    """Resolve the usual inputs; returns a dict with the loaded objects (None where not asked)."""
    from ..observers.observer import observer
    from ..spectra.illuminants import illuminant as make_illuminant
    from ..spectra.surfaces import surface_set

    out = {"grid": grid}
    out["filters"] = None if filters is None else load_filters_checked(filters, grid)
    out["illuminant"] = make_illuminant(illuminant, grid)
    if observers is not None:
        if isinstance(observers, str) or not hasattr(observers, "__iter__"):
            observers = [observers]
        out["observers"] = [observer(o, grid) for o in observers]
    if surfaces is not None:
        out["surfaces"] = surface_set(surfaces, grid)
    return out
