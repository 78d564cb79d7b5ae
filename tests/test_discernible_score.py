"""The scorecard's ``discernible`` group: counts per observer, per scene and pooled, variants, populations."""

from __future__ import annotations

import json

import numpy as np
import pytest

from cvdfilter.discernibility import discernible_colours
from cvdfilter.errors import InputError
from cvdfilter.io.cubes import Cube
from cvdfilter.metrics.discernible import count_planes_many, count_union, receptor_noise_space
from cvdfilter.metrics.discrimination import receptor_noise, rnl_distance
from cvdfilter.score_plan import parse_metrics
from cvdfilter.scorecard import score
from cvdfilter.spectra.scenes import synthetic_scene

#: Dichromat / normal count on synthetic scenes: 7 % (Linhares et al. 2008) divided and multiplied by 4
#: (as tests/test_discernible.py, which states why).
DICHROMAT_RANGE = (0.07 / 4, 0.07 * 4)
NOTCH = "notch:center=575,fwhm=35,depth=0.8"
METHODS = ("cielab", "cam16ucs", "rnl")


@pytest.fixture(scope="module")
def scenes():
    return [synthetic_scene(seed=5, shape=(48, 64)), synthetic_scene(seed=6, shape=(40, 40))]


def entry(card, i, k):
    return card.to_dict()["filters"][i]["observers"][k]["discernible_colours"]


# --- the vectorised counts ---------------------------------------------------------------------------

def test_count_many_and_union_on_a_lattice():
    # Definition (Linhares et al. 2008, JOSA A 25:2918): the count is the number of occupied unit cubes.
    # A step-2 lattice at cube centres, split into two halves that overlap by one plane: each half's count
    # is its number of points and the union's is the whole lattice's (the pooled count).
    g = np.stack(np.meshgrid(*[np.arange(-9, 9, 2) + 0.5] * 3, indexing="ij"), axis=0).reshape(3, -1)
    a, b = g[:, g[0] <= 1], g[:, g[0] >= 1]
    counts_a, keys_a = count_planes_many(a[None], keys=True)
    counts_b, keys_b = count_planes_many(b[None], keys=True)
    assert counts_a[0] == a.shape[1] and counts_b[0] == b.shape[1]
    assert count_union([keys_a, keys_b], 1)[0] == g.shape[1] == 9 ** 3
    # many sets at once: each row its own count, order within a row irrelevant
    rng = np.random.default_rng(2)
    sets = np.stack([g[:, rng.permutation(g.shape[1])] * s for s in (1.0, 0.25, 3.0)])
    assert count_planes_many(sets).tolist() == [9 ** 3, int(np.unique(np.floor(g * 0.25), axis=1).shape[1]), 9 ** 3]


def test_receptor_noise_space_distances():
    # Vorobyev & Osorio (1998), eq. for trichromats (rnl_distance): the chromatic rows give Delta S; the
    # whole space gives the Mahalanobis distance of the log signals, sqrt(sum (df_i / e_i)^2), so a uniform
    # change of every cone (an intensity change) is purely achromatic.
    e = receptor_noise()
    m = receptor_noise_space(e)
    rng = np.random.default_rng(3)
    q1, q2 = rng.uniform(0.1, 1, (50, 3)), rng.uniform(0.1, 1, (50, 3))
    d = np.log(q1) - np.log(q2)
    assert np.allclose(np.linalg.norm(d @ m[:2].T, axis=1), rnl_distance(q1, q2, e))
    assert np.allclose(np.linalg.norm(d @ m.T, axis=1), np.linalg.norm(d / e, axis=1))
    assert np.allclose((np.log(2.0) * np.ones(3)) @ m[:2].T, 0.0)
    # dichromat: two cones, a zero row, the missing cone ignored
    md = receptor_noise_space(receptor_noise(1))
    assert np.allclose(md[2], 0.0) and np.allclose(md[:, 1], 0.0)


# --- the scorecard group ------------------------------------------------------------------------------

