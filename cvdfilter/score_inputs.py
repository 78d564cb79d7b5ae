"""Step 1 of scoring: every input of :func:`cvdfilter.score` checked and loaded before any heavy work.

:class:`ScoreInputs` (:meth:`ScoreInputs.validate`) turns the arguments into objects (filters, light,
surfaces, observers, thresholds, signal lights); :func:`parse_metrics` reads the metric groups. The steps
that follow are in :mod:`cvdfilter.score_plan`, which re-exports these names.

Public: :class:`ScoreInputs`, :func:`parse_metrics`, :func:`signal_lights`, :data:`METRIC_GROUPS`,
:data:`CORE_METRICS`, :data:`OPTIONAL_GROUPS`, :data:`DEFAULT_OBSERVERS`, :data:`PAIR_KEYS`,
:data:`CONFUSION_KEYS`.
"""

from __future__ import annotations

import math
import pathlib
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from .errors import InputError
from .metrics.confusion import DEFICIENT_THRESHOLD, NORMAL_THRESHOLD
from .metrics.discrimination import CONE_RATIOS, DISCRIMINATION_THRESHOLD, DISTRIBUTION_THRESHOLDS, WEBER_FRACTION

__all__ = ["ScoreInputs", "parse_metrics", "signal_lights", "METRIC_GROUPS", "CORE_METRICS", "OPTIONAL_GROUPS",
           "DEFAULT_OBSERVERS", "PAIR_KEYS", "CONFUSION_KEYS"]

#: Observers scored when none are given.
DEFAULT_OBSERVERS = ("normal", "protanomalous", "deuteranomalous", "protanope", "deuteranope")
#: Metric groups, in output order.
METRIC_GROUPS = ("photometry", "road_use", "rendition", "contrast", "discrimination", "confusion")
#: Groups computed only when named (not in ``all``): ``discernible`` needs a large stimulus (a scene or a
#: surface set such as ``munsell``) and counts colours in unit cubes (cvdfilter/score_discernible.py).
OPTIONAL_GROUPS = ("discernible",)
#: ``metrics="core"``: everything but the (slow) rendition block.
CORE_METRICS = ("photometry", "road_use", "contrast", "discrimination", "confusion")
#: Counts of the discriminable-pair blocks.
PAIR_KEYS = ("without", "with", "gained", "lost")
#: Counts of the confused-pair block.
CONFUSION_KEYS = ("without", "with", "resolved", "created")


def parse_metrics(metrics) -> tuple:
    """``"all"``, ``"core"``, a comma-separated list or a sequence of group names -> groups in order.

    >>> parse_metrics("core")
    ('photometry', 'road_use', 'contrast', 'discrimination', 'confusion')
    >>> parse_metrics("contrast,photometry")
    ('photometry', 'contrast')
    >>> parse_metrics("core,discernible")[-1]
    'discernible'
    """
    if isinstance(metrics, str):
        text = metrics.strip().lower()
        if text == "all":
            return METRIC_GROUPS
        if text == "core":
            return CORE_METRICS
        items = [m.strip().replace("-", "_") for m in text.split(",") if m.strip()]
    else:
        items = [str(m).strip().lower().replace("-", "_") for m in metrics]
    items = [g for m in items for g in ({"all": METRIC_GROUPS, "core": CORE_METRICS}.get(m) or (m,))]
    unknown = [m for m in items if m not in METRIC_GROUPS + OPTIONAL_GROUPS]
    if unknown or not items:
        raise InputError(f"unknown metrics '{', '.join(unknown) or metrics}'",
                         hint="use all, core or a comma-separated list of "
                              f"{', '.join(METRIC_GROUPS + OPTIONAL_GROUPS)}")
    return tuple(m for m in METRIC_GROUPS + OPTIONAL_GROUPS if m in items)



