"""Observers: cone fundamentals, the CIE 2006 model, anomalous and dichromatic observers, populations,
simulation and spaces.

Public names are exported here lazily (imported on first use, so ``cvdfilter --help`` stays fast); each
lives in the submodule :data:`_LAZY` names.
The functions ``observer`` and ``population`` share their modules' names, so they are not exported here
(a submodule import would replace them): use ``cvdfilter.observer`` and ``cvdfilter.population``.
"""

from __future__ import annotations

from .._lazy import lazy_exports

_LAZY = {
    "Observer": ".observer",
    "ObserverKind": ".specs",
    "OBSERVER_KINDS": ".specs",
    "observer_forms": ".specs",
    "is_population_spec": ".specs",
    "normal_separation": ".anomalous",
    "pigment_shift": ".anomalous",
    "anomalous_absorbance": ".anomalous",
    "SHIFT_MEASURE": ".anomalous",
    "Population": ".population",
    "individual_fundamentals": ".population",
    "cone_fundamentals": ".cie2006",
    "Simulation": ".simulate",
    "simulation": ".simulate",
    "simulate": ".simulate",
    "METHODS": ".simulate",
    "PiecewiseLinear": ".operator",
    "cone_excitations": ".spaces",
    "von_kries_gains": ".spaces",
    "cone_contrast": ".spaces",
    "macleod_boynton": ".spaces",
    "dkl": ".spaces",
    "copunctal_point": ".copunctal",
    "confusion_line": ".copunctal",
    "neutral_points": ".copunctal",
    "describe_observer": ".describe",
    "describe_observers": ".describe",
    "describe_population": ".describe",
    "observer_label": ".labels",
}

__all__ = list(_LAZY)

__getattr__, __dir__ = lazy_exports(__name__, _LAZY)
