"""``hues``: the chroma shift per hue bin of the light through the filter.

The scorecard's colour-rendition block (colour-science's ANSI/IES TM-30-18
implementation, CIE 224:2017 samples) gives, for the illuminant seen through
each filter, the local chroma shift R_cs,hj of each of the 16 hue bins
(percent; positive = more saturated than under the reference illuminant of
the same correlated colour temperature). The figure shows them for every
filter next to the illuminant alone, as grouped bars (default) or as closed
outlines on a polar chart of relative chroma (100 % = no change).

Public: :func:`hues_figure`.
"""

from __future__ import annotations

import numpy as np

from ..errors import InputError
from .inputs import load_filters_checked
from .labelling import ensure_axes_height, filter_labels, legend_axes, legend_columns, legend_labels, wrap_to_width
from .scorecard_values import figure_results
from .output import FigureResult, finish, new_figure, style_context
from .palette import NEUTRAL, series
from .style import Style

__all__ = ["hues_figure", "hues_card", "CHARTS", "N_BINS", "HUE_BIN_NAMES", "hue_bin_colours"]

CHARTS = ("bar", "radial")
N_BINS = 16
_NO_FILTER = "no filter"
#: Approximate colour names of the 16 TM-30 hue bins (22.5 deg of CAM02-UCS hue each, bin 1 from 0 deg),
#: placed against the CIECAM02 unique hues red 20.14, yellow 90, green 164.25, blue 237.53 deg (CIE 159:2004
#: hue quadrature; from memory). Names for reading the figure, not a colour standard.
HUE_BIN_NAMES = ("red", "red-orange", "orange", "yellow-orange", "yellow", "yellow-green", "yellowish green",
                 "green", "blue-green", "cyan", "blue", "violet-blue", "violet", "purple", "magenta", "pink-red")


def hue_bin_colours(lightness: float = 62.0, colourfulness: float = 28.0) -> np.ndarray:
    """sRGB (0-1, clipped) of each hue bin's centre hue in CAM02-UCS at a moderate lightness and chroma.

    colour-science: CAM02-UCS J'a'b' -> XYZ (CIECAM02 defaults, D65, L_A 64 cd/m2, Y_b 20) -> sRGB.
    """
    import colour

    h = np.deg2rad((np.arange(N_BINS) + 0.5) * 360.0 / N_BINS)
    jab = np.stack([np.full(N_BINS, lightness), colourfulness * np.cos(h), colourfulness * np.sin(h)], axis=-1)
    xyz = colour.CAM02UCS_to_XYZ(jab)       # colour-science returns XYZ on a 0-1 scale here
    return np.clip(colour.XYZ_to_sRGB(xyz), 0.0, 1.0)


def _rendition_card(filters, illuminant):
    """Scorecard (rendition only, normal observer) of the illuminant alone and through each filter."""
    from ..scorecard import score
    from ..spectra.filters import FilterSet

    fs = load_filters_checked(filters)
    plain = FilterSet((_NO_FILTER,), np.ones((1, fs.grid.size)), fs.grid, ("array",), ({"spec": "none"},))
    return score(plain.concat(fs), illuminant=illuminant, observers=("normal",), metrics="photometry,rendition",
                 surfaces="ces99")


def hues_card(card, grid, illuminant):
    """The scorecard with the illuminant alone as its first filter (for :func:`hues_figure`): a Scorecard
    for a Scorecard (filter properties only), a JSON document for a JSON document."""
    from dataclasses import replace

    from ..scorecard import score
    from ..spectra.filters import FilterSet

    plain = FilterSet((_NO_FILTER,), np.ones((1, grid.size)), grid, ("array",), ({"spec": "none"},))
    alone = score(plain, illuminant=illuminant, observers=("normal",), metrics="photometry,rendition",
                  surfaces="ces99")
    if isinstance(card, dict):
        return {**card, "filters": alone.to_dict()["filters"] + list(card["filters"])}
    keys = [k for k in card.results if k in alone.results]
    results = {k: np.concatenate([np.asarray(alone.results[k]), np.asarray(card.results[k])]) for k in keys}
    return replace(card, filters=plain.concat(card.filters), observers=[], per_observer=[], results=results)


