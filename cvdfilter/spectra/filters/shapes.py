"""Parametric filter shapes and their registry.

Each shape function broadcasts over parameter arrays of shape (n,) so that a
sweep is one array operation. :data:`FILTER_SHAPES` registers every shape a
spec string may name (``notch``, ``nd``, ``longpass``, ``shortpass``): its
parameters, its spec form (shown by ``cvdfilter list filters``) and its builder.
The spec parser, ``list`` and the docs read that one mapping; adding a shape
means adding its function and one :class:`FilterShape` entry here.

Public: :func:`gaussian_notch`, :func:`flat_notch`, :func:`longpass`,
:func:`shortpass`, :func:`neutral_density`, :class:`FilterShape`,
:data:`FILTER_SHAPES`, :data:`PARAMETER_RANGES`, :data:`KEY_ALIASES`, :func:`is_parametric`.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field

import numpy as np

__all__ = ["gaussian_notch", "flat_notch", "longpass", "shortpass", "neutral_density", "FilterShape",
           "FILTER_SHAPES", "PARAMETER_RANGES", "KEY_ALIASES", "is_parametric"]

_LN2 = math.log(2.0)


def _wl(wavelengths) -> np.ndarray:
    return np.asarray(wavelengths, dtype=float)


def _col(x) -> np.ndarray:
    a = np.asarray(x, dtype=float)
    return a[..., None] if a.ndim else a


def gaussian_notch(wavelengths, center, fwhm, *, depth=None, od=None) -> np.ndarray:
    """Gaussian notch.

    With ``depth`` (fraction of light removed at the centre, 0-1):
    T = 1 - depth * exp(-4 ln2 (lambda - center)^2 / fwhm^2).
    With ``od`` (peak optical density): the density profile is Gaussian,
    T = 10^(-od * exp(-4 ln2 (lambda - center)^2 / fwhm^2)).

    Parameters
    ----------
    wavelengths : array_like
        nm, shape (n_wl,).
    center, fwhm : float or array_like
        nm; arrays of shape (n,) give n filters.
    depth, od : float or array_like
        One of the two.

    Returns
    -------
    numpy.ndarray
        Transmittance, shape (n_wl,) or (n, n_wl).

    Examples
    --------
    >>> import numpy as np
    >>> float(gaussian_notch(np.array([575.0]), 575, 30, depth=0.8)[0])
    0.2
    """
    wl, c, f2 = _wl(wavelengths), _col(center), _col(fwhm) ** 2
    x = np.empty(np.broadcast_shapes(wl.shape, c.shape, f2.shape))  # -4 ln2 (lambda - center)^2 / fwhm^2, in place
    np.subtract(wl, c, out=x)
    x **= 2
    x *= -4 * _LN2
    x /= f2
    return _apply_profile(np.exp(x, out=x), depth, od)


def flat_notch(wavelengths, center, fwhm, *, depth=None, od=None, order=4) -> np.ndarray:
    """Flat-topped (super-Gaussian) notch of the given FWHM.

    profile = exp(-ln2 * |2 (lambda - center) / fwhm|^(2 order)); order 1 is a
    Gaussian, larger orders give steeper edges and a flatter floor.
    """
    x = np.abs(2 * (_wl(wavelengths) - _col(center)) / _col(fwhm))
    profile = np.exp(-_LN2 * x ** (2 * _col(order)))
    return _apply_profile(profile, depth, od)


def _apply_profile(profile, depth, od):
    if (depth is None) == (od is None):
        raise ValueError("give exactly one of depth or od")
    if depth is not None:  # 1 - depth * profile, in place when the shapes allow (large sweeps: one array)
        d = _col(depth)
        same = np.broadcast_shapes(np.shape(profile), d.shape) == np.shape(profile)
        out = np.multiply(profile, -d, out=profile if same and isinstance(profile, np.ndarray) else None)
        out += 1.0
        return out
    return np.power(10.0, -_col(od) * profile)


def _edge(wavelengths, edge, width, sign, tmin, tmax):
    # Logistic edge; 'width' is the 10 %-90 % distance, which for a logistic of
    # scale s is 2 ln 9 s.
    s = _col(width) / (2 * math.log(9.0))
    z = sign * (_wl(wavelengths) - _col(edge)) / s
    rise = 0.5 * (1 + np.tanh(z / 2))  # = logistic(z), overflow-free
    return _col(tmin) + (_col(tmax) - _col(tmin)) * rise


def longpass(wavelengths, edge, width, *, tmin=0.0, tmax=1.0) -> np.ndarray:
    """Long-pass edge: ``tmin`` below ``edge``, ``tmax`` above, 50 % point at ``edge``."""
    return _edge(wavelengths, edge, width, +1.0, tmin, tmax)


def shortpass(wavelengths, edge, width, *, tmin=0.0, tmax=1.0) -> np.ndarray:
    """Short-pass edge: ``tmax`` below ``edge``, ``tmin`` above."""
    return _edge(wavelengths, edge, width, -1.0, tmin, tmax)


def neutral_density(wavelengths, *, t=None, od=None) -> np.ndarray:
    """Flat transmittance ``t`` (or 10^-od) at every wavelength."""
    if (t is None) == (od is None):
        raise ValueError("give exactly one of t or od")
    level = _col(t) if t is not None else np.power(10.0, -_col(od))
    return level * np.ones_like(_wl(wavelengths))


# --- the registry ---------------------------------------------------------------

#: A builder gets the grid's wavelengths (n_wl,), the numeric parameters as arrays of shape (n,) and the
#: word parameters, and returns the transmittance (n, n_wl) or (n_wl,).
Builder = Callable[[np.ndarray, dict, dict], np.ndarray]


@dataclass(frozen=True)
class FilterShape:
    """One parametric filter shape a spec string may name.

    Attributes
    ----------
    name : str
        The spec's kind word (``notch`` in ``notch:center=575,...``).
    required : frozenset of str
        Numeric parameters that must be given.
    optional : frozenset of str
        Numeric parameters that may be given.
    one_of : frozenset of str
        Parameters of which exactly one must be given (a strength), empty if none.
    words : dict
        Parameters whose value is a word, with the words allowed (``shape=gauss|flat``).
    form : str
        The spec form shown by ``cvdfilter list filters``.
    example : str
        A spec of this shape (docs/getting-started.md shows it; tests parse it).
    build : callable
        ``build(wavelengths, numbers, words)`` -> transmittance (see :data:`Builder`).
    """

    name: str
    required: frozenset
    optional: frozenset
    form: str
    example: str
    build: Builder
    one_of: frozenset = frozenset()
    words: Mapping[str, tuple] = field(default_factory=dict)

    @property
    def keys(self) -> frozenset:
        """Every parameter key the shape takes."""
        return self.required | self.optional | self.one_of | frozenset(self.words)


def _build_notch(wl, p, words):
    strength = {"depth": p.get("depth"), "od": p.get("od")}
    if words.get("shape") == "flat" or "order" in p:
        return flat_notch(wl, p["center"], p["fwhm"], order=p.get("order", 4.0), **strength)
    return gaussian_notch(wl, p["center"], p["fwhm"], **strength)


def _build_nd(wl, p, words):
    return neutral_density(wl, t=p.get("t"), od=p.get("od"))


def _build_longpass(wl, p, words):
    return longpass(wl, p["edge"], p["width"], tmin=p.get("min", 0.0), tmax=p.get("max", 1.0))


def _build_shortpass(wl, p, words):
    return shortpass(wl, p["edge"], p["width"], tmin=p.get("min", 0.0), tmax=p.get("max", 1.0))


#: Every parametric shape, by the kind word of its spec (order: as ``cvdfilter list filters`` shows them).
FILTER_SHAPES: dict[str, FilterShape] = {s.name: s for s in (
    FilterShape("notch", frozenset({"center", "fwhm"}), frozenset({"order"}),
                "notch:center=NM,fwhm=NM,depth=0-1 | od=OD[,shape=gauss|flat][,order=N]",
                "notch:center=575,fwhm=35,depth=0.8", _build_notch,
                one_of=frozenset({"depth", "od"}), words={"shape": ("gauss", "flat")}),
    FilterShape("nd", frozenset(), frozenset(), "nd:t=0-1 | nd:od=OD", "nd:t=0.5", _build_nd,
                one_of=frozenset({"t", "od"})),
    FilterShape("longpass", frozenset({"edge", "width"}), frozenset({"min", "max"}),
                "longpass:edge=NM,width=NM[,min=0-1][,max=0-1]", "longpass:edge=500,width=10", _build_longpass),
    FilterShape("shortpass", frozenset({"edge", "width"}), frozenset({"min", "max"}),
                "shortpass:edge=NM,width=NM[,min=0-1][,max=0-1]", "shortpass:edge=650,width=10", _build_shortpass),
)}

#: Other spellings accepted for parameter keys.
KEY_ALIASES = {"centre": "center"}

#: Allowed range of each numeric parameter (low, high, how the error says it), checked in this order.
PARAMETER_RANGES = {
    "depth": (0, 1, "between 0 and 1"),
    "t": (0, 1, "between 0 and 1"),
    "min": (0, 1, "between 0 and 1"),
    "max": (0, 1, "between 0 and 1"),
    "od": (0, 10, "between 0 and 10"),
    "fwhm": (0.1, 1000, "between 0.1 and 1000 nm"),
    "width": (0.01, 1000, "between 0.01 and 1000 nm"),
    "center": (200, 1200, "a wavelength in nm (200-1200)"),
    "edge": (200, 1200, "a wavelength in nm (200-1200)"),
    "order": (1, 20, "between 1 and 20"),
}


def is_parametric(term: str) -> bool:
    """Whether one stack term has the form of a parametric filter: a registered shape's kind word followed by
    ``:`` (or alone, for a shape that needs no parameter). The form decides, never the file system."""
    shape = FILTER_SHAPES.get(term.partition(":")[0].strip().lower())
    return shape is not None and (":" in term or not shape.required)
