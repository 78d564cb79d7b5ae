"""Observer populations (Asano, Fairchild & Blonde 2016 individual variation on CIE 170-1)."""

from __future__ import annotations

import json

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from typer.testing import CliRunner

from cvdfilter.cli.app import app
from cvdfilter.errors import InputError
from cvdfilter.observers.observer import Observer, normal_separation, observer
from cvdfilter.observers.population import (
    DEFAULT_SEED,
    MAX_MEMBERS,
    PARAMETERS,
    SEPARATION_SD,
    VARIATIONS,
    individual_fundamentals,
    parse_population_spec,
    population,
)
from cvdfilter.spectra.grid import Grid

runner = CliRunner()
WL = np.arange(390, 781, 1.0)  # luxpy's output grid in these tests; our DEFAULT_GRID rows 10: are 390-780 nm

# Published standard deviations, Asano, Fairchild & Blonde (2016), PLoS One 11:e0145671 (literature values):
# lens 19.1 %, macula 37.2 %, L, M optical density 17.9 %, S 14.7 %, peak shifts L 4.0, M 3.0, S 2.5 nm.
ASANO_SD = {"lens_density_pct": 19.1, "macular_density_pct": 37.2, "l_density_pct": 17.9, "m_density_pct": 17.9,
            "s_density_pct": 14.7, "l_peak_shift_nm": 4.0, "m_peak_shift_nm": 3.0, "s_peak_shift_nm": 2.5}


def _luxpy_lms(age, field, p=None, i=None):
    """luxpy 1.12.5 cie2006cmfsEx for one individual observer, (391, 3) on 390-780 nm, peaks at 1."""
    from luxpy.toolboxes.indvcmf import individual_observer_cmf_model as indv

    kw = {}
    if p is not None:
        kw = dict(var_od_lens=p["lens_density_pct"][i], var_od_macula=p["macular_density_pct"][i],
                  var_od_L=p["l_density_pct"][i], var_od_M=p["m_density_pct"][i], var_od_S=p["s_density_pct"][i],
                  var_shft_L=p["l_peak_shift_nm"][i], var_shft_M=p["m_peak_shift_nm"][i],
                  var_shft_S=p["s_peak_shift_nm"][i])
    ref = indv.cie2006cmfsEx(age=age, fieldsize=field, out="lms", wl=WL, **kw)
    return ref[1:].T / ref[1:].T.max(axis=0)


# ------------------------------------------------------------------------------------------ zero variation

@pytest.mark.parametrize("spec", ["normal", "normal:age=70,field=10", "deuteranomalous", "protanomalous:shift=8",
                                  "protanomalous:separation=3,age=25,field=5", "tritanomalous",
                                  "deuteranope:age=50", "protanope", "tritanope:field=10",
                                  "deuteranomalous:severity=0.6,model=machado2009",
                                  "tritanomalous:severity=0.7,model=machado2009,age=60"])
@pytest.mark.parametrize("step", [1.0, 5.0])
def test_zero_variation_reproduces_the_fixed_observer_exactly(spec, step):
    # Invariant: with variation=none (and no pigment spread) every member is the fixed observer, bit for bit.
    grid = Grid(step=step)
    sep = ":" if ":" not in spec else ","
    pop = population(f"{spec}{sep}n=4,variation=none", grid)
    fixed = observer(spec, grid)
    assert pop.centre.spec == fixed.spec
    assert np.array_equal(pop.fundamentals, np.broadcast_to(fixed.fundamentals, pop.fundamentals.shape))
    member = pop[2]
    assert member.kind == fixed.kind and member.deficiency == fixed.deficiency
    assert member.luminance_weights == fixed.luminance_weights
    if fixed.base is not None:
        assert np.array_equal(member.base.fundamentals, fixed.base.fundamentals)


def test_zero_separation_sd_keeps_the_anomalous_pigment_at_the_centre():
    pop = population("deuteranomalous:shift=10,n=3,separation_sd=0,seed=4")
    assert np.all(pop.parameters["shift_nm"] == 10.0)
    fixed = observer("deuteranomalous:shift=10")
    assert np.all(pop.parameters["pigment_shift_nm"] == fixed.params["pigment_shift"])


