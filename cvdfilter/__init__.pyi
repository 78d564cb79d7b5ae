"""Type stub for the lazily imported public API of cvdfilter (see cvdfilter/__init__.py).

Editors and type checkers read this file; it must list exactly the names of ``_LAZY``
(tests/test_api.py checks it).
"""

from ._version import __version__ as __version__
from .spectra.grid import Grid as Grid, DEFAULT_GRID as DEFAULT_GRID
from .spectra.filters import (
    FilterSet as FilterSet,
    load_filters as load_filters,
    parse_filter_spec as parse_filter_spec,
    find_notches as find_notches,
    gaussian_notch as gaussian_notch,
    flat_notch as flat_notch,
    longpass as longpass,
    shortpass as shortpass,
    neutral_density as neutral_density,
)
from .spectra.illuminants import illuminant as illuminant, Illuminant as Illuminant
from .spectra.surfaces import surface_set as surface_set, SurfaceSet as SurfaceSet
from .spectra.scenes import synthetic_scene as synthetic_scene
from .discernibility import discernible_colours as discernible_colours, DiscernibleColours as DiscernibleColours
from .io.spectra_files import read_spectra as read_spectra
from .inspection import inspect_filters as inspect_filters, catalog as catalog
from .observers.observer import observer as observer, Observer as Observer
from .observers.cie2006 import cone_fundamentals as cone_fundamentals
from .observers.simulate import simulate as simulate, simulation as simulation
from .observers.population import population as population, Population as Population
from .scorecard import score as score, Scorecard as Scorecard
from .metric_registry import MetricArray as MetricArray
from .score_stream import score_to_file as score_to_file
from .rendering import (
    render as render,
    render_views as render_views,
    render_spectra as render_spectra,
    Renderer as Renderer,
)
from .figures import figure as figure
from .reporting import report as report
from .vision_tasks import tasks as tasks, TaskResult as TaskResult
from .designing import design as design, DesignResult as DesignResult
from .errors import InputError as InputError
from .cautions import CAVEAT as CAVEAT

__all__ = [
    "__version__", "Grid", "DEFAULT_GRID", "FilterSet", "load_filters", "parse_filter_spec", "find_notches",
    "gaussian_notch", "flat_notch", "longpass", "shortpass", "neutral_density", "illuminant", "Illuminant",
    "surface_set", "SurfaceSet", "synthetic_scene", "discernible_colours", "DiscernibleColours", "read_spectra",
    "inspect_filters", "catalog", "observer", "Observer",
    "cone_fundamentals", "population", "Population", "simulate", "simulation", "score", "Scorecard",
    "MetricArray", "score_to_file", "render", "render_views", "render_spectra", "Renderer", "figure", "report",
    "tasks", "TaskResult", "InputError", "CAVEAT", "design", "DesignResult"
]
