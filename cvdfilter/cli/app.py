"""The ``cvdfilter`` command: builds the typer app from one module per command.

Each module in :data:`COMMAND_MODULES` defines ``register(app)``; heavy
libraries (numpy, colour-science, matplotlib) are imported inside the command
functions, never at import time, so ``cvdfilter --help`` starts fast.
"""

from __future__ import annotations

import importlib

import typer

from .._version import __version__

COMMAND_MODULES = ["list_cmd", "inspect_cmd", "figure_cmd", "score_cmd", "observer_cmd", "render_cmd", "report_cmd",
                   "cache_cmd", "tasks_cmd", "scene_cmd", "design_cmd"]

app = typer.Typer(
    name="cvdfilter",
    help=("Evaluate spectral filters (notch lenses, tints) for observers with normal and deficient colour "
          "vision. Every number is a model prediction, not clinical evidence."),
    no_args_is_help=True,
    add_completion=False,
    pretty_exceptions_enable=False,
    context_settings={"help_option_names": ["-h", "--help"]},
    rich_markup_mode=None,
)


def _version(value: bool) -> None:
    if value:
        typer.echo(f"cvdfilter {__version__}")
        raise typer.Exit()


@app.callback()
def _root(ctx: typer.Context,
          version: bool = typer.Option(False, "--version", callback=_version, is_eager=True,
                                       help="Show the version and exit.")) -> None:
    """cvdfilter: what a spectral filter does for each observer, and what it costs."""
    from .common import flush_warnings

    ctx.call_on_close(flush_warnings)  # input warnings (extrapolation, clipping) once the command ends


for _name in COMMAND_MODULES:
    importlib.import_module(f"{__package__}.{_name}").register(app)


def run() -> None:
    """Entry point: run the app, turning bad input into one line and exit status 2."""
    from ..errors import InputError

    try:
        app()
    except InputError as exc:  # raised outside a command's own handler
        typer.echo(f"cvdfilter: error: {exc}", err=True)
        raise SystemExit(2) from None
