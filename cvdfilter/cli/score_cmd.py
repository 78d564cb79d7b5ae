"""``cvdfilter score``: the scorecard of one or many filters (a thin shell over ``cvdfilter.score``)."""

from __future__ import annotations

import time
from typing import List, Optional

import typer

from ..execution import SCHEDULER_HELP
from .common import BANDWIDTH_HELP, FORMATS, UNITS_HELP, emit, fail, file_options, input_files, resolve_format

#: Show a progress bar only once the work has taken this long (seconds).
_PROGRESS_AFTER_S = 1.0


class _LazyProgress:
    """A rich progress bar on stderr that appears only when the work takes more than about a second."""

    def __init__(self) -> None:
        self.start = time.perf_counter()
        self.bar = None
        self.tasks: dict = {}

    def __call__(self, stage: str, done: int, total: int) -> None:
        if self.bar is None:
            if time.perf_counter() - self.start < _PROGRESS_AFTER_S or done >= total:
                return
            from rich.console import Console
            from rich.progress import BarColumn, MofNCompleteColumn, Progress, TextColumn, TimeRemainingColumn

            self.bar = Progress(TextColumn("{task.description}"), BarColumn(), MofNCompleteColumn(),
                                TimeRemainingColumn(), console=Console(stderr=True), transient=True)
            self.bar.start()
        if stage not in self.tasks:
            label = {"filters": "scoring filters", "rendition": "colour rendition",
                     "members": "population members"}.get(stage, stage)
            self.tasks[stage] = self.bar.add_task(label, total=total)
        self.bar.update(self.tasks[stage], completed=done)

    def close(self) -> None:
        if self.bar is not None:
            self.bar.stop()


# -- the options (help texts are part of the interface: other tools read them) ------------------------------
_FILTERS = typer.Argument(..., help="Filter files (every column is a filter), bundled example "
                                    "names or specs, e.g. notch:center=540..600/5,fwhm=30,depth=0.8")
_OPT = {
    "illuminant": typer.Option("D65", "--illuminant", help="The light the surfaces are seen in "
                                                           "(cvdfilter list illuminants)."),
    "observer": typer.Option(None, "--observer", help=(
        "Observer spec; repeat for several. Default: normal, protanomalous, deuteranomalous, "
        "protanope, deuteranope.")),
    "surfaces": typer.Option("ces99", "--surfaces", help="ces99, chart24, tcs14, vs15, munsell "
                                                         "or a reflectance file."),
    "adaptation": typer.Option("full", "--adaptation", help="full, none or a degree 0-1 of von Kries "
                                                            "adaptation to the filtered light."),
    # -- file reading and output format (units/bandwidth per file or for all; format from -o) --
    "format": typer.Option(None, "--format", "-f", help=(
        "table, json, csv or markdown (default: from the -o extension .json/.csv/.md, else table).")),
    "output": typer.Option(None, "--output", "-o", help="Write to this file instead of stdout."),
    "units": typer.Option(None, "--units", help=UNITS_HELP),
    "bandwidth": typer.Option(None, "--bandwidth", help=BANDWIDTH_HELP),
    # -- end of file reading and output format --
    "metrics": typer.Option("all", "--metrics", help="all, core (no colour rendition: fast for sweeps) "
                                                     "or a comma-separated list of photometry, road_use, "
                                                     "rendition, contrast, discrimination, confusion, "
                                                     "discernible (only when named, e.g. core,discernible)."),
    "signal_spectra": typer.Option(None, "--signal-spectra", help=(
        "Measured signal-light spectra: first column nm, value columns named red, yellow (or amber), "
        "green, blue. They replace the modelled lights of those colours.")),
    # -- model constants, thresholds and sensitivity (kept together in one block) --
    "weber_fraction": typer.Option(0.02, "--weber-fraction", help=(
        "Weber fraction of the normal L-cone channel in the receptor-noise model.")),
    "cone_ratios": typer.Option("10:5:1", "--cone-ratios", help=(
        "Relative L:M:S cone numbers of the receptor-noise model.")),
    "jnd_threshold": typer.Option(1.0, "--jnd-threshold", help=(
        "Delta S (JND) used for the pair counts: discriminable at or above it; confused when the normal "
        "observer is at or above it and the deficient observer below it.")),
    "signal_limits": typer.Option(None, "--signal-limits", help=(
        "Signal-quotient limits: a reading (guidance: red/yellow 0.8, green/blue 0.6, the default; "
        "blue-0.4) or colour=value pairs, e.g. red=0.8,yellow=0.8,green=0.6,blue=0.4.")),
    "sensitivity": typer.Option(False, "--sensitivity", help=(
        "Also show how each verdict changes when the Weber fraction, cone ratios, JND thresholds and "
        "signal-quotient limits vary over a documented range (docs/metrics.md).")),
    "members": typer.Option(False, "--members", help=(
        "With population observers (a spec plus n=N): also write every member's values (JSON only).")),
    # -- discernible colours (the discernible group) --
    "scene": typer.Option(None, "--scene", help=(
        "With --metrics discernible: a reflectance cube (.npy/.npz, e.g. from cvdfilter scene) whose colours "
        "are counted; repeat for several (per scene and pooled). Default: the --surfaces set.")),
    "discernible_method": typer.Option("cielab", "--discernible-method", help=(
        "Space the discernible colours are counted in: cielab (unit CIELAB cubes, Linhares et al. 2008), "
        "cam16ucs (unit CAM16-UCS cubes, the Euclidean stand-in for CIEDE2000) or rnl (1-JND cubes of the "
        "observer's receptor-noise space).")),
    # -- where the work runs and streamed output (issue 17; docs/scale.md) --
    "scheduler": typer.Option(None, "--scheduler", help=SCHEDULER_HELP),
    "stream": typer.Option(False, "--stream", help=(
        "Write the rows chunk by chunk (CSV with -o; --format parquet always streams): any number of "
        "filters in bounded memory; a rerun after an interruption resumes from the chunks written.")),
}


