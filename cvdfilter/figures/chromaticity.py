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
    LMS-to-XYZ matrix (:func:`cvdfilter.observers.copunctal.lms_to_xyz_matrix`),
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
from .chromaticity_panels import _drop_colliding, _legend, _overview, _panels, _titles, _zoom_panel, arrow_subset
from .labelling import display_names, ensure_axes_height, observer_label
from .output import FigureResult, finish, new_figure, style_context
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
    from ..observers import copunctal as confusion
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
    shown_names = _shown_names(filters, data)

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


def _shown_names(filters, data) -> list[str]:
    """The filters' display names (a file's stem), else their names in the data."""
    from ..spectra.filters import load_filters

    try:
        shown_names = display_names(load_filters(filters)) if not isinstance(filters, np.ndarray) else None
    except Exception:   # the names are cosmetic; the data above already validated the filters
        shown_names = None
    if not shown_names or len(shown_names) != len(data["filters"]):
        shown_names = [f["name"] for f in data["filters"]]
    return shown_names
