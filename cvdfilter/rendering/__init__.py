"""Rendering: images and spectral cubes before and after a filter, for any observer.

The pipeline, per pixel
-----------------------
1. **Decode** sRGB code values to linear-light sRGB (IEC 61966-2-1 transfer
   function, through lookup tables built once with colour-science). Float
   input is already linear.
2. **Reflectance estimate**: ``R(lambda) = r B_r + g B_g + b B_b`` with the
   Mallett & Yuksel (2019) basis for sRGB (colour-science's
   ``MSDS_BASIS_FUNCTIONS_sRGB_MALLETT2019``). The basis is non-negative,
   sums to 1 at every wavelength (so white stays a flat 100 % reflector) and
   is linear in linear RGB. A hyperspectral cube gives ``R`` (or the
   radiance) directly.
3. **Light and filter**: radiance at the eye ``E(lambda) T(lambda) R(lambda)``
   with the illuminant ``E`` and the filter's transmittance ``T``.
4. **Cone excitations** of the chosen observer (its own fundamentals).
5. **Von Kries adaptation** (:func:`cvdfilter.observers.spaces.von_kries_gains`):
   the observer is adapted to the illuminant; ``adaptation`` says how far it
   also adapts to the filter (``full`` = 1: the white seen through the filter
   becomes (1, 1, 1); ``none`` = 0: the white without the filter stays
   (1, 1, 1), so a tint or a darkening shows; a fraction interpolates
   geometrically).
6. **Simulation for a normal viewer**
   (:func:`cvdfilter.observers.simulate.simulation`): identity for normal
   observers; for dichromats Brettel's half-planes with the neutral axis at
   the scene's white (``brettel-adapted``, default) or any other method by
   name (``brettel1997`` as published, ``vienot1999``, ``brettel-plane``); the
   Machado 2009 mapping for anomalous trichromats with the cone-level
   normalisation (default) or Machado's opponent one. Its reference white is
   the scene's white (the illuminant). Output: the normal base observer's
   adapted L, M, S.
7. **Display**: adapted L, M, S to linear sRGB through the *display model*
   below, then out-of-gamut handling and sRGB encoding.

Steps 2-7 are linear except for Brettel's choice of half-plane, so they fold
into one 3x3 matrix per pixel (two for Brettel, chosen per pixel by the sign
of ``rgb . separator``). For a cube, steps 3-5 fold into one (bands x 3)
matrix, then the 3x3 of steps 6-7. Pixels go through in tiles of
:data:`TILE_PIXELS`, so memory stays bounded and the working set stays in
cache; there is no Python loop over pixels.

The display model
-----------------
Linear sRGB ``rgb`` is shown as the normal base observer's adapted cone
excitations of the Mallett-Yuksel spectrum ``B rgb`` under CIE D65:
``lms = D rgb`` with ``D = diag(1 / w) B^T diag(E_D65) F``, ``w`` the
excitations of the D65 white. The way back is ``D^-1``. So a normal observer
with no filter under D65 reproduces every pixel exactly (up to rounding),
whatever the observer's age or field, and the display white is the adapted
white. (The alternative, the sRGB primaries through CIE 1931 XYZ, mixes two
observers and does not round-trip exactly.)

Out of gamut
------------
Results outside the display's gamut (a channel below 0 or above 1 by more
than half an output code value) are clipped channel by channel by default
(``gamut="clip"``) and counted; ``gamut="none"`` keeps them for float output.

Modules
-------
- :mod:`.pixels`: sRGB transfer tables and the tile kernel (steps 1 and 7's encoding);
- :mod:`.scene`: the spectral scene and the display model (steps 2 and 7);
- :mod:`.views`: the views and :class:`ViewTransform`, one view folded;
- :mod:`.renderer`: :class:`Renderer`, which folds steps 2-7 per view and applies them to images and cubes;
- :mod:`.files`: rendering files (output names and types, fingerprints, :func:`render_file`);
- this package: the convenience functions :func:`render`, :func:`render_views`, :func:`render_spectra`.

The 2x2 panel is a figure: :mod:`cvdfilter.figures.render_panel` (re-exported here as :func:`panel`).

Public: :func:`render`, :func:`render_views`, :func:`render_spectra`, :class:`Renderer`,
:class:`ViewTransform`, :func:`mallett_basis`, :func:`display_matrix`, :func:`decode_srgb`,
:func:`encode_srgb`, :func:`panel`, :func:`render_file`, :data:`VIEWS`, :data:`VIEW_TITLES`,
:data:`TILE_PIXELS`.

References
----------
Mallett, I., & Yuksel, C. (2019). Spectral Primary Decomposition for Rendering
with sRGB Reflectance. Eurographics Symposium on Rendering.
IEC 61966-2-1:1999, Multimedia systems - Colour measurement and management -
Default RGB colour space - sRGB.
Brettel, H., Vienot, F., & Mollon, J. D. (1997). JOSA A, 14(10), 2647-2655.
Vienot, F., Brettel, H., & Mollon, J. D. (1999). Color Res. Appl., 24(4), 243-252.
Machado, G. M., Oliveira, M. M., & Fernandes, L. A. F. (2009). IEEE TVCG, 15(6), 1291-1298.
"""

