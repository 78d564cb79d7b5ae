"""``images``: the renderer's four views of an image as a labelled 2x2 panel.

Views (:data:`cvdfilter.rendering.VIEWS`): the original, the normal observer
through the filter, the chosen observer without the filter and through it,
each rendered by :func:`cvdfilter.rendering.render_views` (reflectance estimate,
illuminant x filter, the observer's cones, von Kries adaptation, the
simulation for a normal viewer). Large images are reduced for the figure by
averaging blocks of pixels in linear light (the renderer works at full size);
the figure embeds them as raster images inside the vector file.

Public: :func:`images_figure`, :func:`default_image`.
"""

from __future__ import annotations

import pathlib

import numpy as np

from ..errors import InputError
from .inputs import load_filters_checked
from .labelling import display_names, observer_label, pad_lines, wrap_to_width
from .output import FigureResult, finish, new_figure, style_context
from .style import Style

__all__ = ["images_figure", "default_image", "MAX_FIGURE_PIXELS"]

#: Resolution the views are kept at inside the figure, dots per inch at final size (print quality).
FIGURE_DPI = 300
#: Longest side, in pixels, of each view inside the figure at most (a double-column panel at 300 dpi).
MAX_FIGURE_PIXELS = 1100


def default_image() -> pathlib.Path:
    """The bundled synthetic tabletop scene at 1024 x 1024, ``test_images/tabletop_large.png`` (invented;
    made by ``test_images/make_test_images.py`` from reflectance spectra, edges supersampled 4 x 4)."""
    root = pathlib.Path(__file__).resolve().parents[2] / "test_images"
    candidates = [p for p in (root / "tabletop_large.png", root / "tabletop.png") if p.is_file()]
    if not candidates:
        raise InputError("no default image: the bundled scene is missing from test_images/",
                         hint="give an image with --image")
    return candidates[0]


def _reduce(img: np.ndarray, max_pixels: int) -> np.ndarray:
    """Block-average an sRGB image (in linear light) by the largest whole factor that keeps its long side at
    least ``max_pixels``."""
    from ..rendering import decode_srgb, encode_srgb

    h, w = img.shape[:2]
    f = int(max(h, w) // max_pixels)     # whole blocks, never below max_pixels (antialiased resampling does the rest)
    if f <= 1:
        return img
    from skimage.transform import downscale_local_mean

    rgb = img[..., :3]
    lin = decode_srgb(rgb) if rgb.dtype.kind == "u" else rgb.astype(np.float32)
    small = downscale_local_mean(lin, (f, f, 1))[: h // f, : w // f]
    return encode_srgb(small, np.uint8)


def _to8(img: np.ndarray) -> np.ndarray:
    from ..rendering import encode_srgb

    a = np.asarray(img)[..., :3]
    if a.dtype == np.uint8:
        return a
    if a.dtype == np.uint16:
        return (a.astype(np.uint32) * 255 // 65535).astype(np.uint8)
    return encode_srgb(a, np.uint8)


def images_figure(filters, *, illuminant="D65", observers=("deuteranope",), surfaces=None, adaptation="full",
                  image=None, style: Style | None = None, width_mm: float = 89.0, height_mm: float | None = None,
                  title: str | None = None, caveat: str | None = None) -> FigureResult:
    """Original / filtered / observer / observer through the filter, 2x2, labelled.

    Parameters
    ----------
    filters
        One filter.
    observers : sequence of str
        One observer (default deuteranope).
    image : str, path or array, optional
        An sRGB image (file or array) or a cube; default :func:`default_image`.
    surfaces
        Not used (accepted so the common options can be passed).

    Returns
    -------
    FigureResult
        ``data``: ``views`` (view name -> the 8-bit RGB array shown), ``titles``,
        ``image`` (the source), ``reduced_by`` (block size, 1 = full size).
        Artists: ``image-<view>`` (AxesImage).
    """
    from ..rendering import VIEW_TITLES, VIEWS, render_views

    style = style or Style()
    fs, observers = _one_filter_one_observer(filters, observers, illuminant, adaptation)
    source = default_image() if image is None else image
    rendered = render_views(source if not isinstance(source, pathlib.Path) else str(source), filter=fs,
                            observer=observers[0], illuminant=illuminant, adaptation=adaptation, views=VIEWS)
    obs_text = observer_label(observers[0])
    filt_text = display_names(fs)[0]
    panel_mm = (width_mm - 4) / 2
    max_pixels = min(MAX_FIGURE_PIXELS, int(np.ceil(panel_mm / 25.4 * FIGURE_DPI)))
    shown = {v: _reduce(_to8(a), max_pixels) for v, a in rendered.items()}
    full = next(iter(rendered.values()))
    reduced_by = max(1, int(max(full.shape[:2]) // max_pixels))
    titles = {v: VIEW_TITLES[v].format(observer=obs_text, filter=filt_text) for v in VIEWS}
    titles["original"] = "original (normal observer, no filter)"
    h, w = next(iter(shown.values())).shape[:2]
    with style_context(style):
        # wrapped to the panel's width (measured), padded so the two titles of a row have as many lines
        wrapped = [wrap_to_width(f"({letter}) {titles[v]}", 0.97 * panel_mm / 25.4 * 72, style.tick_size)
                   for v, letter in zip(VIEWS, "abcd")]
        wrapped = pad_lines(wrapped[:2]) + pad_lines(wrapped[2:])
    lines = [t.count("\n") + 1 for t in wrapped]
    height_mm = height_mm or (2 * (panel_mm * h / w + 2) + (lines[0] + lines[2]) * style.tick_size * 1.3 * 0.3528
                              + 20)
    with style_context(style):
        fig = new_figure(style, width_mm, height_mm, compress=True)
        axes = fig.subplots(2, 2)
        for ax, view, text in zip(axes.ravel(), VIEWS, wrapped):
            # antialiased resampling: the views stay smooth at any output dpi
            ax.imshow(shown[view], interpolation="antialiased", gid=f"image-{view}")
            ax.set_xticks([])
            ax.set_yticks([])
            ax.set_title(text, fontsize=style.tick_size, loc="left", pad=2)
            for spine in ax.spines.values():
                spine.set_visible(False)
        note = f"{illuminant}, adaptation {adaptation}"
        if reduced_by > 1:
            note += f"; shown at 1/{reduced_by} size"
        axes[1, 0].set_xlabel(note, fontsize=style.tick_size, loc="left")
        finish(fig, style, title=title, caveat=caveat)

    data = {"views": shown, "titles": titles, "image": str(source) if not isinstance(source, np.ndarray) else "array",
            "reduced_by": reduced_by}
    inputs = {"filters": [fs.names[0]], "illuminant": illuminant, "observer": observers[0],
              "image": data["image"], "adaptation": adaptation}
    return FigureResult("images", fig, data, style, inputs)


def _one_filter_one_observer(filters, observers, illuminant, adaptation):
    """The one filter (a FilterSet) and the one observer spec the figure shows; InputError otherwise, or when
    the filter leaves a cone no light to adapt to."""
    observers = list(observers or ["deuteranope"])
    if len(observers) != 1:
        raise InputError("the images figure shows one observer", hint="give --observer once")
    fs = load_filters_checked(filters)
    if len(fs) != 1:
        raise InputError(f"{len(fs)} filters: the images figure shows one filter",
                         hint="one figure per filter; pick one column of a file with FILE:COLUMN or FILE:N")
    from .chromaticity import check_adaptable

    check_adaptable(fs, illuminant=illuminant, observer=observers[0], adaptation=adaptation)
    return fs, observers
