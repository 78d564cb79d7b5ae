"""Parametric filters, spec strings, stacks, sweeps, examples, notch finding and bandwidth."""

from __future__ import annotations

import numpy as np
import pytest

from cvdfilter.errors import InputError
from cvdfilter.spectra.filters import (example_names, find_notches, flat_notch, gaussian_notch, load_filters,
                                       longpass, neutral_density, parse_filter_spec)
from cvdfilter.spectra.grid import DEFAULT_GRID, Grid

WL = DEFAULT_GRID.wavelengths


def test_gaussian_notch_shape():
    # Definition of a Gaussian: half depth at centre +- FWHM/2 (common practice).
    t = gaussian_notch(WL, 575, 30, depth=0.8)
    assert t[WL == 575][0] == pytest.approx(0.2)
    assert t[WL == 560][0] == pytest.approx(0.6) and t[WL == 590][0] == pytest.approx(0.6)
    t_od = gaussian_notch(WL, 575, 30, od=2.0)
    assert t_od[WL == 575][0] == pytest.approx(0.01)


def test_flat_notch_keeps_fwhm_and_is_flatter():
    g = gaussian_notch(WL, 575, 40, depth=0.9)
    f = flat_notch(WL, 575, 40, depth=0.9, order=4)
    assert f[WL == 555][0] == pytest.approx(1 - 0.45) and f[WL == 595][0] == pytest.approx(1 - 0.45)
    assert f[WL == 565][0] < g[WL == 565][0]


def test_edges_and_nd():
    lp = longpass(WL, 500, 10)
    assert lp[WL == 500][0] == pytest.approx(0.5)
    # 10 % and 90 % points 10 nm apart by construction of the width parameter.
    i10, i90 = np.interp([0.1, 0.9], lp, WL)
    assert i90 - i10 == pytest.approx(10, abs=0.05)
    assert np.allclose(neutral_density(WL, od=1.0), 0.1)


def test_spec_strings_match_constructors():
    fs = load_filters(["notch:center=575,fwhm=35,depth=0.8", "nd:t=0.5", "longpass:edge=500,width=10",
                       "shortpass:edge=650,width=20,min=0.1", "notch:center=575,fwhm=35,od=1,shape=flat"])
    assert np.allclose(fs.transmittance[0], gaussian_notch(WL, 575, 35, depth=0.8))
    assert np.allclose(fs.transmittance[1], 0.5)
    assert np.allclose(fs.transmittance[4], flat_notch(WL, 575, 35, od=1))
    assert fs.transmittance[3].min() == pytest.approx(0.1, abs=1e-3)


def test_stack_is_product():
    fs = parse_filter_spec("notch:center=575,fwhm=35,depth=0.8*nd:t=0.5")
    assert np.allclose(fs.transmittance[0], 0.5 * gaussian_notch(WL, 575, 35, depth=0.8))


def test_sweep_expands_cartesian_product():
    fs = parse_filter_spec("notch:center=540..600/5,fwhm=20..40/10,depth=0.8")
    assert len(fs) == 13 * 3
    assert "center=540" in fs.names[0] and "fwhm=20" in fs.names[0]
    found = find_notches(WL, fs.transmittance[-1])
    assert found[0]["center"] == pytest.approx(600, abs=0.5) and found[0]["fwhm"] == pytest.approx(40, abs=0.5)


@pytest.mark.parametrize("spec,match", [
    ("notch:center=575", "needs fwhm"),
    ("notch:center=575,fwhm=30", "exactly one of depth or od"),
    ("notch:center=575,fwhm=30,depth=1.5", "between 0 and 1"),
    ("notch:center=abc,fwhm=30,depth=0.5", "not a number"),
    ("notch:center=575,fwhm=30,depth=0.5,colour=red", "unknown parameter"),
    ("nd:t=2", "between 0 and 1"),
    ("sunglasses", "unknown filter"),
    ("missing.csv", "no such file"),
    ("", "empty"),
])
def test_bad_specs(spec, match):
    with pytest.raises(InputError, match=match):
        parse_filter_spec(spec)


def test_bundled_examples_load_and_are_labelled_invented():
    names = example_names()
    assert len(names) == 4
    fs = load_filters(names)
    assert fs.transmittance.shape == (4, 401)
    for info in fs.info:
        assert info["units"] in ("fraction", "percent", "od")
    from cvdfilter.spectra.filters import example_path

    for n in names:
        assert "INVENTED" in example_path(n).read_text().splitlines()[0]


def test_find_notches_on_double_notch_example():
    fs = load_filters("larkhill-double-notch")
    centres = [round(n["center"]) for n in find_notches(WL, fs.transmittance[0])]
    assert centres == [490, 585]


