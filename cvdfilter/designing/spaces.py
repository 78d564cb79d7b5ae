"""Design spaces: the families of filters a design searches, their parameters and bounds.

A design space turns a matrix of parameters (candidates, variables) into transmittance curves
(candidates, wavelengths) in one vectorised step, and each candidate into the spec string or curve
file the other commands read.

Family strings (``--family``)::

    notch:k=K[,shape=gauss|flat][,center=LO..HI][,fwhm=LO..HI][,depth=LO..HI | od=LO..HI]
         [,on=nd|longpass|shortpass][,t=LO..HI][,edge=LO..HI][,width=LO..HI][,min=LO..HI]
    spline:k=K

``notch``: K = 1-3 notches (the ``notch`` filter shape of :mod:`cvdfilter.spectra.filters`, Gaussian
or flat-topped of order 4), each with a centre, FWHM and depth (or peak optical density) inside the
bounds, optionally stacked on a neutral density (``on=nd``: transmittance ``t``) or a smooth tint
(``on=longpass`` / ``on=shortpass``: ``edge``, 10-90 % ``width`` and the floor ``min``). Every design
is a spec string such as ``notch:center=540,depth=0.8,fwhm=30*nd:t=0.7``.

``spline``: a free-form curve, a clamped cubic B-spline with K coefficients (4-60) spread evenly over
the grid, each coefficient 0-1. B-spline basis functions are non-negative and sum to one, so the
curve stays within 0-1 everywhere (the convex-hull property, de Boor 1978). The finest detail a
curve can have is set by the knot spacing: :func:`spline_min_feature_nm` gives the FWHM of the
narrowest dip it can make (one coefficient at 0, its neighbours at 1), stated in every output.
Designs are exported as curve files (fraction 0-1 at each grid wavelength).

Manufacturability is not modelled beyond these bounds.

Public: :class:`Variable`, :class:`DesignSpace`, :func:`parse_family`, :func:`spline_min_feature_nm`,
:data:`FAMILY_FORMS`, :data:`SPEC_DIGITS`.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..errors import InputError, clip_text, did_you_mean
from ..spectra.grid import DEFAULT_GRID, Grid

__all__ = ["Variable", "DesignSpace", "parse_family", "spline_min_feature_nm", "FAMILY_FORMS", "SPEC_DIGITS",
           "MAX_NOTCHES", "SPLINE_COEFFICIENTS"]

#: The family strings ``--family`` takes (``cvdfilter design --help`` and docs/design.md show them).
FAMILY_FORMS = {
    "notch": "notch:k=1-3[,shape=gauss|flat][,center=LO..HI][,fwhm=LO..HI][,depth=LO..HI|od=LO..HI]"
             "[,on=nd|longpass|shortpass][,t=..][,edge=..][,width=..][,min=..]",
    "spline": "spline:k=4-60 (a smooth free-form curve: clamped cubic B-spline, coefficients 0-1)",
}
#: Decimals a design's parameter keeps in its spec string (0.1 nm; 0.001 in transmittance or density).
SPEC_DIGITS = {"center": 1, "fwhm": 1, "depth": 3, "od": 3, "t": 3, "edge": 1, "width": 1, "min": 3}
#: Decimals of a free-form curve file (fraction 0-1).
CURVE_DIGITS = 6
MAX_NOTCHES = 3
#: Coefficients a spline may have.
SPLINE_COEFFICIENTS = (4, 60)
#: Order of a flat-topped notch (the notch shape's default, spectra/filters.py).
FLAT_ORDER = 4.0

#: Default bounds (a choice of ours, wide enough for the visible notches and tints in use; common practice).
_DEFAULT_BOUNDS = {
    "center": (420.0, 680.0), "fwhm": (10.0, 100.0), "depth": (0.05, 0.95), "od": (0.05, 2.0),
    "t": (0.2, 1.0), "width": (10.0, 100.0), "min": (0.0, 1.0),
}
_EDGE_BOUNDS = {"longpass": (380.0, 560.0), "shortpass": (580.0, 780.0)}
#: Hard limits of each parameter (the notch, nd and edge shapes' own ranges).
_LIMITS = {"center": (380.0, 780.0), "fwhm": (1.0, 400.0), "depth": (0.0, 1.0), "od": (0.0, 10.0),
           "t": (0.0, 1.0), "edge": (380.0, 780.0), "width": (1.0, 400.0), "min": (0.0, 1.0)}
_UNITS = {"center": "nm", "fwhm": "nm", "depth": "fraction", "od": "optical density", "t": "fraction",
          "edge": "nm", "width": "nm", "min": "fraction"}


@dataclass(frozen=True)
class Variable:
    """One design variable: ``name`` (``center1``, ``t``, ``c07``), its parameter ``key``, bounds, unit."""

    name: str
    key: str
    lo: float
    hi: float
    unit: str
    digits: int


@dataclass(frozen=True)
class DesignSpace:
    """A family of filters and its variables (see the module docstring).

    Attributes
    ----------
    family : str
        The canonical family string (every bound written out).
    kind : str
        ``notch`` or ``spline``.
    variables : tuple of Variable
    grid : Grid
    options : dict
        ``k``, ``shape``, ``strength`` (depth or od), ``on`` (None, nd, longpass, shortpass).
    """

    family: str
    kind: str
    variables: tuple
    grid: Grid = DEFAULT_GRID
    options: dict = field(default_factory=dict)

    @property
    def lower(self) -> np.ndarray:
        return np.array([v.lo for v in self.variables])

    @property
    def upper(self) -> np.ndarray:
        return np.array([v.hi for v in self.variables])

    def _column(self, x: np.ndarray, name: str) -> np.ndarray:
        return x[:, [v.name for v in self.variables].index(name)]

    def transmittance(self, x) -> np.ndarray:
        """Transmittance (candidates, n_wl), fraction 0-1, of parameters ``x`` (candidates, variables)."""
        from ..spectra.filters import flat_notch, gaussian_notch, longpass, neutral_density, shortpass

        x = np.atleast_2d(np.asarray(x, dtype=float))
        wl = self.grid.wavelengths
        if self.kind == "spline":
            return np.clip(x @ _spline_basis(self.grid, len(self.variables)).T, 0.0, 1.0)
        o = self.options
        t = np.ones((x.shape[0], wl.size))
        strength = o["strength"]
        for i in range(1, o["k"] + 1):
            args = (wl, self._column(x, f"center{i}"), self._column(x, f"fwhm{i}"))
            s = {strength: self._column(x, f"{strength}{i}")}
            notch = flat_notch(*args, order=FLAT_ORDER, **s) if o["shape"] == "flat" else gaussian_notch(*args, **s)
            t = t * np.clip(notch, 0.0, 1.0)   # the order and clipping of a stacked spec (parse_filter_spec)
        if o["on"] == "nd":
            t = t * np.clip(neutral_density(wl, t=self._column(x, "t")), 0.0, 1.0)
        elif o["on"] in ("longpass", "shortpass"):
            fn = longpass if o["on"] == "longpass" else shortpass
            t = t * np.clip(fn(wl, self._column(x, "edge"), self._column(x, "width"), tmin=self._column(x, "min"),
                               tmax=1.0), 0.0, 1.0)
        return t

    def round(self, x) -> np.ndarray:
        """Parameters rounded to the precision of their spec string or curve file."""
        x = np.atleast_2d(np.asarray(x, dtype=float))
        digits = [v.digits for v in self.variables]
        out = np.stack([np.round(x[:, j], d) for j, d in enumerate(digits)], axis=1) + 0.0
        return np.clip(out, self.lower, self.upper)

    def spec(self, x) -> str | None:
        """The spec string of one candidate (notch families), None for free-form curves."""
        if self.kind == "spline":
            return None
        x = self.round(x)[0]
        values = dict(zip([v.name for v in self.variables], x.tolist()))
        o = self.options
        terms = []
        shape = ",shape=flat" if o["shape"] == "flat" else ""
        for i in range(1, o["k"] + 1):
            s = o["strength"]
            # keys in sorted order, as parse_filter_spec names a notch
            kv = sorted([("center", values[f"center{i}"]), ("fwhm", values[f"fwhm{i}"]), (s, values[f"{s}{i}"])])
            terms.append("notch:" + ",".join(f"{key}={_fmt(v)}" for key, v in kv) + shape)
        if o["on"] == "nd":
            terms.append(f"nd:t={_fmt(values['t'])}")
        elif o["on"] in ("longpass", "shortpass"):
            terms.append(f"{o['on']}:edge={_fmt(values['edge'])},min={_fmt(values['min'])},"
                         f"width={_fmt(values['width'])}")
        return "*".join(terms)

    def parameters(self, x) -> dict:
        """One candidate's rounded parameters by variable name."""
        return dict(zip([v.name for v in self.variables], self.round(x)[0].tolist()))

    def curve(self, x) -> np.ndarray:
        """The curve of one candidate as its file holds it (fraction, :data:`CURVE_DIGITS` decimals)."""
        return np.round(self.transmittance(self.round(x))[0], CURVE_DIGITS) + 0.0

    def describe(self) -> dict:
        """The space for the JSON ``inputs``: family, variables with bounds and units, the stated bounds."""
        d: dict = {"family": self.family, "kind": self.kind,
             "variables": [{"name": v.name, "low": v.lo, "high": v.hi, "unit": v.unit, "decimals": v.digits}
                           for v in self.variables]}
        if self.kind == "spline":
            k = len(self.variables)
            d["smoothness"] = {
                "model": "clamped cubic B-spline, coefficients evenly spaced over the grid, each 0-1 "
                         "(the curve stays within 0-1: convex-hull property)",
                "coefficients": k, "knot_spacing_nm": _knot_spacing(self.grid, k),
                "min_feature_fwhm_nm": spline_min_feature_nm(k, self.grid)}
        d["manufacturability"] = "not modelled beyond these bounds"
        return d


