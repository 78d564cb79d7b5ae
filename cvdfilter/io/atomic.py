"""Atomic writes that never overwrite an input.

Every output the tool writes goes to a temporary file in the target folder and
is renamed into place only when complete, so a failure leaves no partial file.
"""

from __future__ import annotations

import contextlib
import os
import pathlib
import tempfile
from collections.abc import Iterable, Iterator

from ..errors import InputError

__all__ = ["atomic_path", "write_bytes", "write_text", "check_outputs"]


def check_outputs(outputs: Iterable[str | os.PathLike], inputs: Iterable[str | os.PathLike]) -> None:
    """Raise :class:`InputError` if any output path is one of the input paths."""
    resolved = {pathlib.Path(p).resolve() for p in inputs if p is not None}
    for out in outputs:
        if pathlib.Path(out).resolve() in resolved:
            raise InputError("output would overwrite an input file", source=str(out),
                             hint="choose another output path")


@contextlib.contextmanager
def atomic_path(path: str | os.PathLike, *, inputs: Iterable[str | os.PathLike] = ()) -> Iterator[pathlib.Path]:
    """Yield a temporary path beside ``path``; rename it to ``path`` on success.

    The temporary file keeps the target's suffix so that writers choosing a
    format by extension (matplotlib, tifffile, imageio) still work.
    """
    target = pathlib.Path(path)
    check_outputs([target], inputs)
    target.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=f".{target.stem}.", suffix=f".tmp{target.suffix}", dir=target.parent)
    os.close(fd)
    tmp_path = pathlib.Path(tmp)
    # mkstemp creates the file private (0600); give the output the permissions a plain open() would.
    umask = os.umask(0)
    os.umask(umask)
    os.chmod(tmp_path, 0o666 & ~umask)
    try:
        yield tmp_path
        os.replace(tmp_path, target)
    except BaseException:
        with contextlib.suppress(FileNotFoundError):
            tmp_path.unlink()
        raise


def write_bytes(path: str | os.PathLike, data: bytes, *, inputs: Iterable[str | os.PathLike] = ()) -> pathlib.Path:
    """Write ``data`` to ``path`` atomically; return the path."""
    with atomic_path(path, inputs=inputs) as tmp:
        tmp.write_bytes(data)
    return pathlib.Path(path)


def write_text(path: str | os.PathLike, text: str, *, inputs: Iterable[str | os.PathLike] = ()) -> pathlib.Path:
    """Write UTF-8 ``text`` to ``path`` atomically; return the path."""
    return write_bytes(path, text.encode("utf-8"), inputs=inputs)
