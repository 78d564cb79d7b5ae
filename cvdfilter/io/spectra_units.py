"""Units of spectral files: the rules that decide them (given > header word > the one reading the values
allow > refuse) and the conversion to fractions 0-1.

Transmittance comes as ``fraction`` 0-1, ``percent`` 0-100 or ``od`` (optical
density / absorbance, T = 10^-OD); see :mod:`cvdfilter.io.spectra_files` for the
order in which the rules apply and docs/getting-started.md, "Units".

Public: :func:`header_units`, :func:`possible_units`, :func:`to_fractions`, :func:`spd_values`,
:data:`UNITS`, :data:`NOISE_TOLERANCE`, :data:`OD_MAX`.
"""

from __future__ import annotations

import re

import numpy as np

from ..errors import InputError, clip_text

__all__ = ["header_units", "possible_units", "to_fractions", "spd_values", "UNITS", "NOISE_TOLERANCE", "OD_MAX"]

UNITS = ("fraction", "percent", "od")
#: How far below 0 or above 1 a converted value may stray before it is an error
#: rather than instrument noise (common practice: a few percent).
NOISE_TOLERANCE = 0.05
#: Optical densities above this are beyond what bench spectrophotometers measure (common practice: about 6-8);
#: a column whose median exceeds it cannot be optical density.
OD_MAX = 10.0

_R_PERCENT = re.compile(r"%\s*r\b|\br\s*%|\br\s*[(\[]\s*%|reflect\w*\s*[(\[]?\s*(%|percent)")
_OD_WORDS = re.compile(r"\b(od|o\.\s?d\.?|abs\.?|absorbance|optical\s*density|density)(?![a-z])")
_PERCENT_WORDS = re.compile(r"%|\bpercent\b|\bpct\b")
_FRACTION_WORDS = re.compile(r"\bfraction\b|\(\s*0\s*-\s*1\s*\)|\b0\s*-\s*1\b|\b0\.\.1\b")


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
            readings = [names[p] for p in possible]
            options = ", ".join(readings[:-1]) + " or " + readings[-1]
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



def spd_values(values: np.ndarray, source: str, warnings: list) -> np.ndarray:
    """Relative spectral power: small negative values (noise) clipped to 0, large ones refused."""
    if np.any(values < 0):
        neg = int(np.sum(values < 0))
        scale = float(np.max(np.abs(values))) or 1.0
        if np.min(values) < -NOISE_TOLERANCE * scale:
            raise InputError("spectral power has large negative values", source=source,
                             hint="an SPD must be non-negative")
        values = np.clip(values, 0, None)
        warnings.append(f"clipped {neg} small negative values to 0 (instrument noise)")
    return values


def to_fractions(values: np.ndarray, wl: np.ndarray, labels: list, kind: str, units: str | None, source: str,
                 units_given_by: str, warnings: list) -> tuple[np.ndarray, list, list]:
    """Transmittance or reflectance columns (n_spectra, n_pts) as fractions 0-1: (values, units per column,
    the rule that decided each). Values beyond 0-1 by more than :data:`NOISE_TOLERANCE` are refused; within
    it they are clipped, with a warning."""
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
        for bad, k, where in ((np.min(col) < -NOISE_TOLERANCE, int(np.argmin(col)), "below 0"),
                              (np.max(col) > 1 + NOISE_TOLERANCE, int(np.argmax(col)), "above 1")):
            if bad:
                raise InputError(f"value {col[k]:.3g} at {wl[k]:g} nm is far {where} after reading as "
                                 f"{col_units[j]}", source=source, column=j + 2,
                                 hint="check the units (--units fraction|percent|od)")
    neg = int(np.sum(values < 0))
    if neg:
        warnings.append(f"clipped {neg} small negative values to 0 (instrument noise)")
    over = int(np.sum(values > 1))
    if over:
        warnings.append(f"clipped {over} values slightly above 1 to 1 (instrument noise)")
    return np.clip(values, 0.0, 1.0), col_units, col_reasons
