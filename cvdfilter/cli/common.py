"""Shared CLI plumbing: errors, output formats and atomic writes.

Only presentation lives here; nothing in the CLI computes colour.
"""

from __future__ import annotations

import json
import sys
import warnings
from collections.abc import Iterable

import typer

from ..errors import InputError
from ..tables import csv_text, markdown_table, text_table

__all__ = ["fail", "warn", "emit", "to_json", "table_text", "csv_text", "markdown_table", "FORMATS",
           "resolve_format", "file_options", "flush_warnings", "input_files", "UNITS_HELP", "BANDWIDTH_HELP",
           "FORMAT_SUFFIXES"]

FORMATS = ("table", "json", "csv", "markdown")
#: Output formats told by the -o file's extension (shared/CONVENTIONS.md: --format, else the extension).
FORMAT_SUFFIXES = {".json": "json", ".csv": "csv", ".md": "markdown", ".markdown": "markdown",
                   ".txt": "table", ".text": "table", ".parquet": "parquet"}

UNITS_HELP = ("Units of filter files that do not name them: fraction, percent or od (optical density). Default: "
              "the header's unit word, else the values if only one reading fits, else an error. Per file: "
              "FILE@units=od.")
BANDWIDTH_HELP = ("Instrument bandwidth of filter files, nm (0-20): apply the Stearns & Stearns correction. "
                  "Per file: FILE@bandwidth=2.")


def resolve_format(format: str | None, output: str | None, allowed=FORMATS, default: str = "table") -> str:
    """The output format: ``--format`` if given, else the ``-o`` file's extension, else ``default``.

    A ``--format`` that contradicts the extension (``--format json -o x.csv``) is refused (``.txt``
    takes any format),
    and so is an -o extension that names a format this command cannot write.
    """
    import pathlib

    if format is not None and format not in allowed:
        raise InputError(f"--format {format} is not one of {', '.join(allowed)}")
    told = FORMAT_SUFFIXES.get(pathlib.Path(output).suffix.lower()) if output else None
    if format is None:
        if told is None:
            return default
        if told not in allowed:
            raise InputError(f"cannot write {told} here", source=output, hint=f"use one of {', '.join(allowed)}")
        return told
    if told is not None and told != format and pathlib.Path(output).suffix.lower() not in (".txt", ".text"):
        raise InputError(f"--format {format} contradicts the file extension ({told})", source=output,
                         hint=f"drop --format, or name the file for {format}")
    return format


def file_options(filters, units: str | None, bandwidth: float | None):
    """Filter specs with --units/--bandwidth applied to every file term that does not set its own."""
    from ..io.spectra_files import UNITS
    from ..spectra.filters import with_file_options

    if units is not None and units not in UNITS:
        raise InputError(f"--units {units} is not one of {', '.join(UNITS)}")
    if bandwidth is not None and not (0 < bandwidth <= 20):
        raise InputError(f"--bandwidth {bandwidth:g} nm is outside 0-20 nm")
    return with_file_options(filters, units=units, bandwidth=bandwidth)


def input_files(filters) -> list[str]:
    """The files the filter specs read (outputs must never overwrite them)."""
    from ..spectra.filters import spec_paths

    items = [filters] if isinstance(filters, str) else list(filters or [])
    return [p for f in items for p in spec_paths(f)]


_PENDING: list = []


def _show_warning(message, category, filename, lineno, file=None, line=None):
    from ..errors import InputWarning

    if issubclass(category, InputWarning):
        text = f"cvdfilter: warning: {message}"
        if text not in _PENDING:
            _PENDING.append(text)
    else:
        _ORIGINAL_SHOWWARNING(message, category, filename, lineno, file, line)


def flush_warnings() -> None:
    """Print the input warnings collected so far (one line each); called when a command ends."""
    while _PENDING:
        typer.echo(_PENDING.pop(0), err=True)


# The command line prints input warnings (extrapolation, clipping) as one line each.
_ORIGINAL_SHOWWARNING = warnings.showwarning
warnings.showwarning = _show_warning


def fail(message: str | Exception, code: int = 2) -> None:
    """Print a one-line error to stderr and exit with ``code`` (2 = bad input)."""
    text = " ".join(str(message).split())
    _PENDING.clear()  # a failed command prints its one error line, not the warnings of inputs it never used
    typer.echo(f"cvdfilter: error: {text}", err=True)
    raise typer.Exit(code)


def warn(message: str) -> None:
    typer.echo(f"cvdfilter: warning: {message}", err=True)


def _jsonable(obj):
    import numpy as np

    if isinstance(obj, dict):
        return {str(k): _jsonable(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [_jsonable(v) for v in obj]
    if isinstance(obj, np.ndarray):
        return _jsonable(obj.tolist())
    if isinstance(obj, np.generic):
        return _jsonable(obj.item())
    if isinstance(obj, float) and obj != obj:  # NaN -> null
        return None
    return obj


def to_json(data) -> str:
    return json.dumps(_jsonable(data), indent=2, ensure_ascii=False, allow_nan=False) + "\n"


table_text = text_table  # the CLI's name for it


def emit(text: str, output: str | None, *, inputs: Iterable[str] = ()) -> None:
    """Write ``text`` to ``output`` atomically, or to stdout."""
    if output:
        from ..io.atomic import write_text

        write_text(output, text, inputs=inputs)
        typer.echo(f"wrote {output}", err=True)
    else:
        sys.stdout.write(text)
