"""Atomic writes that never overwrite an input, and one-line errors for paths that cannot be written.

Every output the tool writes goes to a temporary file in the target folder and
is renamed into place only when complete, so a failure (or a kill) leaves no
partial file under the output's name.

Temporary files are named ``.NAME.cvdfilter-PID-RANDOM.tmp.EXT`` (hidden, the
owner's process id inside, the target's suffix last so that writers choosing a
format by extension still work). A process killed mid-write leaves one behind;
:func:`remove_stale_temporaries` deletes those whose owner is no longer running
(``cvdfilter render`` calls it on its output folder before each batch).

A path that cannot be written (a read-only or virtual file system, a parent
that is a file, an existing directory as the output file, no permission, a
full disk) raises :class:`~cvdfilter.errors.InputError` naming the path, which
the CLI prints as one line with exit status 2; :func:`check_writable` finds the
common cases before any work is done.

Public: :func:`atomic_path`, :func:`write_bytes`, :func:`write_text`, :func:`check_outputs`,
:func:`check_writable`, :func:`remove_stale_temporaries`, :data:`TEMP_MARK`.
"""

from __future__ import annotations

import contextlib
import errno
import os
import pathlib
import re
import secrets
from collections.abc import Iterable, Iterator

from ..errors import InputError

__all__ = ["atomic_path", "write_bytes", "write_text", "check_outputs", "check_writable",
           "remove_stale_temporaries", "TEMP_MARK"]

#: The mark every temporary file of this tool carries in its name.
TEMP_MARK = ".cvdfilter-"
_TEMP_RE = re.compile(r"^\..+\.cvdfilter-(\d+)-[0-9a-f]{8}\.tmp(\.[^.]*)?$")

#: errno values that mean "this path cannot be written here" rather than a fault of the tool.
_WRITE_ERRNOS = {errno.EACCES, errno.EPERM, errno.EROFS, errno.ENOSPC, errno.EDQUOT, errno.EFBIG,
                 errno.EISDIR, errno.ENOTDIR, errno.EEXIST, errno.ENAMETOOLONG, errno.ENOENT, errno.EXDEV,
                 errno.EINVAL, errno.ELOOP, errno.EBUSY, errno.ETXTBSY}


def check_outputs(outputs: Iterable[str | os.PathLike], inputs: Iterable[str | os.PathLike]) -> None:
    """Raise :class:`InputError` if any output path is one of the input paths."""
    resolved = {pathlib.Path(p).resolve() for p in inputs if p is not None}
    for out in outputs:
        if pathlib.Path(out).resolve() in resolved:
            raise InputError("output would overwrite an input file", source=str(out),
                             hint="choose another output path")


def _why(exc: OSError) -> str:
    return {errno.EROFS: "read-only file system", errno.EACCES: "permission denied",
            errno.EPERM: "operation not permitted", errno.ENOSPC: "no space left on the device",
            errno.EDQUOT: "disk quota exceeded", errno.EISDIR: "is a directory",
            errno.ENOTDIR: "a parent folder is a file", errno.ENAMETOOLONG: "name too long"}.get(
        exc.errno, (exc.strerror or type(exc).__name__).lower())


def _unwritable(path, exc: OSError) -> InputError:
    return InputError(f"cannot write here ({_why(exc)})", source=str(path), hint="choose another output path")


