"""Drawing the chromaticity figure: its panels (overview, one zoomed panel per filter), confusion-line fans,
the arrows' subset or cell means, titles and legend. :mod:`cvdfilter.figures.chromaticity` computes the
numbers (:func:`~cvdfilter.figures.chromaticity.chromaticity_data`) and assembles the figure.

Public: :func:`arrow_subset`.
"""

from __future__ import annotations

import numpy as np

from .labelling import legend_axes, legend_columns, legend_labels, pad_lines, wrap_to_width
from .palette import NEUTRAL, OKABE_ITO

__all__ = ["arrow_subset"]

#: Wavelengths (nm) whose confusion lines make the overview's fan.
_FAN_NM = np.arange(420, 681, 20)


def _locus_labels(space: str):
    """(nm, offset in points, ha, va) for the wavelength labels on the locus."""
    if space == "mb":
        # the upper branch rises steeply; the long-wavelength branch runs along s = 0
        return [(450, (4, 0), "left", "center"), (480, (4, 0), "left", "center"), (560, (0, -3), "center", "top"),
                (620, (0, -3), "center", "top")]
    return [(460, (-4, 0), "right", "center"), (490, (-4, 0), "right", "center"),
            (520, (0, 4), "center", "bottom"), (560, (4, 2), "left", "bottom"),
            (600, (4, 0), "left", "center")]


def arrow_subset(points: np.ndarray, n: int) -> np.ndarray:
    """Indices of ``n`` points spread over the cloud (greedy farthest-point order, deterministic).

    Starts at the point farthest from the cloud's mean; each next point is the one farthest from
    those chosen, in coordinates scaled to the cloud's range, so the subset covers the gamut.
    """
    pts = np.asarray(points, dtype=float)
    if n >= len(pts):
        return np.arange(len(pts))
    scale = np.ptp(pts, axis=0)
    scale[scale == 0] = 1.0
    z = (pts - pts.mean(axis=0)) / scale
    chosen = [int(np.argmax(np.linalg.norm(z, axis=1)))]
    dist = np.linalg.norm(z - z[chosen[0]], axis=1)
    for _ in range(n - 1):
        k = int(np.argmax(dist))
        chosen.append(k)
        dist = np.minimum(dist, np.linalg.norm(z - z[k], axis=1))
    return np.sort(np.array(chosen))


def _cell_means(w0: np.ndarray, w1: np.ndarray, lo, hi, cells: int = 4):
    """Mean start and end of the surfaces in each cell of a ``cells`` x ``cells`` grid over [lo, hi]."""
    idx = np.clip(((w0 - lo) / np.where(hi - lo > 0, hi - lo, 1.0) * cells).astype(int), 0, cells - 1)
    key = idx[:, 0] * cells + idx[:, 1]
    starts, ends, counts = [], [], []
    for k in np.unique(key):
        sel = key == k
        starts.append(w0[sel].mean(axis=0))
        ends.append(w1[sel].mean(axis=0))
        counts.append(int(sel.sum()))
    return np.array(starts), np.array(ends), np.array(counts)


def _drop_colliding(fig, texts) -> None:
    """Hide locus labels that would overlap a label already kept or leave the axes (measured)."""
    if not texts:
        return
    fig.draw_without_rendering()
    renderer = fig.canvas.get_renderer()
    from matplotlib.text import Text

    kept = []
    for t in texts:
        box = Text.get_window_extent(t, renderer)
        ax_box = t.axes.bbox
        outside = box.x0 < ax_box.x0 or box.x1 > ax_box.x1 or box.y0 < ax_box.y0 or box.y1 > ax_box.y1
        if outside or any(box.overlaps(k) for k in kept):
            t.set_visible(False)
        else:
            kept.append(box)


def _fan_directions(copunctal, points, n=9):
    """Unit directions from the copunctal point spanning the angles of ``points``.

    Angles are measured from the points' mean direction, so a cloud that lies
    across the -x axis (angle +-180 degrees) does not wrap around the circle.
    """
    d = points - copunctal
    z = d[:, 0] + 1j * d[:, 1]
    mean = np.mean(z / np.abs(z))
    mean = mean / abs(mean)
    rel = np.angle(z / mean)
    lo, hi = rel.min(), rel.max()
    pad = 0.08 * (hi - lo) + 1e-4
    rot = mean * np.exp(1j * np.linspace(lo - pad, hi + pad, n))
    return np.stack([rot.real, rot.imag], axis=-1)