def _fmt(v: float) -> str:
    return f"{v:.6g}"


def _knot_spacing(grid: Grid, k: int) -> float:
    return round((grid.end - grid.start) / (k - 3), 3)


def _spline_basis(grid: Grid, k: int) -> np.ndarray:
    """Basis matrix (n_wl, k) of the clamped cubic B-spline with k coefficients on the grid (read-only)."""
    from ..spectra.cache import memo_arrays

    def make():
        from scipy.interpolate import BSpline

        inner = np.linspace(grid.start, grid.end, k - 2)
        knots = np.concatenate([[grid.start] * 3, inner, [grid.end] * 3])
        basis = BSpline.design_matrix(grid.wavelengths, knots, 3).toarray()
        return {"basis": basis}

    return memo_arrays(f"design-spline-basis:{grid.start}:{grid.end}:{grid.step}:{k}", make)["basis"]


def spline_min_feature_nm(k: int, grid: Grid = DEFAULT_GRID) -> float:
    """FWHM (nm) of the narrowest dip a k-coefficient spline makes: one middle coefficient 0, the rest 1."""
    basis = _spline_basis(grid, k)
    c = np.ones(k)
    c[k // 2] = 0.0
    dip = 1.0 - basis @ c
    half = dip.max() / 2
    inside = grid.wavelengths[dip >= half]
    return round(float(inside.max() - inside.min() + grid.step), 1)


def _range(text: str, key: str, family: str) -> tuple[float, float]:
    lo, sep, hi = text.partition("..")
    try:
        a, b = (float(lo), float(hi)) if sep else (float(lo), float(lo))
    except ValueError:
        raise InputError(f"{key}={clip_text(text)} is not LO..HI", source=family,
                         hint=f"e.g. {key}={_DEFAULT_BOUNDS.get(key, (0, 1))[0]:g}.."
                              f"{_DEFAULT_BOUNDS.get(key, (0, 1))[1]:g}") from None
    limit = _LIMITS[key]
    if not (np.isfinite(a) and np.isfinite(b)) or a > b or a < limit[0] or b > limit[1]:
        raise InputError(f"{key}={clip_text(text)} must be LO..HI with LO <= HI within {limit[0]:g}..{limit[1]:g}",
                         source=family)
    return a, b


def parse_family(family: str, grid: Grid = DEFAULT_GRID) -> DesignSpace:
    """The design space a family string describes (see the module docstring).

    Examples
    --------
    >>> space = parse_family("notch:k=2")
    >>> [v.name for v in space.variables]
    ['center1', 'fwhm1', 'depth1', 'center2', 'fwhm2', 'depth2']
    >>> space.family
    'notch:k=2,shape=gauss,center=420..680,fwhm=10..100,depth=0.05..0.95'
    """
    text = str(family).strip()
    kind, _, rest = text.partition(":")
    kind = kind.strip().lower()
    if kind not in FAMILY_FORMS:
        close = did_you_mean(kind, list(FAMILY_FORMS))
        raise InputError(f"unknown design family '{clip_text(kind)}'" + (f"; {close}" if close else ""),
                         source=text, hint="use " + " or ".join(FAMILY_FORMS.values()))
    params: dict[str, str] = {}
    for part in filter(None, (p.strip() for p in rest.split(","))):
        key, eq, val = part.partition("=")
        key = {"centre": "center"}.get(key.strip().lower(), key.strip().lower())
        if not eq:
            raise InputError(f"'{clip_text(part)}' is not key=value", source=text, hint=FAMILY_FORMS[kind])
        if key in params:
            raise InputError(f"'{key}' is given twice", source=text)
        params[key] = val.strip()
    if "k" not in params:
        raise InputError(f"{kind} family needs k", source=text, hint=FAMILY_FORMS[kind])
    try:
        k = int(params.pop("k"))
    except ValueError:
        raise InputError("k must be a whole number", source=text, hint=FAMILY_FORMS[kind]) from None
    if kind == "spline":
        lo, hi = SPLINE_COEFFICIENTS
        if params:
            raise InputError(f"unknown parameter '{next(iter(params))}' for spline", source=text,
                             hint=FAMILY_FORMS["spline"])
        if not lo <= k <= hi:
            raise InputError(f"spline k must be {lo}-{hi}, got {k}", source=text)
        variables = tuple(Variable(f"c{i + 1:02d}", "c", 0.0, 1.0, "fraction", 4) for i in range(k))
        return DesignSpace(f"spline:k={k}", "spline", variables, grid, {"k": k})
    if not 1 <= k <= MAX_NOTCHES:
        raise InputError(f"notch k must be 1-{MAX_NOTCHES}, got {k}", source=text)
    shape = params.pop("shape", "gauss")
    if shape not in ("gauss", "flat"):
        raise InputError(f"shape must be gauss or flat, got '{clip_text(shape)}'", source=text)
    on = params.pop("on", None)
    if on not in (None, "nd", "longpass", "shortpass"):
        raise InputError(f"on must be nd, longpass or shortpass, got '{clip_text(on)}'", source=text)
    if "depth" in params and "od" in params:
        raise InputError("give depth or od bounds, not both", source=text)
    strength = "od" if "od" in params else "depth"
    allowed = {"center", "fwhm", strength} | ({"t"} if on == "nd" else set()) | (
        {"edge", "width", "min"} if on in ("longpass", "shortpass") else set())
    for key in params:
        if key not in allowed:
            close = did_you_mean(key, sorted(allowed | {"k", "shape", "on"}))
            raise InputError(f"unknown parameter '{clip_text(key)}' for this family" + (f"; {close}" if close else ""),
                             source=text, hint=FAMILY_FORMS["notch"])
    bounds = {**_DEFAULT_BOUNDS, **({"edge": _EDGE_BOUNDS[on]} if on in _EDGE_BOUNDS else {})}
    b = {key: _range(params[key], key, text) if key in params else bounds[key] for key in allowed}
    notch_variables: list[Variable] = []
    for i in range(1, k + 1):
        for key in ("center", "fwhm", strength):
            notch_variables.append(Variable(f"{key}{i}", key, *b[key], _UNITS[key], SPEC_DIGITS[key]))
    extra = ["t"] if on == "nd" else ["edge", "width", "min"] if on else []
    for key in extra:
        notch_variables.append(Variable(key, key, *b[key], _UNITS[key], SPEC_DIGITS[key]))
    canonical = [f"notch:k={k}", f"shape={shape}"] + [f"{key}={b[key][0]:g}..{b[key][1]:g}"
                                                      for key in ("center", "fwhm", strength)]
    if on:
        canonical.append(f"on={on}")
        canonical += [f"{key}={b[key][0]:g}..{b[key][1]:g}" for key in extra]
    return DesignSpace(",".join(canonical), "notch", tuple(notch_variables), grid,
                       {"k": k, "shape": shape, "strength": strength, "on": on})
