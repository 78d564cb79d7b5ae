"""Read spectral curves from text files and IES TM-27-14 XML.

The files users bring from spectrophotometers: delimited text (comma, tab,
semicolon or whitespace; cells may be quoted as spreadsheets export them), an
optional header row, comment lines starting with ``#``, the first column
wavelength in nm and one or more value columns, each a spectrum named by its
header (or ``file name:column number``). IES TM-27-14 XML spectral files are
read with colour-science. Spreadsheet workbooks (.xlsx, .xls, .ods) are refused
with a request to export delimited text.

Units of transmittance (``fraction`` 0-1, ``percent`` 0-100 or ``od``, optical
density / absorbance, T = 10^-OD) are decided per value column, in this order
(docs/getting-started.md, "Units"):

1. ``units=`` given by the caller (``--units`` or ``FILE@units=...``);
2. a unit word in the column's header: ``A``, ``Abs``, ``Abs.``, ``Absorbance``,
   ``OD``, ``O.D.``, ``Optical density``, ``Density``, ``D`` mean optical
   density; ``%T``, ``T%``, ``T (%)``, ``Transmission [%]``, ``Transmittance (%)``,
   ``percent`` mean percent; ``fraction`` or ``(0-1)`` mean fraction; ``%R``,
   ``R%`` (percent reflectance) are refused in a filter file;
3. the values, but only when the range leaves exactly one reading possible
   (:func:`possible_units`); otherwise the file is refused with one line asking
   for ``--units``. A plain ``T`` or ``Transmittance`` names no unit.

Limits, checked before anything large is allocated: :data:`MAX_FILE_BYTES`,
:data:`MAX_LINES`, :data:`MAX_COLUMNS`, :data:`MAX_CELLS`; only regular files
are read (never a named pipe or a device).

Every problem that makes a file unusable raises :class:`~cvdfilter.errors.InputError`
naming the file, line or column, and the fix. Problems the reader can mend are
returned as warnings.

Public: :class:`SpectraTable`, :func:`read_spectra`, :func:`parse_spectra_text`,
:func:`header_units`, :func:`possible_units`.
"""

from __future__ import annotations

import math
import os
import pathlib
import re
import stat
from dataclasses import dataclass, field

import numpy as np

from ..errors import InputError, clip_text

__all__ = ["SpectraTable", "read_spectra", "parse_spectra_text", "header_units", "possible_units", "UNITS", "KINDS",
           "MAX_FILE_BYTES", "MAX_LINES", "MAX_COLUMNS", "MAX_CELLS", "OD_MAX"]

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
#: Optical densities above this are beyond what bench spectrophotometers measure (common practice: about 6-8);
#: a column whose median exceeds it cannot be optical density.
OD_MAX = 10.0

#: Largest spectra file read, bytes (32 MiB: a 0.1 nm scan with 1,000 columns is well under).
MAX_FILE_BYTES = 32 * 2**20
#: Most lines (data, header and comments) in a spectra file.
MAX_LINES = 200_000
#: Most columns (wavelength + values) in a spectra file.
MAX_COLUMNS = 1_000
#: Most numeric cells (rows x columns) in a spectra file.
MAX_CELLS = 4_000_000
#: Longest column header kept as a name.
MAX_HEADER_CHARS = 200

