"""``swatches``: the surface set as patches, four rows.

Rows: the normal observer without and with the filter, then the chosen
observer without and with the filter, each surface's colour computed by the
renderer's single-spectrum path (:func:`cvdfilter.rendering.render_spectra`:
illuminant x reflectance x filter, the observer's cone excitations, von Kries
adaptation, the simulation for a normal viewer, the display model) and
encoded as sRGB. Colours outside the sRGB gamut are clipped channel by
channel and counted in a note under the rows. Columns are the surfaces in
the set's order, numbered; a set larger than 30 wraps onto several lines per
row, and one larger than 270 onto lines of about sqrt(n / 0.3) patches (a
mosaic of bounded height: 96 per line for the 2,734 Munsell samples).

Public: :func:`swatches_figure`, :func:`swatch_colours`, :data:`SWATCH_ROWS`.
"""

from __future__ import annotations

import numpy as np

from ..errors import InputError
from .inputs import load_inputs
from .labelling import display_names, observer_label, wrap_to_width
from .output import FigureResult, finish, new_figure, style_context
from .layout import MIN_PRINT_PT
from .style import Style

__all__ = ["swatches_figure", "swatch_colours", "SWATCH_ROWS"]

#: (render view, row label template)
SWATCH_ROWS = (("original", "normal,\nno filter"), ("filtered", "normal,\nwith filter"),
               ("observer", "{observer},\nno filter"), ("observer-filtered", "{observer},\nwith filter"))
_MAX_PER_LINE = 30
_OUT_TOL = 0.5 / 255  # out of gamut: more than half an 8-bit code value outside 0-1


def swatch_colours(filters, *, illuminant="D65", observer="deuteranope", surfaces="chart24",
                   adaptation="full") -> dict:
    """Linear and 8-bit sRGB of every surface in the four swatch rows.

    Returns
    -------
    dict
        ``views`` (the four view names), ``linear``: view -> (n_surfaces, 3) linear
        sRGB (not clipped), ``srgb8``: view -> (n_surfaces, 3) uint8, ``clipped``:
        view -> number of surfaces outside the gamut, ``labels``, ``filter``,
        ``observer``, ``illuminant``, ``surfaces``.
    """
    from ..rendering import encode_srgb, render_spectra

    got = load_inputs(filters, illuminant=illuminant, observers=[observer], surfaces=surfaces)
    fs, obs, surf, ill = got["filters"], got["observers"][0], got["surfaces"], got["illuminant"]
    if len(fs) != 1:
        raise InputError(f"{len(fs)} filters: the swatches figure shows one filter",
                         hint="one figure per filter; pick one column of a file with FILE:COLUMN or FILE:N")
    from .chromaticity import check_adaptable

    check_adaptable(fs, illuminant=ill, observer=obs, adaptation=adaptation)
    views = [v for v, _ in SWATCH_ROWS]
    linear, srgb8, clipped = {}, {}, {}
    for v in views:
        lin = render_spectra(surf.reflectance.T, filter=fs, observer=obs, illuminant=ill, adaptation=adaptation,
                             view=v, grid=fs.grid)
        linear[v] = lin
        srgb8[v] = encode_srgb(lin, np.uint8)
        clipped[v] = int(np.sum(np.any((lin < -_OUT_TOL) | (lin > 1 + _OUT_TOL), axis=1)))
    return {"views": views, "linear": linear, "srgb8": srgb8, "clipped": clipped, "labels": list(surf.labels),
            "filter": display_names(fs)[0], "observer": obs.spec, "observer_label": observer_label(obs),
            "illuminant": ill.name, "surfaces": surf.name}


def _row_image(rgb8: np.ndarray, per_line: int, gap: int = 1, cell: int = 10) -> np.ndarray:
    """Patches of ``cell`` pixels with ``gap``-pixel white borders, wrapped at ``per_line``."""
    n = len(rgb8)
    lines = int(np.ceil(n / per_line))
    padded = np.full((lines * per_line, 3), 255, np.uint8)  # white after the last surface
    padded[:n] = rgb8
    grid = padded.reshape(lines, per_line, 3)
    pitch = cell + gap
    img = np.full((lines * pitch + gap, per_line * pitch + gap, 3), 255, np.uint8)
    block = np.repeat(np.repeat(grid, pitch, axis=0), pitch, axis=1)  # each patch a pitch x pitch square
    inside = (np.arange(lines * pitch) % pitch) < cell
    across = (np.arange(per_line * pitch) % pitch) < cell
    img[gap:, gap:][np.ix_(inside, across)] = block[np.ix_(inside, across)]
    return img