def _check_thresholds(discrimination: float, normal: float, deficient: float, distribution) -> tuple:
    """The distribution thresholds as floats; InputError unless every threshold is a positive number."""
    thresholds = {"discrimination threshold": discrimination, "normal threshold": normal,
                  "deficient threshold": deficient}
    try:
        dist = tuple(float(t) for t in distribution)
    except (TypeError, ValueError):
        raise InputError(f"distribution thresholds must be numbers, got {distribution!r}") from None
    for name, t in [*thresholds.items(), *(("distribution threshold", t) for t in dist)]:
        try:
            ok = math.isfinite(float(t)) and float(t) > 0
        except (TypeError, ValueError):
            ok = False
        if not ok:
            raise InputError(f"{name} must be a positive number of JND, got {t!r}")
    return dist


@dataclass(frozen=True, eq=False)
class ScoreInputs:
    """Every input of a scoring run, validated (see :func:`cvdfilter.score` for the meaning of each)."""

    filters: Any  # FilterSet
    illuminant: Any  # Illuminant
    surfaces: Any  # SurfaceSet
    observers: list
    adaptation: float
    groups: tuple
    grid: Any  # Grid
    signal_lights: list
    signal_spectra: Any
    weber_fraction: float
    cone_ratios: Any
    discrimination_threshold: float
    distribution_thresholds: tuple
    normal_threshold: float
    deficient_threshold: float
    signal_limits: dict
    signal_limits_reading: Any
    cmfs: np.ndarray = field(repr=False, default_factory=lambda: np.zeros((0, 3)))
    d65: np.ndarray = field(repr=False, default_factory=lambda: np.zeros(0))

    @classmethod
    def validate(cls, filters, *, illuminant="D65", observers=DEFAULT_OBSERVERS, surfaces="ces99",
                 adaptation="full", metrics="all", signal_spectra=None, grid=None,
                 weber_fraction: float = WEBER_FRACTION, cone_ratios=CONE_RATIOS,
                 discrimination_threshold: float = DISCRIMINATION_THRESHOLD,
                 distribution_thresholds=DISTRIBUTION_THRESHOLDS, normal_threshold: float = NORMAL_THRESHOLD,
                 deficient_threshold: float = DEFICIENT_THRESHOLD, signal_limits=None, units: str | None = None,
                 bandwidth: float | None = None, sensitivity: bool = False) -> ScoreInputs:
        """Check and load every input; raises InputError before any heavy work.

        An observer spec with ``n=N`` becomes a :class:`~cvdfilter.observers.population.Population`. The
        other arguments are :func:`cvdfilter.score`'s; the model constants and file settings:

        Parameters
        ----------
        weber_fraction, cone_ratios : float, sequence of 3 floats
            L-cone Weber fraction and L:M:S cone numbers of the receptor-noise model.
        discrimination_threshold, distribution_thresholds : float, sequence of float
            Delta S (JND) at or above which a pair is discriminable (headline counts); the thresholds of the
            reported distribution (default 1, 2, 4).
        normal_threshold, deficient_threshold : float
            Delta S (JND) of the confused-pair definition (:mod:`cvdfilter.metrics.confusion`).
        signal_limits : None, str or dict
            Signal-quotient limits: a reading name, ``red=0.8,...`` or a dict
            (:func:`cvdfilter.metrics.road_use.parse_signal_limits`); default the ``guidance`` reading.
        units, bandwidth : optional
            Units (``fraction``, ``percent``, ``od``) and instrument bandwidth (nm) of filter files that do not
            set their own (``FILE@units=od``); see :func:`cvdfilter.load_filters`.
        """
        from .metrics.discrimination import receptor_noise
        from .metrics.road_use import parse_signal_limits
        from .observers.fundamentals import cie1931_cmfs
        from .observers.observer import observer as make_observer
        from .observers.spaces import parse_adaptation
        from .spectra.filters import FilterSet, load_filters
        from .spectra.grid import DEFAULT_GRID
        from .spectra.illuminants import illuminant as make_illuminant
        from .spectra.surfaces import surface_set

        groups = parse_metrics(metrics)
        a = parse_adaptation(adaptation)
        if grid is None:
            grid = filters.grid if isinstance(filters, FilterSet) else DEFAULT_GRID
        if isinstance(observers, str) or not hasattr(observers, "__iter__"):
            observers = [observers]
        observers = list(observers)
        if not observers:
            raise InputError("no observers given", hint=f"e.g. {', '.join(DEFAULT_OBSERVERS)}")
        dist = _check_thresholds(discrimination_threshold, normal_threshold, deficient_threshold,
                                 distribution_thresholds)
        try:
            receptor_noise(None, weber=weber_fraction, cone_ratios=cone_ratios)
            limits, reading = parse_signal_limits(signal_limits)
        except (ValueError, TypeError) as exc:
            raise InputError(str(exc)) from None
        fs = load_filters(filters, grid=grid, units=units, bandwidth=bandwidth)
        ill = make_illuminant(illuminant, grid)
        surf = surface_set(surfaces, grid)
        from .observers.population import Population, is_population_spec
        from .observers.population import population as make_population

        obs = [o if isinstance(o, Population) else make_population(o, grid) if is_population_spec(o)
               else make_observer(o, grid) for o in observers]
        cmfs = cie1931_cmfs(grid)
        d65 = make_illuminant("D65", grid).spd
        lights = signal_lights(signal_spectra, grid, cmfs[:, 1]) if "road_use" in groups else []
        return cls(fs, ill, surf, obs, a, groups, grid, lights, signal_spectra, weber_fraction, cone_ratios,
                   discrimination_threshold, dist, normal_threshold, deficient_threshold, limits, reading,
                   cmfs, d65)

    def settings(self) -> dict:
        """The model constants and thresholds (``Scorecard.settings``)."""
        return {"weber_fraction": float(self.weber_fraction), "cone_ratios": [float(x) for x in self.cone_ratios],
                "discrimination_threshold": float(self.discrimination_threshold),
                "distribution_thresholds": [float(t) for t in self.distribution_thresholds],
                "normal_threshold": float(self.normal_threshold),
                "deficient_threshold": float(self.deficient_threshold),
                "signal_limits": self.signal_limits, "signal_limits_reading": self.signal_limits_reading}


