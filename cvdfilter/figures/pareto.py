"""``pareto``: the objectives of a design search against each other (``cvdfilter design``).

Two or more objectives: every candidate the search scored as a small point (grey crosses where it
missed a requirement, light dots where it met them all), the reported designs (the Pareto set, after
re-scoring) as numbered markers joined in order, and the reference filters as open markers; a
requirement on a plotted metric is drawn as a dashed line at its bound (the constraint boundary).
One objective: the objective of every candidate against the evaluation number, with the best so far
(how the search converged), the references and any requirement on it as horizontal lines.

Numbers come from a :class:`~cvdfilter.designing.study.DesignResult` (its archive and its re-scored
designs); the figure computes no metric of its own.

Public: :func:`pareto_figure`.
"""

from __future__ import annotations

import numpy as np

from .labelling import ensure_axes_height, legend_below, legend_columns, short_name, wrap_to_width
from .output import FigureResult, finish, new_figure, style_context
from .palette import NEUTRAL, series
from .style import Style

__all__ = ["pareto_figure"]

_LABELS = {
    "red_green_gain": "red-green gain", "blue_yellow_gain": "blue-yellow gain",
    "luminance_contrast_gain": "luminance contrast gain", "luminous_transmittance": "luminous transmittance",
    "white_shift": "white shift (u'v')", "confusion_pairs.net": "confused pairs resolved \u2212 created",
    "discriminable_pairs.net": "discriminable pairs gained \u2212 lost", "rendition.rf": "Rf", "rendition.rg": "Rg",
    "discernible_colours.ratio": "discernible colours, with / without",
    "tasks.arrangement.tes": "arrangement TES (median of trials)",
    "tasks.arrangement.effect": "arrangement: share easier \u2212 share harder",
}


def _axis_label(metric) -> str:
    base = _LABELS.get(metric.key, metric.key)
    stat = {"mean": "mean ", "sd": "sd of ", "p2_5": "2.5th percentile of ", "p50": "median ",
            "p97_5": "97.5th percentile of ", "share": "share helped by "}.get(metric.stat or "", "")
    text = f"{stat}{base}"
    if metric.observer is not None:
        text += f" [{short_name(metric.observer, 32)}]"
    return text[0].upper() + text[1:]


def _front(ax, style, s, problem, metrics, values, feasible, designs, refs, bounds):
    """Two objectives against each other: candidates, bounds, the designs numbered, the references."""
    n_req = len(problem.requirements)
    handles: list = []
    labels: list = []
    xs, ys = values[:, 0], values[:, 1]
    ok = np.isfinite(xs) & np.isfinite(ys)
    h1, = ax.plot(xs[ok & ~feasible], ys[ok & ~feasible], linestyle="none", marker="x",
                  markersize=style.marker_size * 0.6, color=NEUTRAL["fill"], markeredgewidth=0.4,
                  gid="candidates-infeasible", zorder=1)
    h2, = ax.plot(xs[ok & feasible], ys[ok & feasible], linestyle="none", marker="o",
                  markersize=style.marker_size * 0.5, color=s[0].color, alpha=0.25, markeredgewidth=0,
                  gid="candidates-feasible", zorder=2)
    if n_req:
        handles += [h1, h2]
        labels += ["candidate missing a requirement", "candidate meeting every requirement"]
    else:
        handles.append(h2)
        labels.append("candidate")
    for i, r in enumerate(problem.requirements):
        for axis, m in enumerate(metrics[:2]):
            if r.metric == m and r.op != "==":
                line = ax.axvline if axis == 0 else ax.axhline
                hb = line(r.value, color=NEUTRAL["line"], linestyle=(0, (4, 2)), lw=0.8,
                          gid=f"bound-{i}", zorder=3)
                bounds.append({"metric": m.text, "op": r.op, "value": r.value})
                if len(bounds) == 1:
                    handles.append(hb)
                    labels.append("requirement bound")
    order = np.argsort(designs[:, 0], kind="stable")
    hd, = ax.plot(designs[order, 0], designs[order, 1], gid="designs", zorder=5,
                  **{**s[1].line_kwargs(), "linewidth": style.line_width * 0.8})
    handles.append(hd)
    labels.append("designs (re-scored), numbered by rank")
    finite = designs[np.all(np.isfinite(designs[:, :2]), axis=1), :2]
    span = np.ptp(np.vstack([finite, values[ok][:, :2]]), axis=0) if len(finite) else np.ones(2)
    span = np.where(span > 0, span, 1.0)
    placed: list = []
    for rank, (x, y) in enumerate(designs[:, :2], start=1):
        # numbers at least 7 % of the plotted range apart, so that none overlaps another
        near = any(np.hypot((x - px) / span[0], (y - py) / span[1]) < 0.07 for px, py in placed)
        if np.isfinite(x) and np.isfinite(y) and not near:
            placed.append((x, y))
            ax.annotate(str(rank), (x, y), xytext=(2.5, 2.5), textcoords="offset points",
                        fontsize=style.tick_size, color=s[1].color, gid=f"design-label-{rank}", zorder=6)
    if len(refs):
        hr, = ax.plot(refs[:, 0], refs[:, 1], gid="references", zorder=4,
                      **{**s[2].marker_kwargs(), "markerfacecolor": "white"})
        handles.append(hr)
        labels.append("reference filters")
    ax.set_xlabel(_axis_label(metrics[0]))
    ax.set_ylabel(_axis_label(metrics[1]))
    return handles, labels

