"""``tasks``: one model observer's hue-circle arrangement with the moment ellipse, and the per-task verdicts.

Left (top at single width): the caps of an arrangement task of our own design in CIELUV u*, v* under the
light (dots in their approximate sRGB colours), the arrangement whose TES is the median over trials without
the filter (solid) and with the first filter (dashed), and the moment ellipses (Vingrys & King-Smith 1988:
semi-axes R_maj and R_min, the medians over trials, along the median confusion angle) centred on the caps'
mean. Right (bottom): the verdict of every task for every observer and filter, by colour and by sign
(+ easier, - harder, 0 no change), so that it reads without colour too. For a population (``n=``) the cell
is the pooled verdict and also gives the percentages of members whose own verdict is easier / harder.

Numbers come from :func:`cvdfilter.tasks` (the figure computes none of its own).

Public: :func:`tasks_figure`.
"""

from __future__ import annotations

import numpy as np

from .labelling import filter_labels, legend_axes, observer_label
from .layout import MIN_PRINT_PT
from .output import FigureResult, finish, new_figure, style_context
from .palette import NEUTRAL, OKABE_ITO
from .style import Style

__all__ = ["tasks_figure", "VERDICT_STYLE"]

#: Verdict -> (cell colour, sign shown in the cell).
VERDICT_STYLE = {"easier": (OKABE_ITO["sky blue"], "+"), "harder": (OKABE_ITO["orange"], "\u2212"),
                 "no change": (NEUTRAL["light"], "0")}


