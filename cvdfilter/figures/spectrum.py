"""``spectrum``: filter transmittance over the illuminant and the cone fundamentals.

Two panels sharing the wavelength axis. Top: each filter's spectral
transmittance (%), its notches shaded over their full width at half depth and
labelled with centre and FWHM (:func:`cvdfilter.spectra.filters.find_notches`).
Bottom: the illuminant's relative spectral power (grey fill) and the normal
observer's L, M and S cone fundamentals (energy-based, peak 1; CIE 170-1:2006),
with each anomalous observer's shifted cone drawn in its own dashed style.

Public: :func:`spectrum_figure`.
"""

from __future__ import annotations

import numpy as np

from .inputs import load_inputs
from .labelling import (callouts_fit, display_names, ensure_axes_height, filter_labels, legend_below, legend_columns,
                        legend_labels, observer_label, spread_callouts)
from .output import FigureResult, finish, new_figure, style_context
from .palette import NEUTRAL, series
from .style import Style

__all__ = ["spectrum_figure"]

_CONE_NAMES = ("L", "M", "S")
_CONE_GREY = "#3A3A3A"
_CONE_LINES = ("-", (0, (4, 1.5)), (0, (1, 1.2)))
_SHIFTED_LINES = ((0, (5, 1.5, 1, 1.5)), (0, (6, 1.5, 1, 1.5, 1, 1.5)), (0, (2.5, 1.2)))
_SHIFTED_MARKERS = ("o", "s", "^")


def _label_cones(ax, wl, fundamentals, style):
    """Direct labels: S and M left of their rising flanks, L right of its falling flank (clear of every curve)."""
    s_peak = int(np.argmax(fundamentals[:, 2]))
    i_s = int(np.argmin(np.abs(fundamentals[:s_peak, 2] - 0.8)))
    ax.annotate("S", xy=(wl[i_s], fundamentals[i_s, 2]), xytext=(-4, 0), textcoords="offset points",
                ha="right", va="center", fontsize=style.font_size, color=_CONE_GREY, gid="cone-label-S")
    m_peak = int(np.argmax(fundamentals[:, 1]))
    i_m = int(np.argmin(np.abs(fundamentals[:m_peak, 1] - 0.8)))
    ax.annotate("M", xy=(wl[i_m], fundamentals[i_m, 1]), xytext=(-4, 0), textcoords="offset points",
                ha="right", va="center", fontsize=style.font_size, color=_CONE_GREY, gid="cone-label-M")
    l_peak = int(np.argmax(fundamentals[:, 0]))
    i_l = l_peak + int(np.argmin(np.abs(fundamentals[l_peak:, 0] - 0.8)))
    ax.annotate("L", xy=(wl[i_l], fundamentals[i_l, 0]), xytext=(4, 0), textcoords="offset points",
                ha="left", va="center", fontsize=style.font_size, color=_CONE_GREY, gid="cone-label-L")


def _callouts_clear(fig, labels, pad_pt: float = 2.0) -> bool:
    """Whether the laid-out callouts stay inside the figure and apart from each other (measured)."""
    from matplotlib.text import Text

    fig.draw_without_rendering()
    renderer = fig.canvas.get_renderer()
    boxes = [Text.get_window_extent(a, renderer) for a in labels]
    pad = pad_pt * fig.dpi / 72.0
    inside = all(b.x0 >= fig.bbox.x0 and b.x1 <= fig.bbox.x1 and b.y1 <= fig.bbox.y1 for b in boxes)
    apart = all(a.x1 + pad <= b.x0 or b.x1 + pad <= a.x0 or a.y1 <= b.y0 or b.y1 <= a.y0
                for a, b in zip(boxes, boxes[1:])) and all(
        not (a.x0 < b.x1 and b.x0 < a.x1 and a.y0 < b.y1 and b.y0 < a.y1)
        for k, a in enumerate(boxes) for b in boxes[k + 1:])
    return inside and apart


def _cone_legend(base) -> str:
    """What the L, M, S curves are: the standard, field size, age and energy basis."""
    p = base.params
    if p.get("data", "cie2006") != "cie2006":
        source = f"tabulated {p['data']}"
    else:
        source = f"CIE 170-1, {p.get('field', 2.0):g}\u00b0, {p.get('age', 32.0):g} y"
    return f"L, M, S cone fundamentals ({source}; energy-based, peak 1)"