def test_not_in_all_and_named_only():
    assert "discernible" not in parse_metrics("all")
    assert parse_metrics("discernible,contrast") == ("contrast", "discernible")
    assert parse_metrics("core,discernible") == (*parse_metrics("core"), "discernible")


def test_scorecard_counts_equal_the_api_on_munsell():
    # The scorecard's chunked, filter-vectorised path gives the counts of cvdfilter.discernible_colours.
    obs = ["normal", "protanomalous", "deuteranope"]
    card = score([NOTCH, "nd:t=0.5"], surfaces="munsell", metrics="discernible", observers=obs)
    ref = discernible_colours("munsell", filter=[NOTCH, "nd:t=0.5"], observers=obs)
    for k in range(len(obs)):
        for i in range(2):
            e = entry(card, i, k)
            assert e["without"] == ref.without[k] and e["with"] == ref.with_filter[i, k]
            assert e["normal_without"] == ref.normal_without[k]
            assert e["method"] == "cielab"
            assert isinstance(e["ratio"], float)  # a numeric key (the design objective reads it)
    assert card.to_dict()["models"]["discernible"]["stimuli"][0]["name"] == "munsell"


@pytest.mark.parametrize("method", METHODS)
def test_neutral_filter_changes_no_count(scenes, method):
    # Invariant (von Kries 1902; the scorecard's convention): under full adaptation a neutral-density
    # filter is a pure scale, undone by the gains, in every counting space.
    card = score(["nd:t=0.25", "nd:t=0.6"], scenes=scenes, metrics="discernible", discernible_method=method,
                 observers=["normal", "deuteranope", "protanomalous"])
    for i in range(2):
        for k in range(3):
            e = entry(card, i, k)
            assert e["with"] == e["without"] and e["ratio"] == 1.0
            assert all(s["with"] == s["without"] for s in e["scenes"].values())
            assert e["method"] == method


def test_pixel_order_pooling_and_bounds(scenes):
    # Invariants of a count of distinct cells (common practice): pixel order does not matter; a count
    # never exceeds the pixels; the pooled count (union) lies between the largest scene count and the sum;
    # a scene pooled with itself counts once.
    a, b = scenes
    rng = np.random.default_rng(0)
    flat = a.data.reshape(-1, a.bands)
    shuffled = Cube(flat[rng.permutation(len(flat))].reshape(a.data.shape), a.wavelengths, path="shuffled")
    obs = ["normal", "protanope"]
    c1 = score(NOTCH, scenes=[a, b], metrics="discernible", observers=obs)
    c2 = score(NOTCH, scenes=[shuffled, b], metrics="discernible", observers=obs)
    c3 = score(NOTCH, scenes=[a, Cube(a.data, a.wavelengths, path="again")], metrics="discernible", observers=obs)
    c4 = score(NOTCH, scenes=[a], metrics="discernible", observers=obs)
    for k in range(2):
        e1, e2, e3, e4 = (entry(c, 0, k) for c in (c1, c2, c3, c4))
        for key in ("without", "with", "normal_without"):
            assert e1[key] == e2[key]
            per = [s[key] for s in e1["scenes"].values()]
            assert max(per) <= e1[key] <= sum(per)
            assert e3[key] == e4[key]
        n = a.height * a.width
        assert e4["without"] <= n and e4["with"] <= n
        ratios = [s["ratio"] for s in e1["scenes"].values()]
        assert e1["mean_scene_ratio"] == pytest.approx(np.mean(ratios), abs=1e-6)
        assert "scenes" not in e4


