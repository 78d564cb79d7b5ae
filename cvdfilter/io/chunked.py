"""Results written chunk by chunk: resumable parts, then one file finalised atomically, with a manifest.

A streamed run writes each chunk's rows as a *part* in a hidden folder beside the output,
``.NAME.cvdfilter-parts/`` (``part-000012.csv``: CSV rows; ``part-000012.arrow``: for Parquet output, an Arrow
IPC stream of the chunk's rows in the file's schema, lz4-compressed), each part written atomically
(temporary file, then rename) together with a one-line record of its filters, rows and SHA-256. The
folder's ``run.json`` holds the run's fingerprint (inputs, settings, version, chunk size, columns): a run
with the same fingerprint finds the parts already written and computes only the missing chunks (resume is
automatic); a different fingerprint discards them.

The output is assembled in chunk order in a temporary file beside it, which is renamed over it when every
chunk is in; then ``NAME.manifest.json`` is written (the completeness marker: every chunk, its filters,
rows and SHA-256) and the parts folder removed. Parquet: one ``ParquetWriter`` takes each part as one row
group as soon as the parts before it are in (during the run, so each row group is encoded once; a resumed
run feeds it the parts already on disk first); CSV: the parts are concatenated at the end. Either way one
part at a time is in memory, whatever the number of rows.

Public: :class:`ChunkedOutput`, :func:`manifest_path`, :func:`ipc_bytes`, :data:`FORMATS`.
"""

from __future__ import annotations

import contextlib
import hashlib
import json
import pathlib
import shutil
from typing import Any

from ..errors import InputError
from .atomic import atomic_path, remove_stale_temporaries, write_bytes as _write_atomic
from .checksum import file_sha256 as _sha256

__all__ = ["ChunkedOutput", "manifest_path", "ipc_bytes", "FORMATS"]

#: Streamed output formats and the suffixes of their parts.
FORMATS = {"csv": ".csv", "parquet": ".arrow"}


def ipc_bytes(table) -> bytes:
    """A pyarrow Table as an Arrow IPC stream (lz4-compressed where pyarrow has the codec): a Parquet part."""
    import pyarrow as pa

    codec = "lz4" if pa.Codec.is_available("lz4_frame") else None
    sink = pa.BufferOutputStream()
    with pa.ipc.new_stream(sink, table.schema, options=pa.ipc.IpcWriteOptions(compression=codec)) as writer:
        writer.write_table(table)
    return sink.getvalue().to_pybytes()


def _read_ipc(source):
    import pyarrow as pa

    return pa.ipc.open_stream(source).read_all()


def manifest_path(path) -> pathlib.Path:
    """``FILE.manifest.json`` beside ``FILE``."""
    p = pathlib.Path(path)
    return p.with_name(p.name + ".manifest.json")