def _progress(ax, style, s, problem, metrics, values, feasible, refs, bounds):
    """One objective against the evaluation number, the best so far, references and bounds."""
    n_req = len(problem.requirements)
    handles: list = []
    labels: list = []
    n = np.arange(1, len(values) + 1)
    v = values[:, 0]
    sense = problem.objectives[0][1]
    h1, = ax.plot(n[~feasible], v[~feasible], linestyle="none", marker="x", color=NEUTRAL["fill"],
                  markersize=style.marker_size * 0.6, markeredgewidth=0.4, gid="candidates-infeasible")
    h2, = ax.plot(n[feasible], v[feasible], linestyle="none", marker="o", color=s[0].color, alpha=0.25,
                  markersize=style.marker_size * 0.5, markeredgewidth=0, gid="candidates-feasible")
    best = np.where(feasible & np.isfinite(v), v * sense, -np.inf)
    running = np.maximum.accumulate(best) * sense
    hb, = ax.plot(n, np.where(np.isfinite(running), running, np.nan), color=s[1].color,
                  lw=style.line_width, gid="best-so-far")
    handles += [h1, h2, hb] if n_req else [h2, hb]
    labels += (["candidate missing a requirement", "candidate meeting every requirement"] if n_req
               else ["candidate"]) + ["best so far"]
    if len(refs):
        for j, y in enumerate(refs[:, 0]):
            hr = ax.axhline(y, color=s[2].color, linestyle=(0, (1, 1.5)), lw=0.7, gid=f"reference-{j}")
        handles.append(hr)
        labels.append("reference filters")
    for i, r in enumerate(problem.requirements):
        if r.metric == metrics[0] and r.op != "==":
            ax.axhline(r.value, color=NEUTRAL["line"], linestyle=(0, (4, 2)), lw=0.8, gid=f"bound-{i}")
            bounds.append({"metric": r.metric.text, "op": r.op, "value": r.value})
    ax.set_xlabel("Evaluation")
    ax.set_ylabel(_axis_label(metrics[0]))
    return handles, labels

def pareto_figure(result, *, style: Style | None = None, width_mm: float = 89.0, height_mm: float | None = None,
                  title: str | None = None, caveat: str | None = None) -> FigureResult:
    """The design search's objectives, designs and references (see the module docstring).

    Parameters
    ----------
    result : DesignResult
        What :func:`cvdfilter.design` returned.

    Returns
    -------
    FigureResult
        ``data``: ``metrics`` (names), ``candidates`` (n, objectives), ``feasible`` (n,), ``designs``
        (designs, objectives; re-scored), ``references`` (references, objectives), ``bounds``
        (requirements drawn: metric, op, value). Artists: ``candidates-feasible``, ``candidates-infeasible``,
        ``designs``, ``design-label-<rank>``, ``references``, ``bound-<i>``.
    """
    from ..cautions import CAVEAT

    style = style or Style()
    problem = result.problem
    metrics = [m for m, _ in problem.objectives]
    names = [m.text for m in metrics]
    n_var, n_obj, n_req = len(problem.space.variables), len(metrics), len(problem.requirements)
    _, values, viol = result.archive.arrays(n_var, n_obj, n_req)
    feasible = np.all(viol <= 0, axis=1) if n_req else np.ones(len(values), dtype=bool)

    def table(rows):
        return np.array([[np.nan if r["objectives"][n] is None else float(r["objectives"][n]) for n in names]
                         for r in rows], dtype=float).reshape(len(rows), n_obj)

    designs, refs = table(result.designs), table(result.references)
    bounds: list = []
    height_mm = height_mm or (78.0 if width_mm < 120 else 95.0)
    with style_context(style):
        fig = new_figure(style, width_mm, height_mm)
        ax = fig.add_subplot(1, 1, 1)
        s = series(3)
        if n_obj >= 2:
            handles, labels = _front(ax, style, s, problem, metrics, values, feasible, designs, refs, bounds)
        else:
            handles, labels = _progress(ax, style, s, problem, metrics, values, feasible, refs, bounds)
        ax.grid(True, color=NEUTRAL["light"], lw=0.4, zorder=0)
        ax.set_axisbelow(True)
        ncols = legend_columns(labels, width_mm, style.font_size, max_cols=2)
        legend_below(fig, ax, handles, labels, ncols=ncols)
        default = f"Design search: {len(values)} candidates, {len(result.designs)} designs"
        finish(fig, style, title=default if title is None else title,
               caveat=(CAVEAT if caveat is None else caveat) or None)
        ensure_axes_height(fig, [ax], 0.55 * width_mm if width_mm < 120 else 70.0, rows=1)
        # a y label longer than the plot is wrapped to its height
        ax.set_ylabel(wrap_to_width(ax.get_ylabel(), ax.get_position().height * fig.get_figheight() * 72 * 0.95,
                                    style.font_size))
    data = {"metrics": names, "candidates": values, "feasible": feasible, "designs": designs,
            "references": refs, "bounds": bounds}
    return FigureResult("pareto", fig, data, style, {"family": problem.space.family,
                                                     "observers": list(problem.observers)})
