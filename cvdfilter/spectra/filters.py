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

Public: :class:`FilterSet`, :func:`gaussian_notch`, :func:`flat_notch`,
:func:`longpass`, :func:`shortpass`, :func:`neutral_density`,
:func:`parse_filter_spec`, :func:`load_filters`, :func:`find_features`, :func:`find_notches`,
:func:`with_file_options`, :func:`spec_paths`,
:func:`example_names`, :data:`SPEC_FORMS`.
"""

from __future__ import annotations

import hashlib
import itertools
import math
import pathlib
import re
from dataclasses import dataclass, field

import numpy as np

from ..errors import InputError, InputWarning, clip_text, did_you_mean
from .grid import DEFAULT_GRID, Grid

__all__ = [
    "FilterSet", "gaussian_notch", "flat_notch", "longpass", "shortpass", "neutral_density",
    "parse_filter_spec", "load_filters", "find_notches", "find_features", "noise_level", "example_names",
    "example_path", "SPEC_FORMS", "FILE_FORMS", "FileTerm", "file_term", "spec_paths", "with_file_options",
    "extrapolation_text", "filter_notches", "MAX_SWEEP_MEMBERS", "MAX_FILTER_VALUES",
]

#: Spec forms shown by ``cvdfilter list filters``.
SPEC_FORMS = {
    "notch": "notch:center=NM,fwhm=NM,depth=0-1 | od=OD[,shape=gauss|flat][,order=N]",
    "nd": "nd:t=0-1 | nd:od=OD",
    "longpass": "longpass:edge=NM,width=NM[,min=0-1][,max=0-1]",
    "shortpass": "shortpass:edge=NM,width=NM[,min=0-1][,max=0-1]",
    "stack": "SPEC*SPEC (product of transmittances)",
    "sweep": "any number as START..STOP/STEP, e.g. center=540..600/5",
}

#: How files are named in a spec, shown by ``cvdfilter list filters`` (docs/getting-started.md).
FILE_FORMS = {
    "PATH": "a curve file; every value column is a filter, named by the file stem (one column) or stem:column",
    "PATH:COLUMN": "one column by its header, e.g. 'lenses.csv:Lens A' or lenses.csv:\"Lens A\"",
    "PATH:N": "one column by number, counting value columns from 1 (the wavelength column is not counted)",
    "PATH@units=U": "this file's units: fraction, percent or od (overrides --units)",
    "PATH@bandwidth=NM": "this file's instrument bandwidth, nm (Stearns & Stearns correction)",
    "PATH:COLUMN@units=U,bandwidth=NM": "both together",
}

_LN2 = math.log(2.0)
#: Most filters one spec (a sweep or a stack) may describe, checked before anything is allocated.
MAX_SWEEP_MEMBERS = 50_000
#: Most transmittance values (filters x grid wavelengths) one spec may describe (160 MB as float64).
MAX_FILTER_VALUES = MAX_SWEEP_MEMBERS * 401


@dataclass(frozen=True)
class FilterSet:
    """Many filters on one grid.

    Attributes
    ----------
    names : tuple of str
        One name per filter.
    transmittance : numpy.ndarray
        Spectral transmittance, fraction 0-1, shape (n_filters, n_wl).
    grid : Grid
        The wavelength grid.
    sources : tuple of str
        Where each filter came from (``spec``, ``example``, ``file``, ``array``).
    info : tuple of dict
        Per filter: the spec or path, units and why, warnings, a SHA-256 of the file.
    """

    names: tuple
    transmittance: np.ndarray
    grid: Grid = DEFAULT_GRID
    sources: tuple = ()
    info: tuple = field(default=())

    def __post_init__(self) -> None:
        t = self.transmittance
        if t.ndim != 2 or t.shape[1] != self.grid.size:
            raise ValueError(f"transmittance must be (n_filters, {self.grid.size}), got {t.shape}")
        if len(self.names) != t.shape[0]:
            raise ValueError("one name per filter is needed")

    def __len__(self) -> int:
        return self.transmittance.shape[0]

    @property
    def wavelengths(self) -> np.ndarray:
        return self.grid.wavelengths

    def concat(self, other: FilterSet) -> FilterSet:
        if other.grid != self.grid:
            raise ValueError("filter sets on different grids")
        return FilterSet(self.names + other.names, np.vstack([self.transmittance, other.transmittance]),
                         self.grid, self.sources + other.sources, self.info + other.info)

    def stack(self, other: FilterSet) -> FilterSet:
        """Every filter of self times every filter of other (outer product)."""
        t = (self.transmittance[:, None, :] * other.transmittance[None, :, :]).reshape(-1, self.grid.size)
        names = tuple(f"{a}*{b}" for a in self.names for b in other.names)
        sources = tuple(a if a == b else f"{a}*{b}" for a in self.sources for b in other.sources)
        info = tuple({"parts": [ia, ib]} for ia in self.info for ib in other.info)
        return FilterSet(names, t, self.grid, sources, info)


# --- parametric shapes (broadcasting: parameters may be arrays of shape (n,)) ---

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
    profile = np.exp(-4 * _LN2 * (_wl(wavelengths) - _col(center)) ** 2 / _col(fwhm) ** 2)
    return _apply_profile(profile, depth, od)


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
    if depth is not None:
        return 1.0 - _col(depth) * profile
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


# --- spec strings -------------------------------------------------------------

_KINDS = {
    "notch": ({"center", "fwhm"}, {"depth", "od", "shape", "order"}),
    "nd": (set(), {"t", "od"}),
    "longpass": ({"edge", "width"}, {"min", "max"}),
    "shortpass": ({"edge", "width"}, {"min", "max"}),
}
#: Other spellings accepted for parameter keys.
_KEY_ALIASES = {"centre": "center"}
#: Options a file term takes after '@' (``lens.csv@units=od,bandwidth=2``).
FILE_OPTIONS = ("units", "bandwidth")


def _count(text: str, key: str, spec: str) -> int:
    """Members of one value (1, or a START..STOP/STEP range), counted before anything is allocated."""
    if ".." not in text:
        return 1
    try:
        lo, rest = text.split("..", 1)
        hi, _, step = rest.partition("/")
        lo_f, hi_f = float(lo), float(hi)
        step_f = float(step) if step else (hi_f - lo_f)
    except ValueError:
        raise InputError(f"{key}={clip_text(text)} is not a number or a START..STOP/STEP range", source=spec) from None
    if not (math.isfinite(lo_f) and math.isfinite(hi_f) and math.isfinite(step_f)) or hi_f < lo_f or (
            step_f <= 0 and hi_f > lo_f):
        raise InputError(f"{key}={clip_text(text)} is not a START..STOP/STEP range with STOP >= START and STEP > 0",
                         source=spec)
    if hi_f == lo_f:
        return 1
    n = math.floor((hi_f - lo_f) / step_f + 1e-9) + 1
    return int(min(n, 10**18))


def _parse_value(text: str, key: str, spec: str) -> np.ndarray:
    n = _count(text, key, spec)
    if n > MAX_SWEEP_MEMBERS:
        raise InputError(f"sweep {key}={clip_text(text)} gives {n:,} values", source=spec,
                         hint=f"at most {MAX_SWEEP_MEMBERS:,} filters per spec")
    if ".." in text:
        lo, rest = text.split("..", 1)
        hi, _, step = rest.partition("/")
        lo_f, hi_f = float(lo), float(hi)
        step_f = float(step) if step else (hi_f - lo_f)
        return np.round(lo_f + (step_f if n > 1 else 0.0) * np.arange(n), 10)
    try:
        v = float(text)
    except ValueError:
        raise InputError(f"{key}={clip_text(text)} is not a number or a START..STOP/STEP range", source=spec) from None
    if not math.isfinite(v):
        raise InputError(f"{key}={clip_text(text)} is not a finite number", source=spec)
    return np.array([v])


def _fmt(v: float) -> str:
    return f"{v:.6g}"


def _check_members(n: int, spec: str, grid: Grid) -> None:
    """Refuse a spec whose filters would exceed the limits, before allocating them."""
    if n > MAX_SWEEP_MEMBERS or n * grid.size > MAX_FILTER_VALUES:
        raise InputError(f"describes {n:,} filters; at most {MAX_SWEEP_MEMBERS:,} per spec "
                         f"({MAX_FILTER_VALUES:,} transmittance values on the grid)", source=spec,
                         hint="use coarser sweep steps or split the sweep")


def _parametric_count(term: str, spec: str) -> int:
    """How many filters a parametric term describes, without building them."""
    kind, params, _ = _parametric_params(term, spec)
    return math.prod(_count(params[k], k, spec) for k in params)


def _parametric(term: str, spec: str, grid: Grid) -> FilterSet:
    kind, params, words = _parametric_params(term, spec)
    keys = sorted(params)
    n_total = math.prod(_count(params[k], k, spec) for k in keys)
    _check_members(n_total, spec, grid)
    values = {k: _parse_value(params[k], k, spec) for k in keys}
    return _build_parametric(kind, keys, values, words, spec, grid)


def _parametric_params(term: str, spec: str):
    kind, _, rest = term.partition(":")
    kind = kind.strip().lower()
    required, optional = _KINDS[kind]
    params: dict[str, str] = {}
    words: dict[str, str] = {}
    for part in filter(None, (p.strip() for p in rest.split(","))):
        key, eq, val = part.partition("=")
        key = key.strip().lower()
        key = _KEY_ALIASES.get(key, key)
        if not eq:
            raise InputError(f"'{clip_text(part)}' is not key=value", source=spec, hint=SPEC_FORMS[kind])
        if key not in required | optional:
            close = did_you_mean(key, sorted(required | optional | set(_KEY_ALIASES)))
            raise InputError(f"unknown parameter '{clip_text(key)}' for {kind}" + (f"; {close}" if close else ""),
                             source=spec, hint=SPEC_FORMS[kind])
        if key in params or key in words:
            raise InputError(f"'{key}' is given twice", source=spec)
        if key == "shape":
            if val.strip() not in ("gauss", "flat"):
                raise InputError(f"shape must be gauss or flat, got '{clip_text(val)}'", source=spec)
            words[key] = val.strip()
            continue
        params[key] = val.strip()
    missing = required - params.keys()
    if missing:
        raise InputError(f"{kind} needs {', '.join(sorted(missing))}", source=spec, hint=SPEC_FORMS[kind])
    if kind in ("notch", "nd"):
        strength = {"depth", "od"} if kind == "notch" else {"t", "od"}
        given = strength & params.keys()
        if len(given) != 1:
            raise InputError(f"{kind} needs exactly one of {' or '.join(sorted(strength))}", source=spec,
                             hint=SPEC_FORMS[kind])
    return kind, params, words


def _build_parametric(kind, keys, values, words, spec, grid):
    combos = np.array(list(itertools.product(*(values[k] for k in keys))), dtype=float).reshape(-1, len(keys))
    p = {k: combos[:, i] for i, k in enumerate(keys)}
    _check_ranges(kind, p, spec)
    wl = grid.wavelengths
    if kind == "notch":
        strength = {"depth": p.get("depth"), "od": p.get("od")}
        if words.get("shape") == "flat" or "order" in p:
            t = flat_notch(wl, p["center"], p["fwhm"], order=p.get("order", 4.0), **strength)
        else:
            t = gaussian_notch(wl, p["center"], p["fwhm"], **strength)
    elif kind == "nd":
        t = neutral_density(wl, t=p.get("t"), od=p.get("od"))
    else:
        fn = longpass if kind == "longpass" else shortpass
        t = fn(wl, p["edge"], p["width"], tmin=p.get("min", 0.0), tmax=p.get("max", 1.0))
    t = np.atleast_2d(t)
    names = []
    for i in range(len(combos)):
        kv = [f"{k}={_fmt(p[k][i])}" for k in keys]
        if "shape" in words:
            kv.append(f"shape={words['shape']}")
        names.append(f"{kind}:" + ",".join(kv))
    # the record keeps the parsed parameters (as the spec string writes them), so nothing re-parses names
    info = tuple({"spec": n, "kind": kind, "parameters": {k: float(_fmt(p[k][i])) for k in keys}}
                 for i, n in enumerate(names))
    return FilterSet(tuple(names), np.clip(t, 0.0, 1.0), grid, ("spec",) * len(names), info)


def _check_ranges(kind: str, p: dict, spec: str) -> None:
    def bad(key, lo, hi, what):
        v = p.get(key)
        if v is not None and (np.any(v < lo) or np.any(v > hi)):
            raise InputError(f"{key} must be {what}", source=spec)

    bad("depth", 0, 1, "between 0 and 1")
    bad("t", 0, 1, "between 0 and 1")
    bad("min", 0, 1, "between 0 and 1")
    bad("max", 0, 1, "between 0 and 1")
    bad("od", 0, 10, "between 0 and 10")
    bad("fwhm", 0.1, 1000, "between 0.1 and 1000 nm")
    bad("width", 0.01, 1000, "between 0.01 and 1000 nm")
    bad("center", 200, 1200, "a wavelength in nm (200-1200)")
    bad("edge", 200, 1200, "a wavelength in nm (200-1200)")
    bad("order", 1, 20, "between 1 and 20")


# --- bundled examples ---------------------------------------------------------

def _examples_dir() -> pathlib.Path:
    return pathlib.Path(__file__).resolve().parent.parent / "data" / "examples"


def example_names() -> list[str]:
    """Names of the bundled (invented) example filters."""
    return sorted(p.stem for p in _examples_dir().glob("*.csv"))


def example_path(name: str) -> pathlib.Path:
    return _examples_dir() / f"{name}.csv"


# --- files: selection, options, loading ----------------------------------------

def _sha256(path: pathlib.Path) -> str:
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for block in iter(lambda: fh.read(1 << 20), b""):
            h.update(block)
    return h.hexdigest()


@dataclass(frozen=True)
class FileTerm:
    """One file in a filter spec: ``PATH[:COLUMN][@units=U,bandwidth=NM]``.

    ``column`` is a header (as written, quotes optional) or a value-column
    number counted from 1 (the wavelength column is not counted).
    """

    path: pathlib.Path
    column: str | None = None
    units: str | None = None
    bandwidth: float | None = None
    example: str | None = None


def _parse_options(text: str, term: str) -> dict:
    from ..io.spectra_files import UNITS

    out: dict = {}
    for part in filter(None, (p.strip() for p in text.split(","))):
        key, eq, val = part.partition("=")
        key, val = key.strip().lower(), val.strip()
        if not eq or key not in FILE_OPTIONS:
            close = did_you_mean(key, FILE_OPTIONS)
            raise InputError(f"'{clip_text(part)}' is not a file option" + (f"; {close}" if close else ""),
                             source=term, hint="after '@' give units=fraction|percent|od and/or bandwidth=NM")
        if key == "units":
            if val.lower() not in UNITS:
                raise InputError(f"unknown units '{clip_text(val)}'", source=term, hint="use fraction, percent or od")
            out["units"] = val.lower()
        else:
            try:
                bw = float(val)
            except ValueError:
                raise InputError(f"bandwidth={clip_text(val)} is not a number (nm)", source=term) from None
            if not (0 < bw <= 20):
                raise InputError(f"bandwidth {bw:g} nm is outside 0-20 nm", source=term)
            out["bandwidth"] = bw
    return out


def _split_path_column(base: str) -> tuple[pathlib.Path, str | None, str | None] | None:
    """(path, column, example name) if ``base`` names a file or example, possibly with ':COLUMN'."""
    if base in example_names():
        return example_path(base), None, base
    p = pathlib.Path(base)
    if p.is_file() or (p.exists() and not p.is_dir()):
        return p, None, None
    for k, ch in enumerate(base):
        if ch != ":" or k == 0:
            continue
        head, col = base[:k], base[k + 1:]
        if head in example_names():
            return example_path(head), col, head
        hp = pathlib.Path(head)
        if hp.exists() and not hp.is_dir():
            return hp, col, None
    return None


def file_term(term: str) -> FileTerm | None:
    """Parse one stack term as a file (or bundled example) with optional column and options; None if it is not."""
    term = term.strip()
    options: dict = {}
    found = None
    if "@" in term and not pathlib.Path(term).exists():
        base, _, opts = term.rpartition("@")
        found = _split_path_column(base)
        if found is not None:
            options = _parse_options(opts, term)
    if found is None:
        found = _split_path_column(term)
    if found is None:
        return None
    path, column, example = found
    if column is not None:
        column = column.strip()
        if len(column) >= 2 and column[0] == column[-1] and column[0] in "\"'":
            column = column[1:-1]
        if not column:
            raise InputError("empty column after ':'", source=term,
                             hint='give a column header or number, e.g. lenses.csv:"Lens A" or lenses.csv:2')
    return FileTerm(path, column, options.get("units"), options.get("bandwidth"), example)


def spec_paths(spec) -> list[str]:
    """The files a filter spec reads (for output checks: outputs never overwrite inputs)."""
    if not isinstance(spec, (str, pathlib.Path)):
        return []
    s = str(spec).strip()
    if pathlib.Path(s).exists():
        return [s]
    out = []
    for term in s.split("*"):
        try:
            ft = file_term(term)
        except InputError:
            continue
        if ft is not None and ft.example is None:
            out.append(str(ft.path))
    return out


def with_file_options(specs, *, units: str | None = None, bandwidth: float | None = None):
    """Specs with ``@units=...,bandwidth=...`` added to every file term that does not set its own.

    This is how ``--units`` and ``--bandwidth`` reach files inside stacks and
    lists; bundled examples keep their own units. Non-string items pass unchanged.
    """
    if units is None and bandwidth is None:
        return specs
    single = isinstance(specs, (str, pathlib.Path))
    items = [specs] if single else list(specs)
    out = []
    for spec in items:
        if not isinstance(spec, (str, pathlib.Path)):
            out.append(spec)
            continue
        s = str(spec).strip()
        terms = [s] if pathlib.Path(s).exists() else [t.strip() for t in s.split("*")]
        new_terms = []
        for term in terms:
            ft = file_term(term) if term else None
            if ft is None or ft.example is not None:
                new_terms.append(term)
                continue
            opts = []
            if units is not None and ft.units is None:
                opts.append(f"units={units}")
            if bandwidth is not None and ft.bandwidth is None:
                opts.append(f"bandwidth={bandwidth:g}")
            if not opts:
                new_terms.append(term)
            elif ft.units is not None or ft.bandwidth is not None:
                new_terms.append(term + "," + ",".join(opts))
            else:
                new_terms.append(term + "@" + ",".join(opts))
        out.append("*".join(new_terms))
    return out[0] if single else out


def _select_column(table, column: str | None, source: str) -> list[int]:
    n = len(table.names)
    if column is None:
        return list(range(n))
    labels = [lab if lab is not None else "" for lab in table.labels] or [""] * n
    if column in labels:
        return [labels.index(column)]
    if column.isdigit():
        k = int(column)
        if 1 <= k <= n:
            return [k - 1]
        raise InputError(f"column {k} does not exist; the file has {n} value column(s) (1-{n})", source=source)
    lower = [lab.lower() for lab in labels]
    if column.lower() in lower:
        return [lower.index(column.lower())]
    close = did_you_mean(column, [lab for lab in labels if lab])
    shown = ", ".join(f"'{clip_text(lab)}'" for lab in labels[:8] if lab) or "none (no header)"
    raise InputError(f"no column '{clip_text(column)}'" + (f"; {close}" if close else ""), source=source,
                     hint=f"columns: {shown}; or give a number 1-{n}")


def _extrapolation(wl_measured, values, grid: Grid) -> list[dict]:
    """Which parts of the grid lie outside the measured range, and how they are filled (held end values)."""
    out = []
    g = grid.wavelengths
    lo, hi = float(wl_measured[0]), float(wl_measured[-1])
    if g[0] < lo:
        below = g[g < lo]
        out.append({"from_nm": float(below[0]), "to_nm": float(below[-1]), "method": "constant",
                    "held_from_nm": lo, "values": [float(v) for v in values[:, 0]]})
    if g[-1] > hi:
        above = g[g > hi]
        out.append({"from_nm": float(above[0]), "to_nm": float(above[-1]), "method": "constant",
                    "held_from_nm": hi, "values": [float(v) for v in values[:, -1]]})
    return out


def extrapolation_text(parts: list[dict]) -> str:
    """One sentence for the extrapolated parts of the grid (``""`` when none)."""
    if not parts:
        return ""
    bits = []
    for p in parts:
        vals = p["values"]
        v = f"T = {vals[0]:.3g}" if len(vals) == 1 else f"T = {min(vals):.3g}-{max(vals):.3g}"
        bits.append(f"{p['from_nm']:g}-{p['to_nm']:g} nm held at the {p['held_from_nm']:g} nm value ({v})")
    return "extrapolated " + " and ".join(bits)


def _from_file(ft: FileTerm, grid: Grid, units: str | None, bandwidth: float | None, source_kind: str,
               term: str) -> FilterSet:
    import warnings as _warnings

    from ..io.spectra_files import read_spectra
    from .grid import resample

    path = ft.path
    units = ft.units if ft.units is not None else units
    bandwidth = ft.bandwidth if ft.bandwidth is not None else bandwidth
    given_by = "@units in the spec" if ft.units is not None else "--units / units="
    table = read_spectra(path, kind="transmittance", units=units, units_given_by=given_by)
    cols = _select_column(table, ft.column, term)
    warnings = list(table.warnings)
    wl, values = table.wavelengths, table.values[cols]
    measured_step = float(np.max(np.diff(table.wavelengths)))
    if bandwidth is not None:
        wl, values, bw_notes = _bandpass_correct(wl, values, bandwidth, str(path))
        warnings += bw_notes
    t = np.atleast_2d(resample(wl, values.T, grid, method="linear", outside="edge").T)
    digest = _sha256(path)
    stem = ft.example or path.stem
    multi = len(table.names) > 1
    labels = table.labels or [None] * len(table.names)
    display = "example:" + ft.example if ft.example else str(path)
    names, infos = [], []
    extra = _extrapolation(wl, values, grid)
    for j, c in zip(range(len(cols)), cols):
        label = labels[c] if labels[c] else str(c + 1)
        name = f"{stem}:{label}" if multi else stem
        col_warnings = list(warnings)
        notes: list = []
        feats = find_features(wl, values[j], sampling_nm=measured_step, notes=notes)
        col_warnings += notes
        for f in feats:
            if f["kind"] == "notch" and f["fwhm"] < 3 * measured_step:
                col_warnings.append(f"notch at {f['center']:.1f} nm (FWHM {f['fwhm']:.1f} nm) spans fewer than "
                                    f"three {measured_step:g} nm sampling steps; its depth is uncertain")
        ex = [{**e, "values": [e["values"][j]]} for e in extra]
        if ex:
            col_warnings.append(extrapolation_text(ex))
        names.append(name)
        infos.append({"path": display, "file": str(path), "column": labels[c], "column_number": c + 1,
                      "units": table.column_units[c] if table.column_units else table.units,
                      "units_reason": table.column_reasons[c] if table.column_reasons else table.units_reason,
                      "warnings": col_warnings, "sha256": digest,
                      "range_nm": [float(table.wavelengths[0]), float(table.wavelengths[-1])],
                      "step_nm": measured_step, "extrapolated": ex, "features": feats,
                      "options": {k: v for k, v in (("units", ft.units), ("bandwidth", ft.bandwidth)) if v is not None}})
        if source_kind == "file":
            for w in col_warnings:
                _warnings.warn(InputWarning(f"{clip_text(path, 200)}" + (f" ({name})" if multi else "") + f": {w}"),
                               stacklevel=2)
    return FilterSet(tuple(names), np.clip(t, 0.0, 1.0), grid, (source_kind,) * len(names), tuple(infos))


def _bandpass_correct(wl, values, bandwidth, source):
    """Stearns & Stearns (1988) bandpass correction, with colour-science."""
    import colour

    from .grid import Grid, resample

    notes = []
    if not (0 < bandwidth <= 20):
        raise InputError(f"--bandwidth {bandwidth:g} nm is outside 0-20 nm", source=source)
    step = float(np.max(np.diff(wl)))
    if abs(step - bandwidth) > 0.1 * bandwidth or np.ptp(np.diff(wl)) > 1e-6:
        # The correction assumes a triangular bandpass equal to the sampling
        # interval, so resample to that interval first.
        g = Grid(float(wl[0]), float(wl[0] + bandwidth * math.floor((wl[-1] - wl[0]) / bandwidth)), bandwidth)
        values = np.atleast_2d(resample(wl, values.T, g, method="linear").T)
        wl = g.wavelengths
        notes.append(f"resampled to {bandwidth:g} nm steps for the bandwidth correction")
    corrected = np.empty_like(values)
    for j in range(values.shape[0]):  # loop over the file's columns (few), not wavelengths
        sd = colour.SpectralDistribution(values[j], wl)
        corrected[j] = colour.colorimetry.bandpass_correction_Stearns1988(sd).values
    notes.append(f"applied Stearns & Stearns bandpass correction for {bandwidth:g} nm")
    for j in range(values.shape[0]):
        for n in find_notches(wl, corrected[j]):
            if n["fwhm"] < 2 * bandwidth:
                notes.append(f"notch at {n['center']:.1f} nm (FWHM {n['fwhm']:.1f} nm) is narrower than twice "
                             f"the {bandwidth:g} nm bandwidth; its depth is uncertain")
    return wl, np.clip(corrected, 0.0, 1.0), notes


def parse_filter_spec(spec: str, grid: Grid = DEFAULT_GRID, *, units: str | None = None,
                      bandwidth: float | None = None) -> FilterSet:
    """Build the filters one spec string describes (see the module docstring).

    Raises
    ------
    cvdfilter.errors.InputError
        For an unknown name or kind, a bad parameter, an empty stack term, too
        many sweep members, or an unreadable file.
    """
    spec = spec.strip()
    if not spec:
        raise InputError("empty filter spec", hint="give a file, an example name or e.g. notch:center=575,fwhm=35,depth=0.8")
    whole = pathlib.Path(spec)
    terms = [spec] if whole.exists() and not whole.is_dir() else [t.strip() for t in spec.split("*")]
    if any(not t for t in terms):
        raise InputError("empty term in a stack ('*' with nothing on one side)", source=spec,
                         hint="stack filters as A*B, e.g. notch:center=575,fwhm=35,depth=0.8*nd:t=0.5")
    counts = [_parametric_count(t, spec) if _is_parametric(t) else 1 for t in terms]
    _check_members(math.prod(counts), spec, grid)  # before anything is built
    result: FilterSet | None = None
    for term in terms:
        part = _term(term, spec, grid, units, bandwidth)
        if result is not None:
            _check_members(len(result) * len(part), spec, grid)
        result = part if result is None else result.stack(part)
    return result


def _is_parametric(term: str) -> bool:
    kind = term.partition(":")[0].strip().lower()
    return kind in _KINDS and (":" in term or kind == "nd") and not pathlib.Path(term).exists() \
        and "@" not in term


def _term(term: str, spec: str, grid: Grid, units, bandwidth) -> FilterSet:
    kind = term.partition(":")[0].strip().lower()
    path = pathlib.Path(term)
    if path.is_dir():
        raise InputError("is a folder, not a filter file", source=term)
    ft = file_term(term)
    if ft is not None:
        if ft.example is not None:
            fs = _from_file(FileTerm(ft.path, ft.column, ft.units, ft.bandwidth, ft.example), grid, None, None,
                            "example", term)
            return fs
        return _from_file(ft, grid, units, bandwidth, "file", term)
    if kind in _KINDS and (":" in term or kind == "nd"):
        if "@" in term:
            raise InputError("'@' options apply to files, not to parametric filters", source=spec)
        return _parametric(term, spec, grid)
    looks_parametric = ":" in term and "=" in term.partition(":")[2] and re.fullmatch(r"[A-Za-z_-]+", kind)
    if not looks_parametric and (any(ch in term for ch in "/\\") or path.suffix):
        raise InputError("no such file", source=clip_text(term.partition("@")[0], 200))
    close = did_you_mean(kind if ":" in term else term, list(_KINDS) + example_names())
    raise InputError(f"unknown filter '{clip_text(term)}'" + (f"; {close}" if close else ""), source=spec,
                     hint="give a file path, an example name (cvdfilter list filters) or a spec such as "
                          "notch:center=575,fwhm=35,depth=0.8")


def _unique_names(fs: FilterSet) -> FilterSet:
    """Make names unique within a run (never merged).

    Files of the same stem in different folders get their folder in front (``batch1/lens``,
    ``batch2/lens``); any name still repeated gets ``#2``, ``#3``... on its second and later uses.
    """
    given = list(fs.names)
    groups: dict = {}
    for i, n in enumerate(given):
        groups.setdefault(n, []).append(i)
    for n, idx in groups.items():
        if len(idx) < 2:
            continue
        files = [fs.info[i].get("file") if i < len(fs.info) else None for i in idx]
        if all(files):
            parents = [pathlib.Path(f).resolve().parent.name for f in files]
            if len(set(parents)) == len(parents):
                for i, parent in zip(idx, parents):
                    given[i] = f"{parent}/{n}"
    seen: dict = {}
    names = []
    for n in given:
        k = seen.get(n, 0) + 1
        seen[n] = k
        names.append(n if k == 1 else f"{n} #{k}")
    taken = set(names)
    if len(taken) != len(names):  # a generated name collided with a given one: number every filter
        names = [f"{n} #{i + 1}" for i, n in enumerate(given)]
    if tuple(names) == fs.names:
        return fs
    return FilterSet(tuple(names), fs.transmittance, fs.grid, fs.sources, fs.info)


def load_filters(filters, *, grid: Grid = DEFAULT_GRID, units: str | None = None,
                 bandwidth: float | None = None) -> FilterSet:
    """Load filters from specs, paths, example names, colour-science spectra or arrays.

    Parameters
    ----------
    filters
        One item or a list of items. Each item is a spec string (or path or
        example name; a file term may select a column and set its own units:
        ``lenses.csv:"Lens A"``, ``lenses.csv:2``, ``lens.csv@units=od``), a
        ``colour.SpectralDistribution`` or ``colour.MultiSpectralDistributions``
        (values as fractions), a ``(wavelengths, transmittance)`` tuple, a
        :class:`FilterSet`, or an array already on ``grid`` of shape (n_wl,) or
        (n_filters, n_wl).
    grid
        The wavelength grid.
    units
        Units for every file that does not set its own (``fraction``,
        ``percent``, ``od``); default: the header's unit word, else the values
        when they allow only one reading, else an error asking for the units.
    bandwidth
        Instrument bandwidth in nm for files: apply the Stearns & Stearns correction.

    Returns
    -------
    FilterSet
        Names are unique within the call: a single-column file is named by its
        stem, a multi-column file ``stem:column``; same stems from different
        folders get the folder in front, other repeats ``#2``, ``#3``.

    Warns
    -----
    cvdfilter.errors.InputWarning
        For each file: extrapolation beyond its measured range, clipping, sorting.
    """
    from ..io.spectra_files import UNITS

    if units is not None and units not in UNITS:
        raise InputError(f"unknown units '{clip_text(units)}'", hint="use fraction, percent or od")
    if bandwidth is not None and not (0 < bandwidth <= 20):
        raise InputError(f"bandwidth {bandwidth:g} nm is outside 0-20 nm")
    if isinstance(filters, (str, pathlib.Path, FilterSet, tuple)) or _is_colour_sd(filters) or (
            isinstance(filters, np.ndarray)):
        filters = [filters]
    result: FilterSet | None = None
    for item in filters:
        fs = _load_one(item, grid, units, bandwidth)
        if result is not None:
            _check_members(len(result) + len(fs), "the filter list", grid)
        result = fs if result is None else result.concat(fs)
    if result is None:
        raise InputError("no filters given")
    return _unique_names(result)


def _is_colour_sd(obj) -> bool:
    return type(obj).__name__ in ("SpectralDistribution", "MultiSpectralDistributions")


def _load_one(item, grid, units, bandwidth) -> FilterSet:
    from .grid import resample

    if isinstance(item, FilterSet):
        if item.grid != grid:
            raise ValueError("FilterSet is on another grid")
        return item
    if isinstance(item, (str, pathlib.Path)):
        return parse_filter_spec(str(item), grid, units=units, bandwidth=bandwidth)
    if _is_colour_sd(item):
        values = np.asarray(item.values, dtype=float)
        values = values[:, None] if values.ndim == 1 else values
        t = resample(item.wavelengths, values, grid, method="linear").T
        labels = getattr(item, "labels", None) or [item.name] * values.shape[1]
        names = tuple(str(x) for x in labels)
        return FilterSet(names, np.clip(t, 0, 1), grid, ("array",) * len(names),
                         tuple({"spec": "colour-science spectral distribution"} for _ in names))
    if isinstance(item, tuple) and len(item) == 2:
        wl, vals = (np.asarray(x, dtype=float) for x in item)
        vals = vals.T if vals.ndim == 2 and vals.shape[0] != len(wl) else vals
        t = np.atleast_2d(resample(wl, vals, grid, method="linear").T)
        names = tuple(f"array:{i + 1}" for i in range(t.shape[0]))
        return FilterSet(names, np.clip(t, 0, 1), grid, ("array",) * len(names), tuple({} for _ in names))
    arr = np.atleast_2d(np.asarray(item, dtype=float))
    if arr.shape[1] != grid.size:
        raise ValueError(f"array filters must have {grid.size} columns (the grid), got {arr.shape}")
    if np.any(arr < 0) or np.any(arr > 1):
        raise ValueError("transmittance must be within 0-1")
    names = tuple(f"array:{i + 1}" for i in range(arr.shape[0]))
    return FilterSet(names, arr, grid, ("array",) * len(names), tuple({} for _ in names))


# --- feature finding ----------------------------------------------------------

#: Features shallower than this many noise standard deviations are noise (common practice: 5 sigma).
NOISE_SIGMAS = 5.0
#: Dips shallower than this (transmittance, absolute) are not even ripple (common practice).
RIPPLE_FLOOR = 0.01
#: At least this many small dips in a row make a ripple.
RIPPLE_MIN_COUNT = 3
#: Dips wider than this at half depth are a tint's broad absorption, not a notch (common practice: notch
#: filters for colour vision are tens of nm wide).
BROAD_DIP_NM = 100.0
#: A dip must lie more than the detection threshold below its baseline on at least this many samples to be
#: told from one bad sample.
MIN_SAMPLES_DEEP = 2


def noise_level(transmittance) -> float:
    """Standard deviation of sample-to-sample noise, from the second differences.

    For white noise of standard deviation s the second difference has standard
    deviation sqrt(6) s; the median absolute deviation (scaled by 1/0.6745 for a
    normal distribution) makes the estimate blind to a few sharp features
    (common practice in spectroscopy).
    """
    t = np.asarray(transmittance, dtype=float)
    if t.size < 5:
        return 0.0
    d2 = np.diff(t, 2)
    return float(np.median(np.abs(d2 - np.median(d2))) / 0.6745 / math.sqrt(6.0))


def _runs(t):
    change = np.flatnonzero(np.diff(t) != 0) + 1
    starts = np.r_[0, change]
    ends = np.r_[change, t.size] - 1
    return starts, ends


def _local_minima(t):
    """(first, last) index of every run of equal values lower than both neighbouring runs (or an end)."""
    starts, ends = _runs(t)
    vals = t[starts]
    left_higher = np.r_[True, vals[:-1] > vals[1:]]
    right_higher = np.r_[vals[1:] > vals[:-1], True]
    keep = left_higher & right_higher
    return list(zip(starts[keep].tolist(), ends[keep].tolist()))


def _crossing(wl, t, i, level, direction):
    """Wavelength where t first reaches ``level`` walking from index i (direction -1 or +1), or None.

    ``level`` is a scalar or an array over wavelengths (a sloping baseline).
    """
    lev = np.broadcast_to(np.asarray(level, dtype=float), t.shape)
    if direction < 0:
        seg = np.flatnonzero(t[:i + 1][::-1] >= lev[:i + 1][::-1])
        if seg.size == 0:
            return None
        j = i - int(seg[0])
        k = j + 1
    else:
        seg = np.flatnonzero(t[i:] >= lev[i:])
        if seg.size == 0:
            return None
        j = i + int(seg[0])
        k = j - 1
    if j == i:
        return float(wl[i])
    d_j, d_k = t[j] - lev[j], t[k] - lev[k]
    f = d_j / (d_j - d_k) if d_j != d_k else 0.0
    return float(wl[j] + f * (wl[k] - wl[j]))


def _baseline(wl, t, c, w):
    """Straight local baseline through the curve's median at c - 2w and c + 2w (bands w wide)."""
    anchors = []
    for side in (-1, 1):
        centre = c + side * 2 * w
        band = (wl >= centre - w / 2) & (wl <= centre + w / 2)
        if not band.any():
            edge = wl <= c - 1.5 * w if side < 0 else wl >= c + 1.5 * w
            band = edge
        if band.any():
            anchors.append((float(np.median(wl[band])), float(np.median(t[band]))))
    if not anchors:
        return None
    if len(anchors) == 1:
        return np.full(wl.shape, anchors[0][1])
    (x0, y0), (x1, y1) = anchors
    return y0 + (y1 - y0) * (wl - x0) / (x1 - x0)