def test_lattice_count_at_scorecard_level():
    # Definition (Linhares et al. 2008): colours placed at the centres of a known CIELAB lattice are counted
    # one per lattice point. The reflectances are built so that the normal observer (no filter, full
    # adaptation) sees those CIELAB values: CIELAB -> XYZ by colour-science (reference library), XYZ ->
    # three smooth basis spectra through the observer's own XYZ of them.
    colour = pytest.importorskip("colour")
    from cvdfilter.observers.fundamentals import LMS_TO_XYZ_2DEG
    from cvdfilter.observers.observer import observer
    from cvdfilter.spectra.grid import DEFAULT_GRID
    from cvdfilter.spectra.illuminants import illuminant

    wl = DEFAULT_GRID.wavelengths
    e = illuminant("D65").spd
    phi = observer("normal").fundamentals
    to_xyz = LMS_TO_XYZ_2DEG @ (phi.T * e)  # (3, n_wl)
    white = to_xyz.sum(axis=1)
    L, a, b = np.meshgrid(np.arange(30, 71, 4.0), np.arange(-20, 21, 4.0), np.arange(-20, 21, 4.0), indexing="ij")
    lab = np.stack([L, a, b], axis=-1).reshape(-1, 3) + 0.5  # cube centres
    xy_w = white[:2] / white.sum()
    xyz = colour.Lab_to_XYZ(lab, illuminant=xy_w) * white[1]
    basis = np.stack([np.exp(-0.5 * ((wl - c) / 40.0) ** 2) for c in (450, 540, 610)], axis=1)
    weights = np.linalg.solve(to_xyz @ basis, xyz.T)  # (3, n)
    refl = (basis @ weights).T.reshape(len(lab), 1, -1)
    cube = Cube(refl, wl, path="lattice")
    card = score("nd:t=0.5", scenes=[cube], metrics="discernible", observers=["normal"])
    e0 = entry(card, 0, 0)
    assert e0["without"] == e0["with"] == len(lab) == 11 ** 3


def test_dichromats_small_fraction_at_scorecard_level():
    # Linhares, Pinto & Nascimento (2008), Visual Neuroscience 25:493: dichromats about 7 % of normal
    # (from memory, as quoted in the project's issue); direction and order of magnitude only, within
    # DICHROMAT_RANGE (see tests/test_discernible.py for why). Pooled over two synthetic 180 x 180 scenes.
    sc = [synthetic_scene(seed=s, shape=(180, 180)) for s in (1, 2)]
    card = score("nd:t=0.5", scenes=sc, metrics="discernible",
                 observers=["normal", "deuteranomalous", "protanope", "deuteranope"])
    frac = [entry(card, 0, k)["ratio_to_normal"] for k in range(4)]
    assert frac[0] == 1.0
    for f in frac[2:]:
        assert DICHROMAT_RANGE[0] < f < DICHROMAT_RANGE[1]
    assert max(frac[2:]) < frac[1] < 1.0


def test_population_summaries_and_helped(scenes):
    card = score([NOTCH, "nd:t=0.5"], scenes=scenes[:1], metrics="discernible",
                 observers=["deuteranomalous:n=6,seed=2"])
    d = json.loads(card.to_json())
    e = d["filters"][0]["observers"][0]
    block = e["discernible_colours"]
    assert set(block["without"]) == {"mean", "sd", "p2_5", "p50", "p97_5"}
    assert block["method"] == "cielab"
    assert "discernible_ratio" in e["helped"]
    # the neutral filter helps no member
    assert d["filters"][1]["observers"][0]["helped"]["discernible_ratio"]["helped"] == 0
    # every member's count is a member's own: the members' values agree with a fixed observer's
    member = card.observers[0][0]
    fixed = score(NOTCH, scenes=scenes[:1], metrics="discernible", observers=[member])
    assert card.per_observer[0]["discernible_with"][0, 0] == fixed.per_observer[0]["discernible_with"][0]
    assert "colours ratio > 1" in card.to_markdown()


