"""Shared CLI plumbing: errors, output formats and atomic writes.

Only presentation lives here; nothing in the CLI computes colour.
"""

from __future__ import annotations

import csv
import io
import json
import sys
from collections.abc import Iterable, Sequence

import typer

from ..errors import InputError

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


def csv_text(header: Sequence[str], rows: Iterable[Sequence]) -> str:
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(header)
    for r in rows:
        w.writerow(["" if v is None else v for v in r])
    return buf.getvalue()


def markdown_table(header: Sequence[str], rows: Iterable[Sequence]) -> str:
    lines = ["| " + " | ".join(header) + " |", "|" + "|".join("---" for _ in header) + "|"]
    for r in rows:
        lines.append("| " + " | ".join("" if v is None else str(v) for v in r) + " |")
    return "\n".join(lines) + "\n"


def table_text(header: Sequence[str], rows: Iterable[Sequence], *, title: str | None = None,
               width: int = 100) -> str:
    """A plain-text table rendered with rich, at most ``width`` columns wide."""
    from rich.console import Console
    from rich.table import Table

    t = Table(title=title, box=None, header_style="bold", pad_edge=False, title_justify="left")
    for h in header:
        t.add_column(str(h), overflow="fold")
    for r in rows:
        t.add_row(*("" if v is None else str(v) for v in r))
    buf = io.StringIO()
    Console(file=buf, width=width, color_system=None, legacy_windows=False).print(t)
    return "\n".join(line.rstrip() for line in buf.getvalue().splitlines()) + "\n"


def emit(text: str, output: str | None, *, inputs: Iterable[str] = ()) -> None:
    """Write ``text`` to ``output`` atomically, or to stdout."""
    if output:
        from ..io.atomic import write_text

        write_text(output, text, inputs=inputs)
        typer.echo(f"wrote {output}", err=True)
    else:
        sys.stdout.write(text)
