"""The :class:`Renderer`: one filter, observer, illuminant and adaptation, applied to images and cubes.

Public: :class:`Renderer`.
"""

from __future__ import annotations

import numpy as np

from ..errors import InputError
from ..observers.operator import PiecewiseLinear
from ..spectra.grid import DEFAULT_GRID, Grid
from .pixels import _SCALE, TILE_PIXELS, _convert_alpha, _decode_tile, _finish_tile, _gamut_tolerance, _Kernel
from .scene import interpolation_matrix, scene_model
from .views import GAMUT_MODES, ViewTransform, check_view, render_method

__all__ = ["Renderer"]


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
        from ..observers.observer import observer as make_observer
        from ..observers.spaces import parse_adaptation
        from ..spectra.filters import load_filters
        from ..spectra.illuminants import illuminant as make_illuminant

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
        self.scene, self.stimuli, self.display = scene_model(scene, self.illuminant.spd, self.normal, grid)
        self.scene_white = self.stimuli.sum(axis=1)
        self.display_inverse = np.linalg.inv(self.display)
        self._views: dict = {}
        self._sims: dict = {}
        # Build the observer's simulation now so that a bad method fails before any work.
        self._simulation(self.observer)

    # -- building ------------------------------------------------------------------

    def _simulation(self, obs):
        from ..observers.simulate import simulation

        key = obs.spec
        if key not in self._sims:
            mine = obs is self.observer
            self._sims[key] = simulation(obs, method=render_method(obs, self.method if mine else None),
                                         normalisation=self.normalisation if mine else "cone",
                                         reference_white=self.scene_white, primaries=self.stimuli)
        return self._sims[key]

    def transform(self, view: str) -> ViewTransform:
        """The folded transform for ``view`` (one of :data:`VIEWS`)."""
        from ..observers.spaces import von_kries_gains

        view = check_view(view)
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
        from .._version import __version__
        from ..cautions import CAVEAT

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
        from ..io.images import ImageData

        if isinstance(image, ImageData):
            if encoding == "auto":
                encoding = image.encoding
            image = image.pixels
        px, encoding, out_dtype, out_encoding = _check_image(np.asarray(image), encoding, dtype)
        if self.gamut == "none" and out_dtype.kind == "u":
            raise InputError("gamut 'none' needs float output (integer output must be clipped)")
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
        kernel = None if identity else _Kernel.build(tr.rgb, _SCALE if out_dtype.kind == "u" else 1.0,
                                                     *_gamut_tolerance(out_dtype))
        src = px.reshape(h, w, channels_in)
        rows = max(1, tile // max(w, 1))
        clipped = 0
        for r0 in range(0, h, rows):
            s = src[r0:r0 + rows].reshape(-1, channels_in)
            d = out[r0:r0 + rows].reshape(-1, shape_out[2])
            clipped += self._tile(kernel, s, d, encoding, out_encoding)
        return out, clipped

    def _tile(self, kernel: _Kernel | None, s: np.ndarray, d: np.ndarray, encoding: str, out_encoding: str) -> int:
        """Render one tile of pixels (rows of ``s``) into ``d`` (a None kernel copies); returns the clipped count."""
        grey = s.shape[1] in (1, 2)
        clipped = 0
        if kernel is None:
            if grey:
                d[:, :3] = s[:, :1]
            elif d is not s and not np.shares_memory(d, s):
                d[:, :3] = s[:, :3]
        else:
            y = kernel(_decode_tile(s[:, :1] if grey else s[:, :3], encoding, grey))
            clipped = kernel.count_clipped(y)
            _finish_tile(y, d, d.dtype, out_encoding, self.gamut == "clip")
        if s.shape[1] in (2, 4):
            a = s[:, -1]
            if d.dtype == a.dtype:
                if not np.shares_memory(d, s):
                    d[:, 3] = a
            else:
                d[:, 3] = _convert_alpha(a, d.dtype)
        return clipped

    # -- cubes ---------------------------------------------------------------------

    def cube_weights(self, cube, view: str, *, exposure: float | None = None) -> np.ndarray:
        """The (bands x 3) matrix from a cube's spectra to the view's adapted L, M, S.

        Cube spectra are interpolated linearly onto the grid (a linear map,
        folded in): reflectance is held at its end values outside the cube's
        bands, radiance is taken as zero there.
        """
        tr = self.transform(view)
        wl = np.asarray(cube.wavelengths, dtype=float)
        p = interpolation_matrix(wl, self.grid.wavelengths, hold=cube.kind == "reflectance")
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
        p = interpolation_matrix(wl, self.grid.wavelengths, hold=False)
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


def _check_image(px: np.ndarray, encoding: str, dtype) -> tuple[np.ndarray, str, np.dtype, str]:
    """Validate an image array up front: (pixels (H, W) or (H, W, 2-4), input encoding, output dtype, output
    encoding)."""
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
    return px, encoding, out_dtype, out_encoding
