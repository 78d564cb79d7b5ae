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


# --- resume, fingerprints and the manifest ---------------------------------------------------------

DRIVER = pathlib.Path(__file__).resolve().parent / "render_driver.py"


def _manifest(out):
    return json.loads((out / "render-manifest.json").read_text())


def _one_line_error(r):
    lines = r.stderr.strip().splitlines()
    return (r.returncode == 2 and len(lines) == 1 and lines[0].startswith("cvdfilter: error:")
            and "Traceback" not in r.stderr)


def test_rerun_with_other_settings_is_refused(stimuli, tmp_path):
    out = tmp_path / "out"
    base = [stimuli / "tabletop.png", stimuli / "gradient_grey.png", "--view", "observer", "--out", out]
    assert run(*base, "--filter", "nd:t=0.5").returncode == 0
    target = out / "tabletop.observer.png"
    before = target.read_bytes()
    for other in (["--filter", "nd:t=0.4"], ["--filter", "nd:t=0.5", "--observer", "deuteranope"],
                  ["--filter", "nd:t=0.5", "--illuminant", "A"]):
        r = run_here(*base, *other)
        assert _one_line_error(r), r.stderr
        assert "--force" in r.stderr and "--out" in r.stderr and "tabletop.observer.png" in r.stderr
        assert target.read_bytes() == before
    # the manifest still says how the files were made
    m = _manifest(out)
    assert len(m["runs"]) == 1 and m["runs"][0]["settings"]["filter"] == "nd:t=0.5"
    # another --out is fine; --force replaces and the manifest then records the new settings only
    assert run(*base[:-1], tmp_path / "other", "--filter", "nd:t=0.4").returncode == 0
    r = run(*base, "--filter", "nd:t=0.4", "--force")
    assert r.returncode == 0 and "rendered 2" in r.stderr and target.read_bytes() != before
    m = _manifest(out)
    assert len(m["runs"]) == 2 and len(m["items"]) == 2
    assert {i["settings_fingerprint"] for i in m["items"]} == {m["runs"][1]["settings_fingerprint"]}


def test_edited_filter_file_or_input_is_a_mismatch(stimuli, tmp_path):
    """The fingerprint covers file contents, not names: same file name, other numbers -> refused."""
    out = tmp_path / "out"
    lens = tmp_path / "lens.csv"
    lens.write_text("nm,T (fraction)\n380,0.9\n780,0.9\n")
    args = [stimuli / "tabletop.png", "--filter", lens, "--view", "filtered", "--out", out]
    assert run(*args).returncode == 0
    assert "skipped 1" in run(*args).stderr
    lens.write_text("nm,T (fraction)\n380,0.9\n780,0.5\n")
    r = run_here(*args)
    assert _one_line_error(r) and "other input content or model data" in r.stderr, r.stderr
    lens.write_text("nm,T (fraction)\n380,0.9\n780,0.9\n")
    assert "skipped 1" in run(*args).stderr
    shutil.copy(TEST_IMAGES / "dots_deutan.png", stimuli / "tabletop.png")  # same name, other picture
    r = run_here(*args)
    assert _one_line_error(r), r.stderr


def test_unknown_file_under_an_output_name_is_refused(stimuli, tmp_path):
    out = tmp_path / "out"
    out.mkdir()
    (out / "tabletop.observer.png").write_bytes((stimuli / "tabletop.png").read_bytes())  # not made by us
    r = run_here(stimuli / "tabletop.png", "--filter", "nd:t=0.5", "--view", "observer", "--out", out)
    assert _one_line_error(r) and "not made by this tool" in r.stderr


