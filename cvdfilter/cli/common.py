"""Shared CLI plumbing: errors, output formats and atomic writes.

Only presentation lives here; nothing in the CLI computes colour.
"""

from __future__ import annotations

import json
import sys
from collections.abc import Iterable, Sequence

import typer

from ..errors import InputError
from ..tables import csv_text, markdown_table, text_table

__all__ = ["fail", "warn", "emit", "to_json", "table_text", "csv_text", "markdown_table", "FORMATS"]

FORMATS = ("table", "json", "csv", "markdown")


def fail(message: str | Exception, code: int = 2) -> None:
    """Print a one-line error to stderr and exit with ``code`` (2 = bad input)."""
    text = " ".join(str(message).split())
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
