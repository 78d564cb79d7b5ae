"""Reports: every number of a scorecard, its figures, its models and everything needed to reproduce it.

:func:`report` scores the filters (:func:`cvdfilter.scorecard.score`), draws
the spectrum, chromaticity, gains, swatches and hues figures
(:mod:`cvdfilter.figures`) and assembles a :class:`Report` that writes

* a self-contained HTML file: figures embedded as inline SVG, styles inline, no
  scripts and no external requests (a Content-Security-Policy forbids any);
* or a Markdown file with the figures as SVG files beside it (in
  ``<name>_figures/``, with the full scorecard JSON).

Sections: the caveat; inputs and reproduction (filters with SHA-256
checksums, illuminant, observers, surface set, adaptation, grid, model
settings, the command line, tool and library versions); the scorecard
tables; the figures; the models and their references; the cautions.

A file filter's checksum is the SHA-256 of the file's bytes; a spec, an
example resampled from a file or an array filter also gets the SHA-256 of
its transmittance on the grid (little-endian float64), so any filter can be
checked against the report.

The tables live in :mod:`cvdfilter.report_tables`, the HTML and Markdown writers in
:mod:`cvdfilter.report_formats` (mixins of :class:`Report`).

Public: :func:`report`, :class:`Report`, :class:`ReportFigure`, :data:`REFERENCES`,
:data:`SECTIONS`, :func:`environment`, :func:`transmittance_sha256`.
"""

from __future__ import annotations

import hashlib
import os
import pathlib
import shlex
from dataclasses import dataclass, field

import numpy as np

from ._version import __version__
from .errors import InputError
from .report_formats import REFERENCES, REPORT_FIGURES, SECTIONS, ReportFormats
from .report_tables import ReportTables

__all__ = ["report", "Report", "ReportFigure", "REFERENCES", "SECTIONS", "environment", "transmittance_sha256",
           "REPORT_FIGURES"]

_LIBRARIES = ("numpy", "scipy", "colour-science", "matplotlib", "scikit-image", "typer")


def environment() -> dict:
    """Tool, Python, library and platform versions."""
    import platform
    import sys
    from importlib.metadata import PackageNotFoundError, version

    libs = {}
    for name in _LIBRARIES:
        try:
            libs[name] = version(name)
        except PackageNotFoundError:  # pragma: no cover - all are dependencies
            libs[name] = "not installed"
    return {"tool": "cvdfilter", "version": __version__, "python": sys.version.split()[0],
            "libraries": libs, "platform": platform.platform()}


def transmittance_sha256(transmittance) -> str:
    """SHA-256 of a transmittance curve on the grid, as little-endian float64 bytes.

    Examples
    --------
    >>> len(transmittance_sha256(np.ones(401)))
    64
    """
    return hashlib.sha256(np.ascontiguousarray(transmittance, dtype="<f8").tobytes()).hexdigest()


@dataclass
class ReportFigure:
    """One figure of a report: ``kind``, ``caption``, ``svg`` (bytes), ``note`` (why it is missing, if it is)."""

    kind: str
    caption: str
    svg: bytes = b""
    note: str = ""


@dataclass
class Report(ReportTables, ReportFormats):
    """A scorecard with its figures, models, cautions and reproduction record.

    Attributes
    ----------
    card : dict
        The scorecard (``Scorecard.to_dict()``).
    filters : list of dict
        Per filter: ``name``, ``source``, ``input``, ``sha256_file`` (or None),
        ``sha256_transmittance``.
    figures : list of ReportFigure
    command : str
        A command line that makes the same report.
    environment : dict
        Tool, Python, library and platform versions (:func:`environment`).
    written : list of pathlib.Path
        Files written by :func:`report` when it was given ``output``.
    scorecard : Scorecard or None
        The typed scorecard the figures were drawn from (``card`` is its JSON document).
    """

    card: dict
    filters: list
    figures: list = field(default_factory=list)
    command: str = ""
    environment: dict = field(default_factory=environment)
    written: list = field(default_factory=list)
    scorecard: object = None

