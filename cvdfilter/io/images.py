"""Read and write images: PNG, JPEG and TIFF; 8- and 16-bit sRGB, linear float TIFF.

What a pixel means
------------------
* 8- and 16-bit integer images hold sRGB code values (IEC 61966-2-1): 0-255 or
  0-65535, encoded with the sRGB transfer function.
* Floating-point TIFF holds **linear-light sRGB** (the sRGB primaries and D65
  white, no transfer function): 0 is black, 1 is the display's white; values
  outside 0-1 are allowed and kept.
* Greyscale images are neutral (R = G = B); the renderer expands them to RGB
  because a filter or an observer may tint them.
* An alpha channel is carried through untouched.
* An embedded ICC profile other than sRGB is not converted: the pixels are
  read as sRGB and a warning names the profile.

Readers
-------
PNG through imagecodecs (libpng: 8- and 16-bit, every colour type), JPEG
through imagecodecs (libjpeg; the header, the ICC profile and comments are
parsed here), TIFF through tifffile. Only regular files are read (a named pipe
or a device is refused, never waited on). Before any pixel is decoded the
header is checked against ``max_megapixels`` (default
:data:`DEFAULT_MAX_MEGAPIXELS`) so that a decompression bomb is refused with a
clear message. Reading changes no process-wide setting (Pillow's global
``MAX_IMAGE_PIXELS`` is left alone; Pillow does not decode here).

Writers
-------
PNG (8/16-bit, an ``sRGB`` chunk and text chunks with the settings and the
caveat), TIFF (8/16-bit or float32, settings in ImageDescription as JSON),
JPEG (8-bit, quality 95). Every write is atomic and refuses to overwrite an input.

Public: :class:`ImageData`, :func:`read_image`, :func:`write_image`, :func:`image_header`,
:func:`read_metadata`, :func:`regular_file`, :func:`set_pixel_limit`, :data:`IMAGE_SUFFIXES`,
:data:`DEFAULT_MAX_MEGAPIXELS`.

Modules: headers, sizes, metadata and ICC profiles in :mod:`.image_headers`; writers in
:mod:`.image_writers`; decoding here (the public names of all three are found here).
"""

from __future__ import annotations

import pathlib
import zlib
from dataclasses import dataclass, field

import numpy as np

from ..errors import InputError
from .image_headers import (DEFAULT_MAX_MEGAPIXELS, IMAGE_SUFFIXES, ImageHeader, _decode_errors,
                            _icc_description, _icc_warning, _jpeg_info, _png_chunks, _short, check_size,
                            image_header, read_metadata, regular_file)
from .image_writers import encode_png, write_image

__all__ = ["ImageData", "ImageHeader", "read_image", "write_image", "encode_png", "image_header", "read_metadata",
           "regular_file", "set_pixel_limit", "check_size", "IMAGE_SUFFIXES", "DEFAULT_MAX_MEGAPIXELS"]

_CHANNELS = {1: "grey", 2: "grey+alpha", 3: "rgb", 4: "rgba"}


@dataclass
class ImageData:
    """A decoded image.

    Attributes
    ----------
    pixels : numpy.ndarray
        (H, W) or (H, W, C) with C = 2 (grey + alpha), 3 (RGB) or 4 (RGBA);
        uint8 or uint16 (sRGB code values) or float32/float64 (linear sRGB).
    encoding : str
        ``srgb`` (integer code values) or ``linear`` (floating point).
    path : str or None
    format : str
        ``png``, ``jpeg``, ``tiff`` or ``array``.
    icc_description : str or None
        Description of an embedded ICC profile, if any.
    warnings : list of str
    """

    pixels: np.ndarray
    encoding: str = "srgb"
    path: str | None = None
    format: str = "array"
    icc_description: str | None = None
    warnings: list = field(default_factory=list)

    @property
    def channels(self) -> str:
        """``grey``, ``grey+alpha``, ``rgb`` or ``rgba``."""
        return _CHANNELS[1 if self.pixels.ndim == 2 else self.pixels.shape[2]]

    @property
    def has_alpha(self) -> bool:
        return self.channels in ("grey+alpha", "rgba")

    @property
    def bits(self) -> int:
        """8, 16, 32 or 64."""
        return self.pixels.dtype.itemsize * 8


def set_pixel_limit(max_megapixels: float = DEFAULT_MAX_MEGAPIXELS) -> None:
    """Set Pillow's process-wide decompression-bomb limit to ``max_megapixels`` (megapixels).

    Not needed by this package (its readers check sizes themselves and never
    change this setting); kept for callers who decode with Pillow directly.
    """
    from PIL import Image

    Image.MAX_IMAGE_PIXELS = int(max_megapixels * 1e6)