def _notch(wl, t, a, b, thr, step):
    """Refine a dip (minimum run a..b) against its local baseline; dict, None, or {"ignored": why}."""
    i = (a + b) // 2
    tmin = float(t[a])
    lo_s = float(t[:a].max()) if a > 0 else tmin
    hi_s = float(t[b + 1:].max()) if b + 1 < t.size else tmin
    shoulder = min(lo_s, hi_s)
    level = np.full(t.shape, tmin + (shoulder - tmin) / 2)
    base = None
    for _ in range(8):
        lo = _crossing(wl, t, a, level, -1)
        hi = _crossing(wl, t, b, level, +1)
        if lo is None or hi is None or hi <= lo:
            return None
        new_base = _baseline(wl, t, (lo + hi) / 2, hi - lo)
        if new_base is None or (base is not None and np.allclose(new_base, base, atol=1e-7)):
            break
        base = new_base
        depth = float(base[i]) - tmin
        if depth < thr:
            return {"ignored": f"dip at {wl[i]:.1f} nm is {depth:.3f} deep against its local baseline"}
        level = base - depth / 2
    if base is not None:
        shoulder = float(base[i])
    base_line = base if base is not None else np.full(t.shape, shoulder)
    deep = int(np.sum((base_line - t) >= thr))
    if deep < MIN_SAMPLES_DEEP or (hi - lo) < step:
        return {"ignored": f"dip at {(lo + hi) / 2:.1f} nm lies on {deep} sample(s): narrower than the "
                           f"{step:g} nm sampling, taken as noise"}
    return {"kind": "notch", "center": float((lo + hi) / 2), "fwhm": float(hi - lo),
            "depth": float(1 - tmin / shoulder) if shoulder > 0 else 0.0,
            "depth_abs": float(shoulder - tmin), "baseline": shoulder, "min_transmittance": tmin,
            "fwhm_samples": float((hi - lo) / step)}


