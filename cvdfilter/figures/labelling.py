"""Labels and text placement for the figure kinds: filter and observer labels, legends, callouts, wrapping
text to a measured width, and keeping axes tall enough.

Public: the names in ``__all__``.
"""

from __future__ import annotations

import numpy as np

from ..observers.labels import observer_label

__all__ = ["short_name", "observer_label", "spread_callouts", "legend_below", "legend_axes", "legend_columns",
           "filter_labels", "callouts_fit", "legend_labels", "text_width_pt", "wrap_to_width", "display_names",
           "pad_lines", "ensure_axes_height"]


def short_name(name: str, limit: int = 28) -> str:
    """A filter or observer name shortened for a legend (full names go in the report)."""
    name = str(name)
    return name if len(name) <= limit else name[: limit - 1] + "\u2026"


def spread_callouts(fig, ax, annotations, anchors_x, *, pad_pt: float = 3.0, lift_pt: float = 7.0) -> None:
    """Spread labels sideways so none overlaps, each joined to its anchor by a leader line.

    ``annotations`` were made with ``textcoords=("data", "offset points")`` and
    their text x at the anchor. Overlapping neighbours are merged into groups
    laid side by side around the mean of their anchors (then kept inside the
    axes); a label that moved is lifted ``lift_pt`` so its leader slants.
    """
    if not annotations:
        return
    fig.draw_without_rendering()
    renderer = fig.canvas.get_renderer()
    inv = ax.transData.inverted()
    to_data_width = []
    for a in annotations:
        box = a.get_window_extent(renderer)
        (x0, _), (x1, _) = inv.transform([[box.x0, box.y0], [box.x1, box.y0]])
        to_data_width.append(abs(x1 - x0))
    (p0, _), (p1, _) = inv.transform([[0, 0], [pad_pt * fig.dpi / 72.0, 0]])
    pad = abs(p1 - p0)
    order = sorted(range(len(annotations)), key=lambda i: anchors_x[i])
    _spread_row(order, annotations, anchors_x, to_data_width, pad, ax, lift_pt, 0.0)


def _spread_row(order, annotations, anchors_x, to_data_width, pad, ax, lift_pt, base_pt):
    groups = [[i] for i in order]

    def layout(group):
        total = sum(to_data_width[i] for i in group) + pad * (len(group) - 1)
        centre = float(np.mean([anchors_x[i] for i in group]))
        left = centre - total / 2
        lo, hi = ax.get_xlim()
        left = min(max(left, lo), hi - total) if total < hi - lo else lo
        xs, cursor = [], left
        for i in group:
            xs.append(cursor + to_data_width[i] / 2)
            cursor += to_data_width[i] + pad
        return left, left + total, xs

    merged = True
    while merged:
        merged = False
        for k in range(len(groups) - 1):
            _, right, _ = layout(groups[k])
            left, _, _ = layout(groups[k + 1])
            if right + pad > left:
                groups[k:k + 2] = [groups[k] + groups[k + 1]]
                merged = True
                break
    for group in groups:
        _, _, xs = layout(group)
        for i, x in zip(group, xs):
            moved = abs(x - anchors_x[i]) > 1e-9
            a = annotations[i]
            if not hasattr(a, "_cvd_y0"):
                a._cvd_y0 = a.xyann[1]      # the offset asked for; later calls start from it again
            a.xyann = (x, a._cvd_y0 + base_pt + (lift_pt if moved else 0.0))


def legend_below(fig, ax, handles, labels, *, ncols: int = 2, gap_pt: float = 3.0, center_on_figure: bool = False,
                 **kwargs):
    """A legend centred under ``ax``, clear of its tick labels and x label.

    The offset is measured in points from the axes' lower edge (after a
    layout pass), so it stays right when constrained layout resizes the axes;
    the legend belongs to the axes, so the layout keeps room for it above the
    caveat footnote. ``center_on_figure`` centres it on the figure instead of the axes.
    """
    from matplotlib.transforms import ScaledTranslation, blended_transform_factory

    fig.draw_without_rendering()
    renderer = fig.canvas.get_renderer()
    below_px = ax.bbox.y0 - ax.get_tightbbox(renderer).y0
    offset_pt = below_px * 72.0 / fig.dpi + gap_pt
    base = blended_transform_factory(fig.transFigure, ax.transAxes) if center_on_figure else ax.transAxes
    transform = base + ScaledTranslation(0, -offset_pt / 72.0, fig.dpi_scale_trans)
    return ax.legend(handles, labels, loc="upper center", bbox_to_anchor=(0.5, 0.0), bbox_transform=transform,
                     ncols=ncols, borderaxespad=0, **kwargs)


