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

Public: :func:`render`, :func:`render_views`, :func:`render_spectra`, :class:`Renderer`,
:class:`ViewTransform`, :func:`mallett_basis`, :func:`display_matrix`, :func:`decode_srgb`,
:func:`encode_srgb`, :func:`panel`, :data:`VIEWS`, :data:`VIEW_TITLES`, :data:`TILE_PIXELS`.

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
from dataclasses import dataclass, field

import numpy as np

from .errors import InputError
from .observers.operator import PiecewiseLinear
from .spectra.cache import cached_arrays
from .render_pixels import (_SCALE, TILE_PIXELS, _convert_alpha, _decode_tile, _finish_tile, _gamut_tolerance,
                            _Kernel, decode_srgb, encode_srgb)
from .spectra.grid import DEFAULT_GRID, Grid

__all__ = ["render", "render_views", "render_spectra", "render_file", "Renderer", "ViewTransform", "mallett_basis",
           "render_method", "RENDER_METHODS",
           "display_matrix", "decode_srgb", "encode_srgb", "panel", "panel_titles", "output_suffix", "output_dtype",
           "VIEWS", "VIEW_TITLES", "GAMUT_MODES", "OUTPUT_FORMATS", "TILE_PIXELS", "file_checksum",
           "settings_fingerprint", "output_fingerprint"]

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

# --- spectral building blocks ----------------------------------------------------------

def mallett_basis(grid: Grid = DEFAULT_GRID) -> np.ndarray:
    """The Mallett & Yuksel (2019) sRGB reflectance basis on ``grid``, shape (n_wl, 3).

    Columns R, G, B; fractions 0-1; they sum to 1 at every wavelength.
    Resampled linearly from colour-science's 5 nm table (linear interpolation
    keeps the values non-negative and the sum 1), held constant outside it.

    Examples
    --------
    >>> b = mallett_basis()
    >>> b.shape, bool(np.allclose(b.sum(axis=1), 1.0, atol=1e-4))
    ((401, 3), True)
    """

    def build():
        from colour.recovery import MSDS_BASIS_FUNCTIONS_sRGB_MALLETT2019 as basis

        from .spectra.grid import resample

        return {"basis": resample(basis.wavelengths, basis.values, grid, method="linear", outside="edge")}

    return cached_arrays(f"mallett2019-basis-{grid.key()}", build)["basis"]


def display_matrix(normal, grid: Grid = DEFAULT_GRID) -> np.ndarray:
    """The display model: linear sRGB (row vector) to a normal observer's adapted L, M, S.

    ``lms = rgb @ display_matrix(obs)``. The rows are the adapted cone
    excitations of the three Mallett-Yuksel basis spectra under CIE D65, so
    ``(1, 1, 1)`` maps to ``(1, 1, 1)`` (see the module docstring).

    Parameters
    ----------
    normal : Observer or str
        A normal observer.
    grid : Grid

    Returns
    -------
    numpy.ndarray
        Shape (3, 3), dimensionless.
    """
    from .observers.observer import observer as make_observer
    from .spectra.illuminants import illuminant

    obs = make_observer(normal, grid)
    d65 = illuminant("D65", grid).spd
    weights = d65[:, None] * obs.fundamentals
    white = d65 @ obs.fundamentals
    return (mallett_basis(grid).T @ weights) / white


# --- views -----------------------------------------------------------------------------

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


def _check_view(view: str) -> str:
    v = str(view).strip().lower()
    if v not in VIEWS:
        raise InputError(f"unknown view '{view}'", hint="use " + ", ".join(VIEWS))
    return v