def test_rerun_merges_and_keeps_earlier_records(stimuli, tmp_path):
    out = tmp_path / "out"
    first = run(stimuli / "tabletop.png", "--filter", "nd:t=0.5", "--view", "observer", "--out", out)
    assert first.returncode == 0
    r = run(stimuli / "tabletop.png", stimuli / "gradient_grey.png", "--filter", "nd:t=0.5", "--view", "observer",
            "--out", out)
    assert r.returncode == 0 and "rendered 1, skipped 1" in r.stderr
    m = _manifest(out)
    items = {pathlib.Path(i["input"]).name: i for i in m["items"]}
    assert set(items) == {"tabletop.png", "gradient_grey.png"} and m["rendered"] == 2
    # the skipped input keeps its record, with the run that made it and its clipped-pixel counts
    assert items["tabletop.png"]["run"] == m["runs"][0]["id"]
    assert items["gradient_grey.png"]["run"] == m["runs"][1]["id"]
    assert set(items["tabletop.png"]["clipped_pixels"]) == {"observer"}
    assert items["tabletop.png"]["width"] == read_image(stimuli / "tabletop.png").pixels.shape[1]
    # other settings into the same folder, other output names: both kept, each with its own settings
    r = run(stimuli / "tabletop.png", "--filter", "nd:t=0.3", "--view", "filtered", "--out", out)
    assert r.returncode == 0
    m = _manifest(out)
    assert len(m["runs"]) == 3 and len(m["items"]) == 3
    # the manifest lost: a rerun rebuilds the records of the skipped outputs from the files' own metadata
    (out / "render-manifest.json").unlink()
    r = run(stimuli / "tabletop.png", stimuli / "gradient_grey.png", "--filter", "nd:t=0.5", "--view", "observer",
            "--out", out)
    assert r.returncode == 0 and "skipped 2" in r.stderr
    m = _manifest(out)
    assert sorted(pathlib.Path(i["input"]).name for i in m["items"]) == ["gradient_grey.png", "tabletop.png"]
    assert all(i["outputs"]["observer"] and i["fingerprints"]["observer"] and "rebuilt" in i["note"]
               for i in m["items"])


def test_two_renders_into_one_folder_keep_both_records(stimuli, tmp_path):
    out = tmp_path / "out"
    cmd = [sys.executable, "-m", "cvdfilter", "render", "--filter", "nd:t=0.5", "--view", "observer", "--out", str(out)]
    procs = [subprocess.Popen([*cmd, str(stimuli / name)], stderr=subprocess.PIPE, text=True)
             for name in ("tabletop.png", "gradient_grey.png", "gradient_rgba.png")]
    assert all(p.wait() == 0 for p in procs)
    for p in procs:
        p.stderr.close()
    m = _manifest(out)
    assert sorted(pathlib.Path(i["input"]).name for i in m["items"]) == \
        ["gradient_grey.png", "gradient_rgba.png", "tabletop.png"]
    assert len(m["runs"]) == 3


def test_same_named_inputs_get_distinct_outputs(tmp_path):
    (tmp_path / "imgs").mkdir()
    (tmp_path / "imgs2").mkdir()
    shutil.copy(TEST_IMAGES / "tabletop.png", tmp_path / "imgs" / "coffee.png")
    shutil.copy(TEST_IMAGES / "dots_deutan.png", tmp_path / "imgs2" / "coffee.png")
    r = run("imgs/coffee.png", "imgs2/coffee.png", "--filter", "nd:t=0.5", "--view", "original", "--out", "o",
            cwd=tmp_path)
    assert r.returncode == 0 and "rendered 2" in r.stderr, r.stderr
    a, b = tmp_path / "o/imgs/coffee.original.png", tmp_path / "o/imgs2/coffee.original.png"
    assert np.array_equal(read_image(a).pixels, read_image(tmp_path / "imgs/coffee.png").pixels)
    assert np.array_equal(read_image(b).pixels, read_image(tmp_path / "imgs2/coffee.png").pixels)
    outs = [i["outputs"]["original"] for i in _manifest(tmp_path / "o")["items"]]
    assert len(set(outs)) == 2
    # same folder, same stem, different types: the suffix tells them apart
    import tifffile

    tifffile.imwrite(tmp_path / "imgs" / "coffee.tif", read_image(TEST_IMAGES / "tabletop.png").pixels)
    r = run("imgs/coffee.png", "imgs/coffee.tif", "--filter", "nd:t=0.5", "--view", "original", "--format", "png",
            "--out", "p", cwd=tmp_path)
    assert r.returncode == 0 and (tmp_path / "p/coffee_png.original.png").is_file()
    assert (tmp_path / "p/coffee_tif.original.png").is_file()