from __future__ import annotations

import pathlib
from typing import Any

import numpy as np

from ..spectra.grid import DEFAULT_GRID, Grid
from .files import (file_checksum, output_dtype, output_fingerprint, output_suffix, panel_footer, panel_titles,
                    read_render_input, render_file, settings_fingerprint)
from .pixels import TILE_PIXELS, decode_srgb, encode_srgb
from .pixels import _Kernel  # noqa: F401  (tests reach the kernel here)
from .renderer import Renderer
from .scene import display_matrix, mallett_basis
from .views import (GAMUT_MODES, OUTPUT_FORMATS, RENDER_METHODS, VIEW_TITLES, VIEWS, ViewTransform, check_view,
                    render_method)

__all__ = ["render", "render_views", "render_spectra", "render_file", "Renderer", "ViewTransform", "mallett_basis",
           "render_method", "RENDER_METHODS",
           "display_matrix", "decode_srgb", "encode_srgb", "panel", "panel_titles", "panel_footer", "output_suffix",
           "output_dtype", "VIEWS", "VIEW_TITLES", "GAMUT_MODES", "OUTPUT_FORMATS", "TILE_PIXELS", "file_checksum",
           "settings_fingerprint", "output_fingerprint", "read_render_input"]


def __getattr__(name: str) -> Any:
    # The panel is a figure (matplotlib): found here, where callers have always found it, and imported only
    # when asked for. render_file looks it up here at call time.
    if name == "panel":
        from ..figures.render_panel import panel

        return panel
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


def _as_input(image, *, cube_kind, wavelengths, max_megapixels):
    """A file read as a Cube or ImageData; a Cube, ImageData or array as it is."""
    from ..io.cubes import Cube
    from ..io.images import ImageData

    if isinstance(image, (str, pathlib.Path)):
        return read_render_input(pathlib.Path(image), cube_kind=cube_kind, wavelengths=wavelengths,
                                 max_megapixels=max_megapixels)
    if isinstance(image, (Cube, ImageData)):
        return image
    return np.asarray(image)


def _render_view(r: Renderer, img, view: str, *, encoding: str, dtype) -> np.ndarray:
    """One view of an input from :func:`_as_input` (cubes: 8-bit unless ``dtype`` says otherwise)."""
    from ..io.cubes import Cube

    if isinstance(img, Cube):
        return r.apply_cube(img, view, dtype=np.uint8 if dtype is None else dtype)[0]
    return r.apply(img, view, encoding=encoding, dtype=dtype)[0]


def render(image, *, filter, observer="normal", illuminant="D65", adaptation="full", view: str = "observer-filtered",
           method: str | None = None, normalisation: str = "cone", scene: str = "reflectance",
           gamut: str = "clip", encoding: str = "auto", dtype=None,
           grid: Grid = DEFAULT_GRID, cube_kind: str | None = None, wavelengths=None,
           max_megapixels: float | None = None) -> np.ndarray:
    """Render one view of an image or a hyperspectral cube.

    Parameters
    ----------
    image : numpy.ndarray, str, path, ImageData or Cube
        An sRGB image array ((H, W), (H, W, 2), (H, W, 3) or (H, W, 4);
        uint8/uint16 code values, or float linear sRGB), an image file
        (PNG, JPEG, TIFF), or a cube (``.npy``, ``.npz``, TIFF with ``wavelengths``).
    filter : str, FilterSet, array or None
        One filter spec, file, example name or transmittance on the grid.
    observer : str
        Observer spec, e.g. ``normal``, ``deuteranope``, ``protanomalous:shift=8``.
    illuminant : str
        The light (see :func:`cvdfilter.spectra.illuminants.illuminant`).
    adaptation : str or float
        ``full``, ``none`` or a fraction 0-1 (adaptation to the filter).
    view : str
        ``original``, ``filtered``, ``observer`` or ``observer-filtered``.
    method : str, optional
        Simulation method (see :class:`Renderer`; default ``brettel-adapted`` for dichromats).
    normalisation : str
        Machado 2009 observers: ``cone`` (von Kries at the cones, default) or
        ``opponent`` (Machado's per-opponent-channel gains); see
        :mod:`cvdfilter.observers.simulate`.
    scene : str
        What an image shows: ``reflectance`` (default: surfaces, Mallett &
        Yuksel 2019, lit by ``illuminant``) or ``display[:PRIMARIES]`` (light
        from a display whose linear drive values are the image's linear sRGB
        values; primaries from colour-science, default ``Typical CRT Brainard
        1997``; ``illuminant`` is then unused for images). Cubes carry their own spectra.
    gamut : str
        ``clip`` or ``none`` (float output only).
    encoding : str
        For arrays: ``auto`` (integers sRGB, floats linear), ``srgb`` or ``linear``.
    dtype : numpy dtype, optional
        Output sample type; default the input's (uint8 for cubes).
    grid : Grid
    cube_kind : str, optional
        ``reflectance`` or ``radiance`` for cube files.
    wavelengths : str or array_like, optional
        Band wavelengths (nm) for cube files.
    max_megapixels : float, optional
        Refuse larger files (default :data:`cvdfilter.io.images.DEFAULT_MAX_MEGAPIXELS`).

    Returns
    -------
    numpy.ndarray
        The input's height, width and sample type; RGB, or RGBA with the
        input's alpha untouched (greyscale input gains colour channels).
        Cubes give (H, W, 3) sRGB.

    Examples
    --------
    >>> img = np.full((2, 2, 3), 128, np.uint8)
    >>> out = render(img, filter="nd:t=0.5", observer="normal")
    >>> out.shape, out.dtype.name, int(out[0, 0, 0])
    ((2, 2, 3), 'uint8', 128)
    """
    r = Renderer(filter, observer=observer, illuminant=illuminant, adaptation=adaptation, method=method,
                 normalisation=normalisation, scene=scene, gamut=gamut, grid=grid)
    img = _as_input(image, cube_kind=cube_kind, wavelengths=wavelengths, max_megapixels=max_megapixels)
    return _render_view(r, img, view, encoding=encoding, dtype=dtype)