def legend_axes(fig, spec, handles, labels, *, ncols: int = 2, **kwargs):
    """A legend in its own (invisible) grid cell ``spec``, centred on the figure's width.

    The cell gets a tiny height; constrained layout grows its margin to fit
    the legend. Centred on the figure (not on the cell, which the y labels
    push to the right), so a legend as wide as the figure stays inside it.
    """
    from matplotlib.transforms import blended_transform_factory

    ax = fig.add_subplot(spec)
    ax.set_axis_off()
    ax.legend(handles, labels, loc="upper center", bbox_to_anchor=(0.5, 1.0),
              bbox_transform=blended_transform_factory(fig.transFigure, ax.transAxes), ncols=ncols,
              borderaxespad=0, **kwargs)
    return ax


def text_width_pt(text: str, size: float) -> float:
    """The drawn width of ``text`` (its widest line) in points at ``size`` pt, in the current rc font.

    Measured by the Agg renderer at 72 dpi, the resolution the figures are laid out at (glyph advances
    are hinted to whole pixels there, so this is slightly wider than the printed text: a safe margin).
    """
    from matplotlib.backends.backend_agg import RendererAgg
    from matplotlib.font_manager import FontProperties

    renderer = RendererAgg(8, 8, 72)
    prop = FontProperties(size=size)
    widths = [renderer.get_text_width_height_descent(line, prop, ismath=False)[0] if line.strip() else 0.0
              for line in str(text).split("\n")]
    return max(widths, default=0.0)


def wrap_to_width(text: str, width_pt: float, size: float, *, max_lines: int | None = None) -> str:
    """Greedy word wrap of ``text`` so that every line measures at most ``width_pt`` at ``size`` pt.

    A single word longer than the width is broken at ``-``, ``_``, ``:``, ``,`` or ``/`` if it can be,
    else between characters. ``max_lines`` ends the last kept line with an ellipsis.
    """
    import re

    words = " ".join(str(text).split()).split(" ")
    pieces = []
    for w in words:
        if text_width_pt(w, size) <= width_pt:
            pieces.append((w, True))
            continue
        parts = [p for p in re.split(r"(?<=[-_:,/=])", w) if p]
        for p in parts:
            while text_width_pt(p, size) > width_pt and len(p) > 1:
                k = len(p)
                while k > 1 and text_width_pt(p[:k], size) > width_pt:
                    k -= 1
                pieces.append((p[:k], False))
                p = p[k:]
            pieces.append((p, False))
        pieces[-1] = (pieces[-1][0], True)
    lines, line, glue = [], "", False
    for piece, ends_word in pieces:
        trial = line + (" " if glue and line else "") + piece
        if line and text_width_pt(trial, size) > width_pt:
            lines.append(line)
            line = piece
        else:
            line = trial
        glue = ends_word
    if line:
        lines.append(line)
    if max_lines is not None and len(lines) > max_lines:
        lines = lines[:max_lines]
        last = lines[-1]
        while last and text_width_pt(last + "\u2026", size) > width_pt:
            last = last[:-1]
        lines[-1] = last.rstrip() + "\u2026"
    return "\n".join(lines)


def pad_lines(texts, n: int | None = None) -> list[str]:
    """Pad multi-line texts with empty lines at the top to the same line count (aligned panel titles)."""
    texts = list(texts)
    n = n or max((t.count("\n") + 1 for t in texts), default=1)
    return ["\n" * (n - 1 - t.count("\n")) + t for t in texts]