def check_writable(path: str | os.PathLike, *, folder: bool = False) -> None:
    """Refuse, before any work, an output path that cannot be written.

    Parameters
    ----------
    path : str or path-like
        The output file (or, with ``folder=True``, the output folder).
    folder : bool
        ``path`` is a folder that will hold the outputs.

    Raises
    ------
    InputError
        The path is an existing directory (for a file) or file (for a folder),
        a parent is a file, or the nearest existing folder is not writable
        (read-only or virtual file system, no permission).
    """
    p = pathlib.Path(path)
    if folder:
        if p.exists() and not p.is_dir():
            raise InputError("is a file, not a folder", source=str(p), hint="give a folder for the outputs")
    else:
        _check_target(p)
    parent = p if folder else p.parent
    probe = parent
    while not probe.exists():
        if probe.is_symlink():  # a dangling link
            raise InputError("a parent folder is a broken link", source=str(p))
        probe = probe.parent
    if not probe.is_dir():
        raise InputError(f"a parent folder ({probe}) is a file", source=str(p), hint="choose another output path")
    # A trial file: the only test that sees read-only mounts, virtual file systems and ACLs alike. It goes
    # in the nearest existing folder (no folder is created here) and is removed at once.
    trial = probe / _temp_name(p if p.name else pathlib.Path("out"))
    try:
        fd = os.open(trial, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o600)
    except OSError as exc:
        raise _unwritable(p, exc) from None
    os.close(fd)
    with contextlib.suppress(OSError):
        os.unlink(trial)


def _check_target(p: pathlib.Path) -> None:
    """An existing output must be a regular file (renaming over a directory fails; over a device it replaces it)."""
    if p.is_dir():
        raise InputError("is a directory, not a file", source=str(p), hint="give a file name for the output")
    if p.exists() and not p.is_file():
        raise InputError("is not a regular file (a device, pipe or socket)", source=str(p),
                         hint="give a file name for the output; leave out -o to write to the terminal")


def _temp_name(target: pathlib.Path) -> str:
    return f".{target.stem}{TEMP_MARK}{os.getpid()}-{secrets.token_hex(4)}.tmp{target.suffix}"


def _pid_alive(pid: int) -> bool:
    if pid == os.getpid():
        return True
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:  # another user's process: alive
        return True
    return True


def remove_stale_temporaries(folder: str | os.PathLike, *, recursive: bool = True) -> list[pathlib.Path]:
    """Delete this tool's temporary files in ``folder`` whose owning process is no longer running.

    Only files named as :func:`atomic_path` names them (``.NAME.cvdfilter-PID-RANDOM.tmp.EXT``) are
    touched; a temporary file of a process still running (another batch writing into the same folder)
    is kept.

    Returns
    -------
    list of pathlib.Path
        The files removed.
    """
    root = pathlib.Path(folder)
    if not root.is_dir():
        return []
    removed = []
    found = root.rglob(f".*{TEMP_MARK}*") if recursive else root.glob(f".*{TEMP_MARK}*")
    for f in found:
        m = _TEMP_RE.match(f.name)
        if m is None or not f.is_file() or _pid_alive(int(m.group(1))):
            continue
        with contextlib.suppress(FileNotFoundError):
            f.unlink()
            removed.append(f)
    return removed


@contextlib.contextmanager
def atomic_path(path: str | os.PathLike, *, inputs: Iterable[str | os.PathLike] = ()) -> Iterator[pathlib.Path]:
    """Yield a temporary path beside ``path``; rename it to ``path`` on success.

    The temporary file keeps the target's suffix so that writers choosing a
    format by extension (matplotlib, tifffile, imageio) still work. A path
    that cannot be written raises :class:`InputError` (one line, naming it);
    so does a write that fails for lack of space or permission.
    """
    target = pathlib.Path(path)
    check_outputs([target], inputs)
    _check_target(target)
    try:
        target.parent.mkdir(parents=True, exist_ok=True)
        tmp_path = target.parent / _temp_name(target)
        fd = os.open(tmp_path, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o666)  # the umask applies, as for open()
        os.close(fd)
    except FileExistsError:
        raise InputError("a parent folder is a file", source=str(target), hint="choose another output path") from None
    except OSError as exc:
        raise _unwritable(target, exc) from None
    try:
        yield tmp_path
        os.replace(tmp_path, target)
    except OSError as exc:
        with contextlib.suppress(OSError):
            tmp_path.unlink()
        if exc.errno in _WRITE_ERRNOS and (exc.filename is None or pathlib.Path(exc.filename) in (tmp_path, target)):
            raise _unwritable(target, exc) from None
        raise
    except BaseException:
        with contextlib.suppress(OSError):
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
