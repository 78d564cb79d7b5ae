"""Filters: parametric transmittance curves, spec strings and loading.

A filter is a spectral transmittance T(lambda), a fraction 0-1 on the grid.
A :class:`FilterSet` holds many of them as one (n_filters, n_wl) array so that
every later computation is one matrix product.

Spec strings (shared/CONVENTIONS.md, section 4)::

    notch:center=575,fwhm=35,depth=0.8          Gaussian notch in transmittance
    notch:center=575,fwhm=35,od=2               Gaussian notch in optical density
    notch:center=575,fwhm=35,depth=0.9,shape=flat[,order=4]   flat-top (super-Gaussian)
    nd:t=0.5   or   nd:od=0.3                    neutral density
    longpass:edge=500,width=10                   edge at 50 %, width 10-90 %
    shortpass:edge=650,width=10
    PATH or example name                         a file or a bundled example
    A*B                                          stack: the product of A and B
    notch:center=540..600/5,fwhm=30,depth=0.8    a sweep: one filter per value

Public: :class:`FilterSet`, :func:`gaussian_notch`, :func:`flat_notch`,
:func:`longpass`, :func:`shortpass`, :func:`neutral_density`,
:func:`parse_filter_spec`, :func:`load_filters`, :func:`find_notches`,
:func:`example_names`, :data:`SPEC_FORMS`.
"""

from __future__ import annotations

import hashlib
import itertools
import math
import pathlib
from dataclasses import dataclass, field

import numpy as np

from ..errors import InputError
from .grid import DEFAULT_GRID, Grid

