"""SHA-256 of a file's bytes: the one checksum of inputs and outputs (filter files, render inputs, streamed
parts). Public: :func:`file_sha256`."""

from __future__ import annotations

import hashlib
import os


def file_sha256(path: str | os.PathLike) -> str:
    """SHA-256 of the file at ``path``, hex, read in 1 MiB blocks (``OSError`` as raised by ``open``)."""
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for block in iter(lambda: fh.read(1 << 20), b""):
            h.update(block)
    return h.hexdigest()
