"""Files in filter specs: bundled examples, file terms ``PATH[:COLUMN][@units=U,bandwidth=NM]``, loading.

A file term names a curve file (or a bundled example) with an optional column
and its own units and instrument bandwidth. Loading reads it with
:mod:`cvdfilter.io.spectra_files`, applies the Stearns & Stearns bandpass
correction when a bandwidth is given, resamples onto the grid (end values held
outside the measured range, said in a warning) and finds each column's features
on the measured samples.

Public: :class:`FileTerm`, :func:`file_term`, :func:`spec_paths`,
:func:`with_file_options`, :func:`from_file`, :func:`extrapolation_text`,
:func:`example_names`, :func:`example_path`, :data:`FILE_FORMS`, :data:`FILE_OPTIONS`.
"""

from __future__ import annotations

import math
import pathlib
from dataclasses import dataclass

import numpy as np

from ...errors import InputError, InputWarning, clip_text, did_you_mean
from ...io.checksum import file_sha256 as _sha256
from ..grid import Grid
from .features import find_features, find_notches
from .filter_set import FilterSet
from .shapes import is_parametric

__all__ = ["FileTerm", "file_term", "spec_paths", "with_file_options", "from_file", "extrapolation_text",
           "example_names", "example_path", "FILE_FORMS", "FILE_OPTIONS"]

#: How files are named in a spec, shown by ``cvdfilter list filters`` (docs/getting-started.md).
FILE_FORMS = {
    "PATH": "a curve file; every value column is a filter, named by the file stem (one column) or stem:column",
    "PATH:COLUMN": "one column by its header, e.g. 'lenses.csv:Lens A' or lenses.csv:\"Lens A\"",
    "PATH:N": "one column by number, counting value columns from 1 (the wavelength column is not counted)",
    "PATH@units=U": "this file's units: fraction, percent or od (overrides --units)",
    "PATH@bandwidth=NM": "this file's instrument bandwidth, nm (Stearns & Stearns correction)",
    "PATH:COLUMN@units=U,bandwidth=NM": "both together",
}

#: Options a file term takes after '@' (``lens.csv@units=od,bandwidth=2``).
FILE_OPTIONS = ("units", "bandwidth")


# --- bundled examples ---------------------------------------------------------

def _examples_dir() -> pathlib.Path:
    return pathlib.Path(__file__).resolve().parent.parent.parent / "data" / "examples"


def example_names() -> list[str]:
    """Names of the bundled (invented) example filters."""
    return sorted(p.stem for p in _examples_dir().glob("*.csv"))


def example_path(name: str) -> pathlib.Path:
    return _examples_dir() / f"{name}.csv"


# --- files: selection, options, loading ----------------------------------------

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
    from ...io.spectra_files import UNITS

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
    """(path, column, example name) if ``base`` names a file or example, possibly with ':COLUMN'.

    Finding which file a term names needs the file system (``a:b.csv`` may be a file or column ``b.csv`` of
    ``a``); whether a term is a file at all is decided before, by its form (:func:`~.shapes.is_parametric`).
    """
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
    if "@" in term:  # PATH@options; a file whose own name holds '@' is tried whole below
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
    out = []
    for term in str(spec).strip().split("*"):
        if is_parametric(term):
            continue
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
        terms = [t.strip() for t in str(spec).strip().split("*")]
        new_terms = []
        for term in terms:
            ft = file_term(term) if term and not is_parametric(term) else None
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


def from_file(ft: FileTerm, grid: Grid, units: str | None, bandwidth: float | None, source_kind: str,
               term: str) -> FilterSet:
    import warnings as _warnings

    from ...io.spectra_files import read_spectra
    from ..grid import resample

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
                      "options": {k: v for k, v in (("units", ft.units), ("bandwidth", ft.bandwidth))
                                  if v is not None}})
        if source_kind == "file":
            for w in col_warnings:
                _warnings.warn(InputWarning(f"{clip_text(path, 200)}" + (f" ({name})" if multi else "") + f": {w}"),
                               stacklevel=2)
    return FilterSet(tuple(names), np.clip(t, 0.0, 1.0), grid, (source_kind,) * len(names), tuple(infos))



def _bandpass_correct(wl, values, bandwidth, source):
    """Stearns & Stearns (1988) bandpass correction, with colour-science."""
    import colour

    from ..grid import Grid, resample

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

