"""``cvdfilter figure``: journal-ready figures (PDF, SVG, PNG)."""

from __future__ import annotations

from typing import List, Optional

import typer

from .common import BANDWIDTH_HELP, UNITS_HELP, fail, file_options, input_files

_KINDS_HELP = "spectrum, chromaticity, gains, hues, swatches, images, sweep, tasks or population"


def register(app: typer.Typer) -> None:
    @app.command("figure")
    def figure(
        kind: str = typer.Argument(..., help=f"Figure kind: {_KINDS_HELP}."),
        filters: List[str] = typer.Argument(..., help="Filter files, example names or specs (a sweep spec for "
                                                      "'sweep')."),
        output: str = typer.Option(..., "--output", "-o", help="Output file: .pdf, .svg or .png."),
        illuminant: str = typer.Option("D65", "--illuminant", help="Illuminant spec."),
        observer: Optional[List[str]] = typer.Option(None, "--observer",
                                                     help="Observer spec; repeat for several (default per kind)."),
        surfaces: Optional[str] = typer.Option(None, "--surfaces",
                                               help="ces99, chart24, tcs14, vs15 or a file (default per kind)."),
        adaptation: str = typer.Option("full", "--adaptation", help="full, none or a fraction 0-1 (von Kries)."),
        width: str = typer.Option("single", "--width", help="single (89 mm), double (183 mm) or a width in mm."),
        height: Optional[float] = typer.Option(None, "--height", help="Height in mm (default per kind)."),
        style: Optional[List[str]] = typer.Option(None, "--style",
                                                  help="Style file or KEY=VALUE[,KEY=VALUE] (font, font_size, "
                                                       "tick_size, title_size, caveat_size, line_width, "
                                                       "marker_size, or a matplotlib rcParam); repeatable."),
        dpi: float = typer.Option(300.0, "--dpi", help="PNG resolution (and of images inside PDF/SVG), dots per inch."),
        no_caveat: bool = typer.Option(False, "--no-caveat",
                                       help="Leave the caveat footnote off (put it in the caption instead)."),
        title: Optional[str] = typer.Option(None, "--title", help="Figure title; '' for none."),
        space: Optional[str] = typer.Option(None, "--space", help="chromaticity: mb (MacLeod-Boynton) or xy."),
        metric: Optional[List[str]] = typer.Option(None, "--metric",
                                                   help="sweep: a scorecard metric, e.g. red_green_gain, "
                                                        "luminous_transmittance; repeatable. population: one of "
                                                        "red_green_gain (default), blue_yellow_gain, "
                                                        "median_delta_s_ratio, discriminable_pairs.net, "
                                                        "confusion_pairs.net."),
        x: Optional[str] = typer.Option(None, "--x", help="sweep: the swept parameter on the x axis (e.g. center)."),
        image: Optional[str] = typer.Option(None, "--image", help="images: the image to render "
                                                                  "(default: the bundled synthetic scene)."),
        chart: Optional[str] = typer.Option(None, "--chart", help="hues: bar (default) or radial."),
        arrows: Optional[str] = typer.Option(None, "--arrows",
                                             help="chromaticity: auto (default: all up to 24 surfaces, else 24 "
                                                  "spread over the diagram), all, subset, mean or a number."),
        # --- the plotted numbers as CSV ------------------------------------------------------------
        data: Optional[str] = typer.Option(None, "--data",
                                           help="Also write the numbers the figure plots as CSV (tidy table, "
                                                "'#' comment lines for provenance), to re-plot in your own style."),
        # -- file reading: units and bandwidth of filter files --
        units: Optional[str] = typer.Option(None, "--units", help=UNITS_HELP),
        bandwidth: Optional[float] = typer.Option(None, "--bandwidth", help=BANDWIDTH_HELP),
    ) -> None:
        """Make one figure for a paper and write it as PDF, SVG or PNG.

        Vector files embed TrueType fonts (PDF) or keep text as text (SVG), and are byte-identical for
        identical inputs. Figures that show model predictions carry the caveat as a footnote.

        Example: cvdfilter figure spectrum larkhill-notch-575 --observer deuteranomalous -o spectrum.pdf

        Example: cvdfilter figure sweep "notch:center=540..600/5,fwhm=30,depth=0.8" --width double -o sweep.svg

        Example: cvdfilter figure hues larkhill-notch-575 -o hues.pdf --data hues.csv

        Example: cvdfilter figure population larkhill-notch-575 --observer deuteranomalous:n=200,seed=7 -o pop.pdf
        """
        options = {k: v for k, v in (("space", space), ("metrics", list(metric) if metric else None), ("x", x),
                                     ("image", image), ("chart", chart), ("arrows", arrows)) if v is not None}
        _make_figure(kind, filters, output, data=data, dpi=dpi, units=units, bandwidth=bandwidth, style=style,
                     image=image, options=options, illuminant=illuminant, observers=observer or None,
                     surfaces=surfaces, adaptation=adaptation, width=width, height=height, title=title,
                     caveat=not no_caveat)


def _make_figure(kind: str, filters, output: str, *, data, dpi: float, units, bandwidth, style, image,
                 options: dict, **figure_args) -> None:
    """Check the output names, make the figure, write it (and its data CSV); one line and exit 2 on bad input."""
    import pathlib

    from ..errors import InputError

    try:
        from ..figures import figure as make_figure
        from ..figures.output import format_of

        format_of(pathlib.Path(output), None)
        if data is not None:
            if not data.lower().endswith(".csv"):
                raise InputError(f"--data {data}: the data file is CSV", hint="end its name in .csv")
            if pathlib.Path(data).resolve() == pathlib.Path(output).resolve():
                raise InputError(f"--data {data} is the figure's own output file", hint="give another name")
        filter_specs = file_options(filters, units, bandwidth)  # file reading: --units/--bandwidth
        result = make_figure(kind, filter_specs, style=style or None, **figure_args, **options)
        inputs = input_files(filters)
        inputs += [p for p in (style or []) if pathlib.Path(p).exists()]
        if image:
            inputs.append(image)
        result.save(output, dpi=dpi, inputs=inputs)
        if data is not None:
            result.save_data(data, inputs=inputs)
    except InputError as exc:
        fail(exc)
    typer.echo(f"wrote {output}" + (f" and {data}" if data is not None else ""), err=True)
