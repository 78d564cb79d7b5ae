"""Figures for papers: one function per kind, each returning a matplotlib Figure and its data.

Kinds (:data:`KINDS`)::

    spectrum      filter transmittance over the illuminant SPD and the cone fundamentals, notches labelled
    chromaticity  MacLeod-Boynton (or CIE xy) diagram: locus, copunctal point, confusion lines,
                  each surface without -> with the filter (adapted), white points
    gains         per observer: red-green, blue-yellow and luminance gains, pairs gained and lost
    hues          chroma shift per TM-30 hue bin of the light through the filter
    swatches      the surface set as patches: normal and observer, without and with the filter
    images        the renderer's 2x2 before/after panel, labelled
    sweep         metrics against a swept filter parameter (design studies)
    tasks         a model observer's hue-circle arrangement and moment ellipse, and every task's verdict
    population    the distribution of one metric over each observer population's members, per filter,
                  with the share of members helped

Observer populations (specs with ``n=N``) are drawn by the kinds in
:data:`POPULATION_KINDS` (gains: median member and 2.5-97.5 % interval;
population; tasks: the pooled verdict with the percentages of members easier and harder); the other kinds
take single observers and refuse them.

Every figure is publishable as it is: vector PDF (TrueType fonts embedded) and
SVG (text kept as text), PNG at a chosen dpi; single (89 mm) or double (183 mm)
column width or any width in mm; byte-identical files for identical inputs;
series told apart by colour (Okabe & Ito 2008), line style and marker; axis
labels with units; a small caption-ready title; and the caveat as a footnote
on figures that carry model predictions (``caveat=False`` leaves it to the
caption).

Examples
--------
>>> import cvdfilter
>>> fig = cvdfilter.figure("spectrum", ["larkhill-notch-575"])   # doctest: +SKIP
>>> fig.save("spectrum.pdf")                                      # doctest: +SKIP

Public: :func:`figure`, :data:`KINDS`, :class:`FigureResult`, :class:`Style`,
:func:`parse_style`, :func:`width_mm`.
"""

from __future__ import annotations

import importlib

from ..errors import InputError
from .output import FORMATS, FigureResult
from .style import Style, parse_style, width_mm

__all__ = ["figure", "KINDS", "POPULATION_KINDS", "FigureResult", "Style", "parse_style", "width_mm", "FORMATS",
           "DEFAULT_TITLES"]

#: kind -> (module, function, whether the figure carries model predictions and so the caveat)
_KIND_TABLE = {
    "spectrum": ("spectrum", "spectrum_figure", False),
    "chromaticity": ("chromaticity", "chromaticity_figure", True),
    "gains": ("gains", "gains_figure", True),
    "hues": ("hues", "hues_figure", True),
    "swatches": ("swatches", "swatches_figure", True),
    "images": ("render_panels", "images_figure", True),
    "sweep": ("sweep", "sweep_figure", True),
    "tasks": ("tasks", "tasks_figure", True),
    "population": ("population", "population_figure", True),
}
#: Kinds that draw observer populations (specs with n=N).
POPULATION_KINDS = ("gains", "population", "tasks")
KINDS = tuple(_KIND_TABLE)

DEFAULT_TITLES = {
    "spectrum": "Filter transmittance, illuminant and cone fundamentals",
    "chromaticity": "Surface chromaticities without and with the filter",
    "gains": "Contrast gains and discriminable pairs per observer",
    "hues": "Chroma shift per hue bin (TM-30) through the filter",
    "swatches": "Surface colours without and with the filter",
    "images": "Scene without and with the filter",
    "sweep": "Metrics against the swept filter parameter",
    "tasks": "Model observers on colour-vision tasks",
    "population": "Spread over the members of each observer population",
}


