"""Number of discernible colours (Linhares, Pinto & Nascimento 2008), Munsell set and synthetic scenes."""

from __future__ import annotations

import json

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from cvdfilter.discernibility import discernible_colours
from cvdfilter.errors import InputError
from cvdfilter.metrics.discernible import count_discernible, lab_from_xyz
from cvdfilter.spectra.scenes import synthetic_scene


# --- the count ------------------------------------------------------------------------------------

def test_lattice_count():
    # Definition (Linhares et al. 2008, JOSA A 25:2918): the count is the number of occupied unit
    # CIELAB cubes. Colours on a lattice of step 3 (L 5..95, a and b -60..60) plus three jittered
    # copies of each inside the same unit cube occupy exactly one cube per lattice point.
    L, a, b = np.meshgrid(np.arange(5, 96, 3.0), np.arange(-60, 61, 3.0), np.arange(-60, 61, 3.0), indexing="ij")
    lattice = np.stack([L, a, b], axis=-1).reshape(-1, 3) + 0.5
    rng = np.random.default_rng(1)
    jitter = rng.uniform(-0.49, 0.49, (3, *lattice.shape))
    colours = np.concatenate([lattice, *(lattice + j for j in jitter)])
    assert int(count_discernible(colours)) == len(lattice)
    # cube size 3: the same lattice, one point per cube of edge 3
    assert int(count_discernible(colours, cube_size=3.0)) == len(lattice)
    # a lattice of step 1 at cube centres: every point its own cube
    g = np.stack(np.meshgrid(*[np.arange(-10, 10) + 0.5] * 3, indexing="ij"), axis=-1).reshape(-1, 3)
    assert int(count_discernible(g)) == 20 ** 3


@settings(max_examples=40, deadline=None)
@given(st.integers(1, 400), st.integers(0, 2 ** 31 - 1), st.floats(0.2, 5.0))
def test_count_invariant_to_order_and_bounded(n, seed, spread):
    # Properties of a count of distinct cells (common practice): order does not matter, never more
    # than the number of colours, at least one for a non-empty set.
    rng = np.random.default_rng(seed)
    lab = rng.normal(0, spread * 10, (2, n, 3))
    c = count_discernible(lab)
    assert c.shape == (2,)
    assert np.all((1 <= c) & (c <= n))
    assert np.array_equal(count_discernible(lab[:, rng.permutation(n)]), c)
    # the count on each row equals the number of distinct floor-index triples (the dense definition)
    for row, k in zip(lab, c):
        assert k == len({tuple(v) for v in np.floor(row).astype(int)})


def test_count_refuses_bad_input():
    with pytest.raises(ValueError):
        count_discernible(np.zeros((4, 2)))
    with pytest.raises(ValueError):
        count_discernible([[0.0, np.nan, 0.0]])
    with pytest.raises(ValueError):
        count_discernible([[0.0, 0.0, 0.0]], cube_size=0)


def test_lab_matches_colour_science():
    # Reference library (test-only): colour.XYZ_to_Lab (CIE 15:2018 CIELAB), including the linear
    # segment for dark colours.
    import colour

    rng = np.random.default_rng(3)
    xyz = rng.uniform(0, 1, (500, 3)) ** 3
    white = np.array([0.95047, 1.0, 1.08883])
    ref = colour.XYZ_to_Lab(xyz, colour.XYZ_to_xy(white))
    assert np.allclose(lab_from_xyz(xyz, white), ref, atol=1e-9)


# --- the API ----------------------------------------------------------------------------------------

@pytest.fixture(scope="module")
def scene():
    return synthetic_scene(seed=5, shape=(96, 128))


def test_neutral_filter_full_adaptation_changes_no_count(scene):
    # Invariant (von Kries 1902; the scorecard's convention): a neutral-density filter under full
    # adaptation is a pure scale, undone by the gains, so every count is unchanged.
    r = discernible_colours(scene, filter=["nd:t=0.25", "nd:t=0.7"],
                            observers=["normal", "deuteranope", "protanomalous", "tritanope"])
    assert np.array_equal(r.with_filter, np.tile(r.without, (2, 1)))
    assert np.allclose(r.ratio, 1.0)


def test_counts_bounded_and_dict_contract(scene):
    r = discernible_colours(scene, filter="notch:center=575,fwhm=35,depth=0.8", observers=["normal", "deuteranope"])
    n = scene.height * scene.width
    assert r.n_colours == n
    assert np.all(r.without <= n) and np.all(r.with_filter <= n)
    d = json.loads(json.dumps(r.to_dict()))
    assert {"tool", "version", "caveat", "inputs", "method", "constants"} <= set(d)
    entry = d["observers"]["deuteranope"]["discernible_colours"]
    assert {"without", "with", "ratio", "method"} <= set(entry)
    assert entry["method"] == "brettel1997"
    assert d["observers"]["normal"]["discernible_colours"]["ratio_to_normal"] == 1.0


def test_pixel_order_does_not_change_counts(scene):
    rng = np.random.default_rng(0)
    flat = scene.data.reshape(-1, scene.bands)
    shuffled = type(scene)(flat[rng.permutation(len(flat))].reshape(scene.data.shape), scene.wavelengths)
    a = discernible_colours(scene, observers=["normal", "protanope"])
    b = discernible_colours(shuffled, observers=["normal", "protanope"])
    assert np.array_equal(a.without, b.without)


def test_radiance_cube_refused(scene):
    cube = type(scene)(scene.data, scene.wavelengths, kind="radiance")
    with pytest.raises(InputError):
        discernible_colours(cube, observers=["normal"])


# --- synthetic scenes -------------------------------------------------------------------------------

def test_scene_is_deterministic_and_a_reflectance_cube():
    a = synthetic_scene(seed=11, shape=(40, 56), bands=16)
    b = synthetic_scene(seed=11, shape=(40, 56), bands=16)
    c = synthetic_scene(seed=12, shape=(40, 56), bands=16)
    assert a.data.shape == (40, 56, 16) and a.kind == "reflectance"
    assert np.array_equal(a.data, b.data)
    assert not np.array_equal(a.data, c.data)
    assert a.data.min() >= 0.0 and a.data.max() <= 1.0
    assert np.allclose(a.wavelengths, np.linspace(400, 700, 16))


def test_scene_cli_writes_a_cube_the_renderer_reads(tmp_path):
    import subprocess
    import sys

    from cvdfilter.io.cubes import read_cube
    from cvdfilter.rendering import render

    out = tmp_path / "scene.npz"
    p = subprocess.run([sys.executable, "-m", "cvdfilter", "scene", "--seed", "3", "--height", "24", "--width", "32",
                        "-o", str(out)], capture_output=True, text=True)
    assert p.returncode == 0, p.stderr
    cube = read_cube(out)
    assert cube.data.shape == (24, 32, 31) and cube.kind == "reflectance" and cube.kind_source == "file"
    assert np.array_equal(cube.data, synthetic_scene(seed=3, shape=(24, 32)).data)
    img = render(cube, filter="nd:t=0.5", observer="deuteranope")
    assert img.shape[:2] == (24, 32)
    bad = subprocess.run([sys.executable, "-m", "cvdfilter", "scene", "-o", str(tmp_path / "s.png")],
                         capture_output=True, text=True)
    assert bad.returncode == 2 and "npz" in bad.stderr and "Traceback" not in bad.stderr
