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

import numpy as np

from ..errors import InputError
from .inputs import load_filters_checked
from .labelling import ensure_axes_height, legend_below, legend_columns, legend_labels, text_width_pt, wrap_to_width
from .scorecard_values import RATIO_METRICS, figure_results, metric_label, score_for_figure, swept_parameters
from .output import FigureResult, finish, new_figure, style_context
from .palette import NEUTRAL, OKABE_ITO, SeriesStyle, series
from .style import Style

__all__ = ["sweep_figure", "swept_parameters", "filter_parameters", "DEFAULT_SWEEP_METRICS", "HEATMAP_CMAP"]

#: The heat map's colour scale (perceptually uniform, monotonic lightness; designed for colour-vision deficiency).
HEATMAP_CMAP = "cividis"

DEFAULT_SWEEP_METRICS = ("red_green_gain", "luminous_transmittance")
_PERCENT_METRICS = ("luminous_transmittance",)
_SHORT = {"fwhm": "FWHM"}
_UNITS = {"center": "nm", "fwhm": "nm", "edge": "nm", "width": "nm", "depth": "", "od": "", "t": "", "order": ""}
_NAMES = {"center": "Notch centre", "fwhm": "Notch FWHM", "depth": "Notch depth", "od": "Optical density",
          "edge": "Edge wavelength", "width": "Edge width (10-90 %)", "t": "Transmittance", "order": "Order"}


_NEUTRAL_SERIES = SeriesStyle(OKABE_ITO["black"], "-", "o", "black")   # a filter property: plain black


def filter_parameters(fs) -> tuple[list[str], dict[str, np.ndarray]]:
    """The spec parameters of a FilterSet's filters (from the records the spec parser kept) and which of them
    vary (:func:`cvdfilter.figures.scorecard_values.swept_parameters`)."""
    from ..scorecard_arrays import filter_records

    return swept_parameters(filter_records(fs))


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
                 card=None) -> FigureResult:
    """Metrics against a swept filter parameter.

    Parameters
    ----------
    filters
        A sweep spec (or several parametric filters; their parameters come from the spec parser's records).
    illuminant, observers, surfaces, adaptation
        Passed to the scorecard (its defaults where None).
    metrics : sequence of str, optional
        Scorecard metric names (:data:`cvdfilter.metric_registry.METRICS`); default
        red-green gain and luminous transmittance.
    x : str, optional
        The parameter on the x axis (default: the first that varies).
    card : Scorecard or dict, optional
        A scorecard already computed for exactly these filters (or its JSON document). A population is
        drawn at its median member.

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
    if card is None:
        card = score_for_figure(fs, illuminant=illuminant, observers=observers, surfaces=surfaces,
                                adaptation=adaptation, metrics="core")
    res = figure_results(card)
    panels = _line_panels(res, metrics, x, others, values)
    if len(others) == 1:
        return _heatmap(fs, res, metrics, x, others[0], values, varying, style=style, width_mm=width_mm,
                        height_mm=height_mm, title=title, caveat=caveat)
    n_lines = max(len(p["lines"]) for p in panels)
    height_mm = height_mm or (width_mm * (0.32 + 0.45 * len(panels)) if width_mm < 120
                              else width_mm * (0.15 + 0.2 * len(panels)))
    with style_context(style):
        fig = new_figure(style, width_mm, height_mm)
        axes = np.atleast_1d(fig.subplots(len(panels), 1, sharex=True, squeeze=False)[:, 0])
        labels = _observer_labels(res)
        for ax, panel in zip(axes, panels):
            _draw_panel(ax, panel, series(n_lines), labels, style, width_mm)
        axes[-1].set_xlabel(_axis_label(x))
        fig.align_ylabels(axes)
        _shared_legend(fig, axes, panels, style, width_mm)
        fixed = _fixed_text(values, varying)
        full_title = title
        if title and fixed:
            full_title = f"{title} ({', '.join(fixed)})"
        finish(fig, style, title=full_title, caveat=caveat)
        ensure_axes_height(fig, list(axes), 22.0)

    data = {"x_key": x, "x": values[x], "parameters": values, "varying": varying, "panels": panels,
            "filters": list(fs.names)}
    return FigureResult("sweep", fig, data, style, _inputs(fs, res, metrics))


def _observer_labels(res) -> dict:
    """Observer spec -> readable label; a population is drawn at its median member, and says so."""
    return {spec: lab + (", median member" if pop else "")
            for spec, lab, pop in zip(res.observers, res.observer_labels(), res.populations)}


def _metric_series(res, metric: str) -> dict:
    """{"": values} for a filter property, else {observer spec: values} (a population at its median member),
    values (n_filters,) at the JSON's precision."""
    if res.level(metric) == "filter":
        return {"": res.filter_values(metric)}
    v = res.statistic(metric, "p50")
    return {spec: v[:, k] for k, spec in enumerate(res.observers)}


