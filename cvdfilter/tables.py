"""Plain-text, Markdown and CSV tables shared by the scorecard, the report and the CLI.

Presentation only: no colour science here.

The one table writer of the package: the scorecard's views (:mod:`cvdfilter.scorecard_views`), the report
(:mod:`cvdfilter.reporting`) and the CLI (:mod:`cvdfilter.cli.common`) all lay out tables and cells here.

Public: :func:`text_table`, :func:`markdown_cell`, :func:`markdown_lines`, :func:`markdown_table`,
:func:`csv_text`, :func:`fixed`, :func:`yes_no`.
"""

from __future__ import annotations

import csv
import io
from collections.abc import Iterable, Sequence

__all__ = ["text_table", "markdown_cell", "markdown_lines", "markdown_table", "csv_text", "fixed", "yes_no"]


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


def fixed(x, digits: int) -> str:
    """A number with ``digits`` decimals (no ``-0.0``), or ``-`` for None.

    >>> fixed(-0.00004, 3), fixed(None, 1), fixed(2, 1)
    ('0.000', '-', '2.0')
    """
    return "-" if x is None else f"{round(float(x), digits) + 0.0:.{digits}f}"


def yes_no(b) -> str:
    """``yes``/``no`` for a verdict, ``-`` where there is none (None).

    >>> yes_no(True), yes_no(False), yes_no(None)
    ('yes', 'no', '-')
    """
    return "-" if b is None else ("yes" if b else "no")


def markdown_cell(v) -> str:
    """One Markdown table cell: ``|`` escaped, a line break as a space, None empty."""
    return ("" if v is None else str(v)).replace("|", "\\|").replace("\n", " ")


def markdown_lines(header: Sequence, rows: Iterable[Sequence]) -> list[str]:
    """A Markdown table as lines; ``|`` in a cell is escaped and a line break becomes a space."""
    lines = ["| " + " | ".join(markdown_cell(h) for h in header) + " |", "|" + "|".join("---" for _ in header) + "|"]
    lines += ["| " + " | ".join(markdown_cell(v) for v in r) + " |" for r in rows]
    return lines


def markdown_table(header: Sequence[str], rows: Iterable[Sequence]) -> str:
    """A Markdown table as text ending in a line break (see :func:`markdown_lines`)."""
    return "\n".join(markdown_lines(header, rows)) + "\n"


def csv_text(header: Sequence[str], rows: Iterable[Sequence]) -> str:
    """CSV text (``\\n`` line ends); None becomes an empty cell."""
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(header)
    for r in rows:
        w.writerow(["" if v is None else v for v in r])
    return buf.getvalue()
