"""Writing images: PNG (8/16-bit, an ``sRGB`` chunk and text chunks with the settings and the caveat), TIFF
(8/16-bit or float32, settings in ImageDescription as JSON), JPEG (8-bit, quality 95). Every write is atomic
and refuses to overwrite an input.

Public: :func:`write_image`, :func:`encode_png`.
"""

from __future__ import annotations

import json
import os
import pathlib
import struct
import zlib
from collections.abc import Iterable

import numpy as np

from .atomic import atomic_path
from .image_headers import _format_of

__all__ = ["write_image", "encode_png"]


def _png_chunk(ctype: bytes, payload: bytes) -> bytes:
    return struct.pack(">I", len(payload)) + ctype + payload + struct.pack(">I", zlib.crc32(ctype + payload))


def _png_parts(pixels: np.ndarray, metadata: dict | None, level: int) -> list:
    """The PNG as pieces (no copy of the compressed data): signature + IHDR, added chunks, the rest."""
    import imagecodecs

    data = memoryview(imagecodecs.png_encode(np.ascontiguousarray(pixels), level=level))
    # Insert sRGB (rendering intent 0, perceptual) and text chunks right after IHDR.
    ihdr_end = 8 + 12 + 13
    extra = _png_chunk(b"sRGB", b"\x00")
    for key, value in (metadata or {}).items():
        text = value if isinstance(value, str) else json.dumps(value, ensure_ascii=False)
        extra += _png_chunk(b"iTXt", key.encode("latin-1")[:79] + b"\x00\x00\x00\x00\x00" + text.encode("utf-8"))
    return [data[:ihdr_end], extra, data[ihdr_end:]]


def encode_png(pixels: np.ndarray, metadata: dict | None = None, level: int = 3) -> bytes:
    """PNG bytes (imagecodecs) with an ``sRGB`` chunk and ``metadata`` as iTXt chunks.

    Parameters
    ----------
    pixels : numpy.ndarray
        uint8 or uint16, (H, W) or (H, W, C) with C = 2, 3 or 4.
    metadata : dict, optional
        Key -> text (non-strings are stored as JSON).
    level : int
        zlib compression level, 0-9.
    """
    return b"".join(_png_parts(pixels, metadata, level))


def write_image(path, pixels, *, encoding: str = "srgb", metadata: dict | None = None,
                inputs: Iterable[str | os.PathLike] = (), png_level: int = 3) -> pathlib.Path:
    """Write an image atomically; the format follows the suffix.

    Parameters
    ----------
    path : str or path-like
        ``.png`` (uint8/uint16), ``.tif``/``.tiff`` (uint8/uint16/float32), ``.jpg``/``.jpeg`` (uint8).
    pixels : numpy.ndarray
        (H, W) or (H, W, C), C = 2, 3 or 4 (the last channel of 2 and 4 is alpha).
    encoding : str
        ``srgb`` or ``linear`` (float TIFF only); recorded in the metadata.
    metadata : dict, optional
        Text stored in the file (PNG iTXt chunks, TIFF ImageDescription as
        JSON, JPEG comment).
    inputs : iterable of paths
        Paths that must not be overwritten.
    png_level : int
        zlib compression level for PNG (0-9).

    Returns
    -------
    pathlib.Path
    """
    p = pathlib.Path(path)
    fmt = _format_of(p)
    px = np.asarray(pixels)
    meta = dict(metadata or {})
    meta.setdefault("encoding", "linear sRGB (no transfer function)" if encoding == "linear" else "sRGB")
    if fmt == "png":
        if px.dtype not in (np.uint8, np.uint16):
            raise ValueError(f"PNG holds 8- or 16-bit integers, got {px.dtype}")
        parts = _png_parts(px, meta, png_level)
        with atomic_path(p, inputs=inputs) as tmp, open(tmp, "wb") as fh:
            for part in parts:
                fh.write(part)
        return p
    if fmt == "jpeg":
        if px.dtype != np.uint8:
            raise ValueError(f"JPEG holds 8-bit integers, got {px.dtype}")
        from PIL import Image

        if px.ndim == 3 and px.shape[2] in (2, 4):
            raise ValueError("JPEG has no alpha channel")
        im = Image.fromarray(px)
        with atomic_path(p, inputs=inputs) as tmp:
            im.save(tmp, format="JPEG", quality=95, subsampling=0,
                    comment=json.dumps(meta, ensure_ascii=False).encode("utf-8"))
        return p
    import tifffile

    if px.dtype not in (np.uint8, np.uint16, np.float32, np.float64):
        raise ValueError(f"TIFF output holds uint8, uint16 or float, got {px.dtype}")
    if px.dtype == np.float64:
        px = px.astype(np.float32)
    channels = 1 if px.ndim == 2 else px.shape[2]
    photometric = "minisblack" if channels in (1, 2) else "rgb"
    extrasamples = ("unassalpha",) if channels in (2, 4) else None
    with atomic_path(p, inputs=inputs) as tmp:
        tifffile.imwrite(tmp, px, photometric=photometric, extrasamples=extrasamples,
                         planarconfig="contig", compression="zlib",
                         description=json.dumps(meta, ensure_ascii=False), metadata=None,
                         software="cvdfilter")
    return p
