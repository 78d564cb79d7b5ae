"""The views a rendering shows and the folded transform of each.

Public: :class:`ViewTransform`, :func:`render_method`, :func:`check_view`, :data:`VIEWS`,
:data:`VIEW_TITLES`, :data:`GAMUT_MODES`, :data:`OUTPUT_FORMATS`, :data:`RENDER_METHODS`.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..errors import InputError
from ..observers.operator import PiecewiseLinear

__all__ = ["ViewTransform", "render_method", "check_view", "VIEWS", "VIEW_TITLES", "GAMUT_MODES", "OUTPUT_FORMATS",
           "RENDER_METHODS"]

#: The views, in panel order.
VIEWS = ("original", "filtered", "observer", "observer-filtered")
#: Panel captions; ``{observer}`` and ``{filter}`` are filled in.
VIEW_TITLES = {
    "original": "original",
    "filtered": "normal observer, through {filter}",
    "observer": "{observer}, no filter",
    "observer-filtered": "{observer}, through {filter}",
}
#: Out-of-gamut handling.
GAMUT_MODES = ("clip", "none")
#: Output formats: ``auto`` keeps the input's container (JPEG and cubes give PNG) and bit
#: depth; ``png``/``tiff`` keep the depth where the container holds it; the others force it.
OUTPUT_FORMATS = ("auto", "png", "png8", "png16", "tiff", "tiff8", "tiff16", "tiff-float", "jpeg")


#: The simulation each kind of observer gets when rendering, unless ``method`` says otherwise.
#: Dichromats: Brettel's half-planes with the neutral axis at the scene's (adapting) white, so that
#: after von Kries adaptation a white stays white for the dichromat as for the normal observer;
#: the paper's own neutral axis (``brettel1997``, the equal-energy stimulus) tints an adapted D65
#: white by 0.5-5 CIEDE2000 and an illuminant-A white by about 20 (docs/models.md, section 5).
RENDER_METHODS = {"normal": "identity", "dichromat": "brettel-adapted", "anomalous": "machado2009"}


def render_method(obs, method: str | None = None) -> str:
    """The simulation method a rendering uses for ``obs``: ``method`` if given, else :data:`RENDER_METHODS`."""
    return RENDER_METHODS[obs.kind] if method is None else method


@dataclass(frozen=True, eq=False)
class ViewTransform:
    """Everything one view needs, folded.

    Attributes
    ----------
    view : str
    observer : str
        Spec of the observer the view shows.
    filter : str or None
        Name of the filter the view looks through (None: no filter).
    method : str
        Simulation method (``identity`` for normal observers).
    transmittance : numpy.ndarray
        Filter on the grid, (n_wl,), fraction (ones without a filter).
    fundamentals : numpy.ndarray
        The observer's fundamentals, (n_wl, 3).
    gains : numpy.ndarray
        Von Kries gains (3,) for a scene whose unfiltered white is the
        illuminant as given (Y = 100).
    spectral_weights : numpy.ndarray
        (n_wl, 3): reflectance on the grid (per 1 nm sample) to the observer's
        adapted L, M, S: ``E T F diag(gains)``.
    lms_to_rgb : PiecewiseLinear
        Adapted L, M, S to linear sRGB, simulation and display folded
        (column vectors, see :mod:`cvdfilter.observers.operator`).
    rgb : PiecewiseLinear
        Linear sRGB in to linear sRGB out, the whole image pipeline.
    """

    view: str
    observer: str
    filter: str | None
    method: str
    transmittance: np.ndarray
    fundamentals: np.ndarray
    gains: np.ndarray
    spectral_weights: np.ndarray
    lms_to_rgb: PiecewiseLinear
    rgb: PiecewiseLinear
    info: dict = field(default_factory=dict)

    @property
    def rgb_matrices(self) -> np.ndarray:
        """(k, 3, 3): :attr:`rgb` for row vectors (pixels): ``out = rgb_in @ rgb_matrices[i]``."""
        return self.rgb.row_matrices

    @property
    def rgb_separator(self) -> np.ndarray | None:
        """(3,): ``rgb_matrices[0]`` applies where ``rgb_in @ rgb_separator >= 0``; None for one matrix."""
        return self.rgb.separator

    @property
    def is_identity(self) -> bool:
        return len(self.rgb_matrices) == 1 and np.allclose(self.rgb_matrices[0], np.eye(3), rtol=0, atol=1e-12)


def check_view(view: str) -> str:
    v = str(view).strip().lower()
    if v not in VIEWS:
        raise InputError(f"unknown view '{view}'", hint="use " + ", ".join(VIEWS))
    return v