@pytest.mark.parametrize("method", METHODS)
def test_population_members_equal_fixed_observers(scenes, method):
    # Every member of a population is counted as one array with the others (stacked maps, one count per
    # chunk); each member's counts must be those of the same member scored alone as a fixed observer
    # (definition: a population's per-observer metric is the member's own; Linhares et al. 2008 count per
    # observer), per scene, pooled over the scenes, and for its normal base observer. An anomalous, a
    # dichromat (two-piece simulation, Brettel et al. 1997) and a normal population.
    pops = ["deuteranomalous:n=4,seed=3", "protanope:n=3,seed=4", "normal:n=3,seed=5"]
    filters = [NOTCH, "longpass:edge=520,width=10"]
    card = score(filters, scenes=scenes, metrics="discernible", observers=pops, discernible_method=method)
    for k, pop in enumerate(card.observers):
        members = list(pop)
        fixed = score(filters, scenes=scenes, metrics="discernible", observers=members,
                      discernible_method=method)
        for key, v in card.per_observer[k].items():
            if not key.startswith("discernible_"):
                continue
            alone = np.stack([np.asarray(fixed.per_observer[i][key], dtype=float) for i in range(len(members))],
                             axis=-1)
            assert np.array_equal(np.asarray(v, dtype=float), alone, equal_nan=True), (pop, key)


def test_dense_blocks_and_sort_count_alike(monkeypatch):
    # The count is the number of occupied unit cubes (Linhares et al. 2008): marking cells in blocks of
    # sets and sorting keys must give the same counts and the same occupied cubes, checked against
    # numpy's unique over each set's integer cube indices.
    from cvdfilter.metrics import discernible as disc

    rng = np.random.default_rng(4)
    planes = rng.normal(0, 6, (9, 3, 400))
    want = [np.unique(np.floor(p), axis=1).shape[1] for p in planes]
    sort_counts, sort_keys = disc.count_planes_many(planes, keys=True)  # few colours for the box: a sort
    cells = int(np.prod(np.ptp(np.floor(planes), axis=(0, 2)) + 1))
    dense_counts, dense_keys = disc._count_dense(np.floor(planes), np.floor(planes).min(axis=(0, 2)),
                                                 (np.ptp(np.floor(planes), axis=(0, 2)) + 1).astype(np.int64),
                                                 True)
    assert cells > disc.DENSE_PER_COLOUR * 400
    assert sort_counts.tolist() == dense_counts.tolist() == want
    assert np.array_equal(sort_keys[0], dense_keys[0]) and np.array_equal(sort_keys[1], dense_keys[1])
    small = np.floor(planes * 0.25)
    small_cells = int(np.prod(np.ptp(small, axis=(0, 2)) + 1))
    assert small_cells <= disc.DENSE_PER_COLOUR * 400  # dense marking
    monkeypatch.setattr(disc, "DENSE_CELLS", 2 * small_cells)  # in blocks of two sets
    blocks_counts, blocks_keys = disc.count_planes_many(planes * 0.25, keys=True)
    assert blocks_counts.tolist() == [np.unique(np.floor(p * 0.25), axis=1).shape[1] for p in planes]
    monkeypatch.setattr(disc, "DENSE_CELLS", 1 << 25)
    one_counts, one_keys = disc.count_planes_many(planes * 0.25, keys=True)
    assert np.array_equal(blocks_counts, one_counts)
    assert np.array_equal(blocks_keys[0], one_keys[0]) and np.array_equal(blocks_keys[1], one_keys[1])


