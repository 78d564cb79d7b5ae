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

__all__ = ["ImageData", "ImageHeader", "read_image", "write_image", "encode_png", "image_header", "read_metadata",
           "regular_file", "set_pixel_limit", "check_size", "IMAGE_SUFFIXES", "DEFAULT_MAX_MEGAPIXELS"]

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
    """Set Pillow's process-wide decompression-bomb limit to ``max_megapixels`` (megapixels).

    Not needed by this package (its readers check sizes themselves and never
    change this setting); kept for callers who decode with Pillow directly.
    """
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


def regular_file(path, source: str | None = None) -> pathlib.Path:
    """``path`` as a Path if it is a regular file; InputError otherwise (never opens a pipe or device).

    A named pipe would block a reader forever and a device such as ``/dev/zero`` never ends, so only
    regular files (or links to them) are read.
    """
    p = pathlib.Path(path)
    src = str(p) if source is None else source
    if p.is_file():
        return p
    if not p.exists():
        raise InputError("no such file", source=src)
    if p.is_dir():
        raise InputError("is a folder, not a file", source=src)
    raise InputError("is not a regular file (a named pipe, socket or device); only regular files are read",
                     source=src, hint="copy the data to a file first")


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
    regular_file(p)
    if fmt == "png":
        with open(p, "rb") as fh:
            head = fh.read(33)
        if head[:8] != _PNG_SIGNATURE or head[12:16] != b"IHDR":
            raise InputError("not a PNG file (bad signature or missing IHDR)", source=str(p))
        width, height = struct.unpack(">II", head[16:24])
        header = ImageHeader(str(p), fmt, width, height)
    elif fmt == "jpeg":
        with open(p, "rb") as fh:
            info = _jpeg_info(fh, str(p))
        header = ImageHeader(str(p), fmt, info["width"], info["height"])
    else:
        import tifffile

        try:
            with tifffile.TiffFile(p) as tif:
                page = tif.pages[0]
                shape = dict(zip(page.axes, page.shape))
                header = ImageHeader(str(p), fmt, int(shape.get("X", 0)), int(shape.get("Y", 0)), len(tif.pages))
        except _decode_errors() as exc:  # damaged or truncated files
            raise InputError(f"cannot read the TIFF header ({_short(exc)})", source=str(p)) from None
    if max_megapixels is not None:
        check_size(header.width, header.height, max_megapixels, str(p))
    return header


def read_metadata(path, key: str = "cvdfilter") -> dict | None:
    """The JSON settings record ``key`` that :func:`write_image` stored in an image, read from the header only.

    PNG: the iTXt/tEXt chunk ``key`` before the image data; TIFF: ``key`` inside the JSON
    ImageDescription; JPEG: ``key`` inside the JSON comment. None when the file is not a regular
    image file, is unreadable, or holds no such record (a file this tool did not write).
    """
    p = pathlib.Path(path)
    if not p.is_file() or p.suffix.lower() not in IMAGE_SUFFIXES:
        return None
    fmt = IMAGE_SUFFIXES[p.suffix.lower()]
    text = None
    try:
        with open(p, "rb") as fh:
            if fmt == "png":
                if fh.read(8) != _PNG_SIGNATURE:
                    return None
                while text is None:
                    head = fh.read(8)
                    if len(head) < 8:
                        break
                    length, ctype = struct.unpack(">I4s", head)
                    if ctype in (b"IDAT", b"IEND"):
                        break
                    if ctype in (b"iTXt", b"tEXt") and length < (64 << 20):
                        payload = fh.read(length)
                        name, _, rest = payload.partition(b"\x00")
                        if name == key.encode("latin-1"):
                            if ctype == b"iTXt":  # compression flag, method, language\0, translated keyword\0
                                rest = rest[2:].split(b"\x00", 2)[-1]
                            text = rest.decode("utf-8")
                        fh.seek(4, 1)
                    else:
                        fh.seek(length + 4, 1)
                record = text
            elif fmt == "jpeg":
                comment = _jpeg_info(fh, str(p))["comment"]
                record = _json_key(comment.decode("utf-8"), key) if comment else None
            else:
                import tifffile

                with tifffile.TiffFile(fh) as tif:
                    desc = tif.pages[0].description
                record = _json_key(desc, key)
    except (InputError, UnicodeDecodeError) + _decode_errors():
        return None
    if isinstance(record, str):
        try:
            record = json.loads(record)
        except ValueError:
            return None
    return record if isinstance(record, dict) else None