def spectrum_figure(filters, *, illuminant="D65", observers=("normal",), style: Style | None = None,
                    width_mm: float = 89.0, height_mm: float | None = None, title: str | None = None,
                    caveat: str | None = None) -> FigureResult:
    """Filter transmittance with notches, illuminant SPD and cone fundamentals.

    Parameters
    ----------
    filters
        Filter specs, paths, example names or a FilterSet (at most 16).
    illuminant : str
        Illuminant spec (its SPD is drawn relative to its maximum).
    observers : sequence of str
        Observer specs: the first observer's normal base gives L, M, S; each
        anomalous observer adds its shifted cone.
    style, width_mm, height_mm, title, caveat
        Presentation; ``caveat`` is None here by default (the figure shows
        measured or specified curves, no model prediction).

    Returns
    -------
    FigureResult
        ``data``: ``wavelengths`` (nm), ``transmittance`` (fraction, (n_filters, n_wl)),
        ``filters`` (names), ``notches`` (per filter: dicts with centre, FWHM in nm and depth),
        ``illuminant_relative`` (peak 1), ``cones`` (label -> (n_wl,) sensitivity, peak 1).
    """
    from ..spectra.filters import filter_notches

    style = style or Style()
    got = load_inputs(filters, illuminant=illuminant, observers=list(observers) or ["normal"])
    fs, ill, obs = got["filters"], got["illuminant"], got["observers"]
    wl = fs.wavelengths
    styles = series(len(fs))
    base = obs[0].base or obs[0]
    rel_spd = ill.spd / ill.spd.max()
    notches = filter_notches(fs)  # files: found on the measured samples; specs: on the grid
    cones = {f"{_CONE_NAMES[c]} (normal)": base.fundamentals[:, c] for c in range(3)}
    shifted = []
    for o in obs:
        if o.kind == "anomalous":
            c = o.affected_cone
            label = f"{_CONE_NAMES[c]}\u2032 {observer_label(o)}"
            cones[label] = o.fundamentals[:, c]
            shifted.append((label, c))

    height_mm = height_mm or (width_mm * 1.2 if width_mm < 120 else width_mm * 0.62)
    with style_context(style):
        fig = new_figure(style, width_mm, height_mm)
        ax_t, ax_s = fig.subplots(2, 1, sharex=True, height_ratios=[1.25, 1.0])
        labels, label_pos = _transmittance_panel(fig, ax_t, fs, notches, styles, style)
        _sensitivity_panel(ax_s, wl, rel_spd, ill.name, base, cones, shifted, style)
        _legend(fig, ax_t, ax_s, notches, base, style, width_mm)
        finish(fig, style, title=title, caveat=caveat)
        ensure_axes_height(fig, [ax_t, ax_s], 24.0 if width_mm < 120 else 30.0)
        # Twice: the second pass measures the labels in the layout the first pass produced.
        for _ in range(2):
            spread_callouts(fig, ax_t, labels, label_pos, pad_pt=7.0)
        if labels and not _callouts_clear(fig, labels):
            # measured in the final layout: they do not fit after all
            for a in labels:
                a.remove()
            labels = []
            _notches_to_legend(ax_t, notches)
            ax_s.get_legend().remove()
            _legend(fig, ax_t, ax_s, notches, base, style, width_mm)
            ensure_axes_height(fig, [ax_t, ax_s], 24.0 if width_mm < 120 else 30.0)

    data = {"wavelengths": wl, "transmittance": fs.transmittance, "filters": list(fs.names),
            "notches": [[{k: n[k] for k in ("center", "fwhm", "depth")} for n in ns] for ns in notches],
            "illuminant_relative": rel_spd, "cones": cones}
    inputs = {"filters": list(fs.names), "illuminant": ill.name, "observers": [o.spec for o in obs]}
    return FigureResult("spectrum", fig, data, style, inputs)


def _transmittance_panel(fig, ax_t, fs, notches, styles, style):
    """Transmittance curves with each notch's FWHM bar and a callout above the panel (the callouts go into the
    legend when they cannot stand side by side). Returns the callouts and their anchors."""
    wl = fs.wavelengths
    label_pos, label_text, label_color = [], [], []
    names = display_names(fs)
    legend_names = filter_labels(names, limit=10_000)
    for i, (name, t) in enumerate(zip(names, fs.transmittance)):
        st = styles[i]
        ax_t.plot(wl, 100 * t, color=st.color, linestyle=st.linestyle, label=legend_names[i],
                  gid=f"transmittance-{i}")
        for n in notches[i]:
            lo, hi = n["center"] - n["fwhm"] / 2, n["center"] + n["fwhm"] / 2
            # The full width at half depth as a bar at the half-depth level, in the filter's own colour
            # and line style: overlapping notches stay apart (no blended shading).
            level = float(np.interp(lo, wl, 100 * t) + np.interp(hi, wl, 100 * t)) / 2
            ax_t.plot([lo, hi], [level, level], color=st.color, linestyle=st.linestyle,
                      lw=style.line_width * 2.2, marker="|", markersize=style.marker_size * 1.6,
                      markeredgewidth=style.line_width * 1.2, solid_capstyle="butt", zorder=3.5,
                      gid=f"notch-{i}")
            label_pos.append(n["center"])
            label_text.append(f"{n['center']:.0f} nm\nFWHM {n['fwhm']:.0f} nm")
            label_color.append(st.color)
    # Notch labels sit above the panel, raised where they would collide.
    labels = [ax_t.annotate(text, xy=(x, 104), xytext=(x, 3), textcoords=("data", "offset points"),
                            ha="center", va="bottom", fontsize=style.tick_size, color=color,
                            linespacing=1.0, annotation_clip=False,
                            arrowprops={"arrowstyle": "-", "color": color, "lw": 0.5, "shrinkA": 0,
                                        "shrinkB": 0})
              for x, text, color in zip(label_pos, label_text, label_color)]
    ax_t.set_ylim(0, 104)
    ax_t.set_xlim(wl[0], wl[-1])
    # Notch labels stay above the panel while they fit side by side in one row; beyond that
    # they would overlap, so centre and FWHM go into the legend instead.
    if not callouts_fit(fig, ax_t, labels, pad_pt=7.0):
        for a in labels:
            a.remove()
        labels, label_pos = [], []
        _notches_to_legend(ax_t, notches)
    ax_t.set_yticks([0, 25, 50, 75, 100])
    ax_t.set_ylabel("Transmittance (%)")
    return labels, label_pos


