"""``sweep``: scorecard metrics against a swept filter parameter.

For design studies: give a sweep spec such as
``notch:center=540..600/5,fwhm=30,depth=0.8`` and the figure plots, in one
panel per metric sharing the x axis, each metric against the swept
parameter (default: red-green gain per observer and luminous transmittance).
When a second parameter varies too (``center=540..600/5,fwhm=20..40/10``),
the figure is a heat map instead: one panel per metric and observer, the
first parameter across, the second up, the value as colour on the cividis
scale (Nunez, Anderton & Renslow 2018, PLoS ONE 13, e0199239: lightness
rises monotonically, so it reads in greyscale and for dichromats), one
colour bar per metric shared by its panels, and the value printed in each
cell where it fits. Values come from the scorecard
(:func:`cvdfilter.scorecard.score`), so the figure shows what
``cvdfilter score`` reports.

Public: :func:`sweep_figure`, :func:`swept_parameters`.
"""

from __future__ import annotations

import re

import numpy as np

from ..errors import InputError
from .common import (ensure_axes_height, legend_below, legend_columns, legend_labels, load_filters_checked, observer_label,
                     text_width_pt, wrap_to_width)
from .metrics import RATIO_METRICS, metric_label, metric_values, scorecard_dict
from .output import FigureResult, finish, new_figure, style_context
from .palette import NEUTRAL, OKABE_ITO, SeriesStyle, series
from .style import Style

__all__ = ["sweep_figure", "swept_parameters", "filter_parameters", "DEFAULT_SWEEP_METRICS", "HEATMAP_CMAP"]

#: The heat map's colour scale (perceptually uniform, monotonic lightness; designed for colour-vision deficiency).
HEATMAP_CMAP = "cividis"

DEFAULT_SWEEP_METRICS = ("red_green_gain", "luminous_transmittance")
_PARAM = re.compile(r"([A-Za-z_]+)=([-+0-9.eE]+)")
_PERCENT_METRICS = ("luminous_transmittance",)
_SHORT = {"fwhm": "FWHM"}
_UNITS = {"center": "nm", "fwhm": "nm", "edge": "nm", "width": "nm", "depth": "", "od": "", "t": "", "order": ""}
_NAMES = {"center": "Notch centre", "fwhm": "Notch FWHM", "depth": "Notch depth", "od": "Optical density",
          "edge": "Edge wavelength", "width": "Edge width (10-90 %)", "t": "Transmittance", "order": "Order"}


_NEUTRAL_SERIES = SeriesStyle(OKABE_ITO["black"], "-", "o", "black")   # a filter property: plain black


def swept_parameters(names) -> tuple[list[str], dict[str, np.ndarray]]:
    """Parameters in the filter names and which of them vary.

    Parameters
    ----------
    names : sequence of str
        Filter names as the spec parser writes them (``notch:center=540,depth=0.8,fwhm=30``;
        stacks joined by ``*``; a key that occurs in two stacked terms becomes ``key#2``).

    Returns
    -------
    varying : list of str
        Keys whose value differs between filters, in the order they appear.
    values : dict
        key -> values (n_filters,) for every key present in all names.
    """
    table: list[dict[str, float]] = []
    for name in names:
        row: dict[str, float] = {}
        for term in str(name).split("*"):
            for key, value in _PARAM.findall(term):
                k, n = key.lower(), 2
                while k in row:
                    k = f"{key.lower()}#{n}"
                    n += 1
                row[k] = float(value)
        table.append(row)
    keys = [k for k in table[0] if all(k in r for r in table)] if table else []
    values = {k: np.array([r[k] for r in table]) for k in keys}
    varying = [k for k in keys if np.ptp(values[k]) > 0]
    return varying, values


def filter_parameters(fs) -> tuple[list[str], dict[str, np.ndarray]]:
    """:func:`swept_parameters` read from the filters' records (the spec each was made from) where they
    carry one, else from their names."""
    infos = list(getattr(fs, "info", ()) or ())
    specs = [i.get("spec") if isinstance(i, dict) else None for i in infos]
    if len(specs) == len(fs.names) and all(specs):
        return swept_parameters(specs)
    return swept_parameters(fs.names)


def _axis_label(key: str) -> str:
    base = key.split("#")[0]
    name = _NAMES.get(base, base)
    if "#" in key:
        name += f" (term {key.split('#')[1]})"
    unit = _UNITS.get(base, "")
    return f"{name} ({unit})" if unit else name


