"""Generate the invented test images in this folder (deterministic).

    python test_images/make_test_images.py [OUT_DIR]

Everything here is synthetic: a tabletop of coloured objects built from the
reflectance spectra of the 24-patch chart surface set chart24 (colour-science's N. Ohta
measurements) with Lambertian shading, its hyperspectral cube, dot stimuli
whose figure and ground lie on one deuteranope confusion line, and smooth
gradients. See README.md beside this script.

The sRGB images of the tabletop are computed with colour-science alone (CIE
1931 2 deg observer, CIE D65, the sRGB colourspace), independently of the
renderer; the dot stimuli use the renderer's own display model (they must lie
on the model deuteranope's confusion line).
"""

from __future__ import annotations

import json
import pathlib
import sys

import numpy as np

HERE = pathlib.Path(__file__).resolve().parent
SEED = 20240611
SIZE = 192          # tabletop image, pixels (square)
LARGE_SIZE = 1024   # tabletop image for figures: sharp at a double-column width (about 1,080 px per panel at 300 dpi)
CUBE_SIZE = 96      # tabletop cube, pixels (square)
SUPERSAMPLE = 4     # per axis, for smooth edges

# Scene: (label, reflectance recipe) -- recipes are weights over chart24 patches.
WALL = {"neutral 8 (.23 D)": 0.85, "light skin": 0.15}
TABLE = {"dark skin": 0.55, "light skin": 0.25, "orange": 0.2}
# Spheres: (centre u, centre v, radius) in scene units (0-1, v down), and the patch.
SPHERES = [
    (0.18, 0.63, 0.085, {"red": 1.0}),
    (0.40, 0.60, 0.075, {"green": 1.0}),
    (0.60, 0.64, 0.080, {"orange": 1.0}),
    (0.80, 0.61, 0.070, {"foliage": 1.0}),
    (0.28, 0.84, 0.090, {"moderate red": 1.0}),
    (0.52, 0.86, 0.085, {"yellow green": 1.0}),
    (0.76, 0.85, 0.090, {"purple": 1.0}),
    (0.93, 0.80, 0.050, {"yellow": 1.0}),
]
# A box standing on the table: front face, top face (u0, v0, u1, v1) and its patch.
BOX = ((0.06, 0.20, 0.30, 0.47), 0.05, {"purplish blue": 1.0})
# Light direction (x right, y down, z toward the viewer), normalised below.
LIGHT = np.array([-0.5, -0.6, 0.62])


def _patches(grid):
    from cvdfilter.spectra.surfaces import surface_set

    s = surface_set("chart24", grid)
    return dict(zip(s.labels, s.reflectance.T))


def _mix(patches, recipe):
    return sum(w * patches[k] for k, w in recipe.items())


def scene_weights(size: int, rows: tuple | None = None):
    """Per pixel: shading-weighted coverage of each scene material, (size, size, n_materials).

    ``rows`` = (first, stop) computes only those output rows (a strip), for large sizes.
    """
    if rows is None:
        rows = (0, size)
    n = size * SUPERSAMPLE
    c = (np.arange(n) + 0.5) / n
    u, v = np.meshgrid(c, c[rows[0] * SUPERSAMPLE:rows[1] * SUPERSAMPLE])
    light = LIGHT / np.linalg.norm(LIGHT)
    n_mat = 2 + 1 + len(SPHERES)
    w = np.zeros(u.shape + (n_mat,))
    horizon = 0.47
    wall = v < horizon
    w[..., 0] = np.where(wall, 0.92 - 0.25 * u - 0.1 * v, 0.0)
    table_shade = 0.95 - 0.35 * (1 - (v - horizon) / (1 - horizon)) - 0.12 * u
    # soft shadows of the spheres on the table, offset away from the light
    shadow = np.ones_like(u)
    for cu, cv, r, _ in SPHERES:
        du, dv = (u - (cu + 0.6 * r)) / (1.3 * r), (v - (cv + 0.35 * r)) / (0.45 * r)
        shadow *= 1 - 0.5 * np.exp(-(du ** 2 + dv ** 2))
    (bu0, bv0, bu1, bv1), top, _ = BOX
    du, dv = (u - (bu1 + 0.04)) / 0.08, (v - bv1) / 0.02
    shadow *= 1 - 0.45 * np.exp(-(np.clip(du, 0, None) ** 2 + dv ** 2)) * (u > bu0)
    w[..., 1] = np.where(~wall, table_shade * shadow, 0.0)
    # the box: front face and a lighter top face
    front = (u >= bu0) & (u <= bu1) & (v >= bv0) & (v <= bv1)
    top_face = (u >= bu0 + 0.03) & (u <= bu1 + 0.03) & (v >= bv0 - top) & (v < bv0) & \
        (u - bu0 >= (bv0 - v) * 0.6) & (u - bu1 <= (bv0 - v) * 0.6)
    box = front | top_face
    w[box] = 0.0
    w[..., 2] = np.where(front, 0.55 - 0.15 * (v - bv0) / (bv1 - bv0), 0.0) + np.where(top_face & ~front, 0.9, 0.0)
    # spheres, Lambertian with some ambient light, drawn back to front
    for k, (cu, cv, r, _) in sorted(enumerate(SPHERES), key=lambda t: t[1][1]):
        x, y = (u - cu) / r, (v - cv) / r
        inside = x ** 2 + y ** 2 < 1.0
        z = np.sqrt(np.clip(1 - x ** 2 - y ** 2, 0, None))
        shade = 0.12 + 0.88 * np.clip(x * light[0] + y * light[1] + z * light[2], 0, None)
        w[inside] = 0.0
        w[..., 3 + k] = np.where(inside, shade, w[..., 3 + k])
    # average the supersamples
    return w.reshape(rows[1] - rows[0], SUPERSAMPLE, size, SUPERSAMPLE, n_mat).mean(axis=(1, 3))


