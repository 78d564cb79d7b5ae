"""``cvdfilter render``: images and spectral cubes before and after a filter, for any observer.

A thin shell over :func:`cvdfilter.render.render_file`: expands directories
and globs, plans the output names, skips finished inputs (resumable), runs the
inputs in worker processes with a progress bar, and summarises failures.
Exit status: 0 all done, 1 some inputs failed (the others are still
rendered), 2 bad arguments (nothing written).
"""

from __future__ import annotations

import glob
import os
import pathlib
import sys
import time
from typing import List, Optional

import typer

from .common import BANDWIDTH_HELP, UNITS_HELP, fail, file_options, warn

#: Suffixes picked up when a directory is given.
SCAN_SUFFIXES = (".png", ".jpg", ".jpeg", ".tif", ".tiff", ".npy", ".npz")
MANIFEST = "render-manifest.json"

_WORKER: dict = {}


def _init_worker(renderer, options) -> None:
    _WORKER["renderer"] = renderer
    _WORKER["options"] = options


def _task(job: dict) -> dict:
    """Render one input in a worker; never raises (failures come back as records)."""
    from ..errors import InputError
    from ..render import render_file

    start = time.perf_counter()
    try:
        rec = render_file(job["input"], _WORKER["renderer"], outputs=job["outputs"], panel_path=job["panel"],
                          **_WORKER["options"])
        rec["status"] = "rendered"
    except InputError as exc:
        rec = {"input": job["input"], "status": "failed", "error": " ".join(str(exc).split())}
    except MemoryError:
        rec = {"input": job["input"], "status": "failed", "error": f"{job['input']}: out of memory"}
    except Exception as exc:  # a damaged file must not stop the batch
        text = " ".join(str(exc).split()) or type(exc).__name__
        rec = {"input": job["input"], "status": "failed", "error": f"{job['input']}: {type(exc).__name__}: {text}"}
    rec["seconds"] = round(time.perf_counter() - start, 3)
    return rec


def _expand(items: List[str], out_dir: pathlib.Path) -> list[tuple[pathlib.Path, pathlib.Path]]:
    """(file, base for relative output names) for every input; InputError for a bad argument."""
    from ..errors import InputError
    from ..io.cubes import CUBE_SUFFIXES
    from ..io.images import IMAGE_SUFFIXES

    known = set(IMAGE_SUFFIXES) | set(CUBE_SUFFIXES)
    out_resolved = out_dir.resolve()
    found: list[tuple[pathlib.Path, pathlib.Path]] = []

    def inside_out(p: pathlib.Path) -> bool:
        try:
            p.resolve().relative_to(out_resolved)
            return True
        except ValueError:
            return False

    for item in items:
        p = pathlib.Path(item)
        if p.is_dir():
            files = sorted(f for f in p.rglob("*") if f.is_file() and f.suffix.lower() in SCAN_SUFFIXES
                           and not f.name.startswith(".") and not inside_out(f)
                           and not f.name.endswith((".wavelengths.txt", ".wavelengths.json")))
            if not files:
                raise InputError("directory holds no PNG, JPEG, TIFF, .npy or .npz files", source=item)
            found += [(f, p) for f in files]
        elif p.is_file():
            if p.suffix.lower() not in known:
                raise InputError(f"unsupported file type '{p.suffix}'", source=item,
                                 hint="give PNG, JPEG or TIFF images, or .npy/.npz/TIFF cubes")
            found.append((p, p.parent))
        elif any(ch in item for ch in "*?["):
            matches = sorted(pathlib.Path(m) for m in glob.glob(item, recursive=True))
            matches = [m for m in matches if m.is_file() and m.suffix.lower() in known and not inside_out(m)]
            if not matches:
                raise InputError("pattern matches no image or cube files", source=item)
            found += [(m, m.parent) for m in matches]
        else:
            raise InputError("no such file or directory", source=item)
    seen, unique = set(), []
    for f, base in found:
        key = f.resolve()
        if key not in seen:
            seen.add(key)
            unique.append((f, base))
    return unique


