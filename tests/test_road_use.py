"""Road use: ISO 12312-1 categories, the 0.2 x rule, signal quotients, night use.

Category bands, the 0.2 x rule (475-650 nm), signal-quotient limits and the 75 % night
limit: ISO 12312-1:2013 as summarised in the College of Optometrists' guidance "Tints
and driving" (the standard's own tables govern).
"""

from __future__ import annotations

import numpy as np
import pytest

from cvdfilter.errors import InputError
from cvdfilter.metrics.road_use import (DEFAULT_SIGNAL_READING, MODEL_NOTE, SIGNAL_LIMIT_READINGS, SIGNAL_LIMITS,
                                        iso12312_category, modelled_signal_lights, parse_signal_limits,
                                        road_use_reasons, signal_colour)
from cvdfilter.scorecard import score
from cvdfilter.spectra.grid import DEFAULT_GRID
from cvdfilter.spectra.illuminants import illuminant


def _card(filters, **kw):
    kw.setdefault("observers", ["normal"])
    kw.setdefault("metrics", "photometry,road_use")
    return score(filters, **kw).to_dict()


def test_neutral_density_half_is_category_1():
    # ISO 12312-1:2013 / College of Optometrists: category 1 is over 43 to 80 %.
    f = _card("nd:t=0.5")["filters"][0]
    assert f["luminous_transmittance"] == 0.5
    assert f["iso12312_category"] == 1
    assert f["road_use"]["suitable"] is True
    assert f["road_use"]["night_suitable"] is False  # below 75 %


def test_neutral_density_five_percent_is_category_4_not_for_road_use():
    # Same source: category 4 is over 3 to 8 % and is not for driving.
    f = _card("nd:t=0.05")["filters"][0]
    assert f["luminous_transmittance"] == pytest.approx(0.05)
    assert f["iso12312_category"] == 4
    assert f["road_use"]["suitable"] is False
    assert any("Category 4" in s for s in f["road_use"]["reasons"])


@pytest.mark.parametrize("t, category", [
    (1.0, 0), (0.8001, 0), (0.80, 1), (0.4301, 1), (0.43, 2), (0.1801, 2), (0.18, 3), (0.0801, 3), (0.08, 4),
    (0.0301, 4), (0.03, None), (0.01, None)])
def test_category_boundaries_80_43_18_8_3(t, category):
    # Bands: 0 over 80-100 %, 1 over 43-80 %, 2 over 18-43 %, 3 over 8-18 %, 4 over 3-8 %;
    # at or below 3 % outside the categories (ISO 12312-1:2013, College of Optometrists summary).
    f = _card(f"nd:t={t}")["filters"][0]
    assert f["iso12312_category"] == category
    if category is None:
        assert f["road_use"]["suitable"] is False
        assert any("outside the ISO 12312-1 categories" in s for s in f["road_use"]["reasons"])


def test_category_function_edges():
    cats = iso12312_category([0.8 + 1e-15, 0.8 - 1e-15, 0.43, 0.18, 0.08, 0.03, 0.0])
    assert cats.tolist() == [1, 1, 2, 3, 4, -1, -1]


def test_deep_notch_at_575_fails_the_02_rule():
    # ISO 12312-1: spectral transmittance >= 0.2 x tau_v from 475 to 650 nm; a 99 % notch breaks it.
    f = _card("notch:center=575,fwhm=30,depth=0.99")["filters"][0]
    ru = f["road_use"]
    assert ru["min_ratio_475_650"] < 0.2
    assert ru["min_ratio_at_nm"] == pytest.approx(575, abs=1)
    assert ru["suitable"] is False and ru["night_suitable"] is False
    assert any("0.2 x" in s and "falls to" in s for s in ru["reasons"])


def test_sodium_notch_cuts_low_pressure_sodium_light():
    # Common practice: a narrow absorber at 589 nm cuts most of the light of low-pressure
    # sodium lamps (colour-science's "LPS" spectrum) while passing most daylight.
    f = _card("notch:center=589,fwhm=15,depth=0.99", illuminant="LPS")["filters"][0]
    assert f["luminous_transmittance_illuminant"] < 0.10  # removes over 90 % of the LPS luminous output
    assert f["luminous_transmittance"] > 0.80  # under D65


def test_signal_quotients_of_a_neutral_filter_are_one():
    # Invariant: Q = tau_signal / tau_v is 1 for any light when the filter is neutral.
    f = _card("nd:t=0.3")["filters"][0]
    assert f["signal_quotients"] == {"red": 1.0, "yellow": 1.0, "green": 1.0, "blue": 1.0}


def test_signal_limits_are_the_published_ones():
    # College of Optometrists' guidance "Tints and driving" (summary of ISO 12312-1:2013): 0.8 red and
    # yellow, 0.6 green and blue (its sentence lists yellow twice; plain reading). The other reading,
    # blue 0.4, is from memory. Both are named tables; the default is the guidance reading.
    assert SIGNAL_LIMITS == {"red": 0.8, "yellow": 0.8, "green": 0.6, "blue": 0.6}
    assert SIGNAL_LIMIT_READINGS["guidance"] == SIGNAL_LIMITS and DEFAULT_SIGNAL_READING == "guidance"
    assert SIGNAL_LIMIT_READINGS["blue-0.4"] == {"red": 0.8, "yellow": 0.8, "green": 0.6, "blue": 0.4}