def hues_figure(filters, *, illuminant="D65", observers=None, surfaces=None, adaptation="full",
                chart: str = "bar", style: Style | None = None, width_mm: float = 89.0,
                height_mm: float | None = None, title: str | None = None, caveat: str | None = None,
                card=None) -> FigureResult:
    """TM-30 local chroma shifts per hue bin, illuminant alone and through each filter.

    Parameters
    ----------
    filters
        One to seven filters.
    illuminant : str
    observers, surfaces, adaptation
        Not used: TM-30 is defined for the CIE 1964 standard observer and its
        own 99 samples; accepted so the common options can be passed.
    chart : str
        ``bar`` or ``radial``.
    card : Scorecard or dict, optional
        A scorecard (or its JSON document) with the rendition block whose first filter is the
        illuminant alone (as :func:`hues_card` builds it).

    Returns
    -------
    FigureResult
        ``data``: ``bins`` (1-16), ``series``: list of {``name``, ``chroma_shift`` (16,) in %},
        the first being the illuminant alone. Artists: ``hue-bars-<i>`` (bar containers'
        patches carry ``hue-bar-<i>-<bin>``) or ``hue-outline-<i>``; ``hue-reference``.
    """
    style = style or Style()
    chart = str(chart).lower()
    if chart not in CHARTS:
        raise InputError(f"--chart {chart} is not bar or radial")
    if card is None:
        card = _rendition_card(filters, illuminant)
    res = figure_results(card)
    if len(res.filters) > 8:
        raise InputError(f"{len(res.filters) - 1} filters: the hues figure compares at most 7")
    if not res.has_filter_metric("rendition.chroma_shifts"):
        raise InputError("the scorecard has no rendition block", hint="score with metrics='all'")
    shifts = res.filter_values("rendition.chroma_shifts")
    data_series = [{"name": n, "chroma_shift": np.asarray(v, dtype=float)} for n, v in zip(res.filters, shifts)]
    ill = res.context.get("illuminant")
    ill_name = ill["name"] if isinstance(ill, dict) else str(ill)
    if height_mm is None:
        height_mm = (width_mm * 1.05 if chart == "bar" else width_mm * 1.15) if width_mm < 120 else width_mm * 0.55
    with style_context(style):
        fig = new_figure(style, width_mm, height_mm)
        gs = fig.add_gridspec(3, 1, height_ratios=[1.0, 0.035, 0.001] if chart == "bar" else [1.0, 0.0005, 0.001],
                              hspace=0.0)
        draw = _bar_chart if chart == "bar" else _radial_chart
        ax, handles = draw(fig, gs, data_series, f"{ill_name} alone", style, width_mm)
        texts = [h.get_label() for h in handles]
        texts = legend_labels(texts, width_mm, style.font_size, handle_pt=30)
        legend_axes(fig, gs[2, 0], handles, texts, ncols=legend_columns(texts, width_mm, style.font_size, max_cols=3),
                    handlelength=1.8,
                    columnspacing=1.0)
        finish(fig, style, title=title, caveat=caveat)
        ensure_axes_height(fig, [ax], 35.0 if width_mm < 120 else 45.0)

    data = {"bins": np.arange(1, N_BINS + 1), "series": data_series, "chart": chart, "illuminant": ill_name}
    inputs = {"filters": [s["name"] for s in data_series[1:]], "illuminant": ill_name, "chart": chart}
    return FigureResult("hues", fig, data, style, inputs)


