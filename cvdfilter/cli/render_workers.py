"""Running ``cvdfilter render`` jobs: in this process or in worker processes (``spawn``) that die with
their parent, with a progress bar; a job's failure comes back as a record, never as an exception.

Public (for cli/render_cmd.py): :func:`run_jobs`, :func:`render_task`, :func:`init_worker`.
"""

from __future__ import annotations

import os
import sys
import time

__all__ = ["run_jobs", "render_task", "init_worker"]

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


def init_worker(payload: bytes, parent_pid: int) -> None:
    """Worker initializer: die with the parent, one BLAS thread (this process only), then the renderer."""
    import pickle

    _die_with_parent(parent_pid)
    for key, value in _WORKER_ENV.items():  # read by BLAS when numpy loads, which in a fresh worker is now
        os.environ.setdefault(key, value)
    renderer, options = pickle.loads(payload)
    _WORKER.update(renderer=renderer, options=options, parent=parent_pid)


def render_task(job: dict) -> dict:
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


def run_jobs(todo: list, renderer, options: dict, jobs: int, quiet: bool) -> list:
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
                    records[j["input"]] = render_task(j)
                    progress.advance(task)
            except KeyboardInterrupt:
                why = "interrupted"
                for j in todo:
                    records.setdefault(j["input"], {"input": j["input"], "status": "failed",
                                                    "error": f"{j['input']}: " + lost.format(why=why)})
            finally:
                _WORKER.clear()
        else:
            import pickle

            from ..execution import process_map

            def done(j: dict, rec: dict) -> None:
                records[j["input"]] = rec
                progress.advance(task)

            payload = pickle.dumps((renderer, options), protocol=pickle.HIGHEST_PROTOCOL)
            stopped = process_map(render_task, todo, processes=jobs, initializer=init_worker,
                                  initargs=(payload, os.getpid()), on_result=done)
            for j in todo:
                records.setdefault(j["input"], {"input": j["input"], "status": "failed",
                                                "error": f"{j['input']}: " + lost.format(why=stopped or "unknown")})
    return [records[j["input"]] for j in todo]


def _render_chunk(shared: tuple, lo: int, hi: int) -> list:
    """Jobs ``lo:hi`` on a Dask worker (one thread per worker): records, never raises for a job."""
    renderer, options, todo = shared
    _WORKER.update(renderer=renderer, options=options, parent=None)
    return [render_task(j) for j in todo[lo:hi]]


def run_scheduled(todo: list, renderer, options: dict, scheduler: str, quiet: bool) -> list:
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
