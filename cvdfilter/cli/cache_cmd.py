"""``cvdfilter cache info|clear``: where the reference-data cache is, and emptying it."""

from __future__ import annotations

import typer

from .common import emit, fail, table_text, to_json


def _size(n: int) -> str:
    return f"{n / 1e6:.1f} MB" if n >= 1e5 else f"{n / 1e3:.0f} kB"


def register(app: typer.Typer) -> None:
    @app.command("cache")
    def cache(
        action: str = typer.Argument(..., help="info (where the cache is and what it holds) or clear (empty it)"),
        format: str = typer.Option("table", "--format", "-f", help="table or json"),
    ) -> None:
        """Show or empty the on-disk cache of reference data (CIE tables and other library data on the grid).

        The cache holds only reference data, never results on your files. It lives in
        $CVDFILTER_CACHE_DIR, else $XDG_CACHE_HOME/cvdfilter, else ~/.cache/cvdfilter;
        CVDFILTER_CACHE=off turns it off.

        Example: cvdfilter cache info
        """
        from ..spectra import cache as _cache

        if format not in ("table", "json"):
            fail(f"--format {format} is not table or json")
        if action == "info":
            info = _cache.cache_info()
            if format == "json":
                emit(to_json(info), None)
                return
            state = "on" if info["enabled"] else "off (CVDFILTER_CACHE or CVDFILTER_CACHE_DIR is 'off')"
            rows = [(f["folder"] + (" (current)" if f["current"] else ""), f["files"], _size(f["bytes"]))
                    for f in info["folders"]]
            text = f"cache: {state}\nlocation: {info['root']}\ncurrent key folder: {info['current']}\n"
            text += "key: " + ", ".join(f"{k} {v if k != 'code_sha256' else v[:12]}"
                                        for k, v in info["key"].items()) + "\n"
            text += (table_text(["folder", "files", "size"], rows) if rows else "(empty)\n")
            emit(text, None)
        elif action == "clear":
            done = _cache.clear_cache()
            if format == "json":
                emit(to_json(done), None)
                return
            emit(f"removed {done['folders']} cache folder(s), {_size(done['bytes'])}, from {done['root']}\n", None)
        else:
            fail(f"cache {action}: the action is info or clear")
