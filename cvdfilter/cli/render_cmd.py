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
#: The lock file that serialises manifest updates of concurrent batches writing into one folder.
MANIFEST_LOCK = ".render-manifest.lock"
MANIFEST_SCHEMA = 2
#: Environment for worker processes only: the per-pixel matrices are 3x3, BLAS threads only add
#: contention, and ``--jobs`` already uses the cores (common practice for process pools).
_WORKER_ENV = {"OPENBLAS_NUM_THREADS": "1", "OMP_NUM_THREADS": "1", "MKL_NUM_THREADS": "1"}

_WORKER: dict = {}


def _die_with_parent(parent_pid: int) -> None:
    """Make this worker die when its parent does (Linux: PR_SET_PDEATHSIG), and stop now if it already has."""
    import signal

    if sys.platform.startswith("linux"):
        import ctypes

        try:
            libc = ctypes.CDLL(None, use_errno=True)
            libc.prctl(1, signal.SIGKILL, 0, 0, 0)  # PR_SET_PDEATHSIG = 1 (linux/prctl.h)
        except (OSError, AttributeError):  # no prctl: the parent-pid checks below still apply
            pass
    if os.getppid() != parent_pid:  # the parent died before the signal was armed
        os._exit(1)


def _init_worker(payload: bytes, parent_pid: int) -> None:
    """Worker initializer: die with the parent, one BLAS thread (this process only), then the renderer."""
    import pickle

    _die_with_parent(parent_pid)
    for key, value in _WORKER_ENV.items():  # read by BLAS when numpy loads, which in a fresh worker is now
        os.environ.setdefault(key, value)
    renderer, options = pickle.loads(payload)
    _WORKER.update(renderer=renderer, options=options, parent=parent_pid)


def _task(job: dict) -> dict:
    """Render one input (the outputs still missing); never raises (failures come back as records)."""
    from ..errors import InputError
    from ..rendering import render_file

    parent = _WORKER.get("parent")
    if parent is not None and os.getppid() != parent:  # orphaned: write nothing more
        os._exit(1)
    start = time.perf_counter()
    try:
        sha, fps = job["input_sha256"], job["fingerprints"]
        if sha is None:
            from ..rendering import file_checksum, output_fingerprint

            sha = file_checksum(job["input"])
            keys = [*job["outputs"], *(["panel"] if job["panel"] else [])]
            fps = {k: output_fingerprint(job["settings_fp"], sha, k) for k in keys}
        rec = render_file(job["input"], _WORKER["renderer"], outputs=job["outputs"], panel_path=job["panel"],
                          fingerprints=fps, input_sha256=sha, **_WORKER["options"])
        rec["status"] = "rendered"
    except InputError as exc:
        rec = {"input": job["input"], "status": "failed", "error": " ".join(str(exc).split())}
    except MemoryError:
        rec = {"input": job["input"], "status": "failed", "error": f"{job['input']}: out of memory"}
    except Exception as exc:  # a fault of the tool: recorded as such (not as bad input); the batch goes on
        text = " ".join(str(exc).split())[:300] or type(exc).__name__
        rec = {"input": job["input"], "status": "failed",
               "error": f"{job['input']}: internal error ({type(exc).__name__}: {text}); please report it"}
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
        elif p.exists():
            raise InputError("is not a regular file (a named pipe, socket or device); only regular files are read",
                             source=item)
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
    """Output names OUT/[subdir/]NAME.VIEW.EXT and OUT/[subdir/]NAME.panel.png, distinct for every input.

    NAME is the input's stem (with its folder below a searched directory). Inputs that would share a
    name are told apart by their suffix when that differs (``a_jpg``, ``a_png``), else by their nearest
    differing parent folders (``imgs/coffee.png`` and ``imgs2/coffee.png`` give ``imgs/coffee`` and
    ``imgs2/coffee``). If names still clash (also ignoring case, for case-insensitive file systems) the
    run is refused before anything is written.
    """
    from ..errors import InputError
    from ..rendering import output_suffix

    stems = []
    for f, base in files:
        rel = f.relative_to(base) if f.is_relative_to(base) else pathlib.Path(f.name)
        stems.append(rel.parent / rel.stem)
    groups: dict = {}
    for i, s in enumerate(stems):
        groups.setdefault(str(s).casefold(), []).append(i)
    for members in groups.values():
        if len(members) < 2:
            continue
        suffixes = {files[i][0].suffix.lower() for i in members}
        if len(suffixes) == len(members):  # same folder and stem, different types
            for i in members:
                stems[i] = stems[i].parent / f"{stems[i].name}_{files[i][0].suffix.lstrip('.').lower()}"
            continue
        parents = [files[i][0].resolve().parent.parts for i in members]
        depth = max(len(pp) for pp in parents)
        for k in range(1, depth + 1):  # the shortest tail of the parent folders that tells them apart
            tails = [pathlib.Path(*pp[-k:]) if len(pp) > 1 else pathlib.Path("root") for pp in parents]
            keys = [str(t / stems[i]).casefold() for t, i in zip(tails, members)]
            if len(set(keys)) == len(keys):
                break
        for t, i in zip(tails, members):
            stems[i] = pathlib.Path(*[x for x in t.parts if x not in ("/", "\\")]) / stems[i]
    jobs, seen = [], {}
    for (f, _), stem in zip(files, stems):
        ext = output_suffix(fmt, f)
        outputs = {v: str(out_dir / stem.parent / f"{stem.name}.{v}{ext}") for v in views}
        panel_path = str(out_dir / stem.parent / f"{stem.name}.panel.png") if panel else None
        for o in [*outputs.values(), panel_path]:
            if o is None:
                continue
            key = o.casefold()
            if key in seen:
                raise InputError(f"would be written for both {seen[key]} and {f}", source=o,
                                 hint="rename one input or render them into separate --out folders")
            seen[key] = str(f)
        jobs.append({"input": str(f), "outputs": outputs, "panel": panel_path})
    reserved = {str(out_dir / MANIFEST).casefold(), str(out_dir / MANIFEST_LOCK).casefold()}
    clash = reserved & set(seen)
    if clash:
        raise InputError("is reserved for the manifest", source=next(iter(clash)))
    return jobs