def _notches_to_legend(ax_t, notches) -> None:
    """Centre and FWHM go into the legend when the callouts cannot stand side by side."""
    by_gid = {line.get_gid(): line for line in ax_t.get_lines()}
    for i in range(len(notches)):
        line = by_gid[f"transmittance-{i}"]
        if notches[i] and "FWHM" not in line.get_label():
            line.set_label(line.get_label() + "; " + ", ".join(
                f"{n['center']:.0f} nm, FWHM {n['fwhm']:.0f} nm" for n in notches[i]))


def _sensitivity_panel(ax_s, wl, rel_spd, ill_name: str, base, cones: dict, shifted: list, style) -> None:
    """The illuminant's relative power, the normal cones in grey (labelled on their flanks) and each anomalous
    observer's shifted cone in black."""
    ax_s.fill_between(wl, 0, rel_spd, color=NEUTRAL["fill"], alpha=0.55, lw=0,
                      label=f"{ill_name} (relative power)", gid="illuminant")
    # Cones in dark grey (the coloured series belong to the filters above), told apart by
    # line style and labelled directly on their flanks.
    for c in range(3):
        ax_s.plot(wl, base.fundamentals[:, c], color=_CONE_GREY, linestyle=_CONE_LINES[c],
                  gid=f"cone-{c}")
    _label_cones(ax_s, wl, base.fundamentals, style)
    for k, (label, c) in enumerate(shifted):
        ax_s.plot(wl, cones[label], color="black", linestyle=_SHIFTED_LINES[k % len(_SHIFTED_LINES)],
                  lw=style.line_width * 1.2, marker=_SHIFTED_MARKERS[k % len(_SHIFTED_MARKERS)],
                  markevery=(k * 7 + 10, 25), markersize=style.marker_size * 0.9,
                  markerfacecolor="white", label=label, gid=f"shifted-cone-{k}")
    ax_s.set_ylim(0, 1.05)
    ax_s.set_yticks([0, 0.25, 0.5, 0.75, 1.0], ["0", "", "0.5", "", "1.0"])
    ax_s.set_ylabel("Relative sensitivity\nor power")
    ax_s.set_xlabel("Wavelength (nm)")
    ax_s.set_xlim(wl[0], wl[-1])
    ax_s.set_xticks(np.arange(400, wl[-1] + 1, 100))
    ax_s.set_xticks(np.arange(400, wl[-1] + 1, 50), minor=True)


def _legend(fig, ax_t, ax_s, notches, base, style, width_mm: float) -> None:
    """One legend under both panels: filters, illuminant, shifted cones, the notch bar and the cones."""
    from matplotlib.lines import Line2D

    handles, texts = [], []
    for ax in (ax_t, ax_s):
        h, t = ax.get_legend_handles_labels()
        handles += h
        texts += t
    if any(notches):
        handles.append(Line2D([], [], color=NEUTRAL["text"], lw=style.line_width * 2.2, marker="|",
                              markersize=style.marker_size * 1.6, markeredgewidth=style.line_width * 1.2,
                              solid_capstyle="butt"))
        texts.append("notch: full width at half depth (FWHM)")
    handles.append(Line2D([], [], color=_CONE_GREY, lw=style.line_width))
    texts.append(_cone_legend(base))
    texts = legend_labels(texts, width_mm, style.font_size)
    legend_below(fig, ax_s, handles, texts, ncols=legend_columns(texts, width_mm, style.font_size, max_cols=3),
                 handlelength=2.6, columnspacing=1.2, center_on_figure=True)