# ------------------------------------------------------------------------------------------ luxpy

@pytest.mark.parametrize("age, field, values", [
    (45.0, 2.0, dict(lens=20.0, mac=-30.0, dens=(15.0, -10.0, 12.0), shift=(4.37, -3.21, 2.55))),
    (70.0, 10.0, dict(lens=-25.0, mac=55.0, dens=(-20.0, 22.0, -15.0), shift=(-6.3, 5.15, -4.05))),
    (25.0, 2.0, dict(lens=-100.0, mac=80.0, dens=(-35.0, 40.0, 30.0), shift=(0.3, 0.7, -1.9))),
])
def test_one_individual_observer_matches_luxpy(age, field, values):
    # Reference library: luxpy 1.12.5 cie2006cmfsEx (Asano et al. 2016 individual observer on CIE TC 1-97 data)
    # built from the same parameter values. Tolerance 1e-3 (measured worst 3.3e-4 over 30 random members):
    # luxpy interpolates log absorbance linearly on a 0.1 nm table for the peak shift and rounds the varied
    # peak densities to 3 decimals and its output to 6 significant figures; we use a cubic spline through
    # the 1 nm CIE 170-1 table and unrounded densities.
    mine = individual_fundamentals(age=[age], field=field, lens_density_pct=values["lens"],
                                   macular_density_pct=values["mac"], density_pct=values["dens"],
                                   peak_shift_nm=values["shift"])[0][:391]
    from luxpy.toolboxes.indvcmf import individual_observer_cmf_model as indv

    ref = indv.cie2006cmfsEx(age=age, fieldsize=field, out="lms", wl=WL, var_od_lens=values["lens"],
                             var_od_macula=values["mac"], var_od_L=values["dens"][0], var_od_M=values["dens"][1],
                             var_od_S=values["dens"][2], var_shft_L=values["shift"][0],
                             var_shft_M=values["shift"][1], var_shft_S=values["shift"][2])
    ref = ref[1:].T / ref[1:].T.max(axis=0)
    assert np.max(np.abs(mine - ref)) < 1e-3


def test_population_members_match_luxpy_built_from_their_parameters():
    # Reference library: luxpy 1.12.5 cie2006cmfsEx, one individual observer per member from the member's
    # sampled parameters (age drawn uniformly 20-80). Tolerance as above.
    pop = population("normal:age=20..80,n=12,seed=11")
    p = pop.parameters
    for i in range(len(pop)):
        ref = _luxpy_lms(p["age_years"][i], 2.0, p, i)
        assert np.max(np.abs(pop.fundamentals[i, 10:] - ref)) < 1e-3, i


def test_population_mean_and_sd_agree_with_luxpy_monte_carlo():
    # Reference library: luxpy 1.12.5 genMonteCarloObs (Asano et al. 2016 literature SDs, its default
    # 'matlab' source; 32 years, 2 deg), drawn independently of ours. Tolerance from the sample sizes: at
    # every wavelength and cone the difference of the two means must lie within 5 standard errors
    # sqrt(sd_a^2/n_a + sd_b^2/n_b), and of the two SDs within 5 standard errors of the difference
    # (SE(sd) ~ sd * sqrt((kurtosis - 1) / (4 n)), kurtosis estimated from the samples), plus 1e-3 for
    # the model differences measured against luxpy member by member (test above).
    from luxpy.toolboxes.indvcmf import individual_observer_cmf_model as indv

    state = np.random.get_state()
    try:
        np.random.seed(20160111)
        lux = indv.genMonteCarloObs(n_obs=200, fieldsize=2, list_Age=[32], wl=WL, out="lms")
    finally:
        np.random.set_state(state)
    lux = np.transpose(lux[1:], (2, 1, 0))  # (n, 391, 3)
    lux = lux / lux.max(axis=1, keepdims=True)
    mine = population("normal:n=3000,seed=5").fundamentals[:, 10:]

    def stats(x):
        m, s = x.mean(axis=0), x.std(axis=0, ddof=1)
        k = np.mean((x - m) ** 4, axis=0) / np.maximum(s, 1e-12) ** 4
        return m, s, k, len(x)

    (ma, sa, ka, na), (mb, sb, kb, nb) = stats(lux), stats(mine)
    se_mean = np.sqrt(sa ** 2 / na + sb ** 2 / nb)
    se_sd = np.sqrt(sa ** 2 * (ka - 1) / (4 * na) + sb ** 2 * (kb - 1) / (4 * nb))
    assert np.all(np.abs(ma - mb) <= 5 * se_mean + 1e-3)
    assert np.all(np.abs(sa - sb) <= 5 * se_sd + 1e-3)
    # and the spread is real, not zero: the L fundamental's SD at 620 nm is of order 0.05 in both
    assert sa[230, 0] > 0.02 and sb[230, 0] > 0.02


