"""``cvdfilter render``: images and spectral cubes before and after a filter, for any observer.

A thin shell over :func:`cvdfilter.rendering.render_file`: expands directories
and globs, plans one distinct output name per input and view, skips outputs
already made with identical settings and input (resumable per output file;
the fingerprint is in each file's metadata and the manifest), refuses outputs
made otherwise unless ``--force``, runs the inputs in worker processes (which
die with the parent) with a progress bar, merges its records into
``render-manifest.json`` under a lock, and summarises failures.
Exit status: 0 all done, 1 some inputs failed (the others are still
rendered), 2 bad arguments or outputs that cannot be written (nothing written).

The batch is planned in cli/render_batch.py, run in cli/render_workers.py and recorded in
cli/render_manifest.py; this module holds the command and the batch's steps in order.
"""

from __future__ import annotations

import os
import pathlib
from typing import List, Optional

import typer

from .common import BANDWIDTH_HELP, UNITS_HELP, fail, file_options, warn
from .render_batch import conflict_message, existing_state, expand_inputs, plan_outputs
from .render_manifest import MANIFEST, manifest_item, now, update_manifest
from .render_workers import run_jobs, run_scheduled


# -- the options (help texts are part of the interface: other tools read them) ------------------------------
_INPUTS = typer.Argument(..., metavar="IMAGE_OR_DIR...",
                         help="Images (PNG, JPEG, TIFF), cubes (.npy, .npz, TIFF), directories "
                              "(searched recursively) or glob patterns.")
_OPT = {
    "filter": typer.Option(..., "--filter", help="The filter: a spec, a file (FILE:COLUMN for one column "
                                                 "of a multi-column file) or an example name."),
    "illuminant": typer.Option("D65", "--illuminant", help="The light the scene is lit by."),
    "observer": typer.Option("normal", "--observer",
                             help="The observer, e.g. deuteranope, protanomalous:shift=8, normal:age=70."),
    "view": typer.Option(None, "--view", help="original, filtered, observer or observer-filtered; "
                                              "repeat for several (default: all four)."),
    "panel": typer.Option(False, "--panel", help="Also write a labelled 2x2 panel (PNG) per input."),
    "out": typer.Option("rendered", "--out", help="Output folder."),
    "jobs": typer.Option(1, "--jobs", help="Worker processes."),
    "scheduler": typer.Option(None, "--scheduler", help=(
        "local (default: this process, or --jobs worker processes), local:N or tcp://HOST:PORT: the files "
        "are rendered on Dask workers, which must see the same folders (docs/scale.md).")),
    "force": typer.Option(False, "--force", help="Render again even where the outputs exist."),
    "max_megapixels": typer.Option(None, "--max-megapixels", help="Refuse larger inputs (default 150)."),
    "format": typer.Option("auto", "--format",
                           help="auto, png, png8, png16, tiff, tiff8, tiff16, tiff-float or jpeg "
                                "(auto: the input's container and bit depth; JPEG and cubes give PNG)."),
    "adaptation": typer.Option("full", "--adaptation", help="full, none or a fraction 0-1."),
    "method": typer.Option(None, "--method",
                           help="Dichromat simulation: brettel-adapted (default: neutral axis at "
                                "the scene's white), brettel1997 (as published), vienot1999 or "
                                "brettel-plane; see 'cvdfilter list methods'."),
    "normalisation": typer.Option("cone", "--normalisation",
                                  help="Anomalous observers (Machado 2009 mapping): cone (von Kries; "
                                       "default, continuous) or opponent (Machado's channel gains)."),
    "scene": typer.Option("reflectance", "--scene",
                          help="reflectance (surfaces under the illuminant) or display[:PRIMARIES] "
                               "(light from a display)."),
    "gamut": typer.Option("clip", "--gamut", help="clip, or none (float output keeps out-of-gamut values)."),
    "cube_kind": typer.Option(None, "--cube-kind", help="reflectance or radiance (default: the file's, else "
                                                        "reflectance)."),
    "wavelengths": typer.Option(None, "--wavelengths", help="Cube band wavelengths, START:STOP:STEP or a list (nm)."),
    "quiet": typer.Option(False, "--quiet", "-q", help="No progress bar."),
    # -- file reading: units and bandwidth of a --filter file --
    "units": typer.Option(None, "--units", help=UNITS_HELP),
    "bandwidth": typer.Option(None, "--bandwidth", help=BANDWIDTH_HELP),
}


