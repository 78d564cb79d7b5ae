"""Results written chunk by chunk: resumable parts, then one file finalised atomically, with a manifest.

A streamed run writes each chunk's rows as a *part* (``part-000012.csv`` or ``.parquet``) in a hidden
folder beside the output, ``.NAME.cvdfilter-parts/``, each part written atomically (temporary file, then
rename) together with a one-line record of its filters and rows. The folder's ``run.json`` holds the run's
fingerprint (inputs, settings, version, chunk size, columns): a run with the same fingerprint finds the
parts already written and computes only the missing chunks (resume is automatic); a different fingerprint
discards them. When every part is there they are joined, in chunk order, into a temporary file beside the
output, which is renamed over it; then ``NAME.manifest.json`` is written (the completeness marker: every
chunk, its filters, rows and SHA-256) and the parts folder removed. Joining reads one part at a time, so
memory stays bounded whatever the number of rows.

Public: :class:`ChunkedOutput`, :func:`manifest_path`, :data:`FORMATS`.
"""

from __future__ import annotations

import hashlib
import json
import pathlib
import shutil
from typing import Any

from ..errors import InputError
from .atomic import atomic_path, write_bytes as _write_atomic
from .checksum import file_sha256 as _sha256

__all__ = ["ChunkedOutput", "manifest_path", "FORMATS"]

#: Streamed output formats and their part suffixes.
FORMATS = {"csv": ".csv", "parquet": ".parquet"}


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
    """

    def __init__(self, path, fmt: str, fingerprint: dict, n_chunks: int) -> None:
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
        done = {i for i in range(self.n_chunks) if self._record(i).exists() and self._part(i).exists()}
        self.resumed = len(done)
        return done

    def write(self, i: int, data: bytes, *, lo: int, hi: int, rows: int) -> None:
        """Chunk ``i`` (filters ``lo:hi``, ``rows`` rows) as a part: the data, then its record."""
        _write_atomic(self._part(i), data)
        record = {"chunk": i, "filters": [lo, hi], "rows": rows, "bytes": len(data)}
        _write_atomic(self._record(i), json.dumps(record).encode())

    def finalise(self, *, header: str | None = None, metadata: dict | None = None, extra: dict | None = None) -> dict:
        """Join the parts in chunk order into the output (atomically), write the manifest, drop the parts.

        ``header``: the CSV header line (csv); ``metadata``: key-value metadata of the Parquet file.
        Returns the manifest.
        """
        records = []
        for i in range(self.n_chunks):
            rec = json.loads(self._record(i).read_text(encoding="utf-8"))
            rec["sha256"] = _sha256(self._part(i))
            records.append(rec)
        with atomic_path(self.path) as tmp:
            if self.fmt == "csv":
                with open(tmp, "wb") as out:
                    out.write((header or "").encode("utf-8"))
                    for i in range(self.n_chunks):
                        with open(self._part(i), "rb") as fh:
                            shutil.copyfileobj(fh, out, 1 << 20)
            else:
                self._join_parquet(tmp, metadata or {})
        manifest: dict[str, Any] = {"file": self.path.name, "format": self.fmt, "complete": True,
                                    "rows": sum(r["rows"] for r in records),
                                    "sha256": _sha256(self.path), **(extra or {}), "chunks": records}
        with atomic_path(manifest_path(self.path)) as tmp:
            pathlib.Path(tmp).write_text(json.dumps(manifest, indent=1, ensure_ascii=False) + "\n", encoding="utf-8")
        shutil.rmtree(self.parts, ignore_errors=True)
        return manifest

    def _join_parquet(self, tmp, metadata: dict) -> None:
        import pyarrow.parquet as pq

        writer = None
        try:
            for i in range(self.n_chunks):
                table = pq.read_table(self._part(i))
                if writer is None:
                    schema = table.schema.with_metadata({k: v for k, v in metadata.items()})
                    writer = pq.ParquetWriter(str(tmp), schema, compression="zstd")
                writer.write_table(table.replace_schema_metadata(writer.schema.metadata))
        finally:
            if writer is not None:
                writer.close()