# ------------------------------------------------------------------------------------------ sampling

def _censored_sd(sd: float, floor: float = -100.0) -> float:
    """SD of N(0, sd) with values below ``floor`` set to ``floor`` (the -100 % clip of Asano et al. 2016)."""
    from scipy.stats import norm

    a = floor / sd
    # moments of max(X, a) for standard normal X: E = a Phi(a) + phi(a); E2 = a^2 Phi(a) + (1 - Phi(a)) + a phi(a)
    e1 = a * norm.cdf(a) + norm.pdf(a)
    e2 = a * a * norm.cdf(a) + norm.sf(a) + a * norm.pdf(a)
    return float(sd * np.sqrt(e2 - e1 ** 2))


@pytest.mark.parametrize("variation", ["asano2016", "asano2016-fitted"])
def test_sampled_parameters_have_the_published_sds(variation):
    # Source: Asano, Fairchild & Blonde (2016), literature SDs (ASANO_SD); the fitted variant's factors
    # 0.98 (lens, macula) and 0.5 (the rest) from luxpy 1.12.5 (_load_asano_std_data, dsrc='germany').
    # Tolerance: 5 standard errors of a sample SD, sd / sqrt(2 (n - 1)); means within 5 sd / sqrt(n).
    n = 20000
    pop = population(f"normal:n={n},variation={variation},seed=3", Grid(step=10))
    factors = dict(zip(ASANO_SD, (0.98, 0.98) + (0.5,) * 6)) if variation.endswith("fitted") else \
        dict.fromkeys(ASANO_SD, 1.0)
    for name, sd in ASANO_SD.items():
        expected = sd * factors[name]
        if name.endswith("_pct"):
            expected = _censored_sd(expected)
        got = pop.parameters[name]
        assert abs(got.std(ddof=1) - expected) < 5 * expected / np.sqrt(2 * (n - 1)), name
        assert abs(got.mean()) < 5 * sd * factors[name] / np.sqrt(n) + 0.01 * expected, name
        if name.endswith("_pct"):
            assert got.min() >= -100.0
    assert np.allclose(VARIATIONS["asano2016"], list(ASANO_SD.values()))


def test_ages_uniform_and_from_a_list():
    n = 4000
    ages = population(f"normal:age=20..70,n={n},seed=1", Grid(step=10)).parameters["age_years"]
    assert ages.min() >= 20 and ages.max() <= 70
    # uniform on [20, 70]: mean 45, SD 50 / sqrt(12) (definition)
    assert abs(ages.mean() - 45) < 5 * (50 / np.sqrt(12)) / np.sqrt(n)
    assert abs(ages.std() - 50 / np.sqrt(12)) < 0.05 * 50 / np.sqrt(12)
    listed = population(f"normal:age=25|60,n={n},seed=1", Grid(step=10)).parameters["age_years"]
    assert set(np.unique(listed)) == {25.0, 60.0}
    assert abs(np.mean(listed == 25.0) - 0.5) < 5 * 0.5 / np.sqrt(n)