class Renderer:
    """Renders images and cubes for one filter, observer, illuminant and adaptation.

    Build it once and apply it to many images: the folded matrices are
    computed on first use of each view. It holds only arrays and strings, so
    it pickles cheaply to worker processes.

    Parameters
    ----------
    filter : str, FilterSet, array or None
        One filter (see :func:`cvdfilter.spectra.filters.load_filters`);
        None renders without a filter.
    observer : str or Observer
        The observer (spec string, see :func:`cvdfilter.observers.observer.observer`).
    illuminant : str or Illuminant
        The light the scene is lit by (and the simulation's reference white).
    adaptation : str or float
        ``full``, ``none`` or a fraction 0-1: how far the observer adapts to the filter.
    method : str, optional
        Simulation method for the observer (see
        :data:`cvdfilter.observers.simulate.METHOD_DESCRIPTIONS`); None: :data:`RENDER_METHODS`
        (``brettel-adapted`` for dichromats). ``vienot1999`` takes the scene's stimuli for
        R, G and B (the display, or the reflectance basis under the illuminant) as its primaries.
    normalisation : str
        Anomalous observers: ``cone`` (default, continuous in every parameter) or ``opponent``.
    gamut : str
        ``clip`` (default) or ``none`` (float output only keeps out-of-gamut values).
    grid : Grid
    units, bandwidth : optional
        Units and instrument bandwidth (nm) of a filter file that does not set its own (``FILE@units=od``).
    """

    def __init__(self, filter=None, *, observer="normal", illuminant="D65", adaptation="full",
                 method: str | None = None, normalisation: str = "cone", scene: str = "reflectance",
                 gamut: str = "clip", grid: Grid = DEFAULT_GRID, units: str | None = None,
                 bandwidth: float | None = None) -> None:
        from .observers.observer import observer as make_observer
        from .observers.spaces import parse_adaptation
        from .spectra.filters import load_filters
        from .spectra.illuminants import illuminant as make_illuminant

        if gamut not in GAMUT_MODES:
            raise InputError(f"gamut '{gamut}' is not clip or none")
        self.grid = grid
        self.gamut = gamut
        self.method = method
        self.normalisation = normalisation
        self.adaptation = parse_adaptation(adaptation)
        self.observer = make_observer(observer, grid)
        self.normal = self.observer.base if self.observer.base is not None else self.observer
        self.illuminant = make_illuminant(illuminant, grid)
        if filter is None:
            self.filter_name = None
            self.transmittance = np.ones(grid.size)
        else:
            fs = load_filters(filter, grid=grid, units=units, bandwidth=bandwidth)
            if len(fs) != 1:
                raise InputError(f"describes {len(fs)} filters; rendering takes one", source=str(filter),
                                 hint="give a single filter (no sweep, no list); pick one column of a file with "
                                      "FILE:COLUMN or FILE:N, e.g. lenses.csv:2")
            self.filter_name = fs.names[0]
            self.transmittance = np.asarray(fs.transmittance[0], dtype=float)
        self.scene, self.stimuli, self.display = _scene(scene, self.illuminant.spd, self.normal, grid)
        self.scene_white = self.stimuli.sum(axis=1)
        self.display_inverse = np.linalg.inv(self.display)
        self._views: dict = {}
        self._sims: dict = {}
        # Build the observer's simulation now so that a bad method fails before any work.
        self._simulation(self.observer)

    # -- building ------------------------------------------------------------------

    def _simulation(self, obs):
        from .observers.simulate import simulation

        key = obs.spec
        if key not in self._sims:
            mine = obs is self.observer
            self._sims[key] = simulation(obs, method=render_method(obs, self.method if mine else None),
                                         normalisation=self.normalisation if mine else "cone",
                                         reference_white=self.scene_white, primaries=self.stimuli)
        return self._sims[key]

    def transform(self, view: str) -> ViewTransform:
        """The folded transform for ``view`` (one of :data:`VIEWS`)."""
        from .observers.spaces import von_kries_gains

        view = _check_view(view)
        if view in self._views:
            return self._views[view]
        obs = self.observer if view in ("observer", "observer-filtered") else self.normal
        filtered = view in ("filtered", "observer-filtered") and self.filter_name is not None
        t = self.transmittance if filtered else np.ones(self.grid.size)
        e = self.illuminant.spd
        f = obs.fundamentals
        # Images: the scene's stimuli (reflectance basis x illuminant, or display primaries) through the filter.
        white_t, white_0 = (self.scene_white * t) @ f, self.scene_white @ f
        gains = von_kries_gains(white_t, white_0, adaptation=self.adaptation)
        to_lms = ((self.stimuli * t[:, None]).T @ f) * gains
        # Cubes: reflectance under the illuminant through the filter.
        cube_gains = von_kries_gains((e * t) @ f, e @ f, adaptation=self.adaptation)
        weights = (e * t)[:, None] * f * cube_gains
        sim = self._simulation(obs)
        # The display matrices work on row vectors (``lms = rgb @ display``): their transposes are the
        # column-vector matrices the operator composes with.
        lms_to_rgb = sim.operator.then(self.display_inverse.T)
        rgb = PiecewiseLinear.linear(np.eye(3)) if view == "original" else lms_to_rgb.compose(to_lms.T)
        tr = ViewTransform(view, obs.spec, self.filter_name if filtered else None, sim.method, t, f, cube_gains,
                           weights, lms_to_rgb, rgb, {"white_lms": white_t * gains, "image_gains": gains})
        self._views[view] = tr
        return tr

    def describe(self) -> dict:
        """The settings, for metadata and manifests."""
        from ._version import __version__
        from .cautions import CAVEAT

        return {
            "tool": "cvdfilter", "version": __version__,
            "filter": self.filter_name, "observer": self.observer.spec,
            "illuminant": self.illuminant.name if self.scene == "reflectance" else None,
            "adaptation": self.adaptation,
            "simulation": self._simulation(self.observer).method,
            "normalisation": (self._simulation(self.observer).info.get("normalisation")
                              if self.observer.kind == "anomalous" else None),
            "scene": self.scene,
            "display_model": ("normal observer's adapted cone excitations of the Mallett-Yuksel 2019 basis "
                              "under CIE D65" if self.scene == "reflectance" else
                              f"normal observer's adapted cone excitations of the {self.scene} primaries"),
            "gamut": self.gamut, "caveat": CAVEAT,
        }

    # -- images --------------------------------------------------------------------

    def apply(self, image, view: str = "observer-filtered", *, encoding: str = "auto", dtype=None,
              out: np.ndarray | None = None, tile: int = TILE_PIXELS) -> tuple[np.ndarray, int]:
        """Render one view of an image.

        Parameters
        ----------
        image : numpy.ndarray or ImageData
            (H, W), (H, W, 2), (H, W, 3) or (H, W, 4); uint8/uint16 sRGB code
            values, or float (linear sRGB unless ``encoding="srgb"``).
        view : str
            One of :data:`VIEWS`.
        encoding : str
            ``auto`` (integers sRGB, floats linear), ``srgb`` or ``linear``.
        dtype : numpy dtype, optional
            Output sample type (default: the input's). Integer output is sRGB
            encoded; float output keeps the input's encoding (linear for integer input).
        out : numpy.ndarray, optional
            Array to write into (shape (H, W, 3 or 4), ``dtype``); may be the
            input itself when it is RGB(A) of the output type (renders in place).
        tile : int
            Pixels per tile.

        Returns
        -------
        (numpy.ndarray, int)
            The rendered image (RGB or RGBA: greyscale input gains colour
            channels, because a filter or an observer may tint it) and the
            number of pixels clipped to the gamut.
        """
        from .io.images import ImageData

        if isinstance(image, ImageData):
            if encoding == "auto":
                encoding = image.encoding
            image = image.pixels
        px = np.asarray(image)
        if px.ndim not in (2, 3) or (px.ndim == 3 and px.shape[2] not in (1, 2, 3, 4)):
            raise ValueError(f"expected an image shaped (H, W) or (H, W, 1-4), got {px.shape}")
        if px.ndim == 3 and px.shape[2] == 1:
            px = px[..., 0]
        in_float = np.issubdtype(px.dtype, np.floating)
        if not in_float and px.dtype not in (np.uint8, np.uint16):
            raise ValueError(f"expected uint8, uint16 or float pixels, got {px.dtype}")
        if encoding == "auto":
            encoding = "linear" if in_float else "srgb"
        if encoding not in ("srgb", "linear"):
            raise ValueError(f"encoding must be auto, srgb or linear, got {encoding!r}")
        if encoding == "linear" and not in_float:
            raise ValueError("integer pixels are sRGB code values; linear input must be float")
        out_dtype = np.dtype(dtype) if dtype is not None else px.dtype
        if out_dtype not in (np.uint8, np.uint16, np.float32, np.float64):
            raise ValueError(f"output dtype must be uint8, uint16, float32 or float64, got {out_dtype}")
        out_encoding = "srgb" if out_dtype.kind == "u" else (encoding if in_float else "linear")
        if self.gamut == "none" and out_dtype.kind == "u":
            raise InputError("gamut 'none' needs float output (integer output must be clipped)")
        grey = px.ndim == 2 or px.shape[2] == 2
        channels_in = 1 if px.ndim == 2 else px.shape[2]
        alpha = channels_in in (2, 4)
        h, w = px.shape[:2]
        shape_out = (h, w, 4 if alpha else 3)
        if out is None:
            out = np.empty(shape_out, dtype=out_dtype)
        elif out.shape != shape_out or out.dtype != out_dtype:
            raise ValueError(f"out must be {shape_out} {out_dtype}, got {out.shape} {out.dtype}")
        tr = self.transform(view)
        # The original is copied as it is; every other view goes through the pipeline.
        identity = tr.view == "original" and out_dtype == px.dtype and out_encoding == encoding
        kernel = _Kernel.build(tr.rgb, _SCALE if out_dtype.kind == "u" else 1.0,
                               *_gamut_tolerance(out_dtype))
        clip = self.gamut == "clip"
        src = px.reshape(h, w, channels_in)
        rows = max(1, tile // max(w, 1))
        clipped = 0
        for r0 in range(0, h, rows):
            r1 = min(h, r0 + rows)
            s = src[r0:r1].reshape(-1, channels_in)
            d = out[r0:r1].reshape(-1, shape_out[2])
            if identity:
                if grey:
                    d[:, :3] = s[:, :1]
                elif d is not s and not np.shares_memory(d, s):
                    d[:, :3] = s[:, :3]
            else:
                y = kernel(_decode_tile(s[:, :1] if grey else s[:, :3], encoding, grey))
                clipped += kernel.count_clipped(y)
                _finish_tile(y, d, out_dtype, out_encoding, clip)
            if alpha:
                a = s[:, -1]
                if d.dtype == a.dtype:
                    if not np.shares_memory(d, s):
                        d[:, 3] = a
                else:
                    d[:, 3] = _convert_alpha(a, d.dtype)
        return out, clipped

    # -- cubes ---------------------------------------------------------------------

    def cube_weights(self, cube, view: str, *, exposure: float | None = None) -> np.ndarray:
        """The (bands x 3) matrix from a cube's spectra to the view's adapted L, M, S.

        Cube spectra are interpolated linearly onto the grid (a linear map,
        folded in): reflectance is held at its end values outside the cube's
        bands, radiance is taken as zero there.
        """
        tr = self.transform(view)
        wl = np.asarray(cube.wavelengths, dtype=float)
        p = _interpolation_matrix(wl, self.grid.wavelengths, hold=cube.kind == "reflectance")
        if cube.kind == "reflectance":
            return p.T @ tr.spectral_weights
        k = self.cube_exposure(cube) if exposure is None else exposure
        return p.T @ (tr.transmittance[:, None] * tr.fundamentals * tr.gains) / k

    def cube_exposure(self, cube) -> float:
        """For radiance cubes: the scale that makes the scene's white the illuminant.

        The adapting white has the illuminant's spectrum and the luminance
        (normal observer, no filter) of the cube's 99th-percentile pixel,
        estimated on a strided sample of at most about 65 000 pixels.
        Reflectance cubes: 1.
        """
        if cube.kind == "reflectance":
            return 1.0
        wl = np.asarray(cube.wavelengths, dtype=float)
        p = _interpolation_matrix(wl, self.grid.wavelengths, hold=False)
        lum = self.normal.luminance
        step = max(1, int(np.sqrt(cube.height * cube.width / 65536)))
        sample = np.asarray(cube.data[::step, ::step], dtype=np.float64).reshape(-1, cube.bands)
        y = sample @ (p.T @ lum)
        level = float(np.percentile(y, 99)) if y.size else 0.0
        white = float(self.illuminant.spd @ lum)
        if not level > 0:
            raise InputError("radiance cube is black (its 99th-percentile luminance is not above 0)",
                             source=cube.path or "cube")
        return level / white

    def apply_cube(self, cube, view: str = "observer-filtered", *, dtype=np.uint8, exposure: float | None = None,
                   tile: int = TILE_PIXELS) -> tuple[np.ndarray, int]:
        """Render one view of a hyperspectral cube to an sRGB image.

        Parameters
        ----------
        cube : Cube
        view : str
            One of :data:`VIEWS` (``original`` = normal observer, no filter).
        dtype : numpy dtype
            ``uint8``/``uint16`` (sRGB) or float (linear sRGB).
        exposure : float, optional
            Radiance cubes: the white's scale (default :meth:`cube_exposure`).

        Returns
        -------
        (numpy.ndarray, int)
            (H, W, 3) image and the number of clipped pixels.
        """
        tr = self.transform(view)  # 'original' for a cube: the normal observer without the filter
        weights = self.cube_weights(cube, tr.view, exposure=exposure)
        out_dtype = np.dtype(dtype)
        if self.gamut == "none" and out_dtype.kind == "u":
            raise InputError("gamut 'none' needs float output (integer output must be clipped)")
        out_encoding = "srgb" if out_dtype.kind == "u" else "linear"
        data = cube.data
        h, w, b = data.shape
        work = np.float64 if data.dtype == np.float64 else np.float32
        wmat = weights.astype(work)
        kernel = _Kernel.build(tr.lms_to_rgb, _SCALE if out_dtype.kind == "u" else 1.0,
                               *_gamut_tolerance(out_dtype))
        clip = self.gamut == "clip"
        out = np.empty((h, w, 3), dtype=out_dtype)
        rows = max(1, tile // max(w, 1))
        clipped = 0
        for r0 in range(0, h, rows):
            r1 = min(h, r0 + rows)
            x = np.asarray(data[r0:r1]).reshape(-1, b)
            if x.dtype != work:
                x = x.astype(work)
            lms = (x @ wmat).astype(np.float32, copy=False)
            y = kernel(lms)
            clipped += kernel.count_clipped(y)
            _finish_tile(y, out[r0:r1].reshape(-1, 3), out_dtype, out_encoding, clip)
        return out, clipped


def _scene(scene: str, illuminant_spd: np.ndarray, normal, grid: Grid):
    """(name, stimuli (n_wl, 3) per unit linear R, G, B, display matrix (3, 3)) for a scene spec."""
    text = str(scene).strip()
    kind, _, name = text.partition(":")
    kind = kind.strip().lower()
    if kind == "reflectance" and not name:
        return "reflectance", mallett_basis(grid) * illuminant_spd[:, None], display_matrix(normal, grid)
    if kind == "display":
        from .observers.display import DISPLAY_PRIMARIES, adapted_rgb_to_lms, display_primaries

        name = name.strip() or DISPLAY_PRIMARIES[0]
        p = display_primaries(name, grid)
        label = [n for n in DISPLAY_PRIMARIES if n.lower() == name.lower()][0]
        # The display matrix works on row vectors: the transpose of the display module's (column) one.
        return f"display:{label}", p, adapted_rgb_to_lms(normal.fundamentals, p).T
    raise InputError(f"unknown scene '{scene}'",
                     hint="use reflectance (surfaces under the illuminant) or display[:PRIMARIES] "
                          "(light from a display, e.g. display:Typical CRT Brainard 1997)")


def _interpolation_matrix(wl: np.ndarray, target: np.ndarray, *, hold: bool) -> np.ndarray:
    """(n_target, n_wl): linear interpolation from samples at ``wl`` to ``target`` as a matrix."""
    eye = np.eye(len(wl))
    kw = {} if hold else {"left": 0.0, "right": 0.0}
    return np.stack([np.interp(target, wl, eye[j], **kw) for j in range(len(wl))], axis=1)


# --- public functions ----------------------------------------------------------------

def _as_input(image, *, cube_kind, wavelengths, max_megapixels):
    from .io.cubes import Cube, is_cube_path, read_cube, tiff_is_cube
    from .io.images import DEFAULT_MAX_MEGAPIXELS, ImageData, read_image

    mp = DEFAULT_MAX_MEGAPIXELS if max_megapixels is None else max_megapixels
    if isinstance(image, (str, pathlib.Path)):
        p = pathlib.Path(image)
        tif = p.suffix.lower() in (".tif", ".tiff")
        if is_cube_path(p) or (tif and tiff_is_cube(p, wavelengths_given=wavelengths is not None)):
            return read_cube(p, wavelengths=wavelengths, kind=cube_kind, max_megapixels=mp)
        return read_image(p, max_megapixels=mp)
    if isinstance(image, (Cube, ImageData)):
        return image
    return np.asarray(image)


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
    return _render_one(r, image, view, encoding=encoding, dtype=dtype, cube_kind=cube_kind,
                       wavelengths=wavelengths, max_megapixels=max_megapixels)


def _render_one(r: Renderer, image, view, *, encoding, dtype, cube_kind, wavelengths, max_megapixels):
    from .io.cubes import Cube

    img = _as_input(image, cube_kind=cube_kind, wavelengths=wavelengths, max_megapixels=max_megapixels)
    if isinstance(img, Cube):
        return r.apply_cube(img, view, dtype=np.uint8 if dtype is None else dtype)[0]
    return r.apply(img, view, encoding=encoding, dtype=dtype)[0]


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
    views = [_check_view(v) for v in views]
    r = Renderer(filter, observer=observer, illuminant=illuminant, adaptation=adaptation, method=method,
                 normalisation=normalisation, scene=scene, gamut=gamut, grid=grid)
    from .io.cubes import Cube

    img = _as_input(image, cube_kind=cube_kind, wavelengths=wavelengths, max_megapixels=max_megapixels)
    result = {}
    for v in views:
        if isinstance(img, Cube):
            result[v] = r.apply_cube(img, v, dtype=np.uint8 if dtype is None else dtype)[0]
        else:
            result[v] = r.apply(img, v, encoding=encoding, dtype=dtype)[0]
    return result


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
    from .observers.observer import observer as make_observer
    from .observers.simulate import simulate
    from .observers.spaces import parse_adaptation, von_kries_gains
    from .spectra.filters import load_filters
    from .spectra.illuminants import illuminant as make_illuminant

    view = _check_view(view)
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


# --- panels --------------------------------------------------------------------------

def _for_display(px: np.ndarray) -> np.ndarray:
    """8-bit sRGB (RGB or RGBA) for showing in a panel."""
    a = np.asarray(px)
    if a.dtype == np.uint8:
        return a
    if a.dtype == np.uint16:
        return (a >> 8).astype(np.uint8)
    rgb = encode_srgb(a[..., :3], np.uint8)
    if a.shape[-1] == 4:
        return np.concatenate([rgb, _convert_alpha(a[..., 3], np.uint8)[..., None]], axis=-1)
    return rgb


#: Text sizes in panels, pt at the panel's final width (nothing under 6 pt in print; common practice).
PANEL_TITLE_PT = 7.0
PANEL_FOOTER_PT = 6.5


def _panel_wrap(text: str, width_pt: float, size: float) -> list[str]:
    """Greedy word wrap measured with the Agg renderer (not a character-count estimate)."""
    from matplotlib.backends.backend_agg import RendererAgg
    from matplotlib.font_manager import FontProperties

    renderer = RendererAgg(8, 8, 72)
    prop = FontProperties(family="DejaVu Sans", size=size)

    def width(t):
        return renderer.get_text_width_height_descent(t, prop, ismath=False)[0]

    lines, line = [], ""
    for word in " ".join(str(text).split()).split(" "):
        trial = f"{line} {word}" if line else word
        if line and width(trial) > width_pt:
            lines.append(line)
            line = word
        else:
            line = trial
    if line:
        lines.append(line)
    return lines


def panel(images: dict, *, titles: dict | None = None, footer: str = "", width_mm: float = 183.0,
          dpi: int = 300, max_pixels: int = 1200, metadata: dict | None = None) -> bytes:
    """A labelled 2x2 panel of views, as PNG bytes (matplotlib, Agg).

    Parameters
    ----------
    images : dict
        View name -> image (uint8/uint16 sRGB or float linear), in panel order (up to 4).
    titles : dict, optional
        View name -> caption (default: the view name); wrapped to the view's width, and the titles
        of a row padded to the same number of lines so the views stay aligned.
    footer : str
        Text under the panel (settings and the caveat), :data:`PANEL_FOOTER_PT` pt at ``width_mm``.
    width_mm : float
        Figure width, mm (183 mm: a two-column journal figure).
    dpi : int
    max_pixels : int
        Each view is shown reduced (stride) to at most this many pixels on its long side, and
        resampled with antialiasing into the panel.
    metadata : dict, optional
        More PNG text chunks (key -> text or JSON-able value).

    Returns
    -------
    bytes
        PNG data.
    """
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    from ._version import __version__
    from .io.images import encode_png

    names = list(images)[:4]
    if not names:
        raise ValueError("no images for the panel")
    shown = {}
    for n in names:
        a = _for_display(images[n])
        step = max(1, int(np.ceil(max(a.shape[:2]) / max_pixels)))
        shown[n] = a[::step, ::step]
    h, w = next(iter(shown.values())).shape[:2]
    cols = 2 if len(names) > 1 else 1
    rows_n = int(np.ceil(len(names) / cols))
    width_in = width_mm / 25.4
    margin_in = 0.04
    cell_w = width_in / cols
    image_w = cell_w - 2 * margin_in
    line_in = PANEL_TITLE_PT * 1.25 / 72
    captions = [f"({'abcd'[i]}) {(titles or {}).get(n, n)}" for i, n in enumerate(names)]
    wrapped = [_panel_wrap(c, image_w * 72, PANEL_TITLE_PT) for c in captions]
    row_lines = [max(len(t) for t in wrapped[r * cols:(r + 1) * cols]) for r in range(rows_n)]
    footer_lines = _panel_wrap(footer, (width_in - 2 * margin_in) * 72, PANEL_FOOTER_PT) if footer else []
    footer_in = (len(footer_lines) * PANEL_FOOTER_PT * 1.3 / 72 + 0.08) if footer_lines else 0.04
    row_in = [image_w * h / w + row_lines[r] * line_in + 0.1 for r in range(rows_n)]
    height_in = sum(row_in) + footer_in
    fig = Figure(figsize=(width_in, height_in), dpi=dpi)
    top = height_in
    for r in range(rows_n):
        top -= row_in[r]
        for c in range(cols):
            i = r * cols + c
            if i >= len(names):
                break
            ax = fig.add_axes([(c * cell_w + margin_in) / width_in, top / height_in, image_w / width_in,
                               image_w * h / w / height_in])
            ax.imshow(shown[names[i]], interpolation="antialiased")
            ax.set_axis_off()
            lines = [""] * (row_lines[r] - len(wrapped[i])) + wrapped[i]
            ax.set_title("\n".join(lines), fontsize=PANEL_TITLE_PT, loc="left", pad=3, linespacing=1.1)
    if footer_lines:
        fig.text(margin_in / width_in, 0.04 / height_in, "\n".join(footer_lines), fontsize=PANEL_FOOTER_PT,
                 va="bottom", ha="left", color="0.2", linespacing=1.15)
    canvas = FigureCanvasAgg(fig)
    canvas.draw()
    rgb = np.ascontiguousarray(np.asarray(canvas.buffer_rgba())[..., :3])
    return encode_png(rgb, {"Software": f"cvdfilter {__version__}", "Description": footer, **(metadata or {})})


# Re-exported here, where callers have always found them (defined at the end: render_files imports this module).
from .render_files import (file_checksum, output_dtype, output_fingerprint, output_suffix,  # noqa: E402
                           panel_titles, render_file, settings_fingerprint)
