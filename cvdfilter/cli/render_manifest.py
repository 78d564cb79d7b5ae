"""The ``render-manifest.json`` of a render output folder: one record per (input, settings), merged under a
lock by concurrent batches, never claiming a file that no longer carries its recorded fingerprint.

Public (for cli/render_cmd.py): :func:`update_manifest`, :func:`manifest_item`, :func:`now`, :data:`MANIFEST`,
:data:`MANIFEST_LOCK`, :data:`MANIFEST_SCHEMA`.
"""

from __future__ import annotations

import os
import pathlib

from .common import warn

__all__ = ["update_manifest", "manifest_item", "now", "MANIFEST", "MANIFEST_LOCK", "MANIFEST_SCHEMA"]

MANIFEST = "render-manifest.json"
#: The lock file that serialises manifest updates of concurrent batches writing into one folder.
MANIFEST_LOCK = ".render-manifest.lock"
MANIFEST_SCHEMA = 2


def now() -> str:
    import datetime

    return datetime.datetime.now(datetime.timezone.utc).strftime("%Y-%m-%dT%H:%M:%S.%fZ")


def manifest_item(rec: dict, job: dict, run_id: str | None, settings_fp: str) -> dict:
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


def verified(item: dict) -> dict:
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


def update_manifest(out_dir: pathlib.Path, run: dict, items: list, all_inputs: list, caveat: str) -> None:
    """Merge this run into ``OUT/render-manifest.json`` under an exclusive lock (fcntl.flock).

    Records are keyed by (input, settings fingerprint): a rerun updates its own records and keeps
    every other one (earlier runs, other settings, other batches writing into the same folder); an
    output listed in any record is kept only while the file still carries the recorded fingerprint,
    so that the manifest never claims a file that was replaced or removed.
    """
    import contextlib

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
        old = _read_old(path)
        old_items = old.get("items", []) if old.get("schema") == MANIFEST_SCHEMA else []
        runs = old.get("runs", []) if old.get("schema") == MANIFEST_SCHEMA else []
        merged = _merge(old_items, items)
        final = []
        for it in merged.values():
            it = verified(it)
            if it["outputs"] or it["panel"] or it.get("status") != "rendered":
                final.append(it)
        manifest = {"tool": "cvdfilter", "version": __version__, "command": "render", "schema": MANIFEST_SCHEMA,
                    "rendered": sum(1 for it in final if it.get("status") == "rendered"),
                    "failed": sum(1 for it in final if it.get("status") != "rendered"),
                    "runs": [*runs, run], "items": final, "caveat": caveat}
        write_text(path, to_json(manifest), inputs=all_inputs)



def _read_old(path: pathlib.Path) -> dict:
    """The manifest already in the folder ({} when there is none; an unreadable or old one is moved aside)."""
    import contextlib
    import json

    old: dict = {}
    if not path.is_file():
        return old
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
    return old


def _merge(old_items: list, items: list) -> dict:
    """This run's records merged into the earlier ones, keyed by (input, settings fingerprint)."""
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
    return merged