def _describe_filters(fs) -> list[dict]:
    out = []
    for i, name in enumerate(fs.names):
        info = fs.info[i] if i < len(fs.info) else {}
        sha_file = info.get("sha256")
        if sha_file is None and info.get("parts"):
            parts = [p.get("sha256") for p in info["parts"] if p.get("sha256")]
            sha_file = " * ".join(parts) if parts else None
        out.append({"name": name, "source": fs.sources[i] if i < len(fs.sources) else "array",
                    "input": info.get("path") or info.get("spec"), "sha256_file": sha_file,
                    "sha256_transmittance": transmittance_sha256(fs.transmittance[i])})
    return out


def _command(filters, illuminant, observers, surfaces, adaptation, metrics, style, output) -> str:
    args = ["cvdfilter", "report", *[str(f) for f in filters]]
    args += ["--illuminant", str(illuminant)]
    for o in observers:
        args += ["--observer", str(o)]
    args += ["--surfaces", str(surfaces), "--adaptation", str(adaptation), "--metrics", str(metrics)]
    for s in style or ():
        args += ["--style", str(s)]
    args += ["-o", str(output or "report.html")]
    return " ".join(shlex.quote(a) for a in args)


def _first_deficient(observers) -> str | None:
    """The spec of the first dichromat, else of the first anomalous trichromat (protan, deutan or tritan),
    among the scorecard's fixed observers (Observer objects)."""
    from .score_population import is_population

    objs = [o for o in observers if not is_population(o)]
    for kind in ("dichromat", "anomalous"):
        for o in objs:
            if o.kind == kind and o.deficiency in ("protan", "deutan", "tritan"):
                return o.spec
    return None


class _FigureList(list):
    """The report's figures in order; :meth:`add` draws one, or notes why it is left out."""

    def __init__(self, n_filters: int):
        super().__init__()
        self.n = n_filters

    def add(self, kind: str, caption: str, make, limit: int | None = None) -> None:
        if limit is not None and self.n > limit:
            self.append(ReportFigure(kind, caption, note=f"Not drawn: the {kind} figure compares at most {limit} "
                                                         f"filters and this report has {self.n}; draw it for fewer "
                                                         f"filters with 'cvdfilter figure {kind} FILTER ...'."))
            return
        result = make()
        self.append(ReportFigure(kind, caption, result.to_bytes("svg", salt=f"cvdfilter-report-{kind}")))
        result.close()

    def leave_out(self, kind: str, caption: str, note: str) -> None:
        self.append(ReportFigure(kind, caption, note=note))


def _figures(fs, card, *, illuminant, surfaces, adaptation, style) -> list[ReportFigure]:
    """The report's figures, drawn from the typed scorecard ``card`` (a :class:`~cvdfilter.scorecard.Scorecard`)."""
    from .figures import figure
    from .figures.hues import hues_card
    from .score_population import is_population

    figs = _FigureList(len(fs))
    common = {"illuminant": illuminant, "adaptation": adaptation, "width": "double", "style": style}
    specs = [o.spec for o in card.observers]
    deficient = _first_deficient(card.observers)
    _spectrum_figure(figs, fs, card, illuminant, common)
    lit = _deficient_figures(figs, fs, deficient, illuminant, surfaces, adaptation, common) if deficient else None
    figs.add("gains", "Red-green, blue-yellow and luminance contrast gains (with / without the filter, log scale) "
                      "and discriminable surface pairs gained and lost, per observer.",
             lambda: figure("gains", fs, observers=specs, surfaces=surfaces, card=card, **common), limit=8)
    populations = [o.spec for o in card.observers if is_population(o)]
    if populations:
        figs.add("population", "Red-green gain (with / without the filter, log scale) of every member of each "
                               "observer population: the distribution of the members, the median member and the "
                               "range holding 95 % of them; on the right the share of members helped (gain above "
                               "1) with its Wilson 95 % interval.",
                 lambda: figure("population", fs, observers=populations, surfaces=surfaces, card=card,
                                **common), limit=4)
    if deficient:
        _swatches_figure(figs, fs, deficient, lit, illuminant, surfaces, common)
    _sweep_figure(figs, fs, card, common)
    if "rendition" in card.metrics:
        figs.add("hues", f"TM-30 local chroma shift per hue bin of {illuminant} through each filter and alone.",
                 lambda: figure("hues", fs, card=hues_card(card, fs.grid, illuminant), **common), limit=7)
    return list(figs)