@pytest.mark.parametrize("deficiency, centre", [("deutan", 6.0), ("protan", 10.0)])
def test_anomalous_separations_follow_the_truncated_normal(deficiency, centre):
    # Centre: DeMarco, Pokorny & Smith (1992) separations (10 nm protan, 6 nm deutan); spread SEPARATION_SD
    # (ours, documented); truncated to 0..normal separation. Mean and SD against scipy's truncnorm.
    from scipy.stats import truncnorm

    name = {"deutan": "deuteranomalous", "protan": "protanomalous"}[deficiency]
    n = 20000
    pop = population(f"{name}:n={n},seed=9", Grid(step=10))
    sep = pop.parameters["separation_nm"]
    full, sd = normal_separation(deficiency), SEPARATION_SD[deficiency]
    mean, var = truncnorm.stats((0 - centre) / sd, (full - centre) / sd, loc=centre, scale=sd, moments="mv")
    assert sep.min() >= 0 and sep.max() <= full
    assert abs(sep.mean() - mean) < 5 * np.sqrt(var / n)
    assert abs(sep.std(ddof=1) - np.sqrt(var)) < 5 * np.sqrt(var) / np.sqrt(2 * (n - 1))
    assert np.allclose(pop.parameters["shift_nm"], full - sep)
    # the anomalous pigment moves with the pigment it resembles (documented rule)
    cone = {"deutan": "m", "protan": "l"}[deficiency]
    other = {"deutan": "l", "protan": "m"}[deficiency]
    assert np.array_equal(pop.parameters[f"{cone}_peak_shift_nm"], pop.parameters[f"{other}_peak_shift_nm"])


def test_members_own_peak_separation_tracks_the_drawn_separation():
    # Invariant of the construction: the realised distance between the L' and M fundamental peaks follows
    # the drawn separation (lens, macula and densities move it a little).
    from cvdfilter.observers.describe import _grid_peaks

    pop = population("protanomalous:n=400,seed=2", Grid(step=0.5))
    peaks = _grid_peaks(pop.wavelengths, pop.fundamentals)
    own = peaks[:, 0] - peaks[:, 1]
    assert np.corrcoef(own, pop.parameters["separation_nm"])[0, 1] > 0.8
    assert abs(np.median(own - pop.parameters["separation_nm"])) < 1.0


# ------------------------------------------------------------------------------------------ reproducibility

def test_same_seed_identical_arrays_and_prefix_stable():
    a = population("deuteranomalous:n=50,seed=7")
    b = population("deuteranomalous:n=50,seed=7")
    assert np.array_equal(a.fundamentals, b.fundamentals)
    assert all(np.array_equal(a.parameters[k], b.parameters[k]) for k in a.parameters)
    c = population("deuteranomalous:n=50,seed=8")
    assert not np.array_equal(a.fundamentals, c.fundamentals)
    # the first 20 of 50 are the population of 20 with the same seed
    d = population("deuteranomalous:n=20,seed=7")
    assert np.array_equal(a.fundamentals[:20], d.fundamentals)
    # the same seed gives the same physiology to every observer kind
    n = population("normal:n=20,seed=7")
    assert np.array_equal(n.parameters["lens_density_pct"], d.parameters["lens_density_pct"])
    assert np.array_equal(n.fundamentals[:, :, 0], d.fundamentals[:, :, 0])  # deutans keep the member's L


def test_default_seed_is_fixed_and_in_the_spec():
    pop = population("normal:n=5")
    assert pop.seed == DEFAULT_SEED and f"seed={DEFAULT_SEED}" in pop.spec
    assert np.array_equal(pop.fundamentals, population(pop.spec).fundamentals)


def test_fundamentals_and_parameters_are_read_only():
    pop = population("normal:n=3,seed=1")
    with pytest.raises(ValueError):
        pop.fundamentals[0, 0, 0] = 1.0
    with pytest.raises(ValueError):
        pop.parameters["age_years"][0] = 1.0
    assert set(pop.parameters) <= set(PARAMETERS)


def test_continuous_in_the_peak_shift():
    # Defaults continuous in every parameter: a vanishing shift gives (almost) the unshifted fundamentals,
    # the S pigment included (0 beyond its 615 nm table, shifted or not).
    zero = individual_fundamentals(age=[32.0], peak_shift_nm=(0.0, 0.0, 0.0))
    tiny = individual_fundamentals(age=[32.0], peak_shift_nm=(1e-7, -1e-7, 1e-7))
    assert np.max(np.abs(zero - tiny)) < 1e-6


