"""``population``: the distribution of one metric over the members of each observer population.

One row per population (an observer spec with ``n=N``), one band per filter
inside it: the members' values of the chosen metric as a compact distribution
(a violin: the kernel density estimate matplotlib draws, Scott's bandwidth),
the median member as a tick and the 2.5-97.5 % interval of the members as a
line. The metric is a per-member comparison with / without the filter: a
ratio (gains, median Delta S ratio; log axis, reference line at 1 = no change)
or a net pair count (gained - lost, resolved - created; reference line at 0).
On the right of each band: the share of members helped (ratio above 1, net
above 0) with its Wilson 95 % interval, the scorecard's ``helped`` numbers.

Public: :func:`population_figure`, :data:`POPULATION_METRICS`.
"""

from __future__ import annotations

import numpy as np

from ..errors import InputError
from ..observers.labels import table_labels
from ..observers.population import is_population_spec
from .labelling import filter_labels, legend_axes, legend_columns
from .scorecard_values import figure_results, score_for_figure
from .output import FigureResult, finish, new_figure, style_context
from .palette import NEUTRAL, series
from .style import Style

__all__ = ["population_figure", "POPULATION_METRICS", "share_percent"]

#: metric name -> (axis label, ratio (log axis, reference 1) or net count (reference 0), key of ``helped``)
POPULATION_METRICS = {
    "red_green_gain": ("Red-green gain (with / without)", True, "red_green_gain"),
    "blue_yellow_gain": ("Blue-yellow gain (with / without)", True, "blue_yellow_gain"),
    "median_delta_s_ratio": ("Median \u0394S ratio (with / without)", True, "median_delta_s_ratio"),
    "discriminable_pairs.net": ("Discriminable pairs, gained \u2212 lost", False, "discriminable_pairs_net"),
    "confusion_pairs.net": ("Confused pairs, resolved \u2212 created", False, "confusion_pairs_net"),
}

#: The default populations (seeds printed in every output through the canonical spec).
DEFAULT_POPULATIONS = ("deuteranomalous:n=200,seed=1", "protanomalous:n=200,seed=1")


def share_percent(share: float) -> str:
    """A share as whole percent, never rounded to 0 or 100 unless it is exactly that (``<1``, ``>99``)."""
    p = 100.0 * float(share)
    if 0.0 < p < 0.5:
        return "<1"
    if 99.5 <= p < 100.0:
        return ">99"
    return f"{p:.0f}"