def register(app: typer.Typer) -> None:
    app.command("score")(score_cmd)


def score_cmd(
    filters: List[str] = _FILTERS,
    illuminant: str = _OPT["illuminant"],
    observer: Optional[List[str]] = _OPT["observer"],
    surfaces: str = _OPT["surfaces"],
    adaptation: str = _OPT["adaptation"],
    format: Optional[str] = _OPT["format"],
    output: Optional[str] = _OPT["output"],
    units: Optional[str] = _OPT["units"],
    bandwidth: Optional[float] = _OPT["bandwidth"],
    metrics: str = _OPT["metrics"],
    signal_spectra: Optional[str] = _OPT["signal_spectra"],
    weber_fraction: float = _OPT["weber_fraction"],
    cone_ratios: str = _OPT["cone_ratios"],
    jnd_threshold: float = _OPT["jnd_threshold"],
    signal_limits: Optional[str] = _OPT["signal_limits"],
    sensitivity: bool = _OPT["sensitivity"],
    members: bool = _OPT["members"],
    scene: Optional[List[str]] = _OPT["scene"],
    discernible_method: str = _OPT["discernible_method"],
    scheduler: Optional[str] = _OPT["scheduler"],
    stream: bool = _OPT["stream"],
) -> None:
    """Score filters: photometry and road use, colour rendition, and for each observer the contrast
    gains and the surface pairs gained, lost, resolved or created.

    Example: cvdfilter score larkhill-notch-575 "notch:center=540..600/10,fwhm=30,depth=0.8" --metrics core

    Example: cvdfilter score larkhill-notch-575 larkhill-rose-tint --metrics core --sensitivity

    Example: cvdfilter score larkhill-notch-575 --observer deuteranomalous:n=200,seed=7 --metrics core

    Example: cvdfilter score larkhill-notch-575 --metrics discernible --surfaces munsell

    Example: cvdfilter score "notch:center=450..650/0.1,fwhm=20..60/5,depth=0.8" --metrics core -o sweep.parquet
    """
    from ..scorecard import DEFAULT_OBSERVERS

    format, filter_specs, ratios = _check_options(filters, format, output, units, bandwidth, scheduler, cone_ratios)
    progress = _LazyProgress()
    model = dict(illuminant=illuminant, observers=observer or list(DEFAULT_OBSERVERS), surfaces=surfaces,
                 adaptation=adaptation, metrics=metrics, signal_spectra=signal_spectra,
                 weber_fraction=weber_fraction, cone_ratios=ratios, discrimination_threshold=jnd_threshold,
                 normal_threshold=jnd_threshold, deficient_threshold=jnd_threshold, signal_limits=signal_limits)
    inputs = input_files(filters) + ([signal_spectra] if signal_spectra else []) + [surfaces]
    if format == "parquet" or stream:
        _stream(filter_specs, output, format, progress, scheduler, sensitivity=sensitivity, members=members,
                inputs=inputs, **model)
        return
    card = _score(filter_specs, progress, model, sensitivity=sensitivity, members=members, scenes=scene or None,
                  discernible_method=discernible_method, scheduler=scheduler)
    _write(card, format, output, inputs + [illuminant] + list(scene or []))