def legend_columns(labels, width_mm: float, font_size: float, *, max_cols: int = 4, handle_pt: float = 36.0) -> int:
    """The most legend columns (up to ``max_cols``) whose labels fit side by side in ``width_mm``.

    Label widths are measured (:func:`text_width_pt`), plus ``handle_pt`` per
    column for the handle, padding and column spacing.
    """
    labels = [str(t) for t in labels]
    if not labels:
        return 1
    room = 0.92 * width_mm / 25.4 * 72
    widths = [text_width_pt(t, font_size) * 1.05 + handle_pt for t in labels]
    best = 1
    for cols in range(1, min(max_cols, len(labels)) + 1):
        rows = -(-len(labels) // cols)
        # matplotlib fills legend columns top to bottom
        col_widths = [max(widths[c * rows:(c + 1) * rows], default=0.0) for c in range(cols)]
        if sum(col_widths) <= room:
            best = cols
    return best


def legend_labels(labels, width_mm: float, font_size: float, *, handle_pt: float = 36.0) -> list[str]:
    """Labels wrapped so that each fits one legend column across the figure (never cut at the edge)."""
    # 10 % to spare: glyph advances are hinted differently at each raster resolution (a 110 dpi preview
    # draws text up to 5 % wider than the 72 dpi layout measures it)
    room = 0.9 * width_mm / 25.4 * 72 - handle_pt
    return [wrap_to_width(t, room, font_size) for t in labels]


def display_names(fs) -> list[str]:
    """The name of each filter as figures show it: the loader's name, except that a filter read from a
    file with one data column is named by the file's stem (not by its column header), and a column of a
    file with several is ``stem:column``."""
    import pathlib

    names = [str(n) for n in fs.names]
    infos = list(getattr(fs, "info", ()) or ())
    sources = list(getattr(fs, "sources", ()) or ())
    if len(infos) != len(names):
        return names
    paths = [i.get("path") if isinstance(i, dict) else None for i in infos]
    out = []
    for k, (name, info) in enumerate(zip(names, infos)):
        src = sources[k] if k < len(sources) else None
        path = paths[k]
        if src == "file" and path and isinstance(info, dict) and info.get("column") == name:
            stem = pathlib.Path(path).stem
            out.append(stem if paths.count(path) == 1 else f"{stem}:{name}")
        else:
            out.append(name)
    return out


def filter_labels(names, limit: int = 34) -> list[str]:
    """Legend labels for filters: for a sweep, only the parameters that vary (``center=530``)."""
    from .scorecard_values import swept_parameters

    names = [str(n) for n in names]
    if len(names) >= 2 and all("=" in n for n in names):
        varying, values = swept_parameters(names)
        if varying:
            return [", ".join(f"{k}={values[k][i]:g}" for k in varying) for i in range(len(names))]
    return [short_name(n, limit) for n in names]


def callouts_fit(fig, ax, annotations, *, pad_pt: float = 3.0, fill: float = 0.95) -> bool:
    """Whether the annotations, set side by side, fit in one row across ``fill`` of the axes width."""
    if not annotations:
        return True
    fig.draw_without_rendering()
    renderer = fig.canvas.get_renderer()
    total = sum(a.get_window_extent(renderer).width for a in annotations)
    total += pad_pt * fig.dpi / 72.0 * len(annotations)
    return total <= fill * ax.bbox.width


def ensure_axes_height(fig, axes, min_mm: float, *, rows: int | None = None, passes: int = 3) -> None:
    """Grow the figure's height until every axes in ``axes`` is at least ``min_mm`` tall.

    Legends, wrapped titles and notes take the room they need (constrained layout measures them);
    when they would squeeze the plots below ``min_mm``, the figure gets taller instead (by the deficit
    times ``rows``, the number of axes stacked vertically; default: as many as given).
    """
    import warnings

    axes = [a for a in axes if a is not None]
    rows = rows or len(axes)
    for _ in range(passes + 4):
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            fig.draw_without_rendering()
        if any("collapsed" in str(w.message) for w in caught):
            # the decorations alone are taller than the figure: grow it, then measure again
            fig.set_figheight(fig.get_figheight() * 1.5)
            continue
        heights = [a.get_position().height * fig.get_figheight() * 25.4 for a in axes]
        deficit = min_mm - min(heights)
        if deficit <= 0.2:
            return
        fig.set_figheight(fig.get_figheight() + (deficit * rows + 1.0) / 25.4)
