"""Surface sets: reflectance spectra of test samples on the grid.

Names::

    ces99          the 99 colour evaluation samples of CIE 224:2017 / IES TM-30 (colour-science)
    chart24        a 24-patch colour rendition chart, N. Ohta's spectral measurements (colour-science)
    tcs14          CIE 13.3 test colour samples 1-14 (colour-science)
    vs15           NIST Colour Quality Scale VS1-VS15, v9.0 (colour-science)
    PATH           a reflectance file (same reader as filters; fraction or percent)

Public: :class:`SurfaceSet`, :func:`surface_set`, :data:`SURFACE_SETS`.
"""

from __future__ import annotations

import pathlib
from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from .cache import cached_arrays
from .grid import DEFAULT_GRID, Grid

__all__ = ["SurfaceSet", "surface_set", "SURFACE_SETS"]

SURFACE_SETS = {
    "ces99": "CIE 224:2017 / ANSI/IES TM-30 colour evaluation samples (99)",
    "chart24": "24-patch colour rendition chart, N. Ohta's measurements (24)",
    "tcs14": "CIE 13.3 test colour samples 1-14",
    "vs15": "NIST CQS 9.0 samples VS1-VS15",
}


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


def _build(name: str, grid: Grid) -> dict:
    import colour

    from .grid import resample

    if name == "ces99":
        from colour.quality.cfi2017 import load_TCS_CIE2017

        msds = load_TCS_CIE2017(colour.SpectralShape(380, 780, 1))
        wl, vals, labels = msds.wavelengths, msds.values, list(msds.labels)
    else:
        if name == "chart24":
            sds = colour.SDS_COLOURCHECKERS["ColorChecker N Ohta"]
        elif name == "tcs14":
            sds = dict(list(colour.quality.datasets.SDS_TCS["CIE 1995"].items())[:14])
        else:
            sds = colour.quality.datasets.SDS_VS["NIST CQS 9.0"]
        labels = list(sds.keys())
        first = next(iter(sds.values()))
        wl = first.wavelengths
        vals = np.stack([sds[k].values for k in labels], axis=1)
    # Sprague interpolation (CIE 15 practice for smooth, regularly sampled data).
    method = "sprague" if len(wl) >= 6 and np.ptp(np.diff(wl)) < 1e-9 else "linear"
    refl = resample(wl, vals, grid, method=method, outside="edge")
    return {"reflectance": np.clip(refl, 0.0, 1.0), "labels": np.array(labels)}


def surface_set(spec: str | SurfaceSet = "ces99", grid: Grid = DEFAULT_GRID) -> SurfaceSet:
    """Load a named surface set or a reflectance file onto the grid."""
    if isinstance(spec, SurfaceSet):
        return spec
    key = str(spec).strip()
    if key.lower() in SURFACE_SETS:
        key = key.lower()
        data = cached_arrays(f"surfaces-{key}-{grid.key()}", lambda: _build(key, grid))
        return SurfaceSet(key, tuple(str(x) for x in data["labels"]), data["reflectance"], grid,
                          f"colour-science: {SURFACE_SETS[key]}")
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