class ChunkedOutput:
    """The parts of one streamed output file and its finalisation.

    Parameters
    ----------
    path
        The output file (``.csv`` or ``.parquet``).
    fmt
        ``csv`` or ``parquet``.
    fingerprint
        JSON-serialisable description of everything the rows depend on; parts written under another
        fingerprint are discarded.
    n_chunks
        How many chunks the run has.
    metadata
        Parquet: the file's key-value metadata.

    After :meth:`open`, :meth:`write` each chunk not yet written (in any order), then :meth:`finalise`; on a
    failure :meth:`abort` (the parts stay for a resume, the temporary output goes).
    """

    def __init__(self, path, fmt: str, fingerprint: dict, n_chunks: int, metadata: dict | None = None) -> None:
        if fmt not in FORMATS:
            raise ValueError(f"format must be one of {', '.join(FORMATS)}")
        self.path = pathlib.Path(path)
        self.fmt = fmt
        self.n_chunks = n_chunks
        text = json.dumps(fingerprint, sort_keys=True, ensure_ascii=False, default=str)
        self.key = hashlib.sha256(text.encode()).hexdigest()
        self.fingerprint = fingerprint
        self.parts = self.path.with_name(f".{self.path.name}.cvdfilter-parts")
        self.resumed = 0
        self.metadata = dict(metadata or {})
        self._done: set = set()
        self._joined = 0  # chunks 0 .. _joined - 1 are in the Parquet writer
        self._stack: contextlib.ExitStack | None = None
        self._tmp: pathlib.Path | None = None
        self._writer: Any = None

    def _part(self, i: int) -> pathlib.Path:
        return self.parts / f"part-{i:06d}{FORMATS[self.fmt]}"

    def _record(self, i: int) -> pathlib.Path:
        return self.parts / f"part-{i:06d}.json"

    def open(self) -> set:
        """Prepare the parts folder; the chunk indices already written under this fingerprint."""
        run = self.parts / "run.json"
        try:
            same = json.loads(run.read_text(encoding="utf-8")).get("key") == self.key
        except (OSError, ValueError):
            same = False
        if self.parts.exists() and not same:
            shutil.rmtree(self.parts)
        try:
            self.parts.mkdir(parents=True, exist_ok=True)
            if not same:
                _write_atomic(run, json.dumps({"key": self.key, "n_chunks": self.n_chunks,
                                               "fingerprint": self.fingerprint}, indent=1, default=str).encode())
        except OSError as exc:
            raise InputError(f"cannot write beside the output: {exc.strerror or exc}", source=str(self.path)) from None
        remove_stale_temporaries(self.path.parent, recursive=False)  # a killed run's half-written output
        done = {i for i in range(self.n_chunks) if self._record(i).exists() and self._part(i).exists()}
        self.resumed = len(done)
        self._done = set(done)
        return done

    def write(self, i: int, data: bytes, *, lo: int, hi: int, rows: int) -> None:
        """Chunk ``i`` (filters ``lo:hi``, ``rows`` rows) as a part: the data, then its record; Parquet: the
        parts now in order go into the output."""
        _write_atomic(self._part(i), data)
        record = {"chunk": i, "filters": [lo, hi], "rows": rows, "bytes": len(data),
                  "sha256": hashlib.sha256(data).hexdigest()}
        _write_atomic(self._record(i), json.dumps(record).encode())
        self._done.add(i)
        if self.fmt == "parquet":
            self._join(latest=(i, data))

    def _join(self, latest=None) -> None:
        """Feed the Parquet writer every part that is in, in chunk order, from the first not yet fed."""
        import pyarrow as pa

        while self._joined < self.n_chunks and self._joined in self._done:
            i = self._joined
            data = latest[1] if latest is not None and latest[0] == i else self._part(i).read_bytes()
            table = _read_ipc(pa.py_buffer(data))  # the table may point into ``data``: kept until written
            if self._writer is None:
                import pyarrow.parquet as pq

                self._stack = contextlib.ExitStack()
                self._tmp = self._stack.enter_context(atomic_path(self.path))
                schema = table.schema.with_metadata(self.metadata)
                self._writer = self._stack.enter_context(pq.ParquetWriter(str(self._tmp), schema,
                                                                          compression="zstd"))
            self._writer.write_table(table.replace_schema_metadata(self._writer.schema.metadata))
            self._joined += 1

    def abort(self) -> None:
        """After a failure: close the Parquet writer and remove its temporary file (the parts stay)."""
        if self._stack is not None:
            stack, self._stack, self._writer = self._stack, None, None
            with contextlib.suppress(_Aborted):
                stack.__exit__(_Aborted, _Aborted(), None)

    def finalise(self, *, header: str | None = None, metadata: dict | None = None, extra: dict | None = None) -> dict:
        """Join the parts in chunk order into the output (atomically), write the manifest, drop the parts.

        ``header``: the CSV header line (csv); ``metadata``: key-value metadata of the Parquet file.
        Returns the manifest.
        """
        records = []
        for i in range(self.n_chunks):
            rec = json.loads(self._record(i).read_text(encoding="utf-8"))
            if "sha256" not in rec:
                rec["sha256"] = _sha256(self._part(i))
            records.append(rec)
        if self.fmt == "csv":
            with atomic_path(self.path) as tmp, open(tmp, "wb") as out:
                out.write((header or "").encode("utf-8"))
                for i in range(self.n_chunks):
                    with open(self._part(i), "rb") as fh:
                        shutil.copyfileobj(fh, out, 1 << 20)
        else:
            if metadata is not None:
                self.metadata = dict(metadata)
            self._done = set(range(self.n_chunks))
            try:
                self._join()
            except BaseException:
                self.abort()
                raise
            if self._stack is None:  # no chunk at all: an empty file, as an empty join gave
                with atomic_path(self.path):
                    pass
            else:
                stack, self._stack, self._writer = self._stack, None, None
                stack.close()  # closes the writer (the footer), then renames the temporary file over the output
        manifest: dict[str, Any] = {"file": self.path.name, "format": self.fmt, "complete": True,
                                    "rows": sum(r["rows"] for r in records),
                                    "sha256": _sha256(self.path), **(extra or {}), "chunks": records}
        with atomic_path(manifest_path(self.path)) as tmp:
            pathlib.Path(tmp).write_text(json.dumps(manifest, indent=1, ensure_ascii=False) + "\n", encoding="utf-8")
        shutil.rmtree(self.parts, ignore_errors=True)
        return manifest


class _Aborted(Exception):
    pass