def test_sensitivity_follows_the_discernible_ratio():
    # --sensitivity with the discernible group: the threshold factors scale the counting cube, so the
    # "thresholds x0.8" value is the count of Linhares, Pinto & Nascimento (2008) at cube size 0.8 as the
    # published construction's API gives it (cvdfilter.discernible_colours); the Weber fraction and cone
    # ratios do not enter the CIELAB count (no receptor noise in that construction), so those variations
    # repeat the run's ratio; for rnl they are the counts of a run made with that constant.
    from cvdfilter.discernibility import discernible_colours

    obs = ["deuteranomalous", "deuteranomalous:n=3,seed=1"]
    card = score(NOTCH, surfaces="munsell", metrics="discernible", observers=obs, sensitivity=True)
    sens = card.to_dict()["sensitivity"]
    row = sens["filters"][0]["observers"][0]["discernible_ratio"]
    api = discernible_colours("munsell", filter=NOTCH, observers=["deuteranomalous"], cube_size=0.8)
    assert row["values"]["thresholds x0.8"] == pytest.approx(float(api.ratio[0, 0]), abs=1e-6)
    assert row["values"]["default"] == pytest.approx(float(card.per_observer[0]["discernible_ratio"][0]), abs=1e-6)
    assert row["values"]["weber_fraction=0.01"] == row["values"]["cone_ratios=12:3:1"] == row["values"]["default"]
    assert row["robust"] == (len({np.sign(v - 1) for v in row["values"].values()}) == 1)
    cube = [v["settings"].get("discernible_cube_size") for v in sens["variations"]]
    assert cube[-2:] == [pytest.approx(0.8), pytest.approx(1.25)]
    pop = sens["filters"][0]["observers"][1]["discernible_ratio"]
    assert pop["statistic"] == "share of members helped" and pop["members"] == 3
    assert pop["values"]["default"] == pytest.approx(float(np.mean(card.per_observer[1]["discernible_ratio"][0] > 1)))
    rnl = score(NOTCH, surfaces="munsell", metrics="discernible", observers=obs[:1], sensitivity=True,
                discernible_method="rnl")
    alone = score(NOTCH, surfaces="munsell", metrics="discernible", observers=obs[:1], discernible_method="rnl",
                  weber_fraction=0.01)
    value = rnl.to_dict()["sensitivity"]["filters"][0]["observers"][0]["discernible_ratio"]["values"]
    assert value["weber_fraction=0.01"] == pytest.approx(float(alone.per_observer[0]["discernible_ratio"][0]),
                                                         abs=1e-6)


def test_views_show_the_group(scenes):
    card = score(NOTCH, scenes=scenes, metrics="discernible", observers=["normal", "deuteranope"])
    header = card.to_csv().splitlines()[0].split(",")
    assert "discernible_colours.ratio" in header and "discernible_colours.method" in header
    assert "colours without" in card.to_markdown()
    assert "colours" in card.to_table()


def test_bad_inputs_refused(scenes):
    with pytest.raises(InputError, match="method"):
        score(NOTCH, metrics="discernible", discernible_method="ciede2000")
    with pytest.raises(InputError, match="discernible"):
        score(NOTCH, scenes=scenes, metrics="contrast")
    radiance = Cube(scenes[0].data, scenes[0].wavelengths, kind="radiance")
    with pytest.raises(InputError, match="reflectance"):
        score(NOTCH, scenes=[radiance], metrics="discernible")


def test_cli_scenes_and_method(tmp_path):
    import subprocess
    import sys

    def run(*args):
        return subprocess.run([sys.executable, "-m", "cvdfilter", *args], capture_output=True, text=True)

    for seed in (1, 2):
        r = run("scene", "--seed", str(seed), "--height", "32", "--width", "32", "-o", str(tmp_path / f"s{seed}.npz"))
        assert r.returncode == 0, r.stderr
    out = tmp_path / "card.json"
    r = run("score", NOTCH, "--metrics", "discernible", "--scene", str(tmp_path / "s1.npz"), "--scene",
            str(tmp_path / "s2.npz"), "--observer", "deuteranope", "--discernible-method", "rnl", "-o", str(out))
    assert r.returncode == 0, r.stderr
    d = json.loads(out.read_text())
    e = d["filters"][0]["observers"][0]["discernible_colours"]
    assert e["method"] == "rnl" and len(e["scenes"]) == 2 and e["pooled"] == "union"
    assert d["inputs"]["discernible_method"] == "rnl"
    r = run("score", NOTCH, "--metrics", "discernible", "--discernible-method", "lab2")
    assert r.returncode == 2 and "Traceback" not in r.stderr and len(r.stderr.strip().splitlines()) == 1