def _line_panels(res, metrics, x, others, values) -> list[dict]:
    """One panel per metric: a line per observer (or one for a filter property) and per group of the other
    varying parameters."""
    group_keys = [tuple(values[k][i] for k in others) for i in range(len(values[x]))]
    groups = sorted(set(group_keys))
    panels = []
    for metric in metrics:
        label, scale = metric_label(metric)
        lines = []
        for who, vals in _metric_series(res, metric).items():
            for g in groups:
                idx = np.array([i for i in range(len(group_keys)) if group_keys[i] == g])
                order = idx[np.argsort(values[x][idx], kind="stable")]
                parts = []
                if who:
                    parts.append(who)
                parts += [f"{k.split('#')[0]} {v:g}" for k, v in zip(others, g)]
                lines.append({"label": ", ".join(parts), "observer": who or None, "group": dict(zip(others, g)),
                              "x": values[x][order], "y": scale * vals[order]})
        panels.append({"metric": metric, "label": label, "lines": lines})
    return panels


def _draw_panel(ax, panel, styles, labels: dict, style, width_mm: float) -> None:
    """One metric's lines; "not defined for ..." above the axes for observers without the metric."""
    missing = []
    for k, line in enumerate(panel["lines"]):
        # a filter property (one line, no observer) in neutral black: it belongs to no observer's style
        st = styles[k] if (len(panel["lines"]) > 1 or line["observer"]) else _NEUTRAL_SERIES
        text = line["label"]
        if line["observer"]:
            text = ", ".join([labels[line["observer"]]] + [p for p in text.split(", ")[1:]])
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


def _shared_legend(fig, axes, panels, style, width_mm: float) -> None:
    """One legend under the panels: the observer lines are the same in every panel."""
    seen: dict[str, object] = {}
    for ax in axes:
        for h, t in zip(*ax.get_legend_handles_labels()):
            seen.setdefault(t, h)
    if max(len(p["lines"]) for p in panels) > 1 and seen:
        handles, texts = list(seen.values()), legend_labels(list(seen), width_mm, style.font_size)
        legend_below(fig, axes[-1], handles, texts, ncols=legend_columns(texts, width_mm, style.font_size, max_cols=3),
                     handlelength=2.6, columnspacing=1.2, center_on_figure=True)


def _inputs(fs, res, metrics) -> dict:
    return {"filters": list(fs.names), "illuminant": res.context.get("illuminant"),
            "surfaces": res.context.get("surfaces"), "adaptation": res.context.get("adaptation"),
            "metrics": list(metrics)}


def _fixed_text(values, varying) -> list[str]:
    return [f"{_SHORT.get(k, k)} {values[k][0]:g}{(' ' + _UNITS.get(k, '')) if _UNITS.get(k) else ''}"
            for k in values if k not in varying]