def _existing_state(plan: list, settings_fp: str, force: bool) -> tuple[list, list, list]:
    """Checksums, fingerprints and what to do per output.

    Returns (jobs to run, records of inputs with nothing to do, conflicts). A job lists only the
    outputs still missing (resume per output file). An existing output is kept only when its own
    metadata carries the expected fingerprint; any other existing file is a conflict (refused by the
    caller) unless ``force``.
    """
    from ..errors import InputError
    from ..io.images import read_metadata
    from ..rendering import file_checksum, output_fingerprint

    todo, nothing_to_do, conflicts = [], [], []
    for j in plan:
        wanted = dict(j["outputs"])
        if j["panel"]:
            wanted["panel"] = j["panel"]
        for o in wanted.values():
            if pathlib.Path(o).is_dir() or (pathlib.Path(o).exists() and not pathlib.Path(o).is_file()):
                raise InputError("is a folder or a device where an output file would go", source=o,
                                 hint="move it away, or choose another --out")
        base = {**j, "outputs_all": j["outputs"], "panel_path_all": j["panel"], "settings_fp": settings_fp}
        if not any(pathlib.Path(o).exists() or pathlib.Path(o).is_symlink() for o in wanted.values()):
            # nothing to compare: the worker hashes the input (in parallel) and fingerprints the outputs
            todo.append({**base, "input_sha256": None, "fingerprints": None, "kept": {}})
            continue
        try:
            sha = file_checksum(j["input"])
        except InputError as exc:
            todo.append({**base, "input_sha256": None, "fingerprints": {}, "unreadable": str(exc)})
            continue
        fps = {k: output_fingerprint(settings_fp, sha, k) for k in wanted}
        missing, kept = {}, {}
        for k, path in wanted.items():
            target = pathlib.Path(path)
            if not target.exists() and not target.is_symlink():
                missing[k] = path
                continue
            meta = read_metadata(target)
            if not force and meta is not None and meta.get("fingerprint") == fps[k]:
                kept[k] = meta
            elif force:
                missing[k] = path
            else:
                conflicts.append((path, meta))
        job = {**base, "input_sha256": sha, "fingerprints": fps, "kept": kept,
               "outputs": {v: o for v, o in j["outputs"].items() if v in missing},
               "panel": missing.get("panel")}
        if missing:
            todo.append(job)
        else:
            nothing_to_do.append(job)
    return todo, nothing_to_do, conflicts