def _json_key(text: str, key: str):
    """``key`` of the JSON object in ``text``; None when ``text`` is not a JSON object."""
    if not text.lstrip().startswith("{"):
        return None
    obj = json.loads(text)
    return obj.get(key) if isinstance(obj, dict) else None


def _decode_errors() -> tuple:
    """What the decoding libraries raise for a damaged file (caught only around their calls)."""
    import imagecodecs
    import tifffile

    return (OSError, ValueError, EOFError, struct.error, zlib.error, IndexError, KeyError,
            tifffile.TiffFileError, imagecodecs.PngError, imagecodecs.Jpeg8Error)


# JPEG markers: SOF0-SOF15 except DHT (C4), JPG (C8) and DAC (CC) carry the frame size.
_SOF_MARKERS = set(range(0xC0, 0xD0)) - {0xC4, 0xC8, 0xCC}


def _jpeg_info(fh, source: str) -> dict:
    """Frame size, components, ICC profile and comment of a JPEG, read from the segments before the scan.

    ``fh`` is a binary file positioned at the start. Returns ``width``, ``height``, ``components``,
    ``icc`` (bytes or None) and ``comment`` (bytes or None).
    """
    if fh.read(2) != b"\xff\xd8":
        raise InputError("not a JPEG file (no start-of-image marker)", source=source)
    info: dict = {"icc": None, "comment": None}
    icc_parts: dict = {}
    while True:
        b = fh.read(1)
        while b == b"\xff":  # fill bytes
            b = fh.read(1)
            if b != b"\xff":
                break
        else:
            if not b:
                break
            continue
        if not b:
            break
        marker = b[0]
        if marker == 0xD9 or marker == 0xDA:  # end of image, start of scan
            break
        if marker == 0x01 or 0xD0 <= marker <= 0xD7:
            continue
        raw = fh.read(2)
        if len(raw) < 2:
            break
        length = struct.unpack(">H", raw)[0] - 2
        if length < 0:
            break
        if marker in _SOF_MARKERS or marker in (0xE2, 0xFE):
            payload = fh.read(length)
            if marker in _SOF_MARKERS and len(payload) >= 6:
                info["height"], info["width"] = struct.unpack(">HH", payload[1:5])
                info["components"] = payload[5]
            elif marker == 0xE2 and payload.startswith(b"ICC_PROFILE\x00") and len(payload) > 14:
                icc_parts[payload[12]] = payload[14:]
            elif marker == 0xFE:
                info["comment"] = (info["comment"] or b"") + payload
        else:
            fh.seek(length, 1)
    if "width" not in info:
        raise InputError("not a JPEG file, or damaged (no frame header before the image data)", source=source)
    if icc_parts:
        info["icc"] = b"".join(icc_parts[k] for k in sorted(icc_parts))
    return info


def _short(exc: BaseException) -> str:
    text = " ".join(str(exc).split()) or type(exc).__name__
    return text[:160]


def _icc_description(icc: bytes | None) -> str | None:
    if not icc:
        return None
    import io

    from PIL import ImageCms

    try:
        return ImageCms.getProfileDescription(ImageCms.ImageCmsProfile(io.BytesIO(icc))).strip() or "unnamed"
    except (ImageCms.PyCMSError, OSError, ValueError, TypeError):  # an unreadable profile is still worth a warning
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
