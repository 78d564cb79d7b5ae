"""Scores streamed to a file: ``cvdfilter score --format parquet -o sweep.parquet`` (and chunked CSV).

:func:`score_to_file` scores any number of filters chunk by chunk and writes the rows of each chunk as it
comes, so a sweep of millions of filters never holds its results (nor its transmittances: sweeps are built
per chunk, :class:`~cvdfilter.filter_source.FilterSource`) in memory. Each chunk is a pure function of its
filter range (:class:`StreamTask`), mapped by the execution layer (:mod:`cvdfilter.execution`) on threads
or a Dask cluster; its rows are the CSV view's rows (``Scorecard.csv_rows``: one row per filter x observer,
one per statistic for a population) in a fixed column layout taken from a probe (the first filter of each
part of the filter list), built column by column from the chunk's arrays
(:func:`cvdfilter.score_stream_cells.chunk_cells`) where that gives the CSV view's cells on the probe.
Parts, resume, atomic finalisation and the manifest: :mod:`cvdfilter.io.chunked`.

The Parquet file has the CSV's columns (dotted names, in the same order) typed as ``string``, ``double``,
``int64`` or ``bool`` (nulls where the CSV cell is empty), one row group per chunk, and in its key-value
metadata ``cvdfilter`` = the run's header (tool, version, caveat, models and thresholds, inputs) as JSON.

Public: :func:`score_to_file`, :class:`StreamTask`, :data:`STREAM_CHUNK`.
"""

from __future__ import annotations

import dataclasses
import json
import pathlib
from dataclasses import dataclass
from typing import Any

import numpy as np

from .errors import InputError

__all__ = ["score_to_file", "StreamTask", "STREAM_CHUNK"]

#: Filters per chunk of a streamed run (the in-memory scorer's chunk: the same numbers, bit for bit).
STREAM_CHUNK = 1024


def _column_types(columns: list, rows: list) -> list:
    """Per column ``string``, ``double``, ``int64`` or ``bool`` from the probe's values (all empty: string)."""
    types = []
    for j, _ in enumerate(columns):
        vals = [r[j] for r in rows if r[j] is not None]
        if vals and all(isinstance(v, bool) for v in vals):
            types.append("bool")
        elif vals and all(isinstance(v, int) and not isinstance(v, bool) for v in vals):
            types.append("int64")
        elif vals and all(isinstance(v, (int, float)) and not isinstance(v, bool) for v in vals):
            types.append("double")
        else:
            types.append("string")
    return types


@dataclass(eq=False)
class StreamTask:
    """What every chunk of a streamed run needs, shipped to the workers once: ``task(lo, hi) -> (bytes, rows)``.

    ``bytes`` is the chunk's part (CSV rows without the header, or an Arrow IPC stream of the rows in the
    Parquet file's schema: :func:`cvdfilter.io.chunked.ipc_bytes`).
    """

    source: Any  # FilterSource
    inp: Any  # ScoreInputs (filters: the probe)
    runner: Any  # ChunkRunner.light() of the fixed observers, or None
    fixed: list
    plans: list
    record: dict
    fmt: str
    columns: list | None = None
    types: list | None = None
    #: Build the cells column by column (:func:`cvdfilter.score_stream_cells.chunk_cells`), checked equal to
    #: the CSV view's on the probe by :func:`score_to_file`; otherwise from ``Scorecard.csv_rows``.
    fast: bool = False

    def card(self, fs) -> Any:
        """The Scorecard of the filters ``fs`` (one chunk), computed as :func:`cvdfilter.score` does."""
        from .score_plan import filter_results
        from .scorecard import Scorecard, score_after_fixed

        inp = dataclasses.replace(self.inp, filters=fs)
        groups, n = inp.groups, len(fs)
        results = filter_results(inp)
        per_obs: list = [dict() for _ in inp.observers]
        if self.runner is not None:
            part = dataclasses.replace(self.runner, transmittance=fs.transmittance).compute(0, n)
            for k, plan, store in zip(self.fixed, self.plans, part["stores"]):
                d = {**plan.store, **store}
                present = [c for i, c in enumerate(plan.cols) if i != plan.observer.missing_cone]
                d["undefined"] = ~np.all(part["whites"][:, present] > 0, axis=1)
                per_obs[k] = d
        score_after_fixed(inp, per_obs, results, scheduler="local")  # populations in this chunk's process; rendition
        return Scorecard(fs, inp.illuminant, inp.surfaces, inp.observers, inp.adaptation, groups, inp.signal_lights,
                         results, per_obs, inp.settings(), self.record)

    def cells_of(self, fs) -> dict:
        """The chunk's cells (:class:`~cvdfilter.score_stream_cells.Cells`), column by column in
        :attr:`columns` (the CSV view's)."""
        from .score_stream_cells import Cells, chunk_cells

        assert self.columns is not None
        card = self.card(fs)
        if self.fast:
            return chunk_cells(card, self.columns)
        columns, rows = card.csv_rows()
        extra = [c for c in columns if c not in self.columns]
        if extra:
            raise InputError(f"filters {fs.names[0]} to {fs.names[-1]} give columns the first filters do not "
                             f"({', '.join(extra[:3])})", hint="score these filters in a separate run")
        at = {c: j for j, c in enumerate(columns)}
        return {c: Cells([r[at[c]] for r in rows] if c in at else [None] * len(rows)) for c in self.columns}

    def __call__(self, lo: int, hi: int) -> tuple[bytes, int]:
        cells = self.cells_of(self.source.chunk(lo, hi))
        n_rows = len(next(iter(cells.values()))) if cells else 0
        return self.encode(cells), n_rows

    def encode(self, cells: dict) -> bytes:
        """The chunk's part: CSV rows without the header, or (Parquet) an Arrow IPC stream of one record batch
        in the file's schema, which :mod:`cvdfilter.io.chunked` writes into the Parquet file."""
        assert self.columns is not None and self.types is not None
        if self.fmt == "csv":
            from .score_stream_cells import csv_lines

            return csv_lines([cells[c] for c in self.columns]).encode("utf-8")
        import pyarrow as pa

        from .io.chunked import ipc_bytes

        arrays = []
        for c, t in zip(self.columns, self.types):
            try:
                arrays.append(cells[c].arrow(t))
            except (pa.ArrowInvalid, pa.ArrowTypeError, TypeError) as exc:
                raise InputError(f"column {c}: a value does not fit the column type {t} ({exc})",
                                 hint="score these filters in a separate run") from None
        return ipc_bytes(pa.Table.from_arrays(arrays, names=self.columns))


