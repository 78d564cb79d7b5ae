"""Layout checks on a drawn figure: text inside the figure, no overlaps, nothing too small.

Every check works on the matplotlib artists of the laid-out figure (their
measured extents after a draw), not on pixels, so it is exact for the text as
it will print. The figures are drawn at their final size (width in mm), so a
font size in points is the printed size.

Public: :func:`text_items`, :func:`layout_problems`, :func:`series_styles`, :data:`MIN_PRINT_PT`.
"""

from __future__ import annotations

import itertools
import re

__all__ = ["text_items", "layout_problems", "series_styles", "MIN_PRINT_PT", "MATH_SHRINK"]

#: Smallest text at final size, pt (journal guidelines ask for 5-7 pt; the issue asks for 6; common practice).
MIN_PRINT_PT = 6.0
#: matplotlib's mathtext draws sub- and superscripts at 0.7 of the font size (mathtext SHRINK_FACTOR).
MATH_SHRINK = 0.7
_SCRIPT = re.compile(r"\$[^$]*[_^][^$]*\$")


def text_items(fig) -> list[dict]:
    """Every visible, non-empty text of the drawn figure.

    Returns
    -------
    list of dict
        ``text`` (the string), ``box`` (display-space Bbox, pixels at ``fig.dpi``),
        ``size`` (the smallest glyph size in pt: mathtext sub/superscripts count at
        :data:`MATH_SHRINK` of the font size), ``artist``.
    """
    from matplotlib.text import Annotation, Text

    fig.draw_without_rendering()
    renderer = fig.canvas.get_renderer()
    out = []
    for t in fig.findobj(lambda a: isinstance(a, Text)):
        s = t.get_text()
        if not s or not s.strip() or not t.get_visible():
            continue
        if t.axes is not None and not t.axes.get_visible():
            continue
        # tick labels that matplotlib keeps but does not draw
        if getattr(t, "_cvd_skip", False):
            continue
        box = Text.get_window_extent(t, renderer) if isinstance(t, Annotation) else t.get_window_extent(renderer)
        if box.width <= 0 or box.height <= 0:
            continue
        size = float(t.get_fontsize())
        if _SCRIPT.search(s):
            size *= MATH_SHRINK
        out.append({"text": s, "box": box, "size": size, "artist": t})
    return _drop_undrawn_ticks(fig, out)


def _drop_undrawn_ticks(fig, items):
    """Tick labels outside their axis' view limits are not drawn; drop them."""
    drawn = set()
    for ax in fig.get_axes():
        for axis in (ax.xaxis, ax.yaxis):
            for tick in axis._update_ticks():
                for label in (tick.label1, tick.label2):
                    if label.get_visible():
                        drawn.add(id(label))
    tick_labels = set()
    for ax in fig.get_axes():
        for axis in (ax.xaxis, ax.yaxis):
            for tick in axis.get_major_ticks() + axis.get_minor_ticks():
                tick_labels.update((id(tick.label1), id(tick.label2)))
    return [it for it in items if id(it["artist"]) not in tick_labels or id(it["artist"]) in drawn]


def layout_problems(fig, *, min_pt: float = MIN_PRINT_PT, tolerance_px: float = 0.5) -> list[str]:
    """What is wrong with the figure's text layout (an empty list when nothing is).

    Checks: every text lies inside the figure; no two text boxes overlap (by
    more than ``tolerance_px``); every text is at least ``min_pt`` at final size.
    """
    items = text_items(fig)
    fbox = fig.bbox
    problems = []
    for it in items:
        b = it["box"]
        if (b.x0 < fbox.x0 - tolerance_px or b.y0 < fbox.y0 - tolerance_px or b.x1 > fbox.x1 + tolerance_px
                or b.y1 > fbox.y1 + tolerance_px):
            problems.append(f"outside the figure: {it['text']!r}")
        if it["size"] < min_pt - 1e-9:
            problems.append(f"{it['size']:.2f} pt < {min_pt:g} pt: {it['text']!r}")
    for a, b in itertools.combinations(items, 2):
        ba, bb = a["box"], b["box"]
        w = min(ba.x1, bb.x1) - max(ba.x0, bb.x0)
        h = min(ba.y1, bb.y1) - max(ba.y0, bb.y0)
        if w > tolerance_px and h > tolerance_px:
            problems.append(f"overlap: {a['text']!r} and {b['text']!r}")
    return problems


def series_styles(fig) -> list[tuple]:
    """(axes index, label, style key) of every labelled line and bar series in the figure.

    The style key is colour, line style, marker and marker fill (lines) or
    colour and hatch (bar containers), so two series that look alike have the same key.
    """
    from matplotlib.colors import to_hex

    out = []
    for k, ax in enumerate(fig.get_axes()):
        for line in ax.get_lines():
            label = line.get_label()
            if not label or label.startswith("_"):
                continue
            out.append((k, label, ("line", to_hex(line.get_color()), str(line.get_linestyle()),
                                   str(getattr(line, "_unscaled_dash_pattern", "")),
                                   line.get_marker(), to_hex(line.get_markerfacecolor()))))
        for container in ax.containers:
            label = container.get_label()
            if not label or label.startswith("_") or not container.patches:
                continue
            p = container.patches[0]
            out.append((k, label, ("bar", to_hex(p.get_facecolor()), p.get_hatch())))
    return out