def _plan(files, out_dir: pathlib.Path, views, fmt: str, panel: bool) -> list[dict]:
    """Output names: OUT/[subdir/]STEM.VIEW.EXT and OUT/[subdir/]STEM.panel.png; clashing stems get the suffix."""
    from ..render import output_suffix

    stems = []
    for f, base in files:
        rel = f.relative_to(base) if f.is_relative_to(base) else pathlib.Path(f.name)
        stems.append(rel.parent / rel.stem)
    counts: dict = {}
    for s in stems:
        counts[s] = counts.get(s, 0) + 1
    jobs = []
    for (f, _), stem in zip(files, stems):
        if counts[stem] > 1:
            stem = stem.parent / f"{stem.name}_{f.suffix.lstrip('.').lower()}"
        ext = output_suffix(fmt, f)
        outputs = {v: str(out_dir / stem.parent / f"{stem.name}.{v}{ext}") for v in views}
        jobs.append({"input": str(f), "outputs": outputs,
                     "panel": str(out_dir / stem.parent / f"{stem.name}.panel.png") if panel else None})
    return jobs


def register(app: typer.Typer) -> None:
    @app.command("render")
    def render(
        inputs: List[str] = typer.Argument(..., metavar="IMAGE_OR_DIR...",
                                           help="Images (PNG, JPEG, TIFF), cubes (.npy, .npz, TIFF), directories "
                                                "(searched recursively) or glob patterns."),
        filter: str = typer.Option(..., "--filter", help="The filter: a spec, a file (FILE:COLUMN for one column of a multi-column file) or an example name."),
        illuminant: str = typer.Option("D65", "--illuminant", help="The light the scene is lit by."),
        observer: str = typer.Option("normal", "--observer",
                                     help="The observer, e.g. deuteranope, protanomalous:shift=8, normal:age=70."),
        view: Optional[List[str]] = typer.Option(None, "--view",
                                                 help="original, filtered, observer or observer-filtered; "
                                                      "repeat for several (default: all four)."),
        panel: bool = typer.Option(False, "--panel", help="Also write a labelled 2x2 panel (PNG) per input."),
        out: str = typer.Option("rendered", "--out", help="Output folder."),
        jobs: int = typer.Option(1, "--jobs", help="Worker processes."),
        force: bool = typer.Option(False, "--force", help="Render again even where the outputs exist."),
        max_megapixels: Optional[float] = typer.Option(None, "--max-megapixels",
                                                       help="Refuse larger inputs (default 150)."),
        format: str = typer.Option("auto", "--format",
                                   help="auto, png, png8, png16, tiff, tiff8, tiff16, tiff-float or jpeg "
                                        "(auto: the input's container and bit depth; JPEG and cubes give PNG)."),
        adaptation: str = typer.Option("full", "--adaptation", help="full, none or a fraction 0-1."),
        method: Optional[str] = typer.Option(None, "--method", help="Dichromat simulation: brettel1997 or vienot1999."),
        normalisation: str = typer.Option("auto", "--normalisation",
                                          help="Anomalous observers (Machado 2009 mapping): auto (opponent where "
                                               "well-conditioned, else cone), cone (von Kries) or opponent."),
        scene: str = typer.Option("reflectance", "--scene",
                                  help="reflectance (surfaces under the illuminant) or display[:PRIMARIES] "
                                       "(light from a display)."),
        gamut: str = typer.Option("clip", "--gamut", help="clip, or none (float output keeps out-of-gamut values)."),
        cube_kind: Optional[str] = typer.Option(None, "--cube-kind",
                                                help="reflectance or radiance (default: the file's, else reflectance)."),
        wavelengths: Optional[str] = typer.Option(None, "--wavelengths",
                                                  help="Cube band wavelengths, START:STOP:STEP or a list (nm)."),
        quiet: bool = typer.Option(False, "--quiet", "-q", help="No progress bar."),
        # -- file reading: units and bandwidth of a --filter file --
        units: Optional[str] = typer.Option(None, "--units", help=UNITS_HELP),
        bandwidth: Optional[float] = typer.Option(None, "--bandwidth", help=BANDWIDTH_HELP),
    ) -> None:
        """Render images or cubes before and after a filter, as the observer would see them.

        Example: cvdfilter render photos/ --filter larkhill-notch-575 --observer deuteranope --panel --out rendered
        """
        # The per-pixel matrices are 3x3: BLAS threads only add contention; --jobs uses the cores.
        os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")
        os.environ.setdefault("OMP_NUM_THREADS", "1")
        from ..cautions import CAVEAT
        from ..errors import InputError
        from ..io.atomic import check_outputs, write_text
        from ..io.cubes import CUBE_KINDS, parse_wavelengths
        from ..io.images import DEFAULT_MAX_MEGAPIXELS, set_pixel_limit
        from ..render import OUTPUT_FORMATS, VIEWS, Renderer
        from .common import to_json

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
            out_dir = pathlib.Path(out)
            if out_dir.exists() and not out_dir.is_dir():
                raise InputError("is a file, not a folder", source=out)
            files = _expand(inputs, out_dir)
            plan = _plan(files, out_dir, views, format, panel)
            all_inputs = [str(f) for f, _ in files]
            check_outputs([o for j in plan for o in [*j["outputs"].values(), j["panel"]] if o], all_inputs)
        except InputError as exc:
            fail(exc)
        set_pixel_limit(mp)
        todo, skipped = [], []
        for j in plan:
            wanted = [*j["outputs"].values()] + ([j["panel"]] if j["panel"] else [])
            if not force and all(pathlib.Path(o).exists() for o in wanted):
                skipped.append({"input": j["input"], "status": "skipped (outputs exist)"})
            else:
                todo.append(j)
        options = {"fmt": format, "cube_kind": cube_kind, "wavelengths": wl, "max_megapixels": mp,
                   "inputs": all_inputs}
        records = _run(todo, renderer, options, jobs, quiet)
        failed = [r for r in records if r["status"] == "failed"]
        done = [r for r in records if r["status"] == "rendered"]
        for r in done:
            for w in r.get("warnings", []):
                warn(w)
        manifest = {"tool": "cvdfilter", "version": renderer.describe()["version"], "command": "render",
                    "inputs": inputs, "settings": {**renderer.describe(), "views": views, "panel": panel,
                                                   "format": format, "max_megapixels": mp},
                    "rendered": len(done), "skipped": len(skipped), "failed": len(failed),
                    "items": records + skipped, "caveat": CAVEAT}
        write_text(out_dir / MANIFEST, to_json(manifest), inputs=all_inputs)
        clipped = sum(sum(r["clipped_pixels"].values()) for r in done)
        pixels = sum(r["width"] * r["height"] * len(r["clipped_pixels"]) for r in done)
        msg = f"rendered {len(done)}, skipped {len(skipped)} (outputs exist), failed {len(failed)}; outputs in {out_dir}"
        typer.echo(msg, err=True)
        if done:
            share = f" ({100 * clipped / pixels:.2f} % of rendered pixels)" if pixels else ""
            typer.echo(f"out-of-gamut pixels clipped: {clipped}{share}; per view in {out_dir / MANIFEST}", err=True)
        typer.echo(CAVEAT, err=True)
        if failed:
            typer.echo(f"{len(failed)} input(s) failed:", err=True)
            for r in failed:
                typer.echo(f"  {r['error']}", err=True)
            raise typer.Exit(1)


