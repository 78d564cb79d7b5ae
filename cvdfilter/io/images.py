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
through Pillow, TIFF through tifffile. Before any pixel is decoded the header
is checked against ``max_megapixels`` (default :data:`DEFAULT_MAX_MEGAPIXELS`)
so that a decompression bomb is refused with a clear message; Pillow's own
limit (``PIL.Image.MAX_IMAGE_PIXELS``) is set to the same number.

Writers
-------
PNG (8/16-bit, an ``sRGB`` chunk and text chunks with the settings and the
caveat), TIFF (8/16-bit or float32, settings in ImageDescription as JSON),
JPEG (8-bit, quality 95). Every write is atomic and refuses to overwrite an input.

Public: :class:`ImageData`, :func:`read_image`, :func:`write_image`, :func:`image_header`,
:func:`set_pixel_limit`, :data:`IMAGE_SUFFIXES`, :data:`DEFAULT_MAX_MEGAPIXELS`.
"""

from __future__ import annotations

import json
import os
import pathlib
import struct
import zlib
from collections.abc import Iterable
from dataclasses import dataclass, field

import numpy as np

from ..errors import InputError
from .atomic import atomic_path

__all__ = ["ImageData", "ImageHeader", "read_image", "write_image", "encode_png", "image_header", "set_pixel_limit",
           "check_size", "IMAGE_SUFFIXES", "DEFAULT_MAX_MEGAPIXELS"]

#: File suffixes read as images, by format.
IMAGE_SUFFIXES = {".png": "png", ".jpg": "jpeg", ".jpeg": "jpeg", ".tif": "tiff", ".tiff": "tiff"}

#: Default limit on image size, megapixels: about 450 MB decoded at 8-bit RGB,
#: above any camera in common use and below what a shared 2-core, 24 GB
#: machine handles comfortably (common practice: Pillow's own default limit
#: is 89 MP for a warning and 179 MP for an error).
DEFAULT_MAX_MEGAPIXELS = 150.0

_PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"
_CHANNELS = {1: "grey", 2: "grey+alpha", 3: "rgb", 4: "rgba"}


@dataclass
class ImageHeader:
    """What a file's header says, read without decoding pixels.

    Attributes
    ----------
    path : str
    format : str
        ``png``, ``jpeg`` or ``tiff``.
    width, height : int
        Pixels.
    pages : int
        Number of TIFF pages (1 for PNG and JPEG).
    """

    path: str
    format: str
    width: int
    height: int
    pages: int = 1

    @property
    def megapixels(self) -> float:
        return self.width * self.height / 1e6


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
    """Set Pillow's decompression-bomb limit to ``max_megapixels`` (megapixels)."""
    from PIL import Image

    Image.MAX_IMAGE_PIXELS = int(max_megapixels * 1e6)


def check_size(width: int, height: int, max_megapixels: float, source: str) -> None:
    """Refuse an image larger than ``max_megapixels`` before it is decoded."""
    if width <= 0 or height <= 0:
        raise InputError(f"image has no pixels ({width} x {height})", source=source)
    mp = width * height / 1e6
    if mp > max_megapixels:
        raise InputError(f"image is {width} x {height} = {mp:.1f} megapixels, above the limit of "
                         f"{max_megapixels:g} megapixels (a possible decompression bomb)", source=source,
                         hint="raise --max-megapixels if the file is trusted")


def _format_of(path: pathlib.Path) -> str:
    fmt = IMAGE_SUFFIXES.get(path.suffix.lower())
    if fmt is None:
        raise InputError(f"unsupported image type '{path.suffix}'", source=str(path),
                         hint="use PNG, JPEG or TIFF")
    return fmt


def _png_chunks(data: bytes, source: str):
    """Yield (type, payload) of the chunks before the first IDAT."""
    if data[:8] != _PNG_SIGNATURE:
        raise InputError("not a PNG file (bad signature)", source=source)
    pos = 8
    while pos + 8 <= len(data):
        length, ctype = struct.unpack(">I4s", data[pos:pos + 8])
        payload = data[pos + 8:pos + 8 + length]
        yield ctype, payload
        if ctype in (b"IDAT", b"IEND"):
            return
        pos += 12 + length


