"""``chromaticity``: surfaces without and with the filter, with the observer's confusion lines.

Spaces:

``mb`` (default)
    MacLeod-Boynton (l, s) of the observer's normal base observer (same age
    and field; a dichromat's own luminance has no l axis), scaled as in CIE 170-1 (:meth:`cvdfilter.observers.observer.Observer.macleod_boynton`).
    Confusion lines are straight here too: protan lines meet at (1, 0), deutan
    lines at (0, 0), tritan lines are vertical (l constant) (MacLeod & Boynton
    1979, JOSA 69, 1183).
``xy``
    CIE 1931 xy. Cone excitations map to XYZ with the least-squares
    LMS-to-XYZ matrix (:func:`cvdfilter.observers.confusion.lms_to_xyz_matrix`),
    so the confusion lines pass exactly through the plotted copunctal point; the
    CIE 2006 fundamentals are not an exact transform of the 1931 functions, so
    coordinates can differ from a direct CIE 1931 calculation by a few thousandths.
``xy2015``
    CIE 170-2:2015 xy for the observer's field (exact for the CIE 2006 fundamentals).

Every surface is drawn without the filter (open circle) and with it (filled
dot), joined by an arrow; "with" is the corresponding colour after von Kries
adaptation to the filtered illuminant, expressed in the frame of the
unfiltered white: ``LMS_with * (W_without / W_with) ** a`` for adaptation a
(a = 1: the filtered white maps onto the unfiltered white). The unfiltered
white and the filtered white (before adaptation) are marked. A top panel
shows the whole diagram: spectrum locus, copunctal point and a fan of
confusion lines through the locus; the panel below zooms in on the surfaces.

Public: :func:`chromaticity_figure`, :func:`chromaticity_data`, :data:`SPACES`.
"""

from __future__ import annotations

import numpy as np

from ..errors import InputError
from .inputs import load_inputs
from .labelling import (display_names, ensure_axes_height, legend_axes, legend_columns, legend_labels,
                        observer_label, pad_lines, wrap_to_width)
from .output import FigureResult, finish, new_figure, style_context
from .palette import NEUTRAL, OKABE_ITO
from .style import Style

__all__ = ["chromaticity_figure", "chromaticity_data", "arrow_subset", "SPACES", "ARROW_MODES", "AUTO_ARROWS"]

#: How surfaces are drawn: ``all`` (an arrow each), ``subset`` (arrows for :data:`AUTO_ARROWS` surfaces
#: spread over the diagram, the others as small dots), ``mean`` (one arrow per cell of a 4 x 4 grid over
#: the surfaces: the mean shift of the surfaces in it), or a number of surfaces; ``auto`` = ``all`` up to
#: :data:`AUTO_ARROWS` surfaces, else ``subset``.
ARROW_MODES = ("auto", "all", "subset", "mean")
#: Most arrows per panel that stay readable at a column's width (common practice: a 24-patch chart).
AUTO_ARROWS = 24

SPACES = {
    "mb": "MacLeod-Boynton (l, s), CIE 170-1 scaling",
    "xy": "CIE 1931 xy (cone coordinates through the least-squares LMS-to-XYZ matrix)",
    "xy2015": "CIE 170-2:2015 xy for the observer's field",
}
_FAN_NM = np.arange(420, 681, 20)
#: A cone whose excitation by the filtered white is at most this fraction of its excitation by the unfiltered
#: white gets no light from the filter: the filtered light then has no chromaticity and no von Kries gain for
#: that cone. 1e-12 is an optical density of 12, far beyond what spectrophotometers measure (OD 6-8 at best,
#: common practice), so only a filter that is black for that cone meets it.
NO_LIGHT_FRACTION = 1e-12
_LOCUS_NM = (400, 700)


def _project(space: str, obs, lms, matrix=None) -> np.ndarray:
    """MacLeod-Boynton (l, s) of ``obs`` or xy through ``matrix``, for lms (..., 3)."""
    if space == "mb":
        return obs.macleod_boynton(lms)
    xyz = np.asarray(lms, dtype=float) @ matrix.T
    with np.errstate(divide="ignore", invalid="ignore"):
        return xyz[..., :2] / xyz.sum(axis=-1, keepdims=True)


