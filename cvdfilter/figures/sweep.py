"""``sweep``: scorecard metrics against a swept filter parameter.

For design studies: give a sweep spec such as
``notch:center=540..600/5,fwhm=30,depth=0.8`` and the figure plots, in one
panel per metric sharing the x axis, each metric against the swept
parameter (default: red-green gain per observer and luminous transmittance).
When a second parameter varies too (``center=540..600/5,fwhm=20..40/10``),
each of its values gets its own line. Values come from the scorecard
(:func:`cvdfilter.scorecard.score`), so the figure shows what
``cvdfilter score`` reports.

Public: :func:`sweep_figure`, :func:`swept_parameters`.
"""

from __future__ import annotations

import re

import numpy as np

from ..errors import InputError
from .common import legend_below, legend_columns, load_filters_checked, observer_label, short_name
from .metrics import RATIO_METRICS, metric_label, metric_values, scorecard_dict
from .output import FigureResult, finish, new_figure, style_context
from .palette import NEUTRAL, series
from .style import Style

__all__ = ["sweep_figure", "swept_parameters", "DEFAULT_SWEEP_METRICS"]

DEFAULT_SWEEP_METRICS = ("red_green_gain", "luminous_transmittance")
_PARAM = re.compile(r"([A-Za-z_]+)=([-+0-9.eE]+)")
_PERCENT_METRICS = ("luminous_transmittance",)
_SHORT = {"fwhm": "FWHM"}
_UNITS = {"center": "nm", "fwhm": "nm", "edge": "nm", "width": "nm", "depth": "", "od": "", "t": "", "order": ""}
_NAMES = {"center": "Notch centre", "fwhm": "Notch FWHM", "depth": "Notch depth", "od": "Optical density",
          "edge": "Edge wavelength", "width": "Edge width (10-90 %)", "t": "Transmittance", "order": "Order"}


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
    varying, values = swept_parameters(fs.names)
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
                st = styles[k] if len(panel["lines"]) > 1 else styles[0]
                text = line["label"]
                if line["observer"]:
                    from ..observers.observer import observer as make_observer

                    obs = observer_names.setdefault(line["observer"], observer_label(make_observer(line["observer"])))
                    text = ", ".join([obs] + [p for p in text.split(", ")[1:]])
                if np.all(np.isnan(line["y"])):
                    # e.g. a dichromat has no red-green axis: say so instead of an empty legend entry
                    missing.append(text)
                    continue
                ax.plot(line["x"], line["y"], markersize=style.marker_size * 0.9, label=short_name(text, 40),
                        gid=f"sweep-{panel['metric']}-{k}", **st.line_kwargs())
            if missing:
                ax.set_title("not defined for " + ", ".join(missing), loc="right", fontsize=style.tick_size,
                             color=NEUTRAL["text"], pad=2, gid=f"na-{panel['metric']}")
            if panel["metric"] in RATIO_METRICS:
                ax.axhline(1.0, color=NEUTRAL["line"], lw=0.6, zorder=0, gid="reference-1")
            ax.set_ylabel(panel["label"])
            if panel["metric"] in _PERCENT_METRICS:
                ax.set_ylim(0, 100)
        axes[-1].set_xlabel(_axis_label(x))
        # One legend under the panels: the observer lines are the same in every panel.
        seen: dict[str, object] = {}
        for ax in axes:
            for h, t in zip(*ax.get_legend_handles_labels()):
                seen.setdefault(t, h)
        if max(len(p["lines"]) for p in panels) > 1 and seen:
            handles, texts = list(seen.values()), list(seen)
            legend_below(fig, axes[-1], handles, texts, ncols=legend_columns(texts, width_mm, style.font_size, max_cols=3),
                         handlelength=2.6, columnspacing=1.2)
        fixed = [f"{_SHORT.get(k, k)} {values[k][0]:g}{(' ' + _UNITS.get(k, '')) if _UNITS.get(k) else ''}"
                 for k in values if k not in varying]
        full_title = title
        if title and fixed:
            full_title = f"{title} ({', '.join(fixed)})"
        finish(fig, style, title=full_title, caveat=caveat)

    data = {"x_key": x, "x": values[x], "parameters": values, "varying": varying, "panels": panels,
            "filters": list(fs.names)}
    inputs = {"filters": list(fs.names), "illuminant": card.get("illuminant"), "surfaces": card.get("surfaces"),
              "adaptation": card.get("adaptation"), "metrics": metrics}
    return FigureResult("sweep", fig, data, style, inputs)
