"""Plain-text, Markdown and CSV tables shared by the scorecard, the report and the CLI.

Presentation only: no colour science here.

Public: :func:`text_table`, :func:`markdown_table`, :func:`csv_text`.
"""

from __future__ import annotations

import csv
import io
from collections.abc import Iterable, Sequence

__all__ = ["text_table", "markdown_table", "csv_text"]


def text_table(header: Sequence[str], rows: Iterable[Sequence], title: str | None = None,
               width: int = 100) -> str:
    """A plain-text table rendered with rich, at most ``width`` columns wide, no trailing blanks."""
    from rich.console import Console
    from rich.table import Table

    t = Table(title=title, box=None, header_style="bold", pad_edge=False, title_justify="left")
    for h in header:
        t.add_column(str(h), overflow="fold")
    for r in rows:
        t.add_row(*("" if v is None else str(v) for v in r))
    buf = io.StringIO()
    Console(file=buf, width=width, color_system=None, legacy_windows=False, emoji=False,
            highlight=False).print(t)
    return "\n".join(line.rstrip() for line in buf.getvalue().splitlines()) + "\n"


def markdown_table(header: Sequence[str], rows: Iterable[Sequence]) -> str:
    lines = ["| " + " | ".join(header) + " |", "|" + "|".join("---" for _ in header) + "|"]
    for r in rows:
        lines.append("| " + " | ".join("" if v is None else str(v) for v in r) + " |")
    return "\n".join(lines) + "\n"


def csv_text(header: Sequence[str], rows: Iterable[Sequence]) -> str:
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(header)
    for r in rows:
        w.writerow(["" if v is None else v for v in r])
    return buf.getvalue()