def unlit_cones(filters, *, illuminant="D65", observer="deuteranope") -> dict[str, tuple[str, ...]]:
    """Filters that pass no light to a cone of the diagram's observer: ``{name: ("L", ...)}``.

    The diagram uses the base (normal) observer's three cones; a cone is unlit
    when the filtered white excites it at most :data:`NO_LIGHT_FRACTION` of the
    unfiltered white (e.g. ``nd:t=0``, or a file of zeros over the cone's range).
    Such a filter has no chromaticity and cannot be drawn.
    """
    got = load_inputs(filters, illuminant=illuminant, observers=[observer])
    fs, ill, obs = got["filters"], got["illuminant"], got["observers"][0]
    fundamentals = (obs.base or obs).fundamentals
    white0 = ill.spd @ fundamentals
    white1 = (ill.spd * fs.transmittance) @ fundamentals                       # (n_filters, 3)
    dark = white1 <= NO_LIGHT_FRACTION * white0
    return {name: tuple(c for c, d in zip("LMS", row) if d) for name, row in zip(fs.names, dark) if row.any()}


def check_adaptable(fs, *, illuminant, observer, adaptation) -> None:
    """Raise InputError when adaptation (> 0) to a filter is undefined because it leaves a cone unlit."""
    from ..observers.spaces import parse_adaptation

    if parse_adaptation(adaptation) == 0:
        return
    for name, dark in unlit_cones(fs, illuminant=illuminant, observer=observer).items():
        j = fs.names.index(name)
        path = fs.info[j].get("path") if j < len(fs.info) else None
        raise InputError(f"filter '{name}'{f' ({path})' if path and path != name else ''} passes no light to "
                         f"the {', '.join(dark)} cone{'s' if len(dark) > 1 else ''}: there is nothing to adapt to",
                         hint="use --adaptation none to see it unadapted")