def figure(kind: str, filters=None, *, illuminant: str = "D65", observers=None, surfaces=None,
           adaptation="full", width="single", height: float | None = None, style=None,
           title: str | None = None, caveat: bool = True, **options) -> FigureResult:
    """Make one figure.

    Parameters
    ----------
    kind : str
        One of :data:`KINDS`.
    filters
        Filter specs, paths, example names, arrays or a FilterSet (see
        :func:`cvdfilter.load_filters`).
    illuminant : str
        Illuminant spec (default CIE D65).
    observers : str or sequence of str, optional
        Observer specs; each kind has its own default.
    surfaces : str, optional
        Surface set name or file (``ces99``, ``chart24``, ``tcs14``, ``vs15``, PATH).
    adaptation : str or float
        ``full``, ``none`` or a fraction 0-1 (von Kries, to the filtered illuminant).
    width : str or float
        ``single`` (89 mm), ``double`` (183 mm) or a width in mm.
    height : float, optional
        Height in mm (default: chosen per kind for the width).
    style
        A :class:`Style`, a dict, a style file path or ``key=value`` strings (:func:`parse_style`).
    title : str, optional
        The figure title; None gives the kind's default title, ``""`` none.
    caveat : bool
        Put the caveat (:data:`cvdfilter.cautions.CAVEAT`) under figures that
        show model predictions.
    **options
        ``units`` and ``bandwidth`` of filter files (any kind); kind-specific:
        ``space`` ("mb" or "xy") for chromaticity, ``metrics``
        and ``x`` for sweep, ``image`` for images, ``chart`` ("bar" or
        "radial") for hues, ``metrics`` (one of
        :data:`cvdfilter.figures.population.POPULATION_METRICS`) for population.

    Returns
    -------
    FigureResult
        ``.figure`` (matplotlib Figure), ``.data`` (plotted numbers),
        ``.save(path, dpi=...)`` and ``.to_bytes(format)``.

    Raises
    ------
    cvdfilter.errors.InputError
        For an unknown kind or option, or bad inputs.
    """
    from ..cautions import CAVEAT

    key = str(kind).strip().lower()
    if key not in _KIND_TABLE:
        raise InputError(f"unknown figure kind '{kind}'", hint=f"use one of {', '.join(KINDS)}")
    module, function, carries_metrics = _KIND_TABLE[key]
    fn = getattr(importlib.import_module(f"{__name__}.{module}"), function)
    filters, kwargs = _options(key, filters, observers, surfaces, adaptation, height, options)
    try:
        return fn(filters, illuminant=illuminant, style=parse_style(style), width_mm=width_mm(width),
                  height_mm=None if height is None else float(height),
                  title=DEFAULT_TITLES[key] if title is None else (title or None),
                  caveat=CAVEAT if (caveat and carries_metrics) else None, **kwargs)
    except TypeError as exc:
        if "unexpected keyword argument" in str(exc):
            bad = str(exc).rsplit("'", 2)[-2] if "'" in str(exc) else str(exc)
            raise InputError(f"option '{bad}' does not apply to the {key} figure") from None
        raise


def _options(key: str, filters, observers, surfaces, adaptation, height, options: dict):
    """The filters with their file options applied, and the keyword arguments of kind ``key``'s function;
    InputError for a population given to a kind that draws single observers, or a height out of range."""
    from ..spectra.filters import with_file_options

    kwargs = dict(options)
    # units / bandwidth of filter files (the API's form of --units and --bandwidth)
    filters = with_file_options(filters, units=kwargs.pop("units", None), bandwidth=kwargs.pop("bandwidth", None)) \
        if filters is not None else None
    if observers is not None:
        kwargs["observers"] = [observers] if isinstance(observers, str) else list(observers)
        from ..observers.population import is_population_spec

        pops = [o for o in kwargs["observers"] if is_population_spec(o)]
        if pops and key not in POPULATION_KINDS:
            raise InputError(f"the {key} figure takes single observers, and {pops[0]} is a population (n=)",
                             hint=f"populations are drawn by the {', '.join(POPULATION_KINDS)} figures; "
                                  "drop n= for one observer")
    if surfaces is not None:
        kwargs["surfaces"] = surfaces
    if key not in ("spectrum",):
        kwargs["adaptation"] = adaptation
    if height is not None and not 20.0 <= float(height) <= 500.0:
        raise InputError(f"--height {float(height):g} mm is outside 20-500 mm")
    return filters, kwargs