def test_signal_limits_parse_and_refuse():
    assert parse_signal_limits("red=0.8,yellow=0.8,green=0.6,blue=0.4") == (SIGNAL_LIMIT_READINGS["blue-0.4"],
                                                                           "blue-0.4")
    assert parse_signal_limits("blue-0.4")[1] == "blue-0.4"
    assert parse_signal_limits({"amber": 0.7})[0]["yellow"] == 0.7 and parse_signal_limits({"amber": 0.7})[1] == "user"
    for bad in ("purple=0.5", "red=abc", "red", "red=5"):
        with pytest.raises(ValueError):
            parse_signal_limits(bad)
    with pytest.raises(InputError):
        score("nd:t=0.5", metrics="road_use", signal_limits="red=-1")


def test_blue_limit_reading_decides_a_blue_absorbing_filter():
    # A long-pass tint that leaves the blue quotient between 0.4 and 0.6 passes under one reading and fails
    # under the other; the limits used are named in the output and the reasons.
    spec = "longpass:edge=480,width=40,min=0.2"
    strict = _card(spec)["filters"][0]
    q = strict["signal_quotients"]["blue"]
    assert 0.4 < q < 0.6, q
    lax = score(spec, metrics="photometry,road_use", signal_limits="blue-0.4").to_dict()
    assert lax["models"]["road_use"]["signal_limits"]["blue"] == 0.4
    assert lax["signal_lights"]["blue"]["limit"] == 0.4
    assert any("blue signal quotient" in r and "limit of 0.6" in r for r in strict["road_use"]["reasons"])
    assert not any("blue signal quotient" in r for r in lax["filters"][0]["road_use"]["reasons"])
    assert strict["road_use"]["suitable"] is False
    assert lax["filters"][0]["road_use"]["suitable"] is True


def test_red_absorbing_filter_fails_the_red_signal_quotient():
    # A short-pass tint that removes most long-wavelength light lowers the red quotient below 0.8.
    f = _card("shortpass:edge=600,width=20,min=0.05")["filters"][0]
    assert f["signal_quotients"]["red"] < 0.8
    assert f["road_use"]["suitable"] is False
    assert any("red signal quotient" in s for s in f["road_use"]["reasons"])


def test_modelled_signal_lights_are_labelled_and_plausible():
    lights = modelled_signal_lights(DEFAULT_GRID.wavelengths, illuminant("A").spd)
    assert {l.colour for l in lights} == {"red", "yellow", "green", "blue"}
    assert all(l.source == MODEL_NOTE == "approximation, from memory" for l in lights)
    # Dominant colours in the right order along the spectrum: mean wavelength red > yellow > green > blue.
    wl = DEFAULT_GRID.wavelengths
    mean = {l.name: float(np.sum(wl * l.spd) / np.sum(l.spd)) for l in lights}
    for kind in ("incandescent", "led"):
        assert mean[f"red-{kind}"] > mean[f"yellow-{kind}"] > mean[f"green-{kind}"] > mean[f"blue-{kind}"]


def test_card_says_which_signal_lights_were_used(tmp_path):
    card = _card("nd:t=0.5")
    assert all(l["kind"] == "modelled" and l["source"] == MODEL_NOTE
               for v in card["signal_lights"].values() for l in v["lights"])
    # Measured spectra replace the modelled lights of their colours.
    wl = np.arange(380, 781, 5)
    red = np.exp(-0.5 * ((wl - 625) / 8.0) ** 2)
    amber = np.exp(-0.5 * ((wl - 592) / 7.0) ** 2)
    p = tmp_path / "signals.csv"
    p.write_text("nm,red LED (measured),Amber LED\n" + "\n".join(f"{w},{r:.6f},{a:.6f}" for w, r, a in
                                                                zip(wl, red, amber)))
    card = _card("nd:t=0.5", signal_spectra=str(p))
    assert [l["kind"] for l in card["signal_lights"]["red"]["lights"]] == ["measured"]
    assert [l["name"] for l in card["signal_lights"]["yellow"]["lights"]] == ["Amber LED"]
    assert {l["kind"] for l in card["signal_lights"]["green"]["lights"]} == {"modelled"}
    assert card["filters"][0]["signal_quotients"]["red"] == pytest.approx(1.0)


def test_badly_named_signal_spectrum_is_bad_input(tmp_path):
    p = tmp_path / "signals.csv"
    p.write_text("nm,lamp\n" + "\n".join(f"{w},1.0" for w in range(380, 781, 10)))
    with pytest.raises(InputError, match="red, yellow, amber, green or blue"):
        score("nd:t=0.5", observers=["normal"], metrics="road_use", signal_spectra=str(p))
    assert signal_colour("amber") == "yellow"


def test_night_use_needs_75_percent():
    # ISO 12312-1 (same source): at least 75 % luminous transmittance for twilight and night driving.
    cards = _card(["nd:t=0.76", "nd:t=0.74"])["filters"]
    assert [f["road_use"]["night_suitable"] for f in cards] == [True, False]
    assert all(f["road_use"]["suitable"] for f in cards)


def test_reasons_are_plain_sentences():
    for f in _card(["nd:t=0.5", "notch:center=575,fwhm=30,depth=0.99", "nd:t=0.01"])["filters"]:
        for s in f["road_use"]["reasons"]:
            assert s[0].isupper() and s.endswith(".") and "\n" not in s
    assert road_use_reasons(0.0, -1, float("nan"), 500.0, {}) == [
        "The filter transmits no light in the visible range: not suitable for road use."]
