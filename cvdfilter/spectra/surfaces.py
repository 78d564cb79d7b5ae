"""Surface sets: reflectance spectra of test samples on the grid.

Names::

    ces99          the 99 colour evaluation samples of CIE 224:2017 / IES TM-30 (colour-science)
    chart24        a 24-patch colour rendition chart, N. Ohta's spectral measurements (colour-science)
    tcs14          CIE 13.3 test colour samples 1-14 (colour-science)
    vs15           NIST Colour Quality Scale VS1-VS15, v9.0 (colour-science)
    munsell        Munsell renotation colours, smooth reflectances recovered by Jakob & Hanika 2019
                   (:mod:`cvdfilter.spectra.munsell`; metamers of the published colours, not measured chips)
    PATH           a reflectance file (same reader as filters; fraction or percent)

Public: :class:`SurfaceSet`, :class:`SurfaceSetKind`, :func:`surface_set`, :data:`SURFACE_SET_KINDS`,
:data:`SURFACE_SETS`.
"""

from __future__ import annotations

import pathlib
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from .cache import cached_arrays
from .grid import DEFAULT_GRID, Grid

__all__ = ["SurfaceSet", "SurfaceSetKind", "surface_set", "SURFACE_SETS", "SURFACE_SET_KINDS"]

@dataclass(frozen=True)
class SurfaceSet:
    """Reflectance samples.

    Attributes
    ----------
    name : str
    labels : tuple of str
        One label per sample.
    reflectance : numpy.ndarray
        Fractions 0-1, shape (n_wl, n_samples).
    grid : Grid
    source : str
    """

    name: str
    labels: tuple
    reflectance: np.ndarray
    grid: Grid = DEFAULT_GRID
    source: str = ""

    def __len__(self) -> int:
        return self.reflectance.shape[1]


def _resampled(wl, vals, labels) -> Callable[[Grid], dict]:
    def build(grid: Grid) -> dict:
        from .grid import resample

        # Sprague interpolation (CIE 15 practice for smooth, regularly sampled data).
        method = "sprague" if len(wl) >= 6 and np.ptp(np.diff(wl)) < 1e-9 else "linear"
        refl = resample(wl, vals, grid, method=method, outside="edge")
        return {"reflectance": np.clip(refl, 0.0, 1.0), "labels": np.array(labels)}

    return build


def _from_sds(sds: dict) -> Callable[[Grid], dict]:
    labels = list(sds.keys())
    wl = next(iter(sds.values())).wavelengths
    return _resampled(wl, np.stack([sds[k].values for k in labels], axis=1), labels)


def _ces99(grid: Grid) -> dict:
    import colour
    from colour.quality.cfi2017 import load_TCS_CIE2017

    msds = load_TCS_CIE2017(colour.SpectralShape(380, 780, 1))
    return _resampled(msds.wavelengths, msds.values, list(msds.labels))(grid)


def _chart24(grid: Grid) -> dict:
    import colour

    return _from_sds(colour.SDS_COLOURCHECKERS["ColorChecker N Ohta"])(grid)


def _tcs14(grid: Grid) -> dict:
    import colour

    return _from_sds(dict(list(colour.quality.datasets.SDS_TCS["CIE 1995"].items())[:14]))(grid)


def _vs15(grid: Grid) -> dict:
    import colour

    return _from_sds(colour.quality.datasets.SDS_VS["NIST CQS 9.0"])(grid)


def _munsell(grid: Grid) -> dict:
    from .munsell import munsell_reflectance, munsell_table

    return {"reflectance": munsell_reflectance(grid), "labels": munsell_table()["labels"]}


@dataclass(frozen=True)
class SurfaceSetKind:
    """One named surface set: what it is, where its data come from, and how it is built on a grid.

    ``build(grid)`` returns ``{"reflectance": (n_wl, n_samples), "labels": (n_samples,)}``; ``cached``
    sets go through the on-disk reference cache (reference data from a library), the others are
    evaluated on the grid each time.
    """

    description: str
    source: str
    build: Callable[[Grid], dict]
    cached: bool = True


#: Every named surface set, in the order ``cvdfilter list surfaces`` shows them. The loader, ``list`` and the
#: docs read this mapping; a new set is one entry here.
SURFACE_SET_KINDS = {
    "ces99": SurfaceSetKind("CIE 224:2017 / ANSI/IES TM-30 colour evaluation samples (99)", "colour-science",
                            _ces99),
    "chart24": SurfaceSetKind("24-patch colour rendition chart, N. Ohta's measurements (24)", "colour-science",
                              _chart24),
    "tcs14": SurfaceSetKind("CIE 13.3 test colour samples 1-14", "colour-science", _tcs14),
    "vs15": SurfaceSetKind("NIST CQS 9.0 samples VS1-VS15", "colour-science", _vs15),
    # three coefficients per colour, evaluated exactly on the grid (no cache needed)
    "munsell": SurfaceSetKind("Munsell renotation colours (2734), smooth metamers recovered by Jakob & Hanika 2019",
                              "cvdfilter data", _munsell, cached=False),
}
#: Name -> description of every named set (read from :data:`SURFACE_SET_KINDS`).
SURFACE_SETS = {name: kind.description for name, kind in SURFACE_SET_KINDS.items()}


def surface_set(spec: str | SurfaceSet = "ces99", grid: Grid = DEFAULT_GRID) -> SurfaceSet:
    """Load a named surface set or a reflectance file onto the grid."""
    if isinstance(spec, SurfaceSet):
        return spec
    key = str(spec).strip()
    kind = SURFACE_SET_KINDS.get(key.lower())
    if kind is not None:
        key = key.lower()
        if not kind.cached:
            data = kind.build(grid)
            return SurfaceSet(key, data["labels"], data["reflectance"], grid, f"{kind.source}: {kind.description}")
        data = cached_arrays(f"surfaces-{key}-{grid.key()}", lambda: kind.build(grid))
        return SurfaceSet(key, tuple(str(x) for x in data["labels"]), data["reflectance"], grid,
                          f"{kind.source}: {kind.description}")
    path = pathlib.Path(key)
    if path.exists():
        from ..io.spectra_files import read_spectra
        from .grid import resample

        table = read_spectra(path, kind="reflectance")
        refl = resample(table.wavelengths, table.values.T, grid, method="linear", outside="edge")
        return SurfaceSet(path.name, tuple(table.names), np.clip(refl, 0, 1), grid, f"file {path}")
    from ..errors import clip_text, did_you_mean

    close = did_you_mean(key, SURFACE_SETS)
    raise InputError(f"unknown surface set '{clip_text(key)}'" + (f"; {close}" if close else ""),
                     hint=f"use one of {', '.join(SURFACE_SETS)} or a file")
