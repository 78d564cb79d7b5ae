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
:func:`header_units`, :func:`possible_units`; the unit rules themselves live in
:mod:`cvdfilter.io.spectra_units`.
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
from .spectra_units import NOISE_TOLERANCE, OD_MAX, UNITS, header_units, possible_units, spd_values, to_fractions

__all__ = ["SpectraTable", "read_spectra", "parse_spectra_text", "header_units", "possible_units", "UNITS", "KINDS",
           "MAX_FILE_BYTES", "MAX_LINES", "MAX_COLUMNS", "MAX_CELLS", "OD_MAX"]

KINDS = ("transmittance", "reflectance", "spd")

#: The range every filter curve must cover: the photopic visible band where
#: cone fundamentals and V(lambda) carry nearly all their weight (common practice).
REQUIRED_RANGE = (400.0, 700.0)
#: Sampling coarser than this misses notch structure (common practice).
COARSE_STEP_NM = 10.0

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



def parse_spectra_text(text: str, source: str, *, kind: str = "transmittance",
                       units: str | None = None, units_given_by: str = "--units") -> SpectraTable:
    """Parse delimited text into a :class:`SpectraTable` (see :func:`read_spectra`)."""
    if kind not in KINDS:
        raise ValueError(f"kind must be one of {KINDS}, got {kind!r}")
    if units is not None and units not in UNITS:
        raise InputError(f"unknown units '{clip_text(units)}'", source=source, hint="use fraction, percent or od")
    rows, delim, header_cells = _data_rows(text, source)
    n_cols = len(_split(rows[0][1], delim))
    data = _cells(rows, delim, n_cols, source)
    warnings: list[str] = []
    line_numbers = np.array([n for n, _ in rows])
    stem = pathlib.Path(source).name
    labels: list = [None] * (n_cols - 1)
    if header_cells is not None and len(header_cells) == n_cols:
        labels = [h or None for h in header_cells[1:]]
    names = [lab if lab else (stem if n_cols == 2 else f"{stem}:{j + 1}") for j, lab in enumerate(labels)]
    wl, values = _checked_wavelengths(data[:, 0], data[:, 1:].T.copy(), line_numbers, source, warnings)
    if kind == "spd":
        out_units, reason = "relative", "spectral power distribution (relative)"
        col_units, col_reasons = [out_units] * values.shape[0], [reason] * values.shape[0]
        values = spd_values(values, source, warnings)
    else:
        values, col_units, col_reasons = to_fractions(values, wl, labels, kind, units, source, units_given_by,
                                                      warnings)
        distinct = list(dict.fromkeys(col_units))
        out_units = distinct[0] if len(distinct) == 1 else "mixed"
        reasons = list(dict.fromkeys(col_reasons))
        reason = reasons[0] if len(reasons) == 1 else "; ".join(
            f"column {j + 2}: {u} ({r})" for j, (u, r) in enumerate(zip(col_units, col_reasons)))
    return SpectraTable(source=source, wavelengths=wl, values=values, names=names, units=out_units,
                        units_reason=reason, warnings=warnings, labels=labels, column_units=list(col_units),
                        column_reasons=list(col_reasons))


def _data_rows(text: str, source: str) -> tuple[list[tuple[int, str]], str | None, list[str] | None]:
    """(line number, text) of the data rows, the delimiter and the header cells (None without a header),
    with the size limits checked before any cell is split out."""
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
    for j, h in enumerate(header_cells or []):
        if len(h) > MAX_HEADER_CHARS:
            raise InputError(f"header of column {j + 1} is {len(h):,} characters long "
                             f"(at most {MAX_HEADER_CHARS})", source=source, line=1)
    return rows, delim, header_cells


def _cells(rows: list[tuple[int, str]], delim: str | None, n_cols: int, source: str) -> np.ndarray:
    """Every cell as a finite number, (n_rows, n_cols); InputError naming the line and column otherwise."""
    decimal_comma = delim != ","
    data = np.empty((len(rows), n_cols))
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
    return data


def _checked_wavelengths(wl: np.ndarray, values: np.ndarray, line_numbers: np.ndarray, source: str,
                         warnings: list) -> tuple[np.ndarray, np.ndarray]:
    """Wavelengths sorted (with a warning), unique, in nm and covering :data:`REQUIRED_RANGE`; values to match."""
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
        warnings.append(f"sampling up to {step:g} nm is coarser than {COARSE_STEP_NM:g} nm; narrow notches may be "
                        "missed")
    return wl, values


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
