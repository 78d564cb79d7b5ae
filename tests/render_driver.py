"""Runs ``cvdfilter render`` with fault hooks, for the kill tests in test_render_cli.py (not a test module).

Usage: python render_driver.py HOOK MARKERS_DIR render-arguments...

The hooks are installed at import, so they also act in the worker processes (which the ``spawn`` start
method starts by importing this file as ``__mp_main__``):

* ``crash``: rendering an input whose name contains "crash" ends its worker process at once (as the
  kernel's out-of-memory killer would).
* ``slow``: rendering an input whose name contains "slow" writes MARKERS_DIR/PID and then waits 60 s.
* ``tiff-stall``: the Nth TIFF written by a process (N from RENDER_DRIVER_STALL_AT, default 1) first
  writes the whole temporary file, then MARKERS_DIR/PID, then waits 60 s before the rename (a kill then
  lands mid-write, after the N-1 earlier files are complete).
"""

from __future__ import annotations

import os
import pathlib
import sys
import time

HOOK = os.environ.get("RENDER_DRIVER_HOOK", "")
MARKERS = pathlib.Path(os.environ.get("RENDER_DRIVER_MARKERS", "."))


def _mark() -> None:
    (MARKERS / str(os.getpid())).write_text("")


def _install() -> None:
    import cvdfilter.rendering as render

    real = render.render_file

    def render_file(path, *args, **kwargs):
        name = pathlib.Path(path).name
        if HOOK == "crash" and "crash" in name:
            os._exit(9)
        if HOOK == "slow" and "slow" in name:
            _mark()
            time.sleep(60)
        return real(path, *args, **kwargs)

    render.render_file = render_file
    if HOOK == "tiff-stall":
        import tifffile

        real_write = tifffile.imwrite
        calls = []
        stall_at = int(os.environ.get("RENDER_DRIVER_STALL_AT", "1"))

        def imwrite(path, *args, **kwargs):
            result = real_write(path, *args, **kwargs)
            calls.append(path)
            if len(calls) == stall_at:
                _mark()
                time.sleep(60)
            return result

        tifffile.imwrite = imwrite


if HOOK:  # only when run as the driver (pytest's doctest collection imports this file too)
    _install()

if __name__ == "__main__":
    from cvdfilter.cli import main

    sys.argv = ["cvdfilter", *sys.argv[1:]]
    main()
