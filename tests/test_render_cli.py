"""``cvdfilter render`` through a real subprocess: outputs, batch behaviour, exit codes."""

from __future__ import annotations

import json
import pathlib
import shutil
import subprocess
import sys

import numpy as np
import pytest

from cvdfilter.io.images import read_image

TEST_IMAGES = pathlib.Path(__file__).resolve().parent.parent / "test_images"
VIEWS = ["original", "filtered", "observer", "observer-filtered"]


def run(*args, cwd=None):
    return subprocess.run([sys.executable, "-m", "cvdfilter", "render", *map(str, args)], capture_output=True,
                          text=True, cwd=cwd)


def run_here(*args):
    """In this process (typer's CliRunner): quicker for argument errors, which exit before any work."""
    from typer.testing import CliRunner

    from cvdfilter.cli.app import app

    result = CliRunner().invoke(app, ["render", *map(str, args)])
    return subprocess.CompletedProcess(args, result.exit_code, result.stdout, result.stderr)


@pytest.fixture
def stimuli(tmp_path):
    """A small folder of inputs: 8-bit, 16-bit, RGBA, grey, JPEG and a cube in a subfolder."""
    src = tmp_path / "in"
    (src / "sub").mkdir(parents=True)
    for name in ("tabletop.png", "tabletop_16bit.png", "gradient_rgba.png", "gradient_grey.png"):
        shutil.copy(TEST_IMAGES / name, src / name)
    shutil.copy(TEST_IMAGES / "tabletop_cube.npz", src / "sub" / "cube.npz")
    from PIL import Image

    Image.fromarray(read_image(TEST_IMAGES / "dots_deutan.png").pixels).save(src / "sub" / "dots.jpg", quality=92)
    return src


def test_render_folder_with_panels(stimuli, tmp_path):
    out = tmp_path / "out"
    r = run(stimuli, "--filter", "larkhill-notch-575", "--observer", "deuteranope", "--panel", "--out", out)
    assert r.returncode == 0, r.stderr
    assert "rendered 6, skipped 0" in r.stderr and "not clinical evidence" in r.stderr
    for stem in ("tabletop", "tabletop_16bit", "gradient_rgba", "gradient_grey", "sub/cube", "sub/dots"):
        for v in VIEWS:
            assert (out / f"{stem}.{v}.png").is_file(), (stem, v)
        assert (out / f"{stem}.panel.png").is_file()
    # 16-bit in, 16-bit out; alpha kept; grey becomes RGB; cube and JPEG give 8-bit PNG
    assert read_image(out / "tabletop_16bit.observer-filtered.png").pixels.dtype == np.uint16
    rgba_in = read_image(stimuli / "gradient_rgba.png").pixels
    rgba_out = read_image(out / "gradient_rgba.observer.png").pixels
    assert rgba_out.shape == rgba_in.shape and np.array_equal(rgba_out[..., 3], rgba_in[..., 3])
    assert read_image(out / "gradient_grey.filtered.png").pixels.shape == (48, 256, 3)
    assert read_image(out / "sub/cube.observer.png").pixels.shape == (96, 96, 3)
    assert np.array_equal(read_image(out / "tabletop.original.png").pixels, read_image(stimuli / "tabletop.png").pixels)
    manifest = json.loads((out / "render-manifest.json").read_text())
    assert {"tool", "version", "caveat", "runs", "items"} <= manifest.keys()
    assert manifest["runs"][-1]["settings"]["observer"] == "deuteranope" and manifest["rendered"] == 6
    item = next(i for i in manifest["items"] if i["input"].endswith("tabletop.png"))
    assert set(item["clipped_pixels"]) == set(VIEWS) and set(item["fingerprints"]) == {*VIEWS, "panel"}
    assert item["run"] == manifest["runs"][-1]["id"] and len(item["input_sha256"]) == 64
    # the settings and the caveat travel inside each image
    from PIL import Image

    with Image.open(out / "tabletop.observer.png") as im:
        meta = json.loads(im.info["cvdfilter"])
    assert meta["view"] == "observer" and "caveat" in meta and meta["filter"]


def test_resumable_force_and_never_overwrite(stimuli, tmp_path):
    out = tmp_path / "out"
    args = [stimuli / "tabletop.png", "--filter", "nd:t=0.5", "--view", "observer", "--out", out]
    assert run(*args).returncode == 0
    target = out / "tabletop.observer.png"
    stamp = target.stat().st_mtime_ns
    again = run(*args)
    assert again.returncode == 0 and "rendered 0, skipped 1" in again.stderr
    assert target.stat().st_mtime_ns == stamp
    forced = run(*args, "--force")
    assert forced.returncode == 0 and "rendered 1, skipped 0" in forced.stderr
    assert target.stat().st_mtime_ns != stamp
    # an output that would land on an input: refused up front, nothing written
    shutil.copy(stimuli / "tabletop.png", stimuli / "tabletop.observer.png")
    before = (stimuli / "tabletop.observer.png").read_bytes()
    r = run(stimuli / "tabletop.png", stimuli / "tabletop.observer.png", "--filter", "nd:t=0.5", "--view", "observer",
            "--out", stimuli)
    assert r.returncode == 2 and "overwrite an input" in r.stderr
    assert (stimuli / "tabletop.observer.png").read_bytes() == before
    assert not (stimuli / "render-manifest.json").exists()