# ------------------------------------------------------------------------------------------ members

def test_members_are_observers_usable_by_existing_code():
    pop = population("deuteranope:n=6,seed=3,age=30..60")
    members = list(pop)
    assert len(members) == len(pop) == 6
    m = members[4]
    assert isinstance(m, Observer) and m.kind == "dichromat" and m.deficiency == "deutan" and m.missing_cone == 1
    assert m.spec == pop.spec + "#4" and m.params["age"] == pop.parameters["age_years"][4]
    assert m.luminance_weights == (1.0, 0.0)
    assert m.base.kind == "normal" and np.array_equal(m.base.fundamentals, pop.fundamentals[4])
    spectra = np.random.default_rng(0).random((5, len(pop.wavelengths)))
    assert np.allclose(m.cone_excitations(spectra), spectra @ pop.fundamentals[4])
    assert m.macleod_boynton(m.cone_excitations(spectra)).shape == (5, 2)
    an = population("protanomalous:n=3,seed=3")[1]
    assert an.kind == "anomalous" and an.base.kind == "normal"
    assert an.params["separation"] == population("protanomalous:n=3,seed=3").parameters["separation_nm"][1]
    # the base is the member's own normal observer: M and S cones equal, L differs
    assert np.array_equal(an.base.fundamentals[:, 1:], an.fundamentals[:, 1:])
    assert not np.array_equal(an.base.fundamentals[:, 0], an.fundamentals[:, 0])


@settings(max_examples=25, deadline=None)
@given(seed=st.integers(0, 2 ** 32), t=st.floats(1e-3, 1.0), kind=st.sampled_from(
    ["normal", "deuteranomalous", "protanomalous", "tritanomalous", "protanope"]))
def test_neutral_filter_changes_no_cone_contrast_for_any_member(seed, t, kind):
    # Invariant (CONVENTIONS section 5): a neutral-density filter with full von Kries adaptation changes no
    # cone contrast and gives contrast gain 1 on every axis, for every member.
    from cvdfilter.metrics.contrast import contrast_gains, opponent_channels
    from cvdfilter.observers.spaces import cone_contrast

    pop = population(f"{kind}:n=4,seed={seed}", Grid(step=5))
    rng = np.random.default_rng(seed)
    light = 0.5 + rng.random(len(pop.wavelengths))
    surfaces = rng.random((30, len(pop.wavelengths))) * light
    lms0 = surfaces @ pop.fundamentals  # (n, 30, 3)
    white0 = light @ pop.fundamentals  # (n, 3)
    lms1, white1 = (t * surfaces) @ pop.fundamentals, (t * light) @ pop.fundamentals
    c0 = cone_contrast(lms0, white0[:, None, :])
    c1 = cone_contrast(lms1, white1[:, None, :])
    assert np.allclose(c0, c1, rtol=1e-9, atol=1e-12)
    for i, member in enumerate(pop):
        ch = opponent_channels(member.kind, member.deficiency, member.luminance_weights)
        g = contrast_gains(lms1[i][None], white1[i][None], lms0[i], white0[i], ch)
        assert np.allclose(g[np.isfinite(g)], 1.0, atol=1e-9)


# ------------------------------------------------------------------------------------------ specs

def test_canonical_spec_round_trips():
    for spec in ["deuteranomalous:n=200,seed=7", "normal:age=20..70,n=500,seed=1",
                 "protanomalous:severity=mild,n=10,variation=asano2016-fitted,separation_sd=1",
                 "tritanope:field=10,age=30|40|50,n=3", "normal:age=45,n=2,variation=none"]:
        ps = parse_population_spec(spec)
        assert parse_population_spec(ps.spec).spec == ps.spec
    assert parse_population_spec("normal:age=20..70,n=500,seed=1").spec == \
        "normal:age=20..70,n=500,variation=asano2016,seed=1"
    assert parse_population_spec("normal:age=45,n=2").spec == "normal:age=45,n=2,variation=asano2016,seed=0"