__all__ = [
    "FilterSet", "gaussian_notch", "flat_notch", "longpass", "shortpass", "neutral_density",
    "parse_filter_spec", "load_filters", "find_notches", "example_names", "example_path", "SPEC_FORMS",
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

_LN2 = math.log(2.0)
_MAX_SWEEP = 1_000_000


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


def _parse_value(text: str, key: str, spec: str) -> np.ndarray:
    try:
        if ".." in text:
            lo, rest = text.split("..", 1)
            hi, _, step = rest.partition("/")
            lo_f, hi_f = float(lo), float(hi)
            step_f = float(step) if step else (hi_f - lo_f)
            if step_f <= 0 or hi_f < lo_f:
                raise ValueError
            n = int(math.floor((hi_f - lo_f) / step_f + 1e-9)) + 1
            if n > _MAX_SWEEP:
                raise InputError(f"sweep {key}={text} gives {n} values", source=spec,
                                 hint=f"at most {_MAX_SWEEP}")
            return np.round(lo_f + step_f * np.arange(n), 10)
        return np.array([float(text)])
    except ValueError:
        raise InputError(f"{key}={text} is not a number or a START..STOP/STEP range", source=spec) from None


def _fmt(v: float) -> str:
    return f"{v:.6g}"


def _parametric(term: str, spec: str, grid: Grid) -> FilterSet:
    kind, _, rest = term.partition(":")
    kind = kind.strip().lower()
    required, optional = _KINDS[kind]
    params: dict[str, np.ndarray] = {}
    words: dict[str, str] = {}
    for part in filter(None, (p.strip() for p in rest.split(","))):
        key, eq, val = part.partition("=")
        key = key.strip().lower()
        if not eq:
            raise InputError(f"'{part}' is not key=value", source=spec, hint=SPEC_FORMS[kind])
        if key not in required | optional:
            raise InputError(f"unknown parameter '{key}' for {kind}", source=spec, hint=SPEC_FORMS[kind])
        if key == "shape":
            if val.strip() not in ("gauss", "flat"):
                raise InputError(f"shape must be gauss or flat, got {val!r}", source=spec)
            words[key] = val.strip()
            continue
        params[key] = _parse_value(val.strip(), key, spec)
    missing = required - params.keys()
    if missing:
        raise InputError(f"{kind} needs {', '.join(sorted(missing))}", source=spec, hint=SPEC_FORMS[kind])
    if kind in ("notch", "nd"):
        strength = {"depth", "od"} if kind == "notch" else {"t", "od"}
        given = strength & params.keys()
        if len(given) != 1:
            raise InputError(f"{kind} needs exactly one of {' or '.join(sorted(strength))}", source=spec,
                             hint=SPEC_FORMS[kind])
    keys = sorted(params)
    combos = np.array(list(itertools.product(*(params[k] for k in keys))), dtype=float).reshape(-1, len(keys))
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
    info = tuple({"spec": n} for n in names)
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


# --- loading ------------------------------------------------------------------

def _sha256(path: pathlib.Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


def _narrow_feature_warnings(wl, values, names) -> list[str]:
    """Warnings for features spanning fewer than three samples (find_notches on each curve).

    The warnings are remembered in memory (never on disk: they are results on
    a user's data) by the curves' content, so reading a file again in the same
    process does not repeat the work.
    """
    from .cache import memo_arrays

    def build():
        notes = []
        for j, name in enumerate(names):
            for n in find_notches(wl, values[j]):
                if n["fwhm_samples"] < 3:
                    notes.append(f"{name}: feature at {n['center']:.1f} nm spans fewer than three sampling steps")
        return {"notes": np.array(notes, dtype=str)}

    wl = np.ascontiguousarray(wl, dtype=float)
    values = np.ascontiguousarray(values, dtype=float)
    key = hashlib.sha1(wl.tobytes() + values.tobytes() + "\x00".join(names).encode()).hexdigest()
    return [str(x) for x in memo_arrays(f"narrow-features-{key}", build)["notes"]]


def _from_file(path: pathlib.Path, grid: Grid, units: str | None, bandwidth: float | None,
               source_kind: str) -> FilterSet:
    from ..io.spectra_files import read_spectra
    from .grid import resample

    table = read_spectra(path, kind="transmittance", units=units)
    warnings = list(table.warnings)
    wl, values = table.wavelengths, table.values
    if bandwidth is not None:
        wl, values, bw_notes = _bandpass_correct(wl, values, bandwidth, str(path))
        warnings += bw_notes
    warnings += _narrow_feature_warnings(wl, values, table.names)
    t = resample(wl, values.T, grid, method="linear", outside="edge").T
    digest = _sha256(path)
    names = tuple(table.names) if source_kind == "file" else tuple(
        path.stem if len(table.names) == 1 else f"{path.stem}:{n}" for n in table.names)
    info = tuple({"path": str(path), "column": n, "units": table.units, "units_reason": table.units_reason,
                  "warnings": warnings, "sha256": digest, "range_nm": [float(wl[0]), float(wl[-1])],
                  "step_nm": float(np.max(np.diff(table.wavelengths)))} for n in table.names)
    return FilterSet(names, np.clip(t, 0.0, 1.0), grid, (source_kind,) * len(names), info)


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
        values = resample(wl, values.T, g, method="linear").T
        wl = g.wavelengths
        notes.append(f"resampled to {bandwidth:g} nm steps for the bandwidth correction")
    corrected = np.empty_like(values)
    for j in range(values.shape[0]):
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
        For an unknown name or kind, a bad parameter, or an unreadable file.
    """
    spec = spec.strip()
    if not spec:
        raise InputError("empty filter spec", hint="give a file, an example name or e.g. notch:center=575,fwhm=35,depth=0.8")
    whole = pathlib.Path(spec)
    terms = [spec] if whole.exists() else [t.strip() for t in spec.split("*")]
    result: FilterSet | None = None
    for term in terms:
        part = _term(term, spec, grid, units, bandwidth)
        result = part if result is None else result.stack(part)
    return result


def _term(term: str, spec: str, grid: Grid, units, bandwidth) -> FilterSet:
    path = pathlib.Path(term)
    kind = term.partition(":")[0].strip().lower()
    if path.exists():
        return _from_file(path, grid, units, bandwidth, "file")
    if term in example_names():
        fs = _from_file(example_path(term), grid, None, None, "example")
        return FilterSet(fs.names, fs.transmittance, grid, fs.sources,
                         tuple({**i, "path": f"example:{term}"} for i in fs.info))
    if kind in _KINDS and (":" in term or kind == "nd"):
        return _parametric(term, spec, grid)
    if any(ch in term for ch in "/\\") or path.suffix:
        raise InputError("no such file", source=term)
    raise InputError(f"unknown filter '{term}'", source=spec,
                     hint="give a file path, an example name (cvdfilter list filters) or a spec such as "
                          "notch:center=575,fwhm=35,depth=0.8")


def load_filters(filters, *, grid: Grid = DEFAULT_GRID, units: str | None = None,
                 bandwidth: float | None = None) -> FilterSet:
    """Load filters from specs, paths, example names, colour-science spectra or arrays.

    Parameters
    ----------
    filters
        One item or a list of items. Each item is a spec string (or path or
        example name), a ``colour.SpectralDistribution`` or
        ``colour.MultiSpectralDistributions`` (values as fractions), a
        ``(wavelengths, transmittance)`` tuple, a :class:`FilterSet`, or an
        array already on ``grid`` of shape (n_wl,) or (n_filters, n_wl).
    grid
        The wavelength grid.
    units
        Override unit detection for files (``fraction``, ``percent``, ``od``).
    bandwidth
        Instrument bandwidth in nm for files: apply the Stearns & Stearns correction.

    Returns
    -------
    FilterSet
    """
    from ..io.spectra_files import UNITS

    if units is not None and units not in UNITS:
        raise InputError(f"unknown units '{units}'", hint="use fraction, percent or od")
    if bandwidth is not None and not (0 < bandwidth <= 20):
        raise InputError(f"bandwidth {bandwidth:g} nm is outside 0-20 nm")
    if isinstance(filters, (str, pathlib.Path, FilterSet, tuple)) or _is_colour_sd(filters) or (
            isinstance(filters, np.ndarray)):
        filters = [filters]
    result: FilterSet | None = None
    for item in filters:
        fs = _load_one(item, grid, units, bandwidth)
        result = fs if result is None else result.concat(fs)
    if result is None:
        raise InputError("no filters given")
    return result


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


# --- notch detection ----------------------------------------------------------

def find_notches(wavelengths, transmittance, *, min_prominence: float = 0.05) -> list[dict]:
    """Find notches (local transmittance minima) in one curve.

    A notch is a minimum at least ``min_prominence`` below the lower of its two
    shoulders (scipy.signal.find_peaks on -T). Its FWHM is measured at half
    its prominence (scipy.signal.peak_widths).

    Returns
    -------
    list of dict
        ``center`` (nm), ``fwhm`` (nm), ``depth`` (1 - T_min / T_shoulder),
        ``min_transmittance``, ``fwhm_samples`` (width in samples).
    """
    from scipy.signal import find_peaks, peak_widths

    wl = np.asarray(wavelengths, dtype=float)
    t = np.asarray(transmittance, dtype=float)
    padded = np.concatenate([[t.max()], t, [t.max()]])  # lets edge minima count only if they rise again
    peaks, props = find_peaks(-padded, prominence=min_prominence)
    if peaks.size == 0:
        return []
    widths, _, left, right = peak_widths(-padded, peaks, rel_height=0.5)
    idx = np.arange(len(wl))
    out = []
    for k, p in enumerate(peaks):
        i = p - 1
        if i <= 0 or i >= len(wl) - 1:
            continue
        lo = np.interp(left[k] - 1, idx, wl)
        hi = np.interp(right[k] - 1, idx, wl)
        shoulder = t[i] + props["prominences"][k]
        # The centre is the midpoint of the half-depth crossings: robust for
        # flat-floored notches whose minimum sample sits anywhere on the floor.
        if out and abs(out[-1]["center"] - (lo + hi) / 2) < 1e-6 and abs(out[-1]["fwhm"] - (hi - lo)) < 1e-6:
            continue  # two samples of one flat floor reported as two minima
        out.append({"center": float((lo + hi) / 2), "fwhm": float(hi - lo),
                    "depth": float(1 - t[i] / shoulder) if shoulder > 0 else 0.0,
                    "min_transmittance": float(t[i]), "fwhm_samples": float(widths[k])})
    return out