def population_figure(filters, *, illuminant="D65", observers=None, surfaces=None, adaptation="full",
                      metrics=None, style: Style | None = None, width_mm: float = 89.0,
                      height_mm: float | None = None, title: str | None = None, caveat: str | None = None,
                      card=None) -> FigureResult:
    """The distribution over each population's members of one metric, per filter, with the share helped.

    Parameters
    ----------
    filters
        One to four filters.
    observers
        Population specs (``deuteranomalous:n=200,seed=7``); fixed observers are left out (they have no
        distribution). Default :data:`DEFAULT_POPULATIONS`.
    metrics : str or list of str, optional
        The metric, one of :data:`POPULATION_METRICS` (default ``red_green_gain``; a list gives its first).
    card : Scorecard or dict, optional
        A scorecard with populations (a JSON document needs ``members``: computed with ``members=True``).

    Returns
    -------
    FigureResult
        ``data``: ``metric``, ``populations`` (specs), ``filters`` (names), ``values``: list per filter of
        lists per population of per-member arrays, ``p2_5``, ``p50``, ``p97_5`` (n_filters, n_populations,
        from the members, ``numpy.percentile`` linear), ``share``, ``ci_low``, ``ci_high`` (the scorecard's).
        Artists: ``violin-<filter>-<population>``, ``median-<f>-<p>``, ``interval-<f>-<p>``,
        ``helped-<f>-<p>`` (text), ``reference``.
    """
    style = style or Style()
    metric = (metrics if isinstance(metrics, str) else (list(metrics)[0] if metrics else "red_green_gain"))
    if metric not in POPULATION_METRICS:
        raise InputError(f"metric '{metric}' is not drawn by the population figure",
                         hint=f"use one of {', '.join(POPULATION_METRICS)}")
    axis_label, is_ratio, helped_key = POPULATION_METRICS[metric]
    if card is None:
        obs = list(observers) if observers else list(DEFAULT_POPULATIONS)
        if not any(is_population_spec(o) for o in obs):
            raise InputError(_NO_POPULATION, hint=_POPULATION_HINT)
        card = score_for_figure(filters, illuminant=illuminant, observers=obs, surfaces=surfaces,
                                adaptation=adaptation, metrics="core", members=True)
    res = figure_results(card)
    d = _population_data(res, metric, helped_key)
    n_f, n_p = len(res.filters), len(d["specs"])
    height_mm = height_mm or max(55.0, 36.0 + 11.0 * n_p * n_f)
    with style_context(style):
        fig = new_figure(style, width_mm, height_mm)
        gs = fig.add_gridspec(2, 1, height_ratios=[1.0, 0.001])
        ax = fig.add_subplot(gs[0, 0])
        if is_ratio:
            ax.set_xscale("log")
        ax.axvline(1.0 if is_ratio else 0.0, color=NEUTRAL["line"], lw=0.7, zorder=1, gid="reference")
        rows = np.arange(n_p)[::-1]                                         # first population at the top
        handles, right = _draw_bands(ax, d, res.filters, rows, is_ratio, style)
        _x_axis(ax, d["values"], is_ratio, axis_label)
        ax.set_yticks(rows, [lab.replace(" (", "\n(", 1) for lab in table_labels(d["specs"])])  # name over params
        ax.set_ylim(-0.6, n_p - 0.4)
        ax.tick_params(axis="y", length=0)
        for r in rows[:-1]:
            ax.axhline(r - 0.5, color=NEUTRAL["light"], lw=0.4, zorder=0)
        _helped_axis(ax, right, n_f, n_p, style)
        texts = [hd.get_label() for hd in handles]
        legend_axes(fig, gs[-1, :], handles, texts, ncols=legend_columns(texts, width_mm, style.font_size),
                    handlelength=1.2, columnspacing=1.0,
                    title="Violin: members; marker: median; line: 2.5\u201397.5 % of members;\n"
                          "helped: share of members, Wilson 95 % interval", title_fontsize=style.font_size)
        finish(fig, style, title=title, caveat=caveat)

    pct, share = d["pct"], d["share"]
    data = {"metric": metric, "populations": d["specs"], "filters": res.filters, "values": d["values"],
            "p2_5": pct[0], "p50": pct[1], "p97_5": pct[2], "share": share[0], "ci_low": share[1],
            "ci_high": share[2]}
    inputs = {"filters": data["filters"], "illuminant": res.context.get("illuminant"),
              "surfaces": res.context.get("surfaces"), "adaptation": res.context.get("adaptation"),
              "observers": d["specs"], "metric": metric}
    return FigureResult("population", fig, data, style, inputs)


_NO_POPULATION = "the population figure needs at least one population observer"
_POPULATION_HINT = "give an observer spec with n=N, e.g. --observer deuteranomalous:n=200,seed=7"


def _population_data(res, metric: str, helped_key: str) -> dict:
    """Per filter x population: the members' values, their 2.5/50/97.5 percentiles, the share helped."""
    if len(res.filters) > 4:
        raise InputError(f"{len(res.filters)} filters: the population figure compares at most 4",
                         hint="draw several figures, or use the gains figure")
    pop_idx = [k for k, p in enumerate(res.populations) if p]
    if not pop_idx:
        raise InputError(_NO_POPULATION, hint=_POPULATION_HINT)
    if not res.has_members(pop_idx[0]):
        raise InputError("the scorecard given to the population figure has no per-member values",
                         hint="score with members=True (--members)")
    n_f, n_p = len(res.filters), len(pop_idx)
    members = [res.members(metric, k) for k in pop_idx]               # (n_filters, n_members) each
    values = [[members[j][i] for j in range(n_p)] for i in range(n_f)]
    pct = np.full((3, n_f, n_p), np.nan)
    share = np.full((3, n_f, n_p), np.nan)
    for j, k in enumerate(pop_idx):
        share[:, :, j] = res.helped(helped_key, k)
        for i in range(n_f):
            v = values[i][j][np.isfinite(values[i][j])]
            if v.size:
                pct[:, i, j] = np.percentile(v, [2.5, 50.0, 97.5])
    return {"specs": [res.observers[k] for k in pop_idx], "values": values, "pct": pct, "share": share}


