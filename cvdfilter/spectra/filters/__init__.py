"""Filters: parametric transmittance curves, spec strings and loading.

A filter is a spectral transmittance T(lambda), a fraction 0-1 on the grid.
A :class:`FilterSet` holds many of them as one (n_filters, n_wl) array so that
every later computation is one matrix product.

Spec strings (shared/CONVENTIONS.md, section 4)::

    notch:center=575,fwhm=35,depth=0.8          Gaussian notch in transmittance (centre= also accepted)
    notch:center=575,fwhm=35,od=2               Gaussian notch in optical density
    notch:center=575,fwhm=35,depth=0.9,shape=flat[,order=4]   flat-top (super-Gaussian)
    nd:t=0.5   or   nd:od=0.3                    neutral density
    longpass:edge=500,width=10                   edge at 50 %, width 10-90 %
    shortpass:edge=650,width=10
    PATH or example name                         a file or a bundled example
    PATH:COLUMN  or  PATH:N                      one column, by header or number (from 1)
    PATH@units=od,bandwidth=2                    this file's units and instrument bandwidth
    A*B                                          stack: the product of A and B
    notch:center=540..600/5,fwhm=30,depth=0.8    a sweep: one filter per value

The spec's form decides what a term is: a registered shape's kind word with
``:`` is parametric (:data:`FILTER_SHAPES`), anything else a file or example;
``*`` always stacks (a file whose name holds ``*`` must be renamed).

Modules, one concept each:

- :mod:`.filter_set`: :class:`FilterSet` and the limits on one spec's size;
- :mod:`.shapes`: the shape functions and the registry :data:`FILTER_SHAPES`;
- :mod:`.specs`: spec strings, sweeps and stacks (:func:`parse_filter_spec`);
- :mod:`.files`: file terms, options, bundled examples, reading a file's columns;
- :mod:`.features`: notches, edges, band-passes and ripple of a measured curve;
- :mod:`.loading`: :func:`load_filters`.

Public: :class:`FilterSet`, :func:`gaussian_notch`, :func:`flat_notch`,
:func:`longpass`, :func:`shortpass`, :func:`neutral_density`,
:func:`parse_filter_spec`, :func:`load_filters`, :func:`find_features`, :func:`find_notches`,
:func:`with_file_options`, :func:`spec_paths`,
:func:`example_names`, :data:`SPEC_FORMS`, :data:`FILTER_SHAPES`.
"""

from __future__ import annotations

from .features import filter_notches, find_features, find_notches, noise_level
from .files import FILE_FORMS, FILE_OPTIONS, FileTerm, example_names, example_path, extrapolation_text, file_term, \
    spec_paths, with_file_options
from .filter_set import MAX_FILTER_VALUES, MAX_SWEEP_MEMBERS, FilterSet
from .loading import load_filters
from .shapes import FILTER_SHAPES, FilterShape, flat_notch, gaussian_notch, longpass, neutral_density, shortpass
from .specs import SPEC_FORMS, parse_filter_spec

__all__ = [
    "FilterSet", "gaussian_notch", "flat_notch", "longpass", "shortpass", "neutral_density",
    "parse_filter_spec", "load_filters", "find_notches", "find_features", "noise_level", "example_names",
    "example_path", "SPEC_FORMS", "FILE_FORMS", "FileTerm", "file_term", "spec_paths", "with_file_options",
    "extrapolation_text", "filter_notches", "MAX_SWEEP_MEMBERS", "MAX_FILTER_VALUES", "FILTER_SHAPES",
    "FilterShape", "FILE_OPTIONS",
]