def _conflict_message(conflicts: list, settings: dict) -> str:
    path, meta = conflicts[0]
    if meta is None:
        why = "was not made by this tool (no settings record in the file)"
    else:
        keys = ("filter", "observer", "illuminant", "adaptation", "simulation", "normalisation", "scene", "gamut",
                "format", "version")
        diff = [f"{k} {meta.get(k)!s} (now {settings.get(k)!s})" for k in keys if meta.get(k) != settings.get(k)]
        why = ("was made with " + ", ".join(diff[:3]) if diff
               else "was made from other input content or model data")
    more = f" (and {len(conflicts) - 1} more output(s))" if len(conflicts) > 1 else ""
    return f"{path} exists and {why}{more}; use --force to replace, or another --out"


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
        scheduler: Optional[str] = typer.Option(None, "--scheduler", help=(
            "local (default: this process, or --jobs worker processes), local:N or tcp://HOST:PORT: the files "
            "are rendered on Dask workers, which must see the same folders (docs/scale.md).")),
        force: bool = typer.Option(False, "--force", help="Render again even where the outputs exist."),
        max_megapixels: Optional[float] = typer.Option(None, "--max-megapixels",
                                                       help="Refuse larger inputs (default 150)."),
        format: str = typer.Option("auto", "--format",
                                   help="auto, png, png8, png16, tiff, tiff8, tiff16, tiff-float or jpeg "
                                        "(auto: the input's container and bit depth; JPEG and cubes give PNG)."),
        adaptation: str = typer.Option("full", "--adaptation", help="full, none or a fraction 0-1."),
        method: Optional[str] = typer.Option(None, "--method",
                                             help="Dichromat simulation: brettel-adapted (default: neutral axis at "
                                                  "the scene's white), brettel1997 (as published), vienot1999 or "
                                                  "brettel-plane; see 'cvdfilter list methods'."),
        normalisation: str = typer.Option("cone", "--normalisation",
                                          help="Anomalous observers (Machado 2009 mapping): cone (von Kries; "
                                               "default, continuous) or opponent (Machado's channel gains)."),
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
        files = _expand(inputs, out_dir)
        plan = _plan(files, out_dir, views, options["fmt"], panel)
        all_inputs = [str(f) for f, _ in files]
        check_outputs([o for j in plan for o in [*j["outputs"].values(), j["panel"]] if o], all_inputs)
        settings_fp = settings_fingerprint(renderer, fmt=options["fmt"], cube_kind=options["cube_kind"],
                                           wavelengths=options["wavelengths"])
        settings = {**renderer.describe(), "views": views, "panel": panel, "format": options["fmt"],
                    "cube_kind": options["cube_kind"],
                    "wavelengths": None if options["wavelengths"] is None else list(options["wavelengths"]),
                    "max_megapixels": options["max_megapixels"]}
        todo, done_before, conflicts = _existing_state(plan, settings_fp, force)
        if conflicts:
            raise InputError(_conflict_message(conflicts, {**settings, "format": options["fmt"]}))
    except InputError as exc:
        fail(exc)
    removed = remove_stale_temporaries(out_dir)
    if removed:
        warn(f"removed {len(removed)} temporary file(s) left in {out_dir} by an interrupted run")
    started = _now()
    unreadable = [j for j in todo if "unreadable" in j]
    todo = [j for j in todo if "unreadable" not in j]
    if scheduler is not None:  # Dask workers (cvdfilter.execution)
        records = _run_scheduled(todo, renderer, {**options, "inputs": all_inputs}, scheduler, quiet)
    else:
        records = _run(todo, renderer, {**options, "inputs": all_inputs}, jobs, quiet)
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
        items.append(_item(r, j, run_id, settings_fp))
    skipped = [{**_item({"input": j["input"], "status": "rendered"}, j, None, settings_fp), "skipped": True}
               for j in done_before]
    run = {"id": run_id, "started": started, "finished": _now(), "inputs": list(inputs), "settings": settings,
           "settings_fingerprint": settings_fp, "rendered": len(done), "skipped": len(skipped),
           "failed": len(failed), "force": force}
    try:
        _update_manifest(out_dir, run, items + skipped, all_inputs, CAVEAT)
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


