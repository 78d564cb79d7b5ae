"""Read spectral curves from text files and IES TM-27-14 XML.

The files users bring from spectrophotometers: delimited text (comma, tab,
semicolon or whitespace), an optional header row, comment lines starting with
``#``, the first column wavelength in nm and one or more value columns, each a
spectrum named by its header (or ``file name:column index``). IES TM-27-14 XML
spectral files are read with colour-science.

Transmittance units are detected and can be overridden: ``fraction`` (0-1),
``percent`` (0-100) or ``od`` (optical density / absorbance, T = 10^-OD).

Every problem that makes a file unusable raises :class:`~cvdfilter.errors.InputError`
naming the file, line or column, and the fix. Problems the reader can mend are
returned as warnings.

Public: :class:`SpectraTable`, :func:`read_spectra`, :func:`parse_spectra_text`.
"""

from __future__ import annotations

import math
import pathlib
import re
from dataclasses import dataclass, field

import numpy as np

from ..errors import InputError

__all__ = ["SpectraTable", "read_spectra", "parse_spectra_text", "UNITS", "KINDS"]

UNITS = ("fraction", "percent", "od")
KINDS = ("transmittance", "reflectance", "spd")

#: The range every filter curve must cover: the photopic visible band where
#: cone fundamentals and V(lambda) carry nearly all their weight (common practice).
REQUIRED_RANGE = (400.0, 700.0)
#: How far below 0 or above 1 a converted value may stray before it is an error
#: rather than instrument noise (common practice: a few percent).
NOISE_TOLERANCE = 0.05
#: Sampling coarser than this misses notch structure (common practice).
COARSE_STEP_NM = 10.0

_DELIMS = ("\t", ";", ",")
_OD_WORDS = re.compile(r"\b(od|o\.d\.|absorbance|optical[ _-]?density|density)\b", re.I)
_PERCENT_WORDS = re.compile(r"(%|percent|pct)", re.I)
_FRACTION_WORDS = re.compile(r"\bfraction\b", re.I)


@dataclass
class SpectraTable:
    """Spectra as read from one file, before resampling onto the grid.

    Attributes
    ----------
    source : str
        The file path.
    wavelengths : numpy.ndarray
        Sample wavelengths, nm, shape (n_pts,), increasing.
    values : numpy.ndarray
        Shape (n_spectra, n_pts). Transmittance/reflectance as fractions 0-1
        after unit conversion; relative spectral power for ``kind="spd"``.
    names : list of str
        One name per spectrum.
    units : str
        ``fraction``, ``percent``, ``od`` (or ``relative`` for SPDs).
    units_reason : str
        Why those units were chosen (detected from the header, the values, or given).
    warnings : list of str
        Problems the reader mended (sorting, clipping) or things worth knowing.
    """

    source: str
    wavelengths: np.ndarray
    values: np.ndarray
    names: list[str]
    units: str
    units_reason: str
    warnings: list[str] = field(default_factory=list)

    @property
    def step(self) -> float:
        """Largest sampling interval, nm."""
        return float(np.max(np.diff(self.wavelengths)))


def _split(line: str, delim: str | None) -> list[str]:
    if delim is None:
        return line.split()
    return [c.strip() for c in line.split(delim)]


def _to_float(cell: str) -> float | None:
    try:
        return float(cell)
    except ValueError:
        return None


def _detect_delimiter(lines: list[str]) -> str | None:
    best, best_count = None, 0
    for d in _DELIMS:
        counts = [ln.count(d) for ln in lines[:50]]
        if counts and min(counts) > 0 and min(counts) >= best_count:
            if best is None or min(counts) > best_count:
                best, best_count = d, min(counts)
    if best == "," and all(";" in ln for ln in lines[:50]):
        best = ";"  # decimal commas with semicolon separators
    return best


def detect_units(values: np.ndarray, header: str) -> tuple[str, str]:
    """Guess the units of transmittance values; return (units, reason)."""
    if _OD_WORDS.search(header):
        return "od", "header names optical density/absorbance"
    if _PERCENT_WORDS.search(header):
        return "percent", "header names percent"
    if _FRACTION_WORDS.search(header):
        return "fraction", "header names fraction"
    finite = values[np.isfinite(values)]
    vmax = float(finite.max()) if finite.size else 0.0
    vmed = float(np.median(finite)) if finite.size else 0.0
    if vmax <= 1 + NOISE_TOLERANCE:
        return "fraction", f"all values at or below {vmax:.3g}"
    if vmax <= 8 and vmed < 1.0:
        return "od", f"values up to {vmax:.3g} with median {vmed:.3g} look like optical density"
    return "percent", f"values up to {vmax:.3g} look like percent"