def _draw_fan(ax, copunctal, directions, length, gid):
    for k, u in enumerate(directions):
        end = copunctal + length * u
        ax.plot([copunctal[0], end[0]], [copunctal[1], end[1]], color=NEUTRAL["line"], lw=0.45,
                linestyle=(0, (3, 2)), zorder=1, gid=f"{gid}-{k}")


def _panels(fig, n_f: int, width_mm: float):
    """The overview axes, one zoomed axes per filter and the legend's grid cell, laid out for the width."""
    if width_mm < 120:
        ncols = min(n_f, 2)
        nrows_zoom = int(np.ceil(n_f / ncols))
        gs = fig.add_gridspec(2 + nrows_zoom, ncols, height_ratios=[1.0] + [1.45] * nrows_zoom + [0.001])
        ax_all = fig.add_subplot(gs[0, :])
        zoom_axes = [fig.add_subplot(gs[1 + k // ncols, k % ncols]) for k in range(n_f)]
    elif n_f <= 2:
        gs = fig.add_gridspec(2, 1 + n_f, width_ratios=[1.0] + [1.0] * n_f, height_ratios=[1.0, 0.001])
        ax_all = fig.add_subplot(gs[0, 0])
        zoom_axes = [fig.add_subplot(gs[0, 1 + k]) for k in range(n_f)]
    else:
        # the overview as tall as the two rows of zoomed panels beside it, never squashed
        gs = fig.add_gridspec(3, 3, width_ratios=[1.15, 1.0, 1.0], height_ratios=[1.0, 1.0, 0.001])
        ax_all = fig.add_subplot(gs[0:2, 0])
        zoom_axes = [fig.add_subplot(gs[k // 2, 1 + k % 2]) for k in range(n_f)]
    legend_spec = gs[-1, :]

    return ax_all, zoom_axes, legend_spec


def _overview(ax_all, data, space: str, style, handles: dict):
    """The whole diagram: locus with labelled wavelengths, confusion lines, copunctal point and the box the
    zoomed panels show. Returns the locus labels and the box (lo, hi, pad)."""
    from matplotlib.patches import Rectangle

    locus, copunctal, mb = data["locus"], data["copunctal"], space == "mb"
    # --- overview --------------------------------------------------------------------------
    ax_all.plot(locus[:, 0], locus[:, 1], color="black", lw=0.8, gid="locus")
    if not mb:
        ax_all.plot([locus[0, 0], locus[-1, 0]], [locus[0, 1], locus[-1, 1]], color="black", lw=0.5,
                    linestyle=(0, (1, 1)))
    locus_texts = []
    for nm, offset, ha, va in _locus_labels(space):
        i = int(np.argmin(np.abs(data["locus_nm"] - nm)))
        ax_all.plot(*locus[i], marker="o", markersize=1.5, color="black", linestyle="none")
        locus_texts.append(ax_all.annotate(f"{nm}", xy=locus[i], xytext=offset, textcoords="offset points",
                                           fontsize=style.tick_size, color=NEUTRAL["text"], ha=ha, va=va,
                                           gid=f"locus-label-{nm}"))
    all_points = np.vstack([data["white"][None]] + [f["without"] for f in data["filters"]] +
                           [f["with"] for f in data["filters"]])
    if copunctal is not None:
        through = np.array([locus[int(np.argmin(np.abs(data["locus_nm"] - nm)))] for nm in _FAN_NM])
        d = through - copunctal
        dirs = d / np.linalg.norm(d, axis=1, keepdims=True)
        span = np.ptp(np.vstack([locus, copunctal[None]]), axis=0).max() * 1.6
        _draw_fan(ax_all, copunctal, dirs, span, "fan-overview")
        handles["copunctal"], = ax_all.plot(*copunctal, marker="X", color="black",
                                            markersize=style.marker_size * 1.6, linestyle="none", zorder=5,
                                            clip_on=False, gid="copunctal")
    elif data["deficiency"] == "tritan" and mb:
        # tritan lines are vertical in MacLeod-Boynton space (the copunctal point is at s = infinity)
        for k, x in enumerate(np.linspace(locus[:, 0].min(), locus[:, 0].max(), 11)[1:-1]):
            ax_all.axvline(x, color=NEUTRAL["line"], lw=0.45, linestyle=(0, (3, 2)), zorder=1,
                           gid=f"fan-overview-{k}")
    lo = all_points.min(axis=0)
    hi = all_points.max(axis=0)
    pad = 0.12 * (hi - lo) + 1e-3
    ax_all.add_patch(Rectangle(lo - pad, *(hi - lo + 2 * pad), fill=False, lw=0.6, edgecolor=OKABE_ITO["blue"],
                               zorder=4, gid="zoom-box"))
    frame = np.vstack([locus] + ([copunctal[None]] if copunctal is not None else []))
    flo, fhi = frame.min(axis=0), frame.max(axis=0)
    fpad = 0.05 * (fhi - flo)
    ax_all.set_xlim(flo[0] - fpad[0], fhi[0] + fpad[0])
    ax_all.set_ylim(flo[1] - (4.0 if mb else 1.0) * fpad[1], fhi[1] + 1.6 * fpad[1])
    ax_all.set_xlabel(data["axis_labels"][0])
    ax_all.set_ylabel(data["axis_labels"][1])
    if not mb:
        ax_all.set_aspect("equal", adjustable="box")

    return locus_texts, (lo, hi, pad)


def _zoom_panel(ax, k: int, f: dict, data, mb: bool, arrows, box, limits, first_in_row: bool, style,
                handles: dict) -> None:
    """One filter's panel: confusion lines, each surface's arrow without -> with the filter (adapted), the
    white without and through the filter, at the shared ``limits`` (lo, hi, pad)."""
    copunctal = data["copunctal"]
    mode, n_arrows = arrows
    lo, hi, pad = box
    zlo, zhi, zpad = limits
    w0, w1 = f["without"], f["with"]
    if copunctal is not None:
        dirs = _fan_directions(copunctal, np.vstack([w0, w1]))
        length = np.linalg.norm(np.vstack([w0, w1]) - copunctal, axis=1).max() * 1.5
        _draw_fan(ax, copunctal, dirs, length, f"fan-{k}")
        handles["confusion"] = ax.lines[-1]
    elif data["deficiency"] == "tritan" and mb:
        xs = np.linspace(lo[0] - pad[0], hi[0] + pad[0], 9)
        for j, x in enumerate(xs):
            line = ax.axvline(x, color=NEUTRAL["line"], lw=0.45, linestyle=(0, (3, 2)), zorder=1,
                              gid=f"fan-{k}-{j}")
        handles["confusion"] = line
    # Which arrows: every surface, a subset spread over the diagram, or mean shifts per cell.
    if mode == "mean":
        a0, a1, _ = _cell_means(w0, w1, w0.min(axis=0), w0.max(axis=0))
    elif mode == "subset":
        keep = arrow_subset(w0, n_arrows)
        a0, a1 = w0[keep], w1[keep]
    else:
        a0, a1 = w0, w1
    if len(a0) < len(w0):
        handles["other"], = ax.plot(w0[:, 0], w0[:, 1], linestyle="none", marker="o",
                                    markersize=style.marker_size * 0.45, color=NEUTRAL["fill"], zorder=3,
                                    gid=f"surfaces-all-{k}")
    # One quiver for all arrows (far lighter than an annotation per surface).
    ax.quiver(a0[:, 0], a0[:, 1], a1[:, 0] - a0[:, 0], a1[:, 1] - a0[:, 1], angles="xy",
              scale_units="xy", scale=1, color=OKABE_ITO["blue"], width=0.55 / 72, units="inches",
              headwidth=5.5, headlength=7, headaxislength=6.3, minlength=0.3, minshaft=1, zorder=5.5,
              gid=f"arrows-{k}")
    handles["without"], = ax.plot(a0[:, 0], a0[:, 1], linestyle="none", marker="o", markersize=style.marker_size,
                                  markerfacecolor="white", markeredgecolor="black", markeredgewidth=0.6,
                                  zorder=4, gid=f"surfaces-without-{k}")
    handles["with"], = ax.plot(a1[:, 0], a1[:, 1], linestyle="none", marker="o",
                               markersize=style.marker_size * 0.6, color=OKABE_ITO["blue"], zorder=5,
                               gid=f"surfaces-with-{k}")
    handles["white"], = ax.plot(*data["white"], linestyle="none", marker="*", markersize=style.marker_size * 2.2,
                                color="black", markeredgecolor="white", markeredgewidth=0.4, zorder=6,
                                gid="white" if k == 0 else f"white-{k}")
    handles["white_filtered"], = ax.plot(*f["white_filtered"], linestyle="none", marker="*",
                                         markersize=style.marker_size * 2.2, markerfacecolor="white",
                                         markeredgecolor=OKABE_ITO["vermillion"], markeredgewidth=0.8,
                                         zorder=6, gid=f"white-filtered-{k}")
    # Every zoomed panel has the same limits, so the filters compare at a glance.
    ax.set_xlim(zlo[0] - zpad[0], zhi[0] + zpad[0])
    ax.set_ylim(zlo[1] - zpad[1], zhi[1] + zpad[1])
    ax.set_xlabel(data["axis_labels"][0])
    if first_in_row:
        ax.set_ylabel(data["axis_labels"][1])
    else:
        ax.tick_params(axis="y", labelleft=False)
    ax.ticklabel_format(useOffset=False)
    if not mb:
        ax.set_aspect("equal", adjustable="box")



def _titles(fig, ax_all, zoom_axes, zoom_titles, data, arrows, n_surf: int, width_mm: float, style) -> None:
    """Panel titles wrapped to the measured panel width and padded to the same line count per row."""
    mode, n_arrows = arrows
    n_f = len(zoom_axes)
    # Panel titles wrapped to the panel's measured width and padded to the same line count, so the
    # panels of a row stay aligned.
    fig.draw_without_rendering()
    wrapped = [wrap_to_width(t, 0.92 * zoom_axes[k].bbox.width * 72 / fig.dpi, style.font_size)
               for k, t in enumerate(zoom_titles)]
    what = (f"{data['observer_label']}, {data['illuminant']}, {data['surfaces']} ({n_surf} surfaces"
            + {"all": ")", "subset": f"; arrows for {min(n_arrows, n_surf)} spread over the diagram)",
               "mean": "; arrows: mean shift per cell of a 4 x 4 grid)"}[mode])
    what = wrap_to_width(what, 0.9 * ax_all.bbox.width * 72 / fig.dpi, style.font_size)
    if width_mm >= 120:
        # the overview stands in the zoomed panels' (first) row: all titles of that row get one line count
        first_row = min(n_f, 2) if n_f > 2 else n_f
        padded = pad_lines([what] + wrapped[:first_row])
        what, wrapped = padded[0], padded[1:] + pad_lines(wrapped[first_row:])
    else:
        wrapped = pad_lines(wrapped)
    for ax, t in zip(zoom_axes, wrapped):
        ax.set_title(t, fontsize=style.font_size, loc="left")
    ax_all.set_title(what, loc="left", fontsize=style.font_size)


def _legend(fig, legend_spec, handles: dict, mode: str, illuminant: str, deficiency, width_mm: float,
            style) -> None:
    legend_items = [("without", "surface, no filter" if mode != "mean" else "mean of a cell, no filter"),
                    ("with", "with filter (adapted)"),
                    ("white", f"white ({illuminant})"),
                    ("white_filtered", "filtered white, unadapted")]
    if "other" in handles:
        legend_items.append(("other", "other surfaces (no arrow)" if mode == "subset" else "each surface"))
    if "confusion" in handles:
        legend_items.append(("confusion", f"{deficiency} confusion lines"))
    if "copunctal" in handles:
        legend_items.append(("copunctal", "copunctal point"))
    texts = legend_labels([t for _, t in legend_items], width_mm, style.font_size, handle_pt=24)
    legend_axes(fig, legend_spec, [handles[k] for k, _ in legend_items], texts,
                ncols=legend_columns(texts, width_mm, style.font_size, max_cols=3, handle_pt=24),
                handlelength=1.8, columnspacing=1.0)