def chromaticity_data(filters, *, illuminant="D65", observer="deuteranope", surfaces="chart24",
                      adaptation="full", space: str = "mb") -> dict:
    """The numbers the chromaticity figure plots.

    Returns
    -------
    dict
        ``space``, ``axis_labels``, ``observer`` (spec), ``deficiency``,
        ``copunctal`` ((2,) or None when at infinity, i.e. tritan in MB),
        ``locus_nm`` and ``locus`` ((n, 2)), ``white`` ((2,), unfiltered),
        ``filters``: list of dicts with ``name``, ``without`` and ``with``
        ((n_surfaces, 2) adapted coordinates), ``white_filtered`` ((2,),
        before adaptation), ``white_adapted`` ((2,)), and ``labels`` of the surfaces.
    """
    from ..observers import confusion
    from ..observers.spaces import parse_adaptation, von_kries_gains

    if space not in SPACES:
        raise InputError(f"--space {space} is not one of {', '.join(SPACES)}")
    got = load_inputs(filters, illuminant=illuminant, observers=[observer], surfaces=surfaces)
    fs, ill, obs, surf = got["filters"], got["illuminant"], got["observers"][0], got["surfaces"]
    a = parse_adaptation(adaptation)
    base = obs.base or obs
    matrix = None
    system = None
    if space != "mb":
        system = "cie1931" if space == "xy" else ("cie2015-10" if base.params.get("field", 2) >= 6 else "cie2015-2")
        matrix, _ = confusion.lms_to_xyz_matrix(base.fundamentals, confusion.xy_cmfs(system, fs.grid))

    # The diagram is the base (normal) observer's space, same age and field: a dichromat's own
    # luminance has no MacLeod-Boynton l; the deficiency enters through the confusion lines.
    obs_space = base
    fundamentals = base.fundamentals
    white0 = ill.spd @ fundamentals
    stimuli0 = (ill.spd[:, None] * surf.reflectance).T                       # (n_samples, n_wl)
    lms0 = stimuli0 @ fundamentals
    out_filters = []
    for i, (name, t) in enumerate(zip(fs.names, fs.transmittance)):
        white1 = (ill.spd * t) @ fundamentals
        dark = [c for c, w1, w0 in zip("LMS", white1, white0) if w1 <= NO_LIGHT_FRACTION * w0]
        if dark:
            path = fs.info[i].get("path") if i < len(fs.info) else None
            raise InputError(f"filter '{name}'{f' ({path})' if path and path != name else ''} passes no light to the {', '.join(dark)} cone"
                             f"{'s' if len(dark) > 1 else ''} under {ill.name}, so it has no chromaticity",
                             hint="leave it out of the chromaticity figure")
        lms1 = (stimuli0 * t) @ fundamentals
        adapted = lms1 * von_kries_gains(white1, white0, adaptation=a) * white0
        out_filters.append({
            "name": name,
            "without": _project(space, obs_space, lms0, matrix),
            "with": _project(space, obs_space, adapted, matrix),
            "white_filtered": _project(space, obs_space, white1, matrix),
            "white_adapted": _project(space, obs_space,
                                      white1 * von_kries_gains(white1, white0, adaptation=a) * white0, matrix),
        })

    deficiency = obs.deficiency
    copunctal = None
    if deficiency is not None:
        cone = ("protan", "deutan", "tritan").index(deficiency)
        if space == "mb":
            copunctal = None if cone == 2 else obs_space.macleod_boynton(np.eye(3)[cone])
        else:
            copunctal = confusion.copunctal_point(obs, deficiency, xy_system=system)
    wl = fs.wavelengths
    keep = (wl >= _LOCUS_NM[0]) & (wl <= _LOCUS_NM[1])
    if space == "mb":
        locus_nm, locus = wl[keep], obs_space.macleod_boynton(fundamentals[keep])
    else:
        locus_nm, locus = confusion.spectrum_locus(obs, xy_system=system)
        sel = (locus_nm >= _LOCUS_NM[0]) & (locus_nm <= _LOCUS_NM[1])
        locus_nm, locus = locus_nm[sel], locus[sel]
    labels = {"mb": ("MacLeod-Boynton l", "MacLeod-Boynton s"),
              "xy": ("x (CIE 1931)", "y (CIE 1931)"),
              "xy2015": ("x (CIE 170-2)", "y (CIE 170-2)")}[space]
    return {"space": space, "axis_labels": labels, "observer": obs.spec, "observer_label": observer_label(obs),
            "deficiency": deficiency, "copunctal": copunctal, "locus_nm": locus_nm, "locus": locus,
            "white": _project(space, obs_space, white0, matrix), "filters": out_filters, "labels": list(surf.labels),
            "surfaces": surf.name, "illuminant": ill.name, "adaptation": a, "xy_system": system}


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


def _arrow_mode(arrows, n_surfaces: int) -> tuple[str, int]:
    if isinstance(arrows, (int, np.integer)) or (isinstance(arrows, str) and arrows.strip().isdigit()):
        n = int(arrows)
        if n < 1:
            raise InputError(f"--arrows {n}: give at least 1 surface")
        return ("all" if n >= n_surfaces else "subset"), n
    mode = str(arrows).strip().lower()
    if mode not in ARROW_MODES:
        raise InputError(f"--arrows {arrows} is not one of {', '.join(ARROW_MODES)} or a number")
    if mode == "auto":
        mode = "all" if n_surfaces <= AUTO_ARROWS else "subset"
    return mode, (AUTO_ARROWS if mode == "subset" else n_surfaces)


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


