"""Hyperspectral cubes: reading (cvdfilter.io.cubes) and rendering (Renderer.apply_cube)."""

from __future__ import annotations

import json
import pathlib

import numpy as np
import pytest

from cvdfilter.errors import InputError
from cvdfilter.io.cubes import Cube, parse_wavelengths, read_cube, tiff_has_wavelengths
from cvdfilter.rendering import Renderer, encode_srgb, render, render_spectra, render_views

TEST_IMAGES = pathlib.Path(__file__).resolve().parent.parent / "test_images"
WL = np.arange(400.0, 701.0, 10.0)  # 31 bands, a common camera sampling


def _lab(srgb8):
    import colour

    return colour.XYZ_to_Lab(colour.sRGB_to_XYZ(np.asarray(srgb8) / 255.0))


def _de(a, b):
    import colour

    return colour.delta_E(_lab(a), _lab(b), method="CIE 2000")


def test_parse_wavelengths():
    assert parse_wavelengths("400:700:10").tolist() == WL.tolist()
    assert parse_wavelengths("400, 500;600 700").tolist() == [400, 500, 600, 700]
    for bad in ("400:700:0", "700:400:10", "400:705:10", "a,b"):
        with pytest.raises(InputError):
            parse_wavelengths(bad)


def test_npz_with_wavelengths_and_kind(tmp_path):
    cube = np.random.default_rng(0).uniform(0, 1, (4, 5, len(WL))).astype(np.float32)
    np.savez(tmp_path / "c.npz", cube=cube, wavelengths=WL, kind=np.array("radiance"))
    c = read_cube(tmp_path / "c.npz")
    assert c.data.shape == (4, 5, 31) and c.kind == "radiance" and c.kind_source == "file"
    assert c.wavelength_source == "file" and np.array_equal(c.wavelengths, WL)
    # the caller's choice wins
    c = read_cube(tmp_path / "c.npz", kind="reflectance", wavelengths="410:710:10")
    assert c.kind_source == "argument" and c.wavelengths[0] == 410


def test_npy_with_sidecars_and_bands_first(tmp_path):
    cube = np.random.default_rng(1).uniform(0, 1, (len(WL), 3, 4))  # bands first
    np.save(tmp_path / "a.npy", cube)
    with pytest.raises(InputError, match="no wavelengths"):
        read_cube(tmp_path / "a.npy")
    (tmp_path / "a.wavelengths.txt").write_text("\n".join(str(w) for w in WL))
    c = read_cube(tmp_path / "a.npy")
    assert c.data.shape == (3, 4, 31) and c.wavelength_source.startswith("sidecar")
    assert c.kind == "reflectance" and c.kind_source == "assumed"
    assert any("assumed to be reflectance" in w for w in c.warnings)
    np.save(tmp_path / "b.npy", np.moveaxis(cube, 0, -1))
    (tmp_path / "b.wavelengths.json").write_text(json.dumps({"wavelengths": WL.tolist(), "kind": "radiance"}))
    b = read_cube(tmp_path / "b.npy")
    assert b.kind == "radiance" and b.kind_source == "sidecar"


def test_multipage_tiff_cube(tmp_path):
    import tifffile

    cube = np.random.default_rng(2).uniform(0, 1, (len(WL), 6, 7)).astype(np.float32)
    tifffile.imwrite(tmp_path / "m.tif", cube, metadata={"wavelengths": WL.tolist(), "kind": "reflectance"})
    assert tiff_has_wavelengths(tmp_path / "m.tif")
    c = read_cube(tmp_path / "m.tif")
    assert c.data.shape == (6, 7, 31) and c.kind_source == "file"
    tifffile.imwrite(tmp_path / "plain.tif", cube)
    with pytest.raises(InputError, match="no wavelengths"):
        read_cube(tmp_path / "plain.tif")
    assert read_cube(tmp_path / "plain.tif", wavelengths="400:700:10").bands == 31