def _draw_bands(ax, d, filters, rows, is_ratio: bool, style):
    """Per filter x population: the violin of the members, the 2.5-97.5 % line and the median marker.
    Returns the legend handles and the (y, text) of the "helped" labels on the right."""
    values, pct, share = d["values"], d["pct"], d["share"]
    n_f, n_p = len(values), len(rows)
    styles = series(n_f)
    band = 0.8 / n_f
    offsets = -(np.arange(n_f) - (n_f - 1) / 2) * band                  # first filter on top
    names = filter_labels(filters)
    handles, right = [], []
    for i in range(n_f):
        for j in range(n_p):
            y = rows[j] + offsets[i]
            _violin(ax, values[i][j], y, band, is_ratio, styles[i].color, f"{i}-{j}", f"_violin {i}")
            if np.isfinite(pct[0, i, j]):
                ax.hlines(y, pct[0, i, j], pct[2, i, j], color=styles[i].color, lw=style.line_width,
                          zorder=3, gid=f"interval-{i}-{j}")
            h, = ax.plot([pct[1, i, j]], [y], gid=f"median-{i}-{j}", zorder=4, label=names[i],
                         **{**styles[i].marker_kwargs(), "markersize": style.marker_size * 1.1})
            if j == 0:
                handles.append(h)
            right.append((y, "helped " + ("-" if not np.isfinite(share[0, i, j]) else
                                          f"{share_percent(share[0, i, j])} % "
                                          f"({100 * share[1, i, j]:.0f}\u2013{100 * share[2, i, j]:.0f})")))
    return handles, right


def _violin(ax, v, y: float, band: float, is_ratio: bool, colour, gid: str, label: str) -> None:
    """The members' distribution as a horizontal violin (kernel density, Scott's bandwidth)."""
    v = v[np.isfinite(v) & ((v > 0) if is_ratio else True)]
    if v.size < 2 or np.ptp(v) <= 0:
        return
    data = np.log(v) if is_ratio else v
    parts = ax.violinplot([data], positions=[y], orientation="horizontal", widths=0.9 * band,
                          showmeans=False, showmedians=False, showextrema=False)
    for body in parts["bodies"]:
        if is_ratio:   # drawn on log(v): back to the data axis
            path = body.get_paths()[0]
            path.vertices[:, 0] = np.exp(path.vertices[:, 0])
        body.set_facecolor(colour)
        body.set_edgecolor(colour)
        body.set_alpha(0.35)
        body.set_gid(f"violin-{gid}")
        body.set_label(label)


def _x_axis(ax, values, is_ratio: bool, axis_label: str) -> None:
    """Limits around the data and the reference (ratios: log axis, at least 0.9-1.1), round ticks."""
    finite = np.concatenate([v[np.isfinite(v)] for row in values for v in row] + [np.zeros(0)])
    if is_ratio:
        finite = finite[finite > 0]
    if finite.size:
        lo, hi = float(np.min(finite)), float(np.max(finite))
        if is_ratio:   # the data and 1 (no change), with a margin; at least 0.9-1.1
            a, b = np.log(min(lo, 0.9)), np.log(max(hi, 1.1))
            pad = 0.06 * (b - a)
            ax.set_xlim(np.exp(a - pad), np.exp(b + pad))
        else:
            a, b = min(lo, -1.0), max(hi, 1.0)
            pad = 0.06 * (b - a)
            ax.set_xlim(a - pad, b + pad)
    if is_ratio:
        ticks = _log_ticks(ax.get_xlim())
        ax.set_xticks(ticks, [f"{t:g}" for t in ticks])
        ax.set_xticks([], minor=True)
    ax.set_xlabel(axis_label)


def _helped_axis(ax, right, n_f: int, n_p: int, style) -> None:
    """The share helped beside each band, as tick labels of a twin axis on the right."""
    twin = ax.twinx()
    twin.set_ylim(ax.get_ylim())
    twin.set_yticks([y for y, _ in right], [t for _, t in right], fontsize=style.tick_size)
    twin.tick_params(axis="y", length=0)
    for t, (i, j) in zip(twin.get_yticklabels(), [(i, j) for i in range(n_f) for j in range(n_p)]):
        t.set_gid(f"helped-{i}-{j}")


_NICE = (0.5, 0.67, 0.8, 0.9, 1.0, 1.1, 1.25, 1.5, 2.0, 3.0, 4.0)


def _log_ticks(limits) -> list[float]:
    """Round ticks inside ``limits``, at least a quarter of the log range apart, with 1 when it is inside."""
    lo, hi = np.log(limits[0]), np.log(limits[1])
    gap = (hi - lo) / 4
    kept: list[float] = []
    for t in sorted(_NICE, key=lambda t: abs(np.log(t))):
        if limits[0] <= t <= limits[1] and all(abs(np.log(t) - np.log(k)) >= gap for k in kept):
            kept.append(t)
    return sorted(kept)