def _spectrum_figure(figs, fs, card, illuminant, common) -> None:
    from .figures import figure
    from .score_population import is_population

    n = len(fs)
    names = ", ".join(fs.names[:4]) + (" ..." if n > 4 else "")
    anomalous = [o.spec for o in card.observers if o.kind == "anomalous" and not is_population(o)]
    figs.add("spectrum", f"Spectral transmittance of {names} with notches marked (centre and FWHM), the relative "
                         f"spectral power of {illuminant} and the cone fundamentals (CIE 170-1) of the normal "
                         "observer" + (" and of " + ", ".join(anomalous) if anomalous else "") + ".",
             lambda: figure("spectrum", fs, observers=["normal", *anomalous],
                            **{k: v for k, v in common.items() if k != "adaptation"}), limit=16)


def _deficient_figures(figs, fs, deficient, illuminant, surfaces, adaptation, common) -> dict:
    """The chromaticity figure for the first deficient observer; returns the filters that light every cone
    (``keep``) and the text naming those left out (``left_out``), which the swatches figure uses too."""
    from .figures import figure
    from .figures.chromaticity import unlit_cones

    # A filter that passes no light to a cone has no chromaticity: it is left out of this figure, and
    # said so in the caption (or in a note when no filter is left).
    unlit = unlit_cones(fs, illuminant=illuminant, observer=deficient)
    keep = [i for i, name in enumerate(fs.names) if name not in unlit]
    left_out = "; ".join(f"{name} (no light for the {', '.join(cones)} cone{'s' if len(cones) > 1 else ''})"
                         for name, cones in unlit.items())
    caption = (f"MacLeod-Boynton chromaticities of the {surfaces} surfaces under {illuminant} without and "
               f"with each filter (adaptation {adaptation}), with the {deficient} observer's copunctal point "
               "and confusion lines; above 24 surfaces, arrows are drawn for 24 spread over the diagram and the "
               "others are dots." + (f" Left out, having no chromaticity: {left_out}." if unlit else ""))
    if keep:
        figs.add("chromaticity", caption, lambda: figure("chromaticity", _subset(fs, keep), observers=deficient,
                                                         surfaces=surfaces, **common), limit=4)
    else:
        figs.leave_out("chromaticity", caption, f"The chromaticity figure is left out: no filter has a "
                                                f"chromaticity ({left_out}).")
    from .observers.spaces import parse_adaptation

    # the filters that let every cone see some light (adapting to a black filter is undefined)
    return {"lit": keep if parse_adaptation(adaptation) > 0 else list(range(len(fs))), "left_out": left_out}


def _swatches_figure(figs, fs, deficient, lit, illuminant, surfaces, common) -> None:
    from .figures import figure

    first_lit = lit["lit"]
    if not first_lit:
        figs.leave_out("swatches", "Surface colours without and with the filter.",
                       f"The swatches figure is left out: no filter passes light to every cone "
                       f"({lit['left_out']}), so there is nothing to adapt to.")
        return
    i = first_lit[0]
    figs.add("swatches", f"The {surfaces} surfaces under {illuminant} for the normal observer and the "
                         f"{deficient} observer (simulated for a normal viewer), without and with {fs.names[i]}"
                         + (" (the first filter)" if len(fs) > 1 and i == 0 else "")
                         + (" (the first filter with light for every cone)" if i > 0 else "") + ".",
             lambda: figure("swatches", _one(fs, i), observers=deficient, surfaces=surfaces, **common))