def test_colour_spectral_distribution_input():
    # The API accepts colour-science SpectralDistribution objects.
    import colour

    sd = colour.SpectralDistribution(gaussian_notch(np.arange(380, 781, 5.0), 575, 35, depth=0.8),
                                     np.arange(380, 781, 5.0), name="sd lens")
    fs = load_filters(sd)
    assert fs.names == ("sd lens",)
    assert np.max(np.abs(fs.transmittance[0] - gaussian_notch(WL, 575, 35, depth=0.8))) < 0.02


def test_other_grid_step():
    fs = load_filters("notch:center=575,fwhm=35,depth=0.8", grid=Grid(step=5))
    assert fs.transmittance.shape == (1, 81)


def _instrument(wl_fine, signal, fwhm):
    # Triangular bandpass of the given FWHM, the usual model of a scanning monochromator (common practice).
    step = wl_fine[1] - wl_fine[0]
    half = int(round(fwhm / step))
    kernel = np.concatenate([np.arange(1, half + 1), np.arange(half - 1, 0, -1)]).astype(float)
    return np.convolve(signal, kernel / kernel.sum(), mode="same")


@pytest.mark.parametrize("fwhm,expected", [(2.0, 1), (0.2, 2)])
def test_sodium_d_lines_resolution(fwhm, expected):
    # Source: NIST Atomic Spectra Database, Na I D lines at 588.995 and 589.592 nm (0.6 nm apart); an
    # instrument with ~2 nm resolution cannot separate them (common practice), one with 0.2 nm can.
    wl = np.arange(580, 600, 0.01)
    absorb = sum(np.exp(-0.5 * ((wl - c) / 0.02) ** 2) for c in (588.995, 589.592))
    t = 1 - 0.9 * _instrument(wl, absorb, fwhm) / _instrument(wl, absorb, fwhm).max()
    assert len(find_notches(wl, t, min_prominence=0.02)) == expected


def test_bandwidth_correction_matches_colour_and_warns(write):
    # Stearns & Stearns (1988) bandpass correction as implemented by colour-science.
    import colour

    wl = np.arange(380, 781, 2.0)
    t = gaussian_notch(wl, 575, 2.0, depth=0.7)
    path = write("narrow.csv", "nm,T (fraction)\n" + "\n".join(f"{w:g},{v:.6f}" for w, v in zip(wl, t)))
    fs = load_filters(str(path), bandwidth=2.0)
    ref = colour.colorimetry.bandpass_correction_Stearns1988(colour.SpectralDistribution(t, wl)).values
    assert np.allclose(fs.transmittance[0][::2], np.clip(ref, 0, 1), atol=1e-9)
    assert any("narrower than twice" in w for w in fs.info[0]["warnings"])


@pytest.mark.parametrize("kwargs,match", [({"units": "kelvin"}, "unknown units"), ({"bandwidth": 50}, "0-20 nm")])
def test_bad_options_refused_up_front(kwargs, match):
    # Options are checked before any filter is built, also for specs that never read a file.
    with pytest.raises(InputError, match=match):
        load_filters("nd:t=0.5", **kwargs)


# --- users' files: names, selection, options, extrapolation, features (tests/data/, invented) ------------------

import pathlib  # noqa: E402
import warnings  # noqa: E402

from cvdfilter.errors import InputWarning  # noqa: E402
from cvdfilter.spectra.filters import (MAX_SWEEP_MEMBERS, find_features, spec_paths,  # noqa: E402
                                       with_file_options)

DATA = pathlib.Path(__file__).resolve().parent / "data"


def test_single_column_files_are_named_by_stem_not_header():
    # Both files have one column headed "T (%)": two filters, two names.
    fs = load_filters([str(DATA / "same_header_a.csv"), str(DATA / "same_header_b.csv")])
    assert fs.names == ("same_header_a", "same_header_b")
    assert fs.info[0]["column"] == "T (%)" and fs.info[0]["column_number"] == 1


def test_multi_column_files_are_named_stem_colon_column():
    fs = load_filters(str(DATA / "three_lenses.csv"))
    assert fs.names == ("three_lenses:Lens A (%T)", "three_lenses:Lens B (%T)", "three_lenses:Lens C (%T)")


def test_names_are_unique_never_merged():
    fs = load_filters([str(DATA / "batch1" / "lens.csv"), str(DATA / "batch2" / "lens.csv"), "nd:t=0.5", "nd:t=0.5"])
    assert fs.names == ("batch1/lens", "batch2/lens", "nd:t=0.5", "nd:t=0.5 #2")
    assert not np.allclose(fs.transmittance[0], fs.transmittance[1])


@pytest.mark.parametrize("column,expected", [('"Lens B (%T)"', "three_lenses:Lens B (%T)"),
                                             ("Lens B (%T)", "three_lenses:Lens B (%T)"),
                                             ("2", "three_lenses:Lens B (%T)"),
                                             ("lens c (%t)", "three_lenses:Lens C (%T)")])
