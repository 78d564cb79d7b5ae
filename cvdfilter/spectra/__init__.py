"""Spectra: the wavelength grid, filters, illuminants, surface sets and synthetic scenes.

Public names are exported here lazily (imported on first use, so ``cvdfilter --help`` stays fast); each
lives in the submodule :data:`_LAZY` names.
"""

from __future__ import annotations

from .._lazy import lazy_exports

_LAZY = {
    "Grid": ".grid",
    "DEFAULT_GRID": ".grid",
    "resample": ".grid",
    "FilterSet": ".filters",
    "load_filters": ".filters",
    "parse_filter_spec": ".filters",
    "find_features": ".filters",
    "find_notches": ".filters",
    "gaussian_notch": ".filters",
    "flat_notch": ".filters",
    "longpass": ".filters",
    "shortpass": ".filters",
    "neutral_density": ".filters",
    "FILTER_SHAPES": ".filters",
    "SPEC_FORMS": ".filters",
    "Illuminant": ".illuminants",
    "illuminant": ".illuminants",
    "illuminant_names": ".illuminants",
    "ILLUMINANT_KINDS": ".illuminants",
    "SurfaceSet": ".surfaces",
    "surface_set": ".surfaces",
    "SURFACE_SETS": ".surfaces",
    "SURFACE_SET_KINDS": ".surfaces",
    "synthetic_scene": ".scenes",
    "write_scene": ".scenes",
    "cached_arrays": ".cache",
    "memo_arrays": ".cache",
}

__all__ = list(_LAZY)

__getattr__, __dir__ = lazy_exports(__name__, _LAZY)