def register(app: typer.Typer) -> None:
    app.command("render")(render)


def render(
    inputs: List[str] = _INPUTS,
    filter: str = _OPT["filter"],
    illuminant: str = _OPT["illuminant"],
    observer: str = _OPT["observer"],
    view: Optional[List[str]] = _OPT["view"],
    panel: bool = _OPT["panel"],
    out: str = _OPT["out"],
    jobs: int = _OPT["jobs"],
    scheduler: Optional[str] = _OPT["scheduler"],
    force: bool = _OPT["force"],
    max_megapixels: Optional[float] = _OPT["max_megapixels"],
    format: str = _OPT["format"],
    adaptation: str = _OPT["adaptation"],
    method: Optional[str] = _OPT["method"],
    normalisation: str = _OPT["normalisation"],
    scene: str = _OPT["scene"],
    gamut: str = _OPT["gamut"],
    cube_kind: Optional[str] = _OPT["cube_kind"],
    wavelengths: Optional[str] = _OPT["wavelengths"],
    quiet: bool = _OPT["quiet"],
    units: Optional[str] = _OPT["units"],
    bandwidth: Optional[float] = _OPT["bandwidth"],
) -> None:
    """Render images or cubes before and after a filter, as the observer would see them.

    Example: cvdfilter render photos/ --filter larkhill-notch-575 --observer deuteranope --panel --out rendered
    """
    from ..errors import InputError
    from ..io.cubes import CUBE_KINDS, parse_wavelengths
    from ..io.images import DEFAULT_MAX_MEGAPIXELS
    from ..rendering import OUTPUT_FORMATS, VIEWS, Renderer

    views = [v.strip().lower() for v in (view or VIEWS)]
    bad = [v for v in views if v not in VIEWS]
    if bad:
        fail(f"--view {bad[0]} is not one of {', '.join(VIEWS)}")
    views = list(dict.fromkeys(views))
    if format not in OUTPUT_FORMATS:
        fail(f"--format {format} is not one of {', '.join(OUTPUT_FORMATS)}")
    if jobs < 1:
        fail(f"--jobs {jobs} must be at least 1")
    mp = DEFAULT_MAX_MEGAPIXELS if max_megapixels is None else max_megapixels
    if not mp > 0:
        fail(f"--max-megapixels {mp:g} must be above 0")
    if cube_kind is not None and cube_kind.strip().lower() not in CUBE_KINDS:
        fail(f"--cube-kind {cube_kind} is not reflectance or radiance")
    try:
        wl = None if wavelengths is None else parse_wavelengths(wavelengths)
        filter = file_options(filter, units, bandwidth)  # file reading: --units/--bandwidth
        renderer = Renderer(filter, observer=observer, illuminant=illuminant, adaptation=adaptation,
                            method=method, normalisation=normalisation, scene=scene, gamut=gamut)
        if gamut == "none" and format not in ("tiff", "tiff-float", "auto"):
            raise InputError("--gamut none needs float output (--format tiff-float)")
        from ..execution import parse_scheduler

        on_dask = parse_scheduler(scheduler)[0] != "local"
    except InputError as exc:
        fail(exc)
    options = {"fmt": format, "cube_kind": cube_kind, "wavelengths": wl, "max_megapixels": mp}
    _batch(inputs, renderer, options, views=views, panel=panel, out=out, jobs=jobs, force=force, quiet=quiet,
           scheduler=scheduler if on_dask else None)