def test_failures_are_summarised_and_good_inputs_done(stimuli, tmp_path):
    (stimuli / "broken.png").write_bytes(b"\x89PNG\r\n\x1a\n garbage")
    (stimuli / "sub" / "empty.tif").write_bytes(b"")
    out = tmp_path / "out"
    r = run(stimuli, "--filter", "larkhill-rose-tint", "--observer", "protanope", "--view", "observer-filtered",
            "--out", out, "--jobs", "2")
    assert r.returncode == 1
    assert "failed 2" in r.stderr and "broken.png" in r.stderr and "empty.tif" in r.stderr
    assert "Traceback" not in r.stderr
    assert (out / "tabletop.observer-filtered.png").is_file() and (out / "sub/cube.observer-filtered.png").is_file()
    manifest = json.loads((out / "render-manifest.json").read_text())
    assert manifest["failed"] == 2 and manifest["rendered"] == 6


def test_decompression_bomb_limit(stimuli, tmp_path):
    r = run(stimuli / "tabletop.png", "--filter", "nd:t=0.5", "--out", tmp_path / "o", "--max-megapixels", "0.01")
    assert r.returncode == 1 and "decompression bomb" in r.stderr and "--max-megapixels" in r.stderr


@pytest.mark.parametrize("extra,needle", [
    (["--view", "sideways"], "--view sideways"),
    (["--format", "gif"], "--format gif"),
    (["--jobs", "0"], "--jobs"),
    (["--filter", "notch:center=540..600/10,fwhm=30,depth=0.8"], "rendering takes one"),
    (["--observer", "martian"], "unknown observer"),
    (["--illuminant", "moonlight"], "unknown illuminant"),
    (["--adaptation", "most"], "adaptation"),
    (["--cube-kind", "emission"], "--cube-kind"),
    (["--wavelengths", "400:700:0"], "400:700:0"),
    (["--scene", "paper"], "unknown scene"),
])
def test_bad_arguments_exit_2(stimuli, tmp_path, extra, needle):
    args = [stimuli / "tabletop.png", "--filter", "nd:t=0.5", "--out", tmp_path / "o"]
    # later options win in click, so the bad value replaces the good default
    r = run_here(*args, *extra)
    assert r.returncode == 2, r.stderr
    assert needle in r.stderr and "Traceback" not in r.stderr and len(r.stderr.strip().splitlines()) == 1
    assert not (tmp_path / "o").exists()


def test_missing_inputs_exit_2(tmp_path):
    r = run_here(tmp_path / "nope.png", "--filter", "nd:t=0.5", "--out", tmp_path / "o")
    assert r.returncode == 2 and "no such file" in r.stderr
    r = run_here(str(tmp_path / "*.png"), "--filter", "nd:t=0.5", "--out", tmp_path / "o")
    assert r.returncode == 2 and "matches no" in r.stderr
    (tmp_path / "notes.txt").write_text("x")
    r = run_here(tmp_path / "notes.txt", "--filter", "nd:t=0.5", "--out", tmp_path / "o")
    assert r.returncode == 2 and "unsupported file type" in r.stderr


def test_glob_formats_and_tiff_cube(stimuli, tmp_path):
    import tifffile

    out = tmp_path / "out"
    r = run(str(stimuli / "tabletop*.png"), "--filter", "larkhill-double-notch", "--view", "observer",
            "--observer", "tritanope", "--format", "tiff16", "--out", out)
    assert r.returncode == 0, r.stderr
    assert read_image(out / "tabletop.observer.tif").pixels.dtype == np.uint16
    r = run(stimuli / "tabletop.png", "--filter", "nd:t=0.5", "--format", "tiff-float", "--gamut", "none",
            "--view", "filtered", "--out", out)
    lin = read_image(out / "tabletop.filtered.tif")
    assert r.returncode == 0 and lin.encoding == "linear" and lin.pixels.dtype == np.float32
    cube = np.load(TEST_IMAGES / "tabletop_cube.npz")["cube"].astype(np.float32)
    tifffile.imwrite(stimuli / "cube.tif", np.moveaxis(cube, -1, 0))  # one page per band, no metadata
    r = run(stimuli / "cube.tif", "--filter", "nd:t=0.5", "--wavelengths", "380:780:5", "--view", "original",
            "--out", out)
    assert r.returncode == 0, r.stderr
    assert read_image(out / "cube.original.tif").pixels.shape == (96, 96, 3)
    r = run(stimuli / "gradient_rgba.png", "--filter", "nd:t=0.5", "--format", "jpeg", "--out", out)
    assert r.returncode == 1 and "alpha" in r.stderr


def test_help_has_an_example():
    r = run("--help")
    assert r.returncode == 0 and "Example: cvdfilter render" in r.stdout
