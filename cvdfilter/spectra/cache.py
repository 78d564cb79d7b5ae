"""The on-disk cache of reference data, and an in-process memo for everything else.

colour-science and scipy take a second or more to import. The *reference* data
the tool needs (CIE colour-matching functions and illuminants, surface sets,
display primaries, sRGB tables, spline coefficients of the bundled CIE 2006
tables) are built once with those libraries, resampled onto the grid and stored
as ``.npz`` files, so later runs load them in milliseconds.

Only reference data go to disk: :func:`cached_arrays` is for fixed tables whose
key names a published data set and a grid. Anything computed from a user's
data or parameters (resampled curves, rendition of a filtered light, pigments
shifted by a chosen amount) goes through :func:`memo_arrays`, which keeps a
bounded number of results in memory for the life of the process and never
writes a file.

Where the cache lives
    ``$CVDFILTER_CACHE_DIR`` if set, else ``$XDG_CACHE_HOME/cvdfilter``, else
    ``~/.cache/cvdfilter`` (``%LOCALAPPDATA%\\cvdfilter\\cache`` on Windows,
    ``~/Library/Caches/cvdfilter`` on macOS). ``CVDFILTER_CACHE=off`` (or
    ``CVDFILTER_CACHE_DIR=off``) turns it off: nothing is read or written.

What keys it
    One sub-folder per *key*: the package version, the versions of numpy,
    scipy and colour-science, and a SHA-256 of the package's own code and data
    files (``*.py``, ``*.csv``, ``*.json`` of ``cvdfilter`` and
    ``cvdfilter.cone_data``). Any edit or upgrade gives a new folder; the
    :data:`KEEP_FOLDERS` most recently used folders are kept and older ones are
    removed. ``cvdfilter cache info`` shows it, ``cvdfilter cache clear``
    empties it.

Arrays handed out by either function are read-only (``flags.writeable`` is
False) and each call returns a new dict, so no caller can change what another
caller receives; copy an array before changing it.
"""

from __future__ import annotations

import collections
import functools
import hashlib
import json
import os
import pathlib
import re
import sys
import threading
from collections.abc import Callable

import numpy as np

__all__ = ["KEEP_FOLDERS", "MEMO_SIZE", "cache_dir", "cache_info", "cache_root", "cached_arrays", "clear_cache",
           "enabled", "memo_arrays"]

#: Key folders kept under the cache root (the most recently used; one per installed version or code state).
KEEP_FOLDERS = 3
#: Results kept in memory by :func:`memo_arrays` (least recently used dropped first).
MEMO_SIZE = 512
#: The marker file in every key folder: what the key is made of. Only folders holding it are ever removed.
MARKER = "cvdfilter-cache.json"
_OFF = {"off", "0", "no", "false", "none", "disable", "disabled"}
_LIBRARIES = ("numpy", "scipy", "colour-science")
# Folders written by earlier versions (before the key had a code hash): removed by clear_cache.
_LEGACY = re.compile(r"^v[0-9][^/]*-colour[0-9][^/]*$")


def enabled() -> bool:
    """Whether the on-disk cache is on (``CVDFILTER_CACHE`` / ``CVDFILTER_CACHE_DIR`` not ``off``)."""
    if os.environ.get("CVDFILTER_CACHE", "").strip().lower() in _OFF:
        return False
    return os.environ.get("CVDFILTER_CACHE_DIR", "").strip().lower() not in _OFF


def cache_root() -> pathlib.Path:
    """The folder that holds the key folders (whether or not the cache is on)."""
    env = os.environ.get("CVDFILTER_CACHE_DIR", "").strip()
    if env and env.lower() not in _OFF:
        return pathlib.Path(env).expanduser()
    xdg = os.environ.get("XDG_CACHE_HOME", "").strip()
    if xdg:
        return pathlib.Path(xdg).expanduser() / "cvdfilter"
    if sys.platform == "win32":  # pragma: no cover - platform-specific
        base = os.environ.get("LOCALAPPDATA")
        return (pathlib.Path(base) if base else pathlib.Path.home() / "AppData" / "Local") / "cvdfilter" / "cache"
    if sys.platform == "darwin":  # pragma: no cover - platform-specific
        return pathlib.Path.home() / "Library" / "Caches" / "cvdfilter"
    return pathlib.Path.home() / ".cache" / "cvdfilter"


