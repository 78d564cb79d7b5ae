"""``gains``: per observer, contrast gains and discriminable pairs, for one or several filters.

Four panels sharing the observers as rows: red-green, blue-yellow and
luminance contrast gains (the scorecard's RMS ratios, with / without the
filter) on a logarithmic axis, so that a gain of 1.25 and a loss to 0.8 are
drawn the same size, with a reference line at 1 (no change); and the
discriminable pairs (receptor-noise model, Vorobyev & Osorio 1998) gained
(right) and lost (left). Filters are told apart by colour, marker and, for
the pair bars, hatching of the "lost" side. A population observer (a spec with
``n=N``) is drawn at its median member with a line over the 2.5-97.5 %
interval of its members (gains and pairs). An observer without the axis
(a protanope or deuteranope has no red-green signal) gets "not defined". A gain is
never shown alone: each filter's legend entry carries its costs (luminous
transmittance, white shift, Rf for the normal observer), and the fourth
panel the pairs it loses.

Public: :func:`gains_figure`.
"""

from __future__ import annotations

import numpy as np

from ..observers.labels import table_labels
from .labelling import filter_labels, legend_axes, legend_columns
from .scorecard_values import figure_results, score_for_figure
from .output import FigureResult, finish, new_figure, style_context
from .palette import NEUTRAL, series
from .style import Style

__all__ = ["gains_figure", "GAIN_PANELS", "COST_TITLE", "cost_label"]

GAIN_PANELS = (("red_green_gain", "Red-green gain"), ("blue_yellow_gain", "Blue-yellow gain"),
               ("luminance_contrast_gain", "Luminance gain"))
_NICE = (0.25, 0.33, 0.5, 0.67, 0.8, 0.9, 0.95, 0.98, 0.99, 1.0, 1.01, 1.02, 1.05, 1.1, 1.25, 1.5, 2.0,
         3.0, 4.0)
#: Smallest half-range of a gain axis, as a factor: 1.25 for the colour gains, 1.02 for the luminance panel
#: (its own scale, so that small luminance changes are visible rather than an empty panel).
MIN_HALF_RANGE = {"colour": 1.25, "luminance": 1.02}


def _gain_limits(values, min_half: float = 1.25) -> tuple[float, float]:
    v = np.asarray([x for x in values if x is not None and np.isfinite(x) and x > 0], dtype=float)
    half = max(np.log(min_half), 1.15 * np.max(np.abs(np.log(v)))) if v.size else np.log(min_half)
    return float(np.exp(-half)), float(np.exp(half))


