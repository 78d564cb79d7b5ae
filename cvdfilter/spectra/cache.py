"""A small on-disk cache for reference data taken from colour-science.

colour-science takes over a second to import. The reference spectra the tool
needs (CIE CMFs, illuminants, surface sets) are resampled onto the grid with
colour-science once, stored as ``.npz`` under the user's cache folder, and
loaded in milliseconds afterwards. The key includes the tool's and
colour-science's versions and the grid, so an upgrade rebuilds it.

Set ``CVDFILTER_CACHE_DIR`` to choose the folder, or to ``off`` to disable.
"""

from __future__ import annotations

import functools
import os
import pathlib
import re
from collections.abc import Callable

import numpy as np

__all__ = ["cached_arrays", "cache_dir"]


@functools.lru_cache(maxsize=1)
def _colour_version() -> str:
    from importlib.metadata import PackageNotFoundError, version

    try:
        return version("colour-science")
    except PackageNotFoundError:  # pragma: no cover - colour is a dependency
        return "unknown"


def cache_dir() -> pathlib.Path | None:
    """The cache folder, or None when caching is off."""
    from .._version import __version__

    env = os.environ.get("CVDFILTER_CACHE_DIR")
    if env and env.lower() == "off":
        return None
    base = pathlib.Path(env) if env else pathlib.Path(
        os.environ.get("XDG_CACHE_HOME", pathlib.Path.home() / ".cache")) / "cvdfilter"
    return base / f"v{__version__}-colour{_colour_version()}"


_memory: dict[str, dict[str, np.ndarray]] = {}


def cached_arrays(key: str, build: Callable[[], dict[str, np.ndarray]]) -> dict[str, np.ndarray]:
    """Return the arrays stored under ``key``, building and storing them if absent.

    ``build`` returns a dict of numpy arrays (strings as numpy unicode arrays).
    Failures to write the cache are ignored: the cache only saves time.
    """
    if key in _memory:
        return _memory[key]
    folder = cache_dir()
    path = None
    if folder is not None:
        path = folder / (re.sub(r"[^A-Za-z0-9_.-]+", "_", key) + ".npz")
        if path.exists():
            try:
                with np.load(path, allow_pickle=False) as data:
                    arrays = {k: data[k] for k in data.files}
                _memory[key] = arrays
                return arrays
            except (OSError, ValueError):
                pass
    arrays = {k: np.asarray(v) for k, v in build().items()}
    _memory[key] = arrays
    if path is not None:
        try:
            path.parent.mkdir(parents=True, exist_ok=True)
            tmp = path.with_suffix(f".{os.getpid()}.tmp.npz")
            np.savez(tmp, **arrays)
            os.replace(tmp, path)
        except OSError:
            pass
    return arrays
