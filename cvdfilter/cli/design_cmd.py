"""``cvdfilter design``: search a family of filters for the best designs (a thin shell over ``cvdfilter.design``)."""

from __future__ import annotations

from typing import Any, List, Optional

import typer

from ..execution import SCHEDULER_HELP
from .common import fail, input_files


class _Progress:
    """A rich progress bar of evaluations on stderr (transient)."""

    def __init__(self) -> None:
        self.bar: Any = None
        self.task: Any = None

    def __call__(self, done: int, total: int) -> None:
        if self.bar is None:
            from rich.console import Console
            from rich.progress import BarColumn, MofNCompleteColumn, Progress, TextColumn, TimeRemainingColumn

            self.bar = Progress(TextColumn("designing"), BarColumn(), MofNCompleteColumn(), TimeRemainingColumn(),
                                console=Console(stderr=True), transient=True)
            self.bar.start()
            self.task = self.bar.add_task("designing", total=total)
        self.bar.update(self.task, completed=min(done, total))

    def close(self) -> None:
        if self.bar is not None:
            self.bar.stop()


# -- the options (help texts are part of the interface) ----------------------------------------------------
_OPT = {
    "observer": typer.Option(..., "--observer", help=(
        "The observer designed for (a spec; n=N makes it a population). Repeat to score more observers; "
        "a metric names them in brackets, e.g. discriminable_pairs.lost[normal].")),
    "maximise": typer.Option(None, "--maximise", help=(
        "A scorecard key to maximise (red_green_gain, confusion_pairs.net, luminous_transmittance, "
        "discernible_colours.ratio with --surfaces munsell, a task score tasks.arrangement.effect; for a "
        "population mean:KEY, p2_5:KEY or share:KEY). Two or more give a Pareto set.")),
    "minimise": typer.Option(None, "--minimise", help="A scorecard key to minimise."),
    "require": typer.Option(None, "--require", help=(
        "A requirement every design must meet: KEY>=N, KEY<=N, KEY>N, KEY<N, KEY==N, or a yes/no key "
        "alone, e.g. 'luminous_transmittance>=0.43', 'iso12312_category<=1', road_use.suitable.")),
    "family": typer.Option("notch:k=1", "--family", help=(
        "notch:k=1-3[,shape=flat][,center=LO..HI][,fwhm=LO..HI][,depth=LO..HI|od=LO..HI]"
        "[,on=nd|longpass|shortpass] or spline:k=4-60 (free-form curve).")),
    "budget": typer.Option(2000, "--budget", help="Most candidates scored."),
    "seed": typer.Option(0, "--seed", help="Seed of the optimiser: the same seed gives the same JSON."),
    "top": typer.Option(10, "--top", help="Most designs reported."),
    "reference": typer.Option(None, "--reference", help=(
        "A filter to compare with (repeat); default the bundled examples.")),
    "no_references": typer.Option(False, "--no-references", help="Compare with no reference filters."),
    "illuminant": typer.Option("D65", "--illuminant", help="The light the surfaces are seen in."),
    "surfaces": typer.Option("ces99", "--surfaces", help="ces99, chart24, tcs14, vs15 or a file."),
    "adaptation": typer.Option("full", "--adaptation", help="full, none or a degree 0-1."),
    "time_limit": typer.Option(None, "--time-limit", help=(
        "Stop the search after this many seconds (the result then depends on the machine).")),
    "metrics": typer.Option("all", "--metrics", help=(
        "Metric groups in each design's scorecard entry: all, core (no colour rendition: faster) or a "
        "list; the groups the objectives and requirements need are always there.")),
    "task_trials": typer.Option(50, "--task-trials", help=(
        "Arrangement trials per candidate for task metrics (tasks.TASK.KEY); the design's seed fixes them.")),
    "resume": typer.Option(False, "--resume", help=(
        "Continue the interrupted design whose checkpoint is in the output folder (same options).")),
    "figure_format": typer.Option("png", "--figure-format", help="pdf, svg or png (figures)."),
    "dpi": typer.Option(300.0, "--dpi", help="Resolution of PNG figures, dots per inch."),
    "output": typer.Option(..., "--output", "-o", help="Folder for designs.json, designs.csv, curves/ "
                                                        "and the figures."),
    "scheduler": typer.Option(None, "--scheduler", help=SCHEDULER_HELP),
}