def sweep_figure(filters, *, illuminant="D65", observers=None, surfaces=None, adaptation="full",
                 metrics=None, x: str | None = None, style: Style | None = None, width_mm: float = 89.0,
                 height_mm: float | None = None, title: str | None = None, caveat: str | None = None,
                 card: dict | None = None) -> FigureResult:
    """Metrics against a swept filter parameter.

    Parameters
    ----------
    filters
        A sweep spec (or several filters whose names carry parameters).
    illuminant, observers, surfaces, adaptation
        Passed to the scorecard (its defaults where None).
    metrics : sequence of str, optional
        Scorecard metric names (:mod:`cvdfilter.figures.metrics`); default
        red-green gain and luminous transmittance.
    x : str, optional
        The parameter on the x axis (default: the first that varies).
    card : dict, optional
        A scorecard dict already computed for exactly these filters.

    Returns
    -------
    FigureResult
        ``data``: ``x`` (parameter values), ``x_key``, ``panels``: list of
        ``{"metric", "label", "lines": [{"label", "x", "y", "observer", "group"}]}``
        with y in display units (luminous transmittance in %).
    """
    style = style or Style()
    metrics = list(metrics or DEFAULT_SWEEP_METRICS)
    fs = load_filters_checked(filters)
    varying, values = filter_parameters(fs)
    if len(fs) < 2 or not varying:
        raise InputError("a sweep needs several filters that differ in one parameter",
                         hint="e.g. notch:center=540..600/5,fwhm=30,depth=0.8")
    if x is None:
        x = varying[0]
    if x not in values:
        raise InputError(f"--x {x}: no such parameter in the filter names",
                         hint=f"parameters: {', '.join(values)}")
    others = [k for k in varying if k != x]
    group_keys = [tuple(values[k][i] for k in others) for i in range(len(fs))]
    groups = sorted(set(group_keys))
    if card is None:
        card = scorecard_dict(fs, illuminant=illuminant, observers=observers, surfaces=surfaces,
                              adaptation=adaptation, metrics="core")

    panels = []
    for metric in metrics:
        label, scale = metric_label(metric)
        lines = []
        for who, vals in metric_values(card, metric).items():
            for g in groups:
                idx = np.array([i for i in range(len(fs)) if group_keys[i] == g])
                order = idx[np.argsort(values[x][idx], kind="stable")]
                parts = []
                if who:
                    parts.append(who)
                parts += [f"{k.split('#')[0]} {v:g}" for k, v in zip(others, g)]
                lines.append({"label": ", ".join(parts), "observer": who or None, "group": dict(zip(others, g)),
                              "x": values[x][order], "y": scale * vals[order]})
        panels.append({"metric": metric, "label": label, "lines": lines})

    if len(others) == 1:
        return _heatmap(fs, card, metrics, x, others[0], values, varying, style=style, width_mm=width_mm,
                        height_mm=height_mm, title=title, caveat=caveat)
    n_lines = max(len(p["lines"]) for p in panels)
    styles = series(n_lines)
    height_mm = height_mm or (width_mm * (0.32 + 0.45 * len(panels)) if width_mm < 120
                              else width_mm * (0.15 + 0.2 * len(panels)))
    with style_context(style):
        fig = new_figure(style, width_mm, height_mm)
        axes = np.atleast_1d(fig.subplots(len(panels), 1, sharex=True, squeeze=False)[:, 0])
        observer_names = {}
        for ax, panel in zip(axes, panels):
            missing = []
            for k, line in enumerate(panel["lines"]):
                # a filter property (one line, no observer) in neutral black: it belongs to no observer's style
                st = styles[k] if (len(panel["lines"]) > 1 or line["observer"]) else _NEUTRAL_SERIES
                text = line["label"]
                if line["observer"]:
                    from ..observers.observer import observer as make_observer

                    obs = observer_names.setdefault(line["observer"], observer_label(make_observer(line["observer"])))
                    text = ", ".join([obs] + [p for p in text.split(", ")[1:]])
                if np.all(np.isnan(line["y"])):
                    # e.g. a dichromat has no red-green axis: say so instead of an empty legend entry
                    missing.append(text)
                    continue
                ax.plot(line["x"], line["y"], markersize=style.marker_size * 0.9, label=text,
                        gid=f"sweep-{panel['metric']}-{k}", **st.line_kwargs())
            if missing:
                # wrapped to the axes' width (measured): never cut at the figure's edges
                room = 0.7 * width_mm / 25.4 * 72
                ax.set_title(wrap_to_width("not defined for " + ", ".join(dict.fromkeys(missing)), room,
                                           style.tick_size), loc="left", fontsize=style.tick_size,
                             color=NEUTRAL["text"], pad=2, gid=f"na-{panel['metric']}")
            if panel["metric"] in RATIO_METRICS:
                ax.axhline(1.0, color=NEUTRAL["line"], lw=0.6, zorder=0, gid="reference-1")
            ax.set_ylabel(panel["label"])
            if panel["metric"] in _PERCENT_METRICS:
                ax.set_ylim(0, 100)
        axes[-1].set_xlabel(_axis_label(x))
        fig.align_ylabels(axes)
        # One legend under the panels: the observer lines are the same in every panel.
        seen: dict[str, object] = {}
        for ax in axes:
            for h, t in zip(*ax.get_legend_handles_labels()):
                seen.setdefault(t, h)
        if max(len(p["lines"]) for p in panels) > 1 and seen:
            handles, texts = list(seen.values()), legend_labels(list(seen), width_mm, style.font_size)
            legend_below(fig, axes[-1], handles, texts, ncols=legend_columns(texts, width_mm, style.font_size, max_cols=3),
                         handlelength=2.6, columnspacing=1.2, center_on_figure=True)
        fixed = _fixed_text(values, varying)
        full_title = title
        if title and fixed:
            full_title = f"{title} ({', '.join(fixed)})"
        finish(fig, style, title=full_title, caveat=caveat)
        ensure_axes_height(fig, list(axes), 22.0)

    data = {"x_key": x, "x": values[x], "parameters": values, "varying": varying, "panels": panels,
            "filters": list(fs.names)}
    inputs = {"filters": list(fs.names), "illuminant": card.get("illuminant"), "surfaces": card.get("surfaces"),
              "adaptation": card.get("adaptation"), "metrics": metrics}
    return FigureResult("sweep", fig, data, style, inputs)