def materials(grid):
    p = _patches(grid)
    mats = [_mix(p, WALL), _mix(p, TABLE), _mix(p, BOX[2])] + [_mix(p, s[3]) for s in SPHERES]
    return np.stack(mats)  # (n_materials, n_wl)


def tabletop_linear_srgb(size: int) -> np.ndarray:
    """Linear sRGB of the scene under D65 (CIE 1931 2 deg), computed with colour-science."""
    import colour

    from cvdfilter.spectra.grid import Grid

    grid = Grid(step=5)
    refl = materials(grid)
    cmfs = colour.MSDS_CMFS["CIE 1931 2 Degree Standard Observer"].copy().align(grid.shape())
    d65 = colour.SDS_ILLUMINANTS["D65"].copy().align(grid.shape())
    weights = cmfs.values * d65.values[:, None]
    xyz = refl @ weights / weights[:, 1].sum()  # Y = 1 for a perfect white
    rgb_mat = colour.XYZ_to_sRGB(xyz, apply_cctf_encoding=False)
    strip = 64
    return np.concatenate([scene_weights(size, (r, min(size, r + strip))) @ rgb_mat for r in range(0, size, strip)])


def tabletop_cube(size: int):
    from cvdfilter.spectra.grid import Grid

    grid = Grid(step=5)
    cube = scene_weights(size) @ materials(grid)
    return cube.astype(np.float32), grid.wavelengths


def _encode(linear, bits):
    import colour

    top = 2 ** bits - 1
    enc = colour.cctf_encoding(np.clip(linear, 0, 1), function="sRGB")
    return np.round(enc * top).astype(np.uint8 if bits == 8 else np.uint16)


def deutan_direction():
    """Linear-sRGB direction along which the model deuteranope's L and S stay fixed (M changes)."""
    from cvdfilter.observers.observer import observer
    from cvdfilter.rendering import display_matrix

    d = display_matrix(observer("normal"))  # rgb @ d = adapted L, M, S of the normal base observer
    direction = np.linalg.solve(d.T, np.array([0.0, 1.0, 0.0]))  # changes M only
    return direction / np.abs(direction).max()


def dot_stimulus(size: int = 256):
    """Dots of three lightness levels; figure (a triangle) and ground differ along the deutan confusion line.

    Returns the sRGB image (8-bit), the label map (0 background, 1-3 ground level,
    4-6 figure level) and the colours used.
    """
    rng = np.random.default_rng(SEED)
    d = deutan_direction()
    base = np.array([0.30, 0.26, 0.20])  # linear sRGB, a warm grey
    offset = 0.085
    levels = np.array([0.8, 1.0, 1.2])
    ground = [lv * (base - offset * d) for lv in levels]
    figure = [lv * (base + offset * d) for lv in levels]
    for c in ground + figure:
        assert np.all((c > 0.02) & (c < 0.98)), c
    # jittered hexagonal lattice of candidate centres, then non-overlapping discs
    spacing = 11.0
    centres = []
    for row in range(int(size / (spacing * 0.866)) + 2):
        for col in range(int(size / spacing) + 2):
            x = col * spacing + (spacing / 2 if row % 2 else 0) + rng.uniform(-2, 2)
            y = row * spacing * 0.866 + rng.uniform(-2, 2)
            centres.append((x, y))
    yy, xx = np.mgrid[0:size, 0:size] + 0.5
    labels = np.zeros((size, size), np.uint8)
    margin = size * 0.06
    # the figure: a triangle pointing right (vertices in pixels)
    tri = np.array([[0.25, 0.22], [0.25, 0.78], [0.78, 0.5]]) * size

    def in_triangle(x, y):
        s = [(tri[(i + 1) % 3, 0] - tri[i, 0]) * (y - tri[i, 1]) - (tri[(i + 1) % 3, 1] - tri[i, 1]) * (x - tri[i, 0])
             for i in range(3)]
        return all(v >= 0 for v in s) or all(v <= 0 for v in s)

    placed = []
    for x, y in centres:
        r = rng.uniform(3.0, 5.2)
        level = int(rng.integers(0, 3))
        if not (margin + r <= x <= size - margin - r and margin + r <= y <= size - margin - r):
            continue
        if any(np.hypot(x - px, y - py) < r + pr + 1.0 for px, py, pr in placed):
            continue
        placed.append((x, y, r))
        in_figure = in_triangle(x, y)
        disc = (xx - x) ** 2 + (yy - y) ** 2 <= r ** 2
        labels[disc] = (4 if in_figure else 1) + level
    lin = np.ones((size, size, 3)) * 0.9  # light grey paper between the dots
    for k in range(3):
        lin[labels == 1 + k] = ground[k]
        lin[labels == 4 + k] = figure[k]
    colours = {"ground_linear_srgb": [c.tolist() for c in ground],
               "figure_linear_srgb": [c.tolist() for c in figure],
               "confusion_direction_linear_srgb": d.tolist()}
    return _encode(lin, 8), labels, colours


