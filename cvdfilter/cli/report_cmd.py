"""``cvdfilter report``: a self-contained HTML (or Markdown) report of a scorecard with its figures."""

from __future__ import annotations

from typing import List, Optional

import typer

from .common import BANDWIDTH_HELP, UNITS_HELP, fail, file_options


def register(app: typer.Typer) -> None:
    @app.command("report")
    def report(
        filters: List[str] = typer.Argument(..., help="Filter files, example names or specs."),
        output: str = typer.Option(..., "--output", "-o",
                                   help="report.html (one self-contained file) or report.md (figures in "
                                        "report_figures/ beside it)."),
        illuminant: str = typer.Option("D65", "--illuminant", help="Illuminant spec."),
        observer: Optional[List[str]] = typer.Option(
            None, "--observer", help="Observer spec; repeat for several (default: normal, protanomalous, "
                                     "deuteranomalous, protanope, deuteranope)."),
        surfaces: str = typer.Option("ces99", "--surfaces", help="ces99, chart24, tcs14, vs15 or a file."),
        adaptation: str = typer.Option("full", "--adaptation", help="full, none or a fraction 0-1 (von Kries)."),
        metrics: str = typer.Option("all", "--metrics", help="all, core or a comma-separated list of groups."),
        style: Optional[List[str]] = typer.Option(None, "--style",
                                                  help="Figure style file or KEY=VALUE[,KEY=VALUE]; repeatable."),
        # -- file reading: units and bandwidth of filter files --
        units: Optional[str] = typer.Option(None, "--units", help=UNITS_HELP),
        bandwidth: Optional[float] = typer.Option(None, "--bandwidth", help=BANDWIDTH_HELP),
    ) -> None:
        """Write a report: scorecard tables, figures, models and references, cautions, and every input and
        version needed to reproduce it (filters with SHA-256 checksums).

        The HTML file embeds its figures as SVG and makes no external requests.

        Example: cvdfilter report larkhill-notch-575 larkhill-double-notch -o report.html

        Example: cvdfilter report lens.csv --observer deuteranomalous --surfaces chart24 -o report.md

        A population observer (any spec plus n=N) adds a table of each metric's median member, the range
        of 95 % of the members and the share helped, and the population figure:
        cvdfilter report larkhill-notch-575 --observer normal --observer deuteranomalous:n=200,seed=7 -o report.html
        """
        import pathlib

        from ..errors import InputError

        if pathlib.Path(output).suffix.lower() not in (".html", ".htm", ".md"):
            fail(InputError(f"cannot tell the report format from '{pathlib.Path(output).name}'", source=output,
                            hint="end the file name in .html or .md"))
        try:
            from ..reporting import report as make_report

            filter_specs = file_options(filters, units, bandwidth)  # file reading: --units/--bandwidth
            result = make_report(filter_specs, illuminant=illuminant, observers=observer or None, surfaces=surfaces,
                                 adaptation=adaptation, metrics=metrics, style=style or None, output=output)
        except InputError as exc:
            fail(exc)
        for p in result.written:
            typer.echo(f"wrote {p}", err=True)