def _measured_items(signal_spectra, grid) -> tuple[list, str]:
    """(name, spectrum on the grid, source) of measured signal lights, and where they came from."""
    from .spectra.grid import resample

    if isinstance(signal_spectra, (str, pathlib.Path)):
        from .io.spectra_files import read_spectra

        path = str(signal_spectra)
        table = read_spectra(path, kind="spd")
        return [(n, resample(table.wavelengths, v, grid, method="linear", outside="zero"), f"file {path}")
                for n, v in zip(table.names, table.values)], path
    if isinstance(signal_spectra, dict):
        items = []
        for n, v in signal_spectra.items():
            if isinstance(v, tuple) and len(v) == 2:
                v = resample(np.asarray(v[0], float), np.asarray(v[1], float), grid, method="linear",
                             outside="zero")
            items.append((str(n), np.asarray(v, dtype=float), "given as an array"))
        return items, "signal_spectra"
    raise InputError("signal spectra must be a file path or a dict of name -> spectrum")


def signal_lights(signal_spectra, grid, ybar) -> list:
    """Measured lights (from a file or a dict) plus modelled lights for the colours they leave out."""
    from .metrics.road_use import SignalLight, modelled_signal_lights, signal_colour
    from .spectra.illuminants import illuminant as make_illuminant

    measured = []
    if signal_spectra is not None:
        items, path = _measured_items(signal_spectra, grid)
        for name, spd, src in items:
            try:
                colour = signal_colour(name)
            except ValueError as exc:
                raise InputError(str(exc), source=path,
                                 hint="name each column red, yellow, amber, green or blue (e.g. 'red LED')") from None
            if spd.shape != (grid.size,):
                raise InputError(f"signal spectrum '{name}' is not on the grid ({grid.size} values)", source=path)
            if not float(np.sum(np.clip(spd, 0, None) * ybar)) > 0:
                raise InputError(f"signal spectrum '{name}' has no luminous power in {grid.start:g}-{grid.end:g} nm",
                                 source=path)
            measured.append(SignalLight(name, colour, np.clip(spd, 0, None), "measured", src))
    covered = {light.colour for light in measured}
    a = make_illuminant("A", grid).spd
    modelled = [light for light in modelled_signal_lights(grid.wavelengths, a) if light.colour not in covered]
    return measured + modelled
