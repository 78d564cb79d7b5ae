"""cvdfilter: evaluate spectral filters for observers with normal and deficient colour vision.

The public API. Names are imported lazily (on first use) so that the command
line starts fast; ``from cvdfilter import score`` works as usual.

Spectra
    Grid, DEFAULT_GRID, FilterSet, load_filters, parse_filter_spec, find_notches,
    illuminant, Illuminant, surface_set, SurfaceSet, read_spectra, inspect_filters, catalog,
    synthetic_scene (seeded synthetic reflectance cubes: natural-scene stand-ins)
Observers
    observer, Observer, cone_fundamentals (CIE 2006 by age and field), simulate, simulation,
    population, Population (individual observers, Asano et al. 2016: any observer spec plus n=N)
Main jobs
    score, Scorecard (issue-defined JSON via .to_dict()), MetricArray (Scorecard.metric(name): one metric
    over named axes with its unit and definition), render, render_views, figure, report,
    tasks, TaskResult (colour-vision tasks of our own design for model observers),
    discernible_colours, DiscernibleColours (number of discernible colours, Linhares et al. 2008),
    design, DesignResult (the best filters of a family under requirements)

Every number is a model prediction from published cone fundamentals and
simulation models, not clinical evidence (see ``cvdfilter.cautions.CAVEAT``).
"""

from __future__ import annotations

import importlib

from ._version import __version__

_LAZY = {
    "Grid": "cvdfilter.spectra.grid",
    "DEFAULT_GRID": "cvdfilter.spectra.grid",
    "FilterSet": "cvdfilter.spectra.filters",
    "load_filters": "cvdfilter.spectra.filters",
    "parse_filter_spec": "cvdfilter.spectra.filters",
    "find_notches": "cvdfilter.spectra.filters",
    "gaussian_notch": "cvdfilter.spectra.filters",
    "flat_notch": "cvdfilter.spectra.filters",
    "longpass": "cvdfilter.spectra.filters",
    "shortpass": "cvdfilter.spectra.filters",
    "neutral_density": "cvdfilter.spectra.filters",
    "illuminant": "cvdfilter.spectra.illuminants",
    "Illuminant": "cvdfilter.spectra.illuminants",
    "surface_set": "cvdfilter.spectra.surfaces",
    "SurfaceSet": "cvdfilter.spectra.surfaces",
    "synthetic_scene": "cvdfilter.spectra.scenes",
    "discernible_colours": "cvdfilter.discernibility",
    "DiscernibleColours": "cvdfilter.discernibility",
    "read_spectra": "cvdfilter.io.spectra_files",
    "inspect_filters": "cvdfilter.inspection",
    "catalog": "cvdfilter.inspection",
    "observer": "cvdfilter.observers.observer",
    "Observer": "cvdfilter.observers.observer",
    "cone_fundamentals": "cvdfilter.observers.cie2006",
    "population": "cvdfilter.observers.population",
    "Population": "cvdfilter.observers.population",
    "simulate": "cvdfilter.observers.simulate",
    "simulation": "cvdfilter.observers.simulate",
    "score": "cvdfilter.scorecard",
    "Scorecard": "cvdfilter.scorecard",
    "MetricArray": "cvdfilter.metric_registry",
    "score_to_file": "cvdfilter.score_stream",
    "render": "cvdfilter.rendering",
    "render_views": "cvdfilter.rendering",
    "render_spectra": "cvdfilter.rendering",
    "Renderer": "cvdfilter.rendering",
    "figure": "cvdfilter.figures",
    "report": "cvdfilter.reporting",
    "tasks": "cvdfilter.vision_tasks",
    "TaskResult": "cvdfilter.vision_tasks",
    "InputError": "cvdfilter.errors",
    "CAVEAT": "cvdfilter.cautions",
    "design": "cvdfilter.designing",
    "DesignResult": "cvdfilter.designing",
}

__all__ = ["__version__", *_LAZY]


def __getattr__(name: str):
    module = _LAZY.get(name)
    if module is None:
        raise AttributeError(f"module 'cvdfilter' has no attribute {name!r}")
    value = getattr(importlib.import_module(module), name)
    globals()[name] = value
    return value


def __dir__():
    return sorted(__all__)