def test_unplannable_names_are_refused_up_front(tmp_path):
    src = tmp_path / "in"
    src.mkdir()
    for name in ("a.png", "a.tif", "a_png.png"):  # a.png -> a_png, which a_png.png also wants
        shutil.copy(TEST_IMAGES / "tabletop.png", src / name)  # (never read: refused while planning)
    r = run_here(src / "a.png", src / "a.tif", src / "a_png.png", "--filter", "nd:t=0.5", "--format", "png",
                 "--out", tmp_path / "o")
    assert _one_line_error(r) and "would be written for both" in r.stderr, r.stderr
    assert not (tmp_path / "o").exists()


def test_resume_per_output_file_after_a_kill_mid_tiff_write(stimuli, tmp_path):
    """SIGKILL while the second view's TIFF is being written: the first view is complete, the second exists
    only as a hidden temporary file; the rerun removes it, keeps the first view and renders the rest."""
    import os
    import signal

    markers = tmp_path / "markers"
    markers.mkdir()
    out = tmp_path / "out"
    args = [stimuli / "tabletop.png", stimuli / "gradient_grey.png", "--filter", "nd:t=0.5", "--view", "observer",
            "--view", "filtered", "--format", "tiff", "--out", out]
    env = {**os.environ, "RENDER_DRIVER_HOOK": "tiff-stall", "RENDER_DRIVER_STALL_AT": "2",
           "RENDER_DRIVER_MARKERS": str(markers)}
    proc = subprocess.Popen([sys.executable, DRIVER, "render", *map(str, args)], env=env,
                            stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    try:
        _wait_for(lambda: any(markers.iterdir()), proc)
    finally:
        os.kill(proc.pid, signal.SIGKILL)
        proc.wait()
    first = out / "tabletop.observer.tif"  # inputs given as files run in the order given
    finals = sorted(p.name for p in out.iterdir() if not p.name.startswith("."))
    assert finals == ["tabletop.observer.tif"]
    temps = [p for p in out.iterdir() if ".cvdfilter-" in p.name]
    assert len(temps) == 1 and temps[0].name.startswith(".tabletop.filtered.")
    stamp = first.stat().st_mtime_ns
    assert read_image(first).pixels.shape == read_image(stimuli / "tabletop.png").pixels.shape  # complete
    r = run(*args)
    assert r.returncode == 0, r.stderr
    assert "removed 1 temporary file" in r.stderr and "3 file(s) written, 1 kept" in r.stderr
    assert first.stat().st_mtime_ns == stamp
    assert not [p for p in out.rglob("*") if ".cvdfilter-" in p.name]
    assert len(list(out.glob("*.tif"))) == 4


def test_kill_mid_batch_leaves_only_complete_files(tmp_path):
    """SIGKILL a plain batch as soon as its first output appears: every file under a final name is complete
    and carries its fingerprint; the rerun renders the rest."""
    import os
    import signal

    from cvdfilter.io.images import read_metadata

    src = tmp_path / "in"
    src.mkdir()
    for i in range(8):
        shutil.copy(TEST_IMAGES / "tabletop_16bit.png", src / f"img{i}.png")
    out = tmp_path / "out"
    args = [src, "--filter", "larkhill-notch-575", "--observer", "deuteranope", "--out", out]
    proc = subprocess.Popen([sys.executable, "-m", "cvdfilter", "render", *map(str, args)],
                            stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    try:
        _wait_for(lambda: out.is_dir() and any(p.suffix == ".png" for p in out.iterdir()), proc)
    finally:
        os.kill(proc.pid, signal.SIGKILL)
        proc.wait()
    made = [p for p in out.iterdir() if p.suffix == ".png" and not p.name.startswith(".")]
    assert made
    for p in made:
        assert read_image(p).pixels.dtype == np.uint16 and read_metadata(p)["fingerprint"]
    r = run(*args)
    assert r.returncode == 0, r.stderr
    assert f"{len(made)} kept" in r.stderr
    assert len([p for p in out.iterdir() if p.suffix == ".png"]) == 32
    assert not [p for p in out.rglob("*") if ".cvdfilter-" in p.name]


def test_stale_temporaries_of_live_processes_are_kept(tmp_path):
    import os

    from cvdfilter.io.atomic import remove_stale_temporaries

    dead = subprocess.run([sys.executable, "-c", "import os; print(os.getpid())"], capture_output=True, text=True)
    dead_pid = int(dead.stdout)
    (tmp_path / "sub").mkdir()
    stale = tmp_path / "sub" / f".a.observer.cvdfilter-{dead_pid}-0123abcd.tmp.tif"
    live = tmp_path / f".b.observer.cvdfilter-{os.getpid()}-0123abcd.tmp.png"
    mine_not = tmp_path / ".c.observer.tmp.png"  # not our naming: never touched
    for p in (stale, live, mine_not):
        p.write_bytes(b"x")
    assert remove_stale_temporaries(tmp_path) == [stale]
    assert live.exists() and mine_not.exists() and not stale.exists()


def _wait_for(condition, proc, limit_s: float = 120.0):
    """Poll ``condition`` until true; fail if ``proc`` ends first or after ``limit_s`` (a hang guard only)."""
    import time

    end = time.monotonic() + limit_s
    while not condition():
        assert proc is None or proc.poll() is None, "the batch ended before the condition was met"
        assert time.monotonic() < end, "timed out waiting"
        time.sleep(0.05)


# --- workers ------------------------------------------------------------------------------------------

def test_worker_that_dies_gives_a_manifest_and_a_list(stimuli, tmp_path):
    import os

    for name in ("crash.png", "d.png", "e.png"):
        shutil.copy(TEST_IMAGES / "tabletop.png", stimuli / name)
    out = tmp_path / "out"
    args = [stimuli, "--filter", "nd:t=0.5", "--view", "observer", "--out", out, "--jobs", "2"]
    env = {**os.environ, "RENDER_DRIVER_HOOK": "crash", "RENDER_DRIVER_MARKERS": str(tmp_path)}
    r = subprocess.run([sys.executable, DRIVER, "render", *map(str, args)], env=env, capture_output=True, text=True)
    assert r.returncode == 1, r.stderr
    assert "Traceback" not in r.stderr and "BrokenProcessPool" not in r.stderr
    assert "worker process stopped unexpectedly" in r.stderr and "crash.png" in r.stderr
    m = _manifest(out)
    failed = [i for i in m["items"] if i["status"] == "failed"]
    assert any(i["input"].endswith("crash.png") for i in failed)
    assert m["runs"][-1]["failed"] == len(failed) and m["runs"][-1]["rendered"] + len(failed) == 9
    # the rerun (no fault this time) finishes the rest
    r = run(*args)
    assert r.returncode == 0 and f"skipped {9 - len(failed)}" in r.stderr, r.stderr
    assert _manifest(out)["rendered"] == 9


def test_workers_die_with_their_parent(stimuli, tmp_path):
    import os
    import signal

    markers = tmp_path / "markers"
    markers.mkdir()
    for name in ("slow1.png", "slow2.png"):
        shutil.copy(TEST_IMAGES / "tabletop.png", stimuli / name)
    out = tmp_path / "out"
    args = [stimuli / "slow1.png", stimuli / "slow2.png", "--filter", "nd:t=0.5", "--view", "observer",
            "--out", out, "--jobs", "2"]
    env = {**os.environ, "RENDER_DRIVER_HOOK": "slow", "RENDER_DRIVER_MARKERS": str(markers)}
    proc = subprocess.Popen([sys.executable, DRIVER, "render", *map(str, args)], env=env,
                            stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    try:
        _wait_for(lambda: len(list(markers.iterdir())) == 2, proc)
    finally:
        os.kill(proc.pid, signal.SIGKILL)
        proc.wait()
    workers = [int(p.name) for p in markers.iterdir()]

    def dead(pid):
        try:
            status = pathlib.Path(f"/proc/{pid}/status").read_text()
        except FileNotFoundError:
            return True
        return "State:\tZ" in status  # a zombie has exited; only its exit status is left to collect

    _wait_for(lambda: all(dead(pid) for pid in workers), None, 30.0)  # without the fix they run on for 60 s
    assert not out.exists() or not list(out.glob("slow*.png"))


# --- outputs that cannot be written, for every command that writes -------------------------------------

_WRITERS = {
    "score": (["score", "larkhill-notch-575"], ".json"),
    "figure": (["figure", "spectrum", "larkhill-notch-575"], ".png"),
    "report": (["report", "larkhill-notch-575"], ".md"),
    "inspect": (["inspect", "larkhill-notch-575"], ".json"),
    "inspect-observer": (["inspect-observer", "deuteranope"], ".json"),
}


_CASES = [(c, k) for c in sorted(_WRITERS) for k in ("virtual-fs", "parent-is-a-file", "existing-directory")
          if c != "report" or k == "existing-directory"]  # report: its slowest, multi-file case only


@pytest.mark.parametrize("command,case", _CASES)
def test_unwritable_output_is_one_line_for_every_command(tmp_path, command, case):
    args, ext = _WRITERS[command]
    (tmp_path / "afile").write_text("x")
    target = {"virtual-fs": pathlib.Path(f"/proc/cvdfilter-out{ext}"),  # procfs: no new files, even for root
              "parent-is-a-file": tmp_path / "afile" / f"out{ext}",
              "existing-directory": tmp_path / f"out{ext}"}[case]
    if case == "existing-directory":
        target.mkdir()
    r = subprocess.run([sys.executable, "-m", "cvdfilter", *args, "-o", str(target)], capture_output=True,
                       text=True)
    assert _one_line_error(r), r.stderr
    assert str(target) in r.stderr or str(target.parent) in r.stderr
    assert [p.name for p in tmp_path.iterdir()] in (["afile"], ["afile", target.name], [target.name, "afile"])
    assert not [p for p in tmp_path.rglob("*") if ".cvdfilter-" in p.name]


@pytest.mark.parametrize("case", ["virtual-fs", "parent-is-a-file", "a-file", "folder-at-an-output-name"])
def test_render_unwritable_out_folder(stimuli, tmp_path, case):
    (tmp_path / "afile").write_text("x")
    (tmp_path / "o" / "tabletop.observer.png").mkdir(parents=True)
    out = {"virtual-fs": "/proc/cvdfilter-rendered", "parent-is-a-file": tmp_path / "afile" / "o",
           "a-file": tmp_path / "afile", "folder-at-an-output-name": tmp_path / "o"}[case]
    for extra in ([], ["--force"]):
        r = run_here(stimuli / "tabletop.png", "--filter", "nd:t=0.5", "--view", "observer", "--out", out, *extra)
        assert _one_line_error(r), r.stderr


def test_named_pipe_input_is_refused_without_waiting(tmp_path):
    import os

    os.mkfifo(tmp_path / "pipe.png")
    r = subprocess.run([sys.executable, "-m", "cvdfilter", "render", str(tmp_path / "pipe.png"), "--filter",
                        "nd:t=0.5", "--out", str(tmp_path / "o")], capture_output=True, text=True, timeout=120)
    assert _one_line_error(r) and "not a regular file" in r.stderr


def test_nan_pixel_in_a_cube_fails_the_input_not_black(stimuli, tmp_path):
    cube = np.load(TEST_IMAGES / "tabletop_cube.npz")
    data = cube["cube"].copy()
    data[50, 61, 7] = np.nan
    np.savez_compressed(stimuli / "nan.npz", cube=data, wavelengths=cube["wavelengths"])
    r = run(stimuli / "nan.npz", "--filter", "nd:t=0.5", "--out", tmp_path / "o")
    assert r.returncode == 1 and "nan.npz: cube holds 1 NaN or infinite value" in r.stderr
    assert not list((tmp_path / "o").glob("nan.*"))


def test_render_in_process_changes_no_global_setting(stimuli, tmp_path):
    """No BLAS environment variables and no Pillow pixel limit are set by a render call."""
    import os

    from PIL import Image

    env_before, limit_before = dict(os.environ), Image.MAX_IMAGE_PIXELS
    r = run_here(stimuli / "sub" / "dots.jpg", "--filter", "nd:t=0.5", "--view", "observer", "--out",
                 tmp_path / "o", "--max-megapixels", "500")
    assert r.returncode == 0, r.stderr
    assert dict(os.environ) == env_before and Image.MAX_IMAGE_PIXELS == limit_before