def chromaticity_figure(filters, *, illuminant="D65", observers=("deuteranope",), surfaces="chart24",
                        adaptation="full", space: str = "mb", arrows="auto", style: Style | None = None,
                        width_mm: float = 89.0, height_mm: float | None = None, title: str | None = None,
                        caveat: str | None = None) -> FigureResult:
    """Chromaticity diagram: locus, copunctal point, confusion lines, surfaces without -> with the filter.

    Parameters
    ----------
    filters
        One to four filters (one zoomed panel each).
    observers : sequence of str
        Exactly one observer (default deuteranope); its fundamentals define the
        space and its deficiency the confusion lines.
    surfaces : str
        Surface set (default the 24-patch chart set chart24, readable as arrows).
    space : str
        ``mb``, ``xy`` or ``xy2015`` (:data:`SPACES`).
    arrows : str or int
        ``auto`` (default), ``all``, ``subset``, ``mean`` or a number of surfaces (:data:`ARROW_MODES`).

    Returns
    -------
    FigureResult
        ``data`` as :func:`chromaticity_data`. Artists carry gids: ``copunctal``,
        ``locus``, ``white``, ``white-filtered-<i>``, ``surfaces-without-<i>``,
        ``surfaces-with-<i>``.
    """
    style = style or Style()
    observers = list(observers or ["deuteranope"])
    if len(observers) != 1:
        raise InputError("the chromaticity figure shows one observer", hint="give --observer once")
    data = chromaticity_data(filters, illuminant=illuminant, observer=observers[0], surfaces=surfaces,
                             adaptation=adaptation, space=space)
    n_f = len(data["filters"])
    if n_f > 4:
        raise InputError(f"{n_f} filters: the chromaticity figure takes at most 4", hint="one figure per filter")
    mb = space == "mb"
    n_surf = len(data["labels"])
    mode, n_arrows = _arrow_mode(arrows, n_surf)
    data["arrows"] = {"mode": mode, "n": n_arrows}
    from ..spectra.filters import load_filters

    try:
        shown_names = display_names(load_filters(filters)) if not isinstance(filters, np.ndarray) else None
    except Exception:   # the names are cosmetic; the data above already validated the filters
        shown_names = None
    if not shown_names or len(shown_names) != n_f:
        shown_names = [f["name"] for f in data["filters"]]

    if height_mm is None:
        if width_mm < 120:
            rows = int(np.ceil(n_f / min(n_f, 2)))
            height_mm = 48 + rows * (58 if n_f == 1 else 46) + 32
        else:
            height_mm = width_mm * (0.62 if n_f <= 2 else 0.78)
    with style_context(style):
        fig = new_figure(style, width_mm, height_mm)
        ax_all, zoom_axes, legend_spec = _panels(fig, n_f, width_mm)
        handles = {}
        locus_texts, box = _overview(ax_all, data, space, style, handles)
        # --- zoomed panels: every one with the same limits, so the filters compare at a glance ---------
        zpts = np.vstack([data["white"][None]] + [np.vstack([f["without"], f["with"], f["white_filtered"][None]])
                                                  for f in data["filters"]])
        zlo, zhi = zpts.min(axis=0), zpts.max(axis=0)
        limits = (zlo, zhi, 0.06 * (zhi - zlo) + 1e-4)
        per_row = min(n_f, 2) if (width_mm < 120 or n_f > 2) else n_f
        for k, (ax, f) in enumerate(zip(zoom_axes, data["filters"])):
            _zoom_panel(ax, k, f, data, mb, (mode, n_arrows), box, limits, k % per_row == 0, style, handles)
        zoom_titles = list(shown_names[:len(zoom_axes)])
        _titles(fig, ax_all, zoom_axes, zoom_titles, data, (mode, n_arrows), n_surf, width_mm, style)
        _legend(fig, legend_spec, handles, mode, data["illuminant"], data["deficiency"], width_mm, style)
        _drop_colliding(fig, locus_texts)
        if title:
            title = f"{title}: {shown_names[0] if n_f == 1 else f'{n_f} filters'} ({data['surfaces']})"
        finish(fig, style, title=title, caveat=caveat)
        zoom_rows = int(np.ceil(n_f / 2)) if (width_mm < 120 or n_f > 2) else 1
        ensure_axes_height(fig, zoom_axes, 30.0, rows=zoom_rows + (1 if width_mm < 120 else 0))

    inputs = {"filters": [f["name"] for f in data["filters"]], "illuminant": data["illuminant"],
              "observer": data["observer"], "surfaces": data["surfaces"], "adaptation": data["adaptation"],
              "space": space}
    return FigureResult("chromaticity", fig, data, style, inputs)


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