@pytest.mark.parametrize("spec, words", [
    ("normal", "needs n="),
    ("normal:n=0", "outside"),
    (f"normal:n={MAX_MEMBERS + 1}", "outside"),
    ("normal:n=2.5", "whole number"),
    ("normal:n=5,variation=wide", "variation"),
    ("normal:n=5,age=10..30", "outside"),
    ("normal:n=5,age=70..20", "rise"),
    ("normal:n=5,seed=-1", "outside"),
    ("deuteranomalous:n=5,model=machado2009,severity=0.5,separation_sd=2", "machado2009"),
    ("normal:n=5,data=ss2", "CIE 2006"),
    ("normal:n=5,separation_sd=2", "anomalous"),
    ("deuteranomalous:n=5,separation_sd=x", "not a number"),
    ("normal:n=5,colour=red", "unknown parameter"),
])
def test_bad_population_specs_are_refused(spec, words):
    with pytest.raises(InputError, match=words):
        population(spec)


def test_size_limit_checked_before_allocating():
    with pytest.raises(InputError, match="MiB"):
        population(f"normal:n={MAX_MEMBERS}", Grid(step=0.1))


def test_observer_refuses_a_population_spec_with_a_hint():
    with pytest.raises(InputError, match="population"):
        observer("normal:n=3")


# ------------------------------------------------------------------------------------------ API and CLI

def test_public_api():
    import cvdfilter

    pop = cvdfilter.population("normal:age=20..70,n=5,seed=1")
    assert isinstance(pop, cvdfilter.Population) and len(pop) == 5 and pop.fundamentals.shape == (5, 401, 3)


def test_list_observers_shows_the_population_form():
    r = runner.invoke(app, ["list", "observers", "--format", "json"])
    assert r.exit_code == 0
    forms = [i["form"] for i in json.loads(r.stdout)["items"]]
    assert "ANY_SPEC,n=N" in forms


def test_inspect_observer_summarises_a_population():
    r = runner.invoke(app, ["inspect-observer", "deuteranomalous:n=60,seed=7", "--format", "json"])
    assert r.exit_code == 0, r.output
    d = json.loads(r.stdout)["observers"][0]
    assert d["spec"] == "deuteranomalous:separation=6,n=60,variation=asano2016,seed=7,separation_sd=2.5"
    assert d["population"] == {"n": 60, "variation": "asano2016", "seed": 7}
    assert set(d["fundamental_peaks_nm"]["L"]) == {"mean", "sd", "p2_5", "p50", "p97_5"}
    r = runner.invoke(app, ["inspect-observer", "normal:n=30,age=20..70"])
    assert r.exit_code == 0 and "normal:age=20..70,n=30,variation=asano2016,seed=0" in r.stdout
    assert "caveat" not in r.stdout and "not clinical evidence" in r.stdout


def test_inspect_observer_bad_population_is_one_line_exit_2():
    r = runner.invoke(app, ["inspect-observer", "normal:n=0"])
    assert r.exit_code == 2
    assert "n=0" in r.output and "Traceback" not in r.output


@pytest.mark.parametrize("spec", ["protanope:n=4,seed=2", "deuteranope:n=4,seed=2", "tritanope:n=3,seed=2"])
def test_dichromat_members_simulate_with_their_remaining_cones_unchanged(spec):
    # Invariant (CONVENTIONS section 5): a dichromat simulation leaves the two remaining cone signals
    # unchanged, here for every member (each with its own fundamentals and base).
    from cvdfilter.observers.simulate import simulation

    x = np.random.default_rng(4).uniform(0.05, 2, (100, 3))
    for member in population(spec):
        out = simulation(member).apply(x)
        keep = list(member.cones_present)
        assert np.array_equal(out[:, keep], x[:, keep])
        assert np.allclose(simulation(member).apply(out), out, rtol=1e-12, atol=1e-12)


def test_anomalous_members_simulate_continuously():
    from cvdfilter.observers.simulate import simulation

    for member in population("deuteranomalous:n=3,seed=2"):
        s = simulation(member)
        x = np.random.default_rng(4).uniform(0.05, 2, (50, 3))
        assert np.all(np.isfinite(s.apply(x)))