def _fixed_text(values, varying) -> list[str]:
    return [f"{_SHORT.get(k, k)} {values[k][0]:g}{(' ' + _UNITS.get(k, '')) if _UNITS.get(k) else ''}"
            for k in values if k not in varying]


def _heatmap(fs, card, metrics, x, y, values, varying, *, style, width_mm, height_mm, title, caveat):
    """Two swept parameters: one heat-map panel per metric (rows) and observer (columns)."""
    import matplotlib
    from matplotlib.colors import Normalize

    xs = np.unique(values[x])
    ys = np.unique(values[y])
    ix = np.searchsorted(xs, values[x])
    iy = np.searchsorted(ys, values[y])
    rows = []
    for metric in metrics:
        label, scale = metric_label(metric)
        cells = []
        for who, vals in metric_values(card, metric).items():
            z = np.full((len(ys), len(xs)), np.nan)
            z[iy, ix] = scale * vals
            cells.append({"observer": who or None, "label": observer_label(who) if who else "the same for every observer",
                          "z": z})
        rows.append({"metric": metric, "label": label, "cells": cells})
    ncols = max(len(r["cells"]) for r in rows)
    cmap = matplotlib.colormaps[HEATMAP_CMAP]
    if height_mm is None:
        panel_w = (width_mm - 30) / ncols
        height_mm = min(480.0, len(rows) * (panel_w * 0.9 + 14) + 34)
    with style_context(style):
        fig = new_figure(style, width_mm, height_mm)
        gs = fig.add_gridspec(len(rows), ncols + 1, width_ratios=[1.0] * ncols + [0.06])
        panel_w_pt = (width_mm - 30) / ncols / 25.4 * 72
        for r, row in enumerate(rows):
            finite = np.concatenate([c["z"][np.isfinite(c["z"])] for c in row["cells"]] + [np.array([])])
            lo, hi = (float(finite.min()), float(finite.max())) if finite.size else (0.0, 1.0)
            if hi - lo < 1e-12:
                lo, hi = lo - 0.5, hi + 0.5
            norm = Normalize(lo, hi)
            mesh = None
            for c, cell in enumerate(row["cells"]):
                ax = fig.add_subplot(gs[r, c])
                ax.set_title(wrap_to_width(cell["label"], panel_w_pt, style.font_size), fontsize=style.font_size,
                             loc="left")
                if not np.isfinite(cell["z"]).any():
                    ax.set_xticks([])
                    ax.set_yticks([])
                    for spine in ax.spines.values():
                        spine.set_visible(False)
                    ax.text(0.5, 0.5, wrap_to_width("not defined for this observer", 0.9 * panel_w_pt,
                                                    style.tick_size),
                            transform=ax.transAxes, ha="center", va="center", fontsize=style.tick_size,
                            color=NEUTRAL["text"], gid=f"na-{row['metric']}-{c}")
                    continue
                mesh = ax.pcolormesh(xs, ys, np.ma.masked_invalid(cell["z"]), cmap=cmap, norm=norm,
                                     shading="nearest", gid=f"heatmap-{row['metric']}-{c}")
                _annotate_cells(fig, ax, xs, ys, cell["z"], norm, cmap, style)
                ax.set_xticks(xs if len(xs) <= 7 else xs[::int(np.ceil(len(xs) / 6))])
                ax.set_yticks(ys if len(ys) <= 7 else ys[::int(np.ceil(len(ys) / 6))])
                if r == len(rows) - 1:
                    ax.set_xlabel(wrap_to_width(_axis_label(x), panel_w_pt * (ncols if c == 0 else 1),
                                                style.font_size) if c == 0 else "")
                if c == 0:
                    ax.set_ylabel(_axis_label(y))
                else:
                    ax.tick_params(axis="y", labelleft=False)
                for side in ("top", "right"):
                    ax.spines[side].set_visible(True)
            cax = fig.add_subplot(gs[r, ncols])
            if mesh is not None:
                bar = fig.colorbar(mesh, cax=cax)
            else:
                from matplotlib.cm import ScalarMappable

                bar = fig.colorbar(ScalarMappable(norm=norm, cmap=cmap), cax=cax)
            bar.set_label(row["label"], fontsize=style.font_size)
            bar.ax.tick_params(labelsize=style.tick_size)
            bar.outline.set_linewidth(style.axes_line_width)
        fixed = _fixed_text(values, varying)
        full_title = f"{title} ({', '.join(fixed)})" if title and fixed else title
        finish(fig, style, title=full_title, caveat=caveat)

    panels = [{"metric": r["metric"], "label": r["label"],
               "cells": [{"observer": c["observer"], "label": c["label"], "z": c["z"]} for c in r["cells"]]}
              for r in rows]
    data = {"x_key": x, "y_key": y, "x": xs, "y": ys, "parameters": values, "varying": varying,
            "panels": panels, "filters": list(fs.names), "chart": "heatmap", "colour_scale": HEATMAP_CMAP}
    inputs = {"filters": list(fs.names), "illuminant": card.get("illuminant"), "surfaces": card.get("surfaces"),
              "adaptation": card.get("adaptation"), "metrics": list(metrics)}
    return FigureResult("sweep", fig, data, style, inputs)


def _annotate_cells(fig, ax, xs, ys, z, norm, cmap, style) -> None:
    """Print each cell's value in it when the cells are large enough for the text (measured)."""
    finite = z[np.isfinite(z)]
    if not finite.size:
        return
    span = float(np.nanmax(np.abs(finite))) or 1.0
    digits = 2 if span < 10 else (1 if span < 100 else 0)
    texts = [f"{v:.{digits}f}" for v in finite]
    widest = max(text_width_pt(t, style.tick_size) for t in texts)
    fig.draw_without_rendering()
    cell_w = ax.bbox.width / len(xs) * 72.0 / fig.dpi
    cell_h = ax.bbox.height / len(ys) * 72.0 / fig.dpi
    if widest + 6 > cell_w or style.tick_size * 1.6 > cell_h:
        return
    for j, yv in enumerate(ys):
        for i, xv in enumerate(xs):
            v = z[j, i]
            if not np.isfinite(v):
                continue
            r, g, b, _ = cmap(norm(v))
            light = 0.2126 * r + 0.7152 * g + 0.0722 * b
            ax.text(xv, yv, f"{v:.{digits}f}", ha="center", va="center", fontsize=style.tick_size,
                    color="black" if light > 0.5 else "white", gid="heatmap-value")
