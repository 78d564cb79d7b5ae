"""Colour rendition of illuminant x filter against colour-science's TM-30-18 / CIE 2017 and CIE 13.3."""

from __future__ import annotations

import colour
import numpy as np
import pytest

from cvdfilter.metrics.rendition import rendition
from cvdfilter.scorecard import score
from cvdfilter.spectra.filters import load_filters
from cvdfilter.spectra.grid import DEFAULT_GRID


def test_fl2_without_filter_rf70_rg86_ra64():
    # Source: colour-science's ANSI/IES TM-30-18 (CIE 2017 Rf) and CIE 13.3 implementations give
    # Rf 70, Rg 86 and Ra 64 for CIE FL2. This checks the wiring of illuminant x filter.
    card = score("nd:t=1", illuminant="FL2", observers=["normal"], metrics="rendition")
    r = card.to_dict()["filters"][0]["rendition"]
    assert round(r["rf"]) == 70
    assert round(r["rg"]) == 86
    assert round(r["ra"]) == 64
    ref = colour.quality.colour_fidelity_index_ANSIIESTM3018(colour.SDS_ILLUMINANTS["FL2"], additional_data=True)
    assert r["rf"] == pytest.approx(ref.R_f, abs=0.5)
    assert r["rg"] == pytest.approx(ref.R_g, abs=0.5)
    assert len(r["chroma_shifts"]) == 16
    assert np.allclose(r["chroma_shifts"], ref.R_cs, atol=1.0)


def test_filtered_light_matches_colour_science_on_the_product():
    # Source: colour-science applied directly to D65 x filter (the product built with colour's own data).
    fs = load_filters("notch:center=575,fwhm=40,depth=0.8")
    r = score(fs, observers=["normal"], metrics="rendition").to_dict()["filters"][0]["rendition"]
    d65 = colour.SDS_ILLUMINANTS["D65"].copy().align(colour.SpectralShape(380, 780, 1))
    product = colour.SpectralDistribution(d65.values * fs.transmittance[0], DEFAULT_GRID.wavelengths)
    ref = colour.quality.colour_fidelity_index_ANSIIESTM3018(product, additional_data=True)
    assert r["rf"] == pytest.approx(ref.R_f, abs=0.3)
    assert r["rg"] == pytest.approx(ref.R_g, abs=0.3)
    assert r["ra"] == pytest.approx(colour.colour_rendering_index(product), abs=0.3)
    assert r["rg"] > 100  # a notch between green and red saturates red and green surfaces


def test_neutral_density_leaves_rendition_unchanged():
    # Invariant: the indices depend on the relative spectrum only.
    card = score(["nd:t=1", "nd:t=0.2"], illuminant="FL2", observers=["normal"], metrics="rendition").to_dict()
    a, b = (f["rendition"] for f in card["filters"])
    assert a == b


def test_rendition_is_only_in_metrics_all():
    card = score("nd:t=0.5", observers=["normal"], metrics="core").to_dict()
    assert "rendition" not in card["filters"][0]
    assert "rendition" not in card["metrics"]
    card = score("nd:t=0.5", observers=["normal"], metrics="all").to_dict()
    assert set(card["filters"][0]["rendition"]) == {"rf", "rg", "ra", "chroma_shifts", "cct_k", "duv"}


def test_cached_result_equals_computed_result():
    fl2 = score("nd:t=1", illuminant="FL2", observers=["normal"], metrics="photometry").illuminant.spd
    a = rendition(fl2, DEFAULT_GRID.wavelengths, cache=False)
    b = rendition(fl2, DEFAULT_GRID.wavelengths)
    c = rendition(fl2, DEFAULT_GRID.wavelengths)
    for k in ("rf", "rg", "ra", "cct_k", "duv"):
        assert a[k] == b[k] == c[k]
    assert np.array_equal(a["chroma_shifts"], c["chroma_shifts"])


def test_black_filter_gives_null_rendition():
    r = score("nd:t=0", observers=["normal"], metrics="rendition").to_dict()["filters"][0]["rendition"]
    assert r["rf"] is None and r["rg"] is None and r["chroma_shifts"] == [None] * 16