def _run_chunk(task: StreamTask, lo: int, hi: int) -> tuple[bytes, int]:
    return task(lo, hi)


def score_to_file(filters, output, *, fmt: str | None = None, chunk: int = STREAM_CHUNK, scheduler=None,
                  progress=None, inputs=(), units: str | None = None, bandwidth: float | None = None,
                  **kwargs) -> dict:
    """Score ``filters`` chunk by chunk into ``output`` (``.parquet`` or ``.csv``); returns the manifest.

    Parameters
    ----------
    filters
        As :func:`cvdfilter.score`; a parametric sweep spec may describe more than
        :data:`~cvdfilter.spectra.filters.MAX_SWEEP_MEMBERS` filters (it is built chunk by chunk).
    output : path
        The file to write (atomically); ``output.manifest.json`` is written beside it when it is complete.
    fmt : str, optional
        ``parquet`` or ``csv``; default from the suffix.
    chunk : int
        Filters per chunk (part of the run's fingerprint).
    scheduler : str or Executor, optional
        Where the chunks run (:mod:`cvdfilter.execution`); the file's bytes do not depend on it.
    progress : callable, optional
        ``progress("filters", done, total)``.
    inputs : sequence of paths
        Files the run reads (never overwritten).
    **kwargs
        The other arguments of :func:`cvdfilter.score` (observers, metrics, thresholds...); not
        ``sensitivity`` or ``members``.

    A run interrupted (killed, a worker lost for good) leaves its finished chunks in
    ``.NAME.cvdfilter-parts/``; the same call again computes only the missing chunks and writes a file
    equal, byte for byte, to an uninterrupted run's.

    >>> import tempfile, pathlib
    >>> out = pathlib.Path(tempfile.mkdtemp()) / "nd.csv"
    >>> score_to_file("nd:t=0.2..0.8/0.2", out, observers=["normal"], metrics="photometry")["rows"]
    4
    """
    from .execution import chunk_bounds
    from .io.atomic import check_outputs
    from .io.chunked import ChunkedOutput
    from .tables import csv_text

    path = pathlib.Path(output)
    fmt = _check_stream_args(output, fmt, kwargs)
    check_outputs([path], list(inputs))
    task, header = _stream_task(filters, fmt, kwargs, units, bandwidth)
    columns: list = task.columns or []
    n = len(task.source)
    bounds = chunk_bounds(n, chunk)
    fingerprint = {"format": fmt, "chunk": chunk, "filters": n, "parts": task.source.describe(),
                   "columns": columns, "types": task.types, "header": header}
    meta = {"cvdfilter": json.dumps(header, ensure_ascii=False, allow_nan=False)}
    out = ChunkedOutput(path, fmt, fingerprint, len(bounds), metadata=meta)
    done = out.open()
    try:
        shipped = _write_chunks(task, out, bounds, done, progress, scheduler)
    except BaseException:
        out.abort()
        raise
    return out.finalise(header=csv_text(columns, []),
                        extra={"tool": "cvdfilter", "version": header["version"], "caveat": header["caveat"],
                               "filters": n, "chunk_filters": chunk, "columns": columns, "types": task.types,
                               "resumed_chunks": out.resumed, "shipped_bytes": shipped})


