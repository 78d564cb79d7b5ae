"""``cvdfilter tasks``: how model observers would do on colour-vision tasks of our own design, without and with
each filter (a thin shell over ``cvdfilter.tasks``)."""

from __future__ import annotations

from typing import List, Optional

import typer

from ..execution import SCHEDULER_HELP
from .common import BANDWIDTH_HELP, FORMATS, UNITS_HELP, emit, fail, file_options, input_files, resolve_format

_TASK_CHOICES = ("arrangement", "arrangement-fine", "plates", "rayleigh")


def register(app: typer.Typer) -> None:
    @app.command("tasks")
    def tasks_cmd(
        filters: List[str] = typer.Argument(..., help="Filter files, bundled example names or specs, e.g. "
                                                      "notch:center=575,fwhm=35,depth=0.8"),
        observer: Optional[List[str]] = typer.Option(None, "--observer", help=(
            "Observer spec; repeat for several. Default: normal, protanomalous, deuteranomalous, protanope, "
            "deuteranope. A population (deuteranomalous:n=200,seed=7) also gets the share of its members for "
            "whom each task gets easier or harder.")),
        task: Optional[List[str]] = typer.Option(None, "--task", help=(
            "arrangement, arrangement-fine, plates or rayleigh; repeat for several. Default: all four.")),
        trials: int = typer.Option(500, "--trials", help="Arrangement trials per observer (noise drawn per trial)."),
        seed: int = typer.Option(0, "--seed", help="Seed of the trial noise."),
        illuminant: str = typer.Option("D65", "--illuminant", help="The light the caps and plates are seen in."),
        trial_noise: float = typer.Option(1.0, "--trial-noise", help=(
            "Arrangement noise in units of the receptor noise (1: two caps 1 JND apart are one standard "
            "deviation apart).")),
        format: Optional[str] = typer.Option(None, "--format", "-f", help="table, json, csv or markdown "
                                                                         "(default: from -o's extension, else "
                                                                         "table)."),
        output: Optional[str] = typer.Option(None, "--output", "-o", help="Write to this file instead of stdout."),
        units: Optional[str] = typer.Option(None, "--units", help=UNITS_HELP),
        bandwidth: Optional[float] = typer.Option(None, "--bandwidth", help=BANDWIDTH_HELP),
        export_stimuli: Optional[str] = typer.Option(None, "--export-stimuli", help=(
            "Also write the task designs into this folder: cap reflectances, plates as PNG and CSV, the "
            "Rayleigh primaries.")),
        scheduler: Optional[str] = typer.Option(None, "--scheduler", help=SCHEDULER_HELP),
    ) -> None:
        """Predict how model observers would do on hue-circle arrangement, figure-ground plate and Rayleigh
        match tasks of our own design, without and with each filter, with a verdict per task (easier, harder,
        no change; criteria in the output and docs/tasks.md); for a population, also the share of members
        whose own verdict is easier or harder, with a Wilson 95 % interval. Model predictions, not a clinical
        test.

        Example: cvdfilter tasks larkhill-notch-575 --observer deuteranomalous --task arrangement --trials 200
        """

        from ..errors import InputError
        from ..vision_tasks import tasks
        from ..vision_tasks.core import DEFAULT_OBSERVERS

        # -- file reading and output format (units/bandwidth per file or for all; format from -o) --
        try:
            fmt = resolve_format(format, output, FORMATS)
            filters = file_options(filters, units, bandwidth)
        except InputError as exc:
            fail(exc)
        for t in task or ():
            if t not in _TASK_CHOICES:
                fail(f"--task {t} is not one of {', '.join(_TASK_CHOICES)}")
        if trials < 1:
            fail(f"--trials {trials}: give a whole number >= 1")
        try:
            if output:
                from ..io.atomic import check_outputs, check_writable

                check_writable(output)
                check_outputs([output], input_files(filters))
            if export_stimuli:
                from ..io.atomic import check_writable

                check_writable(export_stimuli, folder=True)
            result = tasks(filters, observers=observer or list(DEFAULT_OBSERVERS),
                           tasks=task or list(_TASK_CHOICES), trials=trials, seed=seed, illuminant=illuminant,
                           trial_noise=trial_noise, scheduler=scheduler)
            text = {"json": result.to_json, "csv": result.to_csv, "markdown": result.to_markdown,
                    "table": lambda: result.to_table(width=110)}[fmt]()
            inputs = input_files(filters)
            if export_stimuli:
                from ..vision_tasks.stimuli import export_stimuli as export

                written = export(export_stimuli, illuminant=illuminant, inputs=inputs)
                typer.echo(f"wrote {len(written)} stimulus files to {export_stimuli}", err=True)
            emit(text, output, inputs=inputs)
        except (InputError, ValueError) as exc:
            fail(exc)