def _library_version(name: str) -> str:
    from importlib.metadata import PackageNotFoundError, version

    try:
        return version(name)
    except PackageNotFoundError:  # pragma: no cover - all three are dependencies
        return "absent"


def _package_files() -> list[tuple[str, pathlib.Path]]:
    """(label, path) of the package's own code and data files, in a fixed order."""
    from importlib.util import find_spec

    out = []
    for package in ("cvdfilter", "cvdfilter.cone_data"):
        spec = find_spec(package)
        if spec is None or not spec.submodule_search_locations:  # pragma: no cover - both are installed
            continue
        for root in spec.submodule_search_locations:
            root = pathlib.Path(root)
            for path in root.rglob("*"):
                if path.suffix in (".py", ".csv", ".json") and "__pycache__" not in path.parts and path.is_file():
                    if package == "cvdfilter" and path.relative_to(root).parts[0] == "cone_data":
                        continue
                    out.append((f"{package}/{path.relative_to(root).as_posix()}", path))
    return sorted(out)


@functools.lru_cache(maxsize=1)
def key_parts() -> dict:
    """What the cache key is made of: package version, library versions, code/data hash."""
    from .._version import __version__

    digest = hashlib.sha256()
    for label, path in _package_files():
        digest.update(label.encode() + b"\0")
        digest.update(hashlib.sha256(path.read_bytes()).digest())
    return {"cvdfilter": __version__, **{lib: _library_version(lib) for lib in _LIBRARIES},
            "code_sha256": digest.hexdigest()}


def _folder_name(parts: dict) -> str:
    h = hashlib.sha256(json.dumps(parts, sort_keys=True).encode()).hexdigest()[:16]
    return f"v{parts['cvdfilter']}-{h}"


def cache_dir() -> pathlib.Path | None:
    """The key folder used by this process, or None when the cache is off."""
    if not enabled():
        return None
    return cache_root() / _folder_name(key_parts())


_memory: dict[str, dict[str, np.ndarray]] = {}
_memo: collections.OrderedDict[str, dict[str, np.ndarray]] = collections.OrderedDict()
_lock = threading.Lock()
_prepared: set[pathlib.Path] = set()


def _frozen(arrays: dict) -> dict[str, np.ndarray]:
    out = {}
    for k, v in arrays.items():
        a = np.array(v) if not isinstance(v, np.ndarray) else v
        a.setflags(write=False)
        out[k] = a
    return out


def _prepare(folder: pathlib.Path) -> None:
    """Create the key folder with its marker (once per process), mark it used and prune old folders."""
    if folder in _prepared:
        return
    _prepared.add(folder)
    try:
        folder.mkdir(parents=True, exist_ok=True)
        marker = folder / MARKER
        if not marker.exists():
            _write_atomic(marker, json.dumps(key_parts(), indent=1).encode())
        os.utime(folder)
        _prune(folder.parent, keep=folder)
    except OSError:
        pass


def _ours(folder: pathlib.Path) -> bool:
    return folder.is_dir() and ((folder / MARKER).is_file() or bool(_LEGACY.match(folder.name)))


def _prune(root: pathlib.Path, keep: pathlib.Path) -> None:
    """Remove stale temporaries in ``keep`` and all but the KEEP_FOLDERS most recently used key folders."""
    for tmp in keep.glob(".*.tmp*"):
        try:
            if tmp.stat().st_mtime < keep.stat().st_mtime - 3600:
                tmp.unlink()
        except OSError:
            pass
    others = [p for p in root.iterdir() if p != keep and (p / MARKER).is_file()]
    others.sort(key=lambda p: p.stat().st_mtime, reverse=True)
    for old in others[KEEP_FOLDERS - 1:]:
        _remove_folder(old)


def _remove_folder(folder: pathlib.Path) -> int:
    """Delete one key folder's files (only cache files) and the folder; returns bytes freed."""
    freed = 0
    for f in folder.iterdir():
        if f.is_file() and (f.suffix in (".npz", ".json") or ".tmp" in f.name):
            try:
                freed += f.stat().st_size
                f.unlink()
            except OSError:
                pass
    try:
        folder.rmdir()
    except OSError:
        pass
    return freed