def image_header(path, *, max_megapixels: float | None = None) -> ImageHeader:
    """Read an image's size from its header, without decoding pixels.

    Parameters
    ----------
    path : str or path-like
    max_megapixels : float, optional
        Refuse (``InputError``) an image larger than this, in megapixels.

    Returns
    -------
    ImageHeader
    """
    p = pathlib.Path(path)
    fmt = _format_of(p)
    if not p.is_file():
        raise InputError("no such file", source=str(p))
    try:
        if fmt == "png":
            with open(p, "rb") as fh:
                head = fh.read(33)
            if head[:8] != _PNG_SIGNATURE or head[12:16] != b"IHDR":
                raise InputError("not a PNG file (bad signature or missing IHDR)", source=str(p))
            width, height = struct.unpack(">II", head[16:24])
            header = ImageHeader(str(p), fmt, width, height)
        elif fmt == "jpeg":
            from PIL import Image

            with Image.open(p) as im:
                if im.format != "JPEG":
                    raise InputError(f"not a JPEG file (Pillow reads it as {im.format})", source=str(p))
                header = ImageHeader(str(p), fmt, im.size[0], im.size[1])
        else:
            import tifffile

            with tifffile.TiffFile(p) as tif:
                page = tif.pages[0]
                shape = dict(zip(page.axes, page.shape))
                header = ImageHeader(str(p), fmt, int(shape.get("X", 0)), int(shape.get("Y", 0)), len(tif.pages))
    except InputError:
        raise
    except Exception as exc:  # the libraries raise many types for damaged files
        raise InputError(f"cannot read the {fmt.upper()} header ({_short(exc)})", source=str(p)) from None
    if max_megapixels is not None:
        check_size(header.width, header.height, max_megapixels, str(p))
    return header


def _short(exc: BaseException) -> str:
    text = " ".join(str(exc).split()) or type(exc).__name__
    return text[:160]


def _icc_description(icc: bytes | None) -> str | None:
    if not icc:
        return None
    try:
        import io

        from PIL import ImageCms

        return ImageCms.getProfileDescription(ImageCms.ImageCmsProfile(io.BytesIO(icc))).strip() or "unnamed"
    except Exception:  # an unreadable profile is still worth a warning
        return "unreadable profile"


def _icc_warning(desc: str | None, source: str) -> list:
    if desc and "srgb" not in desc.lower().replace(" ", "").replace("-", ""):
        return [f"{source}: embedded ICC profile '{desc}' is not sRGB; pixels are read as sRGB without conversion"]
    return []


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
    set_pixel_limit(max(max_megapixels, DEFAULT_MAX_MEGAPIXELS))
    p = pathlib.Path(path)
    src = str(p)
    try:
        if header.format == "png":
            img = _read_png(p)
        elif header.format == "jpeg":
            img = _read_jpeg(p)
        else:
            img = _read_tiff(p)
    except InputError:
        raise
    except MemoryError:
        raise InputError("not enough memory to decode the image", source=src) from None
    except Exception as exc:
        raise InputError(f"cannot decode the {header.format.upper()} image ({_short(exc)})", source=src) from None
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
    px = np.asarray(imagecodecs.png_decode(data))
    desc = None if srgb_chunk else _icc_description(icc)
    if icc == b"":
        desc = "unreadable profile"
    return ImageData(px, "srgb", str(p), "png", desc, _icc_warning(desc, str(p)))


def _read_jpeg(p: pathlib.Path) -> ImageData:
    from PIL import Image

    with Image.open(p) as im:
        mode = im.mode
        icc = im.info.get("icc_profile")
        if mode not in ("L", "RGB"):
            raise InputError(f"unsupported JPEG colour mode {mode}", source=str(p),
                             hint="convert CMYK or YCCK JPEGs to sRGB first")
        px = np.asarray(im)
    desc = _icc_description(icc)
    return ImageData(px, "srgb", str(p), "jpeg", desc, _icc_warning(desc, str(p)))


def _read_tiff(p: pathlib.Path) -> ImageData:
    import tifffile

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


# --- writing -----------------------------------------------------------------------

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