def render_views(image, *, filter, observer="normal", illuminant="D65", adaptation="full", views=VIEWS,
                 method: str | None = None, normalisation: str = "cone", scene: str = "reflectance",
                 gamut: str = "clip", encoding: str = "auto", dtype=None,
                 grid: Grid = DEFAULT_GRID, cube_kind: str | None = None, wavelengths=None,
                 max_megapixels: float | None = None) -> dict:
    """Render several views of one image or cube; see :func:`render`.

    Returns
    -------
    dict
        View name -> array, in the order of ``views``.

    Examples
    --------
    >>> img = np.zeros((1, 1, 3), np.uint8)
    >>> list(render_views(img, filter=None, observer="deuteranope"))
    ['original', 'filtered', 'observer', 'observer-filtered']
    """
    if isinstance(views, str):
        views = [views]
    views = [check_view(v) for v in views]
    r = Renderer(filter, observer=observer, illuminant=illuminant, adaptation=adaptation, method=method,
                 normalisation=normalisation, scene=scene, gamut=gamut, grid=grid)
    img = _as_input(image, cube_kind=cube_kind, wavelengths=wavelengths, max_megapixels=max_megapixels)
    return {v: _render_view(r, img, v, encoding=encoding, dtype=dtype) for v in views}


def render_spectra(spectra, *, filter, observer="normal", illuminant="D65", adaptation="full",
                   view: str = "observer-filtered", kind: str = "reflectance", method: str | None = None,
                   normalisation: str = "cone", grid: Grid = DEFAULT_GRID) -> np.ndarray:
    """Linear sRGB of spectra on the grid, step by step (no folding, no clipping).

    The single-spectrum path, computed from the observer's cone excitations,
    the von Kries gains, :func:`cvdfilter.observers.simulate.simulate` and
    the display model one step at a time: a check on the folded pipeline.

    Parameters
    ----------
    spectra : array_like
        (..., n_wl) reflectance (0-1) or, with ``kind="radiance"``, radiance
        in the illuminant's units (a white reflector gives ``illuminant.spd``).
    filter, observer, illuminant, adaptation, view, method, normalisation, grid
        As for :func:`render` (reflectance scene); ``original`` is the normal
        observer without the filter.
    kind : str
        ``reflectance`` or ``radiance``.

    Returns
    -------
    numpy.ndarray
        Linear sRGB (..., 3), not clipped.
    """
    from ..observers.observer import observer as make_observer
    from ..observers.simulate import simulate
    from ..observers.spaces import parse_adaptation, von_kries_gains
    from ..spectra.filters import load_filters
    from ..spectra.illuminants import illuminant as make_illuminant

    view = check_view(view)
    obs = make_observer(observer, grid)
    normal = obs.base if obs.base is not None else obs
    who = obs if view in ("observer", "observer-filtered") else normal
    e = make_illuminant(illuminant, grid).spd
    t = np.ones(grid.size)
    if filter is not None and view in ("filtered", "observer-filtered"):
        t = load_filters(filter, grid=grid).transmittance[0]
    s = np.asarray(spectra, dtype=float)
    radiance = s * t if kind == "radiance" else s * e * t
    lms = who.cone_excitations(radiance)
    gains = von_kries_gains(who.cone_excitations(e * t), who.cone_excitations(e),
                            adaptation=parse_adaptation(adaptation))
    seen = simulate(lms * gains, who, method=render_method(who, method if who is obs else None),
                    normalisation=normalisation if who is obs else "cone", reference_white=e,
                    primaries=mallett_basis(grid) * e[:, None])
    return np.linalg.solve(display_matrix(normal, grid).T, seen.reshape(-1, 3).T).T.reshape(seen.shape)