def _heatmap(fs, res, metrics, x, y, values, varying, *, style, width_mm, height_mm, title, caveat):
    """Two swept parameters: one heat-map panel per metric (rows) and observer (columns)."""
    import matplotlib

    xs, ys = np.unique(values[x]), np.unique(values[y])
    rows = _heatmap_rows(res, metrics, xs, ys, np.searchsorted(xs, values[x]), np.searchsorted(ys, values[y]))
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
            norm = _row_norm(row)
            mesh = None
            for c, cell in enumerate(row["cells"]):
                ax = fig.add_subplot(gs[r, c])
                ax.set_title(wrap_to_width(cell["label"], panel_w_pt, style.font_size), fontsize=style.font_size,
                             loc="left")
                if not np.isfinite(cell["z"]).any():
                    _empty_cell(ax, row["metric"], c, panel_w_pt, style)
                    continue
                mesh = ax.pcolormesh(xs, ys, np.ma.masked_invalid(cell["z"]), cmap=cmap, norm=norm,
                                     shading="nearest", gid=f"heatmap-{row['metric']}-{c}")
                _annotate_cells(fig, ax, xs, ys, cell["z"], norm, cmap, style)
                _heatmap_axes(ax, xs, ys, x, y, last_row=r == len(rows) - 1, col=c, ncols=ncols,
                              panel_w_pt=panel_w_pt, style=style)
            _colour_bar(fig, fig.add_subplot(gs[r, ncols]), mesh, norm, cmap, row["label"], style)
        fixed = _fixed_text(values, varying)
        full_title = f"{title} ({', '.join(fixed)})" if title and fixed else title
        finish(fig, style, title=full_title, caveat=caveat)

    panels = [{"metric": r["metric"], "label": r["label"],
               "cells": [{"observer": c["observer"], "label": c["label"], "z": c["z"]} for c in r["cells"]]}
              for r in rows]
    data = {"x_key": x, "y_key": y, "x": xs, "y": ys, "parameters": values, "varying": varying,
            "panels": panels, "filters": list(fs.names), "chart": "heatmap", "colour_scale": HEATMAP_CMAP}
    return FigureResult("sweep", fig, data, style, _inputs(fs, res, metrics))


def _heatmap_rows(res, metrics, xs, ys, ix, iy) -> list[dict]:
    """Per metric: its label and one cell (a z grid over ys x xs, display units) per observer."""
    labels = _observer_labels(res)
    rows = []
    for metric in metrics:
        label, scale = metric_label(metric)
        cells = []
        for who, vals in _metric_series(res, metric).items():
            z = np.full((len(ys), len(xs)), np.nan)
            z[iy, ix] = scale * vals
            cells.append({"observer": who or None, "label": labels[who] if who else "the same for every observer",
                          "z": z})
        rows.append({"metric": metric, "label": label, "cells": cells})
    return rows


def _row_norm(row):
    """One colour scale per metric, over every observer's cells."""
    from matplotlib.colors import Normalize

    finite = np.concatenate([c["z"][np.isfinite(c["z"])] for c in row["cells"]] + [np.array([])])
    lo, hi = (float(finite.min()), float(finite.max())) if finite.size else (0.0, 1.0)
    if hi - lo < 1e-12:
        lo, hi = lo - 0.5, hi + 0.5
    return Normalize(lo, hi)


def _empty_cell(ax, metric: str, c: int, panel_w_pt: float, style) -> None:
    ax.set_xticks([])
    ax.set_yticks([])
    for spine in ax.spines.values():
        spine.set_visible(False)
    ax.text(0.5, 0.5, wrap_to_width("not defined for this observer", 0.9 * panel_w_pt, style.tick_size),
            transform=ax.transAxes, ha="center", va="center", fontsize=style.tick_size,
            color=NEUTRAL["text"], gid=f"na-{metric}-{c}")


def _heatmap_axes(ax, xs, ys, x, y, *, last_row: bool, col: int, ncols: int, panel_w_pt: float, style) -> None:
    ax.set_xticks(xs if len(xs) <= 7 else xs[::int(np.ceil(len(xs) / 6))])
    ax.set_yticks(ys if len(ys) <= 7 else ys[::int(np.ceil(len(ys) / 6))])
    if last_row:
        ax.set_xlabel(wrap_to_width(_axis_label(x), panel_w_pt * (ncols if col == 0 else 1),
                                    style.font_size) if col == 0 else "")
    if col == 0:
        ax.set_ylabel(_axis_label(y))
    else:
        ax.tick_params(axis="y", labelleft=False)
    for side in ("top", "right"):
        ax.spines[side].set_visible(True)


def _colour_bar(fig, cax, mesh, norm, cmap, label: str, style) -> None:
    if mesh is not None:
        bar = fig.colorbar(mesh, cax=cax)
    else:
        from matplotlib.cm import ScalarMappable

        bar = fig.colorbar(ScalarMappable(norm=norm, cmap=cmap), cax=cax)
    bar.set_label(label, fontsize=style.font_size)
    bar.ax.tick_params(labelsize=style.tick_size)
    bar.outline.set_linewidth(style.axes_line_width)


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