def _batch(inputs, renderer, options: dict, *, views, panel: bool, out: str, jobs: int, force: bool,
           quiet: bool, scheduler: str | None = None) -> None:
    """Plan, check, resume, run, record and summarise one batch (see the module docstring)."""
    from ..cautions import CAVEAT
    from ..errors import InputError
    from ..io.atomic import check_outputs, check_writable, remove_stale_temporaries
    from ..rendering import settings_fingerprint

    out_dir = pathlib.Path(out)
    try:
        check_writable(out_dir, folder=True)
        files = expand_inputs(inputs, out_dir)
        plan = plan_outputs(files, out_dir, views, options["fmt"], panel)
        all_inputs = [str(f) for f, _ in files]
        check_outputs([o for j in plan for o in [*j["outputs"].values(), j["panel"]] if o], all_inputs)
        settings_fp = settings_fingerprint(renderer, fmt=options["fmt"], cube_kind=options["cube_kind"],
                                           wavelengths=options["wavelengths"])
        settings = {**renderer.describe(), "views": views, "panel": panel, "format": options["fmt"],
                    "cube_kind": options["cube_kind"],
                    "wavelengths": None if options["wavelengths"] is None else list(options["wavelengths"]),
                    "max_megapixels": options["max_megapixels"]}
        todo, done_before, conflicts = existing_state(plan, settings_fp, force)
        if conflicts:
            raise InputError(conflict_message(conflicts, {**settings, "format": options["fmt"]}))
    except InputError as exc:
        fail(exc)
    removed = remove_stale_temporaries(out_dir)
    if removed:
        warn(f"removed {len(removed)} temporary file(s) left in {out_dir} by an interrupted run")
    started = now()
    unreadable = [j for j in todo if "unreadable" in j]
    todo = [j for j in todo if "unreadable" not in j]
    if scheduler is not None:  # Dask workers (cvdfilter.execution)
        records = run_scheduled(todo, renderer, {**options, "inputs": all_inputs}, scheduler, quiet)
    else:
        records = run_jobs(todo, renderer, {**options, "inputs": all_inputs}, jobs, quiet)
    records += [{"input": j["input"], "status": "failed", "error": j["unreadable"]} for j in unreadable]
    remove_stale_temporaries(out_dir)  # those of workers that died during this run
    failed = [r for r in records if r["status"] != "rendered"]
    done = [r for r in records if r["status"] == "rendered"]
    for r in done:
        for w in r.get("warnings", []):
            warn(w)
    run_id = f"{started}-{os.getpid()}"
    by_input = {j["input"]: j for j in [*todo, *done_before, *unreadable]}
    items = []
    for r in records:
        j = by_input[r["input"]]
        items.append(manifest_item(r, j, run_id, settings_fp))
    skipped = [{**manifest_item({"input": j["input"], "status": "rendered"}, j, None, settings_fp), "skipped": True}
               for j in done_before]
    run = {"id": run_id, "started": started, "finished": now(), "inputs": list(inputs), "settings": settings,
           "settings_fingerprint": settings_fp, "rendered": len(done), "skipped": len(skipped),
           "failed": len(failed), "force": force}
    try:
        update_manifest(out_dir, run, items + skipped, all_inputs, CAVEAT)
    except InputError as exc:
        fail(exc)
    clipped = sum(sum(r["clipped_pixels"].values()) for r in done)
    pixels = sum(r["width"] * r["height"] * len(r["clipped_pixels"]) for r in done)
    written = sum(len(r["outputs"]) + (1 if r.get("panel") else 0) for r in done)
    kept = sum(len(j.get("kept", {})) for j in [*todo, *done_before])
    msg = (f"rendered {len(done)}, skipped {len(skipped)} (outputs exist with these settings), "
           f"failed {len(failed)}; {written} file(s) written, {kept} kept; outputs in {out_dir}")
    typer.echo(msg, err=True)
    if done and pixels:
        share = f" ({100 * clipped / pixels:.2f} % of rendered pixels)"
        typer.echo(f"out-of-gamut pixels clipped: {clipped}{share}; per view in {out_dir / MANIFEST}", err=True)
    typer.echo(CAVEAT, err=True)
    if failed:
        typer.echo(f"{len(failed)} input(s) not finished:", err=True)
        for r in failed:
            typer.echo(f"  {r['error']}", err=True)
        raise typer.Exit(1)

