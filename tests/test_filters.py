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
    path = write("narrow.csv", "\n".join(f"{w:g},{v:.6f}" for w, v in zip(wl, t)))
    fs = load_filters(str(path), bandwidth=2.0)
    ref = colour.colorimetry.bandpass_correction_Stearns1988(colour.SpectralDistribution(t, wl)).values
    assert np.allclose(fs.transmittance[0][::2], np.clip(ref, 0, 1), atol=1e-9)
    assert any("narrower than twice" in w for w in fs.info[0]["warnings"])


@pytest.mark.parametrize("kwargs,match", [({"units": "kelvin"}, "unknown units"), ({"bandwidth": 50}, "0-20 nm")])
def test_bad_options_refused_up_front(kwargs, match):
    # Options are checked before any filter is built, also for specs that never read a file.
    with pytest.raises(InputError, match=match):
        load_filters("nd:t=0.5", **kwargs)