def test_select_one_column(column, expected):
    fs = load_filters(f"{DATA / 'three_lenses.csv'}:{column}")
    assert fs.names == (expected,)
    whole = load_filters(str(DATA / "three_lenses.csv"))
    assert np.allclose(fs.transmittance[0], whole.transmittance[whole.names.index(expected)])


@pytest.mark.parametrize("column,match", [("4", "column 4 does not exist"), ("Lens D (%T)", "did you mean"),
                                          ("", "empty column")])
def test_bad_column_selection(column, match):
    with pytest.raises(InputError, match=match):
        load_filters(f"{DATA / 'three_lenses.csv'}:{column}")


def test_per_file_units_and_api_units():
    dark = DATA / "dark_lens_percent_no_unit.csv"
    with pytest.raises(InputError, match="--units"):
        load_filters(str(dark))
    a = load_filters(f"{dark}@units=percent")
    b = load_filters(str(dark), units="percent")
    assert np.allclose(a.transmittance, b.transmittance) and a.transmittance.max() < 0.01
    assert a.info[0]["units_reason"].startswith("given") and a.names == ("dark_lens_percent_no_unit",)
    # the file's own option wins over the call's
    c = load_filters(f"{dark}@units=percent", units="od")
    assert np.allclose(a.transmittance, c.transmittance)
    # column and options together, inside a stack
    d = load_filters(f"{DATA / 'three_lenses.csv'}:2@units=percent*nd:t=0.5")
    assert d.transmittance.max() == pytest.approx(0.45, abs=0.01)


def test_with_file_options_reaches_files_in_stacks_not_examples_or_specs():
    dark = str(DATA / "dark_lens_percent_no_unit.csv")
    out = with_file_options([f"{dark}*nd:t=0.5", "larkhill-notch-575", f"{dark}@bandwidth=2"], units="percent")
    assert out == [f"{dark}@units=percent*nd:t=0.5", "larkhill-notch-575", f"{dark}@bandwidth=2,units=percent"]
    assert spec_paths(f"{dark}@units=percent*nd:t=0.5") == [dark]


@pytest.mark.parametrize("spec,match", [(f"{DATA / 'quoted_cells.csv'}@units=kelvin", "unknown units"),
                                        (f"{DATA / 'quoted_cells.csv'}@unit=od", "did you mean 'units'"),
                                        ("nd:t=0.5@units=od", "apply to files")])
def test_bad_file_options(spec, match):
    with pytest.raises(InputError, match=match):
        load_filters(spec)


def test_extrapolation_is_reported_and_recorded():
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        fs = load_filters(str(DATA / "measured_400_700_only.csv"))
    texts = [str(w.message) for w in caught if issubclass(w.category, InputWarning)]
    assert any("extrapolated 380-399 nm held at the 400 nm value" in t and "701-780 nm" in t for t in texts)
    ex = fs.info[0]["extrapolated"]
    assert [(e["from_nm"], e["to_nm"], e["method"]) for e in ex] == [(380, 399, "constant"), (701, 780, "constant")]
    # held values: the first and last measured values
    assert fs.transmittance[0][0] == pytest.approx(ex[0]["values"][0])


def test_full_range_file_is_not_extrapolated():
    assert load_filters("larkhill-double-notch").info[0]["extrapolated"] == []


def _measured(name):
    data = np.loadtxt(DATA / name, delimiter=",", skiprows=2)
    return data[:, 0], data[:, 1]


def test_long_pass_amber_is_an_edge_not_a_notch():
    # A logistic edge at 500 nm: one long-pass edge at its 50 % point; no notch (by construction of the file).
    feats = find_features(*_measured("amber_longpass.csv"))
    assert [f["kind"] for f in feats] == ["edge"]
    assert feats[0]["direction"] == "long-pass" and feats[0]["center"] == pytest.approx(500, abs=1)
    # 10-90 % width of a logistic of scale s is 2 ln 9 s (s = 9 nm here)
    assert feats[0]["width"] == pytest.approx(2 * np.log(9) * 9, abs=1.0)
    assert find_notches(*_measured("amber_longpass.csv")) == []


def test_one_point_noise_spike_is_not_a_notch():
    notes = []
    feats = find_features(*_measured("noise_spike_759.csv"), notes=notes)
    assert feats == [] and any("759.0 nm" in n and "sampling" in n for n in notes)
    fs = load_filters(str(DATA / "noise_spike_759.csv"))
    assert fs.info[0]["features"] == []