def gradients():
    """A hue x lightness sweep (8- and 16-bit), a grey ramp and an RGBA image with an alpha ramp."""
    import colour

    h, w = 96, 256
    hue = np.linspace(0, 1, w, endpoint=False)[None, :].repeat(h, 0)
    value = np.linspace(1.0, 0.25, h)[:, None].repeat(w, 1)
    sat = np.full((h, w), 0.75)
    enc = colour.HSV_to_RGB(np.stack([hue, sat, value], -1))  # encoded sRGB 0-1
    hue8 = np.round(enc * 255).astype(np.uint8)
    hue16 = np.round(enc * 65535).astype(np.uint16)
    grey = np.round(np.linspace(0, 255, 256))[None, :].repeat(48, 0).astype(np.uint8)
    rgba = np.concatenate([hue8[:64, :128], np.round(np.linspace(0, 255, 128))[None, :, None]
                           .repeat(64, 0).astype(np.uint8)], axis=-1)
    return hue8, hue16, grey, rgba


def _png(path: pathlib.Path, pixels) -> None:
    import imagecodecs

    path.write_bytes(bytes(imagecodecs.png_encode(np.ascontiguousarray(pixels), level=9)))


def main(out: pathlib.Path = HERE) -> list:
    import tifffile

    out.mkdir(parents=True, exist_ok=True)
    written = []
    lin = tabletop_linear_srgb(SIZE)
    _png(out / "tabletop.png", _encode(lin, 8))
    _png(out / "tabletop_16bit.png", _encode(lin, 16))
    small = lin.reshape(SIZE // 2, 2, SIZE // 2, 2, 3).mean(axis=(1, 3)).astype(np.float32)
    tifffile.imwrite(out / "tabletop_linear.tif", small, photometric="rgb", compression="zlib", metadata=None)
    cube, wl = tabletop_cube(CUBE_SIZE)
    # float16 (about 3 significant digits) keeps the file small; the reader widens it.
    np.savez_compressed(out / "tabletop_cube.npz", cube=cube.astype(np.float16), wavelengths=wl,
                        kind=np.array("reflectance"))
    _png(out / "tabletop_large.png", _encode(tabletop_linear_srgb(LARGE_SIZE), 8))
    written += ["tabletop.png", "tabletop_16bit.png", "tabletop_linear.tif", "tabletop_cube.npz", "tabletop_large.png"]
    dots, labels, colours = dot_stimulus()
    _png(out / "dots_deutan.png", dots)
    _png(out / "dots_deutan_labels.png", labels)
    (out / "dots_deutan.json").write_text(json.dumps(
        {"observer": "deuteranope", "labels": "0 paper, 1-3 ground dots (lightness level), 4-6 figure dots",
         "base_linear_srgb_note": "figure = level x (base + a d), ground = level x (base - a d)", **colours},
        indent=2) + "\n")
    written += ["dots_deutan.png", "dots_deutan_labels.png", "dots_deutan.json"]
    hue8, hue16, grey, rgba = gradients()
    _png(out / "gradient_hue.png", hue8)
    _png(out / "gradient_hue_16bit.png", hue16)
    _png(out / "gradient_grey.png", grey)
    _png(out / "gradient_rgba.png", rgba)
    written += ["gradient_hue.png", "gradient_hue_16bit.png", "gradient_grey.png", "gradient_rgba.png"]
    return written


if __name__ == "__main__":
    target = pathlib.Path(sys.argv[1]) if len(sys.argv) > 1 else HERE
    for name in main(target):
        print(target / name)