def _convert(values: np.ndarray, units: str) -> np.ndarray:
    if units == "percent":
        return values / 100.0
    if units == "od":
        return np.power(10.0, -values)
    return values


def parse_spectra_text(text: str, source: str, *, kind: str = "transmittance",
                       units: str | None = None) -> SpectraTable:
    """Parse delimited text into a :class:`SpectraTable` (see :func:`read_spectra`)."""
    if kind not in KINDS:
        raise ValueError(f"kind must be one of {KINDS}, got {kind!r}")
    if units is not None and units not in UNITS:
        raise InputError(f"unknown units {units!r}", source=source, hint="use fraction, percent or od")
    rows: list[tuple[int, str]] = []
    for i, raw in enumerate(text.splitlines(), start=1):
        line = raw.strip().lstrip("\ufeff")
        if line and not line.startswith("#"):
            rows.append((i, line))
    if not rows:
        raise InputError("the file is empty (no data rows)", source=source,
                         hint="give a wavelength column in nm and one or more value columns")
    delim = _detect_delimiter([ln for _, ln in rows])
    header_cells: list[str] | None = None
    first_cells = _split(rows[0][1], delim)
    if _to_float(first_cells[0]) is None:
        header_cells = first_cells
        rows = rows[1:]
        if not rows:
            raise InputError("the file has a header but no data rows", source=source)
    n_cols = len(_split(rows[0][1], delim))
    if n_cols < 2:
        raise InputError("only one column found", source=source, line=rows[0][0],
                         hint="the first column is wavelength in nm, the others values")
    data = np.empty((len(rows), n_cols))
    line_numbers = np.array([n for n, _ in rows])
    for r, (lineno, line) in enumerate(rows):
        cells = _split(line, delim)
        if delim is not None and len(cells) > n_cols and all(c == "" for c in cells[n_cols:]):
            cells = cells[:n_cols]
        if len(cells) != n_cols:
            raise InputError(f"expected {n_cols} columns, found {len(cells)}", source=source, line=lineno,
                             hint="every row needs the same number of columns")
        for c, cell in enumerate(cells):
            v = _to_float(cell.replace(",", ".") if delim == ";" else cell)
            if v is None:
                raise InputError(f"non-numeric cell {cell[:20]!r}", source=source, line=lineno, column=c + 1,
                                 hint="cells must be numbers; put a '#' before comment lines")
            if not math.isfinite(v):
                raise InputError(f"{cell} is not a finite number", source=source, line=lineno, column=c + 1,
                                 hint="remove NaN/inf values or fill them with measurements")
            data[r, c] = v
    warnings: list[str] = []
    wl = data[:, 0]
    values = data[:, 1:].T.copy()
    stem = pathlib.Path(source).name
    if header_cells is not None and len(header_cells) == n_cols:
        names = [h or f"{stem}:{j + 1}" for j, h in enumerate(header_cells[1:])]
    else:
        names = [stem if n_cols == 2 else f"{stem}:{j + 1}" for j in range(n_cols - 1)]
    if len(wl) < 2:
        raise InputError("fewer than 2 data points", source=source, hint="a curve needs at least 2 wavelengths")
    order = np.argsort(wl, kind="stable")
    if np.any(np.diff(wl) < 0):
        warnings.append("wavelengths were not in increasing order; sorted them")
        wl, values, line_numbers = wl[order], values[:, order], line_numbers[order]
    dup = np.flatnonzero(np.diff(wl) == 0)
    if dup.size:
        a, b = sorted((int(line_numbers[dup[0]]), int(line_numbers[dup[0] + 1])))
        raise InputError(f"wavelength {wl[dup[0]]:g} nm appears twice (lines {a} and {b})", source=source,
                         line=b, hint="keep one row per wavelength")
    if wl[0] < 200 or wl[-1] > 2500:
        raise InputError(f"first column runs {wl[0]:g}-{wl[-1]:g}, not wavelengths in nm", source=source,
                         column=1, hint="the first column must be wavelength in nm (e.g. 380-780)")
    lo, hi = REQUIRED_RANGE
    if wl[0] > lo or wl[-1] < hi:
        missing = []
        if wl[0] > lo:
            missing.append(f"{lo:g}-{wl[0]:g} nm")
        if wl[-1] < hi:
            missing.append(f"{wl[-1]:g}-{hi:g} nm")
        raise InputError(f"covers {wl[0]:g}-{wl[-1]:g} nm; missing {' and '.join(missing)}", source=source,
                         hint=f"measure at least {lo:g}-{hi:g} nm")
    step = float(np.max(np.diff(wl)))
    if step > COARSE_STEP_NM:
        warnings.append(f"sampling up to {step:g} nm is coarser than {COARSE_STEP_NM:g} nm; narrow notches may be missed")

    header_text = " ".join(header_cells or [])
    if kind == "spd":
        out_units, reason = "relative", "spectral power distribution (relative)"
        if np.any(values < 0):
            neg = int(np.sum(values < 0))
            scale = float(np.max(np.abs(values))) or 1.0
            if np.min(values) < -NOISE_TOLERANCE * scale:
                raise InputError("spectral power has large negative values", source=source,
                                 hint="an SPD must be non-negative")
            values = np.clip(values, 0, None)
            warnings.append(f"clipped {neg} small negative values to 0 (instrument noise)")
    else:
        if units is None:
            out_units, reason = detect_units(values, header_text)
            if kind == "reflectance" and out_units == "od":
                out_units, reason = "percent", reason.replace("look like optical density", "look like percent")
        else:
            out_units, reason = units, "given by --units"
        values = _convert(values, out_units)
        for j, name in enumerate(names):
            col = values[j]
            if np.min(col) < -NOISE_TOLERANCE:
                k = int(np.argmin(col))
                raise InputError(f"value {col[k]:.3g} at {wl[k]:g} nm is far below 0 after reading as {out_units}",
                                 source=source, column=j + 2, hint="check the units (--units fraction|percent|od)")
            if np.max(col) > 1 + NOISE_TOLERANCE:
                k = int(np.argmax(col))
                raise InputError(f"value {col[k]:.3g} at {wl[k]:g} nm is far above 1 after reading as {out_units}",
                                 source=source, column=j + 2, hint="check the units (--units fraction|percent|od)")
        neg = int(np.sum(values < 0))
        if neg:
            warnings.append(f"clipped {neg} small negative values to 0 (instrument noise)")
        over = int(np.sum(values > 1))
        if over:
            warnings.append(f"clipped {over} values slightly above 1 to 1 (instrument noise)")
        values = np.clip(values, 0.0, 1.0)
    return SpectraTable(source=source, wavelengths=wl, values=values, names=names, units=out_units,
                        units_reason=reason, warnings=warnings)