def test_dip_under_broad_tint_gets_its_own_fwhm():
    # A 25 nm FWHM Gaussian dip (multiplied into a broad tint): measured against the local baseline, FWHM ~25.
    notches = find_notches(*_measured("dip_25nm_under_broad_tint.csv"))
    assert len(notches) == 1
    assert notches[0]["center"] == pytest.approx(520, abs=1) and notches[0]["fwhm"] == pytest.approx(25, abs=1.5)
    assert notches[0]["depth"] == pytest.approx(0.4, abs=0.03)


def test_band_pass_and_ripple_are_classified():
    bp = find_features(*_measured("bandpass_500_600.csv"))
    assert [f["kind"] for f in bp] == ["band-pass"]
    assert bp[0]["center"] == pytest.approx(550, abs=1) and bp[0]["fwhm"] == pytest.approx(100, abs=2)
    rip = find_features(*_measured("ripple_coating.csv"))
    assert [f["kind"] for f in rip] == ["ripple"] and rip[0]["amplitude"] == pytest.approx(0.04, abs=0.005)


def test_double_notch_example_widths_against_local_baseline():
    # The example was made with Gaussian notches of FWHM 22 and 26 nm (cvdfilter/data/make_examples.py).
    n = find_notches(WL, load_filters("larkhill-double-notch").transmittance[0])
    assert [round(x["fwhm"]) for x in n] == [22, 26]


# --- spec strings: aliases, did-you-mean, stacks, sweep limits --------------------------------------------------

def test_centre_is_accepted():
    a = parse_filter_spec("notch:centre=575,fwhm=35,depth=0.8")
    b = parse_filter_spec("notch:center=575,fwhm=35,depth=0.8")
    assert a.names == b.names and np.allclose(a.transmittance, b.transmittance)


@pytest.mark.parametrize("spec,match", [("notch:center=575,fwhm=35,dept=0.8", "did you mean 'depth'"),
                                        ("noth:center=575,fwhm=35,depth=0.8", "did you mean 'notch'"),
                                        ("larkhill-notch-57", "did you mean 'larkhill-notch-575'")])
def test_did_you_mean_in_specs(spec, match):
    with pytest.raises(InputError, match=match):
        parse_filter_spec(spec)


def test_trailing_star_is_an_empty_stack_term_not_a_folder():
    with pytest.raises(InputError, match="empty term in a stack") as info:
        parse_filter_spec("notch:center=575,fwhm=35,depth=0.8*")
    assert "folder" not in str(info.value)


def test_too_many_sweep_members_is_said_not_swallowed():
    with pytest.raises(InputError, match=f"at most {MAX_SWEEP_MEMBERS:,}") as info:
        parse_filter_spec("notch:center=400..700/0.0001,fwhm=30,depth=0.8")
    assert "not a number" not in str(info.value)


def test_sweep_limits_are_checked_before_allocating():
    import tracemalloc

    tracemalloc.start()
    with pytest.raises(InputError, match="filters; at most"):  # 3,001 x 3,001 members from two small ranges
        parse_filter_spec("notch:center=400..700/0.1,fwhm=10..40/0.01,depth=0.8")
    with pytest.raises(InputError, match="filters; at most"):  # a stack of two sweeps
        parse_filter_spec("notch:center=400..700/0.01,fwhm=30,depth=0.8*nd:t=0.1..0.9/0.0001")
    peak = tracemalloc.get_traced_memory()[1]
    tracemalloc.stop()
    assert peak < 50 * 2**20


def test_sweep_just_under_the_limit_stays_within_memory():
    import tracemalloc

    n = MAX_SWEEP_MEMBERS - 1
    tracemalloc.start()
    fs = parse_filter_spec(f"notch:center=400..{400 + (n - 1) * 0.005:.3f}/0.005,fwhm=30,depth=0.8")
    peak = tracemalloc.get_traced_memory()[1]
    tracemalloc.stop()
    assert len(fs) == n
    assert peak < 1.2 * 2**30  # far from the 2.2 GB a member limit on a single parameter allowed


def test_same_file_twice_is_numbered_not_merged():
    f = str(DATA / "same_header_a.csv")
    fs = load_filters([f, f])
    assert fs.names == ("same_header_a", "same_header_a #2") and len(fs) == 2


def test_spike_in_a_2nm_file_is_no_notch_after_resampling():
    # One bad sample in a file sampled every 2 nm spans three 1 nm grid points after resampling; the notches of
    # a file are found on its own samples, so it stays noise (the spectrum figure shades only real notches).
    from cvdfilter.spectra.filters import filter_notches

    fs = load_filters(str(DATA / "noise_spike_760_2nm_sampling.csv"))
    assert filter_notches(fs) == [[]]
    notches = filter_notches(load_filters("notch:center=575,fwhm=30,depth=0.8"))
    assert notches[0][0]["fwhm"] == pytest.approx(30, abs=0.1)