def _check_stream_args(output, fmt: str | None, kwargs: dict) -> str:
    """The output format; drops ``sensitivity``/``members`` from ``kwargs`` (refused when set)."""
    from .io.chunked import FORMATS

    fmt = (fmt or pathlib.Path(output).suffix.lstrip(".")).lower()
    if fmt not in FORMATS:
        raise InputError(f"streamed output must be {' or '.join(FORMATS)}, got '{fmt}'", source=str(output))
    if kwargs.get("sensitivity") or kwargs.get("members"):
        raise InputError("--sensitivity and --members are not available for a streamed output",
                         hint="score those filters to JSON without streaming")
    kwargs.pop("sensitivity", None)
    kwargs.pop("members", None)
    if fmt == "parquet":
        try:
            import pyarrow  # noqa: F401
        except ImportError:
            raise InputError("Parquet output needs pyarrow", hint="pip install 'cvdfilter[frames]'") from None
    return fmt


def _stream_task(filters, fmt: str, kwargs: dict, units, bandwidth) -> tuple[StreamTask, dict]:
    """The chunk task (inputs validated on a probe of the filters, columns and types from the probe's
    scorecard) and the JSON header of the run."""
    from .filter_source import FilterSource
    from .score_plan import ScoreInputs, plan_observers
    from .score_population import is_population
    from .scorecard import _input_record

    source = FilterSource.from_specs(filters, grid=kwargs.get("grid"), units=units, bandwidth=bandwidth)
    probe = source.probe()
    inp = ScoreInputs.validate(probe, **kwargs)
    fixed = [k for k, o in enumerate(inp.observers) if not is_population(o)]
    per_observer = any(g in inp.groups for g in ("contrast", "discrimination", "confusion"))
    plans, runner = plan_observers(inp, [inp.observers[k] for k in fixed]) if per_observer and fixed else ([], None)
    light = runner.light() if runner is not None else None
    light_plans = light.plans if light is not None else []
    record = _input_record(filters, inp, kwargs.get("signal_spectra"))
    task = StreamTask(source, inp, light, fixed, light_plans, record, fmt)
    probe_card = task.card(probe)
    columns, rows = probe_card.csv_rows()
    task.columns, task.types = columns, _column_types(columns, rows)
    if len(fixed) == len(inp.observers):  # the column-by-column cells where they are the CSV view's
        from .score_stream_cells import cells_match, chunk_cells

        try:
            cells = chunk_cells(probe_card, columns)
            task.fast = all(cells_match(cells[c].tolist(), [r[j] for r in rows]) for j, c in enumerate(columns))
        except Exception:  # noqa: BLE001 - a layout the column builder does not know: the CSV view's own rows
            task.fast = False
    return task, probe_card.header()


def _write_chunks(task: StreamTask, out, bounds: list, done, progress, scheduler) -> int:
    """Run the chunks not yet written (``done``: those resumed) and write each in order; returns the bytes of
    the task as shipped to a worker."""
    import pickle

    from .execution import executor

    n = len(task.source)
    todo = [i for i in range(len(bounds)) if i not in done]
    filters_done = sum(bounds[i][1] - bounds[i][0] for i in done)
    if progress is not None:
        progress("filters", filters_done, n)

    def tick(n_done: int, n_total: int, i: int) -> None:
        nonlocal filters_done
        lo, hi = bounds[todo[i]]
        filters_done += hi - lo
        if progress is not None:
            progress("filters", filters_done, n)

    shipped = len(pickle.dumps(task, protocol=pickle.HIGHEST_PROTOCOL))  # sent once to each worker of a cluster
    ex = scheduler if hasattr(scheduler, "map") else executor(scheduler)
    try:
        todo_bounds = [bounds[i] for i in todo]
        for i, (data, n_rows) in zip(todo, ex.map(_run_chunk, task, todo_bounds, progress=tick)):
            lo, hi = bounds[i]
            out.write(i, data, lo=lo, hi=hi, rows=n_rows)
    finally:
        if ex is not scheduler:
            ex.close()
    return shipped
