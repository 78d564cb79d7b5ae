"""Illuminants and surface sets against colour-science's own data."""

from __future__ import annotations

import numpy as np
import pytest

from cvdfilter.errors import InputError
from cvdfilter.observers.fundamentals import cie1931_cmfs
from cvdfilter.spectra.grid import DEFAULT_GRID
from cvdfilter.spectra.illuminants import illuminant
from cvdfilter.spectra.surfaces import surface_set


def _xy(spd):
    xyz = spd @ cie1931_cmfs()
    return xyz[:2] / xyz.sum()


@pytest.mark.parametrize("name,xy", [("D65", (0.31272, 0.32903)), ("A", (0.44757, 0.40745)),
                                     ("D50", (0.34567, 0.35850))])
def test_cie_illuminant_chromaticities(name, xy):
    # Source: CIE 15:2004 Table T.3 white points (CIE 1931 2 deg): D65 (0.31272, 0.32903),
    # A (0.44757, 0.40745), D50 (0.34567, 0.35850). Tolerance 2e-4 for 1 nm resampling of 5 nm data
    # and the 380-780 nm range.
    assert np.allclose(_xy(illuminant(name).spd), xy, atol=2e-4)


def test_daylight_and_planck_match_colour():
    # colour-science reference: CIE daylight at 6504 K is D65 to within rounding of the M1, M2 factors;
    # the Planckian radiator at 2856 K has the chromaticity of illuminant A.
    assert np.allclose(_xy(illuminant("daylight:cct=6504").spd), _xy(illuminant("D65").spd), atol=5e-4)
    assert np.allclose(_xy(illuminant("planck:t=2856").spd), (0.44757, 0.40745), atol=5e-4)


def test_luminance_normalisation_and_mixture():
    d65, a = illuminant("D65"), illuminant("A")
    y = cie1931_cmfs()[:, 1]
    assert float(d65.spd @ y) == pytest.approx(100.0)
    mix = illuminant("D65@0.5+A@0.5")
    assert float(mix.spd @ y) == pytest.approx(100.0)
    assert np.allclose(mix.spd, 0.5 * d65.spd + 0.5 * a.spd)


def test_lamps_available():
    lps = illuminant("LPS")
    # Low-pressure sodium is nearly monochromatic at 589 nm (common practice).
    assert abs(DEFAULT_GRID.wavelengths[np.argmax(lps.spd)] - 589) <= 2


@pytest.mark.parametrize("spec", ["D99", "daylight:cct=1000", "planck:t=abc", "D65@x+A"])
def test_bad_illuminants(spec):
    with pytest.raises(InputError):
        illuminant(spec)


@pytest.mark.parametrize("name,n", [("ces99", 99), ("chart24", 24), ("tcs14", 14), ("vs15", 15)])
def test_surface_sets(name, n):
    s = surface_set(name)
    assert s.reflectance.shape == (401, n) and len(s.labels) == n
    assert s.reflectance.min() >= 0 and s.reflectance.max() <= 1


def test_chart24_white_patch_luminance():
    # Source: colour-science's 24-patch chart data (N. Ohta) under D65 give the 'white 9.5 (.05 D)' patch
    # Y of about 0.9 (from memory: ~90 % reflectance); computed here the same way as colour.sd_to_XYZ.
    s = surface_set("chart24")
    d65 = illuminant("D65").spd
    y = cie1931_cmfs()[:, 1]
    i = s.labels.index("white 9.5 (.05 D)")
    Y = (s.reflectance[:, i] * d65) @ y / (d65 @ y)
    import colour

    ref = colour.sd_to_XYZ(colour.SDS_COLOURCHECKERS["ColorChecker N Ohta"]["white 9.5 (.05 D)"],
                           illuminant=colour.SDS_ILLUMINANTS["D65"]) / 100
    assert Y == pytest.approx(ref[1], abs=2e-3)