def _check_options(filters, format, output, units, bandwidth, scheduler, cone_ratios) -> tuple:
    """The output format, the filter specs with their file options, and the cone ratios; exit 2 when bad."""
    from ..errors import InputError

    # -- file reading and output format --
    try:
        format = resolve_format(format, output, (*FORMATS, "parquet"))
        from ..execution import parse_scheduler

        parse_scheduler(scheduler)
        filter_specs = file_options(filters, units, bandwidth)
    except InputError as exc:
        fail(exc)
    # -- end of file reading and output format --
    try:
        ratios = tuple(float(x) for x in cone_ratios.replace(",", ":").split(":"))
    except ValueError:
        ratios = ()
    if len(ratios) != 3:
        fail(f"--cone-ratios {cone_ratios}: give three positive numbers L:M:S, e.g. 10:5:1")
    return format, filter_specs, ratios


def _score(filter_specs, progress, model: dict, **kwargs):
    """The scorecard (``cvdfilter.score``), the progress bar closed; exit 2 on bad input."""
    from ..errors import InputError
    from ..scorecard import score

    try:
        card = score(filter_specs, **model, progress=progress, **kwargs)
    except (InputError, ValueError) as exc:
        progress.close()
        fail(exc)
    progress.close()
    return card


def _write(card, format: str, output, inputs: list) -> None:
    """The scorecard as ``format`` to ``output`` or stdout (a status line while a large sweep is formatted)."""
    from ..errors import InputError

    render = {"json": card.to_json, "csv": card.to_csv, "markdown": card.to_markdown,
              "table": lambda: card.to_table(width=100)}[format]
    if len(card) * len(card.observers) > 5000:  # large sweeps take seconds to format: say so
        from rich.console import Console

        with Console(stderr=True).status(f"writing {len(card)} filters as {format}"):
            text = render()
    else:
        text = render()
    try:
        emit(text, output, inputs=inputs)
    except InputError as exc:
        fail(exc)


def _stream(filter_specs, output, format, progress, scheduler, *, inputs, **kwargs) -> None:
    """``--format parquet`` or ``--stream``: rows written chunk by chunk (cvdfilter.score_stream)."""
    from ..errors import InputError

    if format not in ("parquet", "csv"):
        fail(f"--stream writes csv or parquet, not {format}")
    if not output:
        fail(f"streamed {format} output goes to a file: give -o FILE.{format}")
    from ..score_stream import score_to_file

    try:
        manifest = score_to_file(filter_specs, output, fmt=format, scheduler=scheduler, progress=progress,
                                 inputs=inputs, **kwargs)
    except (InputError, ValueError) as exc:
        progress.close()
        fail(exc)
    progress.close()
    resumed = manifest.get("resumed_chunks", 0)
    typer.echo(f"wrote {output}: {manifest['rows']:,} rows in {len(manifest['chunks'])} chunks"
               + (f" ({resumed} resumed from an earlier run)" if resumed else "")
               + f"; manifest {output}.manifest.json", err=True)
