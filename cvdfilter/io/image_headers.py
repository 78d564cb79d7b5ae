"""Image files before decoding: which files are read, sizes from headers (checked before any pixel is
decoded), the settings record stored in a file, embedded ICC profiles.

Public: :class:`ImageHeader`, :func:`image_header`, :func:`read_metadata`, :func:`regular_file`,
:func:`check_size`, :data:`IMAGE_SUFFIXES`, :data:`DEFAULT_MAX_MEGAPIXELS`.
"""

from __future__ import annotations

import json
import pathlib
import struct
import zlib
from dataclasses import dataclass

from ..errors import InputError

__all__ = ["ImageHeader", "image_header", "read_metadata", "regular_file", "check_size", "IMAGE_SUFFIXES",
           "DEFAULT_MAX_MEGAPIXELS"]

#: File suffixes read as images, by format.
IMAGE_SUFFIXES = {".png": "png", ".jpg": "jpeg", ".jpeg": "jpeg", ".tif": "tiff", ".tiff": "tiff"}

#: Default limit on image size, megapixels: about 450 MB decoded at 8-bit RGB,
#: above any camera in common use and below what a shared 2-core, 24 GB
#: machine handles comfortably (common practice: Pillow's own default limit
#: is 89 MP for a warning and 179 MP for an error).
DEFAULT_MAX_MEGAPIXELS = 150.0

_PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"


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
                    desc = tif.pages.first.description
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

