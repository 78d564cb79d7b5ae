"""Reading a cube file's header and values: ``.npy``, ``.npz`` and TIFF, without reading pixel data until
the declared shape has been checked (:mod:`cvdfilter.io.cubes` decides what the file holds).

Internal to :mod:`cvdfilter.io.cubes`; every failure is one :class:`~cvdfilter.errors.InputError` line.
"""

from __future__ import annotations

import json
import pathlib

import numpy as np

from ..errors import InputError

#: Names an ``.npz`` may use for the cube array, tried in order.
_ARRAY_NAMES = ("cube", "data", "reflectance", "radiance")


def _npy_header(fh, src: str, name: str) -> tuple[tuple, np.dtype]:
    """Shape and dtype from the header of an ``.npy`` stream (no data read)."""
    fmt = np.lib.format
    try:
        version = fmt.read_magic(fh)
        if version == (1, 0):
            shape, _, dtype = fmt.read_array_header_1_0(fh)
        else:
            shape, _, dtype = fmt.read_array_header_2_0(fh)
    except (ValueError, OSError, EOFError, SyntaxError) as exc:
        raise InputError(f"member '{name}' has no readable array header ({' '.join(str(exc).split())[:120]})",
                         source=src) from None
    if dtype.hasobject:
        raise InputError("holds Python objects; cubes are read with pickling disabled", source=src,
                         hint="save a plain numeric array")
    return tuple(int(n) for n in shape), dtype


#: Largest ``wavelengths`` or ``kind`` member read from an ``.npz`` (entries), checked from its header.
_MAX_SMALL_MEMBER = 100_000


def _npz_plan(p: pathlib.Path, src: str):
    """Read the member headers of an ``.npz`` (a zip of ``.npy`` files) without decompressing the data.

    Returns (cube member name, shape, dtype, file wavelengths or None, file kind or None).
    """
    import zipfile

    try:
        zf = zipfile.ZipFile(p)
    except (zipfile.BadZipFile, OSError, ValueError, EOFError) as exc:
        raise InputError(f"not a readable .npz file ({' '.join(str(exc).split())[:120]})", source=src) from None
    with zf:
        members = {i.filename[:-4]: i for i in zf.infolist() if i.filename.endswith(".npy")}
        headers = {}
        for name, info in members.items():
            try:
                with zf.open(info) as fh:
                    headers[name] = _npy_header(fh, src, name)
            except (zipfile.BadZipFile, OSError, EOFError, NotImplementedError) as exc:
                raise InputError(f"member '{name}' cannot be read ({' '.join(str(exc).split())[:120]})",
                                 source=src) from None
        cube_names = [n for n in _ARRAY_NAMES if n in headers] or [n for n in headers if len(headers[n][0]) == 3]
        if not cube_names:
            raise InputError("holds no 3-D array (name it 'cube')", source=src)
        small = {}
        for name in ("wavelengths", "kind"):
            if name in headers:
                shape, dtype = headers[name]
                if int(np.prod(shape)) > _MAX_SMALL_MEMBER:
                    raise InputError(f"member '{name}' declares {int(np.prod(shape))} entries", source=src)
                try:
                    with zf.open(members[name]) as fh:
                        small[name] = np.lib.format.read_array(fh, allow_pickle=False)
                except (zipfile.BadZipFile, OSError, EOFError, ValueError) as exc:
                    raise InputError(f"member '{name}' cannot be read ({' '.join(str(exc).split())[:120]})",
                                     source=src) from None
    name = cube_names[0]
    file_wl = np.asarray(small["wavelengths"], dtype=float) if "wavelengths" in small else None
    file_kind = str(small["kind"]) if "kind" in small else None
    return name, headers[name][0], headers[name][1], file_wl, file_kind


def _load(p: pathlib.Path, suffix: str, src: str, member, shape) -> np.ndarray:
    """The cube's values (``.npy`` memory-mapped), after the declared shape has been checked."""
    import zipfile

    try:
        if suffix == ".npy":
            return np.load(p, mmap_mode="r", allow_pickle=False)
        if suffix == ".npz":
            with np.load(p, allow_pickle=False) as z:
                return z[member]
        import tifffile

        with tifffile.TiffFile(p) as tif:
            data = tif.asarray()
        if data.size == int(np.prod(shape)):
            data = data.reshape(shape)  # the length-1 axes dropped from the declared shape
        return data
    except MemoryError:
        raise InputError("not enough memory to read the cube", source=src) from None
    except (ValueError, OSError, EOFError, zipfile.BadZipFile, KeyError, IndexError) as exc:
        raise InputError(f"cannot read the cube ({' '.join(str(exc).split())[:160]})", source=src) from None


def _tiff_plan(p: pathlib.Path, src: str):
    """Shape (from the tags), wavelengths and kind (from the JSON metadata) of a TIFF cube; no pixel data read."""
    import tifffile

    try:
        with tifffile.TiffFile(p) as tif:
            meta = {}
            if tif.shaped_metadata:
                meta = dict(tif.shaped_metadata[0])
            else:
                desc = tif.pages.first.description
                if desc.strip().startswith("{"):
                    try:
                        meta = json.loads(desc)
                    except ValueError:
                        meta = {}
            series = tif.series[0]
            shape = tuple(int(n) for n in series.shape)
            axes = series.axes
    except (tifffile.TiffFileError, ValueError, OSError, EOFError, KeyError, IndexError) as exc:
        raise InputError(f"cannot read the TIFF header ({' '.join(str(exc).split())[:160]})", source=src) from None
    # Drop axes of length 1 (tifffile may add them) so that a cube is (Y, X, bands) or (bands, Y, X).
    if len(shape) > 3:
        kept = [(a, n) for a, n in zip(axes, shape) if n != 1]
        shape = tuple(n for _, n in kept)
    file_wl = np.asarray(meta["wavelengths"], dtype=float) if "wavelengths" in meta else None
    file_kind = str(meta["kind"]) if "kind" in meta else None
    return shape, file_wl, file_kind