def _write_atomic(path: pathlib.Path, data: bytes) -> None:
    tmp = path.with_name(f".{path.name}.{os.getpid()}.{threading.get_ident()}.tmp")
    try:
        tmp.write_bytes(data)
        os.replace(tmp, path)
    finally:
        if tmp.exists():
            tmp.unlink()


def _file_name(key: str) -> str:
    return re.sub(r"[^A-Za-z0-9_.-]+", "_", key) + ".npz"


def cached_arrays(key: str, build: Callable[[], dict[str, np.ndarray]]) -> dict[str, np.ndarray]:
    """Reference arrays stored under ``key``, built with ``build()`` and stored on disk if absent.

    Use only for reference data from libraries or the package's own tables
    (a bounded set of keys naming a data set and a grid); user data go through
    :func:`memo_arrays`. ``build`` returns a dict of numpy arrays (strings as
    numpy unicode arrays, no objects). Failures to read or write the cache are
    ignored: the cache only saves time.

    Returns a new dict of read-only arrays.
    """
    arrays = _memory.get(key)
    if arrays is not None:
        return dict(arrays)
    folder = cache_dir()
    path = None
    if folder is not None:
        _prepare(folder)
        path = folder / _file_name(key)
        if path.is_file():
            try:
                with np.load(path, allow_pickle=False) as data:
                    arrays = _frozen({k: data[k] for k in data.files})
            except (OSError, ValueError, EOFError):
                arrays = None
    if arrays is None:
        arrays = _frozen({k: np.asarray(v) for k, v in build().items()})
        if path is not None:
            try:
                import io

                buf = io.BytesIO()
                np.savez(buf, **arrays)
                _write_atomic(path, buf.getvalue())
            except OSError:
                pass
    _memory[key] = arrays
    return dict(arrays)


def memo_arrays(key: str, build: Callable[[], dict[str, np.ndarray]]) -> dict[str, np.ndarray]:
    """Arrays computed by ``build()``, remembered in memory (never on disk) under ``key``.

    For results on a user's data or parameters. At most :data:`MEMO_SIZE`
    results are kept (least recently used dropped). Returns a new dict of
    read-only arrays.
    """
    with _lock:
        arrays = _memo.get(key)
        if arrays is not None:
            _memo.move_to_end(key)
            return dict(arrays)
    arrays = _frozen({k: np.asarray(v) for k, v in build().items()})
    with _lock:
        _memo[key] = arrays
        while len(_memo) > MEMO_SIZE:
            _memo.popitem(last=False)
    return dict(arrays)


def cache_info() -> dict:
    """Where the cache is, whether it is on, its current key and the size of each key folder."""
    root = cache_root()
    current = _folder_name(key_parts())
    folders = []
    if root.is_dir():
        for p in sorted(root.iterdir()):
            if _ours(p):
                files = [f for f in p.iterdir() if f.is_file() and f.suffix == ".npz"]
                folders.append({"folder": p.name, "current": p.name == current, "files": len(files),
                                "bytes": sum(f.stat().st_size for f in files)})
    return {"enabled": enabled(), "root": str(root), "current": current, "key": key_parts(),
            "folders": folders, "bytes": sum(f["bytes"] for f in folders),
            "environment": {"CVDFILTER_CACHE_DIR": os.environ.get("CVDFILTER_CACHE_DIR"),
                            "CVDFILTER_CACHE": os.environ.get("CVDFILTER_CACHE"),
                            "XDG_CACHE_HOME": os.environ.get("XDG_CACHE_HOME")}}


def clear_cache() -> dict:
    """Remove every key folder under the cache root (only files the cache wrote) and the in-memory copies.

    Returns ``{"root", "folders", "bytes"}``: what was removed.
    """
    root = cache_root()
    removed, freed = 0, 0
    if root.is_dir():
        for p in sorted(root.iterdir()):
            if _ours(p):
                freed += _remove_folder(p)
                removed += 1
        try:
            root.rmdir()  # only if empty: never removes anything the cache did not write
        except OSError:
            pass
    _memory.clear()
    _prepared.clear()
    with _lock:
        _memo.clear()
    return {"root": str(root), "folders": removed, "bytes": freed}