def gains_figure(filters, *, illuminant="D65", observers=None, surfaces=None, adaptation="full",
                 style: Style | None = None, width_mm: float = 89.0, height_mm: float | None = None,
                 title: str | None = None, caveat: str | None = None, card=None) -> FigureResult:
    """Contrast gains and pairs gained/lost per observer for each filter.

    Parameters
    ----------
    filters
        One to eight filters.
    observers, surfaces, illuminant, adaptation
        Passed to the scorecard (its defaults where None).
    card : Scorecard or dict, optional
        A scorecard already computed (a :class:`~cvdfilter.scorecard.Scorecard`, or its JSON document).

    Returns
    -------
    FigureResult
        ``data``: ``observers`` (specs), ``filters`` (names), ``gains``: metric ->
        array (n_filters, n_observers) (NaN where the metric does not apply),
        ``gained``, ``lost``: arrays (n_filters, n_observers) of pair counts.
        With populations also ``gains_p2_5``, ``gains_p97_5`` (metric -> array), ``gained_p2_5``,
        ``gained_p97_5``, ``lost_p2_5``, ``lost_p97_5`` (NaN for fixed observers).
        Artists: ``gain-<metric>-<filter index>`` (markers; a population's median), ``pairs-gained-<i>``,
        ``pairs-lost-<i>`` (bars), ``reference-1`` lines; with populations ``spread-<metric>-<i>``,
        ``pairs-gained-spread-<i>``, ``pairs-lost-spread-<i>`` (2.5-97.5 % lines).
    """
    from ..errors import InputError

    style = style or Style()
    if card is None:
        # "all": the costs beside the gains include Rf for the normal observer (rendition group).
        card = score_for_figure(filters, illuminant=illuminant, observers=observers, surfaces=surfaces,
                                adaptation=adaptation, metrics="all")
    res = figure_results(card)
    if len(res.filters) > 8:
        raise InputError(f"{len(res.filters)} filters: the gains figure compares at most 8",
                         hint="use the sweep figure")
    d = _gains_data(res)
    n_f, n_o = len(res.filters), len(res.observers)
    n_rows = n_o + 0.7 * sum(res.populations)   # a population's label: 2 lines
    height_mm = height_mm or (max(70.0, 30 + 2 * 9.0 * n_rows * (1 + 0.12 * n_f)) if width_mm < 120
                              else max(50.0, 28 + 9.0 * n_rows * (1 + 0.12 * n_f)))
    with style_context(style):
        fig = new_figure(style, width_mm, height_mm)
        ncols = 2 if width_mm < 120 else 4
        gs = fig.add_gridspec(4 // ncols + 1, ncols, height_ratios=[1.0] * (4 // ncols) + [0.001])
        axes = [fig.add_subplot(gs[p // ncols, p % ncols]) for p in range(4)]
        for ax in axes[1:]:
            ax.sharey(axes[0])
        rows, offsets, styles = _layout(n_f, n_o)
        handles = _gain_panels(axes, d, res, rows, offsets, styles, style)
        _pairs_panel(axes[3], d, rows, offsets, styles, res.context.get("threshold_jnd", 1.0))
        _observer_rows(axes, d, res, rows, ncols)
        # Every filter's costs sit in its legend entry, beside its gains: a gain is never shown alone.
        texts = [h.get_label() for h in handles]
        widest = [max(t.split("\n"), key=len) for t in texts]
        legend_title = COST_TITLE + (f"\n{SPREAD_NOTE}" if any(res.populations) else "")
        legend_axes(fig, gs[-1, :], handles, texts, ncols=legend_columns(widest, width_mm, style.font_size),
                    handlelength=1.2, columnspacing=1.0, title=legend_title,
                    title_fontsize=style.font_size)
        finish(fig, style, title=_with_context(title, res.context), caveat=caveat)

    data = {"observers": res.observers, "filters": res.filters, "gains": d["gains"], "gained": d["gained"],
            "lost": d["lost"]}
    if any(res.populations):
        spread = d["spread"]
        data.update(gains_p2_5={k: v[0] for k, v in spread.items()}, gains_p97_5={k: v[1] for k, v in spread.items()},
                    gained_p2_5=d["gained_spread"][0], gained_p97_5=d["gained_spread"][1],
                    lost_p2_5=d["lost_spread"][0], lost_p97_5=d["lost_spread"][1])
    inputs = {"filters": data["filters"], "illuminant": res.context.get("illuminant"),
              "surfaces": res.context.get("surfaces"), "adaptation": res.context.get("adaptation"),
              "observers": res.observers}
    return FigureResult("gains", fig, data, style, inputs)


def _gains_data(res) -> dict:
    """The plotted arrays (n_filters, n_observers): gains and pairs at the median member (a fixed observer's
    value), and the 2.5-97.5 % spread of populations (NaN for fixed observers); the legend's cost lines."""
    st = res.statistic
    pairs = ("discriminable_pairs.gained", "discriminable_pairs.lost")
    costs = [res.filter_values(m) if res.has_filter_metric(m) else np.full(len(res.filters), np.nan)
             for m in ("luminous_transmittance", "white_shift", "rendition.rf")]
    return {"gains": {key: st(key) for key, _ in GAIN_PANELS},
            "spread": {key: (st(key, "p2_5"), st(key, "p97_5")) for key, _ in GAIN_PANELS},
            "gained": st(pairs[0]), "lost": st(pairs[1]),
            "gained_spread": (st(pairs[0], "p2_5"), st(pairs[0], "p97_5")),
            "lost_spread": (st(pairs[1], "p2_5"), st(pairs[1], "p97_5")),
            "legend": [f"{n}\n{_cost_text(*c)}" for n, c in zip(filter_labels(res.filters), zip(*costs))]}


def _layout(n_f: int, n_o: int):
    """Row positions (first observer at the top), per-filter offsets (first filter on top), series styles."""
    rows = np.arange(n_o)[::-1]
    offsets = -(np.arange(n_f) - (n_f - 1) / 2) * (0.7 / max(n_f, 1))
    return rows, offsets, series(n_f)


def _gain_panels(axes, d, res, rows, offsets, styles, style) -> list:
    """The three gain panels (log axes, reference at 1); returns the legend handles (one per filter)."""
    gains, spread = d["gains"], d["spread"]
    colour_keys = [k for k, _ in GAIN_PANELS if k != "luminance_contrast_gain"]
    limits = _gain_limits(np.concatenate([gains[k].ravel() for k in colour_keys]
                                         + [b.ravel() for k in colour_keys for b in spread[k]]))
    lum_limits = _gain_limits(np.concatenate([gains["luminance_contrast_gain"].ravel()]
                                             + [b.ravel() for b in spread["luminance_contrast_gain"]]),
                              MIN_HALF_RANGE["luminance"])
    handles = []
    for p, (key, label) in enumerate(GAIN_PANELS):
        ax = axes[p]
        ax.set_xscale("log")
        ax.axvline(1.0, color=NEUTRAL["line"], lw=0.7, zorder=1, gid="reference-1")
        for i in range(len(res.filters)):
            y = rows + offsets[i]
            h, = ax.plot(gains[key][i], y, markersize=style.marker_size * 1.1, gid=f"gain-{key}-{i}",
                         label=d["legend"][i], **styles[i].marker_kwargs())
            h.set_markeredgecolor(NEUTRAL["text"])  # a thin dark edge keeps pale colours visible
            h.set_markeredgewidth(0.4)
            if p == 0:
                handles.append(h)
            lo, hi = spread[key]
            if np.any(np.isfinite(lo)):
                ax.hlines(y, lo[i], hi[i], color=styles[i].color, lw=style.line_width * 0.8, zorder=2,
                          gid=f"spread-{key}-{i}")
        for k in range(len(res.observers)):
            if np.all(np.isnan(gains[key][:, k])):
                ax.text(0.03, rows[k], "not defined", ha="left", va="center", fontsize=style.tick_size,
                        color=NEUTRAL["text"], gid=f"na-{key}-{k}", transform=ax.get_yaxis_transform())
        panel_limits = lum_limits if key == "luminance_contrast_gain" else limits
        ax.set_xlim(*panel_limits)
        ticks = _ticks(panel_limits)
        ax.set_xticks(ticks, [f"{t:g}" for t in ticks])
        ax.set_xticks([], minor=True)
        ax.set_xlabel(f"{label}\n({'own scale' if key == 'luminance_contrast_gain' else 'with / without'})")
    return handles


def _pairs_panel(ax, d, rows, offsets, styles, threshold) -> None:
    """Pairs gained (right) and lost (left, hatched), with the populations' spread."""
    gained, lost, gained_spread, lost_spread = d["gained"], d["lost"], d["gained_spread"], d["lost_spread"]
    n_f = gained.shape[0]
    height = 0.7 / max(n_f, 1)
    for i in range(n_f):
        y = rows + offsets[i]
        ax.barh(y, np.nan_to_num(gained[i]), height=height, color=styles[i].color, edgecolor=styles[i].color,
                lw=0.4, gid=f"pairs-gained-{i}")
        ax.barh(y, -np.nan_to_num(lost[i]), height=height, color="white", edgecolor=styles[i].color,
                hatch="/////", lw=0.4, gid=f"pairs-lost-{i}")
        if np.any(np.isfinite(gained_spread[0])):
            ax.hlines(y, gained_spread[0][i], gained_spread[1][i], color=NEUTRAL["text"], lw=0.8, zorder=3,
                      gid=f"pairs-gained-spread-{i}")
            ax.hlines(y, -lost_spread[0][i], -lost_spread[1][i], color=NEUTRAL["text"], lw=0.8, zorder=3,
                      gid=f"pairs-lost-spread-{i}")
    ax.axvline(0.0, color=NEUTRAL["line"], lw=0.7, zorder=1)
    span = np.nanmax(np.abs(np.concatenate([gained.ravel(), lost.ravel(), gained_spread[1].ravel(),
                                            lost_spread[1].ravel(), [1.0]])))
    ax.set_xlim(-1.1 * span, 1.1 * span)
    ax.xaxis.set_major_formatter(_abs_formatter())
    ax.set_xlabel(f"Pairs lost (hatched)\n| gained, \u2265 {threshold:g} JND")


def _observer_rows(axes, d, res, rows, ncols: int) -> None:
    """Observer labels on the first panel (a population's on two lines), row separators on every panel."""
    labels = [lab.replace(" (", "\n(", 1) if pop else lab
              for lab, pop in zip(table_labels(res.observers), res.populations)]
    axes[0].set_yticks(rows, labels)
    axes[0].set_ylim(-0.6, len(res.observers) - 0.4)
    for p, ax in enumerate(axes):
        if p % ncols:
            ax.tick_params(axis="y", labelleft=False)
        ax.tick_params(axis="y", length=0)
        for r in rows[:-1]:
            ax.axhline(r - 0.5, color=NEUTRAL["light"], lw=0.4, zorder=0)


#: Legend note when an observer is a population (a spec with n=N).
SPREAD_NOTE = "Populations (n=N): median member, line 2.5-97.5 % of members"

#: Legend title: what the second line of each entry is.
COST_TITLE = "Costs beside each filter:\n\u03c4v (D65), white shift \u0394u\u2032v\u2032, Rf (normal)"


def cost_label(f: dict) -> str:
    """One filter's costs as a legend line: luminous transmittance, white shift, Rf (normal observer); ``f`` a
    filter entry of the scorecard's JSON."""
    return _cost_text(f.get("luminous_transmittance"), f.get("white_shift"), (f.get("rendition") or {}).get("rf"))


def _cost_text(tv, ws, rf) -> str:
    def missing(v):
        return v is None or (isinstance(v, float) and np.isnan(v))

    parts = ["\u03c4v " + ("-" if missing(tv) else f"{100 * tv:.0f} %"),
             "\u0394u\u2032v\u2032 " + ("-" if missing(ws) else f"{ws:.3f}"),
             "Rf " + ("-" if missing(rf) else f"{rf:.0f}")]
    return ", ".join(parts)


def _with_context(title: str | None, context: dict) -> str:
    """The title with the light, the surface set and the adaptation on a line of their own."""
    ill = context.get("illuminant") or {}
    surf = context.get("surfaces") or {}
    adapt = context.get("adaptation") or {}
    ill_name = ill.get("name", ill) if isinstance(ill, dict) else ill
    surf_name = surf.get("name", surf) if isinstance(surf, dict) else surf
    count = f" ({surf['count']})" if isinstance(surf, dict) and "count" in surf else ""
    adapt_text = adapt.get("spec", adapt) if isinstance(adapt, dict) else adapt
    context = f"{ill_name} light, {surf_name}{count} surfaces, {adapt_text} adaptation"
    return f"{title}: {context}" if title else context


def _ticks(limits) -> list[float]:
    """Round ticks inside ``limits``, at least a quarter of the log range apart, always with 1."""
    lo, hi = np.log(limits[0]), np.log(limits[1])
    gap = (hi - lo) / 4
    kept = [1.0]
    for t in sorted(_NICE, key=lambda t: abs(np.log(t))):
        if limits[0] <= t <= limits[1] and all(abs(np.log(t) - np.log(k)) >= gap for k in kept):
            kept.append(t)
    return sorted(kept)


def _abs_formatter():
    from matplotlib.ticker import FuncFormatter

    return FuncFormatter(lambda v, _pos: f"{abs(v):g}")