_SPREADSHEETS = (".xlsx", ".xlsm", ".xls", ".ods", ".numbers")
_DELIMS = ("\t", ";", ",")
_R_PERCENT = re.compile(r"%\s*r\b|\br\s*%|\br\s*[(\[]\s*%|reflect\w*\s*[(\[]?\s*(%|percent)")
_OD_WORDS = re.compile(r"\b(od|o\.\s?d\.?|abs\.?|absorbance|optical\s*density|density)(?![a-z])")
_PERCENT_WORDS = re.compile(r"%|\bpercent\b|\bpct\b")
_FRACTION_WORDS = re.compile(r"\bfraction\b|\(\s*0\s*-\s*1\s*\)|\b0\s*-\s*1\b|\b0\.\.1\b")


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
        One name per spectrum: the column header, else ``file name:column number``.
    units : str
        ``fraction``, ``percent``, ``od`` (``mixed`` when columns differ; ``relative`` for SPDs).
    units_reason : str
        Which rule decided the units (given, a header word, or the values' range).
    warnings : list of str
        Problems the reader mended (sorting, clipping) or things worth knowing.
    labels : list of str or None
        The column headers as written (None where a column has none).
    column_units, column_reasons : list of str
        Units and the deciding rule per value column.
    """

    source: str
    wavelengths: np.ndarray
    values: np.ndarray
    names: list[str]
    units: str
    units_reason: str
    warnings: list[str] = field(default_factory=list)
    labels: list = field(default_factory=list)
    column_units: list = field(default_factory=list)
    column_reasons: list = field(default_factory=list)

    @property
    def step(self) -> float:
        """Largest sampling interval, nm."""
        return float(np.max(np.diff(self.wavelengths)))


def _unquote(cell: str) -> str:
    c = cell.strip()
    if len(c) >= 2 and c[0] == c[-1] and c[0] in "\"'":
        c = c[1:-1].strip()
    return c


def _split(line: str, delim: str | None) -> list[str]:
    if delim is None:
        return [_unquote(c) for c in line.split()]
    if '"' in line:
        import csv

        return [c.strip() for c in next(csv.reader([line], delimiter=delim, skipinitialspace=True))]
    return [_unquote(c) for c in line.split(delim)]


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


def header_units(cell: str | None, *, kind: str = "transmittance", source: str | None = None,
                 column: int | None = None) -> tuple[str | None, str]:
    """The unit a column header names, if any: ``(units or None, reason)``.

    Optical density: ``A``, ``Abs``, ``Abs.``, ``Absorbance``, ``OD``, ``O.D.``,
    ``Optical density``, ``Density``, ``D``. Percent: ``%T``, ``T%``, ``T (%)``,
    ``Transmission [%]``, ``Transmittance (%)``, ``percent``. Fraction:
    ``fraction``, ``(0-1)``. Percent reflectance (``%R``, ``R%``) is refused in
    a transmittance file. A plain ``T`` or ``Transmittance`` names no unit.

    Examples
    --------
    >>> header_units("Abs")[0], header_units("Transmittance (%)")[0], header_units("T")[0]
    ('od', 'percent', None)
    """
    if not cell:
        return None, ""
    raw = str(cell).strip()
    c = re.sub(r"[_\s]+", " ", raw.lower())
    shown = clip_text(raw)
    if _R_PERCENT.search(c):
        if kind == "transmittance":
            raise InputError(f"column header '{shown}' names percent reflectance, but a filter file holds "
                             "transmittance", source=source, column=column,
                             hint="give a transmittance measurement (%T, T or OD), or use the file as --surfaces")
        return "percent", f"header '{shown}' names percent reflectance"
    found = []
    if c in ("a", "d") or _OD_WORDS.search(c):
        found.append("od")
    if _PERCENT_WORDS.search(c):
        found.append("percent")
    if _FRACTION_WORDS.search(c):
        found.append("fraction")
    if kind != "transmittance" and "od" in found:
        found.remove("od")
    if len(found) > 1:
        raise InputError(f"column header '{shown}' names both {found[0]} and {found[1]}", source=source,
                         column=column, hint="give one unit, or --units fraction|percent|od")
    if not found:
        return None, ""
    what = {"od": "optical density", "percent": "percent", "fraction": "fraction"}[found[0]]
    return found[0], f"header '{shown}' names {what}"


def possible_units(values: np.ndarray, kind: str = "transmittance") -> list[str]:
    """Which readings of these values are physically possible (transmittance or reflectance).

    ``fraction`` needs every value within 0-1, ``percent`` within 0-100 (each
    with :data:`NOISE_TOLERANCE`); ``od`` needs no negative density and a
    median at most :data:`OD_MAX` (single values above it may be an
    instrument's out-of-range markers, so they do not rule optical density out).
    Every value is checked.
    """
    if values.size == 0:
        return []
    vmin, vmax = float(values.min()), float(values.max())
    out = []
    tol = NOISE_TOLERANCE
    if vmin >= -tol and vmax <= 1 + tol:
        out.append("fraction")
    if vmin >= -100 * tol and vmax <= 100 * (1 + tol):
        out.append("percent")
    if kind == "transmittance" and vmin >= -tol and float(np.median(values)) <= OD_MAX:
        out.append("od")
    return out


def _range_text(values: np.ndarray) -> str:
    return f"values {float(values.min()):.3g} to {float(values.max()):.3g} (median {float(np.median(values)):.3g})"


def _decide_units(values: np.ndarray, header: list, kind: str, units: str | None, source: str,
                  how_given: str) -> tuple[list, list, list]:
    """Per column (units, reason); plus warnings. Raises InputError when the units are ambiguous."""
    n = values.shape[0]
    warnings: list[str] = []
    if units is not None:
        return [units] * n, [f"given ({how_given})"] * n, warnings
    col_units: list = [None] * n
    reasons: list = [""] * n
    for j in range(n):
        cell = header[j] if j < len(header) else None
        col_units[j], reasons[j] = header_units(cell, kind=kind, source=source, column=j + 2)
    open_cols = [j for j in range(n) if col_units[j] is None]
    if open_cols:
        v = values[open_cols]
        possible = possible_units(v, kind)
        which = "" if len(open_cols) == n else f"columns {', '.join(str(j + 2) for j in open_cols)}: "
        if kind == "reflectance" and possible[:1] == ["fraction"]:
            possible = ["fraction"]  # a surface set darker than 1 % everywhere is not a surface set
        if len(possible) == 1:
            reason = f"no unit word in the header; {_range_text(v)} fit only {possible[0]}"
        elif not possible:
            vmin, vmax = float(v.min()), float(v.max())
            if vmin < -100 * NOISE_TOLERANCE or (vmin < -NOISE_TOLERANCE and vmax <= 1 + NOISE_TOLERANCE):
                k = np.unravel_index(int(np.argmin(v)), v.shape)
                raise InputError(f"value {vmin:.3g} is far below 0 in any unit", source=source,
                                 column=open_cols[k[0]] + 2, hint="transmittance cannot be negative")
            raise InputError(f"{which}{_range_text(v)} fit no unit (fraction 0-1, percent 0-100, optical density)",
                             source=source, hint="check the file, or say the units with --units")
        else:
            names = {"fraction": "a fraction", "percent": "percent", "od": "optical density"}
            options = [names[p] for p in possible]
            options = ", ".join(options[:-1]) + " or " + options[-1]
            raise InputError(f"{which}{_range_text(v)} could be {options}, and the header names no unit",
                             source=source,
                             hint="say which with --units fraction|percent|od, FILE@units=..., or a header such as "
                                  "'%T', 'T (fraction)' or 'OD'")
        for j in open_cols:
            col_units[j], reasons[j] = possible[0], reason
    return col_units, reasons, warnings


def _convert(values: np.ndarray, units: str) -> np.ndarray:
    if units == "percent":
        return values / 100.0
    if units == "od":
        return np.power(10.0, -values)
    return values


def parse_spectra_text(text: str, source: str, *, kind: str = "transmittance",
                       units: str | None = None, units_given_by: str = "--units") -> SpectraTable:
    """Parse delimited text into a :class:`SpectraTable` (see :func:`read_spectra`)."""
    if kind not in KINDS:
        raise ValueError(f"kind must be one of {KINDS}, got {kind!r}")
    if units is not None and units not in UNITS:
        raise InputError(f"unknown units '{clip_text(units)}'", source=source, hint="use fraction, percent or od")
    n_lines = text.count("\n") + 1
    if n_lines > MAX_LINES:
        raise InputError(f"{n_lines} lines; at most {MAX_LINES:,} are read", source=source,
                         hint="a spectra file needs one row per wavelength; resample it or split it")
    rows: list[tuple[int, str]] = []
    for i, raw in enumerate(text.splitlines(), start=1):
        line = raw.strip().lstrip("\ufeff")
        if line and not line.startswith("#"):
            rows.append((i, line))
    if not rows:
        raise InputError("the file is empty (no data rows)", source=source,
                         hint="give a wavelength column in nm and one or more value columns")
    delim = _detect_delimiter([ln for _, ln in rows])
    widest = max(ln.count(delim) if delim else len(ln.split()) - 1 for _, ln in rows[:2]) + 1
    if widest > MAX_COLUMNS:  # before any cell is split out
        raise InputError(f"{widest} columns; at most {MAX_COLUMNS:,} are read", source=source, line=rows[0][0])
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
    if n_cols > MAX_COLUMNS:
        raise InputError(f"{n_cols} columns; at most {MAX_COLUMNS:,} are read", source=source, line=rows[0][0])
    if len(rows) * n_cols > MAX_CELLS:
        raise InputError(f"{len(rows)} rows x {n_cols} columns; at most {MAX_CELLS:,} cells are read",
                         source=source, hint="resample the file or split its columns")
    if header_cells is not None:
        for j, h in enumerate(header_cells):
            if len(h) > MAX_HEADER_CHARS:
                raise InputError(f"header of column {j + 1} is {len(h):,} characters long "
                                 f"(at most {MAX_HEADER_CHARS})", source=source, line=1)
    decimal_comma = delim != ","
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
            v = _to_float(cell)
            if v is None and decimal_comma and "," in cell:
                v = _to_float(cell.replace(",", "."))
            if v is None:
                raise InputError(f"non-numeric cell '{clip_text(cell)}'", source=source, line=lineno, column=c + 1,
                                 hint="cells must be numbers; put a '#' before comment lines")
            if not math.isfinite(v):
                raise InputError(f"'{clip_text(cell)}' is not a finite number", source=source, line=lineno,
                                 column=c + 1, hint="remove NaN/inf values or fill them with measurements")
            data[r, c] = v
    warnings: list[str] = []
    wl = data[:, 0]
    values = data[:, 1:].T.copy()
    stem = pathlib.Path(source).name
    labels: list = [None] * (n_cols - 1)
    if header_cells is not None and len(header_cells) == n_cols:
        labels = [h or None for h in header_cells[1:]]
    names = [lab if lab else (stem if n_cols == 2 else f"{stem}:{j + 1}") for j, lab in enumerate(labels)]
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

    if kind == "spd":
        out_units, reason = "relative", "spectral power distribution (relative)"
        col_units, col_reasons = [out_units] * values.shape[0], [reason] * values.shape[0]
        if np.any(values < 0):
            neg = int(np.sum(values < 0))
            scale = float(np.max(np.abs(values))) or 1.0
            if np.min(values) < -NOISE_TOLERANCE * scale:
                raise InputError("spectral power has large negative values", source=source,
                                 hint="an SPD must be non-negative")
            values = np.clip(values, 0, None)
            warnings.append(f"clipped {neg} small negative values to 0 (instrument noise)")
    else:
        col_units, col_reasons, notes = _decide_units(values, labels, kind, units, source, units_given_by)
        warnings += notes
        for j, u in enumerate(col_units):
            if u == "od" and float(values[j].max()) > OD_MAX:
                k = int(np.argmax(values[j]))
                warnings.append(f"column {j + 2}: optical density {values[j, k]:.3g} at {wl[k]:g} nm is beyond what "
                                f"spectrophotometers measure (about {OD_MAX:g}); read as no transmission")
            values[j] = _convert(values[j], u)
        for j in range(values.shape[0]):
            col = values[j]
            if np.min(col) < -NOISE_TOLERANCE:
                k = int(np.argmin(col))
                raise InputError(f"value {col[k]:.3g} at {wl[k]:g} nm is far below 0 after reading as "
                                 f"{col_units[j]}", source=source, column=j + 2,
                                 hint="check the units (--units fraction|percent|od)")
            if np.max(col) > 1 + NOISE_TOLERANCE:
                k = int(np.argmax(col))
                raise InputError(f"value {col[k]:.3g} at {wl[k]:g} nm is far above 1 after reading as "
                                 f"{col_units[j]}", source=source, column=j + 2,
                                 hint="check the units (--units fraction|percent|od)")
        neg = int(np.sum(values < 0))
        if neg:
            warnings.append(f"clipped {neg} small negative values to 0 (instrument noise)")
        over = int(np.sum(values > 1))
        if over:
            warnings.append(f"clipped {over} values slightly above 1 to 1 (instrument noise)")
        values = np.clip(values, 0.0, 1.0)
        distinct = list(dict.fromkeys(col_units))
        out_units = distinct[0] if len(distinct) == 1 else "mixed"
        reasons = list(dict.fromkeys(col_reasons))
        reason = reasons[0] if len(reasons) == 1 else "; ".join(
            f"column {j + 2}: {u} ({r})" for j, (u, r) in enumerate(zip(col_units, col_reasons)))
    return SpectraTable(source=source, wavelengths=wl, values=values, names=names, units=out_units,
                        units_reason=reason, warnings=warnings, labels=labels, column_units=list(col_units),
                        column_reasons=list(col_reasons))


def _read_tm2714(path: pathlib.Path, kind: str, units: str | None, given_by: str) -> SpectraTable:
    import colour

    try:
        sd = colour.SpectralDistribution_IESTM2714(str(path))
        sd.read()
        wavelengths = np.asarray(sd.wavelengths, dtype=float)
        values = np.asarray(sd.values, dtype=float)
    except Exception as exc:  # colour raises several types for malformed XML
        raise InputError(f"not a readable IES TM-27-14 file ({type(exc).__name__}: {clip_text(exc, 120)})",
                         source=str(path)) from None
    if wavelengths.size == 0 or values.size == 0:
        raise InputError("IES TM-27-14 file holds no spectral data", source=str(path),
                         hint="it needs SpectralData elements with wavelength and value")
    quantity = str(getattr(sd, "spectral_quantity", "") or "")
    if units is None and kind != "spd" and re.search(r"transmit|reflect", quantity, re.I) and \
            float(values.max()) <= 1 + NOISE_TOLERANCE:
        # TM-27-14 gives transmittance and reflectance as factors (0-1); other ranges go through the value rules.
        units, given_by = "fraction", f"TM-27-14 spectral quantity '{clip_text(quantity)}' is a factor 0-1"
    text = f"nm,{quantity.replace(',', ' ')}\n" + "\n".join(f"{w!r},{v!r}" for w, v in zip(wavelengths, values))
    table = parse_spectra_text(text, str(path), kind=kind, units=units, units_given_by=given_by)
    name = getattr(sd.header, "description", None) or path.stem
    table.names = [str(name)]
    table.labels = [str(name)]
    return table


def read_spectra(path, *, kind: str = "transmittance", units: str | None = None,
                 units_given_by: str = "--units") -> SpectraTable:
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
    units_given_by
        How the caller was told the units (shown in ``units_reason``).

    Returns
    -------
    SpectraTable
        Wavelengths in nm and values as fractions (or relative power).

    Raises
    ------
    cvdfilter.errors.InputError
        For a missing, empty, non-numeric, ambiguous, too large or out-of-range
        file, or one that is not a regular file (a folder, named pipe or device).
    """
    p = pathlib.Path(path)
    try:
        st = os.stat(p)
    except FileNotFoundError:
        raise InputError("no such file", source=str(p)) from None
    except OSError as exc:
        raise InputError(f"cannot read ({exc.strerror or type(exc).__name__})", source=str(p)) from None
    if stat.S_ISDIR(st.st_mode):
        raise InputError("is a folder, not a spectra file", source=str(p))
    if not stat.S_ISREG(st.st_mode):
        raise InputError("is not a regular file (a named pipe, socket or device); only files are read",
                         source=str(p))
    if p.suffix.lower() in _SPREADSHEETS:
        raise InputError(f"is a spreadsheet workbook ({p.suffix}); export the sheet as delimited text "
                         "(CSV or tab-separated) and give that file", source=str(p))
    if st.st_size > MAX_FILE_BYTES:
        raise InputError(f"is {st.st_size / 2**20:.0f} MiB; spectra files up to {MAX_FILE_BYTES // 2**20} MiB are read",
                         source=str(p), hint="a spectral curve needs one row per wavelength; resample or split it")
    try:
        with open(p, "rb") as fh:
            raw = fh.read(MAX_FILE_BYTES + 1)
    except OSError as exc:
        raise InputError(f"cannot read ({exc.strerror or type(exc).__name__})", source=str(p)) from None
    if len(raw) > MAX_FILE_BYTES:
        raise InputError(f"is larger than {MAX_FILE_BYTES // 2**20} MiB", source=str(p))
    if raw[:4] == b"PK\x03\x04" or raw[:8] == b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1":
        raise InputError("is a spreadsheet or archive, not text; export the sheet as delimited text "
                         "(CSV or tab-separated)", source=str(p))
    if b"\x00" in raw[:4096]:
        raise InputError("binary file, not delimited text or TM-27-14 XML", source=str(p))
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError:
        text = raw.decode("latin-1")
    head = text.lstrip()[:200].lower()
    if p.suffix.lower() in (".spdx", ".xml") or head.startswith("<?xml") or "<iestm2714" in head:
        return _read_tm2714(p, kind, units, units_given_by)
    return parse_spectra_text(text, str(p), kind=kind, units=units, units_given_by=units_given_by)
