"""Shared helpers for the figure kinds: inputs, labels and small layout aids."""

from __future__ import annotations

import numpy as np

from ..spectra.grid import DEFAULT_GRID

__all__ = ["load_inputs", "short_name", "spread_labels", "observer_label", "declutter", "spread_callouts", "legend_below", "legend_axes", "legend_columns",
           "filter_labels", "callouts_fit"]


def load_filters_checked(filters, grid=DEFAULT_GRID):
    from ..errors import InputError
    from ..spectra.filters import load_filters

    if filters is None or (isinstance(filters, (list, tuple)) and not filters):
        raise InputError("no filters given", hint="give a filter file, an example name or a spec")
    return load_filters(filters, grid=grid)


def load_inputs(filters=None, *, illuminant="D65", observers=None, surfaces=None, grid=DEFAULT_GRID):
    """Resolve the usual inputs; returns a dict with the loaded objects (None where not asked)."""
    from ..observers.observer import observer
    from ..spectra.illuminants import illuminant as make_illuminant
    from ..spectra.surfaces import surface_set

    out = {"grid": grid}
    out["filters"] = None if filters is None else load_filters_checked(filters, grid)
    out["illuminant"] = make_illuminant(illuminant, grid)
    if observers is not None:
        if isinstance(observers, str) or not hasattr(observers, "__iter__"):
            observers = [observers]
        out["observers"] = [observer(o, grid) for o in observers]
    if surfaces is not None:
        out["surfaces"] = surface_set(surfaces, grid)
    return out


def short_name(name: str, limit: int = 28) -> str:
    """A filter or observer name shortened for a legend (full names go in the report)."""
    name = str(name)
    return name if len(name) <= limit else name[: limit - 1] + "\u2026"


def observer_label(obs) -> str:
    """Readable observer label: ``deuteranomalous, 10 nm`` rather than the spec."""
    name = obs.spec.split(":", 1)[0]
    p = obs.params
    extra = []
    if obs.kind == "anomalous":
        if p.get("model") == "machado2009":
            extra.append(f"Machado severity {p['severity']:g}")
        else:
            extra.append(f"{p['shift']:.4g} nm")  # the default shifts are not whole numbers (17.35, 21.35)
    if p.get("age", 32.0) != 32.0:
        extra.append(f"{p['age']:g} y")
    if p.get("field", 2.0) != 2.0:
        extra.append(f"{p['field']:g}\u00b0")
    if p.get("data", "cie2006") != "cie2006":
        extra.append(p["data"])
    return name + (" (" + ", ".join(extra) + ")" if extra else "")


def spread_labels(positions, min_gap: float) -> np.ndarray:
    """Stack levels (0, 1, 2, ...) so labels closer than ``min_gap`` never share a level."""
    positions = np.asarray(positions, dtype=float)
    order = np.argsort(positions, kind="stable")
    levels = np.zeros(len(positions), dtype=int)
    last_at_level: dict[int, float] = {}
    for i in order:
        level = 0
        while level in last_at_level and positions[i] - last_at_level[level] < min_gap:
            level += 1
        levels[i] = level
        last_at_level[level] = positions[i]
    return levels


def declutter(fig, annotations, *, pad_pt: float = 1.0) -> None:
    """Move annotations up (in points) until none overlaps another; they keep their anchors.

    Works on the laid-out figure (draws it once without rendering), so the
    true text extents are used rather than an estimate.
    """
    if len(annotations) < 2:
        return
    fig.draw_without_rendering()
    renderer = fig.canvas.get_renderer()
    dpi_scale = fig.dpi / 72.0
    boxes = [a.get_window_extent(renderer) for a in annotations]
    order = sorted(range(len(annotations)), key=lambda i: boxes[i].x0)
    placed = []
    for i in order:
        box = boxes[i]
        shift = 0.0
        moved = True
        while moved:
            moved = False
            for other in placed:
                if box.x0 < other.x1 + pad_pt * dpi_scale and other.x0 < box.x1 + pad_pt * dpi_scale and \
                        box.y0 + shift < other.y1 + pad_pt * dpi_scale and other.y0 < box.y1 + shift:
                    shift = other.y1 + pad_pt * dpi_scale - box.y0
                    moved = True
        if shift:
            x, y = annotations[i].xyann
            annotations[i].xyann = (x, y + shift / dpi_scale)
        placed.append(box.translated(0, shift))


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
    """A legend in its own (invisible) grid cell ``spec``, spanning the columns it is given.

    The cell gets a tiny height; constrained layout grows its margin to fit
    the legend, centred under the panels it spans.
    """
    ax = fig.add_subplot(spec)
    ax.set_axis_off()
    ax.legend(handles, labels, loc="upper center", bbox_to_anchor=(0.5, 1.0), ncols=ncols, borderaxespad=0,
              **kwargs)
    return ax


def legend_columns(labels, width_mm: float, font_size: float, *, max_cols: int = 4, handle_pt: float = 36.0) -> int:
    """The most legend columns (up to ``max_cols``) whose labels fit side by side in ``width_mm``.

    Text width is estimated at 0.62 em per character (DejaVu Sans averages
    about 0.55 em for mixed text, more for lower-case runs and hyphens; common
    practice, with a margin so that no label is clipped), plus ``handle_pt``
    for the handle, padding and column spacing.
    """
    widest = max((len(str(t)) for t in labels), default=0) * 0.62 * font_size + handle_pt
    room = 0.97 * width_mm / 25.4 * 72
    return int(max(1, min(max_cols, len(labels) or 1, room // widest)))


def filter_labels(names, limit: int = 34) -> list[str]:
    """Legend labels for filters: for a sweep, only the parameters that vary (``center=530``)."""
    from .sweep import swept_parameters

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