def test_pickle_is_never_enabled(tmp_path):
    # A cube file must never run code: object arrays need pickle, which the reader keeps disabled.
    np.save(tmp_path / "evil.npy", np.array([{"a": 1}], dtype=object), allow_pickle=True)
    with pytest.raises(InputError, match="pickling disabled"):
        read_cube(tmp_path / "evil.npy", wavelengths="400:700:10")
    np.savez(tmp_path / "evil.npz", cube=np.array([[[1]]], dtype=object), wavelengths=WL)
    with pytest.raises(InputError):
        read_cube(tmp_path / "evil.npz")


@pytest.mark.parametrize("make,needle", [
    (lambda: (np.zeros((2, 2, 3)), [500, 400, 600]), "strictly increasing"),
    (lambda: (np.zeros((2, 2, 4)), [400, 500, 600]), "do not match"),
    (lambda: (np.zeros((2, 2)), [400, 500, 600]), "3-D"),
    (lambda: (np.zeros((2, 2, 3)), [0.4, 0.5, 0.6]), "not in nm"),
    (lambda: (np.full((2, 2, 3), np.nan), [400, 550, 700]), "NaN"),
    (lambda: (np.zeros((2, 2, 3), np.uint16), [400, 550, 700]), "integer"),
])
def test_bad_cubes(tmp_path, make, needle):
    data, wl = make()
    np.savez(tmp_path / "bad.npz", cube=data, wavelengths=np.asarray(wl, float))
    with pytest.raises(InputError, match=needle):
        read_cube(tmp_path / "bad.npz")


def test_megapixel_limit(tmp_path):
    np.save(tmp_path / "big.npy", np.zeros((100, 100, 3), np.float32))
    with pytest.raises(InputError, match="megapixels"):
        read_cube(tmp_path / "big.npy", wavelengths="400:700:150", max_megapixels=0.001)


def test_uniform_cube_matches_single_spectrum_path():
    # A cube of one reflectance renders to the colour of the single-spectrum path
    # (render_spectra: cone excitations, von Kries, simulate(), display, step by step; the path the
    # swatches figure uses), for every view, an anomalous and a dichromatic observer, a filter.
    rng = np.random.default_rng(4)
    refl = np.clip(0.3 + 0.25 * np.sin((WL - 400) / 45.0) + 0.05 * rng.standard_normal(len(WL)), 0.02, 0.98)
    cube = Cube(np.tile(refl, (3, 4, 1)).astype(np.float32), WL, "reflectance")
    grid_refl = np.interp(np.arange(380.0, 781.0), WL, refl)  # linear, held at the ends: the cube's rule
    for obs in ("deuteranope", "protanomalous:shift=10", "tritanope"):
        r = Renderer("larkhill-notch-575", observer=obs, illuminant="FL2", adaptation=0.6)
        for view in ("original", "filtered", "observer", "observer-filtered"):
            lin, _ = r.apply_cube(cube, view, dtype=np.float32)
            ref = render_spectra(grid_refl, filter="larkhill-notch-575", observer=obs, illuminant="FL2",
                                 adaptation=0.6, view=view)
            assert np.allclose(lin, np.clip(ref, 0, 1), rtol=0, atol=2e-5), (obs, view)
            codes, _ = r.apply_cube(cube, view)
            assert np.abs(codes.astype(int) - encode_srgb(ref, np.uint8).astype(int)).max() <= 1


def test_radiance_cube_equals_reflectance_cube_under_its_illuminant():
    # A radiance cube of reflectances times the illuminant, with a white patch as its brightest
    # pixels, renders like the reflectance cube (the exposure maps the white to the white).
    from cvdfilter.spectra.illuminants import illuminant

    rng = np.random.default_rng(5)
    wl = np.arange(380.0, 781.0)  # on the grid, so that interpolation does not enter
    refl = rng.uniform(0.05, 0.9, (10, 10, len(wl)))
    refl[:3, :] = 1.0  # 30 % white
    spd = illuminant("A").spd
    a = render(Cube(refl, wl, "reflectance"), filter="larkhill-rose-tint", observer="deuteranope", illuminant="A",
               dtype=np.float32)
    b = render(Cube(refl * spd * 3.7, wl, "radiance"), filter="larkhill-rose-tint", observer="deuteranope",
               illuminant="A", dtype=np.float32)
    assert np.allclose(a, b, atol=1e-5)