def _sweep_figure(figs, fs, card, common) -> None:
    """The sweep figure when three or more filters differ in one or two spec parameters (their records)."""
    from .figures import figure
    from .figures.sweep import filter_parameters

    varying, _ = filter_parameters(fs) if len(fs) >= 3 else ([], {})
    if len(varying) == 2:
        figs.add("sweep", f"Red-green gain per observer and luminous transmittance over the two swept parameters "
                          f"({varying[0]} across, {varying[1]} up), as heat maps on the cividis colour scale (one "
                          "colour bar per metric).",
                 lambda: figure("sweep", fs, card=card, **common))
    elif varying:
        figs.add("sweep", f"Red-green gain per observer and luminous transmittance against the swept parameter "
                          f"({varying[0]}).",
                 lambda: figure("sweep", fs, card=card, **common))


def _one(fs, i):
    return _subset(fs, [i])


def _subset(fs, keep):
    from .spectra.filters import FilterSet

    return FilterSet(tuple(fs.names[i] for i in keep), fs.transmittance[keep], fs.grid,
                     tuple(fs.sources[i] for i in keep) if fs.sources else (),
                     tuple(fs.info[i] for i in keep) if fs.info else ())


def report(filters, *, illuminant: str = "D65", observers=None, surfaces: str = "ces99", adaptation="full",
           metrics: str = "all", style=None, output: str | os.PathLike | None = None,
           units: str | None = None, bandwidth: float | None = None) -> Report:
    """Score filters and build a report with tables, figures, models, cautions and a reproduction record.

    Parameters
    ----------
    filters
        Filter specs, paths, example names or a FilterSet (as for :func:`cvdfilter.score`).
    illuminant, observers, surfaces, adaptation, metrics
        As for :func:`cvdfilter.score` (observers default to its defaults). A population observer
        (a spec with ``n=N``) adds the observer-populations table (median member, 95 % range of the
        members, share helped) and the population figure.
    style
        Figure style (:func:`cvdfilter.figures.parse_style`).
    output : path, optional
        Also write the report there (``.html`` or ``.md``).

    Returns
    -------
    Report
        ``.to_html()``, ``.to_markdown()``, ``.save(path)``.

    Raises
    ------
    cvdfilter.errors.InputError
        For bad input, before anything is written.
    """
    from .figures.inputs import load_filters_checked
    from .figures.style import Style, parse_style
    from .scorecard import DEFAULT_OBSERVERS, score

    observers = list(DEFAULT_OBSERVERS if observers is None else
                     ([observers] if isinstance(observers, str) else observers))
    if output is not None and pathlib.Path(output).suffix.lower() not in (".html", ".htm", ".md"):
        raise InputError(f"cannot tell the report format from '{pathlib.Path(output).name}'", source=str(output),
                         hint="end the file name in .html or .md")
    if style is None or isinstance(style, (dict, Style)):
        style_items, parsed_style = [], parse_style(style)
    else:
        style_items = [style] if isinstance(style, (str, os.PathLike)) else list(style)
        parsed_style = parse_style([str(x) for x in style_items])
    from .spectra.filters import spec_paths, with_file_options

    filters = with_file_options(filters, units=units, bandwidth=bandwidth)  # units/bandwidth of filter files
    fs = load_filters_checked(filters)
    # the figures read the typed scorecard; the report's tables and its JSON are the scorecard's document
    scorecard = score(fs, illuminant=illuminant, observers=observers, surfaces=surfaces, adaptation=adaptation,
                      metrics=metrics)
    card = scorecard.to_dict()
    observer_specs = [o.spec for o in scorecard.observers]
    figs = _figures(fs, scorecard, illuminant=illuminant, surfaces=surfaces, adaptation=adaptation,
                    style=parsed_style)
    raw_filters = [filters] if isinstance(filters, (str, os.PathLike)) else list(filters) \
        if isinstance(filters, (list, tuple)) else list(fs.names)
    command = _command(raw_filters, illuminant, observer_specs, surfaces, adaptation, metrics,
                       style_items if all(isinstance(s, str) for s in style_items) else (), output)
    result = Report(card=card, filters=_describe_filters(fs), figures=figs, command=command, scorecard=scorecard)
    if output is not None:
        inputs = [p for f in raw_filters for p in spec_paths(f)]  # files inside specs (FILE:COL@units=...)
        inputs += [s for s in style_items if isinstance(s, str) and pathlib.Path(s).exists()]
        result.written = result.save(output, inputs=inputs)
    return result