def read_image(path, *, max_megapixels: float = DEFAULT_MAX_MEGAPIXELS) -> ImageData:
    """Read a PNG, JPEG or TIFF image.

    Parameters
    ----------
    path : str or path-like
    max_megapixels : float
        Refuse larger images before decoding them (megapixels).

    Returns
    -------
    ImageData
        Integer images as sRGB code values, float TIFF as linear sRGB.

    Raises
    ------
    cvdfilter.errors.InputError
        Unsupported type, damaged file, too large, unsupported pixel layout.
    """
    header = image_header(path, max_megapixels=max_megapixels)
    p = pathlib.Path(path)
    src = str(p)
    try:
        if header.format == "png":
            img = _read_png(p)
        elif header.format == "jpeg":
            img = _read_jpeg(p)
        else:
            img = _read_tiff(p)
    except MemoryError:
        raise InputError("not enough memory to decode the image", source=src) from None
    px = img.pixels
    if px.ndim not in (2, 3) or (px.ndim == 3 and px.shape[2] not in (1, 2, 3, 4)):
        raise InputError(f"unsupported pixel layout {px.shape}", source=src,
                         hint="use greyscale, grey + alpha, RGB or RGBA")
    if px.ndim == 3 and px.shape[2] == 1:
        img.pixels = px[..., 0]
    if img.encoding == "srgb" and px.dtype not in (np.uint8, np.uint16):
        raise InputError(f"unsupported sample type {px.dtype} for an sRGB image", source=src,
                         hint="use 8- or 16-bit integers, or float TIFF for linear sRGB")
    return img


def _read_png(p: pathlib.Path) -> ImageData:
    import imagecodecs

    data = p.read_bytes()
    icc = None
    srgb_chunk = False
    for ctype, payload in _png_chunks(data, str(p)):
        if ctype == b"iCCP":
            name, _, rest = payload.partition(b"\x00")
            try:
                icc = zlib.decompress(rest[1:])
            except zlib.error:
                icc = b""
        elif ctype == b"sRGB":
            srgb_chunk = True
    try:
        px = np.asarray(imagecodecs.png_decode(data))
    except _decode_errors() as exc:
        raise InputError(f"cannot decode the PNG image ({_short(exc)})", source=str(p)) from None
    desc = None if srgb_chunk else _icc_description(icc)
    if icc == b"":
        desc = "unreadable profile"
    return ImageData(px, "srgb", str(p), "png", desc, _icc_warning(desc, str(p)))


def _read_jpeg(p: pathlib.Path) -> ImageData:
    import io

    import imagecodecs

    data = p.read_bytes()
    info = _jpeg_info(io.BytesIO(data), str(p))
    if info["components"] not in (1, 3):
        raise InputError(f"unsupported JPEG with {info['components']} colour components", source=str(p),
                         hint="convert CMYK or YCCK JPEGs to sRGB first")
    try:
        px = np.asarray(imagecodecs.jpeg8_decode(data))
    except _decode_errors() as exc:
        raise InputError(f"cannot decode the JPEG image ({_short(exc)})", source=str(p)) from None
    desc = _icc_description(info["icc"])
    return ImageData(px, "srgb", str(p), "jpeg", desc, _icc_warning(desc, str(p)))


def _read_tiff(p: pathlib.Path) -> ImageData:
    import tifffile

    try:
        return _read_tiff_pages(p, tifffile)
    except _decode_errors() as exc:
        raise InputError(f"cannot decode the TIFF image ({_short(exc)})", source=str(p)) from None


def _read_tiff_pages(p: pathlib.Path, tifffile) -> ImageData:
    warnings = []
    with tifffile.TiffFile(p) as tif:
        page = tif.pages[0]
        if len(tif.pages) > 1:
            warnings.append(f"{p}: TIFF has {len(tif.pages)} pages; the first is rendered as an image "
                            "(give --wavelengths to read it as a spectral cube)")
        photometric = int(page.photometric)
        # PHOTOMETRIC: 0 MINISWHITE, 1 MINISBLACK, 2 RGB, 3 PALETTE
        if photometric not in (0, 1, 2, 3):
            raise InputError(f"unsupported TIFF photometric interpretation {page.photometric.name}",
                             source=str(p), hint="use greyscale or RGB TIFF")
        px = page.asarray()
        axes = page.axes
        if axes.startswith("S") and px.ndim == 3:
            px = np.moveaxis(px, 0, -1)
        if photometric == 3:
            cmap = page.colormap  # (3, 2**bits) uint16
            px = np.moveaxis(cmap[:, px], 0, -1)
        if photometric == 0:
            if np.issubdtype(px.dtype, np.integer):
                px = np.iinfo(px.dtype).max - px
            else:
                px = 1.0 - px
        tag = page.tags.get(34675)  # InterColorProfile
        icc = bytes(tag.value) if tag is not None else None
    px = np.ascontiguousarray(px)
    if np.issubdtype(px.dtype, np.floating):
        if px.dtype not in (np.float32, np.float64):
            px = px.astype(np.float32)
        if not np.all(np.isfinite(px)):
            raise InputError("float TIFF holds NaN or infinite values", source=str(p))
        encoding = "linear"
    elif px.dtype in (np.uint8, np.uint16):
        encoding = "srgb"
    else:
        raise InputError(f"unsupported TIFF sample type {px.dtype}", source=str(p),
                         hint="use 8- or 16-bit unsigned integers (sRGB) or float (linear sRGB)")
    desc = _icc_description(icc)
    return ImageData(px, encoding, str(p), "tiff", desc, warnings + _icc_warning(desc, str(p)))