def _bar_chart(fig, gs, data_series, reference_label: str, style, width_mm: float):
    """Bars per filter and hue bin, the illuminant alone as a black step, the bins as a hue strip below."""
    bins = np.arange(1, N_BINS + 1)
    filt = data_series[1:]
    styles = series(len(filt))
    legend_names = filter_labels([s["name"] for s in filt], limit=10_000)
    handles = []
    ax = fig.add_subplot(gs[0, 0])
    width = 0.8 / max(len(filt), 1)
    for i, s in enumerate(filt):
        x = bins - 0.4 + width * (i + 0.5)
        bars = ax.bar(x, s["chroma_shift"], width=width * 0.92, color=styles[i].color, lw=0,
                      label=legend_names[i], gid=f"hue-bars-{i}",
                      hatch=None if i % 2 == 0 else "////", edgecolor="white" if i % 2 else None)
        for b, j in zip(bars.patches, bins):
            b.set_gid(f"hue-bar-{i}-{j}")
        handles.append(bars)
    ref = data_series[0]["chroma_shift"]
    # The illuminant alone: a black step across each bin.
    xs = (bins[:, None] + np.array([-0.45, 0.45, np.nan])).ravel()
    ys = np.column_stack([ref, ref, np.full(N_BINS, np.nan)]).ravel()
    h, = ax.plot(xs, ys, color="black", lw=1.0, gid="hue-reference", label=reference_label, zorder=3)
    handles.append(h)
    ax.axhline(0.0, color=NEUTRAL["line"], lw=0.6, zorder=0)
    values = np.concatenate([ref] + [s["chroma_shift"] for s in filt])
    top = max(10.0, 1.1 * np.nanmax(np.abs(values)))
    ax.set_ylim(-top, top)
    ax.set_xlim(0.4, N_BINS + 0.6)
    ax.set_xticks(bins, [])
    ax.tick_params(axis="x", length=0)
    ax.set_ylabel("Local chroma shift (%)")
    for x in bins[:-1] + 0.5:
        ax.axvline(x, color=NEUTRAL["light"], lw=0.4, zorder=0)
    _hue_strip(fig.add_subplot(gs[1, 0]), bins, style, width_mm)
    return ax, handles


def _hue_strip(strip, bins, style, width_mm: float) -> None:
    """The bins named and coloured by their hue, in a strip under the bars."""
    strip.imshow(hue_bin_colours()[None], extent=(0.5, N_BINS + 0.5, 0, 1), aspect="auto",
                 interpolation="nearest", gid="hue-strip")
    strip.set_yticks([])
    for side in ("left", "bottom", "top", "right"):
        strip.spines[side].set_visible(False)
    strip.set_xticks(bins, [f"{j} {HUE_BIN_NAMES[j - 1]}" for j in bins], rotation=90)
    strip.tick_params(axis="x", length=0, pad=2)
    strip.set_xlim(0.4, N_BINS + 0.6)
    strip.set_xlabel(wrap_to_width("TM-30 hue bin (22.5\u00b0 of CAM02-UCS hue each; names approximate)",
                                   0.9 * width_mm / 25.4 * 72, style.font_size))


def _radial_chart(fig, gs, data_series, reference_label: str, style, width_mm: float):
    """Relative chroma per hue bin on a polar axis (100 % = as under the reference), from 0 % chroma."""
    bins = np.arange(1, N_BINS + 1)
    filt = data_series[1:]
    styles = series(len(filt))
    legend_names = filter_labels([s["name"] for s in filt], limit=10_000)
    ax = fig.add_subplot(gs[0, 0], projection="polar")
    theta = np.deg2rad((bins - 0.5) * 22.5)
    closed = np.append(theta, theta[0])
    ref = data_series[0]["chroma_shift"]
    h, = ax.plot(closed, 100 + np.append(ref, ref[0]), color="black", lw=0.9, linestyle=(0, (3, 1.5)),
                 gid="hue-reference", label=reference_label)
    handles = [h]
    for i, s in enumerate(filt):
        r = 100 + np.append(s["chroma_shift"], s["chroma_shift"][0])
        h, = ax.plot(closed, r, markersize=style.marker_size, gid=f"hue-outline-{i}",
                     label=legend_names[i], **styles[i].line_kwargs())
        handles.append(h)
    ring = np.linspace(0, 2 * np.pi, 181)
    ax.plot(ring, np.full_like(ring, 100.0), color=NEUTRAL["text"], lw=0.8, zorder=1)
    values = np.concatenate([ref] + [s["chroma_shift"] for s in filt])
    # The radius starts at 0 % chroma, so areas and distances are not exaggerated.
    lo = 0.0
    hi = max(125.0, 100 + np.nanmax(values) + 5)
    ax.set_ylim(lo, hi)
    ax.set_xticks(np.deg2rad((bins - 1) * 22.5), [f"{(j - 1) * 22.5:g}\u00b0" if j % 2 else "" for j in bins])
    ticks = [t for t in (50, 100, 150, 200) if lo < t <= hi]
    ax.set_yticks(ticks, [f"{t}%" for t in ticks])
    ax.set_rlabel_position(100)
    ax.tick_params(axis="y", labelsize=style.tick_size)
    ax.set_title("Relative chroma per hue bin (100 % = as under the reference;\n"
                 "angle: CAM02-UCS hue)", fontsize=style.font_size)
    return ax, handles