def _now() -> str:
    import datetime

    return datetime.datetime.now(datetime.timezone.utc).strftime("%Y-%m-%dT%H:%M:%S.%fZ")


def _item(rec: dict, job: dict, run_id: str, settings_fp: str) -> dict:
    """A manifest record for one input and one set of settings: the outputs that now exist with their
    fingerprints (new ones from ``rec``, earlier ones kept from ``job``)."""
    item = {k: v for k, v in rec.items() if k not in ("outputs", "panel", "fingerprints", "clipped_pixels")}
    item.update(run=run_id, settings_fingerprint=settings_fp,
                input_sha256=job.get("input_sha256") or rec.get("input_sha256"),
                outputs={}, fingerprints={}, clipped_pixels={}, panel=None)
    for key, meta in job.get("kept", {}).items():
        path = job["panel_path_all"] if key == "panel" else job["outputs_all"][key]
        if key == "panel":
            item["panel"] = path
        else:
            item["outputs"][key] = path
            if "clipped_pixels" in meta:
                item["clipped_pixels"][key] = meta["clipped_pixels"]
        item["fingerprints"][key] = meta["fingerprint"]
    item["outputs"].update(rec.get("outputs", {}))
    item["fingerprints"].update(rec.get("fingerprints", {}))
    item["clipped_pixels"].update(rec.get("clipped_pixels", {}))
    if rec.get("panel"):
        item["panel"] = rec["panel"]
    order = list(job.get("outputs_all", {}))
    item["outputs"] = {v: item["outputs"][v] for v in order if v in item["outputs"]}
    return item


def _verified(item: dict) -> dict:
    """``item`` without the outputs whose file is gone or no longer carries the recorded fingerprint."""
    from ..io.images import read_metadata

    def ok(path, fp) -> bool:
        meta = read_metadata(path)
        return meta is not None and meta.get("fingerprint") == fp

    fps = item.get("fingerprints", {})
    outs = {v: o for v, o in item.get("outputs", {}).items() if ok(o, fps.get(v))}
    panel = item.get("panel") if item.get("panel") and ok(item["panel"], fps.get("panel")) else None
    keep = set(outs) | ({"panel"} if panel else set())
    return {**item, "outputs": outs, "panel": panel,
            "fingerprints": {k: v for k, v in fps.items() if k in keep},
            "clipped_pixels": {k: v for k, v in item.get("clipped_pixels", {}).items() if k in outs}}