def _median_trial(tes) -> int:
    t = np.asarray(tes).ravel()
    return int(np.argsort(t, kind="stable")[len(t) // 2])


def _ellipse_points(r_major, r_minor, angle_deg, centre, n=100):
    t = np.linspace(0, 2 * np.pi, n)
    a = np.radians(angle_deg)
    x, y = r_major * np.cos(t), r_minor * np.sin(t)
    return np.stack([centre[0] + x * np.cos(a) - y * np.sin(a), centre[1] + x * np.sin(a) + y * np.cos(a)], 1)


def tasks_figure(filters, *, illuminant="D65", observers=None, adaptation="full", style: Style | None = None,
                 width_mm: float = 89.0, height_mm: float | None = None, title: str | None = None,
                 caveat: str | None = None, task: str = "arrangement", trials: int = 200, seed: int = 0,
                 result=None) -> FigureResult:
    """The arrangement path and moment ellipse of the first deficient observer, and all verdicts.

    Parameters
    ----------
    filters
        One to eight filters (the path panel shows the first).
    observers
        Observer specs (default: those of :func:`cvdfilter.tasks`); the path panel shows the first
        observer other than ``normal`` (else the first).
    adaptation
        Accepted for the common figure interface; the receptor-noise model is blind to von Kries adaptation.
    task : str
        ``arrangement`` or ``arrangement-fine`` for the path panel.
    trials, seed
        Passed to :func:`cvdfilter.tasks`.
    result : TaskResult, optional
        A result already computed (must include ``task``).

    Returns
    -------
    FigureResult
        ``data``: ``uv`` (caps), ``order_without``, ``order_with`` (the drawn arrangements), ``ellipse_without``,
        ``ellipse_with`` (r_major, r_minor, angle), ``verdicts`` (rows x filters), ``member_shares`` (rows x
        filters: (share easier, share harder) of a population's members, None for a single observer), ``rows``,
        ``filters``.
        Artists: ``caps``, ``path-without``, ``path-with``, ``ellipse-without``, ``ellipse-with``,
        ``verdict-<row>-<filter>``.
    """
    from ..errors import InputError
    from ..vision_tasks import tasks as run_tasks
    from ..vision_tasks.arrangement import ARRANGEMENT_DESIGNS, caps
    from ..vision_tasks.core import DEFAULT_OBSERVERS
    from ..vision_tasks.stimuli import _srgb

    if task not in ARRANGEMENT_DESIGNS:
        raise InputError(f"the tasks figure draws an arrangement task, not '{task}'",
                         hint="use arrangement or arrangement-fine")
    style = style or Style()
    if result is None:
        result = run_tasks(filters, observers=list(observers or DEFAULT_OBSERVERS), trials=trials, seed=seed,
                           illuminant=illuminant)
    if len(result.filters) > 8:
        raise InputError(f"{len(result.filters)} filters: the tasks figure compares at most 8")
    obs = next((o for o in result.observers if not o.startswith("normal")), result.observers[0])
    uv, order0, order1, ell = _path_data(result, task, obs)
    from ..spectra.illuminants import illuminant as make_illuminant

    ill = make_illuminant(illuminant)
    colours = _srgb(caps(task)[2], ill.spd, ill.grid)
    rows, verdicts, shares = _verdicts(result)
    labels_o = {o: observer_label(o) for o in result.observers}
    wide = width_mm >= 120
    path_h, grid_h = _heights(width_mm, len(result.observers))
    height_mm = height_mm or (max(path_h, grid_h) + 22 if wide else path_h + grid_h + 22)
    with style_context(style):
        fig = new_figure(style, width_mm, height_mm)
        if wide:
            outer = fig.add_gridspec(2, 2, width_ratios=[1.0, 1.0], height_ratios=[1.0, 0.001])
            path_spec, legend_spec, grid_spec = outer[0, 0], outer[1, 0], outer[:, 1]
        else:
            outer = fig.add_gridspec(3, 1, height_ratios=[path_h, 0.001, grid_h])
            path_spec, legend_spec, grid_spec = outer[0], outer[1], outer[2]
        _path_panel(fig, path_spec, legend_spec, uv, colours, (order0, order1), ell,
                    f"with {filter_labels([result.filters[0]], 24)[0]}",
                    f"{labels_o[obs]}\n{task}, median-TES trials", style)
        _verdict_grids(fig, grid_spec, result, (verdicts, shares), labels_o, style, width_mm / 2 if wide else width_mm)
        finish(fig, style, title=title, caveat=caveat)
    data = {"uv": uv, "order_without": order0, "order_with": order1, "ellipse_without": ell["without"],
            "ellipse_with": ell["with"], "verdicts": verdicts, "member_shares": shares, "rows": rows,
            "filters": list(result.filters)}
    inputs = {"filters": list(result.filters), "illuminant": result.settings["illuminant"],
              "observers": list(result.observers), "task": task, "trials": result.settings["trials"],
              "seed": result.settings["seed"]}
    return FigureResult("tasks", fig, data, style, inputs)


def _path_data(result, task: str, obs: str) -> tuple:
    """Cap positions, the median-TES arrangements without and with the first filter, and the median moment
    ellipses (r_major, r_minor, angle) of observer ``obs``."""
    s = result.scores[(task, obs)]
    uv = result.cap_uv(task)
    i0, i1 = _median_trial(s["tes"][0]), _median_trial(s["tes"][1])
    order0 = s["order"][0].reshape(-1, uv.shape[0])[i0]
    order1 = s["order"][1].reshape(-1, uv.shape[0])[i1]
    ell = {state: tuple(float(np.median(s[k][idx])) for k in ("r_major", "r_minor", "confusion_angle_deg"))
           for state, idx in (("without", 0), ("with", 1))}
    return uv, order0, order1, ell


def _heights(width_mm: float, n_observers: int) -> tuple[float, float]:
    """Heights (mm) of the path panel and of the verdict grids."""
    grid_h = 42 + 5.5 * n_observers  # rotated task names, two-line filter names and the key take about 40 mm
    path_h = 62.0 if width_mm >= 120 else width_mm * 0.78
    return path_h, grid_h


def _verdicts(result):
    """(observer, task) rows and, per row, each filter's verdict; and for a population's rows the shares of
    members easier and harder (else None)."""
    records = {(r["filter"], r["observer"], r["task"]): r for r in result.results()}
    rows = [(o, t) for o in result.observers for t in result.tasks]
    verdicts = [[records[(f, o, t)]["verdict"] for f in result.filters] for o, t in rows]
    shares = [[(records[(f, o, t)]["members"]["easier"]["share"], records[(f, o, t)]["members"]["harder"]["share"])
               if "members" in records[(f, o, t)] else None for f in result.filters] for o, t in rows]
    return rows, verdicts, shares


def _path_panel(fig, path_spec, legend_spec, uv, colours, orders, ell, with_label: str, title: str, style) -> None:
    """The caps in their colours, the arrangement paths without and with the filter and their moment ellipses."""
    order0, order1 = orders
    centre = uv.mean(axis=0)
    ax = fig.add_subplot(path_spec)
    ax.scatter(uv[:, 0], uv[:, 1], s=style.marker_size ** 2 * 2.2, c=colours, edgecolors=NEUTRAL["line"],
               linewidths=0.4, zorder=3, gid="caps")
    ax.plot(*uv[0], marker="o", markersize=style.marker_size * 2.2, markerfacecolor="none",
            markeredgecolor="black", linestyle="none", zorder=4, gid="first-cap")
    h0, = ax.plot(uv[order0, 0], uv[order0, 1], color="black", lw=0.9, zorder=2, gid="path-without",
                  label="without filter")
    h1, = ax.plot(uv[order1, 0], uv[order1, 1], color=OKABE_ITO["vermillion"], lw=0.9, ls=(0, (4, 1.5)),
                  zorder=2, gid="path-with", label=with_label)
    for state, colour, ls in (("without", "black", "-"), ("with", OKABE_ITO["vermillion"], (0, (4, 1.5)))):
        e = _ellipse_points(*ell[state], centre)
        ax.plot(e[:, 0], e[:, 1], color=colour, lw=0.6, ls=ls, alpha=0.8, gid=f"ellipse-{state}")
    ax.set_aspect("equal", adjustable="box")
    ax.set_xlabel("u*")
    ax.set_ylabel("v*")
    ax.set_title(title, fontsize=style.font_size)
    legend_axes(fig, legend_spec, [h0, h1], [h0.get_label(), h1.get_label()], ncols=1, handlelength=2.0,
                title="arrangement path and moment ellipse", title_fontsize=style.font_size)


def _verdict_grids(fig, grid_spec, result, cells, labels_o: dict, style, column_mm: float) -> None:
    """Verdict grids: one per filter, observers down, tasks across; a population's cell (pooled verdict) also
    gives the percentages of members easier and harder."""
    verdicts, shares = cells
    short = {"arrangement": "arrange", "arrangement-fine": "fine", "plates": "plates", "rayleigh": "Rayleigh"}
    n_o, n_t, n_f = len(result.observers), len(result.tasks), len(result.filters)
    sub = grid_spec.subgridspec(1, n_f)
    axes = [fig.add_subplot(sub[0, j]) for j in range(n_f)]
    # filter names cut to the width of their grid (0.62 em per character, as in labelling.legend_columns)
    room_mm = (column_mm - 40.0) / n_f
    limit = max(6, int(room_mm / (0.62 * style.tick_size * 25.4 / 72)))
    for j, axv in enumerate(axes):
        for k in range(n_o):
            y = n_o - 1 - k
            for i in range(n_t):
                v = verdicts[k * n_t + i][j]
                colour, sign = VERDICT_STYLE[v]
                axv.add_patch(_rect(i, y, colour, f"verdict-{k * n_t + i}-{j}"))
                share = shares[k * n_t + i][j]
                if share is None:
                    axv.text(i + 0.5, y + 0.5, sign, ha="center", va="center", fontsize=style.tick_size)
                else:  # the pooled verdict's sign, then % of members easier / harder
                    axv.text(i + 0.5, y + 0.5, f"{sign}\n{100 * share[0]:.0f}/{100 * share[1]:.0f}", ha="center",
                             va="center", fontsize=max(MIN_PRINT_PT, style.tick_size * 0.72), linespacing=0.9,
                             gid=f"members-{k * n_t + i}-{j}")
        axv.set_xlim(0, n_t)
        axv.set_ylim(0, n_o)
        axv.set_xticks(np.arange(n_t) + 0.5, [short.get(t, t) for t in result.tasks], rotation=90)
        ylabels = [labels_o[o].replace(" (", "\n(") for o in result.observers][::-1]
        axv.set_yticks(np.arange(n_o) + 0.5, ylabels if j == 0 else [])
        axv.tick_params(length=0)
        for side in axv.spines.values():
            side.set_visible(False)
        axv.set_title(_two_lines(result.filters[j], limit), fontsize=style.tick_size)
        if j == 0:
            key = "+ easier, \u2212 harder, 0 no change"
            if any(x is not None for row in shares for x in row):
                key += "\npopulations: pooled verdict over\n% of members easier/harder"
            axv.set_xlabel(key, fontsize=style.tick_size, loc="left")


def _rect(x, y, colour, gid):
    from matplotlib.patches import Rectangle

    return Rectangle((x + 0.04, y + 0.06), 0.92, 0.88, facecolor=colour, edgecolor="none", gid=gid)


def _two_lines(name: str, limit: int) -> str:
    """A name on at most two lines of ``limit`` characters (broken at hyphens or spaces), cut with an ellipsis."""
    import textwrap

    lines = textwrap.wrap(str(name), limit, break_on_hyphens=True) or [""]
    if len(lines) > 2:
        lines = [lines[0], lines[1][: max(1, limit - 1)] + "\u2026"]
    return "\n".join(lines)
