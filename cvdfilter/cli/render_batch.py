"""``cvdfilter render`` batches: which files a batch reads, one distinct output name per input and view, and
what is already done (resume per output file, by the fingerprint in each file's metadata).

Public (for cli/render_cmd.py): :func:`expand_inputs`, :func:`plan_outputs`, :func:`existing_state`,
:func:`conflict_message`, :data:`SCAN_SUFFIXES`.
"""

from __future__ import annotations

import glob
import pathlib
from typing import List

from .render_manifest import MANIFEST, MANIFEST_LOCK

__all__ = ["expand_inputs", "plan_outputs", "existing_state", "conflict_message", "SCAN_SUFFIXES"]

#: Suffixes picked up when a directory is given.
SCAN_SUFFIXES = (".png", ".jpg", ".jpeg", ".tif", ".tiff", ".npy", ".npz")


def expand_inputs(items: List[str], out_dir: pathlib.Path) -> list[tuple[pathlib.Path, pathlib.Path]]:
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


def plan_outputs(files, out_dir: pathlib.Path, views, fmt: str, panel: bool) -> list[dict]:
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
    jobs: list[dict] = []
    seen: dict[str, str] = {}
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


def existing_state(plan: list, settings_fp: str, force: bool) -> tuple[list, list, list]:
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


def conflict_message(conflicts: list, settings: dict) -> str:
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

