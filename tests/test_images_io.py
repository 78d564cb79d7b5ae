"""Image reading and writing (cvdfilter.io.images): formats, bit depths, alpha, ICC warnings, size limits."""

from __future__ import annotations

import json
import pathlib
import struct
import zlib

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from cvdfilter.errors import InputError
from cvdfilter.io.images import (DEFAULT_MAX_MEGAPIXELS, encode_png, image_header, read_image, set_pixel_limit,
                                 write_image)

TEST_IMAGES = pathlib.Path(__file__).resolve().parent.parent / "test_images"


@st.composite
def images(draw, dtypes=(np.uint8, np.uint16), channels=(1, 2, 3, 4)):
    dtype = draw(st.sampled_from(dtypes))
    c = draw(st.sampled_from(channels))
    h, w = draw(st.integers(1, 9)), draw(st.integers(1, 9))
    seed = draw(st.integers(0, 2 ** 31 - 1))
    top = np.iinfo(dtype).max
    a = np.random.default_rng(seed).integers(0, top, size=(h, w, c), endpoint=True).astype(dtype)
    return a[..., 0] if c == 1 else a


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(img=images())
def test_png_round_trip_property(tmp_path, img):
    # Invariant: what the writer stores, the reader returns bit for bit (8/16-bit, grey, grey+alpha, RGB, RGBA).
    p = tmp_path / "x.png"
    write_image(p, img, metadata={"note": "test"})
    back = read_image(p)
    assert back.pixels.dtype == img.dtype and np.array_equal(back.pixels, img)
    assert back.encoding == "srgb" and back.format == "png" and back.warnings == []