def _update_manifest(out_dir: pathlib.Path, run: dict, items: list, all_inputs: list, caveat: str) -> None:
    """Merge this run into ``OUT/render-manifest.json`` under an exclusive lock (fcntl.flock).

    Records are keyed by (input, settings fingerprint): a rerun updates its own records and keeps
    every other one (earlier runs, other settings, other batches writing into the same folder); an
    output listed in any record is kept only while the file still carries the recorded fingerprint,
    so that the manifest never claims a file that was replaced or removed.
    """
    import contextlib
    import json

    from .._version import __version__
    from ..errors import InputError
    from ..io.atomic import write_text
    from .common import to_json

    out_dir.mkdir(parents=True, exist_ok=True)
    path = out_dir / MANIFEST
    lock_path = out_dir / MANIFEST_LOCK
    try:
        lock = open(lock_path, "a+")
    except OSError as exc:
        raise InputError(f"cannot write here ({exc.strerror})", source=str(lock_path)) from None
    with lock:
        with contextlib.suppress(ImportError):
            import fcntl

            fcntl.flock(lock.fileno(), fcntl.LOCK_EX)
        old: dict = {}
        if path.is_file():
            try:
                old = json.loads(path.read_text(encoding="utf-8"))
            except (OSError, ValueError, UnicodeDecodeError):
                aside = path.with_name(f"{MANIFEST}.unreadable-{os.getpid()}")
                with contextlib.suppress(OSError):
                    os.replace(path, aside)
                warn(f"{path} could not be read; moved to {aside.name} and started afresh")
                old = {}
            if not isinstance(old, dict):
                old = {}
            if old and old.get("schema") != MANIFEST_SCHEMA:
                aside = path.with_name(f"{MANIFEST}.schema{old.get('schema', 1)}")
                os.replace(path, aside)
                warn(f"{path} was written by an older version (no fingerprints); kept as {aside.name}")
                old = {}
        old_items = old.get("items", []) if old.get("schema") == MANIFEST_SCHEMA else []
        runs = old.get("runs", []) if old.get("schema") == MANIFEST_SCHEMA else []
        merged: dict = {}
        for it in old_items:
            if isinstance(it, dict) and "input" in it:
                merged[(it["input"], it.get("settings_fingerprint"))] = it
        for it in items:
            key = (it["input"], it["settings_fingerprint"])
            prev = merged.get(key)
            if it.pop("skipped", False):  # nothing done this run: keep the record of the run that made the files
                if prev is not None and prev.get("status") == "rendered":
                    it = {**prev, "outputs": {**it["outputs"], **prev.get("outputs", {})},
                          "fingerprints": {**it["fingerprints"], **prev.get("fingerprints", {})},
                          "clipped_pixels": {**it["clipped_pixels"], **prev.get("clipped_pixels", {})},
                          "panel": prev.get("panel") or it["panel"]}
                else:
                    it["note"] = "record rebuilt from the files' own metadata (the run that made them is not known)"
            elif prev is not None and it["status"] != "rendered":
                # a failure keeps the outputs an earlier run of the same settings made
                it = {**it, "outputs": {**prev.get("outputs", {}), **it["outputs"]},
                      "fingerprints": {**prev.get("fingerprints", {}), **it["fingerprints"]},
                      "clipped_pixels": {**prev.get("clipped_pixels", {}), **it["clipped_pixels"]},
                      "panel": it["panel"] or prev.get("panel")}
            elif prev is not None:
                for k in ("width", "height", "kind", "bits", "channels", "cube_kind", "cube_kind_source",
                          "wavelengths", "warnings"):
                    if k not in it and k in prev:
                        it[k] = prev[k]
            merged[key] = it
        final = []
        for it in merged.values():
            it = _verified(it)
            if it["outputs"] or it["panel"] or it.get("status") != "rendered":
                final.append(it)
        manifest = {"tool": "cvdfilter", "version": __version__, "command": "render", "schema": MANIFEST_SCHEMA,
                    "rendered": sum(1 for it in final if it.get("status") == "rendered"),
                    "failed": sum(1 for it in final if it.get("status") != "rendered"),
                    "runs": [*runs, run], "items": final, "caveat": caveat}
        write_text(path, to_json(manifest), inputs=all_inputs)