def register(app: typer.Typer) -> None:
    app.command("design")(design_cmd)


def design_cmd(
    observer: List[str] = _OPT["observer"],
    maximise: Optional[List[str]] = _OPT["maximise"],
    minimise: Optional[List[str]] = _OPT["minimise"],
    require: Optional[List[str]] = _OPT["require"],
    family: str = _OPT["family"],
    budget: int = _OPT["budget"],
    seed: int = _OPT["seed"],
    top: int = _OPT["top"],
    reference: Optional[List[str]] = _OPT["reference"],
    no_references: bool = _OPT["no_references"],
    illuminant: str = _OPT["illuminant"],
    surfaces: str = _OPT["surfaces"],
    adaptation: str = _OPT["adaptation"],
    time_limit: Optional[float] = _OPT["time_limit"],
    metrics: str = _OPT["metrics"],
    task_trials: int = _OPT["task_trials"],
    resume: bool = _OPT["resume"],
    figure_format: str = _OPT["figure_format"],
    dpi: float = _OPT["dpi"],
    output: str = _OPT["output"],
    scheduler: Optional[str] = _OPT["scheduler"],
) -> None:
    """Search a family of filters for the designs that best meet objectives under requirements; write
    the ranked designs (JSON, CSV, curve files), a Pareto figure and the spectra of the best designs.
    Ctrl-C stops the search and writes the best designs found so far; the candidates scored are kept in
    DIR/design-checkpoint.npz, and --resume continues from there.

    Example: cvdfilter design --observer deuteranomalous --maximise red_green_gain
    --require 'luminous_transmittance>=0.43' --family notch:k=1 --budget 1000 --seed 1 -o design-out
    """
    import os
    import time

    from ..designing import design
    from ..designing.checkpoint import CHECKPOINT_NAME
    from ..errors import InputError

    if figure_format not in ("pdf", "svg", "png"):
        fail(f"--figure-format {figure_format}: use pdf, svg or png")
    refs = [] if no_references else (reference or None)
    progress = _Progress()
    start = time.perf_counter()
    checkpoint = os.path.join(output, CHECKPOINT_NAME)
    had_checkpoint = os.path.exists(checkpoint)
    try:
        result = design(observer, maximise=maximise or [], minimise=minimise or [], require=require or [],
                        family=family, budget=budget, seed=seed, top=top, references=refs,
                        illuminant=illuminant, surfaces=surfaces, adaptation=adaptation,
                        time_limit=time_limit, metrics=metrics, progress=progress, output=output,
                        task_trials=task_trials, resume=resume,
                        checkpoint=checkpoint, scheduler=scheduler)
    except (InputError, ValueError) as exc:
        progress.close()
        fail(exc)
    progress.close()
    _write(result, output, figure_format, dpi, input_files(reference or []) + [surfaces],
           None if had_checkpoint else checkpoint, time.perf_counter() - start)


def _write(result, output: str, figure_format: str, dpi: float, inputs: list, remove_on_failure, elapsed: float):
    """Write the design's outputs and say what was written; on failure no partial output (the checkpoint
    this run wrote, ``remove_on_failure``, goes too)."""
    import contextlib
    import os

    from ..errors import InputError

    try:
        written = result.write(output, formats=(figure_format,), dpi=dpi, inputs=inputs)
    except InputError as exc:
        if remove_on_failure is not None:
            with contextlib.suppress(OSError):
                os.remove(remove_on_failure)
        fail(exc)
    typer.echo(result.table_text(width=100), nl=False)
    run = result.run
    typer.echo(f"{run['evaluations']:,} candidates scored in {elapsed:.1f} s ({run['stopped']}); "
               f"wrote {len(written)} files in {output}", err=True)