def _edge_feature(wl, t, a, b, top, direction):
    """A long-pass (direction +1: low at short wavelengths) or short-pass edge from the low run a..b."""
    tmin = float(t[a])
    i = b if direction > 0 else a
    half = _crossing(wl, t, i, tmin + 0.5 * (top - tmin), direction)
    p10 = _crossing(wl, t, i, tmin + 0.1 * (top - tmin), direction)
    p90 = _crossing(wl, t, i, tmin + 0.9 * (top - tmin), direction)
    if half is None:
        return None
    return {"kind": "edge", "direction": "long-pass" if direction > 0 else "short-pass", "center": half,
            "width": float(abs(p90 - p10)) if p10 is not None and p90 is not None else None,
            "low": tmin, "high": float(top)}


def find_features(wavelengths, transmittance, *, min_prominence: float = 0.05,
                  sampling_nm: float | None = None, notes: list | None = None) -> list[dict]:
    """Find and classify the features of one transmittance curve.

    Kinds:

    - ``notch``: a dip that rises back on both sides. Its FWHM is measured at
      half its depth below a straight *local* baseline through the curve at
      centre +- 2 FWHM (iterated), so a dip on a sloping tint gets its own
      width, not the width against its lower shoulder.
    - ``edge``: a dip that never rises back on one side: a ``long-pass``
      (low at short wavelengths) or ``short-pass`` edge, at its 50 % point
      between the low level and the plateau, with its 10-90 % width.
    - ``band-pass``: a long-pass edge followed by a short-pass edge; centre
      and FWHM between their 50 % points.
    - ``broad dip``: a dip wider than :data:`BROAD_DIP_NM` at half depth (a
      tint's absorption band rather than a notch).
    - ``ripple``: three or more dips deeper than the noise and
      :data:`RIPPLE_FLOOR` but shallower than ``min_prominence``.

    Dips shallower than ``max(min_prominence, NOISE_SIGMAS * noise_level)``
    are ignored, and so are dips with fewer than
    :data:`MIN_SAMPLES_DEEP` samples deeper than the threshold or narrower
    than the sampling (a single bad sample is not a notch).

    Parameters
    ----------
    wavelengths, transmittance
        nm and fraction 0-1, shape (n_pts,), wavelengths increasing.
    min_prominence
        Smallest depth (transmittance, absolute) of a notch or edge.
    sampling_nm
        The measurement's sampling interval (default: the median spacing).
    notes
        If given, a sentence per ignored dip is appended to it.

    Returns
    -------
    list of dict
        One per feature, sorted by wavelength, each with ``kind`` and ``center`` (nm).
    """
    wl = np.asarray(wavelengths, dtype=float)
    t = np.asarray(transmittance, dtype=float)
    if wl.size < 3:
        return []
    step = float(sampling_nm) if sampling_nm else float(np.median(np.diff(wl)))
    noise = noise_level(t)
    thr = max(min_prominence, NOISE_SIGMAS * noise)
    ripple_floor = max(RIPPLE_FLOOR, NOISE_SIGMAS * noise)
    tmax = float(t.max())
    features, small, ignored = [], [], []
    for a, b in _local_minima(t):
        tmin = float(t[a])
        left, right = t[:a], t[b + 1:]
        lower_l = np.flatnonzero(left <= tmin)  # ties: the leftmost of equal minima carries the feature
        lower_r = np.flatnonzero(right < tmin)
        l_open, r_open = lower_l.size == 0, lower_r.size == 0
        ls = tmax if l_open else float(left[lower_l[-1] + 1:].max())
        rs = tmax if r_open else float(right[:lower_r[0]].max())
        prom = min(ls, rs) - tmin
        if prom < ripple_floor:
            continue
        if prom < thr:
            small.append((wl[(a + b) // 2], prom))
            continue
        half = tmin + prom / 2
        rises_l = _crossing(wl, t, a, half, -1) is not None
        rises_r = _crossing(wl, t, b, half, +1) is not None
        if rises_l and rises_r:
            f = _notch(wl, t, a, b, thr, step)
            if f is None:
                continue
            if "ignored" in f:
                ignored.append(f["ignored"])
                continue
            features.append(f)
        elif rises_r:
            f = _edge_feature(wl, t, a, b, rs if not r_open else float(right.max()), +1)
            if f:
                features.append(f)
        elif rises_l:
            f = _edge_feature(wl, t, a, b, ls if not l_open else float(left.max()), -1)
            if f:
                features.append(f)
    features.sort(key=lambda f: f["center"])
    # a long-pass edge followed by a short-pass edge with nothing between is a band-pass
    out = []
    for f in features:
        if (f["kind"] == "edge" and f["direction"] == "short-pass" and out and out[-1]["kind"] == "edge"
                and out[-1]["direction"] == "long-pass" and out[-1]["center"] < f["center"]):
            lp = out.pop()
            inside = (wl >= lp["center"]) & (wl <= f["center"])
            out.append({"kind": "band-pass", "center": (lp["center"] + f["center"]) / 2,
                        "fwhm": f["center"] - lp["center"],
                        "peak_transmittance": float(t[inside].max()) if inside.any() else None,
                        "edges": [lp, f]})
        else:
            out.append(f)
    if len(small) >= RIPPLE_MIN_COUNT:
        xs = [x for x, _ in small]
        out.append({"kind": "ripple", "center": float((xs[0] + xs[-1]) / 2), "from_nm": float(xs[0]),
                    "to_nm": float(xs[-1]), "amplitude": float(max(p for _, p in small)), "count": len(small)})
        out.sort(key=lambda f: f["center"])
    for f in out:
        f["noise_level"] = noise
        if f["kind"] == "notch" and f["fwhm"] > BROAD_DIP_NM:
            f["kind"] = "broad dip"
    if notes is not None:
        notes.extend(ignored)
    return out


def find_notches(wavelengths, transmittance, *, min_prominence: float = 0.05,
                 sampling_nm: float | None = None) -> list[dict]:
    """The notches among :func:`find_features` (edges, band-passes and ripple left out).

    Returns
    -------
    list of dict
        ``center`` (nm), ``fwhm`` (nm, at half depth below the local baseline),
        ``depth`` (1 - T_min / T_baseline), ``min_transmittance``,
        ``fwhm_samples`` (width in sampling steps).
    """
    return [{k: f[k] for k in ("center", "fwhm", "depth", "min_transmittance", "fwhm_samples")}
            for f in find_features(wavelengths, transmittance, min_prominence=min_prominence,
                                   sampling_nm=sampling_nm) if f["kind"] == "notch"]


def filter_notches(fs: FilterSet) -> list[list[dict]]:
    """The notches of every filter of a set: from a file's measured samples when the filter is one file
    column (so its own sampling decides what is noise), else found on the grid.

    Returns one list per filter, as :func:`find_notches` does.
    """
    keys = ("center", "fwhm", "depth", "min_transmittance", "fwhm_samples")
    out = []
    for i in range(len(fs)):
        info = fs.info[i] if i < len(fs.info) else {}
        feats = info.get("features")
        if feats is None:
            out.append(find_notches(fs.wavelengths, fs.transmittance[i]))
        else:
            out.append([{k: f[k] for k in keys} for f in feats if f["kind"] == "notch"])
    return out