def _run(todo: list, renderer, options: dict, jobs: int, quiet: bool) -> list:
    """Render every job, in this process (jobs = 1) or in worker processes, with a progress bar.

    Never raises for a job's failure: a worker that dies (killed, out of memory) breaks the pool, and
    every job not finished by then comes back as a failed record; Ctrl-C does the same after stopping
    the workers. The caller records all of it in the manifest.
    """
    from rich.console import Console
    from rich.progress import BarColumn, MofNCompleteColumn, Progress, TextColumn, TimeRemainingColumn

    if not todo:
        return []
    show = not quiet and sys.stderr.isatty()
    progress = Progress(TextColumn("rendering"), BarColumn(), MofNCompleteColumn(), TimeRemainingColumn(),
                        console=Console(file=sys.stderr), disable=not show, transient=True)
    records: dict = {}
    lost = "not finished: {why}; rerun the same command to render what is missing"
    with progress:
        task = progress.add_task("render", total=len(todo))
        if jobs == 1 or len(todo) == 1:
            _WORKER.clear()
            _WORKER.update(renderer=renderer, options=options, parent=None)
            try:
                for j in todo:
                    records[j["input"]] = _task(j)
                    progress.advance(task)
            except KeyboardInterrupt:
                why = "interrupted"
                for j in todo:
                    records.setdefault(j["input"], {"input": j["input"], "status": "failed",
                                                    "error": f"{j['input']}: " + lost.format(why=why)})
            finally:
                _WORKER.clear()
        else:
            import multiprocessing
            import pickle
            from concurrent.futures import ProcessPoolExecutor, as_completed
            from concurrent.futures.process import BrokenProcessPool

            ctx = multiprocessing.get_context("spawn")
            payload = pickle.dumps((renderer, options), protocol=pickle.HIGHEST_PROTOCOL)
            pool = ProcessPoolExecutor(max_workers=min(jobs, len(todo)), mp_context=ctx, initializer=_init_worker,
                                       initargs=(payload, os.getpid()))
            why = None
            try:
                futures = {pool.submit(_task, j): j for j in todo}
                for fut in as_completed(futures):
                    j = futures[fut]
                    try:
                        records[j["input"]] = fut.result()
                    except BrokenProcessPool:
                        why = "a worker process stopped unexpectedly (killed, or out of memory)"
                    progress.advance(task)
            except KeyboardInterrupt:
                why = "interrupted"
            finally:
                workers = list((getattr(pool, "_processes", None) or {}).values())
                pool.shutdown(wait=why is None, cancel_futures=True)
                if why is not None:
                    for proc in workers:  # stop workers still busy: their results would not be recorded
                        if proc.is_alive():
                            proc.kill()
            for j in todo:
                records.setdefault(j["input"], {"input": j["input"], "status": "failed",
                                                "error": f"{j['input']}: " + lost.format(why=why or "unknown")})
    return [records[j["input"]] for j in todo]


def _render_chunk(shared: tuple, lo: int, hi: int) -> list:
    """Jobs ``lo:hi`` on a Dask worker (one thread per worker): records, never raises for a job."""
    renderer, options, todo = shared
    _WORKER.update(renderer=renderer, options=options, parent=None)
    return [_task(j) for j in todo[lo:hi]]


def _run_scheduled(todo: list, renderer, options: dict, scheduler: str, quiet: bool) -> list:
    """Render every job on the Dask scheduler ``scheduler`` through the execution layer, one file per chunk."""
    from rich.console import Console
    from rich.progress import BarColumn, MofNCompleteColumn, Progress, TextColumn, TimeRemainingColumn

    from ..errors import InputError
    from ..execution import chunk_bounds, map_chunks

    if not todo:
        return []
    progress = Progress(TextColumn("rendering"), BarColumn(), MofNCompleteColumn(), TimeRemainingColumn(),
                        console=Console(file=sys.stderr), disable=quiet or not sys.stderr.isatty(), transient=True)
    records: list = []
    with progress:
        task = progress.add_task("render", total=len(todo))
        try:
            for part in map_chunks(_render_chunk, (renderer, options, todo), chunk_bounds(len(todo), 1),
                                   scheduler=scheduler, progress=lambda done, total, i: progress.update(
                                       task, completed=done)):
                records += part
        except (InputError, KeyboardInterrupt, OSError) as exc:
            why = "interrupted" if isinstance(exc, KeyboardInterrupt) else " ".join(str(exc).split())
            records += [{"input": j["input"], "status": "failed",
                         "error": f"{j['input']}: not finished: {why}; rerun the same command to render what is "
                                  "missing"} for j in todo[len(records):]]
    return records