def test_tabletop_cube_against_colour_science_image():
    # The bundled cube rendered for the normal observer without a filter against the same scene
    # converted by colour-science alone (CIE 1931 2 deg, D65, sRGB; test_images/make_test_images.py).
    # The renderer uses the CIE 2006 (CIE 170-1) 2 deg cone fundamentals and its own display model,
    # so the two differ by the observers' metameric mismatch: measured mean dE2000 0.36, p95 0.88.
    import tifffile

    ref = encode_srgb(tifffile.imread(TEST_IMAGES / "tabletop_linear.tif"), np.uint8)
    out = render(TEST_IMAGES / "tabletop_cube.npz", filter=None, observer="normal", view="original")
    assert out.shape == ref.shape and out.dtype == np.uint8
    de = _de(out, ref)
    assert de.mean() < 1.0 and np.percentile(de, 95) < 2.0


def test_cube_views_and_output_types():
    views = render_views(TEST_IMAGES / "tabletop_cube.npz", filter="larkhill-notch-575", observer="deuteranope")
    assert list(views) == ["original", "filtered", "observer", "observer-filtered"]
    assert all(v.shape == (96, 96, 3) and v.dtype == np.uint8 for v in views.values())
    assert not np.array_equal(views["original"], views["observer"])
    v16 = render(TEST_IMAGES / "tabletop_cube.npz", filter=None, dtype=np.uint16)
    assert v16.dtype == np.uint16 and np.abs((v16 >> 8).astype(int) - views["original"].astype(int)).max() <= 1


def test_tiff_cube_detection(tmp_path):
    import tifffile

    from cvdfilter.io.cubes import tiff_is_cube

    tifffile.imwrite(tmp_path / "rgb.tif", np.zeros((4, 4, 3), np.uint8), photometric="rgb")
    tifffile.imwrite(tmp_path / "bands.tif", np.zeros((31, 4, 4), np.float32), photometric="minisblack")
    tifffile.imwrite(tmp_path / "named.tif", np.zeros((31, 4, 4), np.float32), photometric="minisblack",
                     metadata={"wavelengths": WL.tolist()})
    assert not tiff_is_cube(tmp_path / "rgb.tif", wavelengths_given=True)  # an RGB image stays an image
    assert tiff_is_cube(tmp_path / "bands.tif", wavelengths_given=True)
    assert not tiff_is_cube(tmp_path / "bands.tif")
    assert tiff_is_cube(tmp_path / "named.tif")
    assert render(tmp_path / "rgb.tif", filter=None, wavelengths="400:700:10").shape == (4, 4, 3)


# --- hostile cubes: sizes from headers, every value, regular files only --------------------------------

def _npz_bomb(path, shape, dtype=np.uint8):
    """An .npz whose 'cube' member declares ``shape`` and holds zeros, written in blocks (never whole in
    memory), plus its wavelengths: a few hundred kB on disk for hundreds of MB declared."""
    import zipfile

    header = {"descr": np.lib.format.dtype_to_descr(np.dtype(dtype)), "fortran_order": False, "shape": shape}
    with zipfile.ZipFile(path, "w", compression=zipfile.ZIP_DEFLATED) as zf:
        with zf.open("cube.npy", "w", force_zip64=True) as fh:
            np.lib.format.write_array_header_1_0(fh, header)
            block = bytes(1 << 22)
            left = int(np.prod(shape)) * np.dtype(dtype).itemsize
            while left > 0:
                fh.write(block[:min(left, len(block))])
                left -= len(block)
        with zf.open("wavelengths.npy", "w") as fh:
            np.lib.format.write_array(fh, np.linspace(400.0, 700.0, shape[-1]))