def _per_line(n: int) -> int:
    """Patches per line: all of a small set on one line; wrapped at 30 up to 270 surfaces; beyond that
    about sqrt(n / 0.3) (each row at most about 0.3 of its width tall), so that large sets (e.g. the 2,734
    Munsell samples, 96 per line) stay a mosaic of bounded height."""
    if n <= _MAX_PER_LINE:
        return n
    per_line = max(_MAX_PER_LINE, int(np.ceil(np.sqrt(n / 0.3))))
    return int(np.ceil(n / np.ceil(n / per_line)))


def swatches_figure(filters, *, illuminant="D65", observers=("deuteranope",), surfaces="chart24",
                    adaptation="full", style: Style | None = None, width_mm: float = 89.0,
                    height_mm: float | None = None, title: str | None = None,
                    caveat: str | None = None) -> FigureResult:
    """Surface patches: normal and observer, without and with the filter.

    Parameters
    ----------
    filters
        One filter.
    observers : sequence of str
        One observer (default deuteranope).
    surfaces : str
        Surface set (default chart24, the 24-patch chart).

    Returns
    -------
    FigureResult
        ``data`` as :func:`swatch_colours`. Artists: ``swatches-<view>`` (the AxesImage of
        each row; its array holds the 8-bit patches).
    """
    style = style or Style()
    observers = list(observers or ["deuteranope"])
    if len(observers) != 1:
        raise InputError("the swatches figure shows one observer", hint="give --observer once")
    data = swatch_colours(filters, illuminant=illuminant, observer=observers[0], surfaces=surfaces,
                          adaptation=adaptation)
    n = len(data["labels"])
    per_line = _per_line(n)
    lines = int(np.ceil(n / per_line))
    images = {v: _row_image(data["srgb8"][v], per_line) for v in data["views"]}
    img_h, img_w = next(iter(images.values())).shape[:2]
    label_mm = 24.0
    # rows at least as tall as their two-line labels (patches then stretch, never the labels overlap)
    label_row_mm = 2 * style.tick_size * 1.3 * 25.4 / 72 + 0.8
    row_mm = max((width_mm - label_mm - 4) * img_h / img_w, label_row_mm)
    height_mm = height_mm or 4 * (row_mm + 1.5) + 28
    with style_context(style):
        fig = new_figure(style, width_mm, height_mm)
        axes = fig.subplots(4, 1)
        for k, (ax, (view, template)) in enumerate(zip(axes, SWATCH_ROWS)):
            ax.imshow(images[view], interpolation="nearest", gid=f"swatches-{view}", resample=False, aspect="auto")
            ax.set_xticks([])
            ax.set_yticks([])
            for spine in ax.spines.values():
                spine.set_visible(False)
            ax.set_ylabel(template.format(observer=data["observer_label"]), rotation=0, ha="right", va="center",
                          fontsize=style.tick_size, labelpad=4)
            if k == 0:
                cell = 11
                step = 1 if per_line <= 12 else 2 if per_line <= _MAX_PER_LINE else 10
                for c in range(per_line):
                    if c % step == 0 if step < 10 else (c == 0 or (c + 1) % step == 0):
                        ax.text(1 + c * cell + 5, -1.5, str(c + 1), ha="center", va="bottom",
                                fontsize=max(MIN_PRINT_PT, style.tick_size * 0.92), color="#333333")
        note = [f"{data['filter']}; {data['illuminant']}; {data['surfaces']} "
                f"({n} surfaces{', numbered in order, ' + str(lines) + ' lines per row' if lines > 1 else ''})"]
        clipped = {v: c for v, c in data["clipped"].items() if c}
        if clipped:
            note.append("clipped to sRGB: " + ", ".join(f"{c} in row {data['views'].index(v) + 1}"
                                                        for v, c in clipped.items()))
        axes[-1].set_xlabel(wrap_to_width("; ".join(note), (width_mm - label_mm - 8) / 25.4 * 72, style.tick_size),
                            fontsize=style.tick_size, labelpad=3)
        finish(fig, style, title=title, caveat=caveat)

    inputs = {"filters": [data["filter"]], "illuminant": data["illuminant"], "observer": data["observer"],
              "surfaces": data["surfaces"], "adaptation": adaptation}
    return FigureResult("swatches", fig, data, style, inputs)
