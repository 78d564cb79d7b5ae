"""The labelled 2x2 panel of rendered views (matplotlib, Agg), as PNG bytes.

What ``cvdfilter render --panel`` writes; :mod:`cvdfilter.rendering` re-exports :func:`panel`.

Public: :func:`panel`, :data:`PANEL_TITLE_PT`, :data:`PANEL_FOOTER_PT`.
"""

from __future__ import annotations

import numpy as np

from ..rendering.pixels import _convert_alpha, encode_srgb

__all__ = ["panel", "PANEL_TITLE_PT", "PANEL_FOOTER_PT"]


def _for_display(px: np.ndarray) -> np.ndarray:
    """8-bit sRGB (RGB or RGBA) for showing in a panel."""
    a = np.asarray(px)
    if a.dtype == np.uint8:
        return a
    if a.dtype == np.uint16:
        return (a >> 8).astype(np.uint8)
    rgb = encode_srgb(a[..., :3], np.uint8)
    if a.shape[-1] == 4:
        return np.concatenate([rgb, _convert_alpha(a[..., 3], np.dtype(np.uint8))[..., None]], axis=-1)
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

    from .._version import __version__
    from ..io.images import encode_png

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
            ax = fig.add_axes(((c * cell_w + margin_in) / width_in, top / height_in, image_w / width_in,
                               image_w * h / w / height_in))
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