def _read_tm2714(path: pathlib.Path, kind: str) -> SpectraTable:
    import colour

    try:
        sd = colour.SpectralDistribution_IESTM2714(str(path))
        sd.read()
    except Exception as exc:  # colour raises several types for malformed XML
        raise InputError(f"not a readable IES TM-27-14 file ({type(exc).__name__}: {exc})",
                         source=str(path)) from None
    text = "\n".join(f"{w},{v}" for w, v in zip(sd.wavelengths, sd.values))
    units = None
    if kind != "spd":
        header = str(getattr(sd, "spectral_quantity", "") or "")
        units = "percent" if float(np.max(sd.values)) > 1 + NOISE_TOLERANCE and "trans" in header.lower() else None
    table = parse_spectra_text(text, str(path), kind=kind, units=units)
    table.names = [getattr(sd.header, "description", None) or path.stem]
    return table


def read_spectra(path, *, kind: str = "transmittance", units: str | None = None) -> SpectraTable:
    """Read one spectra file.

    Parameters
    ----------
    path
        A delimited text file or an IES TM-27-14 ``.spdx``/``.xml`` file.
    kind
        ``"transmittance"`` (filters), ``"reflectance"`` (surfaces) or ``"spd"``
        (light sources, relative units kept as they are).
    units
        ``fraction``, ``percent`` or ``od`` to override detection.

    Returns
    -------
    SpectraTable
        Wavelengths in nm and values as fractions (or relative power).

    Raises
    ------
    cvdfilter.errors.InputError
        For a missing, empty, non-numeric or out-of-range file.
    """
    p = pathlib.Path(path)
    if not p.exists():
        raise InputError("no such file", source=str(p))
    if p.is_dir():
        raise InputError("is a folder, not a spectra file", source=str(p))
    raw = p.read_bytes()
    if b"\x00" in raw[:4096]:
        raise InputError("binary file, not delimited text or TM-27-14 XML", source=str(p))
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError:
        text = raw.decode("latin-1")
    head = text.lstrip()[:200].lower()
    if p.suffix.lower() in (".spdx", ".xml") or head.startswith("<?xml") or "<iestm2714" in head:
        return _read_tm2714(p, kind)
    return parse_spectra_text(text, str(p), kind=kind, units=units)