def test_npz_member_shape_checked_before_decompression(tmp_path):
    """A compressed cube declaring 3000 x 3000 pixels x 31 bands (279 MB) is refused from the member's npy
    header inside the zip: the refusal allocates almost nothing."""
    import tracemalloc

    bomb = tmp_path / "bomb.npz"
    _npz_bomb(bomb, (3000, 3000, 31))
    assert bomb.stat().st_size < 2_000_000
    tracemalloc.start()
    try:
        with pytest.raises(InputError, match="9.0 megapixels, above the limit of 1 megapixels"):
            read_cube(bomb, kind="radiance", max_megapixels=1)
        peak = tracemalloc.get_traced_memory()[1]
    finally:
        tracemalloc.stop()
    assert peak < 5_000_000  # bytes; decompressing would take 279 MB


def test_npz_wavelengths_member_size_checked(tmp_path):
    import zipfile

    with zipfile.ZipFile(tmp_path / "w.npz", "w") as zf:
        with zf.open("cube.npy", "w") as fh:
            np.lib.format.write_array(fh, np.zeros((2, 2, 3)))
        with zf.open("wavelengths.npy", "w") as fh:  # a header claiming 10**9 wavelengths
            np.lib.format.write_array_header_1_0(fh, {"descr": "<f8", "fortran_order": False, "shape": (10**9,)})
    with pytest.raises(InputError, match="'wavelengths' declares 1000000000 entries"):
        read_cube(tmp_path / "w.npz")


def test_tiff_cube_size_checked_from_tags(tmp_path):
    """A TIFF cube declaring 31 pages of 4000 x 4000 (an empty, sparse file) is refused from its tags."""
    import tifffile

    big = tmp_path / "big.tif"
    tifffile.imwrite(big, shape=(31, 4000, 4000), dtype=np.uint8, photometric="minisblack",
                     metadata={"wavelengths": WL.tolist(), "kind": "radiance"})
    with pytest.raises(InputError, match="16.0 megapixels, above the limit of 2 megapixels"):
        read_cube(big, max_megapixels=2)


@pytest.mark.parametrize("value", [np.nan, np.inf, -np.inf])
def test_one_bad_value_anywhere_is_caught(tmp_path, value):
    """One NaN or infinite value in a 200 x 300 x 31 cube, placed where a strided sample would miss it."""
    cube = np.full((200, 300, len(WL)), 0.5, np.float32)
    cube[101, 151, 17] = value
    np.save(tmp_path / "c.npy", cube)
    with pytest.raises(InputError, match="1 NaN or infinite value"):
        read_cube(tmp_path / "c.npy", wavelengths=WL)
    np.savez_compressed(tmp_path / "c.npz", cube=cube, wavelengths=WL)
    with pytest.raises(InputError, match="NaN or infinite"):
        read_cube(tmp_path / "c.npz")
    with pytest.raises(InputError, match="1 NaN or infinite value"):  # a cube built in memory too
        Cube(cube, WL, "reflectance")


def test_percent_reflectance_seen_anywhere(tmp_path):
    cube = np.full((200, 300, len(WL)), 0.5, np.float32)
    cube[199, 299, 30] = 80.0  # one value in percent, in the last pixel
    c = Cube(cube, WL, "reflectance", "p.npy")
    from cvdfilter.io.cubes import _value_warnings

    assert any("reach 80" in w for w in _value_warnings(c))


def test_named_pipe_is_refused_without_waiting(tmp_path):
    import os

    fifo = tmp_path / "cube.npy"
    os.mkfifo(fifo)
    with pytest.raises(InputError, match="not a regular file"):
        read_cube(fifo, wavelengths=WL)
    with pytest.raises(InputError, match="is a folder"):
        read_cube(tmp_path, wavelengths=WL)
