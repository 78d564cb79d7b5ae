"""Rendering speed and memory against floors measured in the same run (issue 5 targets).

    .venv/bin/python benchmarks/render_bench.py [--repeat 15] [--skip-memory] [--skip-cube]

1. A 4-megapixel 8-bit sRGB image (skimage's astronaut() tiled to 2048 x 2048),
   deuteranope + notch filter, the ``observer-filtered`` view: median time of
   ``Renderer.apply`` against
   * the floor: LUT decode + one float32 3x3 matmul + LUT encode, the same
     lookup tables, both whole-image and in tiles (the faster is the floor);
     target at most 1.3x;
   * the chain a user would otherwise script with colour-science
     (``cctf_decoding``, Machado's deuteranomaly matrix at severity 1 through
     ``colour.algebra.vecmul``, ``cctf_encoding``); target at least 5x faster.
2. A 1-megapixel x 81-band float32 cube: ``Renderer.apply_cube`` against one
   float32 (pixels x 81) @ (81 x 3) matmul; target at most 1.5x.
3. A 50-megapixel 8-bit image: peak resident memory of a subprocess that
   renders it, against the decoded size (H x W x 3 bytes); target at most 3x.
   Two cases: the API on an array (input and output both in memory), and the
   CLI from a PNG file to a PNG file (one view).

BLAS runs single-threaded for every figure (the render command sets the same;
``--jobs`` is how it uses more cores), so the ratios compare like with like.
Times are medians of interleaved runs: the machine is shared, read the ratios
rather than the seconds. No test asserts any of this.
"""

from __future__ import annotations

import os

os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")
os.environ.setdefault("OMP_NUM_THREADS", "1")

import argparse  # noqa: E402
import pathlib  # noqa: E402
import subprocess  # noqa: E402
import sys  # noqa: E402
import tempfile  # noqa: E402
import time  # noqa: E402

import numpy as np  # noqa: E402

NOTCH = "notch:center=575,fwhm=35,depth=0.8"
TILE = 1 << 16


def _interleaved(funcs: dict, repeat: int) -> dict:
    times = {k: [] for k in funcs}
    for _ in range(repeat):
        for k, f in funcs.items():
            t = time.perf_counter()
            f()
            times[k].append(time.perf_counter() - t)
    return {k: float(np.median(v)) for k, v in times.items()}