def _run(todo: list, renderer, options: dict, jobs: int, quiet: bool) -> list:
    """Render every job, in this process (jobs = 1) or in worker processes, with a progress bar."""
    from rich.console import Console
    from rich.progress import BarColumn, MofNCompleteColumn, Progress, TextColumn, TimeRemainingColumn

    if not todo:
        return []
    show = not quiet and sys.stderr.isatty()
    progress = Progress(TextColumn("rendering"), BarColumn(), MofNCompleteColumn(), TimeRemainingColumn(),
                        console=Console(file=sys.stderr), disable=not show, transient=True)
    records = []
    with progress:
        task = progress.add_task("render", total=len(todo))
        if jobs == 1 or len(todo) == 1:
            _init_worker(renderer, options)
            for j in todo:
                records.append(_task(j))
                progress.advance(task)
        else:
            import multiprocessing
            from concurrent.futures import ProcessPoolExecutor, as_completed

            ctx = multiprocessing.get_context("spawn")
            with ProcessPoolExecutor(max_workers=min(jobs, len(todo)), mp_context=ctx, initializer=_init_worker,
                                     initargs=(renderer, options)) as pool:
                futures = [pool.submit(_task, j) for j in todo]
                for fut in as_completed(futures):
                    records.append(fut.result())
                    progress.advance(task)
    order = {j["input"]: i for i, j in enumerate(todo)}
    return sorted(records, key=lambda r: order[r["input"]])
