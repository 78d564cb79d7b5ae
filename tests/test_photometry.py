"""Photometry of filters against colour-science (CIE 15 colorimetry) and invariants."""

from __future__ import annotations

import colour
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from cvdfilter.metrics.photometry import (filter_chromaticity, luminous_transmittance, white_shift, xyz_to_uv_prime,
                                          xyz_to_xy)
from cvdfilter.observers.fundamentals import cie1931_cmfs
from cvdfilter.scorecard import score
from cvdfilter.spectra.filters import load_filters
from cvdfilter.spectra.grid import DEFAULT_GRID
from cvdfilter.spectra.illuminants import illuminant

SMOOTH = ["longpass:edge=500,width=60", "notch:center=550,fwhm=80,depth=0.5", "shortpass:edge=620,width=80,min=0.2",
          "notch:center=600,fwhm=120,depth=0.3*longpass:edge=430,width=40,min=0.4", "nd:t=0.37"]


def _colour_Y(t: np.ndarray, illum: str = "D65") -> np.ndarray:
    # CIE 1931 2 deg, the illuminant from colour-science's own data, the filter as a
    # "reflectance": Y / 100 is the luminous transmittance (CIE 15:2004, ISO 12312-1).
    cmfs = colour.MSDS_CMFS["CIE 1931 2 Degree Standard Observer"]
    sd = colour.SpectralDistribution(t, DEFAULT_GRID.wavelengths)
    return colour.sd_to_XYZ(sd, cmfs, colour.SDS_ILLUMINANTS[illum]) / 100.0


def test_luminous_transmittance_matches_colour_science():
    # Source: colour-science sd_to_XYZ (CIE 1931 2 deg, CIE D65) -> Y of D65 x filter / Y of D65.
    fs = load_filters(SMOOTH)
    card = score(fs, observers=["normal"], metrics="photometry")
    for i in range(len(fs)):
        y = _colour_Y(fs.transmittance[i])[1]
        assert card.results["luminous_transmittance"][i] == pytest.approx(y, abs=1e-4)
        assert card.to_dict()["filters"][i]["luminous_transmittance"] == pytest.approx(y, abs=1e-4)


def test_chromaticity_matches_colour_science():
    # Source: colour-science sd_to_XYZ + XYZ_to_xy (CIE 15:2004) for D65 seen through the filter.
    fs = load_filters(SMOOTH[:3])
    card = score(fs, observers=["normal"], metrics="photometry").to_dict()
    for i, f in enumerate(card["filters"]):
        xy = colour.XYZ_to_xy(_colour_Y(fs.transmittance[i]))
        assert f["chromaticity"]["x"] == pytest.approx(xy[0], abs=2e-4)
        assert f["chromaticity"]["y"] == pytest.approx(xy[1], abs=2e-4)


def test_white_shift_matches_colour_science_uv_prime():
    # Source: colour-science XYZ_to_xy + xy_to_Luv_uv (CIE 1976 u', v'), illuminant A through the filter.
    fs = load_filters(["longpass:edge=500,width=60"])
    card = score(fs, illuminant="A", observers=["normal"], metrics="photometry").to_dict()
    uv1 = colour.xy_to_Luv_uv(colour.XYZ_to_xy(_colour_Y(fs.transmittance[0], "A")))
    uv0 = colour.xy_to_Luv_uv(colour.XYZ_to_xy(_colour_Y(np.ones(DEFAULT_GRID.size), "A")))
    assert card["filters"][0]["white_shift"] == pytest.approx(float(np.hypot(*(uv1 - uv0))), abs=2e-4)


def test_uv_prime_of_d65():
    # Source: CIE 15:2004, D65 white point u' = 0.1978, v' = 0.4683.
    assert xyz_to_uv_prime([95.047, 100.0, 108.883]) == pytest.approx([0.1978, 0.4683], abs=1e-4)
    assert xyz_to_xy([95.047, 100.0, 108.883]) == pytest.approx([0.3127, 0.3290], abs=1e-4)


@settings(max_examples=30, deadline=None)
@given(st.floats(0.0, 1.0))
def test_neutral_density_invariants(t):
    # Invariant: a neutral filter transmits t of the light and does not shift its colour.
    spd = illuminant("D65").spd
    cmfs = cie1931_cmfs()
    trans = np.full((1, DEFAULT_GRID.size), t)
    assert luminous_transmittance(trans, spd, cmfs[:, 1])[0] == pytest.approx(t, abs=1e-12)
    if t > 1e-6:
        assert white_shift(trans, spd, cmfs)[0] == pytest.approx(0.0, abs=1e-12)
        assert filter_chromaticity(trans, spd, cmfs)[0] == pytest.approx(filter_chromaticity(
            np.ones((1, DEFAULT_GRID.size)), spd, cmfs)[0], abs=1e-12)