@settings(max_examples=30, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(img=images(dtypes=(np.uint8, np.uint16), channels=(1, 2, 3, 4)))
def test_tiff_round_trip_property(tmp_path, img):
    p = tmp_path / "x.tif"
    write_image(p, img)
    back = read_image(p)
    assert np.array_equal(back.pixels, img) and back.pixels.dtype == img.dtype


def test_float_tiff_is_linear(tmp_path):
    a = np.random.default_rng(0).uniform(-0.1, 1.3, (5, 7, 3)).astype(np.float32)
    p = tmp_path / "lin.tif"
    write_image(p, a, encoding="linear")
    back = read_image(p)
    assert back.encoding == "linear" and back.pixels.dtype == np.float32 and np.array_equal(back.pixels, a)
    desc = json.loads(__import__("tifffile").TiffFile(p).pages[0].description)
    assert "linear" in desc["encoding"]


def test_planar_tiff_and_multipage_warning(tmp_path):
    import tifffile

    a = np.random.default_rng(1).integers(0, 255, (3, 6, 5), dtype=np.uint8)
    tifffile.imwrite(tmp_path / "planar.tif", a, photometric="rgb", planarconfig="separate")
    back = read_image(tmp_path / "planar.tif")
    assert back.pixels.shape == (6, 5, 3) and np.array_equal(back.pixels, np.moveaxis(a, 0, -1))
    with tifffile.TiffWriter(tmp_path / "pages.tif") as tw:
        for _ in range(3):
            tw.write(np.zeros((4, 4, 3), np.uint8), photometric="rgb")
    img = read_image(tmp_path / "pages.tif")
    assert img.pixels.shape == (4, 4, 3) and any("3 pages" in w for w in img.warnings)


def test_jpeg_read_and_write(tmp_path):
    from PIL import Image

    rgb = np.random.default_rng(2).integers(0, 255, (16, 16, 3), dtype=np.uint8)
    Image.fromarray(rgb).save(tmp_path / "a.jpg", quality=95)
    Image.fromarray(rgb[..., 0]).save(tmp_path / "g.jpeg")
    a, g = read_image(tmp_path / "a.jpg"), read_image(tmp_path / "g.jpeg")
    assert a.pixels.shape == (16, 16, 3) and a.format == "jpeg" and g.pixels.shape == (16, 16)
    write_image(tmp_path / "out.jpg", rgb)
    assert read_image(tmp_path / "out.jpg").pixels.shape == (16, 16, 3)
    with pytest.raises(ValueError):
        write_image(tmp_path / "bad.jpg", np.zeros((2, 2, 4), np.uint8))
    with pytest.raises(ValueError):
        write_image(tmp_path / "bad16.jpg", np.zeros((2, 2, 3), np.uint16))


def test_png_metadata_and_srgb_chunk(tmp_path):
    p = tmp_path / "m.png"
    write_image(p, np.zeros((2, 3, 3), np.uint8), metadata={"Software": "cvdfilter", "cvdfilter": {"caveat": "x"}})
    data = p.read_bytes()
    assert b"sRGB" in data[:200] and b"iTXt" in data
    from PIL import Image

    with Image.open(p) as im:  # an outside reader accepts the inserted chunks (CRCs right)
        im.load()
        assert im.info["Software"] == "cvdfilter" and json.loads(im.info["cvdfilter"])["caveat"] == "x"
    assert encode_png(np.zeros((1, 1), np.uint16))[:8] == b"\x89PNG\r\n\x1a\n"


def test_icc_profiles(tmp_path):
    from PIL import Image, ImageCms

    rgb = np.full((4, 4, 3), 128, np.uint8)
    srgb = ImageCms.ImageCmsProfile(ImageCms.createProfile("sRGB")).tobytes()
    lab = ImageCms.ImageCmsProfile(ImageCms.createProfile("LAB")).tobytes()
    for suffix in (".png", ".jpg", ".tif"):
        Image.fromarray(rgb).save(tmp_path / f"s{suffix}", icc_profile=srgb)
        Image.fromarray(rgb).save(tmp_path / f"l{suffix}", icc_profile=lab)
        assert read_image(tmp_path / f"s{suffix}").warnings == []
        warned = read_image(tmp_path / f"l{suffix}")
        assert len(warned.warnings) == 1 and "not sRGB" in warned.warnings[0] and warned.icc_description


def _png_header_only(path, width, height):
    ihdr = struct.pack(">IIBBBBB", width, height, 8, 2, 0, 0, 0)
    chunk = struct.pack(">I", 13) + b"IHDR" + ihdr + struct.pack(">I", zlib.crc32(b"IHDR" + ihdr))
    path.write_bytes(b"\x89PNG\r\n\x1a\n" + chunk + b"\x00" * 64)


def test_decompression_bomb_refused_before_decoding(tmp_path):
    p = tmp_path / "bomb.png"
    _png_header_only(p, 40000, 40000)  # 1600 megapixels claimed, a few bytes of data
    with pytest.raises(InputError, match="decompression bomb"):
        read_image(p)
    assert image_header(p).megapixels == pytest.approx(1600.0)
    small = tmp_path / "small.png"
    write_image(small, np.zeros((100, 100, 3), np.uint8))
    with pytest.raises(InputError, match="above the limit of 0.005 megapixels"):
        read_image(small, max_megapixels=0.005)
    from PIL import Image

    set_pixel_limit(12.5)
    assert Image.MAX_IMAGE_PIXELS == 12_500_000
    set_pixel_limit(DEFAULT_MAX_MEGAPIXELS)


@pytest.mark.parametrize("name,content,needle", [
    ("x.png", b"not a png at all", "not a PNG"),
    ("x.jpg", b"\xff\xd8 truncated", "JPEG"),
    ("x.tif", b"II*\x00garbage", "TIFF"),
    ("x.gif", b"GIF89a", "unsupported image type"),
])
def test_damaged_files_raise_input_error(tmp_path, name, content, needle):
    p = tmp_path / name
    p.write_bytes(content)
    with pytest.raises(InputError, match=needle) as info:
        read_image(p)
    assert name in str(info.value)


def test_truncated_png_data(tmp_path):
    p = tmp_path / "t.png"
    write_image(p, np.random.default_rng(3).integers(0, 255, (50, 50, 3), dtype=np.uint8))
    p.write_bytes(p.read_bytes()[:200])
    with pytest.raises(InputError, match="cannot decode"):
        read_image(p)


def test_write_never_overwrites_an_input(tmp_path):
    p = tmp_path / "in.png"
    write_image(p, np.zeros((2, 2, 3), np.uint8))
    before = p.read_bytes()
    with pytest.raises(InputError, match="overwrite an input"):
        write_image(p, np.ones((2, 2, 3), np.uint8), inputs=[p])
    assert p.read_bytes() == before


def test_bundled_test_images_read():
    # The committed, generated images (test_images/README.md) decode as documented.
    expect = {"tabletop.png": ((192, 192, 3), np.uint8), "tabletop_16bit.png": ((192, 192, 3), np.uint16),
              "tabletop_linear.tif": ((96, 96, 3), np.float32), "gradient_grey.png": ((48, 256), np.uint8),
              "gradient_rgba.png": ((64, 128, 4), np.uint8), "dots_deutan.png": ((256, 256, 3), np.uint8)}
    for name, (shape, dtype) in expect.items():
        img = read_image(TEST_IMAGES / name)
        assert img.pixels.shape == shape and img.pixels.dtype == dtype, name
    assert read_image(TEST_IMAGES / "tabletop_linear.tif").encoding == "linear"


def test_written_files_get_umask_permissions(tmp_path):
    import os

    p = write_image(tmp_path / "perm.png", np.zeros((1, 1, 3), np.uint8))
    umask = os.umask(0)
    os.umask(umask)
    assert (p.stat().st_mode & 0o777) == (0o666 & ~umask)
    assert not list(tmp_path.glob(".*tmp*"))  # no temporary file left behind



# --- no process-wide side effects; regular files only; the tool's own errors only ----------------------

def test_reading_leaves_pillows_global_limit_alone(tmp_path):
    from PIL import Image

    before = Image.MAX_IMAGE_PIXELS
    write_image(tmp_path / "a.jpg", np.zeros((20, 30, 3), np.uint8))
    write_image(tmp_path / "a.png", np.zeros((20, 30, 3), np.uint8))
    for name in ("a.jpg", "a.png"):
        read_image(tmp_path / name, max_megapixels=500)
        read_image(tmp_path / name, max_megapixels=0.01)
    assert Image.MAX_IMAGE_PIXELS == before


def test_jpeg_header_parsed_without_decoding(tmp_path):
    """Frame size from the SOF segment (ITU-T T.81, B.2.2); a CMYK JPEG is refused with one line."""
    from PIL import Image

    Image.new("RGB", (37, 21), (10, 200, 30)).save(tmp_path / "rgb.jpg", quality=90)
    h = image_header(tmp_path / "rgb.jpg")
    assert (h.width, h.height) == (37, 21)
    Image.new("CMYK", (8, 8)).save(tmp_path / "cmyk.jpg")
    with pytest.raises(InputError, match="4 colour components"):
        read_image(tmp_path / "cmyk.jpg")
    # a progressive JPEG (SOF2) reads too
    Image.new("L", (16, 9), 128).save(tmp_path / "prog.jpg", progressive=True)
    assert read_image(tmp_path / "prog.jpg").pixels.shape == (9, 16)


def test_settings_record_read_back_from_every_format(tmp_path):
    from cvdfilter.io.images import read_metadata

    record = {"fingerprint": "ab" * 32, "view": "observer", "filter": "nd:t=0.5"}
    for suffix, px in ((".png", np.zeros((4, 4, 3), np.uint16)), (".tif", np.zeros((4, 4, 3), np.float32)),
                       (".jpg", np.zeros((4, 4, 3), np.uint8))):
        p = tmp_path / f"x{suffix}"
        write_image(p, px, metadata={"cvdfilter": record}, encoding="linear" if px.dtype.kind == "f" else "srgb")
        assert read_metadata(p) == record, suffix
    plain = tmp_path / "plain.png"
    plain.write_bytes(encode_png(np.zeros((2, 2, 3), np.uint8)))
    assert read_metadata(plain) is None and read_metadata(tmp_path / "missing.png") is None


def test_named_pipe_is_refused_without_waiting(tmp_path):
    import os

    fifo = tmp_path / "pipe.png"
    os.mkfifo(fifo)
    with pytest.raises(InputError, match="not a regular file"):
        read_image(fifo)


def test_programming_errors_are_not_turned_into_bad_input(tmp_path, monkeypatch):
    """Only the decoders' own failures become InputError; a bug in the tool stays a bug."""
    import imagecodecs

    p = tmp_path / "ok.png"
    write_image(p, np.zeros((2, 2, 3), np.uint8))

    def broken(*args, **kwargs):
        raise TypeError("a programming error")

    monkeypatch.setattr(imagecodecs, "png_decode", broken)
    with pytest.raises(TypeError, match="programming error"):
        read_image(p)