def image_benchmark(repeat: int) -> dict:
    import colour
    from skimage import data

    from cvdfilter.rendering.pixels import _SCALE, _srgb_tables
    from cvdfilter.rendering import Renderer

    img = np.ascontiguousarray(np.tile(data.astronaut(), (4, 4, 1)))[:2048, :2048]
    flat = img.reshape(-1, 3)
    out = np.empty_like(img)
    o = out.reshape(-1, 3)
    t0 = time.perf_counter()
    r = Renderer(NOTCH, observer="deuteranope")
    tr = r.transform("observer-filtered")
    setup = time.perf_counter() - t0
    tables = _srgb_tables()
    dec8, enc8 = tables["dec8"], tables["enc8"]
    m = (tr.rgb_matrices[0] * _SCALE).astype(np.float32)

    def floor_whole():
        x = np.take(dec8, flat, mode="wrap")
        y = x @ m
        np.clip(y, 0, _SCALE - 1, out=y)
        np.take(enc8, y.astype(np.uint16), out=o, mode="wrap")

    def floor_tiled():
        for s in range(0, len(flat), TILE):
            x = np.take(dec8, flat[s:s + TILE], mode="wrap")
            y = x @ m
            np.clip(y, 0, _SCALE - 1, out=y)
            np.take(enc8, y.astype(np.uint16), out=o[s:s + TILE], mode="wrap")

    def ours():
        r.apply(img, "observer-filtered", out=out)

    machado = colour.blindness.matrix_cvd_Machado2009("Deuteranomaly", 1.0)

    def colour_chain():
        lin = colour.cctf_decoding(img / 255.0, function="sRGB")
        sim = colour.algebra.vecmul(machado, lin)
        return np.round(np.clip(colour.cctf_encoding(np.clip(sim, 0, 1), function="sRGB"), 0, 1) * 255).astype(
            np.uint8)

    vienot = Renderer(NOTCH, observer="deuteranope", method="vienot1999")
    normal = Renderer(NOTCH, observer="normal")

    def ours_vienot():
        vienot.apply(img, "observer-filtered", out=out)

    def ours_normal():
        normal.apply(img, "observer-filtered", out=out)

    ours()  # warm the tables and caches
    t = _interleaved({"ours": ours, "floor_whole": floor_whole, "floor_tiled": floor_tiled,
                      "vienot": ours_vienot, "normal": ours_normal}, repeat)
    t.update(_interleaved({"colour_chain": colour_chain}, max(3, repeat // 3)))
    _, clipped = r.apply(img, "observer-filtered", out=out)
    floor = min(t["floor_whole"], t["floor_tiled"])
    return {"megapixels": img.shape[0] * img.shape[1] / 1e6, "setup_s": setup, **t, "floor": floor,
            "ratio_floor": t["ours"] / floor, "speedup_vs_colour": t["colour_chain"] / t["ours"],
            "clipped_pixels": clipped, "brettel_two_planes": len(tr.rgb_matrices) == 2}


def cube_benchmark(repeat: int) -> dict:
    from cvdfilter.io.cubes import Cube
    from cvdfilter.rendering import Renderer

    here = pathlib.Path(__file__).resolve().parent.parent
    with np.load(here / "test_images" / "tabletop_cube.npz") as z:
        base, wl = z["cube"].astype(np.float32), z["wavelengths"]
    cube = np.ascontiguousarray(np.tile(base, (11, 11, 1))[:1024, :1024])
    c = Cube(cube, wl, "reflectance")
    r = Renderer(NOTCH, observer="deuteranope")
    w = r.cube_weights(c, "observer-filtered").astype(np.float32)
    flat = cube.reshape(-1, cube.shape[-1])

    def floor():
        return flat @ w

    def ours():
        r.apply_cube(c, "observer-filtered")

    ours()
    t = _interleaved({"ours": ours, "floor": floor}, repeat)
    return {"shape": cube.shape, **t, "ratio_floor": t["ours"] / t["floor"]}


_HWM = """
def _hwm_kb():
    # peak resident set size of this process image (VmHWM is reset by exec, unlike ru_maxrss)
    with open("/proc/self/status") as fh:
        return next(int(line.split()[1]) for line in fh if line.startswith("VmHWM:"))
"""

_API_CHILD = _HWM + """
import os
os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")
import numpy as np
from cvdfilter.rendering import Renderer
h, w = {h}, {w}
r = Renderer("{notch}", observer="deuteranope")
r.transform("observer-filtered")
base = _hwm_kb()
rng = np.random.default_rng(0)
img = np.empty((h, w, 3), np.uint8)
for y in range(0, h, 512):  # a textured image, filled in strips
    img[y:y + 512] = rng.integers(0, 256, (min(512, h - y), w, 3), dtype=np.uint8)
out, clipped = r.apply(img, "observer-filtered")
print(base, _hwm_kb(), clipped)
"""

_CLI_CHILD = _HWM + """
import runpy, sys
sys.argv = {argv!r}
try:
    runpy.run_module("cvdfilter", run_name="__main__")
except SystemExit as exc:
    if exc.code not in (0, None):
        raise
print(_hwm_kb())
"""


def memory_benchmark() -> dict:
    h, w = 5774, 8660  # 50.0 megapixels
    decoded = h * w * 3
    res = {"height": h, "width": w, "decoded_MB": decoded / 1e6}
    child = subprocess.run([sys.executable, "-c", _API_CHILD.format(h=h, w=w, notch=NOTCH)], capture_output=True,
                           text=True, check=True)
    base_kb, peak_kb, _ = (int(x) for x in child.stdout.split())
    res["api_peak_MB"] = peak_kb * 1024 / 1e6
    res["api_baseline_MB"] = base_kb * 1024 / 1e6
    res["api_ratio"] = peak_kb * 1024 / decoded
    with tempfile.TemporaryDirectory() as tmp:
        import imagecodecs
        from skimage import data

        # a photograph-like texture (astronaut tiles plus noise) so that the PNG does not compress away
        rng = np.random.default_rng(1)
        img = np.tile(data.astronaut(), (h // 512 + 1, w // 512 + 1, 1))[:h, :w]
        img = np.ascontiguousarray(img)
        for y in range(0, h, 512):
            block = img[y:y + 512].astype(np.int16) + rng.integers(-6, 7, img[y:y + 512].shape, dtype=np.int16)
            img[y:y + 512] = np.clip(block, 0, 255).astype(np.uint8)
        src = pathlib.Path(tmp) / "big.png"
        src.write_bytes(imagecodecs.png_encode(img, level=1))
        del img
        argv = ["cvdfilter", "render", str(src), "--filter", NOTCH, "--observer", "deuteranope", "--view",
                "observer-filtered", "--out", str(pathlib.Path(tmp) / "out"), "-q"]
        t = time.perf_counter()
        child = subprocess.run([sys.executable, "-c", _CLI_CHILD.format(argv=argv)], capture_output=True, text=True,
                               check=True)
        res["cli_seconds"] = time.perf_counter() - t
        peak_kb = int(child.stdout.split()[-1])
        res["cli_peak_MB"] = peak_kb * 1024 / 1e6
        res["cli_ratio"] = peak_kb * 1024 / decoded
        res["png_MB"] = src.stat().st_size / 1e6
    return res


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeat", type=int, default=15)
    ap.add_argument("--skip-memory", action="store_true")
    ap.add_argument("--skip-cube", action="store_true")
    args = ap.parse_args()
    print(f"cvdfilter render benchmark (BLAS threads: {os.environ.get('OPENBLAS_NUM_THREADS')}, "
          f"load average {os.getloadavg()[0]:.2f} on {os.cpu_count()} cores)")
    im = image_benchmark(args.repeat)
    print(f"\n1. {im['megapixels']:.1f}-MP 8-bit image, deuteranope (Brettel, two half-planes: "
          f"{im['brettel_two_planes']}) + {NOTCH}, median of {args.repeat}")
    print(f"   renderer set-up (once per batch)          {im['setup_s'] * 1e3:8.1f} ms")
    print(f"   Renderer.apply                            {im['ours'] * 1e3:8.1f} ms   "
          f"({im['clipped_pixels']} pixels clipped)")
    print(f"   same, Vienot 1999 (one matrix)            {im['vienot'] * 1e3:8.1f} ms   "
          f"ratio {im['vienot'] / im['floor']:.2f}x")
    print(f"   same, normal observer (one matrix)        {im['normal'] * 1e3:8.1f} ms   "
          f"ratio {im['normal'] / im['floor']:.2f}x")
    print(f"   floor, whole image (LUT+matmul+LUT)       {im['floor_whole'] * 1e3:8.1f} ms")
    print(f"   floor, tiled                              {im['floor_tiled'] * 1e3:8.1f} ms")
    print(f"   colour-science chain (Machado, vecmul)    {im['colour_chain'] * 1e3:8.1f} ms")
    print(f"   ratio to floor {im['ratio_floor']:.2f}x (target <= 1.3x)   "
          f"speed-up over colour-science {im['speedup_vs_colour']:.1f}x (target >= 5x)")
    if not args.skip_cube:
        cb = cube_benchmark(max(5, args.repeat // 2))
        print(f"\n2. cube {cb['shape']} float32, deuteranope + notch")
        print(f"   Renderer.apply_cube                       {cb['ours'] * 1e3:8.1f} ms")
        print(f"   floor: (pixels x 81) @ (81 x 3) float32   {cb['floor'] * 1e3:8.1f} ms")
        print(f"   ratio {cb['ratio_floor']:.2f}x (target <= 1.5x)")
    if not args.skip_memory:
        mem = memory_benchmark()
        print(f"\n3. {mem['width']} x {mem['height']} (50 MP) 8-bit image, decoded size {mem['decoded_MB']:.0f} MB")
        print(f"   API on an array: peak RSS {mem['api_peak_MB']:.0f} MB (interpreter + libraries "
              f"{mem['api_baseline_MB']:.0f} MB) = {mem['api_ratio']:.2f}x decoded (target <= 3x)")
        print(f"   CLI PNG -> PNG ({mem['png_MB']:.0f} MB file), one view: peak RSS {mem['cli_peak_MB']:.0f} MB "
              f"= {mem['cli_ratio']:.2f}x decoded (target <= 3x), {mem['cli_seconds']:.1f} s")


if __name__ == "__main__":
    main()
